#pragma once
// Quick-look pictures: a PNG of one map with a colour bar, a title and a
// physical / angular scale bar, drawn with PLplot's cairo PNG device (no
// display needed). Axes are offsets from the image's reference pixel in
// arcmin along the pixel axes (+x to the right of the picture = west for a
// north-up map). The file is written under a temporary name and renamed.
#include <limits>
#include <string>
#include <vector>
#include <vector>

#include "icmscope/core/image.hpp"

namespace icmscope::io {

enum class Stretch { Linear, Log, Asinh };

// Overlays, in 0-based pixel coordinates of the image (pixel (ix, iy) is
// centred on (ix, iy), as in core/image.hpp); drawn clipped to the map.
struct QuicklookCircle {
  double x = 0.0, y = 0.0;  // centre [pixels]
  double radius_px = 0.0;
  std::string label;        // written just above the circle ("" = none)
};
struct QuicklookMarker {
  double x = 0.0, y = 0.0;  // [pixels]
  std::string label;        // written beside the marker ("" = none)
  bool cross = false;       // false: '+', true: 'x'
  bool label_left = false;  // label to the left of the marker (default right)
};

struct QuicklookOptions {
  Stretch stretch = Stretch::Asinh;
  std::string title;
  std::string colorbar_label;  // e.g. "count/s/pixel"; the colour bar is labelled in data values
  // Display range in data units; NaN = automatic: vmax = 99.5th percentile of
  // the finite pixels, vmin = 0.5th percentile (linear, asinh) or
  // max(smallest positive, 1e-4 vmax) (log).
  double vmin = std::numeric_limits<double>::quiet_NaN();
  double vmax = std::numeric_limits<double>::quiet_NaN();
  // Asinh softening in data units (values far below it look linear); NaN =
  // 0.05 (vmax - vmin).
  double asinh_softening = std::numeric_limits<double>::quiet_NaN();
  // Scale bar: with kpc_per_arcsec > 0 the bar is labelled "L kpc = a arcmin"
  // (L = scale_bar_kpc, or a round length near a quarter of the width when 0);
  // without it, an arcmin-only bar. show_scale_bar = false draws none.
  double kpc_per_arcsec = 0.0;
  double scale_bar_kpc = 0.0;
  bool show_scale_bar = true;
  // Optional outline: contours of `overlay` (same shape as the image, e.g. an
  // exposure map) at overlay_levels (data units of the overlay), drawn as thin
  // lines in overlay colour (r, g, b), e.g. to show a field edge and chip gaps.
  core::ImageD overlay;
  std::vector<double> overlay_levels;
  int overlay_rgb[3] = {0, 200, 255};
  int width_px = 800;
  int height_px = 680;
  // Drawn over the map in a light cyan (circles) and green (markers).
  std::vector<QuicklookCircle> circles;
  std::vector<QuicklookMarker> markers;
};

// Throws core::DomainError for an empty image / bad options and
// core::OutputError naming the file when it cannot be written.
void write_quicklook_png(const std::string& path, const core::ImageD& image, const QuicklookOptions& options = {});

}  // namespace icmscope::io
