#include "icmscope/morphology/realisations.hpp"

#include <algorithm>
#include <cmath>
#include <exception>

#include "icmscope/core/blocked.hpp"
#include "icmscope/core/errors.hpp"

namespace icmscope::morphology {

const char* to_string(BiasMode m) {
  switch (m) {
    case BiasMode::none: return "none";
    case BiasMode::linear: return "linear";
    case BiasMode::quadrature: return "quadrature";
  }
  return "?";
}
const char* to_string(RealisationSource s) { return s == RealisationSource::observed ? "observed" : "expected"; }

const NamedEstimate* find_estimate(const std::vector<NamedEstimate>& v, const std::string& name,
                                   const std::string& aperture) {
  for (const auto& e : v)
    if (e.name == name && (aperture.empty() || e.aperture == aperture)) return &e;
  return nullptr;
}

double percentile_sorted(const std::vector<double>& v, double q) {
  if (v.empty()) return std::nan("");
  const double pos = q * static_cast<double>(v.size() - 1);
  const std::size_t i = static_cast<std::size_t>(std::floor(pos));
  if (i + 1 >= v.size()) return v.back();
  const double t = pos - static_cast<double>(i);
  return v[i] + t * (v[i + 1] - v[i]);
}

Estimate summarise(double raw, const std::vector<double>& samples, BiasMode mode, double reference,
                   double angle_period) {
  Estimate e;
  e.raw = raw;
  e.reference = reference;
  e.mode = mode;
  e.samples = samples;
  if (angle_period > 0.0 && std::isfinite(raw))
    for (double& v : e.samples) {
      if (!std::isfinite(v)) continue;
      while (v - raw > 0.5 * angle_period) v -= angle_period;
      while (v - raw < -0.5 * angle_period) v += angle_period;
    }
  std::vector<double> fin;
  fin.reserve(e.samples.size());
  for (double v : e.samples)
    if (std::isfinite(v)) fin.push_back(v);
  e.n_realisations = static_cast<int>(fin.size());
  if (fin.empty()) {
    e.corrected = raw;
    return e;
  }
  double s = 0.0, s2 = 0.0;
  for (double v : fin) {
    s += v;
    s2 += v * v;
  }
  const double N = static_cast<double>(fin.size());
  e.mean = s / N;
  const double ref = std::isfinite(reference) ? reference : raw;
  e.bias = e.mean - ref;
  switch (mode) {
    case BiasMode::none: e.corrected = raw; break;
    case BiasMode::linear: e.corrected = raw - e.bias; break;
    case BiasMode::quadrature: {
      // Noise power added by the realisations; the signed root keeps the estimator
      // symmetric about 0 when the noise dominates (negative = consistent with no signal).
      const double X = raw * raw - (s2 / N - ref * ref);
      e.corrected = X >= 0.0 ? std::sqrt(X) : -std::sqrt(-X);
      break;
    }
  }
  std::sort(fin.begin(), fin.end());
  e.p16 = percentile_sorted(fin, 0.16);
  e.p84 = percentile_sorted(fin, 0.84);
  e.sigma = 0.5 * (e.p84 - e.p16);
  e.significance = e.sigma > 0.0 ? e.corrected / e.sigma : std::nan("");
  return e;
}

Realiser::Realiser(const PreparedImage& base, const PreparedImage& src) : base_(base) {
  if (!src.flux.same_grid(base.flux) || src.refill.index != base.refill.index || src.good != base.good)
    throw core::DomainError("Realiser: the means image must share the grid and the bad-pixel set of the data");
  const std::size_t n = base.flux.size();
  std::vector<double> mu(n, 0.0);
  for (std::size_t i = 0; i < n; ++i)
    if (base.good[i]) mu[i] = src.counts.pixels()[i];
  good_.reset(mu);
  const RefillResult& rf = src.refill;
  std::vector<double> ff(rf.index.size()), fc(rf.index.size());
  fill_bflux_.resize(rf.index.size());
  for (std::size_t j = 0; j < rf.index.size(); ++j) {
    fill_bflux_[j] = rf.values[1][j];
    ff[j] = std::max(0.0, rf.values[0][j] + rf.values[1][j]);
    fc[j] = std::max(0.0, rf.values[2][j]);
  }
  fill_flux_.reset(ff);
  fill_counts_.reset(fc);
}

void Realiser::draw(core::RandomStream& rng, core::ImageD& flux, core::ImageD& variance,
                    core::ImageD& counts) const {
  const int nx = base_.flux.nx(), ny = base_.flux.ny();
  if (!flux.same_grid(base_.flux)) flux = core::ImageD(nx, ny, 0.0);
  if (!variance.same_grid(base_.flux)) variance = core::ImageD(nx, ny, 0.0);
  if (!counts.same_grid(base_.flux)) counts = core::ImageD(nx, ny, 0.0);
  const std::size_t n = base_.flux.size();
  double* F = flux.data();
  double* V = variance.data();
  double* C = counts.data();
  const double* b = base_.bkg.data();
  const double* e = base_.rel_exposure.data();
  for (std::size_t i = 0; i < n; ++i) {
    if (!base_.good[i]) {
      F[i] = V[i] = C[i] = 0.0;
      continue;
    }
    const double k = good_.draw(i, rng);
    const double inv = 1.0 / e[i];
    F[i] = (k - b[i]) * inv;
    V[i] = k * inv * inv;
    C[i] = k;
  }
  const std::vector<std::size_t>& idx = base_.refill.index;
  for (std::size_t j = 0; j < idx.size() && j < fill_bflux_.size(); ++j) {
    const std::size_t i = idx[j];
    const double kf = fill_flux_.draw(j, rng);
    F[i] = kf - fill_bflux_[j];
    V[i] = kf;
    C[i] = fill_counts_.draw(j, rng);
  }
}

std::vector<std::vector<double>> run_realisations(int n, int threads, std::size_t n_slots,
                                                  const std::function<void(int, int, std::vector<double>&)>& fn) {
  std::vector<std::vector<double>> out(static_cast<std::size_t>(std::max(0, n)));
  for (auto& r : out) r.reserve(n_slots);
  if (threads <= 0) threads = core::max_threads();
  threads = std::max(1, std::min(threads, std::max(1, n)));
  // Exceptions must not leave an OpenMP region: keep the first one (lowest k) and rethrow.
  std::vector<std::exception_ptr> errors(out.size());
#pragma omp parallel for num_threads(threads) schedule(dynamic, 1) if (threads > 1)
  for (int k = 0; k < n; ++k) {
    int t = 0;
#ifdef _OPENMP
    t = omp_get_thread_num();
#endif
    try {
      fn(k, t, out[static_cast<std::size_t>(k)]);
    } catch (...) {
      errors[static_cast<std::size_t>(k)] = std::current_exception();
    }
  }
  for (const auto& e : errors)
    if (e) std::rethrow_exception(e);
  return out;
}

}  // namespace icmscope::morphology
