// Analytic cluster models: see include/icmscope/cells/analytic_model.hpp.
#include "icmscope/cells/analytic_model.hpp"

#include <algorithm>
#include <cmath>
#include <set>
#include <sstream>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"

namespace icmscope::cells {

namespace k = core::constants;

namespace {

std::string num(double v) {
  std::ostringstream os;
  os.precision(10);
  os << v;
  return os.str();
}

// Table layout: nodes r_i = r_max * 1e-7 * exp(i * dlnr), i = 0..kIntervals.
constexpr int kIntervals = 4096;
constexpr double kInnerFraction = 1e-7;

// 8-point Gauss-Legendre on [-1, 1] (Abramowitz & Stegun 1964, Table 25.4).
constexpr double kGLx[4] = {0.1834346424956498, 0.5255324099163290, 0.7966664774136267, 0.9602898564975363};
constexpr double kGLw[4] = {0.3626837833783620, 0.3137066458778873, 0.2223810344533745, 0.1012285362903763};

// Cubic Hermite on [0, 1] with values y0, y1 and slopes d0, d1 (per unit tau).
inline double hermite(double t, double y0, double y1, double d0, double d1) {
  const double t2 = t * t, t3 = t2 * t;
  return (2 * t3 - 3 * t2 + 1) * y0 + (t3 - 2 * t2 + t) * d0 + (-2 * t3 + 3 * t2) * y1 + (t3 - t2) * d1;
}
inline double hermite_dt(double t, double y0, double y1, double d0, double d1) {
  const double t2 = t * t;
  return (6 * t2 - 6 * t) * y0 + (3 * t2 - 4 * t + 1) * d0 + (-6 * t2 + 6 * t) * y1 + (3 * t2 - 2 * t) * d1;
}

class Checker {
 public:
  Checker(const std::string& model, const std::string& comp) {
    if (!model.empty()) prefix_ = "model '" + model + "'";
    if (!comp.empty()) prefix_ += (prefix_.empty() ? "" : ", ") + std::string("component '") + comp + "'";
  }
  void fail(const std::string& field, const std::string& why) const {
    throw core::DomainError(prefix_ + ": " + field + ": " + why);
  }
  void finite(const std::string& f, double v) const {
    if (!std::isfinite(v)) fail(f, "must be finite, got " + num(v));
  }
  void positive(const std::string& f, double v) const {
    if (!(std::isfinite(v) && v > 0.0)) fail(f, num(v) + " must be finite and > 0");
  }
  void non_negative(const std::string& f, double v) const {
    if (!(std::isfinite(v) && v >= 0.0)) fail(f, num(v) + " must be finite and >= 0");
  }
  void above_third(const std::string& f, double v) const {
    if (!(std::isfinite(v) && v > 1.0 / 3.0)) fail(f, num(v) + " must be > 1/3");
  }

 private:
  std::string prefix_;
};

void validate_component(const std::string& model, const ClusterComponent& c) {
  const Checker ck(model, c.name);
  if (c.name.empty()) ck.fail("name", "must not be empty");
  ck.positive("r_max_kpc", c.r_max_kpc);
  for (int i = 0; i < 3; ++i) {
    ck.finite("offset_kpc", c.offset_kpc[i]);
    ck.finite("velocity_km_s", c.velocity_km_s[i]);
  }
  ck.non_negative("sigma_km_s", c.sigma_km_s);

  const DensityProfile& d = c.density;
  if (d.kind == DensityKind::Beta) {
    ck.positive("density.n_e0_cm3", d.beta.n_e0_cm3);
    ck.positive("density.r_c_kpc", d.beta.r_c_kpc);
    ck.above_third("density.beta", d.beta.beta);
  } else {
    const Vikhlinin06Density& v = d.v06;
    ck.positive("density.n0_cm3", v.n0_cm3);
    ck.positive("density.r_c_kpc", v.r_c_kpc);
    if (!(v.alpha >= 0.0 && v.alpha < 3.0)) ck.fail("density.alpha", num(v.alpha) + " must be in [0, 3)");
    ck.above_third("density.beta", v.beta);
    ck.positive("density.r_s_kpc", v.r_s_kpc);
    if (!(v.epsilon >= 0.0 && v.epsilon <= 5.0)) ck.fail("density.epsilon", num(v.epsilon) + " must be in [0, 5]");
    ck.positive("density.gamma", v.gamma);
    ck.non_negative("density.n02_cm3", v.n02_cm3);
    ck.positive("density.r_c2_kpc", v.r_c2_kpc);
    ck.positive("density.beta2", v.beta2);
  }
  if (d.normalisation == DensityNormalisation::GasMass) {
    ck.positive("density.gas_mass_msun", d.gas_mass_msun);
    ck.positive("density.gas_mass_radius_kpc", d.gas_mass_radius_kpc);
    if (d.gas_mass_radius_kpc > c.r_max_kpc)
      ck.fail("density.gas_mass_radius_kpc",
              num(d.gas_mass_radius_kpc) + " must not exceed r_max_kpc = " + num(c.r_max_kpc));
  }

  const TemperatureProfile& t = c.temperature;
  switch (t.kind) {
    case TemperatureKind::Isothermal:
      ck.positive("temperature.kT_keV", t.kT_keV);
      break;
    case TemperatureKind::Vikhlinin06:
      ck.positive("temperature.kT0_keV", t.v06.kT0_keV);
      ck.positive("temperature.r_t_kpc", t.v06.r_t_kpc);
      ck.finite("temperature.a", t.v06.a);
      ck.positive("temperature.b", t.v06.b);
      ck.finite("temperature.c", t.v06.c);
      ck.positive("temperature.r_cool_kpc", t.v06.r_cool_kpc);
      ck.positive("temperature.a_cool", t.v06.a_cool);
      ck.positive("temperature.kT_min_keV", t.v06.kT_min_keV);
      break;
    case TemperatureKind::Vikhlinin06Universal:
      ck.positive("temperature.kT_mg_keV", t.universal.kT_mg_keV);
      ck.positive("temperature.r500_kpc", t.universal.r500_kpc);
      break;
  }

  const MetallicityProfile& z = c.metallicity;
  if (z.kind == MetallicityKind::Constant) {
    ck.non_negative("metallicity.Z_solar", z.Z_solar);
  } else {
    ck.non_negative("metallicity.Z0_solar", z.cored.Z0_solar);
    ck.positive("metallicity.r_Z_kpc", z.cored.r_Z_kpc);
    ck.non_negative("metallicity.alpha_Z", z.cored.alpha_Z);
    ck.non_negative("metallicity.Z_out_solar", z.cored.Z_out_solar);
  }
}

}  // namespace

// ---------------------------------------------------------------------------
GasComposition::GasComposition(const emission::AbundanceSet& set) {
  const emission::PlasmaComposition c0 = emission::composition(set, 0.0);
  const emission::PlasmaComposition c1 = emission::composition(set, 1.0);
  ne0_ = c0.ne_over_nH;
  ne1_ = c1.ne_over_nH - c0.ne_over_nH;
  m0_ = c0.mass_per_H_g;
  m1_ = c1.mass_per_H_g - c0.mass_per_H_g;
}

double GasComposition::mu_e(double Z_solar) const { return mass_per_electron_g(Z_solar) / k::m_p_g; }

double GasComposition::rho_msun_kpc3(double ne_cm3, double Z_solar) const {
  constexpr double kpc3_over_msun = k::kpc_cm * k::kpc_cm * k::kpc_cm / k::Msun_g;
  return ne_cm3 * mass_per_electron_g(Z_solar) * kpc3_over_msun;
}

// ---------------------------------------------------------------------------
void validate_model(const ClusterModel& m) {
  const Checker ck(m.name, "");
  if (m.components.empty()) ck.fail("components", "at least one component is required");
  std::set<std::string> names;
  for (const auto& c : m.components) {
    validate_component(m.name, c);
    if (!names.insert(c.name).second) ck.fail("components", "duplicate component name '" + c.name + "'");
  }
  if (m.n_particles < 100) ck.fail("n_particles", std::to_string(m.n_particles) + " must be >= 100");
  if (m.k_neighbours < 1 || static_cast<std::size_t>(m.k_neighbours) >= m.n_particles)
    ck.fail("k_neighbours", std::to_string(m.k_neighbours) + " must be in [1, n_particles)");
  try {
    (void)emission::abundance_set(m.abundance_set);
  } catch (const core::DomainError& e) {
    ck.fail("abundance_set", e.what());
  }
  if (m.redshift) ck.non_negative("redshift", *m.redshift);
  if (m.ra_deg && !(*m.ra_deg >= 0.0 && *m.ra_deg < 360.0)) ck.fail("ra_deg", num(*m.ra_deg) + " must be in [0, 360)");
  if (m.dec_deg && !(*m.dec_deg >= -90.0 && *m.dec_deg <= 90.0))
    ck.fail("dec_deg", num(*m.dec_deg) + " must be in [-90, 90]");
  if (m.m500_msun) ck.positive("m500_msun", *m.m500_msun);
}

// ---------------------------------------------------------------------------
ComponentProfile::ComponentProfile(const ClusterComponent& c, const GasComposition& composition)
    : c_(c), comp_(composition) {
  validate_component("", c_);
  const double rmax = c_.r_max_kpc;
  const double rlo = rmax * kInnerFraction;
  lnr0_ = std::log(rlo);
  dlnr_ = (std::log(rmax) - lnr0_) / kIntervals;
  const std::size_t n = kIntervals + 1;
  lnm_.assign(n, 0.0);
  slope_.assign(n, 0.0);

  // Mass inside the first node: rho ~ r^-s there (s from two nearby radii).
  const double rho_lo = rho_msun_kpc3(rlo);
  const double rho_half = rho_msun_kpc3(0.5 * rlo);
  double s = std::log(rho_half / rho_lo) / std::log(2.0);
  if (!std::isfinite(s)) s = 0.0;
  s = std::clamp(s, 0.0, 2.5);
  inner_slope_ = 3.0 - s;
  const double four_pi = 4.0 * k::kPi;
  double m = four_pi * rlo * rlo * rlo * rho_lo / inner_slope_;

  // Integrate dM = 4 pi r^3 rho d ln r interval by interval.
  std::vector<double> mass(n, 0.0);
  mass[0] = m;
  for (int i = 0; i < kIntervals; ++i) {
    const double mid = lnr0_ + (i + 0.5) * dlnr_;
    const double half = 0.5 * dlnr_;
    double sum = 0.0;
    for (int j = 0; j < 4; ++j) {
      for (int sign = -1; sign <= 1; sign += 2) {
        const double r = std::exp(mid + sign * half * kGLx[j]);
        sum += kGLw[j] * four_pi * r * r * r * rho_msun_kpc3(std::min(r, rmax));
      }
    }
    m += half * sum;
    mass[static_cast<std::size_t>(i) + 1] = m;
  }
  for (std::size_t i = 0; i < n; ++i) {
    const double r = i + 1 == n ? rmax : std::exp(lnr0_ + static_cast<double>(i) * dlnr_);
    if (!(mass[i] > 0.0) || !std::isfinite(mass[i]))
      throw core::DomainError("component '" + c_.name + "': the gas mass profile is not positive and finite at r = " +
                              num(r) + " kpc");
    lnm_[i] = std::log(mass[i]);
    slope_[i] = four_pi * r * r * r * rho_msun_kpc3(r) / mass[i];
  }
  m_total_ = mass[n - 1];

  if (c_.density.normalisation == DensityNormalisation::GasMass) {
    scale_ = c_.density.gas_mass_msun / gas_mass_msun(c_.density.gas_mass_radius_kpc);
    const double lns = std::log(scale_);
    for (double& v : lnm_) v += lns;
    m_total_ *= scale_;
    c_.density.beta.n_e0_cm3 *= scale_;
    c_.density.v06.n0_cm3 *= scale_;
    c_.density.v06.n02_cm3 *= scale_;
    c_.density.normalisation = DensityNormalisation::Amplitude;
  }
}

double ComponentProfile::ne_shape(double r, double Z) const {
  const DensityProfile& d = c_.density;
  if (d.kind == DensityKind::Beta) return beta_model_ne_cm3(r, d.beta);
  return std::sqrt(vikhlinin06_npne_cm6(r, d.v06) * comp_.ne_over_nH(Z));
}

double ComponentProfile::ne_cm3(double r_kpc) const {
  if (r_kpc > c_.r_max_kpc) return 0.0;
  return ne_shape(r_kpc, metallicity_solar(r_kpc));
}

double ComponentProfile::rho_msun_kpc3(double r_kpc) const {
  if (r_kpc > c_.r_max_kpc) return 0.0;
  const double Z = metallicity_solar(r_kpc);
  return comp_.rho_msun_kpc3(ne_shape(r_kpc, Z), Z);
}

double ComponentProfile::kT_keV(double r_kpc) const {
  const TemperatureProfile& t = c_.temperature;
  switch (t.kind) {
    case TemperatureKind::Isothermal:
      return t.kT_keV;
    case TemperatureKind::Vikhlinin06:
      return vikhlinin06_kT_keV(r_kpc, t.v06);
    case TemperatureKind::Vikhlinin06Universal:
      return vikhlinin06_universal_kT_keV(r_kpc, t.universal);
  }
  return t.kT_keV;
}

double ComponentProfile::metallicity_solar(double r_kpc) const {
  const MetallicityProfile& z = c_.metallicity;
  return z.kind == MetallicityKind::Constant ? z.Z_solar : cored_metallicity_solar(r_kpc, z.cored);
}

double ComponentProfile::lnm_at(double lnr) const {
  const double t = (lnr - lnr0_) / dlnr_;
  const int i = std::clamp(static_cast<int>(std::floor(t)), 0, kIntervals - 1);
  const double tau = t - i;
  const std::size_t a = static_cast<std::size_t>(i);
  return hermite(tau, lnm_[a], lnm_[a + 1], slope_[a] * dlnr_, slope_[a + 1] * dlnr_);
}

double ComponentProfile::gas_mass_msun(double r_kpc) const {
  if (!(r_kpc > 0.0)) return 0.0;
  if (r_kpc >= c_.r_max_kpc) return m_total_;
  const double lnr = std::log(r_kpc);
  if (lnr <= lnr0_) return std::exp(lnm_[0] + inner_slope_ * (lnr - lnr0_));
  return std::exp(lnm_at(lnr));
}

double ComponentProfile::radius_at_mass_fraction(double q) const {
  if (!(q > 0.0)) return 0.0;
  if (q >= 1.0) return c_.r_max_kpc;
  const double target = std::log(q) + std::log(m_total_);
  if (target <= lnm_[0]) return std::exp(lnr0_ + (target - lnm_[0]) / inner_slope_);
  // Interval with lnm_[i] <= target < lnm_[i+1].
  const auto it = std::upper_bound(lnm_.begin(), lnm_.end(), target);
  std::size_t i = static_cast<std::size_t>(it - lnm_.begin());
  if (i >= lnm_.size()) return c_.r_max_kpc;
  i -= 1;
  const double y0 = lnm_[i], y1 = lnm_[i + 1];
  const double d0 = slope_[i] * dlnr_, d1 = slope_[i + 1] * dlnr_;
  // Safeguarded Newton for the cubic on [0, 1] (monotone there).
  double lo = 0.0, hi = 1.0;
  double tau = (target - y0) / (y1 - y0);
  for (int it2 = 0; it2 < 40; ++it2) {
    const double f = hermite(tau, y0, y1, d0, d1) - target;
    if (f > 0) hi = tau;
    else lo = tau;
    const double df = hermite_dt(tau, y0, y1, d0, d1);
    double next = df > 0 ? tau - f / df : 0.5 * (lo + hi);
    if (!(next > lo && next < hi)) next = 0.5 * (lo + hi);
    const bool done = std::fabs(next - tau) < 1e-14;
    tau = next;
    if (done) break;
  }
  const double r = std::exp(lnr0_ + (static_cast<double>(i) + tau) * dlnr_);
  return std::min(r, c_.r_max_kpc);
}

}  // namespace icmscope::cells
