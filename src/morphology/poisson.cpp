#include "icmscope/morphology/poisson.hpp"

#include <cmath>

namespace icmscope::morphology {
namespace {
constexpr double kSmall = 12.0;

double draw_small(double mu, double emu, core::RandomStream& rng) {
  double u = rng.uniform();
  double p = emu, F = p;
  double k = 0.0;
  while (u > F) {
    k += 1.0;
    p *= mu / k;
    F += p;
    if (p < 1e-300 && k > mu) break;  // guards u ~ 1 with round-off in F
  }
  return k;
}

// PTRS (Hoermann 1993), for mu >= 10.
double draw_ptrs(double mu, double logmu, core::RandomStream& rng) {
  const double smu = std::sqrt(mu);
  const double b = 0.931 + 2.53 * smu;
  const double a = -0.059 + 0.02483 * b;
  const double inv_alpha = 1.1239 + 1.1328 / (b - 3.4);
  const double vr = 0.9277 - 3.6224 / (b - 2.0);
  for (;;) {
    const double U = rng.uniform() - 0.5;
    const double V = rng.uniform();
    const double us = 0.5 - std::fabs(U);
    const double k = std::floor((2.0 * a / us + b) * U + mu + 0.43);
    if (us >= 0.07 && V <= vr) return k;
    if (k < 0.0 || (us < 0.013 && V > us)) continue;
    if (std::log(V) + std::log(inv_alpha) - std::log(a / (us * us) + b) <=
        -mu + k * logmu - std::lgamma(k + 1.0))
      return k;
  }
}
}  // namespace

void PoissonTable::reset(const std::vector<double>& means) {
  mu_.resize(means.size());
  aux_.resize(means.size());
  for (std::size_t i = 0; i < means.size(); ++i) {
    const double m = (std::isfinite(means[i]) && means[i] > 0.0) ? means[i] : 0.0;
    mu_[i] = m;
    aux_[i] = m < kSmall ? std::exp(-m) : std::log(m);
  }
}

double PoissonTable::draw(std::size_t i, core::RandomStream& rng) const {
  const double m = mu_[i];
  if (m <= 0.0) return 0.0;
  return m < kSmall ? draw_small(m, aux_[i], rng) : draw_ptrs(m, aux_[i], rng);
}

double poisson_draw(double mu, core::RandomStream& rng) {
  if (!(mu > 0.0) || !std::isfinite(mu)) return 0.0;
  return mu < kSmall ? draw_small(mu, std::exp(-mu), rng) : draw_ptrs(mu, std::log(mu), rng);
}

}  // namespace icmscope::morphology
