// Morrison & McCammon 1983 photoelectric absorption.
#include <catch2/catch.hpp>

#include <cmath>

#include "icmscope/core/errors.hpp"
#include "icmscope/emission/absorption.hpp"

using namespace icmscope::emission;

TEST_CASE("MM83 cross-section and transmission check values", "[physics][absorption]") {
  // physics.md section 4 [C from Morrison & McCammon 1983, ApJ 270, 119, Table 2].
  CHECK(mm83_cross_section_cm2(0.3) == Approx(3.12e-21).epsilon(2e-3));
  CHECK(mm83_cross_section_cm2(0.5) == Approx(7.36e-22).epsilon(2e-3));
  CHECK(mm83_cross_section_cm2(1.0) == Approx(2.42e-22).epsilon(3e-3));
  CHECK(mm83_cross_section_cm2(2.0) == Approx(4.30e-23).epsilon(2e-3));
  // 5 keV lies in the Ca-edge row: c2 = +0.75 gives 3.53e-24 (with -0.75 it would be 3.23e-24).
  CHECK(mm83_cross_section_cm2(5.0) == Approx(3.5e-24).margin(0.05e-24));
  // Transmission at N_H = 3e20 cm^-2: 0.39, 0.80, 0.93, 0.99, 1.00.
  const double nH = 3e20;
  CHECK(mm83_transmission(0.3, nH) == Approx(0.39).margin(0.005));
  CHECK(mm83_transmission(0.5, nH) == Approx(0.80).margin(0.005));
  CHECK(mm83_transmission(1.0, nH) == Approx(0.93).margin(0.005));
  CHECK(mm83_transmission(2.0, nH) == Approx(0.99).margin(0.005));
  CHECK(mm83_transmission(5.0, nH) == Approx(1.00).margin(0.005));
  CHECK(mm83_transmission(0.5, 0.0) == 1.0);
  CHECK(mm83_transmission(1.0, 2 * nH) == Approx(std::pow(mm83_transmission(1.0, nH), 2)).epsilon(1e-13));
}

TEST_CASE("MM83 edges jump upwards; out-of-range policy", "[physics][absorption]") {
  const auto& e = mm83_edges_keV();
  // Interior row boundaries are absorption edges (N 0.400, Fe-L 0.707 ... Fe-K 7.111, 8.331) except 0.100,
  // where the two fits join continuously.
  for (std::size_t i = 1; i + 1 < e.size(); ++i) {
    const double below = mm83_cross_section_cm2(e[i] * (1 - 1e-9)), above = mm83_cross_section_cm2(e[i]);
    INFO("boundary " << e[i] << " keV");
    if (e[i] == 0.100)
      CHECK(above == Approx(below).epsilon(2e-3));
    else
      CHECK(above > below * 1.01);
  }
  // Between edges the cross-section falls with energy.
  for (double E = 0.031; E < 20.0; E *= 1.01) {
    bool edge = false;
    for (double x : e)
      if (E < x && E * 1.01 >= x) edge = true;
    if (!edge) CHECK(mm83_cross_section_cm2(E * 1.01) < mm83_cross_section_cm2(E));
  }
  // Below 0.03 keV: clamped (opaque for any Galactic column); above 10 keV: the last row extrapolated.
  CHECK(mm83_cross_section_cm2(0.01) == mm83_cross_section_cm2(0.03));
  CHECK(mm83_transmission(0.01, 1e20) < 1e-50);
  CHECK(mm83_cross_section_cm2(20.0) == Approx((701.2 + 25.2 * 20.0) / 8000.0 * 1e-24).epsilon(1e-14));
  CHECK_THROWS_AS(mm83_cross_section_cm2(0.0), icmscope::core::DomainError);
  CHECK_THROWS_AS(mm83_transmission(1.0, -1.0), icmscope::core::DomainError);
}
