#pragma once
// Settings of the `measure` verb: morphology indicators of one counts image
// (simulated or real), read from YAML (load_measure_run) and/or set from the
// command line (the CLI overrides fields, then calls check_measure_run).
// Apertures are written with their unit: "500 kpc", "1 R500" (or "R500"),
// "90 arcsec", "40 px"; concentration pairs as "40/400 kpc". kpc needs the
// redshift (and the cosmology), R500 needs R500 or M500 as well.
#include <cstdint>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "icmscope/config/map_settings.hpp"
#include "icmscope/config/settings_reader.hpp"

namespace icmscope::config {

// An image in a FITS file: "path.fits", "path.fits[COUNTS]" (EXTNAME) or
// "path.fits[2]" (0-based HDU number). hdu "" = automatic.
struct ImageRef {
  std::string file;
  std::string hdu;
  bool given() const { return !file.empty(); }
  std::string describe() const;  // "path.fits[HDU]" or "path.fits"
};
// where: the key or option, named in errors.
ImageRef parse_image_ref(const std::string& text, const std::string& where);

enum class ApertureUnit { kpc, r500, arcsec, pixel };
const char* to_string(ApertureUnit u);

// One aperture as written. Single: outer only; pair (concentration, annulus): inner/outer.
struct ApertureText {
  std::string text;    // as written
  bool pair = false;
  double inner = 0.0;  // pairs only
  double outer = 0.0;
  ApertureUnit unit = ApertureUnit::kpc;
  std::string where;   // key / option, for messages
  // Canonical label: "40/400 kpc", "0.1/1 R500", "500 kpc", "R500", "0.5 R500", "90 arcsec", "40 px".
  std::string label() const;
};
// Throws ConfigError "<where>: ..." for malformed text (pair = true wants "a/b unit", a < b).
ApertureText parse_aperture(const std::string& text, bool pair, const std::string& where);

struct SkyCircle {
  double ra_deg = 0.0;
  double dec_deg = 0.0;
  double radius_arcsec = 0.0;
};
// Reads a CSV with a header naming ra_deg, dec_deg, radius_arcsec (any order,
// other columns ignored, '#' comment lines allowed). InputError naming file:line.
std::vector<SkyCircle> read_sky_circles_csv(const std::string& path);

struct MeasureInputSettings {
  // The products of one `observe` run, by their prefix (directory/prefix):
  // PREFIX_counts.fits[COUNTS], PREFIX_exposure.fits[EXPOSURE],
  // PREFIX_background.fits[BACKGROUND], PREFIX_model.fits[MODEL] (the
  // expected counts); images named explicitly below take precedence.
  std::string observation;
  ImageRef counts;       // required: counts per pixel
  ImageRef exposure;     // optional, same grid: exposure map [s or cm^2 s]
  ImageRef background;   // optional, same grid: expected background counts per pixel
  ImageRef mask;         // optional, same grid: > 0.5 good, else masked
  ImageRef expected;     // optional, same grid: noise-free expected counts of a mock
  // Flat background [count/pixel at relative exposure 1]; NaN = not given.
  double background_level = std::numeric_limits<double>::quiet_NaN();
  std::optional<ApertureText> background_annulus;  // estimate the level in this annulus about the centre
  std::vector<SkyCircle> mask_circles;
  std::vector<std::string> mask_circle_files;      // CSV files of circles
  bool check_units = true;               // BUNIT of counts / exposure / background / expected
  double exposure_reference = 0.0;       // relative exposure = map / this; 0 = map maximum
  double min_relative_exposure = 0.0;    // pixels at or below are treated as gaps
  std::optional<std::vector<double>> band_keV;  // override of the header's E_MIN / E_MAX
};

struct MeasureTargetSettings {
  std::string name;              // "" = OBJECT keyword, else the counts file stem
  double redshift = 0.0;         // 0 = take the header's REDSHIFT if any, else unknown
  bool header_redshift = true;   // false: ignore the REDSHIFT keyword
  double r500_kpc = 0.0;         // 0 = unknown (or from m500_msun)
  double m500_msun = 0.0;        // 0 = unknown
  bool find_centre = true;
  double centre_ra_deg = std::numeric_limits<double>::quiet_NaN();
  double centre_dec_deg = std::numeric_limits<double>::quiet_NaN();
  // With a given centre: search for the peak within this distance of it
  // (then the centre is found, the given position is only the guess).
  std::optional<ApertureText> search_radius;
};

// nullopt = the published default for what is known (see the README).
struct MeasureApertureSettings {
  std::optional<std::vector<ApertureText>> concentration;   // pairs
  std::optional<std::vector<ApertureText>> centroid_shift;  // R_max of each w
  std::optional<std::vector<ApertureText>> power_ratios;
  // An empty `text` with off = true switches an indicator off.
  std::optional<ApertureText> asymmetry, gini_m20, smoothness, ellipticity, centroid;
  bool asymmetry_off = false, gini_m20_off = false, smoothness_off = false, ellipticity_off = false;
  bool photon_asymmetry = true;         // needs R500
  int w_apertures = 20;
  double w_min_fraction = 0.05;
  std::optional<ApertureText> w_core_exclusion;  // default 30 kpc (0 without redshift)
  std::string ln_unit = "auto";         // unit of R in ln R (P0): auto (kpc, else arcsec) | kpc | mpc | arcsec | pixel
  std::optional<ApertureText> peak_smoothing;    // Gaussian sigma; default 10 kpc (2 px without redshift)
  std::string asymmetry_normalisation = "sum_abs";  // sum_abs | twice_sum_abs
  std::string asymmetry_background = "model";       // model | none
};

struct MeasureStatisticsSettings {
  int realisations = 100;
  std::uint64_t seed = 1;
  std::string source = "observed";     // observed (re-Poissonise the data) | expected (the mock's expected image)
  std::string w_bias = "quadrature";   // linear | quadrature | none
  int threads = 0;                     // 0 = OpenMP default
  std::vector<std::string> presets;    // default: all presets
  double low_counts_net = 1000.0;
  double large_mask_fraction = 0.1;
  double min_pixel_sn = 3.0;
};

struct MeasureOutputSettings {
  std::string json;        // "" = none
  std::string csv;
  std::string quicklook;   // PNG with the centre and the apertures
  std::string stretch = "asinh";
  bool table = true;       // the readable table on stdout
};

struct MeasureRunSettings {
  MeasureInputSettings inputs;
  MeasureTargetSettings target;
  CosmologySettings cosmology;
  MeasureApertureSettings apertures;
  MeasureStatisticsSettings statistics;
  MeasureOutputSettings output;
  std::string source_file;     // YAML read ("" = command line only)
  std::string resolved_yaml;   // resolved configuration (defaults marked) + command-line overrides
  std::string config_hash;
};

// Fills the images of `observation` that are not set (counts must exist,
// the others are used when their files exist). ConfigError naming the prefix.
void resolve_observation(MeasureInputSettings& in);

// Reads a whole MEASURE.yaml (strict: unknown keys rejected), then checks it. With
// resolve_observation_products false, inputs.observation is kept but not resolved (and counts not yet
// required): the caller replaces it (--observation) and resolves it then.
MeasureRunSettings load_measure_run(const std::string& path, bool resolve_observation_products = true);
// Consistency of a filled settings struct (after command-line overrides):
// counts given, one background source, centre RA and Dec together, ranges.
// Throws ConfigError naming the key.
void check_measure_run(const MeasureRunSettings& s);
// A complete, commented MEASURE.yaml.
const char* measure_example_yaml();

}  // namespace icmscope::config
