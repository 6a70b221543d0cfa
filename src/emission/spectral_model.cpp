#include "icmscope/emission/spectral_model.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>

#include "icmscope/core/errors.hpp"

namespace icmscope::emission {
namespace {

std::string num(double v) {
  std::ostringstream os;
  os.precision(10);
  os << v;
  return os.str();
}

[[noreturn]] void bad(const std::string& field, const std::string& what) {
  throw core::DomainError("EmissivityGrid: field '" + field + "' " + what);
}

}  // namespace

void SpectralModel::photon_spectrum(const double* E, std::size_t n, double kT, double Z, double* out) const {
  for (std::size_t i = 0; i < n; ++i) out[i] = photon_emissivity(E[i], kT, Z);
}

// ---------------------------------------------------------------------------

ContinuumModel::ContinuumModel(const AbundanceSet& set, std::shared_ptr<const GauntTable> gaunt,
                               const ContinuumSettings& settings)
    : emis_(set, std::move(gaunt), settings) {}

std::string ContinuumModel::name() const {
  const auto& s = emis_.settings();
  std::string r = "continuum(" + emis_.abundances().name + ", free-free";
  if (s.recombination)
    r += std::string(" + recombination n<=") + std::to_string(s.recombination_n_max) +
         (s.bare_fraction == BareFraction::fully_stripped ? " fully-stripped" : " coronal-bare");
  return r + ")";
}

// ---------------------------------------------------------------------------

void EmissivityGrid::validate() const {
  if (kT_keV.size() < 2) bad("kT_keV", "needs at least 2 temperatures, got " + std::to_string(kT_keV.size()));
  for (std::size_t i = 0; i < kT_keV.size(); ++i) {
    if (!std::isfinite(kT_keV[i]) || kT_keV[i] <= 0.0)
      bad("kT_keV", "[" + std::to_string(i) + "] must be finite and > 0, got " + num(kT_keV[i]));
    if (i > 0 && !(kT_keV[i] > kT_keV[i - 1]))
      bad("kT_keV", "must be strictly increasing; [" + std::to_string(i) + "] = " + num(kT_keV[i]) +
                        " follows " + num(kT_keV[i - 1]));
  }
  if (Z_solar.empty()) bad("Z_solar", "needs at least 1 metallicity");
  for (std::size_t i = 0; i < Z_solar.size(); ++i) {
    if (!std::isfinite(Z_solar[i]) || Z_solar[i] < 0.0)
      bad("Z_solar", "[" + std::to_string(i) + "] must be finite and >= 0, got " + num(Z_solar[i]));
    if (i > 0 && !(Z_solar[i] > Z_solar[i - 1]))
      bad("Z_solar", "must be strictly increasing; [" + std::to_string(i) + "] = " + num(Z_solar[i]) +
                         " follows " + num(Z_solar[i - 1]));
  }
  if (E_lo_keV.empty()) bad("E_lo_keV", "needs at least 1 energy bin");
  if (E_hi_keV.size() != E_lo_keV.size())
    bad("E_hi_keV", "has " + std::to_string(E_hi_keV.size()) + " entries, expected " +
                        std::to_string(E_lo_keV.size()) + " (one per E_lo_keV)");
  for (std::size_t i = 0; i < E_lo_keV.size(); ++i) {
    if (!std::isfinite(E_lo_keV[i]) || E_lo_keV[i] <= 0.0)
      bad("E_lo_keV", "[" + std::to_string(i) + "] must be finite and > 0, got " + num(E_lo_keV[i]));
    if (!std::isfinite(E_hi_keV[i]) || !(E_hi_keV[i] > E_lo_keV[i]))
      bad("E_hi_keV", "[" + std::to_string(i) + "] = " + num(E_hi_keV[i]) + " must exceed E_lo_keV[" +
                          std::to_string(i) + "] = " + num(E_lo_keV[i]));
    if (i > 0 && E_lo_keV[i] < E_hi_keV[i - 1] * (1.0 - 1e-12))
      bad("E_lo_keV", "bins must be increasing and not overlap; [" + std::to_string(i) + "] = " +
                          num(E_lo_keV[i]) + " is below E_hi_keV[" + std::to_string(i - 1) + "] = " +
                          num(E_hi_keV[i - 1]));
  }
  const std::size_t n = kT_keV.size() * Z_solar.size() * E_lo_keV.size();
  if (values.size() != n)
    bad("values", "has " + std::to_string(values.size()) + " entries, expected n_kT * n_Z * n_E = " +
                      std::to_string(n));
  for (std::size_t i = 0; i < n; ++i)
    if (!std::isfinite(values[i]) || values[i] < 0.0) {
      const std::size_t iE = i % n_E(), iZ = (i / n_E()) % n_Z(), iT = i / (n_E() * n_Z());
      bad("values", "[" + std::to_string(iT) + "][" + std::to_string(iZ) + "][" + std::to_string(iE) +
                        "] must be finite and >= 0, got " + num(values[i]));
    }
}

TabulatedModel::TabulatedModel(EmissivityGrid grid, std::string name) : grid_(std::move(grid)), name_(std::move(name)) {
  grid_.validate();
  lnT_.resize(grid_.n_kT());
  for (std::size_t i = 0; i < lnT_.size(); ++i) lnT_[i] = std::log(grid_.kT_keV[i]);
  inv_width_.resize(grid_.n_E());
  for (std::size_t i = 0; i < inv_width_.size(); ++i) inv_width_[i] = 1.0 / (grid_.E_hi_keV[i] - grid_.E_lo_keV[i]);
}

std::vector<double> TabulatedModel::discontinuities_keV() const {
  std::vector<double> e;
  e.reserve(2 * grid_.n_E());
  for (std::size_t i = 0; i < grid_.n_E(); ++i) {
    e.push_back(grid_.E_lo_keV[i]);
    e.push_back(grid_.E_hi_keV[i]);
  }
  std::sort(e.begin(), e.end());
  e.erase(std::unique(e.begin(), e.end()), e.end());
  return e;
}

TabulatedModel::Weights TabulatedModel::weights(double kT, double Z) const {
  if (!(kT > 0.0) || !std::isfinite(kT))
    throw core::DomainError("TabulatedModel '" + name_ + "': kT_keV must be finite and > 0, got " + num(kT));
  if (!(Z >= 0.0) || !std::isfinite(Z))
    throw core::DomainError("TabulatedModel '" + name_ + "': Z_solar must be finite and >= 0, got " + num(Z));
  Weights w;
  const auto& T = grid_.kT_keV;
  if (kT <= T.front()) {
    w.iT = 0;
    w.t = 0.0;
  } else if (kT >= T.back()) {
    w.iT = T.size() - 2;
    w.t = 1.0;
  } else {
    w.iT = static_cast<std::size_t>(std::upper_bound(T.begin(), T.end(), kT) - T.begin()) - 1;
    w.t = (std::log(kT) - lnT_[w.iT]) / (lnT_[w.iT + 1] - lnT_[w.iT]);
  }
  const auto& Zs = grid_.Z_solar;
  if (Zs.size() == 1) {
    w.one_Z = true;
  } else if (Z <= Zs.front()) {
    w.iZ = 0;
    w.fz = 0.0;
  } else if (Z >= Zs.back()) {
    w.iZ = Zs.size() - 2;
    w.fz = 1.0;
  } else {
    w.iZ = static_cast<std::size_t>(std::upper_bound(Zs.begin(), Zs.end(), Z) - Zs.begin()) - 1;
    w.fz = (Z - Zs[w.iZ]) / (Zs[w.iZ + 1] - Zs[w.iZ]);
  }
  return w;
}

double TabulatedModel::bin_value(const Weights& w, std::size_t iE) const {
  auto interpT = [&](std::size_t iZ) {
    const double a = grid_.value(w.iT, iZ, iE), b = grid_.value(w.iT + 1, iZ, iE);
    if (w.t == 0.0) return a;
    if (w.t == 1.0) return b;
    if (a > 0.0 && b > 0.0) return a * std::pow(b / a, w.t);
    return a + (b - a) * w.t;
  };
  if (w.one_Z) return interpT(0);
  const double v0 = interpT(w.iZ);
  if (w.fz == 0.0) return v0;
  const double v1 = interpT(w.iZ + 1);
  return v0 + (v1 - v0) * w.fz;
}

long TabulatedModel::bin_of(double E) const {
  const auto& lo = grid_.E_lo_keV;
  auto it = std::upper_bound(lo.begin(), lo.end(), E);
  if (it == lo.begin()) return -1;
  const std::size_t i = static_cast<std::size_t>(it - lo.begin()) - 1;
  return E < grid_.E_hi_keV[i] ? static_cast<long>(i) : -1;
}

double TabulatedModel::photon_emissivity(double E, double kT, double Z) const {
  if (!(E > 0.0) || !std::isfinite(E))
    throw core::DomainError("TabulatedModel '" + name_ + "': E_rest_keV must be finite and > 0, got " + num(E));
  const Weights w = weights(kT, Z);
  const long b = bin_of(E);
  if (b < 0) return 0.0;
  return bin_value(w, static_cast<std::size_t>(b)) * inv_width_[static_cast<std::size_t>(b)];
}

void TabulatedModel::photon_spectrum(const double* E, std::size_t n, double kT, double Z, double* out) const {
  const Weights w = weights(kT, Z);
  for (std::size_t i = 0; i < n; ++i) {
    if (!(E[i] > 0.0) || !std::isfinite(E[i]))
      throw core::DomainError("TabulatedModel '" + name_ + "': E_rest_keV must be finite and > 0, got " + num(E[i]));
    const long b = bin_of(E[i]);
    out[i] = b < 0 ? 0.0 : bin_value(w, static_cast<std::size_t>(b)) * inv_width_[static_cast<std::size_t>(b)];
  }
}

}  // namespace icmscope::emission
