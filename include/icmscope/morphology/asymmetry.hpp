#pragma once
// Rotational asymmetry (Conselice, Bershady & Jangren 2000, ApJ 529, 886):
//   A = min_c sum w |I - I_180| / (k sum w |I|)  -  background term,
// I_180 = the image rotated by 180 degrees about the trial centre c, k = 1
// (Conselice et al. 2000) or 2 (Abraham et al. 1996 [M]); recorded.
// Rotation is exact: trial centres lie on the half-pixel grid, where a 180-degree
// rotation maps pixel centres onto pixel centres (no interpolation, which would
// smooth the noise and bias A low). The minimum is found by descent over the
// eight neighbouring half-pixel centres, within search_radius_px of the start.
// Background term: the same statistic of a blank sky region of equal area
// (min over centres there), or its expectation under the background model
// (Monte Carlo over Poisson background draws, explicit random stream).
#include <cstdint>
#include <string>
#include <vector>

#include "icmscope/core/image.hpp"
#include "icmscope/core/random.hpp"
#include "icmscope/morphology/centre.hpp"

namespace icmscope::morphology {

enum class AsymmetryNormalisation { sum_abs, twice_sum_abs };
const char* to_string(AsymmetryNormalisation n);

enum class AsymmetryBackground { none, model, blank_region };
const char* to_string(AsymmetryBackground b);

struct AsymmetrySettings {
  double radius_px = 0.0;          // aperture [pixels] (R500 or 1000 kpc: Rasia et al. 2013)
  std::string label;
  double search_radius_px = 3.0;   // trial centres within this distance of the start
  AsymmetryNormalisation normalisation = AsymmetryNormalisation::sum_abs;
  AsymmetryBackground background = AsymmetryBackground::model;
  PixelPoint blank_centre;         // centre of the blank region (blank_region mode) [pixels]
  int background_draws = 8;        // Monte Carlo draws of the background model
};

struct AsymmetryResult {
  double A = 0.0;            // A_raw - background_term
  double A_raw = 0.0;        // minimum of the image statistic
  double background_term = 0.0;
  double residual_sum = 0.0; // sum w |I - I_180| at the best centre
  double abs_sum = 0.0;      // sum w |I| at the best centre
  PixelPoint centre;         // best trial centre (half-pixel grid)
  int evaluations = 0;
  bool pairs_outside = false;  // some rotated partners fell outside the image (excluded)
};

// Image statistic at one half-pixel centre (hx/2, hy/2): residual and abs sums.
struct AsymmetrySums {
  double residual = 0.0, abs = 0.0;
  bool pairs_outside = false;
};
// Pixels whose partner falls outside the image are left out of both sums.
// abs_prefix (optional): row prefix sums of |img| (apertures.hpp), for speed.
struct RowPrefix;
AsymmetrySums asymmetry_sums(const core::ImageD& img, int hx, int hy, double radius_px,
                             const RowPrefix* abs_prefix = nullptr);

// Minimum of sum|I - I_180| / sum|I| over half-pixel centres near `start`.
AsymmetryResult asymmetry_minimum(const core::ImageD& img, PixelPoint start, const AsymmetrySettings& s,
                                  const RowPrefix* abs_prefix = nullptr);

// Expected sum w |B - B_180| over the aperture at `centre` for background-only
// images B = (Poisson(b) - b) / e (bkg_counts b, rel_exposure e on the grid);
// mean over `draws` draws of `rng`.
double asymmetry_background_model(const core::ImageD& bkg_counts, const core::ImageD* rel_exposure,
                                  PixelPoint centre, double radius_px, int draws, core::RandomStream& rng);

// Full asymmetry with the background term. For `model` pass the background
// counts and relative exposure; for `blank_region` the flux image supplies B.
AsymmetryResult asymmetry(const core::ImageD& flux, PixelPoint start, const AsymmetrySettings& s,
                          const core::ImageD* bkg_counts, const core::ImageD* rel_exposure,
                          core::RandomStream& rng);

}  // namespace icmscope::morphology
