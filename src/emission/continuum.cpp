#include "icmscope/emission/continuum.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>
#include <string>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"

namespace icmscope::emission {
namespace {

namespace k = core::constants;

std::string num(double v) {
  std::ostringstream os;
  os.precision(8);
  os << v;
  return os.str();
}

void check_args(const char* fn, double E, double kT, double Zs) {
  if (!(E > 0.0) || !std::isfinite(E))
    throw core::DomainError(std::string(fn) + ": energy E_keV must be finite and > 0, got " + num(E));
  if (!(kT > 0.0) || !std::isfinite(kT))
    throw core::DomainError(std::string(fn) + ": temperature kT_keV must be finite and > 0, got " + num(kT));
  if (!(Zs >= 0.0) || !std::isfinite(Zs))
    throw core::DomainError(std::string(fn) + ": metallicity Z_solar must be finite and >= 0, got " + num(Zs));
}

}  // namespace

double ff_nu_constant() {
  const double e2 = k::e_esu * k::e_esu;
  const double e6 = e2 * e2 * e2;
  const double c3 = k::c_cm_s * k::c_cm_s * k::c_cm_s;
  return 32.0 * k::kPi * e6 / (3.0 * k::m_e_g * c3) * std::sqrt(2.0 * k::kPi / (3.0 * k::k_B_erg_K * k::m_e_g));
}

double ff_photon_constant() { return ff_nu_constant() / (k::h_erg_s * std::sqrt(k::keV_K)); }

double ff_total_constant() { return ff_nu_constant() * k::k_B_erg_K / k::h_erg_s; }

double ff_photon_emissivity_ion(double E_keV, double kT_keV, int Z, double gbar) {
  check_args("ff_photon_emissivity_ion", E_keV, kT_keV, 0.0);
  return ff_photon_constant() / std::sqrt(kT_keV) * static_cast<double>(Z) * Z * gbar * std::exp(-E_keV / kT_keV) /
         E_keV;
}

double coronal_bare_fraction_upper_bound(int Z, double kT_keV) {
  if (Z < 1) throw core::DomainError("coronal_bare_fraction_upper_bound: atomic number Z must be >= 1, got " + std::to_string(Z));
  if (!(kT_keV > 0.0) || !std::isfinite(kT_keV))
    throw core::DomainError("coronal_bare_fraction_upper_bound: kT_keV must be finite and > 0, got " + num(kT_keV));
  const double z = Z, z2 = z * z;
  const double T = kT_keV * k::keV_K;                 // K
  const double g2 = z2 * k::Ry_keV / kT_keV;          // chi_1 / kT
  if (g2 > 700.0) return 0.0;
  // Hydrogen collisional ionisation, Cen 1992: 5.85e-11 T^1/2 exp(-157809/T) / (1 + sqrt(T/1e5)),
  // scaled to a hydrogenic ion of charge Z: S_Z(T) = Z^-3 S_H(T / Z^2).
  const double Ts = T / z2;
  const double S = 5.85e-11 * std::sqrt(Ts) * std::exp(-g2) / (1.0 + std::sqrt(Ts / 1e5)) / (z2 * z);
  // Radiative recombination onto a bare nucleus, Seaton 1959:
  // 5.197e-14 Z lambda^1/2 (0.4288 + 0.5 ln lambda + 0.469 lambda^-1/3), lambda = Z^2 Ry / kT.
  const double lam = g2;
  const double alpha = 5.197e-14 * z * std::sqrt(lam) * (0.4288 + 0.5 * std::log(lam) + 0.469 * std::cbrt(1.0 / lam));
  const double R = S / alpha;
  return R / (1.0 + R);
}

const std::vector<int>& recombining_ions() {
  static const std::vector<int> z = {1, 2, 6, 7, 8, 10, 12, 14, 16, 26};
  return z;
}

ContinuumEmissivity::ContinuumEmissivity(const AbundanceSet& set, std::shared_ptr<const GauntTable> gaunt,
                                         const ContinuumSettings& settings)
    : set_(set), gaunt_(std::move(gaunt)), settings_(settings) {
  if (set_.elements.empty() || set_.elements[0].Z != 1)
    throw core::DomainError("ContinuumEmissivity: abundance set '" + set_.name + "' must start with hydrogen");
  if (settings_.recombination_n_max < 1 || settings_.recombination_n_max > 10)
    throw core::DomainError("ContinuumSettings: recombination_n_max must be in 1..10, got " +
                            std::to_string(settings_.recombination_n_max));
  if (!gaunt_) gaunt_ = std::make_shared<const GauntTable>();
  const auto& rz = recombining_ions();
  for (const Element& e : set_.elements) {
    Ion ion;
    ion.Z = e.Z;
    ion.z2_n_solar = static_cast<double>(e.Z) * e.Z * e.n_over_nH;
    ion.metal = e.Z > 2;
    ion.recombines = std::find(rz.begin(), rz.end(), e.Z) != rz.end();
    ions_.push_back(ion);
  }
}

std::vector<double> ContinuumEmissivity::edges_keV() const {
  std::vector<double> e;
  if (!settings_.recombination) return e;
  for (const Ion& ion : ions_)
    if (ion.recombines)
      for (int nl = 1; nl <= settings_.recombination_n_max; ++nl)
        e.push_back(static_cast<double>(ion.Z) * ion.Z * k::Ry_keV / (static_cast<double>(nl) * nl));
  std::sort(e.begin(), e.end());
  e.erase(std::unique(e.begin(), e.end()), e.end());
  return e;
}

void ContinuumEmissivity::eval(const double* E, std::size_t n, double kT, double Zs, int parts, double* out) const {
  check_args("ContinuumEmissivity", n > 0 ? E[0] : 1.0, kT, Zs);
  const std::size_t ni = ions_.size();
  const int nmax = settings_.recombination_n_max;
  const bool fb = (parts & kFB) && settings_.recombination;
  const bool ff = (parts & kFF) != 0;
  // Per-ion, per-temperature quantities.
  std::vector<double> a(ni);
  std::vector<GauntTable::Weights> wg(ni);
  // Recombination levels per ion in ascending edge energy (n = n_max .. 1):
  // edge chi and ln F with F = f_bare * (2 chi / (n kT)) * exp(chi / kT), so that the
  // term above the edge is F exp(-E/kT). cumF is the running sum of F (fast path,
  // used when no F overflows; otherwise exp(ln F - u) per level).
  std::vector<double> chi, lf, cumF;
  std::vector<std::size_t> lev_begin(ni + 1, 0);
  std::vector<char> fast(ni, 1);
  for (std::size_t i = 0; i < ni; ++i) {
    const Ion& ion = ions_[i];
    a[i] = ion.z2_n_solar * (ion.metal ? Zs : 1.0);
    wg[i] = gaunt_->g2_weights(gaunt_gamma2(ion.Z, kT));
    lev_begin[i] = chi.size();
    if (fb && ion.recombines && a[i] > 0.0) {
      const double fbare = settings_.bare_fraction == BareFraction::fully_stripped
                               ? 1.0
                               : coronal_bare_fraction_upper_bound(ion.Z, kT);
      if (fbare > 0.0) {
        double run = 0.0;
        for (int nl = nmax; nl >= 1; --nl) {
          const double c = static_cast<double>(ion.Z) * ion.Z * k::Ry_keV / (static_cast<double>(nl) * nl);
          const double l = std::log(fbare * 2.0 * c / (nl * kT)) + c / kT;
          if (l > 600.0) fast[i] = 0;
          run += std::exp(std::min(l, 600.0));
          chi.push_back(c);
          lf.push_back(l);
          cumF.push_back(run);
        }
      }
    }
  }
  lev_begin[ni] = chi.size();
  const double ffw = ff ? 1.0 : 0.0;
  const double pre = ff_photon_constant() / std::sqrt(kT);
  for (std::size_t kq = 0; kq < n; ++kq) {
    const double e = E[kq];
    if (!(e > 0.0) || !std::isfinite(e))
      throw core::DomainError("ContinuumEmissivity: energy E_keV must be finite and > 0, got " + num(e));
    const double u = e / kT;
    const GauntTable::Weights wu = gaunt_->u_weights(u);
    const double eu = std::exp(-u);
    double s = 0.0;
    for (std::size_t i = 0; i < ni; ++i) {
      if (a[i] == 0.0) continue;
      double term;
      if (fast[i]) {
        std::size_t l = lev_begin[i];
        while (l < lev_begin[i + 1] && e >= chi[l]) ++l;
        term = eu * (ffw + (l > lev_begin[i] ? cumF[l - 1] : 0.0));
      } else {
        term = ffw * eu;
        for (std::size_t l = lev_begin[i]; l < lev_begin[i + 1] && e >= chi[l]; ++l) term += std::exp(lf[l] - u);
      }
      if (term == 0.0) continue;
      s += a[i] * gaunt_->eval(wu, wg[i]) * term;
    }
    out[kq] = pre * s / e;
  }
}

double ContinuumEmissivity::free_free(double E, double kT, double Zs) const {
  check_args("ContinuumEmissivity::free_free", E, kT, Zs);
  double r = 0.0;
  eval(&E, 1, kT, Zs, kFF, &r);
  return r;
}

double ContinuumEmissivity::recombination(double E, double kT, double Zs) const {
  check_args("ContinuumEmissivity::recombination", E, kT, Zs);
  double r = 0.0;
  eval(&E, 1, kT, Zs, kFB, &r);
  return r;
}

double ContinuumEmissivity::operator()(double E, double kT, double Zs) const {
  check_args("ContinuumEmissivity", E, kT, Zs);
  double r = 0.0;
  eval(&E, 1, kT, Zs, kFF | kFB, &r);
  return r;
}

void ContinuumEmissivity::spectrum(const double* E, std::size_t n, double kT, double Zs, double* out) const {
  eval(E, n, kT, Zs, kFF | kFB, out);
}

}  // namespace icmscope::emission
