// Centroid shift w (Poole et al. 2006; Maughan et al. 2008).
#include <catch2/catch.hpp>

#include <cmath>

#include "icmscope/morphology/centroid_shift.hpp"
#include "morph_test_models.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::morphology;

TEST_CASE("aperture sequence: 20 apertures from R_max to 0.05 R_max in 5% steps", "[morphology][centroid_shift]") {
  // Poole et al. 2006 / Maughan et al. 2008 sequence [M] (morphology.md sec. 2).
  CentroidShiftSettings s;
  s.r_max_px = 200;
  const auto r = centroid_shift_radii(s);
  REQUIRE(r.size() == 20);
  for (int k = 0; k < 20; ++k) CHECK(r[k] == Approx(200 * (1.0 - 0.05 * k)).epsilon(1e-12));
  s.core_exclusion_px = 25;  // drops 0.05 and 0.1 R_max (10 and 20 px)
  CHECK(centroid_shift_radii(s).size() == 18);
}

TEST_CASE("w = 0 for a circular image", "[morphology][centroid_shift]") {
  // [D] morphology.md sec. 9: a circular image gives w = 0. Exactly (round-off) when
  // the centre sits on a pixel centre or corner, where the pixel grid keeps the
  // symmetry; at a general sub-pixel centre the pixelised boundary of each aperture
  // leaves centroid offsets of ~1e-4 px (w ~ 1e-6, far below relaxed values ~1e-3).
  CentroidShiftSettings s;
  s.r_max_px = 140;
  s.core_exclusion_px = 6;
  for (double c : {150.0, 150.5}) {
    const core::ImageD img = testing::beta_image(301, 301, c, c, 12, 0.7);
    const CentroidShiftResult r = centroid_shift(img, {c, c}, s);
    CHECK(r.w < 1e-12);
  }
  const core::ImageD img = testing::beta_image(301, 301, 150.25, 149.6, 12, 0.7);
  const CentroidShiftResult r = centroid_shift(img, {150.25, 149.6}, s);
  CHECK(r.w < 1e-5);
}

TEST_CASE("w of a peak plus an offset point source: closed form", "[morphology][centroid_shift]") {
  // [D] Flux F0 in the peak pixel and m at distance d: the centroid of an aperture
  // that holds both pixels entirely lies at m d / (F0 + m) from the peak, else at 0.
  core::ImageD img(201, 201, 0.0);
  img(100, 100) = 90.0;
  img(137, 100) = 10.0;  // d = 37
  CentroidShiftSettings s;
  s.r_max_px = 95;
  s.n_apertures = 10;
  s.min_fraction = 0.1;
  const CentroidShiftResult r = centroid_shift(img, {100, 100}, s);
  std::vector<double> delta;
  for (double R : r.radii_px) delta.push_back(R > 37.0 + std::sqrt(0.5) ? 10.0 * 37.0 / 100.0 : 0.0);
  // R = 38 (0.4 R_max) is > 37.71: all radii >= 38 include the source.
  double mean = 0;
  for (double v : delta) mean += v;
  mean /= delta.size();
  double ss = 0;
  for (double v : delta) ss += (v - mean) * (v - mean);
  const double w = std::sqrt(ss / (delta.size() - 1)) / 95.0;
  for (std::size_t i = 0; i < delta.size(); ++i) CHECK(r.delta_px[i] == Approx(delta[i]).margin(1e-12));
  CHECK(r.w == Approx(w).epsilon(1e-12));
  CHECK(r.w > 0.001);
}

TEST_CASE("w is invariant under rotating the image by 90 degrees", "[morphology][centroid_shift]") {
  core::ImageD img = testing::gaussian_image(201, 201, 100, 100, 8, 5, 1e4, 0.3);
  const core::ImageD b = testing::gaussian_image(201, 201, 130, 112, 6, 6, 2e3);
  for (std::size_t i = 0; i < img.size(); ++i) img.pixels()[i] += b.pixels()[i];
  CentroidShiftSettings s;
  s.r_max_px = 90;
  const double w0 = centroid_shift(img, {100, 100}, s).w;
  const double w1 = centroid_shift(testing::rot90(img), {100, 100}, s).w;
  CHECK(w0 > 1e-3);
  CHECK(w1 == Approx(w0).epsilon(1e-10));
}
