#pragma once
// `measure`: morphology indicators of one counts image (a mock written by
// `observe`, or a real observation) with optional exposure map, background
// (image, flat level or annulus estimate), mask (image and/or sky circles) and,
// for mocks, the expected-counts image.
//
// Stages: load_measure_images (read, check units, grids and WCS) ->
// measure_images (apertures from the redshift / R500 / arcsec, centre, mask,
// background, morphology::measure, sky positions) -> write_measure_outputs
// (JSON, CSV, quick-look PNG; nothing is left behind when one fails).
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "icmscope/config/measure_settings.hpp"
#include "icmscope/io/fits_header.hpp"
#include "icmscope/io/fits_image.hpp"
#include "icmscope/morphology/indicators.hpp"
#include "icmscope/pipeline/log.hpp"

namespace icmscope::pipeline {

// One input image as read: pixels + WCS + its name "file[HDU]".
struct MeasureImage {
  io::FitsImage fits;
  std::string name;     // file[EXTNAME] or file[index] actually read
  std::string field;    // the settings key, e.g. "inputs.exposure"
};

struct MeasureImages {
  MeasureImage counts;
  std::optional<MeasureImage> exposure, background, mask, expected;
  io::FitsHeader primary;  // primary header of the counts file (keyword fallback)
};

// Reads every image the settings name. Errors (InputError / ConfigError) are
// one line naming the file, HDU and settings field: missing file or HDU, no or
// non-celestial WCS, non-square pixels, a BUNIT that is not a counts / exposure
// unit (inputs.check_units), a grid or WCS differing from the counts image, an
// exposure map without a positive value.
MeasureImages load_measure_images(const config::MeasureRunSettings& s);

// An aperture as used, in pixels (inner: pairs and annuli, NaN otherwise).
struct ApertureRecord {
  std::string indicator;  // c, w, P_m, A, A_phot, gini/M20, S, ellipticity, centroid, peak smoothing ...
  std::string label;      // the indicator's aperture label ("100/500 kpc", "R500", ...)
  double inner_px = 0.0;
  double outer_px = 0.0;
  bool pair = false;
  std::string note;       // e.g. "20 apertures down to 0.05 R_max"
};

struct SkyPoint {
  double x = 0.0, y = 0.0;  // FITS 1-based pixel
  double ra_deg = 0.0, dec_deg = 0.0;
};

struct MeasureReport {
  std::string target;
  std::string counts, exposure, background, mask, expected;  // "" = not given
  std::string counts_bunit;
  int nx = 0, ny = 0;
  double pixel_arcsec = 0.0;
  double redshift = 0.0;            // 0 = unknown
  std::string redshift_source;      // "target.redshift", "header REDSHIFT", "unknown"
  double kpc_per_arcsec = 0.0;      // 0 = unknown
  double kpc_per_pixel = 0.0;
  double r500_kpc = 0.0;            // 0 = unknown
  std::string r500_source;          // "target.r500_kpc", "M500 via the cosmology", "unknown"
  double m500_msun = 0.0;
  config::CosmologySettings cosmology;
  bool band_known = false;
  double band_min_keV = 0.0, band_max_keV = 0.0;
  std::string band_source;
  std::string background_mode;      // none | image | level | annulus
  double background_level = 0.0;    // count/pixel at relative exposure 1 (level, annulus)
  std::size_t background_pixels = 0;  // annulus pixels used
  double exposure_reference = 0.0;  // exposure of relative exposure 1 [map unit]
  std::size_t masked_pixels = 0;    // by the mask image and the circles
  std::size_t gap_pixels = 0;       // exposure at or below the minimum (chip gaps, edges)
  int mask_circles = 0;
  std::string centre_mode;          // found | given | found near the given guess
  std::optional<SkyPoint> given_centre;
  SkyPoint peak, centroid;
  std::vector<ApertureRecord> apertures;
  morphology::Indicators indicators;  // peak/centroid in FITS 1-based pixels, pa_deg on the sky
  std::vector<morphology::ClassificationScheme> schemes;  // applied, same order as indicators.classes
  int realisations = 0;
  std::uint64_t seed = 0;
  std::string source;               // observed | expected
  std::string w_bias;
  std::vector<std::string> notes;   // warnings and remarks, one line each
  std::string config_hash;
  std::string configuration;        // resolved settings (YAML, defaults marked) + command-line overrides
  double seconds = 0.0;
};

// The measurement itself (no output written). `counts_override`: measure these
// pixels instead of the counts image's (same grid; used for noise trials).
MeasureReport measure_images(const MeasureImages& im, const config::MeasureRunSettings& s, Log& log,
                             const core::ImageD* counts_override = nullptr);

// Writes the JSON, CSV and PNG the settings ask for, each atomically; if one
// fails, the ones already written are removed. Returns the paths written.
std::vector<std::string> write_measure_outputs(const MeasureReport& r, const MeasureImages& im,
                                               const config::MeasureRunSettings& s, Log& log);

// Checks that every output can be created (directory exists, not a directory)
// before any work is done.
void check_measure_outputs(const config::MeasureRunSettings& s);

struct MeasureRunResult {
  MeasureReport report;
  std::vector<std::string> written;
};

MeasureRunResult run_measure(const config::MeasureRunSettings& s, Log& log);

}  // namespace icmscope::pipeline
