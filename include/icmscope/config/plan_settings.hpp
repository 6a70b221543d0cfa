#pragma once
// Settings of the `plan` verb (exposure planning by simulation).
//
// The PLAN file reuses the sections of the `observe` RUN file (target,
// cosmology, emission, map, output; see map_settings.hpp) with exactly one
// target source:
//   scaled:  an analytic cluster from M500 and target.redshift through published
//            scaling relations (cells/scaling_relations.hpp), projected analytically;
//   cells:   a cells file (file: ...) or an analytic model file (model: ...,
//            projected analytically unless model_projection says otherwise);
//   maps:    a maps file written by `project` (RATE in photon/(cm2 s), T_EW).
// and adds: instrument (file and pointing), exposures (list or range, ks),
// realisations per exposure, goals, and an optional reverse question (the
// faintest / most distant scaled cluster still classified at a confidence).
#include <cstdint>
#include <limits>
#include <string>
#include <vector>

#include "icmscope/cells/scaling_relations.hpp"
#include "icmscope/config/instrument_settings.hpp"
#include "icmscope/config/map_settings.hpp"

namespace icmscope::config {

// An indicator as the morphology code names it: NamedEstimate name + aperture label.
struct IndicatorRef {
  std::string name;      // "w", "P3/P0", "c", "A_phot", ...
  std::string aperture;  // "R500", "500 kpc", "100/500 kpc", ...
  std::string label() const { return name + " (" + aperture + ")"; }
};

enum class GoalKind {
  precision,  // sigma = (p84 - p16) / 2 of the corrected values <= sigma_max (or <= relative_sigma_max |median|)
  classes,    // the most frequent class of `scheme` holds >= confidence of the realisations
              // (or the named class does)
  counts      // expected net cluster counts within R500 >= net_counts_min
};

struct PlanGoal {
  GoalKind kind = GoalKind::precision;
  IndicatorRef indicator;                                    // precision
  double sigma_max = std::numeric_limits<double>::quiet_NaN();           // absolute, indicator units
  double relative_sigma_max = std::numeric_limits<double>::quiet_NaN();  // sigma / |median|
  std::string scheme;                                        // classes: a classification preset
  std::string class_label;                                   // classes: "" = whichever class dominates
  double confidence = 0.9;                                   // classes: fraction of realisations
  double net_counts_min = 0.0;                               // counts
  std::string text() const;                                  // one-line description for outputs
};

struct PlanReverseSettings {
  bool enabled = false;
  double exposure_ks = 0.0;
  std::vector<double> m500_msun;   // increasing
  std::vector<double> redshift;    // increasing
  std::string scheme = "w_two_class";
  std::string class_label;         // "" = whichever class dominates
  double confidence = 0.9;
  int realisations = 50;
};

struct PlanRunSettings {
  MapRunSettings map;             // target, cosmology, cells (cells mode), emission, view (map), output
  std::string target_kind;        // scaled | model | cells | maps
  cells::ScaledClusterSpec scaled;  // scaled (and the shape of the reverse grid's clusters)
  int scaled_subsamples = 1;      // Gauss-Legendre points per pixel axis of the scaled clusters' maps
  std::string maps_file;          // maps
  double m500_msun = 0.0;         // target.m500_msun (0 = from the model file / scaled spec)
  // Instrument and pointing.
  std::string instrument_file;
  InstrumentSettings instrument;
  double roll_deg = 0.0;
  double offset_x_arcmin = 0.0, offset_y_arcmin = 0.0;
  std::string psf_mode = "zones";
  bool point_sources = false;
  double spectrum_metallicity_solar = 0.3;
  // Exposures [ks], increasing, and the statistics.
  std::vector<double> exposures_ks;
  int realisations = 100;
  std::uint64_t seed = 1;
  int bootstrap = 200;            // resamples for the uncertainty of the shortest exposure
  double core_radius_r500 = 0.15; // "core" aperture of the counts table, in R500
  std::vector<std::string> schemes;        // classification presets tabulated
  std::vector<IndicatorRef> indicators;    // indicators tabulated
  std::vector<PlanGoal> goals;
  PlanReverseSettings reverse;
  bool plots = true;
  std::string source_file;
  std::string resolved_yaml;
  std::string config_hash;
};

// Exposure grid of an `exposures_ks` value: a list, or {min, max, n, spacing: log|linear}.
PlanRunSettings load_plan_run(const std::string& path);
// The one-line caution every plan output carries.
const char* plan_caution_text();
// A complete, commented example of the PLAN file.
const char* plan_example_yaml();

}  // namespace icmscope::config
