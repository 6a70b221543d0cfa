// icmscope synth MODEL.yaml -o cells.h5
#include <iostream>

#include <boost/program_options.hpp>

#include "icmscope/config/synth_settings.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/pipeline/synth_run.hpp"
#include "verb_common.hpp"

namespace po = boost::program_options;

namespace icmscope::cli {

int run_synth(const std::vector<std::string>& args) {
  VerbCommand cmd("synth",
      "icmscope synth MODEL.yaml -o CELLS.h5\n\n"
      "Samples gas particles from an analytic cluster model (beta model, Vikhlinin et al. 2006 density and\n"
      "temperature forms, metallicity profile; several components with offsets and bulk velocities), assigns\n"
      "smoothing lengths from the k nearest neighbours, and writes them in icmscope's HDF5 layout.\n"
      "Deterministic for a given seed, whatever the thread count.\n\noptions",
      "model");
  cmd.add_printer("example", "print a complete, commented model file and exit", config::synth_example_yaml);
  cmd.options()
      ("output,o", po::value<std::string>(), "output cells file (.h5), required")
      ("particles,n", po::value<long long>()->default_value(0), "particle count override (0 = the model's n_particles)")
      ("seed", po::value<long long>()->default_value(-1), "random seed override (-1 = the model's seed)");
  cmd.add_threads_and_quiet();
  if (cmd.parse(args)) return 0;
  const auto& vm = cmd.vm();
  pipeline::SynthRequest req;
  req.model_file = cmd.positional("MODEL.yaml");
  if (!cmd.has("output")) throw core::ConfigError("missing --output CELLS.h5 (see icmscope synth --help)");
  cmd.apply_threads();
  pipeline::Log log(cmd.quiet());
  req.output_file = cmd.text("output");
  req.particles = vm["particles"].as<long long>();
  req.seed = vm["seed"].as<long long>();
  if (req.particles < 0) throw core::ConfigError("--particles: expected >= 0");
  pipeline::run_synth(req, log);
  return 0;
}

}  // namespace icmscope::cli
