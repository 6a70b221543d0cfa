#include "icmscope/morphology/combined.hpp"

#include <cmath>

#include "icmscope/core/errors.hpp"

namespace icmscope::morphology {

double combined_m(const std::vector<double>& values, const std::vector<CombinedComponent>& comps,
                  std::vector<double>* terms) {
  if (values.size() != comps.size() || comps.empty())
    throw core::DomainError("combined_m: need one value per component and at least one component");
  if (terms) terms->clear();
  double sum = 0.0;
  for (std::size_t i = 0; i < comps.size(); ++i) {
    const auto& c = comps[i];
    double v = values[i], r = c.median_relaxed, d = c.median_disturbed;
    if (c.use_log10) {
      if (!(v > 0.0) || !(r > 0.0) || !(d > 0.0)) {
        if (terms) terms->push_back(std::nan(""));
        return std::nan("");
      }
      v = std::log10(v);
      r = std::log10(r);
      d = std::log10(d);
    }
    if (d == r) throw core::DomainError("combined_m: component " + c.indicator + " has equal reference medians");
    const double s = d > r ? 1.0 : -1.0;
    const double t = s * (v - r) / std::fabs(d - r);
    if (terms) terms->push_back(t);
    sum += t;
  }
  return sum / static_cast<double>(comps.size());
}

CombinedResult combined_m(const std::vector<NamedEstimate>& values, const std::vector<CombinedComponent>& comps) {
  CombinedResult r;
  std::vector<const Estimate*> est;
  for (const auto& c : comps) {
    const NamedEstimate* e = find_estimate(values, c.indicator, c.aperture);
    if (!e) {
      r.reason = "indicator " + c.indicator + " (" + c.aperture + ") was not measured";
      return r;
    }
    est.push_back(&e->value);
  }
  std::vector<double> raw(est.size()), cor(est.size());
  for (std::size_t i = 0; i < est.size(); ++i) {
    raw[i] = est[i]->raw;
    cor[i] = std::isfinite(est[i]->corrected) ? est[i]->corrected : est[i]->raw;
  }
  r.available = true;
  const double m_raw = combined_m(raw, comps);
  const double m_cor = combined_m(cor, comps, &r.terms);
  std::vector<double> samples;
  const std::size_t n = est[0]->samples.size();
  bool same = n > 0;
  for (const Estimate* e : est) same = same && e->samples.size() == n && std::isfinite(e->mean);
  if (same) {
    std::vector<double> v(est.size());
    for (std::size_t k = 0; k < n; ++k) {
      for (std::size_t i = 0; i < est.size(); ++i) v[i] = est[i]->samples[k];
      samples.push_back(combined_m(v, comps));
    }
  }
  r.M = summarise(m_raw, samples, BiasMode::none);
  r.M.corrected = m_cor;
  if (r.M.sigma > 0.0) r.M.significance = m_cor / r.M.sigma;
  return r;
}

}  // namespace icmscope::morphology
