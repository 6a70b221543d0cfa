// Power ratios (Buote & Tsai 1995) against exact values (morphology.md sec. 3, 9).
#include <catch2/catch.hpp>

#include <cmath>

#include "icmscope/morphology/centre.hpp"
#include "icmscope/morphology/power_ratios.hpp"
#include "morph_test_models.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::morphology;

TEST_CASE("two point masses: the table of morphology.md sec. 9", "[morphology][power_ratios]") {
  // [D] mass 2 at (-1, 0), mass 1 at (+2, 0), R = 10 (dimensionless).
  const PowerRatioResult r = power_ratios_points({{-1, 0, 2}, {2, 0, 1}}, 10.0);
  CHECK(r.a[0] == Approx(3.0).epsilon(1e-14));
  CHECK(r.a[1] == Approx(0.0).margin(1e-13));
  CHECK(r.a[2] == Approx(6.0).epsilon(1e-13));
  CHECK(r.a[3] == Approx(6.0).epsilon(1e-13));
  CHECK(r.a[4] == Approx(18.0).epsilon(1e-13));
  for (int m = 1; m <= 4; ++m) CHECK(r.b[m] == Approx(0.0).margin(1e-12));
  CHECK(r.P[0] == Approx(47.717).epsilon(1e-5));
  CHECK(r.ratio[1] == Approx(0.0).margin(1e-20));
  CHECK(r.ratio[2] == Approx(9.4306e-6).epsilon(1e-4));
  CHECK(r.ratio[3] == Approx(4.1914e-8).epsilon(1e-4));
  CHECK(r.ratio[4] == Approx(2.1219e-9).epsilon(1e-4));
}

TEST_CASE("two equal point masses: P1 = P3 = 0, P2/P0 = d^4 / (128 R^4 ln^2 R)", "[morphology][power_ratios]") {
  // [D] morphology.md sec. 9.
  for (double d : {0.5, 2.0, 7.0}) {
    const double R = 13.0;
    const PowerRatioResult r = power_ratios_points({{-d / 2, 0, 1}, {d / 2, 0, 1}}, R);
    CHECK(r.ratio[1] == Approx(0.0).margin(1e-30));
    CHECK(r.ratio[3] == Approx(0.0).margin(1e-30));
    CHECK(r.ratio[2] == Approx(std::pow(d, 4) / (128 * std::pow(R, 4) * std::log(R) * std::log(R))).epsilon(1e-12));
  }
}

TEST_CASE("elliptical Gaussian: P2/P0 and P4 closed forms", "[morphology][power_ratios]") {
  // [D] a_2 = F Delta, P2/P0 = Delta^2 / (8 R^4 ln^2 R); a_4 = 3 F Delta^2,
  // P4 = 9 F^2 Delta^4 / (32 R^8); Delta = sx^2 - sy^2; R >> sigma.
  const double sx = 7.0, sy = 4.0, F = 1.0e4, R = 90.0;
  const core::ImageD img = testing::gaussian_image(241, 241, 120, 120, sx, sy, F);
  const PowerRatioResult r = power_ratios(img, nullptr, {120, 120}, R, 1.0);
  const double D = sx * sx - sy * sy;
  CHECK(r.a[0] == Approx(F).epsilon(1e-9));
  CHECK(r.a[2] == Approx(F * D).epsilon(1e-8));
  CHECK(r.a[4] == Approx(3 * F * D * D).epsilon(1e-7));
  CHECK(r.ratio[2] == Approx(D * D / (8 * std::pow(R, 4) * std::log(R) * std::log(R))).epsilon(1e-7));
  CHECK(r.P[4] == Approx(9 * F * F * std::pow(D, 4) / (32 * std::pow(R, 8))).epsilon(1e-6));
  CHECK(r.ratio[1] < 1e-25);
  CHECK(r.ratio[3] < 1e-25);
}

TEST_CASE("circular image: P_m = 0 for m >= 1", "[morphology][power_ratios]") {
  // [D] morphology.md sec. 9 symmetries; 4-fold pixel symmetry leaves only P4 at round-off
  // for a grid-centred circle; P1..P3 vanish.
  const core::ImageD img = testing::beta_image(201, 201, 100, 100, 15, 0.7);
  const PowerRatioResult r = power_ratios(img, nullptr, {100, 100}, 80, 2.0);
  CHECK(r.ratio[1] < 1e-28);
  CHECK(r.ratio[2] < 1e-28);
  CHECK(r.ratio[3] < 1e-28);
  CHECK(r.ratio[4] < 1e-12);  // pixelisation of a circle: square grid has a tiny m = 4 term
}

TEST_CASE("the ln R unit changes P0 only", "[morphology][power_ratios]") {
  const core::ImageD img = testing::gaussian_image(161, 161, 80.3, 79.6, 6, 3, 1e3, 0.4);
  const PowerRatioResult px = power_ratios(img, nullptr, {80.3, 79.6}, 60, 1.0);
  const PowerRatioResult kpc = power_ratios(img, nullptr, {80.3, 79.6}, 60, 3.7);
  for (int m = 1; m <= 4; ++m) CHECK(px.P[m] == Approx(kpc.P[m]).epsilon(1e-12));
  CHECK(px.ln_R == Approx(std::log(60.0)));
  CHECK(kpc.ln_R == Approx(std::log(60.0 * 3.7)));
  CHECK(kpc.P[0] / px.P[0] == Approx(std::pow(std::log(222.0) / std::log(60.0), 2)).epsilon(1e-12));
}

namespace {
// An asymmetric, smooth model: three Gaussians (a merger-like configuration).
core::ImageD three_blobs(int n, double cx, double cy, double angle) {
  const double c = std::cos(angle), s = std::sin(angle);
  auto at = [&](double u, double v) { return std::pair<double, double>{cx + c * u - s * v, cy + s * u + c * v}; };
  const auto p1 = at(0, 0), p2 = at(22, 9), p3 = at(-14, -17);
  core::ImageD a = testing::gaussian_image(n, n, p1.first, p1.second, 9, 6, 5e4, angle + 0.3);
  const core::ImageD b = testing::gaussian_image(n, n, p2.first, p2.second, 5, 5, 1.5e4);
  const core::ImageD d = testing::gaussian_image(n, n, p3.first, p3.second, 7, 3, 0.8e4, angle - 0.9);
  for (std::size_t i = 0; i < a.size(); ++i) a.pixels()[i] += b.pixels()[i] + d.pixels()[i];
  return a;
}
PowerRatioResult pr_about_centroid(const core::ImageD& img, double R, PixelPoint start) {
  CentroidSettings cs;
  cs.radius_px = R;
  const CentroidResult c = iterated_centroid(img, start, cs);
  REQUIRE(c.converged);
  return power_ratios(img, nullptr, c.centre, R, 1.0);
}
}  // namespace

TEST_CASE("power ratios: P1 = 0 at the iterated centroid", "[morphology][power_ratios]") {
  const core::ImageD img = three_blobs(201, 100.2, 99.7, 0.0);
  const PowerRatioResult r = pr_about_centroid(img, 70, {100, 100});
  CHECK(r.ratio[1] < 1e-20);
  CHECK(r.ratio[3] > 1e-8);  // and the model is really asymmetric
}

TEST_CASE("power ratios: rotation invariance", "[morphology][power_ratios]") {
  // [D] P_m is invariant under rotation of the image (morphology.md sec. 9).
  const int n = 201;
  const core::ImageD img = three_blobs(n, 100, 100, 0.0);
  const PowerRatioResult r0 = pr_about_centroid(img, 80, {100, 100});
  SECTION("90 degrees (exact pixel permutation)") {
    const PowerRatioResult r = pr_about_centroid(testing::rot90(img), 80, {100, 100});
    for (int m = 1; m <= 4; ++m) CHECK(r.ratio[m] == Approx(r0.ratio[m]).epsilon(1e-9).margin(1e-22));
  }
  SECTION("arbitrary angle, model re-rendered") {
    const PowerRatioResult r = pr_about_centroid(three_blobs(n, 100, 100, 0.6283), 80, {100, 100});
    for (int m = 2; m <= 4; ++m) CHECK(r.ratio[m] == Approx(r0.ratio[m]).epsilon(1e-6));
  }
  SECTION("arbitrary angle, bilinear resampling of the pixels") {
    // Resampling smooths the image slightly: tolerance 3%.
    const PowerRatioResult r = pr_about_centroid(testing::rotate_bilinear(img, 0.6283, 100, 100), 80, {100, 100});
    for (int m = 2; m <= 4; ++m) CHECK(r.ratio[m] == Approx(r0.ratio[m]).epsilon(0.03));
  }
}

TEST_CASE("power ratios: P_m/P0 invariant under scaling the image", "[morphology][power_ratios]") {
  // [D] morphology.md sec. 9.
  core::ImageD img = three_blobs(161, 80, 80, 0.2);
  const PowerRatioResult r0 = pr_about_centroid(img, 60, {80, 80});
  for (double& v : img.pixels()) v *= 7.3;
  const PowerRatioResult r1 = pr_about_centroid(img, 60, {80, 80});
  for (int m = 2; m <= 4; ++m) CHECK(r1.ratio[m] == Approx(r0.ratio[m]).epsilon(1e-11));
  CHECK(r1.P[0] == Approx(7.3 * 7.3 * r0.P[0]).epsilon(1e-12));
}

TEST_CASE("analytic noise-bias correction is unbiased for a fixed origin", "[morphology][power_ratios]") {
  // [D] E[a_m^2 + b_m^2] = true + sum mu_i r^(2m): for Poisson images of a circular
  // model plus a flat background (true P_m = 0 for m = 1..3), the mean corrected P_m
  // vanishes while the raw mean equals the mean noise term. Fixed seeds 1000..1399;
  // tolerance 4 standard errors.
  core::ImageD mu = testing::beta_image(101, 101, 50, 50, 8, 2.0 / 3.0, 40.0);
  for (double& v : mu.pixels()) v += 0.5;
  const int K = 400;
  double sr[4] = {}, sc[4] = {}, sc2[4] = {}, noise[4] = {};
  for (int k = 0; k < K; ++k) {
    const core::ImageD n = testing::poisson_image(mu, 1000 + k);
    const PowerRatioResult r = power_ratios(n, &n, {50, 50}, 45, 1.0);  // variance = counts
    for (int m = 1; m <= 3; ++m) {
      sr[m] += r.P[m];
      sc[m] += r.P_corrected[m];
      sc2[m] += r.P_corrected[m] * r.P_corrected[m];
      noise[m] += r.noise[m];
    }
  }
  for (int m = 1; m <= 3; ++m) {
    const double mean_c = sc[m] / K, se = std::sqrt((sc2[m] / K - mean_c * mean_c) / K);
    INFO("m " << m << " raw " << sr[m] / K << " corrected " << mean_c << " +- " << se << " noise " << noise[m] / K);
    CHECK(std::fabs(mean_c) < 4 * se);
    CHECK(sr[m] / K > 10 * se);  // the bias being removed is large
  }
}
