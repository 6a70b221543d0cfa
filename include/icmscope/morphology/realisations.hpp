#pragma once
// Uncertainties and noise-bias corrections by re-Poissonisation
// (morphology.md sec. 2, 3, 10; Weissmann et al. 2013): N Poisson realisations of
// the observed counts (background included) -- or, for mocks, of the expected
// noise-free image -- each with its own RandomStream(seed, k), measured by the
// same code as the data. Per indicator:
//   raw; mean of the realisations; bias = mean - raw (observed mode) or
//   mean - reference (expected mode, reference = the noise-free value);
//   corrected = raw - bias (linear, Weissmann et al. 2013) or, for statistics
//   whose noise adds in quadrature (w: the spread of noisy centroid distances),
//   X = raw^2 - (<v^2> - ref^2), corrected = sign(X) sqrt(|X|) (signed so that
//   noise-only data scatter about 0; the linear form removes only ~1 - 1/sqrt(2)
//   of a pure-noise w, because re-Poissonising the observed image doubles the
//   noise variance);
//   16th / 84th percentiles of the realisations (linear interpolation between
//   order statistics, position (N - 1) q), sigma = (p84 - p16) / 2,
//   significance = corrected / sigma.
// Realisation k depends only on (seed, k), so the results do not depend on the
// thread count.
#include <cstdint>
#include <functional>
#include <limits>
#include <string>
#include <vector>

#include "icmscope/core/random.hpp"
#include "icmscope/morphology/input.hpp"
#include "icmscope/morphology/poisson.hpp"

namespace icmscope::morphology {

enum class BiasMode { none, linear, quadrature };
const char* to_string(BiasMode m);

struct Estimate {
  double raw = std::numeric_limits<double>::quiet_NaN();
  double reference = std::numeric_limits<double>::quiet_NaN();  // noise-free value (expected mode)
  double mean = std::numeric_limits<double>::quiet_NaN();
  double bias = std::numeric_limits<double>::quiet_NaN();
  double corrected = std::numeric_limits<double>::quiet_NaN();
  double p16 = std::numeric_limits<double>::quiet_NaN();
  double p84 = std::numeric_limits<double>::quiet_NaN();
  double sigma = std::numeric_limits<double>::quiet_NaN();
  double significance = std::numeric_limits<double>::quiet_NaN();
  int n_realisations = 0;  // finite samples used
  BiasMode mode = BiasMode::linear;
  std::vector<double> samples;  // realisation values (angles unwrapped about raw)
  // The value with the realisation scatter placed on it: corrected + (v_k - mean).
  // Used for class probabilities.
  double sample_corrected(std::size_t k) const { return corrected + (samples[k] - mean); }
};

// A named indicator value: name ("c", "w", "P3/P0", ...), aperture label
// ("100/500 kpc", "R500", ...) and the conventions used.
struct NamedEstimate {
  std::string name;
  std::string aperture;
  std::string convention;
  Estimate value;
};

// First entry with this name and aperture (aperture "" matches any); null if none.
const NamedEstimate* find_estimate(const std::vector<NamedEstimate>& v, const std::string& name,
                                   const std::string& aperture = "");

// Percentile q in [0, 1] of sorted values (linear interpolation).
double percentile_sorted(const std::vector<double>& sorted, double q);

// Summary of one indicator. reference: NaN in observed mode. angle_period > 0
// unwraps samples to within half a period of raw (position angles).
Estimate summarise(double raw, const std::vector<double>& samples, BiasMode mode,
                   double reference = std::numeric_limits<double>::quiet_NaN(), double angle_period = 0.0);

enum class RealisationSource { observed, expected };
const char* to_string(RealisationSource s);

// Draws realisations of a prepared image: every measured pixel gets
// n' ~ Poisson(mean) with mean = the observed counts n_i (observed mode) or the
// expected counts (expected mode); I' = (n' - b_i)/e_i, var' = n'/e_i^2.
// Refilled holes: I' = Poisson(I_fill + b_fill/e) - b_fill/e in the flux domain
// and Poisson(n_fill) photons; unfilled pixels stay 0.
class Realiser {
 public:
  // base: the prepared observed image (geometry, background, exposure, fill
  // values); means_source: the image whose counts are the Poisson means (base
  // itself, or the prepared expected image).
  Realiser(const PreparedImage& base, const PreparedImage& means_source);
  // Writes flux, variance, counts of one realisation into out (resized once).
  void draw(core::RandomStream& rng, core::ImageD& flux, core::ImageD& variance, core::ImageD& counts) const;

 private:
  const PreparedImage& base_;
  PoissonTable good_;        // per pixel (0 mean off the good set)
  PoissonTable fill_flux_;   // per filled pixel (flux domain)
  PoissonTable fill_counts_; // per filled pixel (photons)
  std::vector<double> fill_bflux_;
};

// Runs fn(k, thread, out) for k = 0..n-1 over `threads` OpenMP threads
// (0 = default); out is the k-th row of the result (n_slots values).
std::vector<std::vector<double>> run_realisations(int n, int threads, std::size_t n_slots,
                                                  const std::function<void(int, int, std::vector<double>&)>& fn);

}  // namespace icmscope::morphology
