// Ziggurat normal deviates against the normal distribution function.
#include <catch2/catch.hpp>

#include <cmath>
#include <vector>

#include "icmscope/instrument/normal_deviate.hpp"
#include "instrument_stats.hpp"
#include "test_support.hpp"

using namespace icmscope;

TEST_CASE("ziggurat deviates follow the standard normal distribution", "[instrument][normal]") {
  core::RandomStream rng(8675309, 2);
  const int n = 2000000;
  // 60 bins of width 0.1 over [-3, 3] plus two tails; probabilities from
  // Phi(x) = erfc(-x / sqrt 2) / 2.
  auto Phi = [](double x) { return 0.5 * std::erfc(-x / std::sqrt(2.0)); };
  std::vector<double> hist(62, 0.0);
  double s = 0, s2 = 0, s4 = 0;
  long beyond_r = 0;
  for (int k = 0; k < n; ++k) {
    const double x = instrument::standard_normal(rng);
    s += x;
    s2 += x * x;
    s4 += x * x * x * x;
    beyond_r += std::fabs(x) > 3.6541528853610088;
    const int b = x < -3 ? 0 : x >= 3 ? 61 : 1 + static_cast<int>(std::floor((x + 3) / 0.1));
    hist[static_cast<std::size_t>(std::min(b, 60 + (x >= 3)))] += 1;
  }
  double chi2 = 0;
  for (int b = 0; b < 62; ++b) {
    const double lo = b == 0 ? -1e9 : -3 + 0.1 * (b - 1), hi = b == 61 ? 1e9 : -3 + 0.1 * b;
    const double e = n * (Phi(hi) - Phi(lo));
    chi2 += (hist[b] - e) * (hist[b] - e) / e;
  }
  INFO("chi2 " << chi2 << " for 61 dof");
  CHECK(chi2 < testing::chi2_quantile(61));
  CHECK(std::fabs(s / n) < 5 / std::sqrt(n));
  CHECK(s2 / n == Approx(1.0).margin(5 * std::sqrt(2.0 / n)));
  CHECK(s4 / n == Approx(3.0).margin(5 * std::sqrt(96.0 / n)));  // E x^4 = 3, Var x^4 = 105 - 9
  // The tail beyond the ziggurat's R is drawn by the separate tail algorithm.
  const double pt = std::erfc(3.6541528853610088 / std::sqrt(2.0)) * n;
  CHECK(std::fabs(beyond_r - pt) < 5 * std::sqrt(pt));
}
