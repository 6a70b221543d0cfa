// icmscope observe RUN.yaml
#include <cstdio>
#include <iostream>

#include <boost/program_options.hpp>

#include "icmscope/config/instrument_settings.hpp"
#include "icmscope/config/observe_settings.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/pipeline/observe_run.hpp"
#include "verb_common.hpp"

namespace po = boost::program_options;

namespace icmscope::cli {

int run_observe(const std::vector<std::string>& args) {
  VerbCommand cmd("observe",
      "icmscope observe RUN.yaml\n\n"
      "One target through one instrument: gas cells (or an analytic model, or a maps file written by `project`)\n"
      "-> expected cluster counts (on-axis area folded per cell, PSF with off-axis zones, exposure map with\n"
      "vignetting, chip gaps, bad pixels and dither), point sources (Moretti et al. 2003 logN-logS), particle\n"
      "and sky backgrounds, Poisson counts and a photon event list. Exposure in ks, energies in keV, angles in\n"
      "arcsec/arcmin/deg as the key names say; every random draw follows observation.seed.\n"
      "Writes into output.directory, all on one WCS:\n"
      "  <prefix>_counts.fits      COUNTS (count)\n"
      "  <prefix>_exposure.fits    EXPOSURE (s), EXPOSURE_AREA (cm**2 s, cluster spectrum), EXPOSURE_AREA_SKY\n"
      "  <prefix>_background.fits  BACKGROUND, PARTICLE, SKY (expected counts)\n"
      "  <prefix>_model.fits       MODEL (all expected counts), CLUSTER, POINTS, RATE_ONAXIS (count/s), T_EW (keV)\n"
      "  <prefix>_events.fits      EVENTS (TIME, X, Y, RA, DEC, ENERGY, PI, COMPONENT) + GTI   (events: true)\n"
      "  <prefix>_sources.fits     SOURCES truth list                                         (point sources)\n"
      "  <prefix>_counts.png       quick-look of the counts, field edge and chip gaps outlined\n"
      "  <prefix>_config.yaml, <prefix>_instrument.yaml   resolved configurations (also in FITS HISTORY)\n\noptions",
      "run");
  cmd.add_printer("example", "print a complete, commented RUN.yaml and exit", config::observe_example_yaml);
  cmd.add_printer("instrument-example", "print a complete, commented instrument file and exit",
                  config::instrument_example_yaml);
  cmd.options()
      ("output-dir", po::value<std::string>(), "write the outputs here instead of the file's output.directory")
      ("particles", po::value<long long>(), "override cells.model_particles (analytic models only)")
      ("seed", po::value<long long>(), "override observation.seed")
      ("no-events", "do not write the event list");
  cmd.add_threads_and_quiet();
  if (cmd.parse(args)) return 0;
  const std::string run = cmd.positional("RUN.yaml");
  cmd.apply_threads();
  pipeline::Log log(cmd.quiet());
  auto s = config::load_observe_run(run);
  if (cmd.has("output-dir")) {
    s.map.output.directory = cmd.text("output-dir");
    note_override(s.resolved_yaml, "output.directory", s.map.output.directory);
  }
  if (cmd.has("particles")) {
    const long long n = cmd.vm()["particles"].as<long long>();
    if (n <= 0) throw core::ConfigError("--particles: expected > 0, got " + std::to_string(n));
    if (s.map.cells.model_file.empty())
      throw core::ConfigError("--particles applies to an analytic model (cells.model), not to a cells or maps file");
    s.map.cells.model_particles = n;
    note_override(s.resolved_yaml, "cells.model_particles", std::to_string(n));
  }
  if (const auto seed = cmd.seed()) {
    s.observation.seed = *seed;
    note_override(s.resolved_yaml, "observation.seed", std::to_string(*seed));
  }
  if (cmd.has("no-events")) {
    s.observation.events = false;
    note_override(s.resolved_yaml, "observation.events", "false");
  }
  s.map.resolved_yaml = s.resolved_yaml;
  const auto r = pipeline::run_observe(s, log);
  std::printf("counts:     %s\nexposure:   %s\nbackground: %s\nmodel:      %s\n", r.counts_file.c_str(),
              r.exposure_file.c_str(), r.background_file.c_str(), r.model_file.c_str());
  if (!r.events_file.empty()) std::printf("events:     %s\n", r.events_file.c_str());
  if (!r.sources_file.empty()) std::printf("sources:    %s\n", r.sources_file.c_str());
  std::printf("config:     %s\n", r.config_file.c_str());
  if (!r.quicklook_file.empty()) std::printf("image:      %s\n", r.quicklook_file.c_str());
  return 0;
}

}  // namespace icmscope::cli
