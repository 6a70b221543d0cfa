#pragma once
// FITS images: writing several maps into one file, reading one image back
// with its WCS.
//
// File layout written: an empty primary HDU (NAXIS = 0) carrying the global
// keywords, DATE, CREATOR and checksums, then one IMAGE extension per map with
// a distinct EXTNAME, BUNIT from Image::unit(), the TAN WCS of the image's
// SkyAnchor (CTYPE RA---TAN / DEC--TAN, CRVAL, CRPIX, CDELT1 = -pixel/3600,
// CDELT2 = +pixel/3600, CUNIT deg, RADESYS ICRS; Greisen & Calabretta 2002),
// DATE, CREATOR, the caller's keywords and HISTORY, and DATASUM/CHECKSUM
// written last. The file is written under a temporary name in the target
// directory and renamed when complete.
#include <string>
#include <variant>
#include <vector>

#include "icmscope/core/image.hpp"
#include "icmscope/io/fits_keywords.hpp"
#include "icmscope/io/wcs.hpp"

namespace icmscope::io {

struct NamedImage {
  std::string extname;                              // distinct, non-empty
  std::variant<core::ImageD, core::ImageF> image;   // DOUBLE_IMG / FLOAT_IMG
  std::vector<FitsKeyword> keywords;                // e.g. EXPOSURE, TELESCOP, OBJECT
  std::vector<std::string> history;                 // HISTORY lines (long ones are split)
};

// Throws core::OutputError naming the file, the HDU and the CFITSIO message
// on a write failure, core::DomainError for bad arguments (empty list, empty
// image, duplicate EXTNAME, reserved or malformed keyword, invalid anchor).
void write_fits_images(const std::string& path, const std::vector<NamedImage>& images,
                       const std::vector<FitsKeyword>& primary_keywords = {},
                       const std::vector<std::string>& primary_history = {});

struct FitsImage {
  core::ImageD image;  // pixels as double (BSCALE/BZERO applied, BLANK -> NaN);
                       // unit = BUNIT; anchor = wcs.anchor() when the WCS is valid
  Wcs wcs;             // invalid when the header has no CTYPE1/CTYPE2
  std::string extname; // EXTNAME ("" if none)
  int hdu_index = 0;   // 0-based (0 = primary)
  std::string header;  // all header cards, 80 characters each

  // Raw value text of a keyword (quotes removed for strings), or "" if absent.
  std::string keyword(const std::string& key) const;
  bool has_keyword(const std::string& key) const;
};

// The image in the HDU with this EXTNAME (case-insensitive).
FitsImage read_fits_image(const std::string& path, const std::string& extname);
// The image in HDU `hdu_index` (0-based, 0 = primary); -1 = the first HDU
// holding a 2-D image. Extra axes of length 1 are allowed.
FitsImage read_fits_image(const std::string& path, int hdu_index = -1);

}  // namespace icmscope::io
