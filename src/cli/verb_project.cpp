// icmscope project RUN.yaml
#include <cstdio>
#include <iostream>

#include <boost/program_options.hpp>

#include "icmscope/config/map_settings.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/pipeline/project_run.hpp"
#include "verb_common.hpp"

namespace po = boost::program_options;

namespace icmscope::cli {

int run_project(const std::vector<std::string>& args) {
  po::options_description opts(
      "icmscope project RUN.yaml\n\n"
      "Gas cells (a file, or an analytic model synthesised on the fly) -> physical X-ray maps along one line of\n"
      "sight: band count rate (counts/s per pixel; photons/cm^2/s with the default flat 1 cm^2 area), absorbed\n"
      "energy surface brightness (erg/s/cm^2/arcmin^2), emission measure (cm^-3 per pixel), emission-weighted,\n"
      "spectroscopic-like and mass-weighted temperature (keV), projected gas mass (Msun per pixel).\n"
      "Writes <directory>/<prefix>_maps.fits (one image HDU per map, TAN WCS centred on the target),\n"
      "<prefix>_config.yaml (the resolved configuration) and <prefix>_maps.png.\n\noptions");
  opts.add_options()
      ("help,h", "this text")
      ("example", "print a complete, commented RUN.yaml and exit")
      ("output-dir", po::value<std::string>(), "write the outputs here instead of the file's output.directory")
      ("threads", po::value<int>()->default_value(0), "OpenMP threads (0 = OMP_NUM_THREADS or all cores)")
      ("quiet,q", "print only warnings and errors");
  po::options_description hidden;
  hidden.add_options()("run", po::value<std::string>());
  po::positional_options_description pos;
  pos.add("run", 1);
  po::variables_map vm;
  parse_args(args, opts, hidden, pos, vm);
  if (vm.count("help")) { std::cout << opts << "\n"; return 0; }
  if (vm.count("example")) { std::cout << config::map_run_example_yaml(); return 0; }
  if (!vm.count("run")) throw core::ConfigError("missing RUN.yaml (see icmscope project --help)");
  set_threads(vm["threads"].as<int>());
  pipeline::Log log(vm.count("quiet") > 0);
  auto settings = config::load_map_run(vm["run"].as<std::string>());
  if (vm.count("output-dir")) {
    settings.output.directory = vm["output-dir"].as<std::string>();
    settings.resolved_yaml += "# output.directory overridden on the command line: " + settings.output.directory + "\n";
  }
  const auto r = pipeline::run_project(settings, log);
  std::printf("maps:   %s\nconfig: %s\n", r.maps_file.c_str(), r.config_file.c_str());
  if (!r.quicklook_file.empty()) std::printf("image:  %s\n", r.quicklook_file.c_str());
  return 0;
}

}  // namespace icmscope::cli
