#include "verbs.hpp"

namespace icmscope::cli {

int run_synth(const std::vector<std::string>& args);
int run_project(const std::vector<std::string>& args);

const std::vector<Verb>& verbs() {
  static const std::vector<Verb> all = {
      {"synth", "analytic cluster model (YAML) -> gas cells file (HDF5), deterministic from a seed", run_synth},
      {"project", "gas cells -> physical X-ray maps (rate, surface brightness, EM, temperatures) + WCS", run_project},
  };
  return all;
}

}  // namespace icmscope::cli
