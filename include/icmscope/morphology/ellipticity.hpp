#pragma once
// Ellipticity and position angle from flux-weighted second moments about the
// centre within an aperture (exact area weights):
//   M_xx = sum w I dx^2 / sum w I, M_yy, M_xy likewise;
//   lambda+- = (M_xx + M_yy)/2 +- sqrt(((M_xx - M_yy)/2)^2 + M_xy^2);
//   e = 1 - sqrt(lambda- / lambda+)  (axis ratio q = 1 - e);
//   theta = 0.5 atan2(2 M_xy, M_xx - M_yy): major-axis angle from +x towards +y.
// Position angle (degrees east of north, in [0, 180)): with the image axes of
// core/image.hpp (+y north, +x towards lower RA = west, east to the left),
// PA = theta - 90 deg (mod 180): a north-south major axis has PA = 0, east-west 90.
// Pixel-integrated images add 1/12 pixel^2 to M_xx and M_yy (Sheppard);
// subtract_pixel_variance removes it.
#include <string>

#include "icmscope/core/image.hpp"
#include "icmscope/morphology/centre.hpp"

namespace icmscope::morphology {

struct EllipticitySettings {
  double radius_px = 0.0;
  std::string label;
  bool subtract_pixel_variance = false;
};

struct EllipticityResult {
  double mxx = 0.0, myy = 0.0, mxy = 0.0;  // [pixel^2]
  double lambda_major = 0.0, lambda_minor = 0.0;
  double ellipticity = 0.0;
  double axis_ratio = 1.0;
  double theta_deg = 0.0;  // from +x towards +y, (-90, 90]
  double pa_deg = 0.0;     // east of north, [0, 180)
  PixelPoint centre;
};

EllipticityResult ellipticity(const core::ImageD& flux, PixelPoint centre, const EllipticitySettings& s);

// Position angle east of north [deg, 0..180) of a major-axis angle theta
// (deg from +x towards +y) under the image axis convention above.
double position_angle_east_of_north(double theta_deg);

}  // namespace icmscope::morphology
