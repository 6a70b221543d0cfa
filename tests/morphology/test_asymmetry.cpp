// Rotational asymmetry (Conselice, Bershady & Jangren 2000).
#include <catch2/catch.hpp>

#include <cmath>

#include "icmscope/morphology/asymmetry.hpp"
#include "morph_test_models.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::morphology;

TEST_CASE("A = 0 for a circular image, found from an offset start", "[morphology][asymmetry]") {
  // [D] morphology.md sec. 9: a circular image gives A = 0.
  for (double c : {100.0, 100.5}) {
    const core::ImageD img = testing::beta_image(201, 201, c, c, 10, 0.7);
    AsymmetrySettings s;
    s.radius_px = 80;
    s.search_radius_px = 3;
    s.background = AsymmetryBackground::none;
    const AsymmetryResult r = asymmetry_minimum(img, {c + 1.2, c - 0.9}, s);
    CHECK(r.A == Approx(0.0).margin(1e-14));
    CHECK(r.centre.x == Approx(c));
    CHECK(r.centre.y == Approx(c));
  }
}

TEST_CASE("A of a symmetric image plus one extra pixel: closed form", "[morphology][asymmetry]") {
  // [D] uniform disc of value 1 (N pixels inside R about (50, 50)) plus q in one pixel:
  // sum|I - I_180| = 2 q, sum|I| = (total area) + q.
  core::ImageD img(101, 101, 1.0);
  const double q = 5.0;
  img(60, 47) += q;
  AsymmetrySettings s;
  s.radius_px = 30.0;
  s.search_radius_px = 0.0;
  const AsymmetrySums a = asymmetry_sums(img, 100, 100, 30.0);
  CHECK(a.residual == Approx(2 * q).epsilon(1e-12));
  CHECK(a.abs == Approx(M_PI * 900 + q).epsilon(1e-10));
  s.normalisation = AsymmetryNormalisation::twice_sum_abs;
  s.background = AsymmetryBackground::none;
  const AsymmetryResult r = asymmetry_minimum(img, {50, 50}, s);
  CHECK(r.A == Approx(2 * q / (2 * (M_PI * 900 + q))).epsilon(1e-10));
}

TEST_CASE("background term removes the noise asymmetry of blank sky", "[morphology][asymmetry]") {
  // A background-only image: the background-model term equals the image statistic on
  // average (Conselice et al. 2000 correction); A scatters about 0. Seeds 1..40.
  const int n = 121;
  core::ImageD bkg(n, n, 3.0);
  double sumA = 0, sumAraw = 0;
  const int K = 40;
  for (int k = 0; k < K; ++k) {
    const core::ImageD cnt = testing::poisson_image(bkg, 77, k);
    core::ImageD flux(n, n, 0.0);
    for (std::size_t i = 0; i < flux.size(); ++i) flux.pixels()[i] = cnt.pixels()[i] - 3.0 + 10.0;  // + flat source
    AsymmetrySettings s;
    s.radius_px = 50;
    s.search_radius_px = 0;  // fixed centre, so the statistic is not minimised over noise
    core::RandomStream rng(5, k);
    const AsymmetryResult r = asymmetry(flux, {60, 60}, s, &bkg, nullptr, rng);
    sumA += r.A;
    sumAraw += r.A_raw;
  }
  INFO("mean A_raw " << sumAraw / K << " mean A " << sumA / K);
  CHECK(sumAraw / K > 0.1);
  CHECK(std::fabs(sumA / K) < 0.01 * sumAraw / K);
}

TEST_CASE("asymmetry: blank-region background and rotation invariance", "[morphology][asymmetry]") {
  core::ImageD img = testing::gaussian_image(161, 161, 80, 80, 9, 6, 1e4, 0.4);
  const core::ImageD b = testing::gaussian_image(161, 161, 95, 70, 4, 4, 1.5e3);
  for (std::size_t i = 0; i < img.size(); ++i) img.pixels()[i] += b.pixels()[i];
  AsymmetrySettings s;
  s.radius_px = 50;
  s.background = AsymmetryBackground::none;
  const AsymmetryResult r0 = asymmetry_minimum(img, {80, 80}, s);
  const AsymmetryResult r1 = asymmetry_minimum(testing::rot90(img), {80, 80}, s);
  CHECK(r0.A > 0.05);
  CHECK(r1.A == Approx(r0.A).epsilon(1e-10));
  // Blank region: zero-valued sky gives a zero background term.
  s.background = AsymmetryBackground::blank_region;
  s.blank_centre = {80, 80};
  core::RandomStream rng(1, 1);
  const AsymmetryResult r2 = asymmetry(img, {80, 80}, s, nullptr, nullptr, rng);
  CHECK(r2.background_term == Approx(r2.A_raw));  // blank region = the source itself here
}
