// icmscope survey SAMPLE.yaml
#include <cstdio>
#include <iostream>

#include <boost/program_options.hpp>

#include "icmscope/config/survey_settings.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/pipeline/survey_run.hpp"
#include "verb_common.hpp"

namespace po = boost::program_options;

namespace icmscope::cli {

int run_survey(const std::vector<std::string>& args) {
  VerbCommand cmd("survey",
      "icmscope survey SAMPLE.yaml\n\n"
      "A sample of clusters -> one catalog. Simulated entries (an analytic model or a gas-cells file) are\n"
      "observed through every instrument and exposure along every line of sight, then measured; observed\n"
      "entries (a counts image with optional exposure, background and mask) are checked, then measured.\n"
      "One catalog row per cluster x line of sight x instrument x exposure, the same columns for simulated\n"
      "and observed rows: identifiers, inputs given vs estimated, net counts, S/N, every indicator with its\n"
      "errors (bias-corrected value, raw, 16th/84th percentiles, significance), classes and probabilities,\n"
      "flags, configuration hash, seed, program version.\n\n"
      "Outputs in the output folder: <name>_catalog.csv and .fits, <name>_columns.csv (units, descriptions),\n"
      "<name>_failures.csv, <name>_summary.txt, summary plots <name>_*.png, targets/<id>/ (FITS files,\n"
      "quick-look PNG with the centre and apertures, JSON, log, record), logs/ (one log file per run).\n\n"
      "Targets run concurrently; each target's seed derives from the sample seed and its id, so the catalog\n"
      "does not depend on the thread count or order. A rerun skips targets already finished with the same\n"
      "settings (their records carry a configuration hash) and retries the rest; a failing target is listed\n"
      "with its reason in the failures file while the others complete. Exit status: 0 when every target has\n"
      "a result, 7 when some failed (the catalog holds the others), 2-5 for errors of the sample itself.\n\noptions",
      "sample");
  cmd.add_printer("example", "print a complete, commented SAMPLE.yaml and exit", config::survey_example_yaml);
  cmd.options()
      ("output-dir", po::value<std::string>(), "output folder (default: survey.output_directory of the sample)")
      ("threads", po::value<int>()->default_value(0),
       "targets run in parallel (0 = survey.threads, else all cores; 1 per rank with --mpi)")
      ("omp-threads", po::value<int>()->default_value(0), "OpenMP threads per target (0 = cores / threads)")
      ("restart", "rerun every target (ignore the records of earlier runs)")
      ("shard", po::value<std::string>(),
       "K/N: run only the targets with index % N == K (job arrays); writes no catalog, see --collect")
      ("collect", "run nothing: assemble the catalog, failures and plots from the records")
      ("only", po::value<std::vector<std::string>>()->multitoken(),
       "run only these targets (ids or 1-based numbers, repeatable or comma-separated); writes no catalog")
      ("mpi", "dynamic target assignment over MPI ranks (mpirun -np R icmscope survey ... --mpi)")
      ("progress", po::value<std::string>()->default_value("auto"),
       "auto (a bar on a terminal, periodic lines otherwise) | bar | lines | none")
      ("no-plots", "skip the summary plots")
      ("quiet,q", "print only warnings, errors and the summary");
  if (cmd.parse(args)) return 0;
  const std::string sample = cmd.positional("SAMPLE.yaml");
  const auto& vm = cmd.vm();
  pipeline::SurveyOptions o;
  if (vm.count("output-dir")) o.output_directory = vm["output-dir"].as<std::string>();
  o.threads = vm["threads"].as<int>();
  o.omp_threads = vm["omp-threads"].as<int>();
  if (o.threads < 0) throw core::ConfigError("--threads: expected >= 0");
  if (o.omp_threads < 0) throw core::ConfigError("--omp-threads: expected >= 0");
  o.restart = vm.count("restart") > 0;
  o.collect_only = vm.count("collect") > 0;
  o.mpi = vm.count("mpi") > 0;
  o.plots = vm.count("no-plots") == 0;
  o.progress = vm["progress"].as<std::string>();
  if (o.progress != "auto" && o.progress != "bar" && o.progress != "lines" && o.progress != "none")
    throw core::ConfigError("--progress: expected auto, bar, lines or none, got '" + o.progress + "'");
  if (vm.count("shard")) {
    const std::string t = vm["shard"].as<std::string>();
    const auto slash = t.find('/');
    int k = -1, n = 0;
    if (slash == std::string::npos || std::sscanf(t.c_str(), "%d/%d", &k, &n) != 2 || n < 1 || k < 0 || k >= n)
      throw core::ConfigError("--shard: expected K/N with 0 <= K < N, got '" + t + "'");
    o.shard_index = k;
    o.shard_count = n;
    if (o.collect_only) throw core::ConfigError("--shard and --collect: give one of them");
  }
  if (vm.count("only"))
    for (const auto& item : vm["only"].as<std::vector<std::string>>()) {
      std::size_t b = 0;
      for (;;) {
        const std::size_t e = item.find(',', b);
        const std::string w = item.substr(b, e == std::string::npos ? std::string::npos : e - b);
        if (!w.empty()) o.only.push_back(w);
        if (e == std::string::npos) break;
        b = e + 1;
      }
    }
  const bool quiet = vm.count("quiet") > 0;
  pipeline::Log log(true);  // run-level lines go to the run's log file; the progress display shows the state
  const auto settings = config::load_survey(sample);
  if (quiet) o.progress = "none";
  const auto r = pipeline::run_survey(settings, o, log);
  if (r.is_root) {
    if (r.catalog_written) {
      std::cout << r.summary_text;
    } else {
      const std::string part = o.only.empty() ? "shard " + std::to_string(o.shard_index) + "/" +
                                                    std::to_string(o.shard_count)
                                              : "selected targets";
      std::printf("survey %s: %s: %zu target(s) run, %zu finished before, %zu failed; assemble the catalog "
                  "with --collect when every part is done\nlog: %s\n",
                  settings.name.c_str(), part.c_str(), r.ran, r.resumed, r.failed_now, r.log_file.c_str());
    }
  }
  return r.exit_code();
}

}  // namespace icmscope::cli
