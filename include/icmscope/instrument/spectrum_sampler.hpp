#pragma once
// Inverse-CDF table for drawing photon energies from a binned spectrum:
// piecewise-constant density on energy bins (keV), a guide table for O(1)
// bin look-up on average.
#include <cstdint>
#include <functional>
#include <vector>

namespace icmscope::instrument {

class SpectrumSampler {
 public:
  SpectrumSampler() = default;
  // edges_keV: n+1 strictly increasing; weights: n values >= 0 (counts or
  // probability per bin), not all 0. DomainError naming the field otherwise.
  SpectrumSampler(std::vector<double> edges_keV, const std::vector<double>& weights);
  // Weights Int f dE over each bin (n_sub midpoints) of a density f(E) >= 0.
  static SpectrumSampler from_density(std::vector<double> edges_keV, const std::function<double(double)>& f,
                                      int n_sub = 4);
  // Logarithmic edges from e_min to e_max (n bins).
  static std::vector<double> log_edges(double e_min_keV, double e_max_keV, int n);

  bool empty() const { return cdf_.empty(); }
  // Energy (keV) for the uniform u in [0, 1): bin by the CDF, uniform within it.
  double draw(double u) const;
  // Mean energy of the distribution (keV).
  double mean_keV() const;
  const std::vector<double>& edges_keV() const { return edges_; }
  const std::vector<double>& cdf() const { return cdf_; }  // n+1 values, 0 .. 1

 private:
  std::vector<double> edges_;
  std::vector<double> cdf_;
  std::vector<std::uint32_t> guide_;
};

}  // namespace icmscope::instrument
