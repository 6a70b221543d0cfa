#pragma once
// Smoothness / clumpiness (Conselice 2003, ApJS 147, 1) [M]:
//   S = 10 [ sum w (I - I_s)_+ / sum w I  -  background term ],
// I_s = boxcar mean of width 2 h + 1 pixels; sums over the annulus
// exclude_radius_px < r < radius_px (w = exact area fraction); only positive
// residuals count. Background term: the same statistic of background-only noise
// images B = (Poisson(b) - b)/e (Monte Carlo, explicit random stream), divided by
// the same sum w I.
#include <string>
#include <vector>

#include "icmscope/core/image.hpp"
#include "icmscope/core/random.hpp"
#include "icmscope/morphology/centre.hpp"

namespace icmscope::morphology {

struct SmoothnessSettings {
  double radius_px = 0.0;         // aperture [pixels]
  std::string label;
  int box_half_width_px = 0;      // h; 0 = round(0.25 * radius_px / 2) i.e. width ~ 0.25 R [M]
  double exclude_radius_px = -1;  // < 0: = 2 h + 1 (the smoothing width)
  int background_draws = 4;
};

int smoothness_half_width(const SmoothnessSettings& s);
double smoothness_exclusion(const SmoothnessSettings& s);

struct SmoothnessResult {
  double S = 0.0;
  double S_raw = 0.0;
  double background_term = 0.0;
  int half_width = 0;
};

struct SmoothnessScratch {
  std::vector<double> sat;
};

// Residual sum sum w (I - I_s)_+ and flux sum sum w I over the annulus.
void smoothness_sums(const core::ImageD& img, PixelPoint centre, double r_in, double r_out, int h,
                     SmoothnessScratch& scratch, double& residual, double& flux);

// Expected residual sum of background-only images (mean over draws).
double smoothness_background_model(const core::ImageD& bkg_counts, const core::ImageD* rel_exposure,
                                   PixelPoint centre, const SmoothnessSettings& s, core::RandomStream& rng,
                                   SmoothnessScratch& scratch);

// S with the background term `background_residual` (from
// smoothness_background_model, or 0).
SmoothnessResult smoothness(const core::ImageD& flux, PixelPoint centre, const SmoothnessSettings& s,
                            double background_residual, SmoothnessScratch& scratch);

}  // namespace icmscope::morphology
