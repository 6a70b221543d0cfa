#pragma once
// Image filters used by the indicators: Gaussian smoothing (peak finding) and
// a boxcar mean (smoothness). Outside the image counts as zero for the Gaussian
// (edges darken, so edge pixels never win a peak search); the boxcar averages
// only the pixels that exist.
#include <vector>

namespace icmscope::morphology {

// out = in convolved with a normalised Gaussian of sigma (pixels), truncated at
// 4 sigma, separable, zero outside. Only the window [x0, x1] x [y0, y1]
// (inclusive, clipped) of out is computed; other pixels of out are untouched.
// sigma <= 0 copies the window. tmp is scratch.
void gaussian_smooth_window(const double* in, int nx, int ny, double sigma, int x0, int x1, int y0,
                            int y1, double* out, std::vector<double>& tmp);

// out = mean of in over the (2h+1) x (2h+1) box around each pixel (clipped to
// the image), computed with a summed-area table. sat is scratch.
void boxcar_mean(const double* in, int nx, int ny, int h, double* out, std::vector<double>& sat);

}  // namespace icmscope::morphology
