#include "icmscope/instrument/pointing.hpp"

#include <cmath>
#include <string>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"

namespace icmscope::instrument {

namespace {
constexpr double kDeg = core::constants::deg_rad;
}

PixelPoint sky_to_pixel(const core::SkyAnchor& a, double ra_deg, double dec_deg) {
  const double a0 = a.ra_deg * kDeg, d0 = a.dec_deg * kDeg;
  const double ra = ra_deg * kDeg, dec = dec_deg * kDeg;
  const double cosc = std::sin(d0) * std::sin(dec) + std::cos(d0) * std::cos(dec) * std::cos(ra - a0);
  if (!(cosc > 1e-12))
    throw core::DomainError("sky_to_pixel: (" + std::to_string(ra_deg) + ", " + std::to_string(dec_deg) +
                            ") deg is 90 deg or more from the grid centre; expected a nearby position");
  const double xi = std::cos(dec) * std::sin(ra - a0) / cosc;  // radians, towards east
  const double eta = (std::cos(d0) * std::sin(dec) - std::sin(d0) * std::cos(dec) * std::cos(ra - a0)) / cosc;
  const double pix_rad = a.pixel_arcsec * core::constants::arcsec_rad;
  return {a.crpix1 - xi / pix_rad, a.crpix2 + eta / pix_rad};
}

SkyPoint pixel_to_sky(const core::SkyAnchor& a, double x, double y) {
  const double pix_rad = a.pixel_arcsec * core::constants::arcsec_rad;
  const double xi = -(x - a.crpix1) * pix_rad;
  const double eta = (y - a.crpix2) * pix_rad;
  const double a0 = a.ra_deg * kDeg, d0 = a.dec_deg * kDeg;
  const double den = std::cos(d0) - eta * std::sin(d0);
  double ra = a0 + std::atan2(xi, den);
  const double dec = std::atan2(eta * std::cos(d0) + std::sin(d0), std::sqrt(xi * xi + den * den));
  double ra_deg = ra / kDeg;
  ra_deg = std::fmod(ra_deg, 360.0);
  if (ra_deg < 0) ra_deg += 360.0;
  return {ra_deg, dec / kDeg};
}

Pointing pointing_at_anchor(const core::SkyAnchor& anchor, double roll_deg) {
  return {anchor.ra_deg, anchor.dec_deg, roll_deg};
}

DetectorFrame detector_frame(const core::SkyAnchor& grid, const Pointing& p) {
  DetectorFrame f;
  const PixelPoint axis = sky_to_pixel(grid, p.ra_deg, p.dec_deg);
  f.axis_x = axis.x;
  f.axis_y = axis.y;
  f.pixel_arcsec = grid.pixel_arcsec;
  f.cos_roll = std::cos(p.roll_deg * kDeg);
  f.sin_roll = std::sin(p.roll_deg * kDeg);
  return f;
}

}  // namespace icmscope::instrument
