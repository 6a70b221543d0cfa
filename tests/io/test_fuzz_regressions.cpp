// Replays every input the fuzz targets (fuzz/, scripts/fuzz.sh) once crashed
// on, and the committed seed corpora, through the same entry functions, in the
// normal (gcc) suite. The contract of fuzz_entries.hpp: success or a typed
// core::Error; any other exception fails here, a crash kills the test.
// Inputs: tests/data/fuzz_regressions/<target>/<name> (one file per bug, named
// after it), fuzz/corpus/<target>/*.
#include <catch2/catch.hpp>

#include <algorithm>
#include <cstdint>
#include <filesystem>
#include <fstream>
#include <iterator>
#include <string>
#include <vector>

#include "../../fuzz/fuzz_entries.hpp"
#include "test_support.hpp"

namespace fs = std::filesystem;
using icmscope::testing::source_dir;

namespace {

using Entry = void (*)(const std::uint8_t*, std::size_t);

struct Target {
  const char* name;
  Entry entry;
};

const Target kTargets[] = {
    {"yaml_config", icmscope::fuzz::yaml_config},     {"fits_image", icmscope::fuzz::fits_image},
    {"ogip_response", icmscope::fuzz::ogip_response}, {"cells_csv", icmscope::fuzz::cells_csv},
    {"cells_hdf5", icmscope::fuzz::cells_hdf5},
};

std::vector<fs::path> files_in(const fs::path& dir) {
  std::vector<fs::path> out;
  std::error_code ec;
  if (!fs::is_directory(dir, ec)) return out;
  for (const auto& e : fs::directory_iterator(dir))
    if (e.is_regular_file() && e.path().filename().string()[0] != '.') out.push_back(e.path());
  std::sort(out.begin(), out.end());
  return out;
}

std::vector<std::uint8_t> slurp(const fs::path& p) {
  std::ifstream f(p, std::ios::binary);
  return {std::istreambuf_iterator<char>(f), std::istreambuf_iterator<char>()};
}

std::size_t replay(const fs::path& dir, Entry entry) {
  std::size_t n = 0;
  for (const auto& p : files_in(dir)) {
    const auto bytes = slurp(p);
    INFO(p.string());
    REQUIRE_NOTHROW(entry(bytes.data(), bytes.size()));
    ++n;
  }
  return n;
}

}  // namespace

TEST_CASE("fuzz regressions: every kept crash input gives success or a typed error", "[io][fuzz]") {
  std::size_t total = 0;
  for (const auto& t : kTargets) total += replay(source_dir() / "tests/data/fuzz_regressions" / t.name, t.entry);
  // Every bug the fuzzers found left its input here (see DEVELOPERS.md, Fuzzing).
  CHECK(total > 0);
}

TEST_CASE("fuzz seed corpora: every seed gives success or a typed error", "[io][fuzz]") {
  for (const auto& t : kTargets) {
    INFO(t.name);
    CHECK(replay(source_dir() / "fuzz/corpus" / t.name, t.entry) >= 3);
  }
}

TEST_CASE("fuzz seed corpora: the FITS, OGIP, CSV and HDF5 seeds are valid inputs", "[io][fuzz]") {
  // The seeds are written by fuzz/make_corpus.py (astropy, h5py); a seed the
  // readers reject would start the fuzzer outside the parsers.
  const fs::path c = source_dir() / "fuzz/corpus";
  const fs::path scratch = icmscope::testing::scratch_dir("fuzz_seeds");
  auto copy = [&](const fs::path& from, const std::string& name) {
    const fs::path to = scratch / name;
    fs::copy_file(from, to, fs::copy_options::overwrite_existing);
    return to.string();
  };
  for (const auto& p : files_in(c / "fits_image")) {
    INFO(p.string());
    const auto im = icmscope::io::read_fits_image(copy(p, "seed.fits"));
    CHECK(im.wcs.valid());
    CHECK(im.image.size() > 0);
  }
  CHECK(icmscope::io::read_arf(copy(c / "ogip_response/arf.fits", "arf.fits")).size() == 6);
  CHECK(icmscope::io::read_rmf(copy(c / "ogip_response/rmf_variable.fits", "rmf.fits")).n_energies() == 6);
  CHECK(icmscope::io::read_rmf(copy(c / "ogip_response/rsp_fixed_extver2_with_arf.fits", "rsp.fits"), 2).n_energies() == 3);
  CHECK(icmscope::io::read_cells(copy(c / "cells_csv/internal.csv", "a.csv"), icmscope::fuzz::csv_internal_map()).size() == 3);
  CHECK(icmscope::io::read_cells(copy(c / "cells_csv/foreign_mesh.csv", "b.csv"), icmscope::fuzz::csv_foreign_map(),
                                 icmscope::cells::BadCellPolicy::Drop)
            .size() == 3);
  // HDF5: the seeds are descriptions; the builder writes the file, then it is read.
  auto built = [&](const std::string& seed, icmscope::cells::BadCellPolicy policy) {
    const auto bytes = slurp(c / "cells_hdf5" / seed);
    icmscope::fuzz::ByteStream in(bytes.data(), bytes.size());
    const std::string h5 = (scratch / "built.h5").string();
    const auto map = icmscope::fuzz::hdf5_build(in, h5);
    return icmscope::io::read_cells(h5, map, policy);
  };
  const auto own = built("own_layout.bin", icmscope::cells::BadCellPolicy::Error);
  CHECK(own.size() == 4);
  CHECK(own.kT[3] == 3.0f);
  // One NaN density among three mesh cells: Drop keeps two.
  CHECK(built("own_layout_mesh_nan_density.bin", icmscope::cells::BadCellPolicy::Drop).size() == 2);
  const auto snap = built("snapshot.bin", icmscope::cells::BadCellPolicy::Error);
  REQUIRE(snap.size() == 5);
  // Coordinates 20 ckpc/h at a = 0.5, h = 0.5: 20 * 0.5 / 0.5 = 20 kpc.
  CHECK(snap.x[0] == Approx(20.0f));
}

TEST_CASE("fuzz regressions: declared data beyond the end of the file is refused before allocating", "[io][fuzz]") {
  // NAXIS1 = NAXIS2 = 30000 (7.2 GB of doubles) in a 5760-byte image file, and
  // NAXIS2 = 4e8 rows in an 8640-byte ARF: an InputError naming the size,
  // not a multi-gigabyte allocation followed by CFITSIO's end-of-file error.
  using Catch::Matchers::Contains;
  const fs::path r = source_dir() / "tests/data/fuzz_regressions";
  const fs::path scratch = icmscope::testing::scratch_dir("fuzz_truncated");
  const fs::path img = scratch / "big.fits", arf = scratch / "bigarf.fits";
  fs::copy_file(r / "fits_image/naxis_beyond_file_7gb_alloc.fits", img);
  fs::copy_file(r / "ogip_response/naxis2_beyond_file_3gb_alloc.fits", arf);
  CHECK_THROWS_AS(icmscope::io::read_fits_image(img.string()), icmscope::core::InputError);
  CHECK_THROWS_WITH(icmscope::io::read_fits_image(img.string()), Contains("bytes after the header"));
  CHECK_THROWS_WITH(icmscope::io::read_arf(arf.string()), Contains("bytes after the header"));
}

TEST_CASE("fuzz regressions: an extension header without GCOUNT is refused before CFITSIO parses it", "[io][fuzz]") {
  // The GCOUNT card of a binary table is damaged (its name overwritten): CFITSIO
  // 4.2 then sizes a calloc from an uninitialised variable (valgrind: ffgttb;
  // AddressSanitizer: allocation-size-too-big, a different size every run).
  // PCOUNT and GCOUNT are mandatory in every extension header (FITS 4.0, section 7).
  using Catch::Matchers::Contains;
  const fs::path r = source_dir() / "tests/data/fuzz_regressions";
  const fs::path scratch = icmscope::testing::scratch_dir("fuzz_gcount");
  const fs::path rsp = scratch / "rsp.fits";
  fs::copy_file(r / "ogip_response/cfitsio_calloc_damaged_gcount.fits", rsp, fs::copy_options::overwrite_existing);
  CHECK_THROWS_AS(icmscope::io::read_arf(rsp.string()), icmscope::core::InputError);
  CHECK_THROWS_WITH(icmscope::io::read_rmf(rsp.string()), Contains("HDU 1: no GCOUNT card"));
}
