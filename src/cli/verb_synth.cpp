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
  po::options_description opts(
      "icmscope synth MODEL.yaml -o CELLS.h5\n\n"
      "Samples gas particles from an analytic cluster model (beta model, Vikhlinin et al. 2006 density and\n"
      "temperature forms, metallicity profile; several components with offsets and bulk velocities), assigns\n"
      "smoothing lengths from the k nearest neighbours, and writes them in icmscope's HDF5 layout.\n"
      "Deterministic for a given seed, whatever the thread count.\n\noptions");
  opts.add_options()
      ("help,h", "this text")
      ("example", "print a complete, commented model file and exit")
      ("output,o", po::value<std::string>(), "output cells file (.h5), required")
      ("particles,n", po::value<long long>()->default_value(0), "particle count override (0 = the model's n_particles)")
      ("seed", po::value<long long>()->default_value(-1), "random seed override (-1 = the model's seed)")
      ("threads", po::value<int>()->default_value(0), "OpenMP threads (0 = OMP_NUM_THREADS or all cores)")
      ("quiet,q", "print only warnings and errors");
  po::options_description hidden;
  hidden.add_options()("model", po::value<std::string>());
  po::positional_options_description pos;
  pos.add("model", 1);
  po::variables_map vm;
  parse_args(args, opts, hidden, pos, vm);
  if (vm.count("help")) { std::cout << opts << "\n"; return 0; }
  if (vm.count("example")) { std::cout << config::synth_example_yaml(); return 0; }
  if (!vm.count("model")) throw core::ConfigError("missing MODEL.yaml (see icmscope synth --help)");
  if (!vm.count("output")) throw core::ConfigError("missing --output CELLS.h5 (see icmscope synth --help)");
  set_threads(vm["threads"].as<int>());
  pipeline::Log log(vm.count("quiet") > 0);
  pipeline::SynthRequest req;
  req.model_file = vm["model"].as<std::string>();
  req.output_file = vm["output"].as<std::string>();
  req.particles = vm["particles"].as<long long>();
  req.seed = vm["seed"].as<long long>();
  if (req.particles < 0) throw core::ConfigError("--particles: expected >= 0");
  pipeline::run_synth(req, log);
  return 0;
}

}  // namespace icmscope::cli
