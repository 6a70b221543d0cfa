#pragma once
// Poisson draws for re-Poissonising images: the means are fixed across
// realisations, so the per-pixel constants are precomputed once.
// Small means (< 12): sequential-search inversion with exp(-mu) precomputed.
// Large means: PTRS transformed rejection (Hoermann 1993, Insurance: Math. and
// Econ. 12, 39), exact in distribution.
#include <cstddef>
#include <vector>

#include "icmscope/core/random.hpp"

namespace icmscope::morphology {

class PoissonTable {
 public:
  PoissonTable() = default;
  explicit PoissonTable(const std::vector<double>& means) { reset(means); }
  // Negative or non-finite means are treated as 0.
  void reset(const std::vector<double>& means);
  std::size_t size() const { return mu_.size(); }
  double mean(std::size_t i) const { return mu_[i]; }
  // One draw for pixel i.
  double draw(std::size_t i, core::RandomStream& rng) const;

 private:
  std::vector<double> mu_;
  std::vector<double> aux_;  // exp(-mu) for small mu, log(mu) for large mu
};

// A single draw with mean mu (no precomputation).
double poisson_draw(double mu, core::RandomStream& rng);

}  // namespace icmscope::morphology
