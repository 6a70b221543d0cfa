// Abundance sets and fully ionised plasma composition against the derived
// table of physics.md section 3 ([C]) and the published mass fractions.
#include <catch2/catch.hpp>

#include <cmath>
#include <functional>
#include <string>

#include "icmscope/core/errors.hpp"
#include "icmscope/emission/abundances.hpp"

using namespace icmscope::emission;
using icmscope::core::DomainError;

TEST_CASE("composition matches the physics.md derived table", "[physics][abundances]") {
  // physics.md section 3, "Derived, fully ionised [C]" (3 decimals: margin 0.001 covers rounding).
  struct Row {
    PlasmaComposition c;
    double ne, ni, mu, mue;
  };
  const Row rows[] = {
      {composition(anders_grevesse_1989(), 1.0), 1.209, 1.099, 0.614, 1.171},
      {composition(anders_grevesse_1989(), 0.3), 1.200, 1.098, 0.608, 1.165},
      {composition(asplund_2009(), 1.0), 1.179, 1.086, 0.599, 1.151},
      {composition(asplund_2009(), 0.3), 1.173, 1.085, 0.595, 1.146},
      {composition(hydrogen_helium(0.76), 0.0), 1.159, 1.080, 0.588, 1.136},
  };
  int i = 0;
  for (const Row& r : rows) {
    INFO("row " << i++);
    CHECK(r.c.ne_over_nH == Approx(r.ne).margin(1e-3));
    CHECK(r.c.ni_over_nH == Approx(r.ni).margin(1e-3));
    CHECK(r.c.mu == Approx(r.mu).margin(1e-3));
    CHECK(r.c.mu_e == Approx(r.mue).margin(1e-3));
  }
  // H + He: mu = 4 / (3 + 5X) when m_He = 4 m_H (common practice); the atomic
  // weights 1.008 / 4.0026 shift it by < 1e-4.
  CHECK(rows[4].c.mu == Approx(4.0 / (3.0 + 5.0 * 0.76)).margin(1e-4));
  CHECK(rows[4].c.X == Approx(0.76).epsilon(1e-12));
}

TEST_CASE("mass fractions match the published X/Y/Z", "[physics][abundances]") {
  // Anders & Grevesse 1989 published X/Y/Z = 0.7065/0.2741/0.0194 (Magg et al. 2022) [V];
  // physics.md: the listed abundances give 0.7066/0.2741/0.0193.
  const auto ag = composition(anders_grevesse_1989(), 1.0);
  CHECK(ag.X == Approx(0.7066).margin(2e-4));
  CHECK(ag.Y == Approx(0.2741).margin(2e-4));
  CHECK(ag.Zmet == Approx(0.0193).margin(2e-4));
  CHECK(ag.X + ag.Y + ag.Zmet == Approx(1.0).epsilon(1e-14));
  // Asplund et al. 2009 X/Y/Z = 0.7381/0.2485/0.0134 [V]; our 15 metals omit trace elements (P, K, Ti, Mn, ...),
  // so Z is a little low.
  const auto a9 = composition(asplund_2009(), 1.0);
  CHECK(a9.X == Approx(0.7381).margin(1e-3));
  CHECK(a9.Y == Approx(0.2485).margin(1e-3));
  CHECK(a9.Zmet == Approx(0.0134).margin(5e-4));
  CHECK(a9.Zmet < 0.0134);
  // rho / n_H in grams is consistent with X: n_H m_H = X rho.
  CHECK(1.008 * 1.66053906660e-24 / ag.mass_per_H_g == Approx(ag.X).epsilon(1e-12));
}

TEST_CASE("free-free weight sum Z^2 n_i / n_H matches physics.md", "[physics][abundances]") {
  // physics.md section 1, fully ionised [C]: primordial X = 0.76: 1.318; + 0.3 Zsun AG89 metals: 1.360;
  // AG89 He + 0.3 Zsun: 1.432; AG89 solar: 1.529; Asplund 2009 solar: 1.434.
  CHECK(composition(hydrogen_helium(0.76), 0.3).sum_Z2_ni_over_nH == Approx(1.318).margin(6e-4));
  AbundanceSet mixed = hydrogen_helium(0.76);
  for (const Element& e : anders_grevesse_1989().elements)
    if (e.Z > 2) mixed.elements.push_back(e);
  CHECK(composition(mixed, 0.3).sum_Z2_ni_over_nH == Approx(1.360).margin(6e-4));
  CHECK(composition(anders_grevesse_1989(), 0.3).sum_Z2_ni_over_nH == Approx(1.432).margin(6e-4));
  CHECK(composition(anders_grevesse_1989(), 1.0).sum_Z2_ni_over_nH == Approx(1.529).margin(6e-4));
  CHECK(composition(asplund_2009(), 1.0).sum_Z2_ni_over_nH == Approx(1.434).margin(6e-4));
  // physics.md: at 0.3 Zsun the metals add ~3% of the sum.
  const double metals = composition(anders_grevesse_1989(), 0.3).sum_Z2_ni_over_nH -
                        composition(anders_grevesse_1989(), 0.0).sum_Z2_ni_over_nH;
  CHECK(metals / composition(anders_grevesse_1989(), 0.3).sum_Z2_ni_over_nH == Approx(0.03).margin(0.003));
}

TEST_CASE("metallicity scales metals only; sets are looked up by name", "[physics][abundances]") {
  const auto& ag = anders_grevesse_1989();
  // Z = 0: H + He only, He at the solar value.
  const auto c0 = composition(ag, 0.0);
  CHECK(c0.ne_over_nH == Approx(1.0 + 2.0 * 9.77e-2).epsilon(1e-14));
  CHECK(c0.Zmet == 0.0);
  // Linear in Z: n_e(2) - n_e(1) = n_e(1) - n_e(0).
  const auto c1 = composition(ag, 1.0), c2 = composition(ag, 2.0);
  CHECK(c2.ne_over_nH - c1.ne_over_nH == Approx(c1.ne_over_nH - c0.ne_over_nH).epsilon(1e-12));
  CHECK(c2.sum_Z2_ni_over_nH - c1.sum_Z2_ni_over_nH == Approx(c1.sum_Z2_ni_over_nH - c0.sum_Z2_ni_over_nH).epsilon(1e-12));
  // Asplund 2009 Table 1: Fe log eps = 7.50.
  const auto& a9 = abundance_set("a09");
  CHECK(a9.elements[static_cast<std::size_t>(a9.index_of(26))].n_over_nH == Approx(3.1623e-5).epsilon(1e-4));
  CHECK(&abundance_set("anders_grevesse_1989") == &ag);
  CHECK(a9.index_of(3) == -1);
  REQUIRE(ag.elements.size() == 17);
  CHECK(ag.elements[0].symbol == "H");
  CHECK(ag.elements[1].symbol == "He");
  std::string msg;
  try {
    abundance_set("solar");
  } catch (const DomainError& e) {
    msg = e.what();
  }
  CHECK(msg.find("'solar'") != std::string::npos);
  CHECK(msg.find("ag89") != std::string::npos);
  CHECK_THROWS_AS(composition(ag, -0.1), DomainError);
  CHECK_THROWS_AS(composition(ag, std::nan("")), DomainError);
  CHECK_THROWS_AS(hydrogen_helium(0.0), DomainError);
}
