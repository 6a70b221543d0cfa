#include "icmscope/instrument/spectrum_sampler.hpp"

#include <algorithm>
#include <cmath>
#include <string>

#include "icmscope/core/errors.hpp"

namespace icmscope::instrument {

namespace {
[[noreturn]] void fail(const std::string& w) { throw core::DomainError("spectrum sampler: " + w); }
}

SpectrumSampler::SpectrumSampler(std::vector<double> edges, const std::vector<double>& w) : edges_(std::move(edges)) {
  const std::size_t n = w.size();
  if (n == 0) fail("weights is empty, expected at least one bin");
  if (edges_.size() != n + 1)
    fail("edges_keV has " + std::to_string(edges_.size()) + " values for " + std::to_string(n) + " weights, expected one more");
  for (std::size_t i = 0; i <= n; ++i)
    if (!std::isfinite(edges_[i]) || edges_[i] < 0 || (i > 0 && !(edges_[i] > edges_[i - 1])))
      fail("edges_keV[" + std::to_string(i) + "] = " + std::to_string(edges_[i]) + ", expected >= 0 and strictly increasing");
  cdf_.assign(n + 1, 0.0);
  for (std::size_t i = 0; i < n; ++i) {
    if (!std::isfinite(w[i]) || w[i] < 0) fail("weights[" + std::to_string(i) + "] = " + std::to_string(w[i]) + ", expected >= 0");
    cdf_[i + 1] = cdf_[i] + w[i];
  }
  const double tot = cdf_.back();
  if (!(tot > 0)) fail("weights sum to 0, expected a positive total");
  for (double& c : cdf_) c /= tot;
  cdf_.back() = 1.0;
  const std::size_t g = std::max<std::size_t>(n, 16);
  guide_.resize(g);
  std::size_t i = 0;
  for (std::size_t k = 0; k < g; ++k) {
    const double u = static_cast<double>(k) / static_cast<double>(g);
    while (i + 1 < n && cdf_[i + 1] <= u) ++i;
    guide_[k] = static_cast<std::uint32_t>(i);
  }
}

SpectrumSampler SpectrumSampler::from_density(std::vector<double> edges, const std::function<double(double)>& f, int n_sub) {
  if (edges.size() < 2) fail("edges_keV needs at least 2 values");
  n_sub = std::max(1, n_sub);
  std::vector<double> w(edges.size() - 1);
  for (std::size_t i = 0; i + 1 < edges.size(); ++i) {
    const double h = (edges[i + 1] - edges[i]) / n_sub;
    double s = 0.0;
    for (int k = 0; k < n_sub; ++k) s += f(edges[i] + (k + 0.5) * h);
    w[i] = s * h;
  }
  return SpectrumSampler(std::move(edges), w);
}

std::vector<double> SpectrumSampler::log_edges(double lo, double hi, int n) {
  if (!(lo > 0) || !(hi > lo) || n < 1) fail("log_edges needs 0 < e_min < e_max and n >= 1");
  std::vector<double> e(static_cast<std::size_t>(n) + 1);
  for (int i = 0; i <= n; ++i) e[i] = lo * std::pow(hi / lo, static_cast<double>(i) / n);
  e.front() = lo;
  e.back() = hi;
  return e;
}

double SpectrumSampler::draw(double u) const {
  const std::size_t n = cdf_.size() - 1;
  std::size_t k = static_cast<std::size_t>(u * static_cast<double>(guide_.size()));
  if (k >= guide_.size()) k = guide_.size() - 1;
  std::size_t i = guide_[k];
  while (i + 1 < n && cdf_[i + 1] <= u) ++i;
  const double c0 = cdf_[i], c1 = cdf_[i + 1];
  const double t = c1 > c0 ? std::clamp((u - c0) / (c1 - c0), 0.0, 1.0) : 0.5;
  return edges_[i] + t * (edges_[i + 1] - edges_[i]);
}

double SpectrumSampler::mean_keV() const {
  double m = 0.0;
  for (std::size_t i = 0; i + 1 < cdf_.size(); ++i) m += (cdf_[i + 1] - cdf_[i]) * 0.5 * (edges_[i] + edges_[i + 1]);
  return m;
}

}  // namespace icmscope::instrument
