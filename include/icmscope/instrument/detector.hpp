#pragma once
// Detector layout in the detector frame (u, v) arcsec about the optical axis:
// field of view (square or circle), a grid of chips with gaps between them,
// extra gap lines, an optional bad-pixel mask; the fractional sensitive-area mask
// it makes on a sky grid for a pointing and roll; dither patterns.
#include <cstdint>
#include <optional>
#include <vector>

#include "icmscope/core/image.hpp"
#include "icmscope/instrument/pointing.hpp"

namespace icmscope::instrument {

enum class FovShape { Square, Circle };

// A straight insensitive strip: the line u = position (axis 'u') or
// v = position (axis 'v'), of full width width_arcsec.
struct GapLine {
  char axis = 'u';
  double position_arcsec = 0.0;
  double width_arcsec = 0.0;
};

struct DetectorSettings {
  FovShape fov_shape = FovShape::Square;
  double fov_arcmin = 16.0;         // side (square) or diameter (circle)
  double pixel_arcsec = 0.5;        // detector pixel (bad-pixel mask pixels)
  int chips_u = 1;                  // chip grid tiling the FoV's bounding square
  int chips_v = 1;
  double chip_gap_arcsec = 0.0;     // full width of each gap between chips
  double aim_u_arcsec = 0.0;        // optical axis relative to the FoV centre
  double aim_v_arcsec = 0.0;
  std::vector<GapLine> extra_gaps;  // in detector coordinates about the optical axis
};

class Detector {
 public:
  Detector() = default;
  // bad_pixels: optional image in detector pixels (pixel_arcsec), nonzero =
  // bad; its crpix (1-based) sits on the FoV centre, +x along +u, +y along +v.
  // DomainError naming the field for non-positive sizes, negative widths, an
  // axis other than 'u'/'v'.
  explicit Detector(DetectorSettings s, std::optional<core::ImageD> bad_pixels = std::nullopt);

  const DetectorSettings& settings() const { return s_; }
  // True when detector position (u, v) arcsec (about the optical axis) is sensitive.
  bool sensitive(double u_arcsec, double v_arcsec) const;
  // Largest |u|, |v| reach of the FoV from the optical axis (arcsec).
  double reach_arcsec() const;

  // Sensitive fraction of every pixel of `grid` (its shape and anchor only) for
  // the pointing: subpixel^2 samples per pixel. Dimensionless, 0..1.
  core::ImageD mask(const core::ImageD& grid, const Pointing& pointing, int subpixel = 4) const;
  // Same on an explicit frame (used for padded grids).
  core::ImageD mask(int nx, int ny, const DetectorFrame& frame, int subpixel = 4) const;

 private:
  DetectorSettings s_;
  std::optional<core::ImageD> bad_;
  std::vector<double> gap_u_, gap_v_;  // chip-gap centre lines (about the axis)
};

enum class DitherPattern { None, Lissajous, Random };

// Dither: the pointing moves by offsets (u, v) in the detector frame during the
// exposure; the exposure map is the average of the instantaneous maps over the
// offsets. Lissajous: u = A sin(2 pi t / P_u), v = A sin(2 pi t / P_v) sampled
// at n_samples times evenly over duration_s (common practice for dithered
// X-ray CCD observations; periods illustrative). Random: uniform in the square
// [-A, A]^2 from RandomStream(seed, 2^48 + 1).
struct DitherSettings {
  DitherPattern pattern = DitherPattern::None;
  double amplitude_arcsec = 8.0;
  int n_samples = 512;
  double period_u_s = 1000.0;
  double period_v_s = 707.0;
  double duration_s = 1.0e5;
  std::uint64_t seed = 1;
};

struct DitherOffset {
  double u_arcsec = 0.0;
  double v_arcsec = 0.0;
};

// The sampled offsets (one zero offset for DitherPattern::None).
std::vector<DitherOffset> dither_offsets(const DitherSettings& d);

// Normalised smearing kernel on a sky grid of pixel_arcsec for the offsets
// rotated by the roll: every offset is split bilinearly over its 4 nearest
// kernel pixels; odd size, centre = zero offset, sum 1.
core::ImageD dither_kernel(const std::vector<DitherOffset>& offsets, double roll_deg, double pixel_arcsec);

}  // namespace icmscope::instrument
