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
  po::options_description opts(
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
      "  <prefix>_config.yaml, <prefix>_instrument.yaml   resolved configurations (also in FITS HISTORY)\n\noptions");
  opts.add_options()
      ("help,h", "this text")
      ("example", "print a complete, commented RUN.yaml and exit")
      ("instrument-example", "print a complete, commented instrument file and exit")
      ("output-dir", po::value<std::string>(), "write the outputs here instead of the file's output.directory")
      ("particles", po::value<long long>(), "override cells.model_particles (analytic models only)")
      ("seed", po::value<long long>(), "override observation.seed")
      ("no-events", "do not write the event list")
      ("threads", po::value<int>()->default_value(0), "OpenMP threads (0 = OMP_NUM_THREADS or all cores)")
      ("quiet,q", "print only warnings and errors");
  po::options_description hidden;
  hidden.add_options()("run", po::value<std::string>());
  po::positional_options_description pos;
  pos.add("run", 1);
  po::variables_map vm;
  parse_args(args, opts, hidden, pos, vm);
  if (vm.count("help")) { std::cout << opts << "\n"; return 0; }
  if (vm.count("example")) { std::cout << config::observe_example_yaml(); return 0; }
  if (vm.count("instrument-example")) { std::cout << config::instrument_example_yaml(); return 0; }
  if (!vm.count("run")) throw core::ConfigError("missing RUN.yaml (see icmscope observe --help)");
  set_threads(vm["threads"].as<int>());
  pipeline::Log log(vm.count("quiet") > 0);
  auto s = config::load_observe_run(vm["run"].as<std::string>());
  if (vm.count("output-dir")) {
    s.map.output.directory = vm["output-dir"].as<std::string>();
    s.resolved_yaml += "# output.directory overridden on the command line: " + s.map.output.directory + "\n";
  }
  if (vm.count("particles")) {
    const long long n = vm["particles"].as<long long>();
    if (n <= 0) throw core::ConfigError("--particles: expected > 0, got " + std::to_string(n));
    if (s.map.cells.model_file.empty())
      throw core::ConfigError("--particles applies to an analytic model (cells.model), not to a cells or maps file");
    s.map.cells.model_particles = n;
    s.resolved_yaml += "# cells.model_particles overridden on the command line: " + std::to_string(n) + "\n";
  }
  if (vm.count("seed")) {
    const long long v = vm["seed"].as<long long>();
    if (v < 0) throw core::ConfigError("--seed: expected >= 0, got " + std::to_string(v));
    s.observation.seed = static_cast<std::uint64_t>(v);
    s.resolved_yaml += "# observation.seed overridden on the command line: " + std::to_string(v) + "\n";
  }
  if (vm.count("no-events")) {
    s.observation.events = false;
    s.resolved_yaml += "# observation.events overridden on the command line: false\n";
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
