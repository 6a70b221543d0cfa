// `survey`: determinism over thread counts, kill -9 and resume, failure
// isolation, sample-file rules, records and catalog assembly. Invariants
// only (the indicator values themselves are tested in tests/morphology and,
// against `icmscope measure`, in tests/python/test_survey_demo.py).
#include <catch2/catch.hpp>

#include <signal.h>
#include <spawn.h>
#include <sys/wait.h>
#include <unistd.h>

#include <chrono>
#include <cmath>
#include <filesystem>
#include <fstream>
#include <regex>
#include <set>
#include <sstream>
#include <thread>

#include "icmscope/config/survey_settings.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/pipeline/catalog.hpp"
#include "icmscope/pipeline/survey_target.hpp"
#include "test_support.hpp"

extern char** environ;

namespace fs = std::filesystem;
using namespace icmscope;
using icmscope::testing::binary_dir;
using icmscope::testing::run_capture;
using icmscope::testing::scratch_dir;
using icmscope::testing::source_dir;

namespace {

std::string exe() { return (binary_dir() / "icmscope").string(); }

std::string read_file(const fs::path& p) {
  std::ifstream in(p, std::ios::binary);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

void write_file(const fs::path& p, const std::string& t) { std::ofstream(p) << t; }

// Four quick simulated targets (small grids, few particles and realisations).
std::string small_sample() {
  const std::string src = source_dir().string();
  return "survey: {name: small, seed: 77}\n"
         "defaults:\n"
         "  map: {pixels: 96, pixel_arcsec: 10}\n"
         "  model_particles: 20000\n"
         "  lines_of_sight: [z]\n"
         "  observation: {instruments: [" + src + "/config/instruments/vasta_la.yaml], exposures_ks: [10]}\n"
         "  measure: {realisations: {number: 12}, quicklook: false}\n"
         "clusters:\n"
         "  - {name: Tolva-2, model: " + src + "/demo_clusters/models/tolva2_non_cool_core.yaml, lines_of_sight: [x, z]}\n"
         "  - name: Kessra-13\n"
         "    model: " + src + "/demo_clusters/models/kessra13_major_merger.yaml\n"
         "    lines_of_sight: {random: 2}\n";
}

int run(const std::string& cmd, std::string* out = nullptr) {
  int st = 0;
  const std::string text = run_capture(cmd + " 2>&1", &st);
  if (out) *out = text;
  return WIFEXITED(st) ? WEXITSTATUS(st) : -1;
}

std::size_t count_records(const fs::path& targets) {
  std::size_t n = 0;
  std::error_code ec;
  if (!fs::is_directory(targets, ec)) return 0;
  for (const auto& d : fs::directory_iterator(targets))
    if (fs::exists(d.path() / "record.txt")) ++n;
  return n;
}

std::vector<std::string> csv_lines(const std::string& text) {
  std::vector<std::string> v;
  std::istringstream in(text);
  std::string l;
  while (std::getline(in, l)) v.push_back(l);
  return v;
}

// The reference catalog of the small sample (2 concurrent targets), made once
// per process. ctest runs each test case as its own process, in parallel: the
// folder is per process, so two cases never rebuild one reference folder at once.
const std::string& reference_catalog() {
  static std::string ref;
  if (ref.empty()) {
    const auto dir = scratch_dir("survey/reference_" + std::to_string(static_cast<long>(::getpid())));
    write_file(dir / "small.yaml", small_sample());
    std::string out;
    const int rc = run(exe() + " survey '" + (dir / "small.yaml").string() + "' --threads 2 --omp-threads 1 --progress none --no-plots --output-dir '" +
                           (dir / "out").string() + "'",
                       &out);
    INFO(out);
    REQUIRE(rc == 0);
    ref = read_file(dir / "out" / "small_catalog.csv");
    REQUIRE(!ref.empty());
  }
  return ref;
}

}  // namespace

TEST_CASE("survey: one and two concurrent targets give the same catalog", "[survey]") {
  const std::string& ref = reference_catalog();
  const auto dir = scratch_dir("survey/one_thread");
  write_file(dir / "small.yaml", small_sample());
  std::string out;
  const int rc = run(exe() + " survey '" + (dir / "small.yaml").string() + "' --threads 1 --omp-threads 2 --progress none --no-plots --output-dir '" +
                         (dir / "out").string() + "'",
                     &out);
  INFO(out);
  REQUIRE(rc == 0);
  const std::string one = read_file(dir / "out" / "small_catalog.csv");
  // Invariant: the catalog does not depend on the thread count (byte for byte).
  CHECK(one == ref);
  const auto lines = csv_lines(one);
  REQUIRE(lines.size() == 5);  // header + 4 targets
  CHECK(lines[1].rfind("1,Tolva-2_x_Vasta-LA_10ks,", 0) == 0);
  CHECK(lines[2].rfind("2,Tolva-2_z_Vasta-LA_10ks,", 0) == 0);
  CHECK(lines[3].rfind("3,Kessra-13_iso1_Vasta-LA_10ks,", 0) == 0);
  CHECK(lines[4].rfind("4,Kessra-13_iso2_Vasta-LA_10ks,", 0) == 0);
  // A rerun finishes nothing new and rebuilds the same catalog.
  const int rc2 = run(exe() + " survey '" + (dir / "small.yaml").string() + "' --progress none --no-plots --output-dir '" +
                          (dir / "out").string() + "'",
                      &out);
  CHECK(rc2 == 0);
  CHECK(out.find("0 run now, 4 finished before") != std::string::npos);
  CHECK(read_file(dir / "out" / "small_catalog.csv") == ref);
}

TEST_CASE("survey: kill -9 mid-run leaves no partial row and a rerun completes the same catalog", "[survey]") {
  const std::string& ref = reference_catalog();
  const auto dir = scratch_dir("survey/kill");
  write_file(dir / "small.yaml", small_sample());
  const std::string cmd = "exec '" + exe() + "' survey '" + (dir / "small.yaml").string() +
                          "' --threads 1 --omp-threads 2 --progress none --no-plots --output-dir '" + (dir / "out").string() +
                          "' >/dev/null 2>&1";
  pid_t pid = 0;
  const char* argv[] = {"/bin/sh", "-c", cmd.c_str(), nullptr};
  REQUIRE(posix_spawn(&pid, "/bin/sh", nullptr, nullptr, const_cast<char* const*>(argv), environ) == 0);
  // Kill once the first target is recorded, while the second is being made.
  const auto t0 = std::chrono::steady_clock::now();
  while (count_records(dir / "out" / "targets") < 1 &&
         std::chrono::steady_clock::now() - t0 < std::chrono::seconds(240))
    std::this_thread::sleep_for(std::chrono::milliseconds(20));
  std::this_thread::sleep_for(std::chrono::milliseconds(700));
  ::kill(pid, SIGKILL);
  int st = 0;
  ::waitpid(pid, &st, 0);
  REQUIRE(WIFSIGNALED(st));
  const std::size_t done = count_records(dir / "out" / "targets");
  INFO("records after the kill: " << done);
  REQUIRE(done >= 1);
  REQUIRE(done < 4);
  // Collecting now: exactly the finished rows, each once and complete.
  std::string out;
  CHECK(run(exe() + " survey '" + (dir / "small.yaml").string() + "' --collect --no-plots --output-dir '" +
            (dir / "out").string() + "'",
            &out) == 7);
  const auto part = csv_lines(read_file(dir / "out" / "small_catalog.csv"));
  const auto full = csv_lines(ref);
  CHECK(part.size() == done + 1);
  for (std::size_t k = 1; k < part.size(); ++k)
    CHECK(std::find(full.begin(), full.end(), part[k]) != full.end());  // complete rows of the reference
  const auto fail = csv_lines(read_file(dir / "out" / "small_failures.csv"));
  CHECK(fail.size() == 1 + 4 - done);
  // Resume.
  const int rc = run(exe() + " survey '" + (dir / "small.yaml").string() + "' --threads 2 --progress none --no-plots --output-dir '" +
                         (dir / "out").string() + "'",
                     &out);
  INFO(out);
  CHECK(rc == 0);
  CHECK(out.find(std::to_string(done) + " finished before") != std::string::npos);
  CHECK(read_file(dir / "out" / "small_catalog.csv") == ref);
  // No temporary file survives in the target folders.
  for (const auto& e : fs::recursive_directory_iterator(dir / "out" / "targets"))
    CHECK(e.path().filename().string().find(".tmp-") == std::string::npos);
}

TEST_CASE("survey: failing targets are isolated and listed with their reason", "[survey]") {
  const auto dir = scratch_dir("survey/failures");
  const std::string src = source_dir().string();
  // Gas cells with one NaN temperature.
  {
    std::ifstream in(source_dir() / "config" / "examples" / "data" / "tiny_cells.csv");
    std::ofstream out(dir / "nan_cells.csv");
    std::string line;
    int row = 0;
    while (std::getline(in, line)) {
      if (!line.empty() && line[0] != '#' && row++ == 5) {
        // temp_k is the 6th column
        std::vector<std::string> f;
        std::stringstream ss(line);
        std::string x;
        while (std::getline(ss, x, ',')) f.push_back(x);
        f[5] = "nan";
        line.clear();
        for (std::size_t k = 0; k < f.size(); ++k) line += (k ? "," : "") + f[k];
      }
      out << line << "\n";
    }
  }
  // An image without a WCS.
  write_file(dir / "no_wcs.py",
             "from astropy.io import fits\nimport numpy as np\n"
             "fits.PrimaryHDU(np.ones((32, 32), dtype=np.int32)).writeto('" + (dir / "no_wcs.fits").string() +
                 "', overwrite=True)\n");
  REQUIRE(run(icmscope::testing::python() + " '" + (dir / "no_wcs.py").string() + "'") == 0);
  write_file(dir / "bad.yaml",
             "survey: {name: bad, seed: 3}\n"
             "defaults:\n"
             "  map: {pixels: 80, pixel_arcsec: 10}\n"
             "  model_particles: 15000\n"
             "  observation: {instruments: [" + src + "/config/instruments/vasta_la.yaml], exposures_ks: [5]}\n"
             "  measure: {realisations: {number: 5}, quicklook: false, json: false}\n"
             "clusters:\n"
             "  - {name: Good, model: " + src + "/demo_clusters/models/quellin31_poor_group.yaml}\n"
             "  - name: NaN-cells\n"
             "    cells: nan_cells.csv\n"
             "    redshift: 0.12\n"
             "    r500_kpc: 900\n"
             "    fields:\n"
             "      position: {components: [x_mpc, y_mpc, z_mpc], factor: 1000.0}\n"
             "      mass: {source: mass_1e10msun, factor: 1.0e10}\n"
             "      density: {source: rho_g_cm3, factor: 1.4775e31}\n"
             "      temperature: {source: temp_k, factor: 8.617333e-8}\n"
             "      metallicity: z_metal\n"
             "      solar_metal_mass_fraction: 0.0194\n"
             "      smoothing_length: {source: hsml_mpc, factor: 1000.0}\n"
             "  - {name: Missing-image, counts: does_not_exist.fits, redshift: 0.1}\n"
             "  - {name: No-WCS, counts: no_wcs.fits, redshift: 0.1}\n"
             "  - {name: Bad-model, model: no_such_model.yaml}\n");
  std::string out;
  const int rc = run(exe() + " survey '" + (dir / "bad.yaml").string() + "' --threads 2 --progress none --no-plots", &out);
  INFO(out);
  CHECK(rc == 7);  // some targets failed; the catalog holds the others
  const auto cat = csv_lines(read_file(dir / "bad_survey" / "bad_catalog.csv"));
  REQUIRE(cat.size() == 2);
  CHECK(cat[1].rfind("1,Good_z_Vasta-LA_5ks,", 0) == 0);
  const std::string f = read_file(dir / "bad_survey" / "bad_failures.csv");
  INFO(f);
  const auto fl = csv_lines(f);
  REQUIRE(fl.size() == 5);
  CHECK(fl[1].find("NaN-cells") != std::string::npos);
  CHECK(fl[1].find("nan_cells.csv") != std::string::npos);
  CHECK(fl[2].find("Missing-image") != std::string::npos);
  CHECK(fl[2].find("does_not_exist.fits") != std::string::npos);
  CHECK(fl[3].find("No-WCS") != std::string::npos);
  CHECK(fl[3].find("WCS") != std::string::npos);
  CHECK(fl[4].find("Bad-model") != std::string::npos);
  CHECK(fl[4].find("no_such_model.yaml") != std::string::npos);
}

TEST_CASE("survey settings: overrides, lines of sight, CSV listing, seeds and hashes", "[survey][config]") {
  const auto dir = scratch_dir("survey/settings");
  const std::string src = source_dir().string();
  write_file(dir / "more.csv",
             "# a listing\n"
             "name,model,lines_of_sight,exposures_ks,redshift,m500_msun\n"
             "Csv-A," + src + "/demo_clusters/models/tolva2_non_cool_core.yaml,x;30/45;iso:2,5;15,0.2,\n"
             "Csv-B,,,,0.1,4e14\n");
  // Csv-B has neither model, cells nor counts: an error naming the row.
  write_file(dir / "s.yaml", "survey: {name: s, seed: 9, entries_csv: more.csv}\n"
                             "defaults:\n"
                             "  map: {pixels: 100, pixel_arcsec: 6}\n"
                             "  observation: {instruments: [" + src + "/config/instruments/vasta_la.yaml], exposures_ks: [20]}\n"
                             "clusters:\n"
                             "  - {name: M, model: " + src + "/demo_clusters/models/maren7_cool_core.yaml, map: {pixels: 300}}\n");
  try {
    config::load_survey((dir / "s.yaml").string());
    FAIL("expected a ConfigError for the CSV row without model/cells/counts");
  } catch (const core::ConfigError& e) {
    CHECK(std::string(e.what()).find("more.csv:4") != std::string::npos);
  }
  // Fix the row: an observed entry.
  write_file(dir / "more.csv",
             "name,model,lines_of_sight,exposures_ks,redshift,m500_msun,counts\n"
             "Csv-A," + src + "/demo_clusters/models/tolva2_non_cool_core.yaml,x;30/45;iso:2,5;15,0.2,,\n"
             "Csv-B,,,,0.1,4e14,img.fits\n");
  const auto s = config::load_survey((dir / "s.yaml").string());
  REQUIRE(s.entries.size() == 3);
  const auto& m = s.entries[0];
  CHECK(m.view.nx == 300);
  CHECK(m.view.ny == 300);             // a square grid stays square
  CHECK(m.view.pixel_arcsec == 6.0);   // inherited key by key
  CHECK(m.target.redshift == 0.08);    // from the model file
  CHECK(m.m500_msun == 5.5e14);
  CHECK(m.lines_of_sight.size() == 1);
  CHECK(m.lines_of_sight[0].label == "z");
  const auto& a = s.entries[1];
  CHECK(a.target.redshift == 0.2);     // the CSV overrides the model's redshift
  REQUIRE(a.lines_of_sight.size() == 4);
  CHECK(a.lines_of_sight[1].axis == "angles");
  CHECK(a.lines_of_sight[1].theta_deg == 30.0);
  CHECK(a.lines_of_sight[1].phi_deg == 45.0);
  CHECK(a.lines_of_sight[2].label == "iso1");
  CHECK(a.observation.exposures_ks == std::vector<double>{5.0, 15.0});
  CHECK(!s.entries[2].simulated);
  CHECK(s.entries[2].inputs.counts.file == (dir / "img.fits").lexically_normal().string());
  CHECK(s.entries[2].observed_target.m500_msun == 4e14);

  const auto plan = pipeline::plan_survey(s, (dir / "out").string());
  REQUIRE(plan.size() == 1 + 4 * 2 + 1);
  CHECK(plan[1].id == "Csv-A_x_Vasta-LA_5ks");
  CHECK(plan[2].id == "Csv-A_x_Vasta-LA_15ks");
  CHECK(plan[3].id == "Csv-A_t30_p45_Vasta-LA_5ks");
  CHECK(plan.back().id == "Csv-B");
  std::set<std::uint64_t> seeds;
  for (const auto& t : plan) seeds.insert(t.seed);
  CHECK(seeds.size() == plan.size());  // distinct seeds
  CHECK(plan[0].seed == config::derive_seed(9, plan[0].id));
  CHECK(plan[0].seed < (1ULL << 53));

  // Isotropic directions: cos(theta) uniform -> mean ~0, mean cos^2 ~ 1/3 (invariant of the uniform sphere).
  const auto iso = config::isotropic_lines_of_sight(4000, 5);
  double m1 = 0, m2 = 0;
  for (const auto& l : iso) {
    const double c = std::cos(l.theta_deg * M_PI / 180.0);
    m1 += c;
    m2 += c * c;
  }
  m1 /= iso.size();
  m2 /= iso.size();
  CHECK(std::fabs(m1) < 4.0 * std::sqrt(1.0 / 3.0 / 4000));
  CHECK(std::fabs(m2 - 1.0 / 3.0) < 4.0 * std::sqrt(4.0 / 45.0 / 4000));
  CHECK(config::isotropic_lines_of_sight(3, 5)[2].phi_deg == iso[2].phi_deg);

  // Changing one entry changes only its targets' hashes.
  std::string y = read_file(dir / "s.yaml");
  y = std::regex_replace(y, std::regex("pixels: 300"), "pixels: 320");
  write_file(dir / "s2.yaml", y);
  const auto s2 = config::load_survey((dir / "s2.yaml").string());
  const auto plan2 = pipeline::plan_survey(s2, (dir / "elsewhere").string());
  REQUIRE(plan2.size() == plan.size());
  CHECK(plan2[0].config_hash != plan[0].config_hash);
  for (std::size_t k = 1; k < plan.size(); ++k) CHECK(plan2[k].config_hash == plan[k].config_hash);
}

TEST_CASE("survey settings: strict keys and one-line errors", "[survey][config]") {
  const auto dir = scratch_dir("survey/strict");
  const std::string src = source_dir().string();
  const std::string head = "defaults:\n  observation: {instruments: [" + src +
                           "/config/instruments/vasta_la.yaml], exposures_ks: [20]}\nclusters:\n";
  auto err = [&](const std::string& body) {
    write_file(dir / "x.yaml", head + body);
    try {
      config::load_survey((dir / "x.yaml").string());
    } catch (const core::ConfigError& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  const std::string model = src + "/demo_clusters/models/maren7_cool_core.yaml";
  CHECK(err("  - {name: A, model: " + model + ", pixles: 3}\n").find("x.yaml:4") != std::string::npos);
  CHECK(err("  - {name: A, model: " + model + "}\n  - {name: a, model: " + model + "}\n").find("used twice") !=
        std::string::npos);
  CHECK(err("  - {name: A, model: " + model + ", counts: x.fits}\n").find("exactly one of") != std::string::npos);
  CHECK(err("  - {name: A, model: " + model + ", lines_of_sight: [q]}\n").find("not an axis") != std::string::npos);
  CHECK(err("  - {name: A, model: " + model + ", observation: {seed: 4}}\n").find("derives from survey.seed") !=
        std::string::npos);
  CHECK(err("  - {name: A, counts: x.fits, map: {pixels: 10}}\n").find("simulated entry only") != std::string::npos);
  CHECK(err("  - {name: A, model: " + model + ", measure: {background: annulus}}\n").find("background_annulus") !=
        std::string::npos);
}

TEST_CASE("survey records: exact round trip, incomplete files rejected", "[survey]") {
  pipeline::TargetRecord r;
  r.target_id = "A_z_X_10ks";
  r.config_hash = "0123456789abcdef";
  r.ok = true;
  r.row.integer("target_index", 3);
  r.row.text("note", "tab\there, newline\nthere, back\\slash");
  r.row.real("pi", M_PI, "rad");
  r.row.real("tiny", 4.9406564584124654e-324);
  r.row.real("nan", std::nan(""));
  r.row.real("big", -1.7976931348623157e308);
  const std::string t = pipeline::format_record(r);
  const auto back = pipeline::parse_record(t);
  REQUIRE(back);
  CHECK(back->target_id == r.target_id);
  CHECK(back->config_hash == r.config_hash);
  CHECK(back->ok);
  CHECK(back->row.str("note") == r.row.str("note"));
  CHECK(back->row.number("pi") == M_PI);  // 17 significant digits round-trip exactly
  CHECK(back->row.number("tiny") == 4.9406564584124654e-324);
  CHECK(std::isnan(back->row.number("nan")));
  CHECK(back->row.number("big") == -1.7976931348623157e308);
  CHECK(back->row.find("pi")->unit == "rad");
  CHECK(back->row.find("target_index")->type == pipeline::CellType::integer);
  // A truncated file (what a crash could leave under a temporary name) is not a record.
  CHECK(!pipeline::parse_record(t.substr(0, t.size() - 4)));
  CHECK(!pipeline::parse_record("garbage\n"));

  // Catalog: union of columns in order of appearance; an integer column missing in a row becomes real.
  pipeline::CatalogRow a, b;
  a.integer("n", 1);
  a.text("s", "x,\"y\"");
  b.real("v", 2.5);
  b.text("s", "plain");
  const auto c = pipeline::assemble_catalog({a, b});
  REQUIRE(c.columns.size() == 3);
  CHECK(c.columns[0].name == "n");
  CHECK(c.columns[0].type == pipeline::CellType::real);
  CHECK(c.columns[2].name == "v");
  CHECK(pipeline::catalog_csv(c) == "n,s,v\n1,\"x,\"\"y\"\"\",\n,plain,2.5\n");
}
