#pragma once
// Combined statistic M (Rasia et al. 2013, arXiv:1211.7040; form [M]):
//   M = (1/N) sum_i s_i (V_i - V_i,R) / |V_i,D - V_i,R|,
// V_i,R and V_i,D the medians of relaxed and disturbed reference sets, supplied
// by the user (no built-in numbers). s_i = sign(V_i,D - V_i,R), which is the
// published s = -1 for c and +1 for P3/P0 and A; so each term is 0 at the relaxed
// median and 1 at the disturbed median. Optionally on log10 V.
#include <string>
#include <vector>

#include "icmscope/morphology/realisations.hpp"

namespace icmscope::morphology {

struct CombinedComponent {
  std::string indicator;  // NamedEstimate::name
  std::string aperture;   // NamedEstimate::aperture
  double median_relaxed = 0.0;
  double median_disturbed = 0.0;
  bool use_log10 = false;  // compare log10 V with log10 of the medians
};

// M of plain values (same order as comps); terms receives each term.
double combined_m(const std::vector<double>& values, const std::vector<CombinedComponent>& comps,
                  std::vector<double>* terms = nullptr);

struct CombinedResult {
  bool available = false;
  std::string reason;
  std::vector<double> terms;  // of the corrected values
  Estimate M;                 // raw: of raw values; corrected: of corrected values; samples from realisations
};

CombinedResult combined_m(const std::vector<NamedEstimate>& values, const std::vector<CombinedComponent>& comps);

}  // namespace icmscope::morphology
