#pragma once
// What the morphology measurement works on, and its preparation into a flux
// image: I_i = (n_i - b_i) / e_i over good pixels, with n_i the counts, b_i the
// expected background counts and e_i = exposure_i / reference (relative
// exposure; reference = max of the map, or a given value). Bad pixels (mask 0,
// zero or too-low exposure, non-finite values) are refilled (refill.hpp).
// The same input serves mock observations and real counts images.
#include <cstdint>
#include <optional>
#include <vector>

#include "icmscope/core/image.hpp"
#include "icmscope/core/random.hpp"
#include "icmscope/morphology/centre.hpp"
#include "icmscope/morphology/refill.hpp"

namespace icmscope::morphology {

struct MeasureInput {
  core::ImageD counts;                    // observed counts per pixel [count]
  std::optional<core::ImageD> exposure;   // exposure map on the counts grid [s or cm^2 s]
  double exposure_reference = 0.0;        // e_i = exposure / this; 0 = the map's maximum
  double min_relative_exposure = 0.0;     // pixels with e_i <= this are bad
  std::optional<core::ImageD> background; // expected background counts per pixel [count]
  double background_level = 0.0;          // flat background [count/pixel] when no image is given
  std::vector<std::uint8_t> mask;         // empty = all good; else 1 = good, 0 = masked (row-major)
  double kpc_per_pixel = 0.0;             // physical pixel size at the cluster [kpc]; 0 = unknown
  bool find_centre = true;                // false: use `centre` as the peak
  PixelPoint centre;                      // 0-based pixel coordinates; with find_centre and
                                          // PeakSettings::search_radius_px > 0, the search guess
  // Mocks: expected total counts per pixel (cluster + background, noise-free),
  // on the counts grid. Enables realisations of the expected image.
  std::optional<core::ImageD> expected;
  // Image anchor (pixel scale [arcsec]) is taken from `counts`.
};

// A mask from an image: good where value > threshold.
std::vector<std::uint8_t> mask_from_image(const core::ImageD& m, double threshold = 0.5);

// Prepared arrays, all on one grid (a crop of the input; origin records where).
struct PreparedImage {
  int x_origin = 0, y_origin = 0;  // input pixel of this grid's (0, 0)
  core::ImageD flux;       // I_i (refilled)
  core::ImageD variance;   // n_i / e_i^2 (0 for refilled pixels)
  core::ImageD counts;     // n_i (refilled pixels: Poisson draw of the local mean counts)
  core::ImageD bkg;        // b_i expected background counts (refilled: local mean)
  core::ImageD rel_exposure;  // e_i (refilled pixels: 1; unfilled: 0)
  std::vector<std::uint8_t> good;   // 1 = measured pixel
  RefillResult refill;              // hole fill values
  double pixel_arcsec = 1.0;
};

// Validates the input (grids, values) and builds the prepared arrays over the
// crop [x0, x1] x [y0, y1] (inclusive, clipped; default: the whole image).
// The random stream draws the Poisson counts of refilled pixels (used by the
// photon asymmetry only).
PreparedImage prepare_input(const MeasureInput& in, const RefillSettings& refill, core::RandomStream& rng,
                            int x0 = 0, int x1 = -1, int y0 = 0, int y1 = -1);

// Same preparation for the expected image of a mock (counts replaced by
// in.expected, no Poisson draws: refilled counts take the local mean).
PreparedImage prepare_expected(const MeasureInput& in, const RefillSettings& refill, int x0, int x1, int y0,
                               int y1);

}  // namespace icmscope::morphology
