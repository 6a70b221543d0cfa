#pragma once
// Analytic cluster models from YAML (the `synth` verb, and any verb that
// synthesises cells on the fly). Keys carry their units; every range is
// checked with the key path in the message. The full, commented key list is
// synth_example_yaml().
#include <string>

#include "icmscope/cells/analytic_model.hpp"
#include "icmscope/config/settings_reader.hpp"

namespace icmscope::config {

// Read a model from a section: the top level of a model file, or a section
// embedded in another settings file. Does not call finish(): the owner of
// the file does. Throws core::ConfigError naming file:line:col and the key.
cells::ClusterModel read_cluster_model(const Section& s);

// Load a model file, read it and reject unknown keys (SettingsFile::finish).
// resolved_yaml / resolved_hash, if given, receive the resolved-configuration
// echo (defaults marked) and its hash.
cells::ClusterModel load_cluster_model(const std::string& path, std::string* resolved_yaml = nullptr,
                                       std::string* resolved_hash = nullptr);

// A complete, commented example model: every key with its unit, default and
// choices. It parses with read_cluster_model and reads every key.
const char* synth_example_yaml();

// YAML text of a model that read_cluster_model reads back into an identical
// model (numbers with 17 significant digits). Gas-mass-normalised components
// are written with their given normalisation, not the resolved amplitude.
std::string cluster_model_yaml(const cells::ClusterModel& m);

}  // namespace icmscope::config
