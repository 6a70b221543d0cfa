// Vignetting: 1 on axis, <= 1, monotone; table interpolation and validation.
#include <catch2/catch.hpp>

#include <cmath>

#include "icmscope/core/errors.hpp"
#include "icmscope/instrument/vignetting.hpp"
#include "test_support.hpp"

using namespace icmscope;
using instrument::Vignetting;

TEST_CASE("analytic vignetting is 1 on axis and decreases monotonically", "[instrument][vignetting]") {
  const Vignetting v = Vignetting::analytic({12.0, 1.5, 0.3, 1.0});
  for (double E : {0.3, 1.0, 1.5, 4.0, 9.0}) {
    CHECK(v(0.0, E) == 1.0);
    double prev = 1.0;
    for (double t = 0.25; t <= 30.0; t += 0.25) {
      const double x = v(t, E);
      CHECK(x < prev);
      CHECK(x > 0.0);
      prev = x;
    }
  }
  // Defining form: V(theta_v0, E0) = 2^-p.
  CHECK(v(12.0, 1.5) == Approx(0.5));
  CHECK(Vignetting::analytic({12.0, 1.5, 0.3, 2.0})(12.0, 1.5) == Approx(0.25));
  // Falls faster at high energy (energy_slope > 0).
  CHECK(v(10.0, 6.0) < v(10.0, 1.0));
  // physics.md section 8 [M, from memory, unverified]: typically 0.5-0.7 at
  // 10 arcmin for 1-2 keV; the default law sits in that range.
  const Vignetting d = Vignetting::analytic({});
  CHECK(d(10.0, 1.5) > 0.5);
  CHECK(d(10.0, 1.5) < 0.7);
  // Band average lies between the band-edge values.
  const double b = v.band_average(10.0, 0.5, 7.0);
  CHECK(b < v(10.0, 0.5));
  CHECK(b > v(10.0, 7.0));
  CHECK(Vignetting::none()(25.0, 3.0) == 1.0);
}

TEST_CASE("tabulated vignetting interpolates bilinearly and validates", "[instrument][vignetting]") {
  // 2 energies x 3 angles.
  const Vignetting v = Vignetting::table({0.0, 5.0, 10.0}, {1.0, 5.0}, {1.0, 0.9, 0.7, 1.0, 0.8, 0.5});
  CHECK(v(0.0, 3.0) == Approx(1.0));
  CHECK(v(2.5, 1.0) == Approx(0.95));
  CHECK(v(7.5, 3.0) == Approx(0.5 * (0.8 + 0.65)));
  CHECK(v(20.0, 9.0) == Approx(0.5));  // held beyond the table
  CHECK_THROWS_WITH(Vignetting::table({1.0, 5.0}, {1.0}, {1.0, 0.9}, "vig.fits"),
                    Catch::Contains("vig.fits") && Catch::Contains("theta_arcmin[0]"));
  CHECK_THROWS_WITH(Vignetting::table({0.0, 5.0}, {1.0}, {1.0, 1.2}), Catch::Contains("values[1]"));
  CHECK_THROWS_WITH(Vignetting::table({0.0, 5.0}, {1.0}, {0.9, 0.8}), Catch::Contains("expected 1"));
  CHECK_THROWS_WITH(Vignetting::analytic({12.0, 1.5, 0.3, -1.0}), Catch::Contains("p = "));
}
