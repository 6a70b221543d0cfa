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
  VerbCommand cmd("plan",
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
      "observatory's own calibration and tools.\n\noptions",
      "plan");
  cmd.add_printer("example", "print a complete, commented PLAN.yaml and exit", config::plan_example_yaml);
  cmd.options()
      ("output-dir", po::value<std::string>(), "write the outputs here instead of the file's output.directory")
      ("realisations", po::value<int>(), "override realisations (per exposure and per reverse grid point)")
      ("seed", po::value<long long>(), "override seed")
      ("no-plots", "do not draw the PNG plots");
  cmd.add_threads_and_quiet("print only the report, warnings and errors");
  if (cmd.parse(args)) return 0;
  const std::string plan = cmd.positional("PLAN.yaml");
  cmd.apply_threads();
  pipeline::Log log(cmd.quiet());
  auto s = config::load_plan_run(plan);
  if (cmd.has("output-dir")) {
    s.map.output.directory = cmd.text("output-dir");
    note_override(s.resolved_yaml, "output.directory", s.map.output.directory);
  }
  if (cmd.has("realisations")) {
    const int n = cmd.vm()["realisations"].as<int>();
    if (n < 5) throw core::ConfigError("--realisations: expected >= 5, got " + std::to_string(n));
    s.realisations = n;
    s.reverse.realisations = n;
    note_override(s.resolved_yaml, "realisations", std::to_string(n));
  }
  if (const auto seed = cmd.seed()) {
    s.seed = *seed;
    note_override(s.resolved_yaml, "seed", std::to_string(*seed));
  }
  if (cmd.has("no-plots")) s.plots = false;
  const auto r = pipeline::run_plan(s, log);
  std::cout << pipeline::plan_text_report(r, s);
  for (const auto& w : r.written) std::printf("wrote: %s\n", w.c_str());
  return 0;
}

}  // namespace icmscope::cli
