// Effective-area curve: analytic shape, interpolation, band averages, validation.
#include <catch2/catch.hpp>

#include <cmath>

#include "icmscope/core/errors.hpp"
#include "icmscope/instrument/effective_area.hpp"
#include "test_support.hpp"

using namespace icmscope;
using instrument::EffectiveArea;

TEST_CASE("analytic area peaks at the stated energy and halves where the log-normal says", "[instrument][area]") {
  instrument::AnalyticAreaSettings s;
  s.peak_area_cm2 = 600.0;
  s.peak_energy_keV = 1.5;
  s.low_rolloff_dex = 0.2;
  s.high_rolloff_dex = 0.4;
  s.n_bins = 2000;
  const EffectiveArea a = EffectiveArea::analytic(s);
  // Invariant of the defining form A = A_pk exp(-x^2 / 2w^2), x = log10(E/E_pk):
  // A = A_pk / 2 at x = +- w sqrt(2 ln 2).
  CHECK(a.at(1.5) == Approx(600.0).epsilon(1e-4));
  const double k = std::sqrt(2.0 * std::log(2.0));
  CHECK(a.at(1.5 * std::pow(10.0, -0.2 * k)) == Approx(300.0).epsilon(1e-3));
  CHECK(a.at(1.5 * std::pow(10.0, 0.4 * k)) == Approx(300.0).epsilon(1e-3));
  CHECK(a.max_cm2() <= 600.0 + 1e-9);
  CHECK(a.at(0.05) == 0.0);   // below the curve
  CHECK(a.at(20.0) == 0.0);   // above the curve
}

TEST_CASE("tabulated points interpolate linearly and band averages are exact for linear curves",
          "[instrument][area]") {
  const EffectiveArea a = EffectiveArea::from_points({0.5, 1.0, 2.0, 4.0}, {100.0, 300.0, 500.0, 200.0});
  CHECK(a.at(1.0) == Approx(300.0));
  CHECK(a.at(0.75) == Approx(200.0));
  CHECK(a.at(3.0) == Approx(350.0));
  // Between 1 and 2 keV the curve is A = 100 + 200 E: flat-weighted mean over
  // [1, 2] = 100 + 200 * 1.5 = 400 (midpoint rule exact for a linear integrand).
  CHECK(a.band_average_cm2(1.0, 2.0) == Approx(400.0).epsilon(1e-9));
  // Photon weighting S = E^-2 over [1, 2]: Int (100 + 200E) E^-2 / Int E^-2
  // = (100 * 0.5 + 200 ln 2) / 0.5.
  const double expect = (100.0 * 0.5 + 200.0 * std::log(2.0)) / 0.5;
  CHECK(a.band_average_cm2(1.0, 2.0, [](double E) { return 1.0 / (E * E); }, 200000) == Approx(expect).epsilon(1e-6));
  CHECK(a.scaled(0.5).at(1.0) == Approx(150.0));
}

TEST_CASE("bin edges: piecewise values at bin centres", "[instrument][area]") {
  const EffectiveArea a = EffectiveArea::from_bins({1.0, 2.0, 3.0}, {10.0, 30.0});
  CHECK(a.at(1.5) == Approx(10.0));
  CHECK(a.at(2.0) == Approx(20.0));
  CHECK(a.at(1.1) == Approx(10.0));  // end node value out to the edge
  CHECK(a.e_min_keV() == 1.0);
  CHECK(a.e_max_keV() == 3.0);
}

TEST_CASE("invalid effective-area tables name the field", "[instrument][area]") {
  auto msg = [](auto&& f) {
    try {
      f();
    } catch (const core::DomainError& e) {
      return std::string(e.what());
    }
    return std::string("no error");
  };
  const std::string m1 = msg([] { EffectiveArea::from_points({1.0, 2.0, 1.5}, {1, 2, 3}, "curve.yaml"); });
  CHECK(m1.find("energy_keV[2]") != std::string::npos);
  CHECK(m1.find("curve.yaml") != std::string::npos);
  const std::string m2 = msg([] { EffectiveArea::from_bins({1.0, 2.0, 3.0}, {1.0, -2.0}); });
  CHECK(m2.find("area_cm2[1]") != std::string::npos);
  const std::string m3 = msg([] { EffectiveArea::from_bins({1.0, 2.0}, {1.0, 2.0}); });
  CHECK(m3.find("energy_keV") != std::string::npos);
  instrument::AnalyticAreaSettings s;
  s.peak_energy_keV = -1;
  CHECK(msg([&] { EffectiveArea::analytic(s); }).find("peak_energy_keV") != std::string::npos);
}
