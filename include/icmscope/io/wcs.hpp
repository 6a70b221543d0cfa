#pragma once
// Wcs: a celestial world coordinate system parsed by WCSLIB from a FITS
// header (Greisen & Calabretta 2002; Calabretta & Greisen 2002): CDELT/PC,
// CD-matrix or CROTA headers, any reference pixel, any projection WCSLIB knows.
// The class owns its wcsprm; copies are deep. WCSLIB stays out of this header.
//
// Pixel coordinates are 1-based FITS pixels: the centre of the first pixel is
// (1, 1) (core::Image index (ix, iy) is FITS (ix + 1, iy + 1)). Sky
// coordinates are (RA, Dec) or whatever (longitude, latitude) pair CTYPE
// names, in degrees.
//
// Threads: WCSLIB's transformation routines write into the wcsprm (lazy
// set-up and error records), so one wcsprm must not be used by two threads at
// once. Each Wcs serialises its own calls with an internal mutex, which makes
// concurrent use of one object safe but serial; for parallel throughput give
// each thread its own copy.
#include <array>
#include <cstddef>
#include <memory>
#include <mutex>
#include <string>

#include "icmscope/core/image.hpp"

struct wcsprm;  // WCSLIB

namespace icmscope::io {

struct SkyPosition {
  double ra_deg = 0.0;
  double dec_deg = 0.0;
};

struct PixelPosition {
  double x = 0.0;  // 1-based FITS pixel along NAXIS1
  double y = 0.0;
};

class Wcs {
 public:
  Wcs();  // empty: valid() is false
  ~Wcs();
  Wcs(const Wcs& other);
  Wcs& operator=(const Wcs& other);
  Wcs(Wcs&& other) noexcept;
  Wcs& operator=(Wcs&& other) noexcept;

  // From a FITS header string of 80-character cards (as fits_hdr2str gives).
  // The first two axes must be celestial (longitude, latitude in either
  // order); extra degenerate axes are dropped. Throws core::InputError
  // "<context>: ..." with WCSLIB's message when there is no usable WCS.
  static Wcs from_header(const std::string& header, const std::string& context);
  // The north-up TAN system of an Image's anchor: CRVAL = (ra, dec) at CRPIX,
  // CDELT1 = -pixel/3600, CDELT2 = +pixel/3600 deg, RADESYS ICRS.
  static Wcs from_anchor(const core::SkyAnchor& anchor);

  bool valid() const { return w_ != nullptr; }

  // Pixel -> sky; NaN for pixels outside the projection's domain.
  SkyPosition pixel_to_sky(double x, double y) const;
  // Sky -> pixel; NaN for positions that do not project (e.g. the far hemisphere in TAN).
  PixelPosition sky_to_pixel(double ra_deg, double dec_deg) const;
  // Batched forms (one lock, one WCSLIB call): n coordinates.
  void pixel_to_sky(const double* x, const double* y, std::size_t n, double* ra_deg, double* dec_deg) const;
  void sky_to_pixel(const double* ra_deg, const double* dec_deg, std::size_t n, double* x, double* y) const;

  // Linear part at the reference pixel: M (deg per pixel) with
  // (dlng, dlat) = M (dx, dy), M = CDELT * PC or CD, row-major
  // {m11, m12, m21, m22}, in (longitude, latitude) order.
  std::array<double, 4> cd_matrix() const;
  // sqrt(|det M|) * 3600: the geometric-mean pixel side at the reference pixel, arcsec.
  double pixel_scale_arcsec() const;
  // Column norms of M * 3600: the sizes of a pixel step along x and along y, arcsec.
  double pixel_scale_x_arcsec() const;
  double pixel_scale_y_arcsec() const;
  // The CROTA2-equivalent rotation rho = atan2(-m12, m22), degrees in
  // (-180, 180]: 0 for a north-up image; the rho of Calabretta & Greisen 2002
  // (A&A 395, 1077) eqs. 188-189, CD1_2 = -CDELT2 sin rho, CD2_2 = CDELT2 cos rho,
  // for the usual CDELT2 > 0.
  double rotation_deg() const;
  // True for the usual sky parity (det M < 0: east to the left when north is up).
  bool east_left() const;

  std::array<double, 2> crpix() const;  // 1-based
  std::array<double, 2> crval() const;  // deg (longitude, latitude)
  std::string ctype(int axis) const;    // axis 0 or 1, e.g. "RA---TAN"
  std::string radesys() const;

  // The SkyAnchor equivalent (exact for north-up square pixels; for rotated
  // or non-square pixels it keeps CRVAL/CRPIX and the geometric-mean scale).
  core::SkyAnchor anchor() const;

 private:
  ::wcsprm* w_ = nullptr;
  std::unique_ptr<std::mutex> mu_;
  void require() const;
};

// FITS header cards (80 characters each, concatenated) of the north-up TAN
// WCS of `anchor`: CTYPE, CUNIT, CRVAL, CRPIX, CDELT, RADESYS, LONPOLE.
std::string wcs_header_cards(const core::SkyAnchor& anchor);

}  // namespace icmscope::io
