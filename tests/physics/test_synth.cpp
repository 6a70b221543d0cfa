// Analytic cluster profiles and the particle synthesiser (cells/profiles.hpp,
// cells/analytic_model.hpp, cells/neighbour_support.hpp, cells/synth.hpp).
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstring>
#include <sstream>
#include <vector>

#include "icmscope/cells/analytic_model.hpp"
#include "icmscope/cells/neighbour_support.hpp"
#include "icmscope/cells/profiles.hpp"
#include "icmscope/cells/synth.hpp"
#include "icmscope/cells/validate.hpp"
#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/emission/abundances.hpp"
#include "test_support.hpp"

using namespace icmscope;
using cells::ClusterComponent;
using cells::ClusterModel;
using Catch::Matchers::WithinRel;

namespace {

constexpr double kPi = core::constants::kPi;

ClusterComponent beta_component(double rc, double beta, double ne0, double rmax) {
  ClusterComponent c;
  c.name = "beta";
  c.density.kind = cells::DensityKind::Beta;
  c.density.beta = {ne0, rc, beta};
  c.temperature.kind = cells::TemperatureKind::Isothermal;
  c.temperature.kT_keV = 5.0;
  c.metallicity.Z_solar = 0.3;
  c.r_max_kpc = rmax;
  return c;
}

ClusterModel one_beta_model(std::size_t n, std::uint64_t seed) {
  ClusterModel m;
  m.name = "test";
  m.seed = seed;
  m.n_particles = n;
  m.components = {beta_component(150.0, 2.0 / 3.0, 5e-3, 2000.0)};
  return m;
}

// A merger-like pair: a V06 cool-core main halo and an offset, hotter beta
// subclump with its own velocity and dispersion.
ClusterModel two_component_model(std::size_t n, std::uint64_t seed) {
  ClusterModel m;
  m.name = "pair";
  m.seed = seed;
  m.n_particles = n;
  ClusterComponent a;
  a.name = "main";
  a.density.kind = cells::DensityKind::Vikhlinin06;
  a.density.v06 = {5e-3, 150.0, 1.0, 0.6, 1200.0, 3.0, 3.0, 2e-2, 20.0, 1.0};
  a.temperature.kind = cells::TemperatureKind::Vikhlinin06;
  a.temperature.v06 = {7.0, 1200.0, 0.0, 2.5, 0.8, 100.0, 1.9, 3.0};
  a.metallicity.kind = cells::MetallicityKind::Cored;
  a.metallicity.cored = {0.8, 70.0, 0.6, 0.25};
  a.r_max_kpc = 2500.0;
  ClusterComponent b = beta_component(80.0, 0.7, 8e-3, 600.0);
  b.name = "sub";
  b.temperature.kT_keV = 2.5;
  b.offset_kpc = {450.0, -120.0, 60.0};
  b.velocity_km_s = {-900.0, 250.0, 0.0};
  b.sigma_km_s = 300.0;
  m.components = {a, b};
  return m;
}

double beta23_volume(double r, double rc) {  // beta = 2/3: Int t^2/(1+t^2) dt = t - arctan t
  const double x = r / rc;
  return 4.0 * kPi * rc * rc * rc * (x - std::atan(x));
}

template <typename T>
bool same_bits(const std::vector<T>& a, const std::vector<T>& b) {
  return a.size() == b.size() && (a.empty() || std::memcmp(a.data(), b.data(), a.size() * sizeof(T)) == 0);
}

bool identical(const cells::GasCells& a, const cells::GasCells& b) {
  return same_bits(a.x, b.x) && same_bits(a.y, b.y) && same_bits(a.z, b.z) && same_bits(a.vx, b.vx) &&
         same_bits(a.vy, b.vy) && same_bits(a.vz, b.vz) && same_bits(a.mass, b.mass) &&
         same_bits(a.density, b.density) && same_bits(a.kT, b.kT) && same_bits(a.metallicity, b.metallicity) &&
         same_bits(a.support, b.support);
}

}  // namespace

// ---------------------------------------------------------------------------
TEST_CASE("beta-model enclosed volume: closed form for beta = 2/3 and quadrature", "[physics][synth]") {
  // beta = 2/3: elementary antiderivative x - arctan x (exact calculus).
  for (double x : {0.01, 0.3, 1.0, 3.0, 10.0, 40.0})
    CHECK_THAT(cells::beta_model_volume_kpc3(x * 120.0, 120.0, 2.0 / 3.0),
               WithinRel(beta23_volume(x * 120.0, 120.0), 1e-10));
  CHECK(cells::beta_model_volume_kpc3(0.0, 100.0, 0.7) == 0.0);

  // Other beta (incl. beta = 1, where c - a - b of the 2F1 is an integer):
  // scipy.integrate.quad of 4 pi r^2 (1 + r^2/rc^2)^(-3 beta/2).
  const std::string script =
      "import numpy as np; from scipy.integrate import quad\n"
      "for b in (0.5, 0.75, 1.0, 1.4):\n"
      "  for r in (30.0, 200.0, 1500.0):\n"
      "    v,_ = quad(lambda s: 4*np.pi*s*s*(1+(s/100.0)**2)**(-1.5*b), 0, r, epsabs=0, epsrel=1e-13, limit=200)\n"
      "    print(b, r, repr(v))\n";
  int status = -1;
  const std::string out =
      icmscope::testing::run_capture(icmscope::testing::python() + " -c '" + script + "'", &status);
  REQUIRE(status == 0);
  std::istringstream in(out);
  double b, r, v;
  int n = 0;
  while (in >> b >> r >> v) {
    CHECK_THAT(cells::beta_model_volume_kpc3(r, 100.0, b), WithinRel(v, 1e-9));
    ++n;
  }
  CHECK(n == 12);
}

TEST_CASE("Vikhlinin et al. 2006 forms at points where they simplify", "[physics][synth]") {
  // Vikhlinin et al. 2006, ApJ 640, 691, eq. 3: at r = r_c = r_s every bracket is 2.
  cells::Vikhlinin06Density d{4e-3, 200.0, 0.8, 0.6, 200.0, 3.0, 3.0, 0.0, 10.0, 1.0};
  CHECK_THAT(cells::vikhlinin06_npne_cm6(200.0, d),
             WithinRel(4e-3 * 4e-3 * std::pow(2.0, -(3 * 0.6 - 0.4)) * std::pow(2.0, -1.0), 1e-13));
  // The cusp: n_p n_e ~ n0^2 (r/r_c)^-alpha for r << r_c, r_s.
  CHECK_THAT(cells::vikhlinin06_npne_cm6(0.002, d), WithinRel(4e-3 * 4e-3 * std::pow(1e-5, -0.8), 1e-6));
  // The second component alone at r = r_c2: n02^2 2^(-3 beta2).
  cells::Vikhlinin06Density two = d;
  two.n0_cm3 = 0.0;
  two.n02_cm3 = 3e-2;
  two.r_c2_kpc = 25.0;
  two.beta2 = 0.9;
  CHECK_THAT(cells::vikhlinin06_npne_cm6(25.0, two), WithinRel(9e-4 * std::pow(2.0, -2.7), 1e-13));
  // With alpha = epsilon = n02 = 0 it is the square of the beta model.
  cells::Vikhlinin06Density plain{3e-3, 150.0, 0.0, 0.7, 1000.0, 0.0, 3.0, 0.0, 10.0, 1.0};
  const cells::BetaDensity beta{3e-3, 150.0, 0.7};
  for (double r : {1.0, 100.0, 900.0})
    CHECK_THAT(std::sqrt(cells::vikhlinin06_npne_cm6(r, plain)), WithinRel(cells::beta_model_ne_cm3(r, beta), 1e-13));

  // Eqs. 4-6: at r = r_t = r_cool, t = 2^(-c/b) and t_cool = (1 + T_min/T0)/2.
  const cells::Vikhlinin06Temperature t{8.0, 300.0, 0.0, 2.0, 0.9, 300.0, 1.7, 3.2};
  CHECK_THAT(cells::vikhlinin06_kT_keV(300.0, t), WithinRel(8.0 * 0.5 * (1.0 + 0.4) * std::pow(2.0, -0.45), 1e-13));
  // Cool-core floor: T -> T_min as r -> 0 (a = 0).
  CHECK_THAT(cells::vikhlinin06_kT_keV(1e-6, t), WithinRel(3.2, 1e-6));

  // Eq. 8 (universal profile): at x = 0.045 the first factor is (1 + 0.45)/2.
  const cells::Vikhlinin06UniversalTemperature u{6.0, 1000.0};
  CHECK_THAT(cells::vikhlinin06_universal_kT_keV(45.0, u),
             WithinRel(6.0 * 1.35 * 0.725 * std::pow(1.0 + 0.075 * 0.075, -0.45), 1e-13));
  // Its centre: 1.35 * 0.45 T_mg.
  CHECK_THAT(cells::vikhlinin06_universal_kT_keV(0.0, u), WithinRel(6.0 * 1.35 * 0.45, 1e-13));

  // Metallicity: Z0 2^-alpha_Z at r_Z, the floor far out.
  const cells::CoredMetallicity z{0.8, 70.0, 0.6, 0.25};
  CHECK_THAT(cells::cored_metallicity_solar(70.0, z), WithinRel(0.8 * std::pow(2.0, -0.6), 1e-13));
  CHECK(cells::cored_metallicity_solar(5000.0, z) == 0.25);
}

TEST_CASE("gas composition from the abundance set", "[physics][synth]") {
  const auto& ag = emission::anders_grevesse_1989();
  const cells::GasComposition comp(ag);
  // physics.md section 3 [C]: AG89 at 0.3 Zsun, mu_e = 1.165 and n_e/n_H = 1.200;
  // at 1 Zsun 1.171 and 1.209.
  CHECK_THAT(comp.mu_e(0.3), WithinRel(1.165, 1e-3));
  CHECK_THAT(comp.ne_over_nH(0.3), WithinRel(1.200, 1e-3));
  CHECK_THAT(comp.mu_e(1.0), WithinRel(1.171, 1e-3));
  CHECK_THAT(comp.ne_over_nH(1.0), WithinRel(1.209, 1e-3));
  // Linearity in Z (the invariant the class relies on): any Z agrees with a
  // direct evaluation.
  const auto direct = emission::composition(ag, 0.47);
  CHECK_THAT(comp.mu_e(0.47), WithinRel(direct.mu_e, 1e-12));
  CHECK_THAT(comp.ne_over_nH(0.47), WithinRel(direct.ne_over_nH, 1e-12));
  // rho = mu_e m_p n_e in Msun/kpc^3.
  const double expect = 1e-3 * direct.mu_e * core::constants::m_p_g * std::pow(core::constants::kpc_cm, 3) /
                        core::constants::Msun_g;
  CHECK_THAT(comp.rho_msun_kpc3(1e-3, 0.47), WithinRel(expect, 1e-12));
}

TEST_CASE("tabulated gas mass profile against the closed form and its inverse", "[physics][synth]") {
  const cells::GasComposition comp(emission::anders_grevesse_1989());
  const ClusterComponent c = beta_component(150.0, 2.0 / 3.0, 5e-3, 2000.0);
  const cells::ComponentProfile p(c, comp);
  const double rho0 = comp.rho_msun_kpc3(5e-3, 0.3);
  for (double r : {0.05, 1.0, 17.0, 150.0, 777.0, 1999.0})
    CHECK_THAT(p.gas_mass_msun(r), WithinRel(rho0 * beta23_volume(r, 150.0), 1e-9));
  CHECK_THAT(p.total_gas_mass_msun(), WithinRel(rho0 * beta23_volume(2000.0, 150.0), 1e-9));
  CHECK(p.gas_mass_msun(5000.0) == p.total_gas_mass_msun());
  CHECK(p.rho_msun_kpc3(2000.1) == 0.0);
  CHECK_THAT(p.rho_msun_kpc3(150.0), WithinRel(rho0 * std::pow(2.0, -1.0), 1e-13));
  // Inverse: radius_at_mass_fraction(M(<r)/M) = r.
  for (double r : {0.5, 20.0, 150.0, 1000.0, 1990.0})
    CHECK_THAT(p.radius_at_mass_fraction(p.gas_mass_msun(r) / p.total_gas_mass_msun()), WithinRel(r, 1e-10));
  CHECK(p.radius_at_mass_fraction(1.0) == 2000.0);
  CHECK(p.radius_at_mass_fraction(0.0) == 0.0);

  // A cusped V06 profile: the table against adaptive quadrature of 4 pi r^2 rho
  // (scipy.integrate.quad), using n_e = sqrt(n_p n_e n_e/n_H) with AG89 at 0.3 Zsun.
  ClusterModel m = two_component_model(1000, 1);
  ClusterComponent v = m.components[0];
  v.metallicity.kind = cells::MetallicityKind::Constant;
  v.metallicity.Z_solar = 0.3;
  const cells::ComponentProfile pv(v, comp);
  const double rho_per_ne = comp.rho_msun_kpc3(1.0, 0.3);
  const double ratio = comp.ne_over_nH(0.3);
  char script[2048];
  std::snprintf(script, sizeof script,
                "import numpy as np; from scipy.integrate import quad\n"
                "def ne(r):\n"
                "  x=r/150.0; m=(5e-3)**2*x**-1.0/(1+x*x)**(1.8-0.5)/(1+(r/1200.0)**3)**(1.0)\n"
                "  s=(2e-2)**2/(1+(r/20.0)**2)**3\n"
                "  return np.sqrt((m+s)*%.17g)\n"
                "for r in (5.0, 60.0, 400.0, 2500.0):\n"
                "  pts=[p for p in (1.0,20.0,150.0,1200.0) if p<r]\n"
                "  v,_=quad(lambda s: 4*np.pi*s*s*ne(s)*%.17g, 0, r, points=pts or None, epsabs=0, epsrel=1e-12, limit=400)\n"
                "  print(r, repr(v))\n",
                ratio, rho_per_ne);
  int status = -1;
  const std::string out =
      icmscope::testing::run_capture(icmscope::testing::python() + " -c '" + script + "'", &status);
  REQUIRE(status == 0);
  std::istringstream in(out);
  double r, mass;
  int n = 0;
  while (in >> r >> mass) {
    CHECK_THAT(pv.gas_mass_msun(r), WithinRel(mass, 1e-8));
    ++n;
  }
  CHECK(n == 4);
}

TEST_CASE("gas-mass normalisation reproduces the requested mass", "[physics][synth]") {
  const cells::GasComposition comp(emission::anders_grevesse_1989());
  ClusterComponent c = beta_component(150.0, 2.0 / 3.0, 1.0, 2500.0);
  c.density.normalisation = cells::DensityNormalisation::GasMass;
  c.density.gas_mass_msun = 4e13;
  c.density.gas_mass_radius_kpc = 1000.0;
  const cells::ComponentProfile p(c, comp);
  CHECK_THAT(p.gas_mass_msun(1000.0), WithinRel(4e13, 1e-10));
  // The resolved n_e0 from the closed form: M = rho0 V(1000).
  const double rho0 = 4e13 / beta23_volume(1000.0, 150.0);
  CHECK_THAT(p.component().density.beta.n_e0_cm3, WithinRel(rho0 / comp.rho_msun_kpc3(1.0, 0.3), 1e-9));
  CHECK(p.component().density.normalisation == cells::DensityNormalisation::Amplitude);
}

TEST_CASE("sampled radii follow M(<r): Kolmogorov-Smirnov distance", "[physics][synth]") {
  // Fixed seed; the empirical CDF of |x| against the closed-form
  // F(r) = (x - atan x) / (x_max - atan x_max) of a beta = 2/3 model.
  // Tolerance: the 1% critical value of the one-sample KS statistic,
  // D < 1.63 / sqrt(N) (Smirnov's asymptotic distribution; common practice).
  const std::size_t n = 100000;
  const ClusterModel m = one_beta_model(n, 2024);
  const cells::GasCells g = cells::synthesise(m);
  REQUIRE(g.size() == n);
  std::vector<double> r(n);
  double sx = 0, sy = 0, sz = 0, szz = 0;
  for (std::size_t i = 0; i < n; ++i) {
    r[i] = std::sqrt(double(g.x[i]) * g.x[i] + double(g.y[i]) * g.y[i] + double(g.z[i]) * g.z[i]);
    sx += g.x[i] / r[i];
    sy += g.y[i] / r[i];
    sz += g.z[i] / r[i];
    szz += (g.z[i] / r[i]) * (g.z[i] / r[i]);
  }
  std::sort(r.begin(), r.end());
  auto F = [](double rr, double rc) { return (rr / rc - std::atan(rr / rc)) / (2000.0 / rc - std::atan(2000.0 / rc)); };
  double D = 0.0, D_wrong = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    const double f = F(r[i], 150.0);
    D = std::max({D, std::fabs(f - double(i) / n), std::fabs(f - double(i + 1) / n)});
    const double fw = F(r[i], 170.0);  // a 13% larger core: must be rejected
    D_wrong = std::max({D_wrong, std::fabs(fw - double(i) / n), std::fabs(fw - double(i + 1) / n)});
  }
  const double crit = 1.63 / std::sqrt(double(n));
  INFO("KS D = " << D << " (critical " << crit << "), wrong-core D = " << D_wrong);
  CHECK(D < crit);
  CHECK(D_wrong > crit);  // rejected at the 1% level
  CHECK(r.back() <= 2000.0 * (1 + 1e-6));
  // Isotropy: mean direction ~ 0 (sd 1/sqrt(3N) per axis), <n_z^2> = 1/3 (sd sqrt(4/45/N)).
  const double sd = 1.0 / std::sqrt(3.0 * n);
  CHECK(std::fabs(sx / n) < 4 * sd);
  CHECK(std::fabs(sy / n) < 4 * sd);
  CHECK(std::fabs(sz / n) < 4 * sd);
  CHECK(std::fabs(szz / n - 1.0 / 3.0) < 4 * std::sqrt(4.0 / 45.0 / n));
}

TEST_CASE("synthesis is deterministic and thread-count independent", "[physics][synth]") {
  const ClusterModel m = two_component_model(30000, 99);
  const cells::GasCells a = cells::synthesise(m, 1);
  const cells::GasCells b = cells::synthesise(m, 2);
  const cells::GasCells c = cells::synthesise(m, 2);
  CHECK(identical(a, b));
  CHECK(identical(b, c));
  ClusterModel m2 = m;
  m2.seed = 100;
  const cells::GasCells d = cells::synthesise(m2, 2);
  CHECK_FALSE(same_bits(a.x, d.x));
  CHECK(cells::validate_cells(a).ok());
  CHECK(a.has_velocity());
}

TEST_CASE("particle masses, counts, densities and phases of a two-component model", "[physics][synth]") {
  const std::size_t n = 40000;
  const ClusterModel m = two_component_model(n, 5);
  cells::SynthSummary s;
  const cells::GasCells g = cells::synthesise(m, 0, &s);
  REQUIRE(s.components.size() == 2);
  const cells::GasComposition comp(emission::anders_grevesse_1989());
  const cells::ComponentProfile pa(m.components[0], comp), pb(m.components[1], comp);

  // Total particle mass = model gas mass inside the truncation radii.
  double total = 0.0;
  for (float v : g.mass) total += v;
  CHECK_THAT(total, WithinRel(pa.total_gas_mass_msun() + pb.total_gas_mass_msun(), 1e-6));
  CHECK_THAT(s.total_gas_mass_msun, WithinRel(pa.total_gas_mass_msun() + pb.total_gas_mass_msun(), 1e-12));
  // Counts proportional to the gas masses (largest remainder: within 1).
  CHECK(s.components[0].count + s.components[1].count == n);
  const double share = double(n) * s.components[1].gas_mass_msun / s.total_gas_mass_msun;
  CHECK(std::fabs(double(s.components[1].count) - share) <= 1.0);
  CHECK(s.components[1].first == s.components[0].count);
  // Equal masses within a component.
  for (std::size_t i = 1; i < s.components[0].count; ++i) REQUIRE(g.mass[i] == g.mass[0]);

  // Density = sum of both components at the particle position; kT and Z of
  // the own component.
  std::size_t overlap = 0;
  for (std::size_t i = 0; i < n; i += 7) {
    const bool own_b = i >= s.components[1].first;
    const double ra = std::sqrt(double(g.x[i]) * g.x[i] + double(g.y[i]) * g.y[i] + double(g.z[i]) * g.z[i]);
    const double dx = g.x[i] - 450.0, dy = g.y[i] + 120.0, dz = g.z[i] - 60.0;
    const double rb = std::sqrt(dx * dx + dy * dy + dz * dz);
    const double expect = pa.rho_msun_kpc3(ra) + pb.rho_msun_kpc3(rb);
    REQUIRE_THAT(double(g.density[i]), WithinRel(expect, 2e-5));
    const double own_T = own_b ? 2.5 : pa.kT_keV(ra);
    REQUIRE_THAT(double(g.kT[i]), WithinRel(own_T, 2e-5));
    if (own_b) REQUIRE(g.metallicity[i] == 0.3f);
    if (!own_b && rb < 600.0) ++overlap;
  }
  CHECK(overlap > 100);  // the test exercises the overlap

  // Velocities: bulk + isotropic dispersion for the subclump, pure bulk for the main halo.
  double mx = 0, my = 0, vxx = 0, vzz = 0;
  const std::size_t nb = s.components[1].count;
  for (std::size_t i = s.components[1].first; i < n; ++i) {
    mx += g.vx[i];
    my += g.vy[i];
    vxx += (g.vx[i] + 900.0) * (g.vx[i] + 900.0);
    vzz += double(g.vz[i]) * g.vz[i];
  }
  CHECK(std::fabs(mx / nb + 900.0) < 4 * 300.0 / std::sqrt(double(nb)));
  CHECK(std::fabs(my / nb - 250.0) < 4 * 300.0 / std::sqrt(double(nb)));
  CHECK_THAT(std::sqrt(vxx / nb), WithinRel(300.0, 4.0 / std::sqrt(2.0 * nb)));
  CHECK_THAT(std::sqrt(vzz / nb), WithinRel(300.0, 4.0 / std::sqrt(2.0 * nb)));
  CHECK(g.vx[0] == 0.0f);
}

TEST_CASE("support radii hold exactly k neighbours", "[physics][synth]") {
  // Brute force on a synthesised cloud: H is the k-th smallest of the float
  // squared distances (dx^2 + dy^2) + dz^2 (self included), bit for bit, and
  // the particles strictly inside H number at most k - 1, those within H at least k.
  ClusterModel m = two_component_model(6000, 11);
  m.k_neighbours = 32;
  const cells::GasCells g = cells::synthesise(m);
  const std::size_t n = g.size();
  std::vector<float> d2(n);
  std::size_t exact = 0;
  for (std::size_t i = 0; i < n; i += 3) {
    for (std::size_t j = 0; j < n; ++j) {
      const float dx = g.x[i] - g.x[j], dy = g.y[i] - g.y[j], dz = g.z[i] - g.z[j];
      float s = 0.0f;
      s += dx * dx;
      s += dy * dy;
      s += dz * dz;
      d2[j] = s;
    }
    std::nth_element(d2.begin(), d2.begin() + 31, d2.end());
    REQUIRE(g.support[i] == std::sqrt(d2[31]));
    const double h = g.support[i];
    std::size_t inner = 0, outer = 0;
    for (std::size_t j = 0; j < n; ++j) {
      const double dx = double(g.x[j]) - g.x[i], dy = double(g.y[j]) - g.y[i], dz = double(g.z[j]) - g.z[i];
      const double d = std::sqrt(dx * dx + dy * dy + dz * dz);
      inner += d < h * (1 - 1e-5);
      outer += d <= h * (1 + 1e-5);
    }
    REQUIRE(inner <= 31);
    REQUIRE(outer >= 32);
    exact += (inner == 31 && outer == 32);
  }
  CHECK(exact >= (n / 3) * 99 / 100);

  // A simple cubic lattice of unit spacing: an interior point has 6
  // neighbours at 1 and 12 at sqrt(2): H = 1 for k = 7, sqrt(2) for k = 19.
  std::vector<float> x, y, z;
  for (int i = 0; i < 9; ++i)
    for (int j = 0; j < 9; ++j)
      for (int l = 0; l < 9; ++l) {
        x.push_back(float(i));
        y.push_back(float(j));
        z.push_back(float(l));
      }
  const auto h7 = cells::neighbour_support_kpc(x, y, z, 7);
  const auto h19 = cells::neighbour_support_kpc(x, y, z, 19, 2);
  const std::size_t centre = (4 * 9 + 4) * 9 + 4;
  CHECK(h7[centre] == 1.0f);
  CHECK(h19[centre] == std::sqrt(2.0f));
  // A corner point: 3 at 1, 3 at sqrt(2), 1 at sqrt(3): k = 8 reaches sqrt(3).
  CHECK(cells::neighbour_support_kpc(x, y, z, 8)[0] == std::sqrt(3.0f));
  CHECK_THROWS_AS(cells::neighbour_support_kpc(x, y, z, 0), core::DomainError);
  CHECK_THROWS_AS(cells::neighbour_support_kpc(x, y, z, 1000), core::DomainError);
}

TEST_CASE("model validation names the component and field", "[physics][synth]") {
  ClusterModel m = one_beta_model(1000, 1);
  m.components[0].density.beta.beta = 0.33;
  try {
    cells::validate_model(m);
    FAIL("expected DomainError");
  } catch (const core::DomainError& e) {
    CHECK(std::string(e.what()).find("component 'beta': density.beta") != std::string::npos);
  }
  m = one_beta_model(1000, 1);
  m.components[0].temperature.kT_keV = -1.0;
  CHECK_THROWS_WITH(cells::validate_model(m), Catch::Contains("temperature.kT_keV"));
  m = one_beta_model(50, 1);
  CHECK_THROWS_WITH(cells::synthesise(m), Catch::Contains("n_particles"));
  m = two_component_model(1000, 1);
  m.components[1].name = "main";
  CHECK_THROWS_WITH(cells::validate_model(m), Catch::Contains("duplicate component name"));
  // A component too light for its share of particles.
  m = two_component_model(200, 1);
  m.components[1].density.beta.n_e0_cm3 = 1e-7;
  CHECK_THROWS_WITH(cells::synthesise(m), Catch::Contains("raise n_particles"));
  // Largest remainder rounding.
  const auto cnt = cells::particles_per_component({1.0, 1.0, 1.0}, 100);
  CHECK(cnt == std::vector<std::size_t>{34, 33, 33});
}
