#pragma once
// On-axis effective-area curve A(E): energy bins (keV) with an area (cm^2) per
// bin, from an inline table, a built-in analytic shape, or an OGIP SPECRESP file
// (io/ogip.hpp). Immutable value type.
#include <functional>
#include <string>
#include <vector>

namespace icmscope::instrument {

// Photon spectrum callback: dN/dE at E_keV in any consistent unit (only ratios
// matter where it is used as a weight).
using SpectrumFn = std::function<double(double E_keV)>;

// Built-in smooth peaked curve, illustrative (not any real telescope): a split
// log-normal in energy,
//   A(E) = peak_area_cm2 * exp(-(log10(E/peak_energy_keV))^2 / (2 w^2)),
//   w = low_rolloff_dex below the peak, high_rolloff_dex above it,
// so that A(peak_energy_keV) = peak_area_cm2 exactly and the curve is C1 there.
// It is tabulated on n_bins logarithmic bins between e_min_keV and e_max_keV.
struct AnalyticAreaSettings {
  double peak_area_cm2 = 500.0;
  double peak_energy_keV = 1.5;
  double low_rolloff_dex = 0.25;   // log10 width of the low-energy side
  double high_rolloff_dex = 0.35;  // log10 width of the high-energy side
  double e_min_keV = 0.1;
  double e_max_keV = 12.0;
  int n_bins = 600;
};

class EffectiveArea {
 public:
  EffectiveArea() = default;

  // Bins: edges_keV (n+1, strictly increasing, >= 0), area_cm2 (n, finite, >= 0).
  // `origin` names the source in messages ("inline table", a file name ...).
  // DomainError naming the field ("energy_keV", "area_cm2") otherwise.
  static EffectiveArea from_bins(std::vector<double> edges_keV, std::vector<double> area_cm2,
                                 std::string origin = "inline table");
  // Points: energies_keV (strictly increasing, > 0) with area_cm2 at each point.
  // Bins are laid with edges half-way between points (ends mirrored); at()
  // interpolates linearly between the given points.
  static EffectiveArea from_points(const std::vector<double>& energies_keV,
                                   const std::vector<double>& area_cm2,
                                   std::string origin = "inline table");
  static EffectiveArea analytic(const AnalyticAreaSettings& s);

  bool empty() const { return area_.empty(); }
  std::size_t size() const { return area_.size(); }
  const std::vector<double>& edges_keV() const { return edges_; }
  const std::vector<double>& area_cm2() const { return area_; }
  const std::string& origin() const { return origin_; }
  double e_min_keV() const { return edges_.empty() ? 0.0 : edges_.front(); }
  double e_max_keV() const { return edges_.empty() ? 0.0 : edges_.back(); }

  // A(E) cm^2: linear between nodes (bin centres, or the given points), the end
  // node value between the end node and the outer edge, 0 outside the edges.
  double at(double E_keV) const;
  // The value of the bin containing E (the OGIP reading of an ARF row: one area
  // per energy bin), 0 outside the edges.
  double bin_value(double E_keV) const;
  // True when the bin edges equal `edges_keV` (relative 1e-6).
  bool same_bins(const std::vector<double>& edges_keV) const;

  // Spectrum-weighted band average (cm^2):
  //   Int_{e_lo}^{e_hi} S(E) A(E) dE / Int S(E) dE,
  // S a photon spectrum (empty = flat). n_steps midpoint samples per keV-range
  // (at least 4 per curve bin in the band). DomainError for e_lo >= e_hi.
  double band_average_cm2(double e_lo_keV, double e_hi_keV, const SpectrumFn& spectrum = {},
                          int n_steps = 2048) const;

  // Peak value (cm^2) and a copy scaled by a constant factor (>= 0).
  double max_cm2() const;
  EffectiveArea scaled(double factor) const;

 private:
  std::vector<double> edges_;  // n+1
  std::vector<double> area_;   // n, per bin
  std::vector<double> node_;   // n interpolation abscissae
  std::string origin_;
};

}  // namespace icmscope::instrument
