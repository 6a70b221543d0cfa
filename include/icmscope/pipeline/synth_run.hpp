#pragma once
// `synth`: analytic cluster model (YAML) -> gas cells file (HDF5, own layout).
#include <cstdint>
#include <string>

#include "icmscope/cells/gas_cells.hpp"
#include "icmscope/pipeline/log.hpp"

namespace icmscope::pipeline {

struct SynthRequest {
  std::string model_file;
  std::string output_file;      // .h5
  std::int64_t particles = 0;   // override (0 = the model's own)
  std::int64_t seed = -1;       // override (-1 = the model's own)
};

struct SynthResult {
  std::size_t n_cells = 0;
  double total_gas_mass_msun = 0.0;
  double seconds = 0.0;
};

// Loads the model (strict YAML), synthesises it and writes the cells.
SynthResult run_synth(const SynthRequest& req, Log& log);

// Loads and synthesises a model file without writing (used by other verbs).
cells::GasCells synthesise_model_file(const std::string& model_file, std::int64_t particles, Log& log);

}  // namespace icmscope::pipeline
