#include "icmscope/morphology/ellipticity.hpp"

#include <cmath>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/morphology/apertures.hpp"

namespace icmscope::morphology {

double position_angle_east_of_north(double theta_deg) {
  double pa = std::fmod(theta_deg - 90.0, 180.0);
  if (pa < 0.0) pa += 180.0;
  if (pa >= 180.0) pa -= 180.0;
  return pa;
}

EllipticityResult ellipticity(const core::ImageD& flux, PixelPoint centre, const EllipticitySettings& s) {
  if (!(s.radius_px > 0.0)) throw core::DomainError("ellipticity: radius_px must be > 0");
  const CircleSums cs = circle_sums(flux.data(), flux.nx(), flux.ny(), centre.x, centre.y, s.radius_px);
  EllipticityResult r;
  r.centre = centre;
  if (!(cs.f > 0.0)) {
    r.ellipticity = r.pa_deg = std::nan("");
    return r;
  }
  // Moments about the centre; the centroid offset term is kept (centre may
  // differ from the centroid): M_xx = <dx^2> etc.
  r.mxx = cs.fxx / cs.f;
  r.myy = cs.fyy / cs.f;
  r.mxy = cs.fxy / cs.f;
  if (s.subtract_pixel_variance) {
    r.mxx -= 1.0 / 12.0;
    r.myy -= 1.0 / 12.0;
  }
  const double h = 0.5 * (r.mxx + r.myy);
  const double d = std::sqrt(0.25 * (r.mxx - r.myy) * (r.mxx - r.myy) + r.mxy * r.mxy);
  r.lambda_major = h + d;
  r.lambda_minor = h - d;
  r.axis_ratio = r.lambda_major > 0.0 && r.lambda_minor > 0.0 ? std::sqrt(r.lambda_minor / r.lambda_major) : 0.0;
  r.ellipticity = 1.0 - r.axis_ratio;
  r.theta_deg = 0.5 * std::atan2(2.0 * r.mxy, r.mxx - r.myy) / core::constants::deg_rad;
  r.pa_deg = position_angle_east_of_north(r.theta_deg);
  return r;
}

}  // namespace icmscope::morphology
