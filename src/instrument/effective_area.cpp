#include "icmscope/instrument/effective_area.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <string>

#include "icmscope/core/errors.hpp"

namespace icmscope::instrument {

namespace {

std::string num(double v) {
  char b[64];
  std::snprintf(b, sizeof b, "%.9g", v);
  return b;
}

[[noreturn]] void fail(const std::string& origin, const std::string& what) {
  throw core::DomainError("effective area (" + origin + "): " + what);
}

void check_increasing(const std::vector<double>& e, const std::string& origin, const std::string& field,
                      double min_value) {
  for (std::size_t i = 0; i < e.size(); ++i) {
    if (!std::isfinite(e[i]) || e[i] < min_value)
      fail(origin, field + "[" + std::to_string(i) + "] = " + num(e[i]) + ", expected a finite value >= " +
                       num(min_value));
    if (i > 0 && !(e[i] > e[i - 1]))
      fail(origin, field + "[" + std::to_string(i) + "] = " + num(e[i]) + " not greater than " + field + "[" +
                       std::to_string(i - 1) + "] = " + num(e[i - 1]) + "; expected strictly increasing energies");
  }
}

void check_area(const std::vector<double>& a, const std::string& origin) {
  for (std::size_t i = 0; i < a.size(); ++i)
    if (!std::isfinite(a[i]) || a[i] < 0.0)
      fail(origin, "area_cm2[" + std::to_string(i) + "] = " + num(a[i]) + ", expected a finite value >= 0");
}

}  // namespace

EffectiveArea EffectiveArea::from_bins(std::vector<double> edges_keV, std::vector<double> area_cm2,
                                       std::string origin) {
  if (area_cm2.empty()) fail(origin, "area_cm2 is empty, expected at least one bin");
  if (edges_keV.size() != area_cm2.size() + 1)
    fail(origin, "energy_keV has " + std::to_string(edges_keV.size()) + " edges for " +
                     std::to_string(area_cm2.size()) + " area values, expected one edge more than values");
  check_increasing(edges_keV, origin, "energy_keV", 0.0);
  check_area(area_cm2, origin);
  EffectiveArea a;
  a.node_.resize(area_cm2.size());
  for (std::size_t i = 0; i < area_cm2.size(); ++i) a.node_[i] = 0.5 * (edges_keV[i] + edges_keV[i + 1]);
  a.edges_ = std::move(edges_keV);
  a.area_ = std::move(area_cm2);
  a.origin_ = std::move(origin);
  return a;
}

EffectiveArea EffectiveArea::from_points(const std::vector<double>& e, const std::vector<double>& area,
                                         std::string origin) {
  if (e.size() < 2) fail(origin, "energy_keV has " + std::to_string(e.size()) + " points, expected at least 2");
  if (e.size() != area.size())
    fail(origin, "energy_keV has " + std::to_string(e.size()) + " points but area_cm2 has " +
                     std::to_string(area.size()) + ", expected equal lengths");
  check_increasing(e, origin, "energy_keV", 1e-300);
  check_area(area, origin);
  const std::size_t n = e.size();
  std::vector<double> edges(n + 1);
  for (std::size_t i = 1; i < n; ++i) edges[i] = 0.5 * (e[i - 1] + e[i]);
  edges[0] = std::max(0.0, e[0] - 0.5 * (e[1] - e[0]));
  edges[n] = e[n - 1] + 0.5 * (e[n - 1] - e[n - 2]);
  EffectiveArea a;
  a.edges_ = std::move(edges);
  a.area_ = area;
  a.node_ = e;
  a.origin_ = std::move(origin);
  return a;
}

EffectiveArea EffectiveArea::analytic(const AnalyticAreaSettings& s) {
  const std::string o = "analytic";
  if (!(s.peak_area_cm2 >= 0.0) || !std::isfinite(s.peak_area_cm2))
    fail(o, "peak_area_cm2 = " + num(s.peak_area_cm2) + ", expected >= 0");
  if (!(s.e_min_keV > 0.0)) fail(o, "e_min_keV = " + num(s.e_min_keV) + ", expected > 0");
  if (!(s.e_max_keV > s.e_min_keV)) fail(o, "e_max_keV = " + num(s.e_max_keV) + ", expected > e_min_keV");
  if (!(s.peak_energy_keV > 0.0)) fail(o, "peak_energy_keV = " + num(s.peak_energy_keV) + ", expected > 0");
  if (!(s.low_rolloff_dex > 0.0)) fail(o, "low_rolloff_dex = " + num(s.low_rolloff_dex) + ", expected > 0");
  if (!(s.high_rolloff_dex > 0.0)) fail(o, "high_rolloff_dex = " + num(s.high_rolloff_dex) + ", expected > 0");
  if (s.n_bins < 2) fail(o, "n_bins = " + std::to_string(s.n_bins) + ", expected >= 2");
  std::vector<double> edges(static_cast<std::size_t>(s.n_bins) + 1), area(static_cast<std::size_t>(s.n_bins));
  const double l0 = std::log(s.e_min_keV), l1 = std::log(s.e_max_keV);
  for (int i = 0; i <= s.n_bins; ++i) edges[i] = std::exp(l0 + (l1 - l0) * i / s.n_bins);
  edges.front() = s.e_min_keV;
  edges.back() = s.e_max_keV;
  auto shape = [&](double E) {
    const double x = std::log10(E / s.peak_energy_keV);
    const double w = x < 0 ? s.low_rolloff_dex : s.high_rolloff_dex;
    return s.peak_area_cm2 * std::exp(-x * x / (2 * w * w));
  };
  // Bin value = the curve at the geometric bin centre, so at() reproduces the
  // shape at the nodes.
  EffectiveArea a;
  a.node_.resize(area.size());
  for (std::size_t i = 0; i < area.size(); ++i) {
    a.node_[i] = std::sqrt(edges[i] * edges[i + 1]);
    area[i] = shape(a.node_[i]);
  }
  a.edges_ = std::move(edges);
  a.area_ = std::move(area);
  a.origin_ = o;
  return a;
}

double EffectiveArea::at(double E) const {
  if (area_.empty() || !(E >= edges_.front()) || !(E <= edges_.back())) return 0.0;
  if (E <= node_.front()) return area_.front();
  if (E >= node_.back()) return area_.back();
  const auto it = std::upper_bound(node_.begin(), node_.end(), E);
  const std::size_t j = static_cast<std::size_t>(it - node_.begin());  // node_[j-1] <= E < node_[j]
  const double t = (E - node_[j - 1]) / (node_[j] - node_[j - 1]);
  return area_[j - 1] + t * (area_[j] - area_[j - 1]);
}

double EffectiveArea::bin_value(double E) const {
  if (area_.empty() || !(E >= edges_.front()) || !(E <= edges_.back())) return 0.0;
  std::size_t j = static_cast<std::size_t>(std::upper_bound(edges_.begin(), edges_.end(), E) - edges_.begin());
  j = std::min(std::max<std::size_t>(j, 1), area_.size());
  return area_[j - 1];
}

bool EffectiveArea::same_bins(const std::vector<double>& e) const {
  if (e.size() != edges_.size()) return false;
  for (std::size_t i = 0; i < e.size(); ++i)
    if (std::fabs(e[i] - edges_[i]) > 1e-6 * std::max(1.0, std::fabs(e[i]))) return false;
  return true;
}

double EffectiveArea::band_average_cm2(double e_lo, double e_hi, const SpectrumFn& spectrum, int n_steps) const {
  if (!(e_hi > e_lo) || !(e_lo >= 0.0))
    throw core::DomainError("effective area (" + origin_ + "): band [" + num(e_lo) + ", " + num(e_hi) +
                            "] keV, expected 0 <= e_min < e_max");
  // At least 4 samples per curve bin inside the band.
  std::size_t bins_in_band = 0;
  for (std::size_t i = 0; i < area_.size(); ++i)
    if (edges_[i + 1] > e_lo && edges_[i] < e_hi) ++bins_in_band;
  const std::size_t n = std::max<std::size_t>(static_cast<std::size_t>(std::max(n_steps, 1)), 4 * bins_in_band);
  const double h = (e_hi - e_lo) / static_cast<double>(n);
  double num_ = 0.0, den = 0.0;
  for (std::size_t i = 0; i < n; ++i) {
    const double E = e_lo + (static_cast<double>(i) + 0.5) * h;
    const double w = spectrum ? spectrum(E) : 1.0;
    num_ += w * at(E);
    den += w;
  }
  if (!(den > 0.0))
    throw core::DomainError("effective area (" + origin_ + "): the weighting spectrum integrates to " + num(den) +
                            " over [" + num(e_lo) + ", " + num(e_hi) + "] keV, expected > 0");
  return num_ / den;
}

double EffectiveArea::max_cm2() const {
  return area_.empty() ? 0.0 : *std::max_element(area_.begin(), area_.end());
}

EffectiveArea EffectiveArea::scaled(double f) const {
  if (!(f >= 0.0) || !std::isfinite(f))
    throw core::DomainError("effective area (" + origin_ + "): scale factor " + num(f) + ", expected >= 0");
  EffectiveArea a = *this;
  for (double& v : a.area_) v *= f;
  return a;
}

}  // namespace icmscope::instrument
