// Instrument description files (config/instrument_settings.hpp) and the
// observe RUN file (config/observe_settings.hpp): the shipped presets, the
// printed examples, and bad files giving clear one-line errors that name the
// file, the line and the key.
#include <catch2/catch.hpp>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <functional>
#include <string>

#include "icmscope/config/instrument_settings.hpp"
#include "icmscope/config/observe_settings.hpp"
#include "icmscope/config/settings_reader.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/io/fits_table.hpp"
#include "icmscope/pipeline/instrument_model.hpp"
#include "test_support.hpp"

using namespace icmscope;
namespace fs = std::filesystem;
using icmscope::testing::scratch_dir;
using icmscope::testing::source_dir;

namespace {

std::string error_of(const std::function<void()>& f) {
  try {
    f();
  } catch (const core::Error& e) {
    return e.what();
  }
  return "";
}

config::InstrumentSettings parse(const std::string& text) {
  const auto f = config::SettingsFile::parse(text, "inst.yaml");
  auto s = config::read_instrument(f.root());
  f.finish();
  return s;
}

const char* kMinimal = R"(instrument: {name: T}
effective_area:
  kind: table
  energy_keV: [0.3, 1.0, 2.0, 8.0]
  area_cm2: [100, 400, 300, 50]
detector: {fov_shape: square, fov_arcmin: 10, pixel_arcsec: 1}
psf: {kind: gaussian, fwhm_arcsec: 2}
)";

std::string replace(std::string s, const std::string& from, const std::string& to) {
  const auto p = s.find(from);
  REQUIRE(p != std::string::npos);
  return s.replace(p, from.size(), to);
}

bool one_line(const std::string& m) { return !m.empty() && m.find('\n') == std::string::npos; }

}  // namespace

TEST_CASE("shipped instrument presets load and build", "[instrument_settings]") {
  int n = 0;
  for (const auto& e : fs::directory_iterator(source_dir() / "config" / "instruments")) {
    if (e.path().extension() != ".yaml") continue;
    ++n;
    INFO(e.path());
    const auto s = config::load_instrument(e.path().string());
    CHECK(!s.name.empty());
    CHECK(s.resolved_yaml.find("effective_area") != std::string::npos);
    const auto m = pipeline::build_instrument(s, 3e20);
    CHECK(m.area.max_cm2() > 0);
    CHECK(m.psf.half_energy_radius_arcsec() > 0);
    CHECK(m.last_channel() > m.first_channel());
    // The folding curve reproduces EffectiveArea::at() by linear interpolation.
    std::vector<double> E, A;
    pipeline::area_folding_curve(m, E, A);
    REQUIRE(E.size() >= 2);
    for (double x = E.front() * 1.0001; x < E.back(); x *= 1.0137) {
      const auto it = std::upper_bound(E.begin(), E.end(), x);
      const std::size_t j = static_cast<std::size_t>(it - E.begin());
      const double t = (x - E[j - 1]) / (E[j] - E[j - 1]);
      CHECK(A[j - 1] + t * (A[j] - A[j - 1]) == Approx(m.area.at(x)).epsilon(1e-9).margin(1e-9));
    }
  }
  CHECK(n >= 3);
}

TEST_CASE("the presets are plausible for their kind (illustrative figures)", "[instrument_settings]") {
  // Sanity of the invented presets against the brief: a sub-arcsecond imager,
  // a ~15 arcsec large-area imager, a ~30 arcsec wide-field imager.
  // Half-energy width of a King profile: 2 r_c sqrt(2^(1/(beta-1)) - 1) (physics.md section 8).
  auto load = [](const char* f) {
    return pipeline::build_instrument(config::load_instrument((source_dir() / "config" / "instruments" / f).string()),
                                      0.0);
  };
  const auto hr = load("lumen_hr.yaml"), la = load("vasta_la.yaml"), wf = load("sweep_wf.yaml");
  CHECK(2 * hr.psf.half_energy_radius_arcsec() < 1.0);
  CHECK(2 * la.psf.half_energy_radius_arcsec() == Approx(15.0).margin(2.0));
  CHECK(2 * wf.psf.half_energy_radius_arcsec() == Approx(30.0).margin(3.0));
  CHECK(la.area.max_cm2() > 3 * hr.area.max_cm2());
  CHECK(wf.settings.detector.layout.fov_arcmin > 2 * la.settings.detector.layout.fov_arcmin);
}

TEST_CASE("printed instrument example parses", "[instrument_settings]") {
  const auto s = parse(config::instrument_example_yaml());
  CHECK(s.name == "Example-CCD");
  CHECK(s.psf.kind == "king");
  CHECK(s.particle.lines.size() == 2);
  CHECK(s.sky.foreground.size() == 2);
  CHECK(s.detector.layout.extra_gaps.size() == 1);
  CHECK(s.dither.pattern == instrument::DitherPattern::Lissajous);
  CHECK_NOTHROW(pipeline::build_instrument(s, 3e20));
}

TEST_CASE("minimal instrument file: defaults", "[instrument_settings]") {
  const auto s = parse(kMinimal);
  CHECK(s.response.kind == "gaussian");
  CHECK(s.vignetting.kind == "none");
  CHECK(s.particle.level_counts_s_keV_arcmin2 == 0.0);
  CHECK_FALSE(s.sky.cxb_enabled);
  CHECK(s.dither.pattern == instrument::DitherPattern::None);
}

TEST_CASE("bad instrument files give clear one-line errors", "[instrument_settings]") {
  struct Case {
    std::string from, to, expect;
  };
  const std::vector<Case> cases = {
      // missing column of an inline table
      {"  area_cm2: [100, 400, 300, 50]\n", "", "effective_area.area_cm2: missing required key"},
      // non-monotone energies
      {"[0.3, 1.0, 2.0, 8.0]", "[0.3, 2.0, 1.0, 8.0]", "effective_area.energy_keV: element 2"},
      // negative area
      {"[100, 400, 300, 50]", "[100, -400, 300, 50]", "effective_area.area_cm2: element 1 = -400"},
      // lengths differ
      {"[100, 400, 300, 50]", "[100, 400, 300]", "expected one area per energy_keV point"},
      // unknown PSF kind
      {"kind: gaussian, fwhm", "kind: lorentzian, fwhm", "psf.kind"},
      // unknown key
      {"fwhm_arcsec: 2}", "fwhm_arcsec: 2, fwhm_arcmin: 1}", "fwhm_arcmin"},
      // unknown area kind
      {"kind: table", "kind: tabel", "effective_area.kind"},
      // bad detector
      {"fov_shape: square", "fov_shape: hexagon", "detector.fov_shape"},
      {"fov_arcmin: 10", "fov_arcmin: -10", "detector.fov_arcmin"},
  };
  for (const auto& c : cases) {
    const std::string m = error_of([&] { parse(replace(kMinimal, c.from, c.to)); });
    INFO(c.to << " -> " << m);
    CHECK(one_line(m));
    CHECK(m.find("inst.yaml:") == 0);
    CHECK(m.find(c.expect) != std::string::npos);
  }
  // The unknown PSF kind lists the valid ones.
  const std::string m = error_of([&] { parse(replace(kMinimal, "kind: gaussian, fwhm", "kind: lorentzian, fwhm")); });
  CHECK(m.find("king") != std::string::npos);
  // The first unknown key line number is named.
  const std::string u = error_of([&] { parse(std::string(kMinimal) + "vignetting: {kind: none, theta_v0: 3}\n"); });
  CHECK(u.find("inst.yaml:8:") == 0);
  CHECK(u.find("theta_v0") != std::string::npos);
  // Vignetting table: rows must start at 1 on axis and match theta_arcmin.
  const std::string v = error_of([&] {
    parse(std::string(kMinimal) +
          "vignetting: {kind: table, theta_arcmin: [0, 5, 10], rows: [{energy_keV: 1, values: [0.9, 0.8, 0.7]}]}\n");
  });
  CHECK(one_line(v));
  CHECK(v.find("expected 1 on axis") != std::string::npos);
}

TEST_CASE("a bad OGIP area file names the file and the column", "[instrument_settings]") {
  const auto dir = scratch_dir("instrument_settings_ogip");
  // An ARF without its SPECRESP column (CAL/GEN/92-002 requires ENERG_LO, ENERG_HI, SPECRESP).
  io::FitsTable t;
  t.extname = "SPECRESP";
  t.columns = {{"ENERG_LO", "keV", std::vector<double>{0.3, 0.5, 1.0}},
               {"ENERG_HI", "keV", std::vector<double>{0.5, 1.0, 2.0}}};
  const std::string arf = (dir / "bad.arf").string();
  io::write_fits_tables(arf, {t});
  {
    std::ofstream(dir / "inst.yaml") << replace(replace(kMinimal, "kind: table", "kind: ogip\n  file: bad.arf"),
                                                "  energy_keV: [0.3, 1.0, 2.0, 8.0]\n  area_cm2: [100, 400, 300, 50]\n",
                                                "");
  }
  const auto s = config::load_instrument((dir / "inst.yaml").string());
  CHECK(s.area.file == arf);
  const std::string m = error_of([&] { pipeline::build_instrument(s, 0.0); });
  INFO(m);
  CHECK(one_line(m));
  CHECK(m.find("bad.arf") != std::string::npos);
  CHECK(m.find("SPECRESP") != std::string::npos);
  // A missing file.
  std::ofstream(dir / "inst2.yaml") << replace(replace(kMinimal, "kind: table", "kind: ogip\n  file: nope.arf"),
                                               "  energy_keV: [0.3, 1.0, 2.0, 8.0]\n  area_cm2: [100, 400, 300, 50]\n",
                                               "");
  const std::string m2 =
      error_of([&] { pipeline::build_instrument(config::load_instrument((dir / "inst2.yaml").string()), 0.0); });
  CHECK(one_line(m2));
  CHECK(m2.find("nope.arf") != std::string::npos);
}

TEST_CASE("observe RUN file: example parses, bad combinations are rejected", "[observe_settings]") {
  const auto dir = scratch_dir("observe_settings");
  fs::create_directories(dir / "config" / "examples");
  fs::create_directories(dir / "config" / "instruments");
  fs::copy_file(source_dir() / "config" / "instruments" / "vasta_la.yaml", dir / "config" / "instruments" / "vasta_la.yaml");
  const auto run = dir / "config" / "examples" / "run.yaml";
  { std::ofstream(run) << config::observe_example_yaml(); }
  const auto s = config::load_observe_run(run.string());
  CHECK(s.observation.exposure_ks == 20);
  CHECK(s.observation.seed == 12345);
  CHECK(s.observation.point_sources.enabled);
  CHECK(s.instrument.name == "Vasta-LA");
  CHECK(s.map.output.prefix == "Maren-7_vasta");
  CHECK(s.config_hash.size() == 16);

  std::string text = config::observe_example_yaml();
  auto bad = [&](const std::string& t) {
    { std::ofstream(run) << t; }
    return error_of([&] { config::load_observe_run(run.string()); });
  };
  std::string m = bad(replace(text, "  nH_cm2: 2.5e20\n", "  nH_cm2: 2.5e20\n  effective_area: flat\n"));
  CHECK(one_line(m));
  CHECK(m.find("emission.effective_area") != std::string::npos);
  m = bad(replace(text, "  exposure_ks: 20 ", "  exposure_ks: -5 "));
  CHECK(m.find("observation.exposure_ks") != std::string::npos);
  m = bad(replace(text, "vasta_la.yaml", "no_such_instrument.yaml"));
  CHECK(one_line(m));
  CHECK(m.find("no_such_instrument.yaml") != std::string::npos);
  m = bad(replace(text, "cells:\n", "maps: {file: x.fits}\ncells:\n"));
  CHECK(m.find("exactly one of 'cells'") != std::string::npos);
  m = bad(replace(text, "  seed: 12345 ", "  seed: 12345\n  exposur_ks: 3 "));
  CHECK(one_line(m));
  CHECK(m.find("exposur_ks") != std::string::npos);
  CHECK(m.find("exposure_ks") != std::string::npos);  // the nearest valid key
}
