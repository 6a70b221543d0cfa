#pragma once
// Pointing of the telescope and the gnomonic (TAN) relation between a sky grid's
// pixels and RA/Dec (Calabretta & Greisen 2002, A&A 395, 1077, section 5.1.3),
// for the grid convention of core::SkyAnchor: CDELT1 = -pixel, CDELT2 = +pixel,
// no rotation. Pixel coordinates here are FITS 1-based: the centre of the 0-based
// pixel (ix, iy) is (X, Y) = (ix + 1, iy + 1), and the pixel spans X - 0.5 .. X + 0.5.
#include "icmscope/core/image.hpp"

namespace icmscope::instrument {

// Optical axis direction and roll. roll_deg is the position angle of the
// detector +v axis, measured from north through east (common practice for
// roll / position angles); roll 0 puts detector +u along image +x (west) and
// +v along image +y (north).
struct Pointing {
  double ra_deg = 0.0;
  double dec_deg = 0.0;
  double roll_deg = 0.0;
};

// A point in FITS 1-based pixel coordinates.
struct PixelPoint {
  double x = 0.0;
  double y = 0.0;
};

struct SkyPoint {
  double ra_deg = 0.0;
  double dec_deg = 0.0;
};

// RA/Dec (deg) -> FITS 1-based pixel coordinates of the grid `anchor`.
// DomainError for a point 90 deg or more from the anchor (no TAN projection).
PixelPoint sky_to_pixel(const core::SkyAnchor& anchor, double ra_deg, double dec_deg);

// FITS 1-based pixel coordinates -> RA/Dec (deg), RA in [0, 360).
SkyPoint pixel_to_sky(const core::SkyAnchor& anchor, double x, double y);

// A pointing at the reference pixel of the grid (its RA/Dec), with the given roll.
Pointing pointing_at_anchor(const core::SkyAnchor& anchor, double roll_deg = 0.0);

// Detector-frame offsets (arcsec) of a sky-grid position relative to the optical
// axis, given the axis' pixel position and the roll. The grid is treated as flat
// near the axis (pixel offsets times the pixel scale), adequate for fields of a
// degree or less.
struct DetectorFrame {
  double axis_x = 0.0;        // optical axis, FITS 1-based pixel coordinates
  double axis_y = 0.0;
  double pixel_arcsec = 1.0;  // sky grid pixel
  double cos_roll = 1.0;
  double sin_roll = 0.0;

  // Sky pixel (X, Y) -> detector (u, v) arcsec.
  void to_detector(double x, double y, double& u, double& v) const {
    const double dx = (x - axis_x) * pixel_arcsec;
    const double dy = (y - axis_y) * pixel_arcsec;
    u = dx * cos_roll + dy * sin_roll;
    v = -dx * sin_roll + dy * cos_roll;
  }
  // Detector (u, v) arcsec -> sky-grid offsets (dx, dy) arcsec along +x, +y.
  void to_sky_offset(double u, double v, double& dx, double& dy) const {
    dx = u * cos_roll - v * sin_roll;
    dy = u * sin_roll + v * cos_roll;
  }
};

DetectorFrame detector_frame(const core::SkyAnchor& grid, const Pointing& pointing);

}  // namespace icmscope::instrument
