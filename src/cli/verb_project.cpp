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
  VerbCommand cmd("project",
      "icmscope project RUN.yaml\n\n"
      "Gas cells (a file, or an analytic model synthesised on the fly) -> physical X-ray maps along one line of\n"
      "sight: band count rate (counts/s per pixel; photons/cm^2/s with the default flat 1 cm^2 area), absorbed\n"
      "energy surface brightness (erg/s/cm^2/arcmin^2), emission measure (cm^-3 per pixel), emission-weighted,\n"
      "spectroscopic-like and mass-weighted temperature (keV), projected gas mass (Msun per pixel).\n"
      "Writes <directory>/<prefix>_maps.fits (one image HDU per map, TAN WCS centred on the target),\n"
      "<prefix>_config.yaml (the resolved configuration) and <prefix>_maps.png.\n\noptions",
                  "run");
  cmd.add_printer("example", "print a complete, commented RUN.yaml and exit", config::map_run_example_yaml);
  cmd.options()("output-dir", po::value<std::string>(), "write the outputs here instead of the file's output.directory");
  cmd.add_threads_and_quiet();
  if (cmd.parse(args)) return 0;
  const std::string run = cmd.positional("RUN.yaml");
  cmd.apply_threads();
  pipeline::Log log(cmd.quiet());
  auto settings = config::load_map_run(run);
  if (cmd.has("output-dir")) {
    settings.output.directory = cmd.text("output-dir");
    note_override(settings.resolved_yaml, "output.directory", settings.output.directory);
  }
  const auto r = pipeline::run_project(settings, log);
  std::printf("maps:   %s\nconfig: %s\n", r.maps_file.c_str(), r.config_file.c_str());
  if (!r.quicklook_file.empty()) std::printf("image:  %s\n", r.quicklook_file.c_str());
  return 0;
}

}  // namespace icmscope::cli
