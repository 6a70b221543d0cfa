#pragma once
// Centroid shift w (Mohr et al. 1993; Poole et al. 2006, MNRAS 373, 881;
// Maughan et al. 2008, ApJS 174, 117):
//   w = sqrt( sum_i (Delta_i - <Delta>)^2 / (N - 1) ) / R_max,
// Delta_i = distance from the fixed peak to the flux centroid inside aperture i
// (apertures centred on the peak), optionally excluding a central core circle.
// Aperture sequence: N radii evenly spaced from R_max down to min_fraction R_max
// (Poole / Maughan: N = 20, 0.05, core 30 kpc [M]; Boehringer et al. 2010,
// Weissmann et al. 2013: N ~ 10 from 0.1 to 1 R500 [M]).
#include <string>
#include <vector>

#include "icmscope/core/image.hpp"
#include "icmscope/morphology/centre.hpp"

namespace icmscope::morphology {

struct CentroidShiftSettings {
  double r_max_px = 0.0;         // R_max [pixels] (R500, or 500 kpc for Cassano et al. 2010)
  int n_apertures = 20;
  double min_fraction = 0.05;    // smallest aperture = min_fraction * R_max
  double core_exclusion_px = 0.0;  // exclude r < this from every centroid (0 = none)
  std::string label;             // aperture label ("R500", "500 kpc", ...)
};

// The aperture radii [pixels], largest first; radii <= core_exclusion_px are dropped.
std::vector<double> centroid_shift_radii(const CentroidShiftSettings& s);

struct CentroidShiftResult {
  double w = 0.0;                 // in units of R_max
  std::vector<double> radii_px;   // apertures used, largest first
  std::vector<double> delta_px;   // Delta_i [pixels]
  bool inside_image = true;
};

// w about the fixed reference centre (the X-ray peak).
// prefix (optional): row prefix sums of flux (apertures.hpp), for speed.
struct RowPrefix;
CentroidShiftResult centroid_shift(const core::ImageD& flux, PixelPoint peak, const CentroidShiftSettings& s,
                                   const RowPrefix* prefix = nullptr);

}  // namespace icmscope::morphology
