// FITS binary tables written by us, read by astropy (checksums, units, values).
#include <catch2/catch.hpp>

#include <filesystem>
#include <map>
#include <sstream>

#include "icmscope/core/errors.hpp"
#include "icmscope/io/fits_table.hpp"
#include "io/py_util.hpp"
#include "test_support.hpp"

using namespace icmscope;
using Catch::Matchers::Contains;
namespace fs = std::filesystem;

TEST_CASE("FITS table round trip through astropy", "[io][fits_table][python]") {
  const auto dir = testing::scratch_dir("fits_table");
  const auto path = (dir / "catalog.fits").string();
  io::FitsTable t;
  t.extname = "CATALOG";
  t.columns.push_back({"NAME", "", std::vector<std::string>{"fict-a", "fict-bb", "c"}});
  t.columns.push_back({"KT", "keV", std::vector<double>{6.1, 3.25, 0.123456789012345}});
  t.columns.push_back({"COUNTS", "count", std::vector<long long>{12, 9000000000LL, -4}});
  t.columns.push_back({"R_ap", "arcsec", std::vector<double>{30.0, 45.5, 1e-300}});
  t.keywords = {io::fits_key("SEED", 42), io::fits_key("CONFHASH", "0123abcd")};
  t.history = {"catalog for a unit test"};
  io::FitsTable truth;
  truth.extname = "TRUTH";
  truth.columns.push_back({"ID", "", std::vector<long long>{}});
  truth.columns.push_back({"X", "pixel", std::vector<double>{}});
  io::write_fits_tables(path, {t, truth}, {io::fits_key("ORIGIN", "unit test")});

  const std::string code = R"PY(
import sys, warnings
from astropy.io import fits
from astropy.table import Table
warnings.simplefilter('error')
with fits.open(sys.argv[1], checksum=True) as hl:
    print('names', *[h.name for h in hl])
    print('checksums', *[h.verify_checksum() for h in hl])
    print('datasums', *[h.verify_datasum() for h in hl])
    print('origin', hl[0].header['ORIGIN'].replace(' ', '_'))
    print('seed', hl['CATALOG'].header['SEED'], hl['CATALOG'].header['CONFHASH'])
t = Table.read(sys.argv[1], hdu='CATALOG')
print('colnames', *t.colnames)
print('units', t['KT'].unit.to_string(), t['COUNTS'].unit.to_string(), t['R_ap'].unit.to_string())
print('name', *[str(s) for s in t['NAME']])
print('kt', *[repr(float(v)) for v in t['KT']])
print('counts', *[int(v) for v in t['COUNTS']], t['COUNTS'].dtype.kind, t['COUNTS'].dtype.itemsize)
print('rap', *[repr(float(v)) for v in t['R_ap']])
print('truth_rows', len(Table.read(sys.argv[1], hdu='TRUTH')))
)PY";
  const auto r = testing::run_python(dir, "read_table", code, path);
  INFO(r.out);
  REQUIRE(r.status == 0);
  std::map<std::string, std::vector<std::string>> out;
  std::istringstream in(r.out);
  std::string line;
  while (std::getline(in, line)) {
    std::istringstream ls(line);
    std::string k, tok;
    ls >> k;
    while (ls >> tok) out[k].push_back(tok);
  }
  CHECK(out["names"] == std::vector<std::string>{"PRIMARY", "CATALOG", "TRUTH"});
  CHECK(out["checksums"] == std::vector<std::string>{"1", "1", "1"});
  CHECK(out["datasums"] == std::vector<std::string>{"1", "1", "1"});
  CHECK(out["origin"] == std::vector<std::string>{"unit_test"});
  CHECK(out["seed"] == std::vector<std::string>{"42", "0123abcd"});
  CHECK(out["colnames"] == std::vector<std::string>{"NAME", "KT", "COUNTS", "R_ap"});
  CHECK(out["units"] == std::vector<std::string>{"keV", "ct", "arcsec"});
  CHECK(out["name"] == std::vector<std::string>{"fict-a", "fict-bb", "c"});
  REQUIRE(out["kt"].size() == 3);
  CHECK(std::stod(out["kt"][2]) == 0.123456789012345);  // doubles are stored exactly (1D)
  CHECK(out["counts"] == std::vector<std::string>{"12", "9000000000", "-4", "i", "8"});
  CHECK(std::stod(out["rap"][2]) == 1e-300);
  CHECK(out["truth_rows"] == std::vector<std::string>{"0"});
  for (const auto& e : fs::directory_iterator(dir)) CHECK(e.path().filename().string().find(".tmp-") == std::string::npos);
}

TEST_CASE("FITS table argument errors", "[io][fits_table]") {
  const auto dir = testing::scratch_dir("fits_table_errors");
  const auto path = (dir / "t.fits").string();
  io::FitsTable t;
  t.extname = "T";
  t.columns.push_back({"A", "", std::vector<double>{1, 2}});
  t.columns.push_back({"B", "", std::vector<long long>{1}});
  CHECK_THROWS_WITH(io::write_fits_tables(path, {t}), Contains("column 'B' has 1 rows, 'A' has 2"));
  t.columns[1] = {"a", "", std::vector<long long>{1, 2}};
  CHECK_THROWS_WITH(io::write_fits_tables(path, {t}), Contains("column 'a' given twice"));
  t.columns.pop_back();
  t.keywords = {io::fits_key("TTYPE1", "x")};
  CHECK_THROWS_AS(io::write_fits_tables(path, {t}), core::DomainError);
  CHECK_THROWS_AS(io::write_fits_tables(path, {}), core::DomainError);
  CHECK(fs::is_empty(dir));
}
