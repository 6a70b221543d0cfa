#pragma once
// One target of a survey -> one catalog row (the narrow interface the survey
// runner schedules). A target is one cluster x line of sight x instrument x
// exposure (simulated entries) or one observation (observed entries).
//
// Simulated: the observe stage (pipeline/observe_run.hpp: maps, instrument,
// Poisson counts; FITS files in the target folder), then the measure stage on
// the files written (pipeline/measure_run.hpp), exactly as `icmscope measure`
// would read them. Observed: the measure stage's checks (WCS present and
// celestial, square pixels, counts and exposure units, every image on the
// counts grid; failures are errors) and the measurement, plus a flag when the
// largest aperture reaches unexposed sky (beyond the image or at zero exposure).
//
// Seeds: target seed = derive_seed(sample seed, target id) drives the
// observation; the measurement realisations use derive_seed(target seed,
// "measure"). Neither depends on the order or the thread that runs the target.
#include <cstdint>
#include <string>
#include <vector>

#include "icmscope/config/survey_settings.hpp"
#include "icmscope/pipeline/catalog.hpp"
#include "icmscope/pipeline/log.hpp"

namespace icmscope::pipeline {

struct SurveyTarget {
  std::size_t index = 0;          // position in the plan (target order), 0-based
  std::string id;                 // unique, file-name safe: <entry>[_<los>_<instrument>_<exposure>ks]
  std::size_t entry_index = 0;    // into SurveySettings::entries
  config::LineOfSight los;        // simulated
  std::string instrument_file;    // simulated
  std::string instrument_name;    // simulated
  double exposure_ks = 0.0;       // simulated
  std::uint64_t seed = 0;         // observation seed
  std::uint64_t measure_seed = 0; // realisations seed
  std::string directory;          // <output>/targets/<id>
  std::string echo;               // every setting the result depends on, one "key=value" per line
  std::string config_hash;        // 16 hex digits of the echo, input-file contents and program version
};

// Expands the entries into targets (entries in order; then lines of sight,
// instruments, exposures), with ids, seeds, folders and configuration hashes
// (input files are hashed by content; files above 64 MB by size and time).
// ConfigError when two targets get the same id.
std::vector<SurveyTarget> plan_survey(const config::SurveySettings& s, const std::string& output_directory);

// Runs one target and returns its catalog row; throws core::Error (or any
// std::exception) naming the file / field on failure. Products go to
// t.directory (created). `threads`: OpenMP threads of the measurement
// (0 = the calling thread's OpenMP default).
CatalogRow run_survey_target(const SurveyTarget& t, const config::SurveySettings& s, Log& log);

// A one-line description of a catalog column ("" when unknown).
std::string survey_column_description(const std::string& column);

// File-name-safe form of a text: letters, digits, '.', '-', '_' kept, the rest -> '-'.
std::string safe_name(const std::string& s);
// Column-name form of an indicator name and aperture label: "P3/P0", "500 kpc" -> "P3_P0_500kpc".
std::string indicator_column(const std::string& name, const std::string& aperture);

}  // namespace icmscope::pipeline
