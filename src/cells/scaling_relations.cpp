// Published cluster scaling relations and the scaled analytic cluster: see
// include/icmscope/cells/scaling_relations.hpp.
//
// Conventions (all checked in tests/physics/test_scaling_relations.cpp):
//  - h = Cosmology::h() = H0 / (100 km/s/Mpc); h70 = H0 / (70 km/s/Mpc) = h / 0.7.
//  - Vikhlinin et al. 2009 M-T: the normalisation 3.02e14 is in h^-1 Msun, so
//    M500 [Msun] = 3.02e14 / h (T/5 keV)^1.53 / E(z)  (values from memory, unverified).
//  - Arnaud, Pointecouteau & Pratt 2005 M-T: A is in h70^-1 Msun and the
//    relation is written for h(z) M500 with h(z) = H(z)/H0 = E(z) (their
//    definition, self-similar evolution), so
//    M500 [Msun] = A / h70 (T/5 keV)^alpha / E(z)  (A from memory, unverified).
//  - Vikhlinin et al. 2009 L-M (0.5-2 keV): ln L [erg/s] = 47.392 + 1.61 ln M500
//    + 1.85 ln E(z) - 0.39 ln(h/0.72), M500 in Msun (not h^-1 Msun): the h
//    dependence is carried by the explicit -0.39 ln(h/0.72) term. This reading
//    gives L = 0.85e44 erg/s for M500 = 10^14.5 Msun at z = 0, h = 0.7, the
//    physics.md section 10 check (~0.8e44); reading M500 in h^-1 Msun (h = 0.7)
//    would give 0.48e44. Coefficients from memory, unverified.
#include "icmscope/cells/scaling_relations.hpp"

#include <algorithm>
#include <cmath>
#include <memory>
#include <sstream>

#include "icmscope/cells/profiles.hpp"
#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/emission/abundances.hpp"
#include "icmscope/emission/band_table.hpp"
#include "icmscope/emission/gaunt.hpp"
#include "icmscope/emission/spectral_model.hpp"

namespace icmscope::cells {

namespace k = core::constants;

namespace {

std::string num(double v) {
  std::ostringstream os;
  os.precision(10);
  os << v;
  return os.str();
}

[[noreturn]] void fail(const std::string& where, const std::string& field, const std::string& why) {
  throw core::DomainError(where + ": " + field + ": " + why);
}

void check_m500(const char* where, double m) {
  if (!(std::isfinite(m) && m > 0.0)) fail(where, "m500_msun", num(m) + " must be finite and > 0");
}
void check_z(const char* where, double z) {
  if (!(std::isfinite(z) && z >= 0.0)) fail(where, "redshift", num(z) + " must be finite and >= 0");
}

// M-T relations in the form M500 [Msun] = norm (T/5 keV)^slope / E(z).
struct MT {
  double norm_msun;  // h-converted normalisation [Msun]
  double slope;
};

MT mt_params(MassTemperatureRelation rel, const cosmo::Cosmology& c) {
  const double h = c.h();
  const double h70 = h / 0.7;
  switch (rel) {
    case MassTemperatureRelation::Vikhlinin09:
      // Vikhlinin et al. 2009, ApJ 692, 1033: 3.02e14 h^-1 Msun, slope 1.53 (from memory, unverified).
      return {3.02e14 / h, 1.53};
    case MassTemperatureRelation::Arnaud05All:
      // Arnaud, Pointecouteau & Pratt 2005, A&A 441, 893, whole sample: slope 1.71 [physics.md V],
      // A = 3.84e14 h70^-1 Msun (from memory, unverified).
      return {3.84e14 / h70, 1.71};
    case MassTemperatureRelation::Arnaud05Hot:
      // Same paper, kT > 3.5 keV: slope 1.49 [physics.md V], A = 4.10e14 h70^-1 Msun (from memory, unverified).
      return {4.10e14 / h70, 1.49};
  }
  throw core::DomainError("mass-temperature relation: unknown enum value");
}

// 8-point Gauss-Legendre on [-1, 1] (Abramowitz & Stegun 1964, Table 25.4).
constexpr double kGLx[4] = {0.1834346424956498, 0.5255324099163290, 0.7966664774136267, 0.9602898564975363};
constexpr double kGLw[4] = {0.3626837833783620, 0.3137066458778873, 0.2223810344533745, 0.1012285362903763};

// Int_a^b f(s) ds with n equal panels of 8-point Gauss-Legendre.
template <class F>
double gl_integrate(double a, double b, int n, F&& f) {
  const double h = (b - a) / n;
  double sum = 0.0;
  for (int i = 0; i < n; ++i) {
    const double mid = a + (i + 0.5) * h;
    double p = 0.0;
    for (int j = 0; j < 4; ++j) p += kGLw[j] * (f(mid - 0.5 * h * kGLx[j]) + f(mid + 0.5 * h * kGLx[j]));
    sum += 0.5 * h * p;
  }
  return sum;
}

// Rest-frame 0.5-2 keV energy emissivity per n_e n_H, Lambda(kT, Z) [erg s^-1 cm^3],
// from the emission layer's default spectral model (ContinuumModel with the
// default ContinuumSettings and the default Gaunt table) and the band
// quadrature of band_table.hpp at z = 0, N_H = 0, no area curve.
class SoftBandEmissivity {
 public:
  explicit SoftBandEmissivity(const emission::AbundanceSet& set)
      : model_(set, shared_gaunt()),
        quad_(emission::make_band_quadrature(model_, emission::BandSpec{0.5, 2.0}, emission::FoldingSpec{})),
        buf_(quad_.E_rest_keV.size()) {}

  double operator()(double kT_keV, double Z_solar) {
    model_.photon_spectrum(quad_.E_rest_keV.data(), buf_.size(), kT_keV, Z_solar, buf_.data());
    double s = 0.0;
    for (std::size_t i = 0; i < buf_.size(); ++i) s += quad_.w_energy[i] * buf_[i];
    return s;
  }

 private:
  // The default Gaunt table, built once (immutable, ~0.3 s).
  static std::shared_ptr<const emission::GauntTable> shared_gaunt() {
    static const std::shared_ptr<const emission::GauntTable> g = std::make_shared<const emission::GauntTable>();
    return g;
  }
  emission::ContinuumModel model_;
  emission::BandQuadrature quad_;
  std::vector<double> buf_;
};

// Lambda(T) on [T_lo, T_hi] by Chebyshev interpolation in ln T (16 nodes;
// a single evaluation when the range is degenerate, i.e. isothermal).
class LambdaOfT {
 public:
  LambdaOfT(SoftBandEmissivity& em, double T_lo, double T_hi, double Z) {
    a_ = std::log(T_lo);
    b_ = std::log(T_hi);
    if (!(b_ - a_ > 1e-12)) {
      single_ = em(T_lo, Z);
      return;
    }
    x_.resize(kN);
    f_.resize(kN);
    w_.resize(kN);
    for (int i = 0; i < kN; ++i) {
      const double th = k::kPi * (i + 0.5) / kN;
      x_[i] = std::cos(th);
      f_[i] = em(std::exp(0.5 * (a_ + b_) + 0.5 * (b_ - a_) * x_[i]), Z);
      w_[i] = (i % 2 ? -1.0 : 1.0) * std::sin(th);  // barycentric weights of Chebyshev points of the 1st kind
    }
  }
  double operator()(double T) const {
    if (x_.empty()) return single_;
    const double x = (2.0 * std::log(T) - a_ - b_) / (b_ - a_);
    double num = 0.0, den = 0.0;
    for (int i = 0; i < kN; ++i) {
      const double d = x - x_[i];
      if (d == 0.0) return f_[i];
      const double t = w_[i] / d;
      num += t * f_[i];
      den += t;
    }
    return num / den;
  }

 private:
  static constexpr int kN = 16;
  double a_ = 0, b_ = 0, single_ = 0;
  std::vector<double> x_, f_, w_;
};

// T(r)/T_mg of the Vikhlinin et al. 2006 universal profile (eq. 8), x = r/r500.
double universal_shape(double x) {
  Vikhlinin06UniversalTemperature p;
  p.kT_mg_keV = 1.0;
  p.r500_kpc = 1.0;
  return vikhlinin06_universal_kT_keV(x, p);
}

struct Halo {
  ClusterComponent comp;
  double m500 = 0, r500 = 0, kT = 0, l_model = 0, l_rel = 0, mgas = 0;
};

// Radial quadrature settings: s = ln(r / R500) from ln(1e-6) to 0 in panels
// of 0.25; the gas inside 1e-6 R500 (a fraction ~1e-18 of the luminosity for
// r_c >= 1e-3 R500) is neglected.
constexpr double kSmin = -13.815510557964274;  // ln 1e-6
constexpr int kPanels = 56;

Halo build_halo(const ScaledClusterSpec& s, double m500, const std::string& name, const std::array<double, 3>& off,
                const cosmo::Cosmology& c, const GasComposition& gc, SoftBandEmissivity& em) {
  Halo h;
  h.m500 = m500;
  h.r500 = c.r500_kpc_from_m500(m500, s.redshift);
  h.kT = kT_from_m500_keV(m500, s.redshift, s.mt, c);
  h.l_rel = l_soft_from_m500_erg_s(m500, s.redshift, s.lm, c);

  ClusterComponent& cc = h.comp;
  cc.name = name;
  cc.offset_kpc = off;
  cc.r_max_kpc = s.r_max_r500 * h.r500;
  cc.density.kind = DensityKind::Beta;
  cc.density.normalisation = DensityNormalisation::Amplitude;
  cc.density.beta.beta = s.beta;
  cc.density.beta.r_c_kpc = s.core_radius_r500 * h.r500;
  cc.density.beta.n_e0_cm3 = 1.0;  // set below
  cc.metallicity.kind = MetallicityKind::Constant;
  cc.metallicity.Z_solar = s.Z_solar;

  const double xc = s.core_radius_r500, b3 = 3.0 * s.beta;
  // n_e / n_e0 at r = R500 e^s, and its square.
  auto ne2 = [&](double sv) {
    const double x = std::exp(sv) / xc;
    return std::pow(1.0 + x * x, -b3);
  };

  // Temperature.
  if (s.universal_temperature) {
    // T(r) = T_mg f(r/R500) with T_mg chosen so that the emission-measure-weighted
    // (weight n_e n_H) mean of T over the 3-D shell 0.15-1 R500 equals the relation's kT.
    const double a = std::log(0.15);
    const double wt = gl_integrate(a, 0.0, 8, [&](double sv) { return std::exp(3 * sv) * ne2(sv) * universal_shape(std::exp(sv)); });
    const double w = gl_integrate(a, 0.0, 8, [&](double sv) { return std::exp(3 * sv) * ne2(sv); });
    cc.temperature.kind = TemperatureKind::Vikhlinin06Universal;
    cc.temperature.universal.kT_mg_keV = h.kT / (wt / w);
    cc.temperature.universal.r500_kpc = h.r500;
  } else {
    cc.temperature.kind = TemperatureKind::Isothermal;
    cc.temperature.kT_keV = h.kT;
  }
  auto T_at = [&](double sv) {
    return s.universal_temperature ? cc.temperature.universal.kT_mg_keV * universal_shape(std::exp(sv)) : h.kT;
  };

  // Rest-frame 0.5-2 keV luminosity inside R500 for n_e0 = 1 cm^-3:
  // L1 = 4 pi Int r^2 n_e^2 / (n_e/n_H) Lambda(T(r), Z) dr.
  double Tlo = h.kT, Thi = h.kT;
  if (s.universal_temperature) {
    // The universal shape rises from 0.6 (centre) to its maximum near 0.1-0.2 R500 and declines outwards.
    Tlo = Thi = T_at(0.0);
    for (int i = 0; i <= 2000; ++i) {
      const double T = T_at(kSmin * i / 2000.0);
      Tlo = std::min(Tlo, T);
      Thi = std::max(Thi, T);
    }
    Tlo *= 0.999;
    Thi *= 1.001;
  }
  const LambdaOfT lam(em, Tlo, Thi, s.Z_solar);
  const double r3_cm3 = std::pow(h.r500 * k::kpc_cm, 3);
  const double ne_nh = gc.ne_over_nH(s.Z_solar);
  const double l1 = 4.0 * k::kPi * r3_cm3 / ne_nh *
                    gl_integrate(kSmin, 0.0, kPanels, [&](double sv) { return std::exp(3 * sv) * ne2(sv) * lam(T_at(sv)); });

  // Gas mass inside R500 for n_e0 = 1 cm^-3 (analytic beta-model volume, profiles.hpp).
  const double m1 = gc.rho_msun_kpc3(1.0, s.Z_solar) * beta_model_volume_kpc3(h.r500, cc.density.beta.r_c_kpc, s.beta);

  const double ne0 = s.normalise_luminosity ? std::sqrt(h.l_rel / l1) : s.gas_fraction * m500 / m1;
  cc.density.beta.n_e0_cm3 = ne0;
  h.l_model = l1 * ne0 * ne0;
  h.mgas = m1 * ne0;
  return h;
}

}  // namespace

// ---------------------------------------------------------------------------
MassTemperatureRelation mass_temperature_relation(const std::string& name) {
  if (name == "vikhlinin2009") return MassTemperatureRelation::Vikhlinin09;
  if (name == "arnaud2005_all") return MassTemperatureRelation::Arnaud05All;
  if (name == "arnaud2005_hot") return MassTemperatureRelation::Arnaud05Hot;
  throw core::DomainError("mass-temperature relation: '" + name +
                          "' is not one of vikhlinin2009, arnaud2005_all, arnaud2005_hot");
}

std::string relation_name(MassTemperatureRelation r) {
  switch (r) {
    case MassTemperatureRelation::Vikhlinin09: return "vikhlinin2009";
    case MassTemperatureRelation::Arnaud05All: return "arnaud2005_all";
    case MassTemperatureRelation::Arnaud05Hot: return "arnaud2005_hot";
  }
  return "unknown";
}

std::string relation_name(LuminosityMassRelation r) {
  switch (r) {
    case LuminosityMassRelation::Vikhlinin09: return "vikhlinin2009";
  }
  return "unknown";
}

std::string relation_reference(MassTemperatureRelation r) {
  switch (r) {
    case MassTemperatureRelation::Vikhlinin09: return "Vikhlinin et al. 2009, ApJ 692, 1033 (M500-T)";
    case MassTemperatureRelation::Arnaud05All:
      return "Arnaud, Pointecouteau & Pratt 2005, A&A 441, 893 (M500-T, whole sample)";
    case MassTemperatureRelation::Arnaud05Hot:
      return "Arnaud, Pointecouteau & Pratt 2005, A&A 441, 893 (M500-T, kT > 3.5 keV)";
  }
  return "unknown";
}

std::string relation_reference(LuminosityMassRelation r) {
  switch (r) {
    case LuminosityMassRelation::Vikhlinin09: return "Vikhlinin et al. 2009, ApJ 692, 1033 (L(0.5-2 keV)-M500)";
  }
  return "unknown";
}

double kT_from_m500_keV(double m500_msun, double z, MassTemperatureRelation rel, const cosmo::Cosmology& c) {
  check_m500("kT_from_m500_keV", m500_msun);
  check_z("kT_from_m500_keV", z);
  const MT p = mt_params(rel, c);
  return 5.0 * std::pow(m500_msun * c.E(z) / p.norm_msun, 1.0 / p.slope);
}

double m500_from_kT_msun(double kT_keV, double z, MassTemperatureRelation rel, const cosmo::Cosmology& c) {
  if (!(std::isfinite(kT_keV) && kT_keV > 0.0))
    fail("m500_from_kT_msun", "kT_keV", num(kT_keV) + " must be finite and > 0");
  check_z("m500_from_kT_msun", z);
  const MT p = mt_params(rel, c);
  return p.norm_msun * std::pow(kT_keV / 5.0, p.slope) / c.E(z);
}

double l_soft_from_m500_erg_s(double m500_msun, double z, LuminosityMassRelation rel, const cosmo::Cosmology& c) {
  check_m500("l_soft_from_m500_erg_s", m500_msun);
  check_z("l_soft_from_m500_erg_s", z);
  switch (rel) {
    case LuminosityMassRelation::Vikhlinin09:
      // Vikhlinin et al. 2009, ApJ 692, 1033 (from memory, unverified); M500 in Msun (see the file header).
      return std::exp(47.392 + 1.61 * std::log(m500_msun) + 1.85 * std::log(c.E(z)) - 0.39 * std::log(c.h() / 0.72));
  }
  throw core::DomainError("luminosity-mass relation: unknown enum value");
}

double l_soft_scatter_ln(LuminosityMassRelation rel) {
  switch (rel) {
    case LuminosityMassRelation::Vikhlinin09: return 0.40;  // Vikhlinin et al. 2009 (from memory, unverified)
  }
  throw core::DomainError("luminosity-mass relation: unknown enum value");
}

// ---------------------------------------------------------------------------
ClusterModel scaled_cluster(const ScaledClusterSpec& s, const cosmo::Cosmology& c, ScaledClusterSummary* summary) {
  const std::string where = "scaled cluster '" + s.name + "'";
  auto positive = [&](const std::string& f, double v) {
    if (!(std::isfinite(v) && v > 0.0)) fail(where, f, num(v) + " must be finite and > 0");
  };
  if (s.name.empty()) fail(where, "name", "must not be empty");
  positive("m500_msun", s.m500_msun);
  if (!(std::isfinite(s.redshift) && s.redshift >= 0.0)) fail(where, "redshift", num(s.redshift) + " must be finite and >= 0");
  if (!(std::isfinite(s.beta) && s.beta > 0.5)) fail(where, "beta", num(s.beta) + " must be finite and > 1/2");
  if (!(std::isfinite(s.core_radius_r500) && s.core_radius_r500 >= 1e-3 && s.core_radius_r500 <= 10.0))
    fail(where, "core_radius_r500", num(s.core_radius_r500) + " must be in [1e-3, 10]");
  if (!(std::isfinite(s.r_max_r500) && s.r_max_r500 >= 1.0))
    fail(where, "r_max_r500", num(s.r_max_r500) + " must be finite and >= 1 (the normalisation is set inside R500)");
  if (!(std::isfinite(s.gas_fraction) && s.gas_fraction > 0.0 && s.gas_fraction < 1.0))
    fail(where, "gas_fraction", num(s.gas_fraction) + " must be in (0, 1)");
  if (!(std::isfinite(s.Z_solar) && s.Z_solar >= 0.0)) fail(where, "Z_solar", num(s.Z_solar) + " must be finite and >= 0");
  const emission::AbundanceSet* set = nullptr;
  try {
    set = &emission::abundance_set(s.abundance_set);
  } catch (const core::DomainError& e) {
    fail(where, "abundance_set", e.what());
  }
  for (std::size_t i = 0; i < s.subclumps.size(); ++i) {
    const std::string f = "subclumps[" + std::to_string(i) + "].";
    positive(f + "mass_ratio", s.subclumps[i].mass_ratio);
    for (double o : s.subclumps[i].offset_r500)
      if (!std::isfinite(o)) fail(where, f + "offset_r500", num(o) + " must be finite");
  }

  const GasComposition gc(*set);
  SoftBandEmissivity em(*set);
  const Halo main = build_halo(s, s.m500_msun, "main", {0.0, 0.0, 0.0}, c, gc, em);

  ClusterModel m;
  m.name = s.name;
  m.abundance_set = s.abundance_set;
  m.redshift = s.redshift;
  m.components.push_back(main.comp);
  double m_total = s.m500_msun;
  for (std::size_t i = 0; i < s.subclumps.size(); ++i) {
    const ScaledSubclump& sc = s.subclumps[i];
    const std::array<double, 3> off{sc.offset_r500[0] * main.r500, sc.offset_r500[1] * main.r500,
                                    sc.offset_r500[2] * main.r500};
    const double ms = sc.mass_ratio * s.m500_msun;
    m.components.push_back(build_halo(s, ms, "subclump_" + std::to_string(i + 1), off, c, gc, em).comp);
    m_total += ms;
  }
  m.m500_msun = m_total;
  validate_model(m);

  if (summary) {
    ScaledClusterSummary& o = *summary;
    o.r500_kpc = main.r500;
    o.kT_keV = main.kT;
    o.l_soft_erg_s = main.l_model;
    o.l_soft_relation_erg_s = main.l_rel;
    o.gas_mass_r500_msun = main.mgas;
    o.ne0_cm3 = main.comp.density.beta.n_e0_cm3;
    o.mt_reference = relation_reference(s.mt);
    o.lm_reference = relation_reference(s.lm);
  }
  return m;
}

}  // namespace icmscope::cells
