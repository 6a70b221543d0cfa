#pragma once
// Cluster centres: the peak of the Gaussian-smoothed image and the iterated
// flux-weighted centroid within a circular aperture; their offset.
// Coordinates: 0-based pixels, pixel centres on integers (see apertures.hpp).
#include <vector>

#include "icmscope/core/image.hpp"

namespace icmscope::morphology {

struct PixelPoint {
  double x = 0.0;
  double y = 0.0;
};

// Which centre an indicator uses.
enum class CentreChoice {
  peak,      // peak of the smoothed image (sub-pixel refined)
  centroid,  // flux centroid iterated within the indicator's own aperture
  input      // the centre given in MeasureInput (or the peak when "find")
};
const char* to_string(CentreChoice c);

struct PeakSettings {
  double smooth_sigma_px = 2.0;  // Gaussian sigma [pixels]; 0 = no smoothing
  double search_radius_px = 0.0; // > 0: search only within this radius of `guess`
};

struct PeakResult {
  int ix = -1, iy = -1;  // brightest smoothed pixel
  PixelPoint refined;    // sub-pixel peak: vertex of 3-point parabolas in x and y (clipped to +-0.5)
  double value = 0.0;    // smoothed value at (ix, iy)
  bool found = false;
};

// Peak of `img` smoothed with PeakSettings::smooth_sigma_px. `smoothed` and
// `tmp` are scratch (resized as needed); with a search radius only the window
// around guess is smoothed. Ties go to the lowest pixel index.
PeakResult find_peak(const core::ImageD& img, const PeakSettings& s, PixelPoint guess,
                     std::vector<double>& smoothed, std::vector<double>& tmp);
PeakResult find_peak(const core::ImageD& img, const PeakSettings& s, PixelPoint guess = {-1e300, -1e300});

struct CentroidSettings {
  double radius_px = 0.0;   // aperture radius [pixels]
  int max_iterations = 200;
  double tolerance_px = 1e-7;  // stop when the centre moves less than this
};

struct CentroidResult {
  PixelPoint centre;
  int iterations = 0;
  bool converged = false;
  double flux = 0.0;  // sum w I inside the final aperture
};

// Flux-weighted centroid within a circle of radius_px, re-centred on the
// previous centroid until it moves less than tolerance_px (start at `start`).
// Weights are exact pixel-area fractions, so at convergence the dipole moment
// of the aperture about the centre vanishes (power ratio P1 = 0).
// prefix (optional): row prefix sums of img (apertures.hpp), for speed.
struct RowPrefix;
CentroidResult iterated_centroid(const core::ImageD& img, PixelPoint start, const CentroidSettings& s,
                                 const RowPrefix* prefix = nullptr);

// Distance between two centres [pixels].
double centre_offset_px(PixelPoint a, PixelPoint b);

}  // namespace icmscope::morphology
