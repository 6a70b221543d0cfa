#pragma once
// Gini coefficient and M20 (Lotz, Primack & Madau 2004, AJ 128, 163):
//   G = sum_{i=1..n} (2i - n - 1) |X_i| / (mean|X| n (n - 1)), |X| sorted increasing;
//   M_tot = sum f_i r_i^2 about the flux centroid (the centre minimising M_tot),
//   M20 = log10( sum_{brightest, cumulative flux <= 20%} M_i / M_tot ) [M].
// Pixels: those whose centre lies inside the aperture (hard edge). For M20,
// negative fluxes are set to 0.
#include <string>
#include <vector>

#include "icmscope/core/image.hpp"
#include "icmscope/morphology/centre.hpp"

namespace icmscope::morphology {

struct GiniM20Settings {
  double radius_px = 0.0;  // aperture [pixels]
  std::string label;
  double m20_fraction = 0.2;
};

struct GiniM20Result {
  double gini = 0.0;
  double m20 = 0.0;
  int n_pixels = 0;
  PixelPoint centre;
};

// Gini of a set of values (uses |x|; sorts a copy in `scratch`).
double gini(const std::vector<double>& values, std::vector<double>& scratch);
double gini(const std::vector<double>& values);

// Gini and M20 within radius_px of `centre` (the caller passes the centroid of
// that aperture, which minimises M_tot). scratch buffers are reused.
GiniM20Result gini_m20(const core::ImageD& flux, PixelPoint centre, const GiniM20Settings& s,
                       std::vector<double>& scratch_a, std::vector<double>& scratch_b);
GiniM20Result gini_m20(const core::ImageD& flux, PixelPoint centre, const GiniM20Settings& s);

}  // namespace icmscope::morphology
