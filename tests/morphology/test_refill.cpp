// Hole refill and masked / gapped images.
#include <catch2/catch.hpp>

#include <cmath>

#include "icmscope/morphology/indicators.hpp"
#include "icmscope/morphology/refill.hpp"
#include "morph_test_models.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::morphology;

TEST_CASE("distance transform equals brute force", "[morphology][refill]") {
  const int nx = 53, ny = 41;
  core::RandomStream rng(4, 0);
  std::vector<std::uint8_t> good(nx * ny);
  for (auto& g : good) g = rng.uniform() < 0.03 ? 1 : 0;
  const std::vector<double> d = distance_to_good(good, nx, ny);
  for (int iy = 0; iy < ny; ++iy)
    for (int ix = 0; ix < nx; ++ix) {
      double best = INFINITY;
      for (int jy = 0; jy < ny; ++jy)
        for (int jx = 0; jx < nx; ++jx)
          if (good[jy * nx + jx]) best = std::min(best, std::hypot(jx - ix, jy - iy));
      CHECK(d[iy * nx + ix] == Approx(best).epsilon(1e-12));
    }
}

TEST_CASE("local annulus refill reproduces linear fields at symmetric holes", "[morphology][refill]") {
  // [D] the mean of a linear function over a ring symmetric about the hole equals
  // its value at the hole: exact for isolated pixels and the centre of a round hole.
  const int n = 64;
  std::vector<double> f(n * n);
  for (int iy = 0; iy < n; ++iy)
    for (int ix = 0; ix < n; ++ix) f[iy * n + ix] = 3.0 + 0.7 * ix - 0.4 * iy;
  std::vector<std::uint8_t> good(n * n, 1);
  good[10 * n + 12] = 0;
  for (int iy = 0; iy < n; ++iy)
    for (int ix = 0; ix < n; ++ix)
      if (std::hypot(ix - 40, iy - 30) <= 4.0) good[iy * n + ix] = 0;
  RefillSettings s;
  const RefillResult r = local_annulus_refill(good, n, n, {&f}, s);
  REQUIRE(r.unfilled.empty());
  int checked = 0;
  for (std::size_t j = 0; j < r.index.size(); ++j) {
    const std::size_t i = r.index[j];
    if (i == std::size_t(10 * n + 12) || i == std::size_t(30 * n + 40)) {
      CHECK(r.values[0][j] == Approx(f[i]).epsilon(1e-12));
      ++checked;
    } else {
      CHECK(r.values[0][j] == Approx(f[i]).margin(3.0));  // within a few pixels' gradient
    }
  }
  CHECK(checked == 2);
  // Beyond max_distance_px the hole stays empty.
  s.max_distance_px = 2.0;
  const RefillResult r2 = local_annulus_refill(good, n, n, {&f}, s);
  CHECK_FALSE(r2.unfilled.empty());
}

namespace {
MeasureInput strip_cluster(bool as_exposure_gap) {
  const int n = 201;
  MeasureInput in;
  in.counts = testing::beta_image(n, n, 100, 100, 10, 2.0 / 3.0, 50.0);  // noiseless "counts"
  in.kpc_per_pixel = 5.0;
  in.find_centre = false;
  in.centre = {100, 100};
  if (as_exposure_gap) {
    in.exposure = core::ImageD(n, n, 2.0e4);
    for (int iy = 0; iy < n; ++iy)
      for (int ix = 125; ix < 131; ++ix) in.exposure->operator()(ix, iy) = 0.0;  // chip gap 25-31 px off centre
  } else {
    in.mask.assign(n * n, 1);
    for (int iy = 0; iy < n; ++iy)
      for (int ix = 125; ix < 131; ++ix) in.mask[iy * n + ix] = 0;
  }
  return in;
}
}  // namespace

TEST_CASE("a masked strip: refill keeps P3/P0 and A near zero", "[morphology][refill]") {
  for (bool gap : {false, true}) {
    INFO((gap ? "zero-exposure gap" : "mask strip"));
    const MeasureInput in = strip_cluster(gap);
    MeasureSettings st;
    st.realisations = 0;
    st.power_ratios.push_back({90, "R", CentreChoice::input, LengthUnit::pixel});
    st.asymmetry.radius_px = 90;
    st.asymmetry.search_radius_px = 0;
    st.asymmetry.background = AsymmetryBackground::none;
    const Indicators filled = measure(in, st);
    st.refill.method = RefillMethod::none;
    const Indicators empty = measure(in, st);
    const double p_f = filled.find("P3/P0")->value.raw, p_e = empty.find("P3/P0")->value.raw;
    const double a_f = filled.find("A")->value.raw, a_e = empty.find("A")->value.raw;
    INFO("P3/P0 filled " << p_f << " unfilled " << p_e << "; A filled " << a_f << " unfilled " << a_e);
    CHECK(p_e > 1e-9);            // the hole alone makes a spurious m = 3 moment
    CHECK(p_f < 1e-4 * p_e);      // the refill removes it
    CHECK(p_f < 1e-12);
    // A is linear in the residual: the ~1% curvature error of the ring mean across
    // the strip remains at the 1e-2 level of the unfilled value.
    CHECK(a_f < 0.1 * a_e);
    CHECK(a_f < 0.01);
    CHECK(empty.flags.unfilled_pixels);
    CHECK_FALSE(filled.flags.unfilled_pixels);
    CHECK(filled.masked_fraction > 0.0);
  }
}
