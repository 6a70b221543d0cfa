// icmscope plan PLAN.yaml
#include <cstdio>
#include <iostream>

#include <boost/program_options.hpp>

#include "icmscope/config/plan_settings.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/pipeline/plan_report.hpp"
#include "icmscope/pipeline/plan_run.hpp"
#include "verb_common.hpp"

namespace po = boost::program_options;

namespace icmscope::cli {

int run_plan(const std::vector<std::string>& args) {
  po::options_description opts(
      "icmscope plan PLAN.yaml\n\n"
      "Exposure planning by simulation: how many ks on this instrument before the centroid shift w, the power\n"
      "ratios, the concentration or the photon asymmetry tell whether the cluster is relaxed?\n"
      "The target is an analytic cluster from M500 and z (published scaling relations, named in the output), an\n"
      "analytic model file, a cells file or a maps file. Its expected observation (cluster, sky and particle\n"
      "backgrounds, PSF, exposure map) is built once and scaled to each exposure of the grid (ks); N Poisson\n"
      "realisations per exposure are measured as `measure` measures a mock (noise-bias corrected), giving each\n"
      "indicator's median and 16/84 range and the class probabilities. Goals (precision of an indicator, a class\n"
      "confidence, net counts within R500) get the shortest exposure meeting them, interpolated in log exposure,\n"
      "with a bootstrap uncertainty. A `reverse` section asks the opposite: at one exposure, the faintest / most\n"
      "distant scaled cluster (M500 x z grid) whose class is still determined at the confidence.\n"
      "Writes into output.directory (all atomically):\n"
      "  <prefix>_plan.csv, <prefix>_plan.json   per-exposure table (counts, background fraction, S/N, indicators,\n"
      "                                          class probabilities); JSON: everything, relations used, caution\n"
      "  <prefix>_goals.csv                      shortest exposure per goal and for all goals, with uncertainty\n"
      "  <prefix>_plan.txt, <prefix>_plan.png    the terminal report; precision / class confidence / counts plots\n"
      "  <prefix>_reverse.csv, <prefix>_reverse.png   the reverse question (when asked)\n"
      "  <prefix>_config.yaml                    resolved configuration\n"
      "CAUTION: simulations with an illustrative instrument model; exposure requests must be confirmed with the\n"
      "observatory's own calibration and tools.\n\noptions");
  opts.add_options()
      ("help,h", "this text")
      ("example", "print a complete, commented PLAN.yaml and exit")
      ("output-dir", po::value<std::string>(), "write the outputs here instead of the file's output.directory")
      ("realisations", po::value<int>(), "override realisations (per exposure and per reverse grid point)")
      ("seed", po::value<long long>(), "override seed")
      ("no-plots", "do not draw the PNG plots")
      ("threads", po::value<int>()->default_value(0), "OpenMP threads (0 = OMP_NUM_THREADS or all cores)")
      ("quiet,q", "print only the report, warnings and errors");
  po::options_description hidden;
  hidden.add_options()("plan", po::value<std::string>());
  po::positional_options_description pos;
  pos.add("plan", 1);
  po::variables_map vm;
  parse_args(args, opts, hidden, pos, vm);
  if (vm.count("help")) { std::cout << opts << "\n"; return 0; }
  if (vm.count("example")) { std::cout << config::plan_example_yaml(); return 0; }
  if (!vm.count("plan")) throw core::ConfigError("missing PLAN.yaml (see icmscope plan --help)");
  set_threads(vm["threads"].as<int>());
  pipeline::Log log(vm.count("quiet") > 0);
  auto s = config::load_plan_run(vm["plan"].as<std::string>());
  if (vm.count("output-dir")) {
    s.map.output.directory = vm["output-dir"].as<std::string>();
    s.resolved_yaml += "# output.directory overridden on the command line: " + s.map.output.directory + "\n";
  }
  if (vm.count("realisations")) {
    const int n = vm["realisations"].as<int>();
    if (n < 5) throw core::ConfigError("--realisations: expected >= 5, got " + std::to_string(n));
    s.realisations = n;
    s.reverse.realisations = n;
    s.resolved_yaml += "# realisations overridden on the command line: " + std::to_string(n) + "\n";
  }
  if (vm.count("seed")) {
    const long long v = vm["seed"].as<long long>();
    if (v < 0) throw core::ConfigError("--seed: expected >= 0, got " + std::to_string(v));
    s.seed = static_cast<std::uint64_t>(v);
    s.resolved_yaml += "# seed overridden on the command line: " + std::to_string(v) + "\n";
  }
  if (vm.count("no-plots")) s.plots = false;
  const auto r = pipeline::run_plan(s, log);
  std::cout << pipeline::plan_text_report(r, s);
  for (const auto& w : r.written) std::printf("wrote: %s\n", w.c_str());
  return 0;
}

}  // namespace icmscope::cli
