#pragma once
// Settings of the `survey` verb: a sample of clusters, each either simulated
// (an analytic model or a gas-cells file, observed through one or more
// instruments and exposures along one or more lines of sight, then measured)
// or observed (a counts image with optional exposure, background and mask,
// measured directly). One SAMPLE.yaml (load_survey) holds
//
//   survey:    name, seed, output_directory, threads, entries_csv
//   defaults:  shared settings (cosmology, emission, selection, map,
//              lines_of_sight, model_particles, model_projection, observation,
//              measure); every entry may override any of them key by key
//   clusters:  the entries (file order), then the rows of entries_csv
//
// Relative paths resolve against the folder of the file that names them (the
// sample file, or the CSV listing). Units are in the key names.
#include <cstdint>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include "icmscope/config/instrument_settings.hpp"
#include "icmscope/config/map_settings.hpp"
#include "icmscope/config/measure_settings.hpp"
#include "icmscope/config/observe_settings.hpp"

namespace icmscope::config {

// One viewing direction of a simulated cluster.
struct LineOfSight {
  std::string label = "z";  // x, y, z, t<theta>p<phi> (given angles), iso<k> (random, 1-based)
  std::string axis = "z";   // x | y | z | angles
  double theta_deg = 0.0;   // axis angles: viewing direction, spherical polar angle [deg]
  double phi_deg = 0.0;     // azimuth [deg]
};

// Instrument side of the simulated targets: every (instrument, exposure) pair
// is one target per line of sight. `base` holds the remaining observation
// settings; its instrument_file, exposure_ks and seed are set per target.
struct SurveyObserveSettings {
  std::vector<std::string> instruments;  // instrument YAML files (presets in config/instruments/)
  std::vector<double> exposures_ks;      // > 0
  ObservationSettings base;              // events default false in a survey
};

// Measurement settings shared by simulated and observed targets.
struct SurveyMeasureSettings {
  MeasureApertureSettings apertures;
  MeasureStatisticsSettings statistics;  // statistics.seed is unused: each target's seed is derived
  // Simulated targets only: background model of the mock (image = the expected
  // particle + sky background written by observe; annulus = estimated like real
  // data; none) and the centre (find, or given = the cluster's RA/Dec, with an
  // optional peak search radius).
  std::string background = "image";
  std::optional<ApertureText> background_annulus;
  std::string centre = "find";
  std::optional<ApertureText> centre_search_radius;
  double min_relative_exposure = 0.0;    // pixels at or below are gaps
  // Per-target products.
  bool quicklook = true;                 // PNG with the centre and the apertures
  std::string stretch = "asinh";
  bool json = true;                      // the measurement as JSON (every number at full precision)
};

struct SurveyEntry {
  std::string name;
  bool simulated = true;
  std::string where;        // "file:line" (YAML) or "file:row" (CSV), for messages
  std::string echo_prefix;  // resolved-settings prefix of this entry ("clusters[3]"), "" for CSV rows
  std::string csv_echo;     // CSV rows: the row as key=value lines
  CosmologySettings cosmology;
  SurveyMeasureSettings measure;
  // ---- simulated ----
  TargetSettings target;    // name, redshift, RA/Dec, centre_kpc, r500_kpc
  double m500_msun = 0.0;   // 0 = unknown; R500 from it (or target.r500_kpc)
  CellSourceSettings cells;
  SelectionSettings selection;
  EmissionSettings emission;
  ViewSettings view;        // the grid; the axis is set per line of sight
  std::vector<LineOfSight> lines_of_sight;
  SurveyObserveSettings observation;
  std::string model_hash;   // resolved hash of the model file ("" for cells files)
  // A referenced file that could not be read at load time (model file): every
  // target of the entry fails with this reason while the rest of the sample runs.
  std::string load_error;
  // ---- observed ----
  MeasureInputSettings inputs;
  MeasureTargetSettings observed_target;
};

struct SurveySettings {
  std::string name = "sample";
  std::uint64_t seed = 1;             // sample seed: every target's seed derives from it and the target id
  std::string output_directory;       // default: <sample folder>/<name>_survey
  int threads = 0;                    // targets in parallel (0 = all cores); the CLI overrides
  std::vector<SurveyEntry> entries;   // YAML entries in file order, then the CSV rows
  std::map<std::string, InstrumentSettings> instruments;  // every instrument file named, loaded once
  std::map<std::string, std::string> instrument_errors;   // files that failed to load -> reason
  std::string source_file;            // the sample file (absolute path)
  std::string resolved_yaml;          // resolved configuration of the sample file, defaults marked
  std::string config_hash;            // its hash
  std::vector<ResolvedEntry> resolved;  // every value read (for the per-target hashes)
};

// Reads a whole SAMPLE.yaml (strict: unknown keys are errors with
// file:line:column), its CSV listing and every instrument and model file it
// names. Throws ConfigError / InputError naming the file and key.
SurveySettings load_survey(const std::string& path);

// The lines of sight of a `lines_of_sight` value: a list [x, y, z] or a map
// {axes: [...], angles: [{theta_deg, phi_deg}], random: N, random_seed: S}.
// Random directions are isotropic (cos theta uniform in [-1, 1], phi uniform in
// [0, 360)), drawn from RandomStream(random_seed); the default random_seed
// derives from the sample seed and the entry name.
std::vector<LineOfSight> isotropic_lines_of_sight(int n, std::uint64_t seed);

// Seed of a named item derived from a parent seed (FNV-1a of the name mixed
// with the seed through splitmix64), kept below 2^53 so it survives JSON and
// floating-point readers.
std::uint64_t derive_seed(std::uint64_t parent, const std::string& name);

// A complete, commented SAMPLE.yaml.
const char* survey_example_yaml();

}  // namespace icmscope::config
