#pragma once
// Small statistics helpers for the instrument tests.
#include <cmath>

namespace icmscope::testing {

// Upper quantile of the chi-square distribution with k degrees of freedom at
// the standard-normal deviate z (z = 3.719 for a 1e-4 tail), by the
// Wilson & Hilferty 1931 (PNAS 17, 684) cube-root approximation.
inline double chi2_quantile(double k, double z = 3.719) {
  const double a = 2.0 / (9.0 * k);
  const double c = 1.0 - a + z * std::sqrt(a);
  return k * c * c * c;
}

}  // namespace icmscope::testing
