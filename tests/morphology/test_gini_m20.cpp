// Gini and M20 (Lotz, Primack & Madau 2004).
#include <catch2/catch.hpp>

#include <cmath>

#include "icmscope/morphology/gini_m20.hpp"
#include "morph_test_models.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::morphology;

TEST_CASE("Gini: limits and a hand-computed value", "[morphology][gini]") {
  // [D] uniform -> 0; all flux in one pixel -> 1 (morphology.md sec. 6).
  CHECK(gini(std::vector<double>(5000, 2.5)) == Approx(0.0).margin(1e-12));
  std::vector<double> one(5000, 0.0);
  one[1234] = 7.0;
  CHECK(gini(one) == Approx(1.0).epsilon(1e-12));
  // [D] {1, 2, 3, 4}: sum (2i - n - 1) X_i = -3 - 2 + 3 + 12 = 10; mean n (n - 1) = 30.
  CHECK(gini({4.0, 1.0, 3.0, 2.0}) == Approx(1.0 / 3.0).epsilon(1e-14));
  // |X| is used: signs do not matter.
  CHECK(gini({-4.0, 1.0, -3.0, 2.0}) == Approx(1.0 / 3.0).epsilon(1e-14));
}

TEST_CASE("Gini: large sets sorted by the radix path agree with a direct O(n^2) form", "[morphology][gini]") {
  // G = sum_ij |X_i - X_j| / (2 n (n - 1) mean|X|) is the same statistic (Lotz et al. 2004).
  core::RandomStream rng(8, 0);
  std::vector<double> v(3000);
  for (auto& x : v) x = std::exp(3.0 * rng.uniform()) * (rng.uniform() < 0.1 ? -1.0 : 1.0);
  v[10] = v[11] = v[12];  // ties
  double sum = 0, mean = 0;
  for (double x : v) mean += std::fabs(x);
  mean /= v.size();
  for (double a : v)
    for (double b : v) sum += std::fabs(std::fabs(a) - std::fabs(b));
  const double n = v.size();
  CHECK(gini(v) == Approx(sum / (2 * n * (n - 1) * mean)).epsilon(1e-12));
}

TEST_CASE("M20 of a circular Gaussian: closed form", "[morphology][gini]") {
  // [D] Continuous circular Gaussian: the brightest 20% of the flux lies inside
  // r^2 = -2 s^2 ln 0.8 and holds M = M_tot [1 - 0.8 (1 - ln 0.8)], so
  // M20 = log10(1 - 0.8 (1 - ln 0.8)) = -1.66786. On pixels the brightest set grows
  // in rings of 4-8 equal pixels and stops below 20%: for sigma = 40 px that is a
  // shortfall of < 0.4% of the flux, i.e. < 0.005 dex (dlog10 M / df = 4.5 at f = 0.2).
  const core::ImageD img = testing::gaussian_image(401, 401, 200, 200, 40, 40, 1e6);
  GiniM20Settings s;
  s.radius_px = 195;
  const GiniM20Result r = gini_m20(img, {200, 200}, s);
  const double expect = std::log10(1.0 - 0.8 * (1.0 - std::log(0.8)));
  CHECK(expect == Approx(-1.66786).margin(1e-5));
  CHECK(r.m20 == Approx(expect).margin(0.005));
  CHECK(r.m20 < expect);  // the shortfall is one-sided
  // Gini of the same Gaussian in this aperture: larger than for a flatter profile.
  const core::ImageD flat = testing::gaussian_image(401, 401, 200, 200, 90, 90, 1e6);
  CHECK(gini_m20(flat, {200, 200}, s).gini < r.gini);
}

TEST_CASE("Gini/M20 unchanged by 90-degree rotation and flips", "[morphology][gini]") {
  core::ImageD img = testing::gaussian_image(161, 161, 80, 80, 9, 5, 1e4, 0.5);
  const core::ImageD b = testing::gaussian_image(161, 161, 100, 70, 3, 3, 1e3);
  for (std::size_t i = 0; i < img.size(); ++i) img.pixels()[i] += b.pixels()[i];
  GiniM20Settings s;
  s.radius_px = 60;
  const GiniM20Result r0 = gini_m20(img, {80, 80}, s);
  const GiniM20Result r1 = gini_m20(testing::rot90(img), {80, 80}, s);
  const GiniM20Result r2 = gini_m20(testing::flip_x(img), {80, 80}, s);
  CHECK(r1.gini == Approx(r0.gini).epsilon(1e-12));
  CHECK(r2.gini == Approx(r0.gini).epsilon(1e-12));
  CHECK(r1.m20 == Approx(r0.m20).epsilon(1e-12));
  CHECK(r2.m20 == Approx(r0.m20).epsilon(1e-12));
}
