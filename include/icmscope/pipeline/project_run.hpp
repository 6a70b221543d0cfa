#pragma once
// `project`: one target's gas cells -> physical maps FITS file, resolved
// configuration and a quick-look picture.
#include <string>
#include <vector>

#include "icmscope/cells/gas_cells.hpp"
#include "icmscope/config/map_settings.hpp"
#include "icmscope/io/fits_keywords.hpp"
#include "icmscope/pipeline/log.hpp"
#include "icmscope/pipeline/physical_maps.hpp"

namespace icmscope::pipeline {

// Cells of a source (read from a file with its field map, or synthesised from
// a model), validated, with drops and counts logged.
cells::GasCells load_cells(const config::CellSourceSettings& src, Log& log);

// Keywords describing a map run (target, redshift, cosmology, band, line of
// sight, configuration hash), for every output's primary header.
std::vector<io::FitsKeyword> run_keywords(const config::MapRunSettings& s, const PhysicalMaps& maps);
// The resolved configuration as HISTORY lines.
std::vector<std::string> config_history(const std::string& resolved_yaml);

// Writes <dir>/<prefix>_maps.fits with one image HDU per map.
void write_physical_maps(const std::string& path, const PhysicalMaps& maps, const config::MapRunSettings& s);

struct ProjectResult {
  std::string maps_file, config_file, quicklook_file;
  MapStats stats;
};

ProjectResult run_project(const config::MapRunSettings& s, Log& log);

// Write text to path atomically (temporary name, then rename).
void write_text_file(const std::string& path, const std::string& text);
// Create a directory (and parents); OutputError naming it when impossible.
void ensure_directory(const std::string& dir);

// ensure_directory at construction (a run fails early on an unwritable output); the destructor removes the
// folders it created again when they are still empty, so a run that fails before writing leaves nothing.
class OutputDirectory {
 public:
  explicit OutputDirectory(const std::string& dir);
  ~OutputDirectory();
  OutputDirectory(const OutputDirectory&) = delete;
  OutputDirectory& operator=(const OutputDirectory&) = delete;

 private:
  void remove_empty() const;
  std::vector<std::string> created_;  // deepest first
};

}  // namespace icmscope::pipeline
