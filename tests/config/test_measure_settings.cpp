// Settings of `measure`: aperture text, image references, sky-circle CSV, the
// strict YAML reader and the consistency checks.
#include <catch2/catch.hpp>

#include <fstream>

#include "icmscope/config/measure_settings.hpp"
#include "icmscope/core/errors.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::config;

TEST_CASE("measure settings: apertures with units", "[config][measure]") {
  const auto a = parse_aperture("500 kpc", false, "k");
  CHECK(a.unit == ApertureUnit::kpc);
  CHECK(a.outer == 500.0);
  CHECK(a.label() == "500 kpc");
  CHECK(parse_aperture("R500", false, "k").label() == "R500");
  CHECK(parse_aperture("1 R500", false, "k").label() == "R500");
  const auto h = parse_aperture("0.5r500", false, "k");
  CHECK(h.unit == ApertureUnit::r500);
  CHECK(h.label() == "0.5 R500");
  CHECK(parse_aperture("1.5 Mpc", false, "k").outer == 1500.0);      // converted to kpc
  CHECK(parse_aperture("2 arcmin", false, "k").outer == 120.0);      // converted to arcsec
  CHECK(parse_aperture("40 px", false, "k").unit == ApertureUnit::pixel);
  const auto p = parse_aperture("40/400 kpc", true, "k");
  CHECK(p.inner == 40.0);
  CHECK(p.outer == 400.0);
  CHECK(p.label() == "40/400 kpc");  // the label the Santos et al. 2008 preset looks up
  CHECK(parse_aperture("0.1/1 R500", true, "k").label() == "0.1/1 R500");
  // Malformed text: ConfigError naming the key.
  for (const char* bad : {"500", "kpc", "500 furlongs", "-3 kpc", "abc kpc"}) {
    INFO(bad);
    try {
      parse_aperture(bad, false, "apertures.asymmetry");
      FAIL("accepted");
    } catch (const core::ConfigError& e) {
      CHECK(std::string(e.what()).find("apertures.asymmetry") != std::string::npos);
    }
  }
  CHECK_THROWS_AS(parse_aperture("400/40 kpc", true, "k"), core::ConfigError);  // inner >= outer
  CHECK_THROWS_AS(parse_aperture("400 kpc", true, "k"), core::ConfigError);     // not a pair
}

TEST_CASE("measure settings: image references and sky circles", "[config][measure]") {
  auto r = parse_image_ref("obs.fits[COUNTS]", "k");
  CHECK(r.file == "obs.fits");
  CHECK(r.hdu == "COUNTS");
  r = parse_image_ref("dir/obs.fits", "k");
  CHECK(r.file == "dir/obs.fits");
  CHECK(r.hdu.empty());
  CHECK(parse_image_ref("a.fits[2]", "k").hdu == "2");
  CHECK_THROWS_AS(parse_image_ref("a.fits[]", "k"), core::ConfigError);
  CHECK_THROWS_AS(parse_image_ref("", "k"), core::ConfigError);

  const auto dir = testing::scratch_dir("measure_settings");
  {
    std::ofstream f(dir / "c.csv");
    f << "# point sources\nname,radius_arcsec,dec_deg,ra_deg\nA,10,21.4,148.6\nB,5.5,-3.25,10.0\n";
  }
  const auto c = read_sky_circles_csv((dir / "c.csv").string());
  REQUIRE(c.size() == 2);
  CHECK(c[0].ra_deg == 148.6);
  CHECK(c[0].dec_deg == 21.4);
  CHECK(c[1].radius_arcsec == 5.5);
  {
    std::ofstream f(dir / "bad.csv");
    f << "ra_deg,dec_deg,radius_arcsec\n1,2\n";
  }
  try {
    read_sky_circles_csv((dir / "bad.csv").string());
    FAIL("accepted");
  } catch (const core::InputError& e) {
    CHECK(std::string(e.what()).find("bad.csv:2") != std::string::npos);
  }
}

TEST_CASE("measure settings: YAML reading and checks", "[config][measure]") {
  const auto dir = testing::scratch_dir("measure_settings_yaml");
  const auto write = [&](const std::string& name, const std::string& text) {
    std::ofstream(dir / name) << text;
    return (dir / name).string();
  };
  const auto ok = write("ok.yaml",
                        "inputs:\n  counts: img.fits[COUNTS]\n  background_annulus: \"1.5/2 R500\"\n"
                        "  mask_circles:\n    - {ra_deg: 10, dec_deg: 20, radius_arcsec: 5}\n"
                        "target: {redshift: 0.1, m500_msun: 5e14, centre: {ra_deg: 10, dec_deg: 20}}\n"
                        "apertures: {concentration: [\"40/400 kpc\"], asymmetry: off, centroid_shift: \"R500\"}\n"
                        "realisations: {number: 10, seed: 7}\n"
                        "classification: {presets: [cassano2010]}\n"
                        "output: {json: out.json}\n");
  const MeasureRunSettings s = load_measure_run(ok);
  CHECK(s.inputs.counts.file == (dir / "img.fits").lexically_normal().string());  // relative to the YAML folder
  CHECK(s.inputs.counts.hdu == "COUNTS");
  REQUIRE(s.inputs.background_annulus);
  CHECK(s.inputs.background_annulus->inner == 1.5);
  CHECK(s.inputs.mask_circles.size() == 1);
  CHECK_FALSE(s.target.find_centre);
  CHECK(s.apertures.asymmetry_off);
  REQUIRE(s.apertures.concentration);
  CHECK(s.apertures.concentration->size() == 1);
  CHECK(s.statistics.seed == 7);
  CHECK(s.output.json == (dir / "out.json").lexically_normal().string());
  CHECK(s.resolved_yaml.find("realisations") != std::string::npos);

  // Unknown keys, two background sources, misspelt presets: ConfigError naming the key.
  const auto expect_error = [&](const std::string& text, const std::string& needle) {
    const auto p = write("bad.yaml", text);
    try {
      load_measure_run(p);
      FAIL("accepted: " << text);
    } catch (const core::ConfigError& e) {
      INFO(e.what());
      CHECK(std::string(e.what()).find(needle) != std::string::npos);
    }
  };
  expect_error("inputs: {counts: a.fits, exposur: b.fits}\n", "exposur");
  expect_error("inputs: {counts: a.fits, background: b.fits, background_level_counts_per_pixel: 1}\n", "background");
  expect_error("inputs: {counts: a.fits}\nclassification: {presets: [casano2010]}\n", "cassano2010");
  expect_error("inputs: {counts: a.fits}\nrealisations: {source: expected}\n", "inputs.expected");
  expect_error("inputs: {counts: a.fits}\ntarget: {r500_kpc: 1000, m500_msun: 1e14}\n", "not both");
  expect_error("inputs: {exposure: a.fits}\n", "counts");
  expect_error("inputs: {counts: a.fits}\napertures: {power_ratios: [\"500 parsec\"]}\n", "apertures.power_ratios[0]");
}
