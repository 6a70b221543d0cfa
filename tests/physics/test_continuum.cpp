// Thermal continuum: free-free constants derived from CODATA, the summed-ion
// spectrum, the R&L eq. 5.15 total with the van Hoof 2014 integrated Gaunt
// factor, and the recombination (Kramers) edges.
#include <catch2/catch.hpp>

#include <cmath>
#include <memory>
#include <vector>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/emission/continuum.hpp"

using namespace icmscope::emission;
namespace k = icmscope::core::constants;

namespace {
std::shared_ptr<const GauntTable> gaunt() {
  static const auto t = std::make_shared<const GauntTable>();
  return t;
}
ContinuumSettings ff_only() {
  ContinuumSettings s;
  s.recombination = false;
  return s;
}
double rel(double a, double b) { return std::abs(a / b - 1.0); }

// Int E eps dE [erg s^-1 cm^3] by the midpoint rule in ln E over [1e-7 kT, 60 kT].
double bolometric(const ContinuumEmissivity& c, double kT, double Z) {
  const int n = 40000;
  const double a = std::log(1e-7 * kT), b = std::log(60.0 * kT), h = (b - a) / n;
  std::vector<double> E(n), f(n);
  for (int i = 0; i < n; ++i) E[static_cast<std::size_t>(i)] = std::exp(a + (i + 0.5) * h);
  c.spectrum(E.data(), E.size(), kT, Z, f.data());
  double s = 0;
  for (std::size_t i = 0; i < E.size(); ++i) s += f[i] * E[i] * E[i] * h;
  return s * k::keV_erg;
}
}  // namespace

TEST_CASE("free-free constants follow from CODATA", "[physics][continuum]") {
  // Rybicki & Lightman 1979 eq. 5.14: C_nu = 2^5 pi e^6 / (3 m_e c^3) sqrt(2 pi / (3 k m_e)), re-derived here.
  const double e = 4.80320471e-10, me = 9.1093837015e-28, c = 2.99792458e10, kB = 1.380649e-16,
               h = 6.62607015e-27, keV = 1.602176634e-9;
  const double Cnu = 32 * k::kPi * std::pow(e, 6) / (3 * me * c * c * c) * std::sqrt(2 * k::kPi / (3 * kB * me));
  CHECK(ff_nu_constant() == Approx(Cnu).epsilon(1e-12));
  CHECK(ff_nu_constant() == Approx(6.8416e-38).epsilon(1e-4));  // physics.md section 1 [C from CODATA]
  // Photon spectrum per keV with E and kT in keV: C_N = C_nu / (h sqrt(keV / k_B)) = 3.031e-15.
  CHECK(ff_photon_constant() == Approx(Cnu / (h * std::sqrt(keV / kB))).epsilon(1e-12));
  CHECK(ff_photon_constant() == Approx(3.031e-15).epsilon(2e-4));
  // R&L eq. 5.15: C_tot = C_nu k / h = 1.4256e-27.
  CHECK(ff_total_constant() == Approx(1.4256e-27).epsilon(1e-4));
}

TEST_CASE("free-free spectrum is the ion sum of the single-ion formula", "[physics][continuum]") {
  const auto& ag = anders_grevesse_1989();
  const ContinuumEmissivity c(ag, gaunt(), ff_only());
  for (double kT : {0.3, 2.0, 9.0})
    for (double E : {0.2, 1.0, 5.0})
      for (double Z : {0.0, 0.3, 1.0}) {
        double expect = 0;
        for (std::size_t i = 0; i < ag.elements.size(); ++i) {
          const int Zi = ag.elements[i].Z;
          const double gbar = gaunt_ff_born_elwert(E / kT, gaunt_gamma2(Zi, kT));
          expect += scaled_abundance(ag, i, Z) * ff_photon_emissivity_ion(E, kT, Zi, gbar);
        }
        INFO("kT " << kT << " E " << E << " Z " << Z);
        CHECK(rel(c.free_free(E, kT, Z), expect) < 3e-5);  // Gaunt table interpolation
        CHECK(c(E, kT, Z) == c.free_free(E, kT, Z));        // recombination disabled
      }
  // Linear in metallicity: eps(2) - eps(1) = eps(1) - eps(0).
  const double e0 = c.free_free(1.5, 3.0, 0.0), e1 = c.free_free(1.5, 3.0, 1.0), e2 = c.free_free(1.5, 3.0, 2.0);
  CHECK(e2 - e1 == Approx(e1 - e0).epsilon(1e-10));
  // Pure hydrogen: C_N kT^-1/2 gbar exp(-E/kT) / E exactly (physics.md section 1 photon form).
  const ContinuumEmissivity h(hydrogen_helium(1.0), gaunt(), ff_only());
  const double kT = 4.0, E = 2.5;
  CHECK(rel(h.free_free(E, kT, 1.0), 3.031e-15 / std::sqrt(kT) * gaunt_ff_born_elwert(E / kT, k::Ry_keV / kT) *
                                            std::exp(-E / kT) / E) < 2e-4);
  std::vector<double> Es = {0.1, 0.5, 3.0, 12.0}, out(4);
  c.spectrum(Es.data(), Es.size(), 2.0, 0.3, out.data());
  for (std::size_t i = 0; i < Es.size(); ++i) CHECK(out[i] == c(Es[i], 2.0, 0.3));
}

TEST_CASE("free-free total matches R&L eq. 5.15 with the van Hoof integrated Gaunt factor", "[physics][continuum]") {
  // Lambda_ff = C_tot T^1/2 sum_i Z_i^2 (n_i/n_H) gbar_int(gamma2_i)  (Rybicki & Lightman 1979 eq. 5.15;
  // van Hoof et al. 2014 fit). The Born x Elwert recipe is good to < 0.5% per ion at gamma2 <= 0.01, and
  // the heavy ions (gamma2 > 1) carry only ~2% of the sum: 1% overall.
  for (const AbundanceSet* set : {&anders_grevesse_1989(), &asplund_2009()}) {
    const ContinuumEmissivity c(*set, gaunt(), ff_only());
    for (double kT : {2.0, 5.0, 10.0, 20.0})
      for (double Z : {0.3, 1.0}) {
        double sum = 0;
        for (std::size_t i = 0; i < set->elements.size(); ++i) {
          const int Zi = set->elements[i].Z;
          sum += static_cast<double>(Zi) * Zi * scaled_abundance(*set, i, Z) *
                 gaunt_ff_integrated_vanhoof2014(gaunt_gamma2(Zi, kT));
        }
        const double expect = ff_total_constant() * std::sqrt(kT * k::keV_K) * sum;
        INFO(set->name << " kT " << kT << " Z " << Z);
        CHECK(rel(bolometric(c, kT, Z), expect) < 0.01);
      }
  }
  // Hydrogen alone at kT = 5 keV (gamma2 = 0.0027): 0.3%.
  const ContinuumEmissivity h(hydrogen_helium(1.0), gaunt(), ff_only());
  CHECK(rel(bolometric(h, 5.0, 0.0),
            ff_total_constant() * std::sqrt(5.0 * k::keV_K) * gaunt_ff_integrated_vanhoof2014(k::Ry_keV / 5.0)) < 0.003);
}

TEST_CASE("recombination edges have the Kramers jump", "[physics][continuum]") {
  // physics.md section 3 (Kramers hydrogenic form, from memory, unverified): above chi_n = Z^2 Ry / n^2 the
  // ion's free-free term eps_ff (which carries exp(-E/kT)) gains A_n exp(chi_n / kT) eps_ff with
  // A_n = 2 chi_n / (n kT): at the edge the spectrum jumps by A_n exp(chi_n/kT) relative to the lower edges' sum.
  ContinuumSettings s;
  s.bare_fraction = BareFraction::fully_stripped;
  s.recombination_n_max = 3;
  const ContinuumEmissivity h(hydrogen_helium(1.0), gaunt(), s);
  const double kT = 0.05;
  const double chi1 = k::Ry_keV, chi2 = chi1 / 4, chi3 = chi1 / 9;
  auto ratio = [&](double chi) { return h(chi * (1 + 1e-9), kT, 0.0) / h(chi * (1 - 1e-9), kT, 0.0); };
  const double t3 = 2.0 * chi3 / (3 * kT) * std::exp(chi3 / kT), t2 = 2.0 * chi2 / (2 * kT) * std::exp(chi2 / kT),
               t1 = 2.0 * chi1 / kT * std::exp(chi1 / kT);
  CHECK(ratio(chi3) == Approx(1.0 + t3).epsilon(1e-6));
  CHECK(ratio(chi2) == Approx((1.0 + t3 + t2) / (1.0 + t3)).epsilon(1e-6));
  CHECK(ratio(chi1) == Approx((1.0 + t3 + t2 + t1) / (1.0 + t3 + t2)).epsilon(1e-6));
  // Above the edge the recombination term decays as exp(-(E - chi)/kT), like the free-free term.
  CHECK(h.recombination(2 * chi1, kT, 0.0) / h.free_free(2 * chi1, kT, 0.0) == Approx(t1 + t2 + t3).epsilon(1e-9));
  // Below all edges (E < chi_3) nothing is added.
  CHECK(h.recombination(0.5 * chi3, kT, 0.0) == 0.0);
  CHECK(h.free_free(0.5 * chi3, kT, 0.0) == h(0.5 * chi3, kT, 0.0));
  // The parts add up.
  CHECK(h(0.02, kT, 0.0) == Approx(h.free_free(0.02, kT, 0.0) + h.recombination(0.02, kT, 0.0)).epsilon(1e-13));
  // Edges: 10 ions x 3 levels, H n=1 ... Fe n=1 (26^2 Ry = 9.198 keV), sorted; six coincide
  // (He n=2 = H n=1, C n=3 = He n=1, Mg n=2 = C n=1, Si n=2 = N n=1, S n=2 = O n=1, Mg n=3 = O n=2).
  const ContinuumEmissivity ag(anders_grevesse_1989(), gaunt(), s);
  const auto edges = ag.edges_keV();
  CHECK(edges.size() == 24);
  CHECK(edges.back() == Approx(676 * k::Ry_keV).epsilon(1e-14));
  CHECK(std::is_sorted(edges.begin(), edges.end()));
  // Cold gas, literal setting: just above the Fe n=1 edge every other term has underflowed and the
  // spectrum is the Fe recombination term alone (F = (2 chi/kT) e^{chi/kT} overflows a double here).
  {
    const double kTc = 0.012, Ec = 676 * k::Ry_keV + 0.01, chi = 676 * k::Ry_keV;
    const double afe = 676 * 4.68e-5;
    const double expect = ff_photon_constant() / std::sqrt(kTc) * afe * gaunt()->operator()(Ec / kTc, gaunt_gamma2(26, kTc)) *
                          2 * chi / kTc * std::exp(-(Ec - chi) / kTc) / Ec;
    CHECK(rel(ag(Ec, kTc, 1.0), expect) < 1e-10);
  }
  // The Fe K edge appears in a hot plasma.
  CHECK(ag(9.2, 5.0, 1.0) > ag(9.19, 5.0, 1.0));
  CHECK(ContinuumEmissivity(anders_grevesse_1989(), gaunt(), ff_only()).edges_keV().empty());
}

TEST_CASE("coronal bare fraction is a bounded, rising function of kT", "[physics][continuum]") {
  // Approximate coronal balance (Cen 1992 scaled hydrogenic ionisation, Seaton 1959 recombination;
  // from memory, unverified): invariants only.
  for (int Z : {1, 2, 8, 14, 26}) {
    double prev = 0;
    for (double kT : {0.05, 0.1, 0.3, 1.0, 3.0, 10.0, 30.0, 100.0}) {
      const double f = coronal_bare_fraction_upper_bound(Z, kT);
      // Rising until saturation (the hydrogen rate's (1 + sqrt(T/1e5)) factor bends it by < 1e-5 near 1).
      CHECK(f >= prev * (1 - 1e-5));
      CHECK(f <= 1.0);
      prev = f;
    }
  }
  CHECK(coronal_bare_fraction_upper_bound(1, 0.05) > 0.9999);  // hydrogen is fully ionised in the ICM
  CHECK(coronal_bare_fraction_upper_bound(26, 1.0) < 1e-3);     // Fe is not bare at 1 keV
  CHECK(coronal_bare_fraction_upper_bound(26, 100.0) > 0.5);
  // The two bare-fraction settings coincide for a hydrogen-helium plasma (bare fractions > 0.9999).
  ContinuumSettings lit, cor;
  lit.bare_fraction = BareFraction::fully_stripped;
  cor.bare_fraction = BareFraction::coronal_upper_bound;
  const ContinuumEmissivity a(hydrogen_helium(0.76), gaunt(), lit), b(hydrogen_helium(0.76), gaunt(), cor);
  CHECK(a(0.02, 0.1, 0.0) == Approx(b(0.02, 0.1, 0.0)).epsilon(1e-4));
  // With metals, the coronal setting removes most of the heavy-ion edges of cool gas.
  const ContinuumEmissivity c(anders_grevesse_1989(), gaunt(), lit), d(anders_grevesse_1989(), gaunt(), cor);
  CHECK(d.recombination(3.0, 0.5, 1.0) < 0.1 * c.recombination(3.0, 0.5, 1.0));
}

TEST_CASE("continuum rejects arguments outside its domain", "[physics][continuum]") {
  const ContinuumEmissivity c(anders_grevesse_1989(), gaunt());
  using icmscope::core::DomainError;
  CHECK_THROWS_AS(c(0.0, 1.0, 0.3), DomainError);
  CHECK_THROWS_AS(c(1.0, -1.0, 0.3), DomainError);
  CHECK_THROWS_AS(c(1.0, 1.0, -0.3), DomainError);
  std::vector<double> E = {1.0, -2.0};
  std::vector<double> out(2);
  CHECK_THROWS_AS(c.spectrum(E.data(), 2, 1.0, 0.3, out.data()), DomainError);
  ContinuumSettings s;
  s.recombination_n_max = 0;
  CHECK_THROWS_AS(ContinuumEmissivity(anders_grevesse_1989(), gaunt(), s), DomainError);
}
