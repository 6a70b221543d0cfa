#include "verbs.hpp"

namespace icmscope::cli {

int run_synth(const std::vector<std::string>& args);
int run_project(const std::vector<std::string>& args);
int run_observe(const std::vector<std::string>& args);
int run_rate(const std::vector<std::string>& args);
int run_measure(const std::vector<std::string>& args);
int run_survey(const std::vector<std::string>& args);
int run_plan(const std::vector<std::string>& args);

const std::vector<Verb>& verbs() {
  static const std::vector<Verb> all = {
      {"synth", "analytic cluster model (YAML) -> gas cells file (HDF5), deterministic from a seed", run_synth},
      {"project", "gas cells -> physical X-ray maps (rate, surface brightness, EM, temperatures) + WCS", run_project},
      {"observe", "cells or maps through an instrument -> counts, exposure, background, model, events", run_observe},
      {"rate", "isothermal plasma through an instrument: count rate per flux, counts for an exposure", run_rate},
      {"measure", "morphology indicators of a counts image (mock or real): values, bias corrections, flags, classes", run_measure},
      {"survey", "a sample of clusters (simulated and observed) -> one catalog, in parallel, resumable", run_survey},
      {"plan", "exposure planning: indicator precision and class confidence vs exposure; shortest sufficient exposure", run_plan},
  };
  return all;
}

}  // namespace icmscope::cli
