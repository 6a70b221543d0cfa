// Every YAML shipped in config/ and demo_clusters/ runs (style rule 11): each
// file is recognised by its top-level keys and run through the command line.
// A shipped YAML that no rule recognises fails the test, so new kinds of file
// must be added here.
#include <catch2/catch.hpp>

#include <sys/wait.h>

#include <filesystem>
#include <iterator>
#include <fstream>
#include <regex>
#include <set>
#include <sstream>

#include "test_support.hpp"

namespace fs = std::filesystem;
using icmscope::testing::binary_dir;
using icmscope::testing::run_capture;
using icmscope::testing::scratch_dir;
using icmscope::testing::source_dir;

namespace {

std::set<std::string> top_level_keys(const fs::path& p) {
  std::ifstream in(p);
  std::set<std::string> keys;
  std::string line;
  const std::regex key(R"(^([A-Za-z_][A-Za-z0-9_]*):)");
  std::smatch m;
  while (std::getline(in, line))
    if (std::regex_search(line, m, key)) keys.insert(m[1]);
  return keys;
}

std::vector<fs::path> shipped_yaml() {
  std::vector<fs::path> out;
  for (const char* top : {"config", "demo_clusters"})
    for (const auto& e : fs::recursive_directory_iterator(source_dir() / top))
      if (e.is_regular_file() && (e.path().extension() == ".yaml" || e.path().extension() == ".yml"))
        out.push_back(e.path());
  std::sort(out.begin(), out.end());
  return out;
}

std::string exe() { return (binary_dir() / "icmscope").string(); }

}  // namespace

TEST_CASE("every shipped YAML file runs", "[examples]") {
  const auto files = shipped_yaml();
  REQUIRE(files.size() >= 6);
  for (const auto& f : files) {
    const auto keys = top_level_keys(f);
    const auto out = scratch_dir("examples/" + f.stem().string());
    std::string cmd;
    if (keys.count("exposures_ks")) {
      // A plan file (exposure planning; its reverse grid too when it has one), plots included.
      cmd = exe() + " plan -q '" + f.string() + "' --output-dir '" + out.string() + "'";
    } else if (keys.count("components")) {
      // An analytic cluster model: synthesise a small version.
      cmd = exe() + " synth -q '" + f.string() + "' -o '" + (out / "cells.h5").string() + "' --particles 20000";
    } else if (keys.count("observation")) {
      // An observe RUN file (cells or a maps file, through an instrument).
      cmd = exe() + " observe -q '" + f.string() + "' --output-dir '" + out.string() + "'";
    } else if (keys.count("target") && keys.count("cells")) {
      cmd = exe() + " project -q '" + f.string() + "' --output-dir '" + out.string() + "'";
    } else if (keys.count("effective_area") && keys.count("psf")) {
      // An instrument file: a tiny observation of a small beta model, on a grid
      // a little wider than the field so the edge and the gaps are exercised.
      const auto model = out / "beta.yaml";
      std::ofstream(model) << "name: tiny\nseed: 5\nn_particles: 4000\ncomponents:\n  - name: c\n"
                              "    r_max_kpc: 1500\n"
                              "    density: {profile: beta, r_c_kpc: 150, beta: 0.67, n_e0_cm3: 4.0e-3}\n"
                              "    temperature: {profile: isothermal, kT_keV: 5}\n";
      const auto run = out / "run.yaml";
      std::ofstream(run) << "target: {name: tiny, redshift: 0.1, ra_deg: 10, dec_deg: -20}\n"
                         << "cells: {model: beta.yaml}\n"
                         << "emission: {table_kT_points: 32, table_Z_points: 2}\n"
                         << "map: {pixels: 48, width_arcmin: 70}\n"
                         << "observation: {instrument: '" << f.string()
                         << "', exposure_ks: 2, seed: 1, point_sources: true}\n"
                         << "output: {directory: '" << out.string() << "', quicklook: true}\n";
      cmd = exe() + " observe -q '" + run.string() + "'";
    } else if (keys.count("inputs")) {
      // A measure file: its images are the products of the observe example it
      // names (out/Maren-7_Vasta-LA_*), made here first with fewer particles.
      fs::copy_file(f, out / f.filename());
      fs::copy(source_dir() / "config" / "examples" / "data", out / "data");
      cmd = exe() + " observe -q '" + (source_dir() / "config" / "examples" / "observe_cool_core_vasta.yaml").string() +
            "' --output-dir '" + (out / "out").string() + "' --particles 20000 --no-events && " + exe() +
            " measure -q --no-table '" + (out / f.filename()).string() + "'";
    } else if (keys.count("clusters")) {
      // A survey sample: the whole sample is loaded and planned, its first target
      // runs. A sample whose observed listing is made by demo_clusters/make_observed.py
      // runs in a scratch copy of the tree, with those files made there first.
      std::ifstream in(f);
      const std::string text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
      fs::path sample = f;
      cmd.clear();
      if (text.find("make_observed.py") != std::string::npos) {
        const auto tree = out / "tree";
        fs::create_directories(tree / "config");
        fs::copy(source_dir() / "config" / "instruments", tree / "config" / "instruments");
        fs::create_directories(tree / "demo_clusters");
        fs::copy(source_dir() / "demo_clusters" / "models", tree / "demo_clusters" / "models");
        sample = tree / "demo_clusters" / f.filename();
        fs::copy_file(f, sample);
        cmd = icmscope::testing::python() + " '" + (source_dir() / "demo_clusters" / "make_observed.py").string() +
              "' '" + (tree / "demo_out" / "observed").string() + "' '" + exe() + "' && ";
      }
      cmd += exe() + " survey '" + sample.string() + "' --output-dir '" + out.string() +
             "' --only 1 --progress none --no-plots";
    } else {
      FAIL("no rule runs " << f << ": add one to tests/pipeline/test_examples.cpp");
    }
    int status = 0;
    const std::string text = run_capture(cmd + " 2>&1", &status);
    INFO(f << "\n" << cmd << "\n" << text);
    CHECK(status == 0);
    bool wrote = false;
    for (const auto& e : fs::directory_iterator(out)) wrote = wrote || (e.is_regular_file() && e.file_size() > 0);
    CHECK(wrote);
  }
}

TEST_CASE("each verb's --example output parses and runs", "[examples]") {
  // The printed examples are complete files: they load through the same strict
  // reader (unknown keys would fail).
  const auto out = scratch_dir("examples_printed");
  int st = 0;
  const std::string model = run_capture(exe() + " synth --example", &st);
  REQUIRE(st == 0);
  { std::ofstream(out / "model.yaml") << model; }
  run_capture(exe() + " synth -q '" + (out / "model.yaml").string() + "' -o '" + (out / "m.h5").string() +
                  "' --particles 5000 2>&1",
              &st);
  CHECK(st == 0);
  const std::string run = run_capture(exe() + " project --example", &st);
  REQUIRE(st == 0);
  // The printed project example refers to a demo model relative to config/examples:
  // rebuild that layout in the scratch folder.
  fs::create_directories(out / "config" / "examples");
  fs::create_directories(out / "demo_clusters" / "models");
  fs::copy_file(source_dir() / "demo_clusters" / "models" / "maren7_cool_core.yaml",
                out / "demo_clusters" / "models" / "maren7_cool_core.yaml");
  const auto printed = out / "config" / "examples" / "printed.yaml";
  { std::ofstream(printed) << run; }
  const std::string text = run_capture(exe() + " project -q '" + printed.string() + "' --output-dir '" +
                                           out.string() + "' 2>&1",
                                       &st);
  INFO(text);
  CHECK(st == 0);
}

TEST_CASE("the printed plan example runs", "[examples][plan]") {
  // The printed example names an instrument preset relative to config/examples.
  const auto out = scratch_dir("examples_printed_plan");
  int st = 0;
  const std::string run = run_capture(exe() + " plan --example", &st);
  REQUIRE(st == 0);
  fs::create_directories(out / "config" / "examples");
  fs::copy(source_dir() / "config" / "instruments", out / "config" / "instruments");
  const auto printed = out / "config" / "examples" / "printed.yaml";
  { std::ofstream(printed) << run; }
  const std::string text = run_capture(exe() + " plan -q '" + printed.string() + "' --output-dir '" + out.string() +
                                           "' --realisations 5 --no-plots 2>&1",
                                       &st);
  INFO(text);
  CHECK(st == 0);
  CHECK(fs::exists(out / "Scaled-5e14_plan.json"));
  CHECK(fs::exists(out / "Scaled-5e14_reverse.csv"));
  CHECK(text.find("CAUTION") != std::string::npos);
}

TEST_CASE("the printed observe example runs", "[examples]") {
  // The printed example names a demo model and a preset relative to
  // config/examples: rebuild that layout in the scratch folder.
  const auto out = scratch_dir("examples_printed_observe");
  int st = 0;
  const std::string run = run_capture(exe() + " observe --example", &st);
  REQUIRE(st == 0);
  fs::create_directories(out / "config" / "examples");
  fs::create_directories(out / "demo_clusters" / "models");
  fs::copy(source_dir() / "config" / "instruments", out / "config" / "instruments");
  fs::copy_file(source_dir() / "demo_clusters" / "models" / "maren7_cool_core.yaml",
                out / "demo_clusters" / "models" / "maren7_cool_core.yaml");
  const auto printed = out / "config" / "examples" / "printed.yaml";
  { std::ofstream(printed) << run; }
  const std::string text = run_capture(exe() + " observe -q '" + printed.string() + "' --output-dir '" +
                                           out.string() + "' --particles 20000 2>&1",
                                       &st);
  INFO(text);
  CHECK(st == 0);
  CHECK(fs::exists(out / "Maren-7_vasta_events.fits"));
  // The printed instrument example is a complete instrument file.
  const std::string inst = run_capture(exe() + " observe --instrument-example", &st);
  REQUIRE(st == 0);
  { std::ofstream(out / "config" / "instruments" / "printed.yaml") << inst; }
  const std::string rate = run_capture(exe() + " rate --kT-keV 5 --instrument '" +
                                           (out / "config" / "instruments" / "printed.yaml").string() + "' 2>&1",
                                       &st);
  INFO(rate);
  CHECK(st == 0);
  CHECK(rate.find("Example-CCD") != std::string::npos);
}

TEST_CASE("the printed survey example is the shipped sample example", "[examples][survey]") {
  // config/examples/survey_sample.yaml runs in "every shipped YAML file runs";
  // the printed example must be that very file.
  int st = 0;
  const std::string printed = run_capture(exe() + " survey --example", &st);
  REQUIRE(st == 0);
  std::ifstream in(source_dir() / "config" / "examples" / "survey_sample.yaml");
  const std::string shipped((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
  CHECK(printed == shipped);
}

TEST_CASE("command-line errors are one line and non-zero", "[examples][cli]") {
  int st = 0;
  std::string t = run_capture(exe() + " nosuchverb 2>&1", &st);
  CHECK(st != 0);
  CHECK(t.find("unknown verb") != std::string::npos);
  t = run_capture(exe() + " project /nonexistent/run.yaml 2>&1", &st);
  CHECK(st != 0);
  CHECK(std::count(t.begin(), t.end(), '\n') == 1);
  CHECK(t.find("/nonexistent/run.yaml") != std::string::npos);
  t = run_capture(exe() + " observe /nonexistent/run.yaml 2>&1", &st);
  CHECK(st != 0);
  CHECK(std::count(t.begin(), t.end(), '\n') == 1);
  t = run_capture(exe() + " rate --kT-keV -3 2>&1", &st);
  CHECK(st != 0);
  CHECK(std::count(t.begin(), t.end(), '\n') == 1);
  CHECK(t.find("--kT-keV") != std::string::npos);
  t = run_capture(exe() + " rate --kT-keV 5 --instrument /nonexistent/inst.yaml 2>&1", &st);
  CHECK(st != 0);
  CHECK(std::count(t.begin(), t.end(), '\n') == 1);
  CHECK(t.find("/nonexistent/inst.yaml") != std::string::npos);
  t = run_capture(exe() + " survey /nonexistent/sample.yaml 2>&1", &st);
  CHECK(WIFEXITED(st));
  CHECK(WEXITSTATUS(st) == 2);  // a configuration error of the sample itself
  CHECK(std::count(t.begin(), t.end(), '\n') == 1);
  CHECK(t.find("/nonexistent/sample.yaml") != std::string::npos);
  t = run_capture(exe() + " synth --bogus 2>&1", &st);
  CHECK(st != 0);
  t = run_capture(exe() + " --version", &st);
  CHECK(st == 0);
  CHECK(t.find("icmscope") == 0);
}
