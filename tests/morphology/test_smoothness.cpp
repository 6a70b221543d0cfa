// Smoothness S (Conselice 2003) and ellipticity from second moments.
#include <catch2/catch.hpp>

#include <cmath>

#include "icmscope/morphology/ellipticity.hpp"
#include "icmscope/morphology/smoothness.hpp"
#include "morph_test_models.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::morphology;

TEST_CASE("smoothness: a linear gradient is perfectly smooth", "[morphology][smoothness]") {
  // [D] A boxcar mean reproduces a linear function exactly, so S = 0 when the
  // smoothing box stays inside the image.
  core::ImageD img(201, 201, 0.0);
  for (int iy = 0; iy < 201; ++iy)
    for (int ix = 0; ix < 201; ++ix) img(ix, iy) = 100.0 + 0.3 * ix - 0.2 * iy;
  SmoothnessSettings s;
  s.radius_px = 80;
  s.box_half_width_px = 5;
  SmoothnessScratch sc;
  const SmoothnessResult r = smoothness(img, {100, 100}, s, 0.0, sc);
  CHECK(r.S == Approx(0.0).margin(1e-10));
}

TEST_CASE("smoothness: point-like clumps raise S; background term removes noise", "[morphology][smoothness]") {
  // Poisson noise alone makes a smooth model look clumpy; the background-model term
  // (same statistic of pure background noise) cancels it for a background-dominated image.
  const int n = 161;
  core::ImageD bkg(n, n, 4.0);
  double sraw = 0, s = 0;
  const int K = 20;
  for (int k = 0; k < K; ++k) {
    const core::ImageD c = testing::poisson_image(bkg, 31, k);
    core::ImageD flux(n, n, 0.0);
    for (std::size_t i = 0; i < flux.size(); ++i) flux.pixels()[i] = c.pixels()[i] - 4.0 + 20.0;  // flat source of 20
    SmoothnessSettings st;
    st.radius_px = 60;
    st.box_half_width_px = 3;
    st.background_draws = 4;
    SmoothnessScratch sc;
    core::RandomStream rng(32, k);
    const double bres = smoothness_background_model(bkg, nullptr, {80, 80}, st, rng, sc);
    const SmoothnessResult r = smoothness(flux, {80, 80}, st, bres, sc);
    sraw += r.S_raw;
    s += r.S;
  }
  INFO("S_raw " << sraw / K << " S " << s / K);
  CHECK(sraw / K > 0.3);
  CHECK(std::fabs(s / K) < 0.02 * sraw / K);
  // Clumps: add bright single pixels to a smooth model.
  core::ImageD m = testing::gaussian_image(n, n, 80, 80, 20, 20, 1e5);
  SmoothnessSettings st;
  st.radius_px = 60;
  st.box_half_width_px = 3;
  SmoothnessScratch sc;
  const double s0 = smoothness(m, {80, 80}, st, 0.0, sc).S;
  m(100, 90) += 300;
  m(60, 70) += 300;
  CHECK(smoothness(m, {80, 80}, st, 0.0, sc).S > s0 + 0.05);
}

TEST_CASE("ellipticity and position angle of an elliptical Gaussian", "[morphology][ellipticity]") {
  // [D] second-moment axis ratio = sigma_y / sigma_x (morphology.md sec. 9). Point-sampled
  // Gaussians have exact discrete moments.
  const double sx = 9.0, sy = 5.0;
  for (double theta_deg : {0.0, 30.0, 90.0, 135.0}) {
    const double th = theta_deg * M_PI / 180.0;
    const core::ImageD img = testing::gaussian_image(201, 201, 100, 100, sx, sy, 1e4, th);
    EllipticitySettings s;
    s.radius_px = 95;
    const EllipticityResult r = ellipticity(img, {100, 100}, s);
    CHECK(r.axis_ratio == Approx(sy / sx).epsilon(1e-8));
    CHECK(r.ellipticity == Approx(1 - sy / sx).epsilon(1e-8));
    CHECK(r.lambda_major == Approx(sx * sx).epsilon(1e-8));
    // Major axis at theta from +x towards +y; +y = north, east = -x:
    // PA (east of north) = theta - 90 (mod 180).
    double pa = std::fmod(theta_deg - 90.0 + 360.0, 180.0);
    CHECK(r.pa_deg == Approx(pa).margin(1e-6));
  }
  CHECK(position_angle_east_of_north(90.0) == Approx(0.0));   // north-south major axis
  CHECK(position_angle_east_of_north(180.0) == Approx(90.0));  // east-west
  CHECK(position_angle_east_of_north(0.0) == Approx(90.0));
  CHECK(position_angle_east_of_north(135.0) == Approx(45.0));  // towards north-east (-x, +y)
}

TEST_CASE("ellipticity: Sheppard term of pixel-integrated images", "[morphology][ellipticity]") {
  // [D] Integrating a Gaussian over unit pixels adds 1/12 pixel^2 to each second moment.
  const double sx = 3.0, sy = 2.0;
  const core::ImageD img = testing::integrate_pixels(
      81, 81, [&](double x, double y) {
        return std::exp(-0.5 * ((x - 40) * (x - 40) / (sx * sx) + (y - 40) * (y - 40) / (sy * sy)));
      }, 8);
  EllipticitySettings s;
  s.radius_px = 38;
  const EllipticityResult raw = ellipticity(img, {40, 40}, s);
  CHECK(raw.mxx == Approx(sx * sx + 1.0 / 12).epsilon(1e-6));
  CHECK(raw.myy == Approx(sy * sy + 1.0 / 12).epsilon(1e-6));
  s.subtract_pixel_variance = true;
  const EllipticityResult c = ellipticity(img, {40, 40}, s);
  CHECK(c.axis_ratio == Approx(sy / sx).epsilon(1e-6));
}
