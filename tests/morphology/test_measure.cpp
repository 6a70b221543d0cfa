// The measure() entry point: invariances, conventions, flags.
#include <catch2/catch.hpp>

#include <cmath>
#include <set>

#include "icmscope/morphology/indicators.hpp"
#include "morph_test_models.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::morphology;

namespace {
// An asymmetric noisy cluster on a square grid with a flat background.
MeasureInput merger(int n, std::uint64_t seed) {
  const double c = 0.5 * (n - 1);
  core::ImageD mu = testing::beta_image(n, n, c, c, 9, 0.7, 30.0);
  const core::ImageD clump = testing::gaussian_image(n, n, c + 28, c - 13, 6, 4, 6000, 0.7);
  for (std::size_t i = 0; i < mu.size(); ++i) mu.pixels()[i] += clump.pixels()[i] + 0.1;
  MeasureInput in;
  in.counts = testing::poisson_image(mu, seed);
  in.background_level = 0.1;
  in.kpc_per_pixel = 4.0;
  return in;
}

MeasureSettings all_settings(double r500_px) {
  MeasureSettings s = default_measure_settings(4.0, r500_px * 4.0);
  s.realisations = 0;
  s.photon_asymmetry.jitter_within_pixel = false;  // exact invariance (jittered: statistical)
  s.asymmetry.background_draws = 0;
  s.smoothness.background_draws = 0;
  return s;
}

bool is_coordinate(const std::string& n) { return n.rfind("peak_", 0) == 0 && n.find("offset") == std::string::npos; }
}  // namespace

TEST_CASE("measure: raw values unchanged by 90-degree rotation and flips", "[morphology][measure]") {
  // [D] every indicator is defined from distances and angles about centres found
  // from the image itself: a pixel-exact rotation or reflection leaves them unchanged
  // (position angles rotate / reflect; centres move).
  const int n = 181;
  MeasureInput in = merger(n, 7);
  const MeasureSettings s = all_settings(85);
  const Indicators a = measure(in, s);
  MeasureInput rin = in, fin = in;
  rin.counts = testing::rot90(in.counts);
  fin.counts = testing::flip_x(in.counts);
  const Indicators b = measure(rin, s);
  const Indicators f = measure(fin, s);
  REQUIRE(a.values.size() == b.values.size());
  int compared = 0;
  for (std::size_t i = 0; i < a.values.size(); ++i) {
    const std::string& name = a.values[i].name;
    if (is_coordinate(name) || name.rfind("centroid_", 0) == 0 || name == "pa_deg") continue;
    const double va = a.values[i].value.raw, vb = b.values[i].value.raw, vf = f.values[i].value.raw;
    INFO(name << " (" << a.values[i].aperture << "): " << va << " rot " << vb << " flip " << vf);
    REQUIRE(std::isfinite(va));
    CHECK(vb == Approx(va).epsilon(1e-9).margin(1e-15));
    CHECK(vf == Approx(va).epsilon(1e-9).margin(1e-15));
    ++compared;
  }
  CHECK(compared >= 25);
  // Centres: (x, y) -> (n - 1 - y, x) under rot90; x -> n - 1 - x under the flip.
  CHECK(b.find("peak_x")->value.raw == Approx(n - 1 - a.find("peak_y")->value.raw));
  CHECK(b.find("peak_y")->value.raw == Approx(a.find("peak_x")->value.raw));
  CHECK(f.find("peak_x")->value.raw == Approx(n - 1 - a.find("peak_x")->value.raw));
  // PA: +90 deg under rot90 (mod 180), 180 - PA under the x flip.
  const double pa = a.find("pa_deg")->value.raw;
  CHECK(std::fmod(b.find("pa_deg")->value.raw - pa + 360.0, 180.0) == Approx(90.0).margin(1e-6));
  CHECK(std::fmod(f.find("pa_deg")->value.raw + pa, 180.0) == Approx(0.0).margin(1e-6));
}

TEST_CASE("measure: the merger is asymmetric, A_phot with jitter is statistically invariant", "[morphology][measure]") {
  const int n = 181;
  MeasureInput in = merger(n, 8);
  MeasureSettings s = all_settings(85);
  s.photon_asymmetry.jitter_within_pixel = true;
  const Indicators a = measure(in, s);
  in.counts = testing::rot90(in.counts);
  const Indicators b = measure(in, s);
  const double pa = a.find("A_phot")->value.raw, pb = b.find("A_phot")->value.raw;
  CHECK(pa > 0.5);
  CHECK(pb == Approx(pa).epsilon(0.15));  // different jitter draws: a few per cent scatter
  CHECK(a.find("P3/P0", "R500")->value.raw > 1e-8);
  CHECK(a.find("w", "R500")->value.raw > 0.005);
}

TEST_CASE("measure: beta-model concentrations in the three conventions", "[morphology][measure]") {
  // morphology.md sec. 9 table, beta = 2/3, rc = 100 kpc, R500 = 1 Mpc, at 2.5 kpc/pixel,
  // centre found as the peak of the smoothed image (model centred on a pixel).
  const int n = 821;
  MeasureInput in;
  in.counts = testing::beta_image(n, n, 410, 410, 100 / 2.5, 2.0 / 3.0, 100.0);
  in.kpc_per_pixel = 2.5;
  MeasureSettings s = default_measure_settings(2.5, 1000.0);
  s.realisations = 0;
  s.asymmetry.radius_px = 0;  // only what this test needs
  s.photon_asymmetry.r500_px = 0;
  s.gini_m20.radius_px = 0;
  s.smoothness.radius_px = 0;
  const Indicators ind = measure(in, s);
  CHECK(ind.find("peak_x")->value.raw == Approx(410.0).margin(1e-9));
  CHECK(ind.find("c", "40/400 kpc")->value.raw == Approx(0.09442).epsilon(2e-3));  // r1 = 16 px: coarser
  CHECK(ind.find("c", "100/500 kpc")->value.raw == Approx(0.36435).epsilon(1e-3));
  CHECK(ind.find("c", "0.1/1 R500")->value.raw == Approx(0.32526).epsilon(1e-3));
  CHECK(ind.find("w", "R500")->value.raw < 1e-12);
  CHECK(ind.find("P3/P0", "R500")->value.raw < 1e-20);
  CHECK(ind.find("P2/P0", "500 kpc")->value.raw < 1e-20);
  CHECK(ind.find("ellipticity")->value.raw < 1e-9);
  CHECK_FALSE(ind.flags.aperture_beyond_image);
  CHECK_FALSE(ind.flags.centre_near_edge);
  // conventions are recorded
  CHECK(ind.find("P3/P0", "R500")->convention.find("ln R in kpc") != std::string::npos);
}

TEST_CASE("measure: flags", "[morphology][measure]") {
  const int n = 121;
  MeasureInput in;
  in.counts = testing::beta_image(n, n, 6, 60, 5, 0.7, 0.2);  // faint, peak 6 px from the left edge
  in.kpc_per_pixel = 10;
  MeasureSettings s = default_measure_settings(10, 600);  // R500 = 60 px
  s.realisations = 0;
  const Indicators ind = measure(in, s);
  CHECK_FALSE(ind.flags.centre_near_edge);  // 6.5 px to the image edge > margin max(5, 3 sigma) = 6
  CHECK(ind.flags.aperture_beyond_image);
  CHECK(ind.flags.low_counts);
  CHECK(ind.masked_fraction > 0.3);  // half the R500 circle lies outside the image
  CHECK(ind.flags.large_masked_fraction);
  CHECK_FALSE(ind.flags.notes.empty());
  in.counts = testing::beta_image(n, n, 2, 60, 5, 0.7, 0.2);
  CHECK(measure(in, s).flags.centre_near_edge);
}

TEST_CASE("measure: classes from presets with probabilities", "[morphology][measure]") {
  const int n = 201;
  core::ImageD mu = testing::beta_image(n, n, 100, 100, 100 / 5.0, 2.0 / 3.0, 1.0);
  const double sum = mu.sum();
  for (auto& v : mu.pixels()) v = v * 4e4 / sum + 0.01;
  MeasureInput in;
  in.counts = testing::poisson_image(mu, 12);
  in.background_level = 0.01;
  in.kpc_per_pixel = 5.0;
  MeasureSettings s = default_measure_settings(5.0, 500.0);
  s.realisations = 30;
  s.presets = {"cassano2010", "p3_three_class", "santos2008"};
  const Indicators ind = measure(in, s);
  REQUIRE(ind.classes.size() == 3);
  const ClassResult& cas = ind.classes[0];
  CHECK(cas.available);
  CHECK(cas.label == "relaxed");
  double tot = 0;
  for (double p : cas.probability) tot += p;
  CHECK(tot == Approx(1.0));
  CHECK(cas.probability[0] > 0.9);
  // p3_three_class needs P3/P0 at "R500": present (r500 given)
  CHECK(ind.classes[1].available);
  CHECK(ind.classes[2].available);
  CHECK_FALSE(ind.classes[2].verified);
}

TEST_CASE("measure: input validation", "[morphology][measure]") {
  MeasureInput in;
  in.counts = core::ImageD(20, 20, 1.0);
  in.kpc_per_pixel = 1.0;
  MeasureSettings s;
  s.realisations = 0;
  in.exposure = core::ImageD(10, 10, 1.0);
  CHECK_THROWS_AS(measure(in, s), core::InputError);
  in.exposure.reset();
  in.mask.assign(5, 1);
  CHECK_THROWS_AS(measure(in, s), core::InputError);
  in.mask.clear();
  in.counts(3, 3) = -1.0;
  CHECK_THROWS_AS(measure(in, s), core::InputError);
  in.counts(3, 3) = 1.0;
  s.power_ratios.push_back({5, "x", CentreChoice::centroid, LengthUnit::kpc});
  in.kpc_per_pixel = 0.0;
  CHECK_THROWS_AS(measure(in, s), core::ConfigError);
  CHECK_THROWS_AS(default_measure_settings(0.0, 1000), core::ConfigError);
}
