// Exposure-planning throughput: a 10-exposure x 100-realisation plan for one
// target (a scaled 5e14 Msun cluster at z = 0.1 on a 256 x 256 grid of 8 arcsec
// pixels through Vasta-LA, four indicators, three classification schemes, 200
// bootstrap resamples). Target: <= 60 s on 2 cores. Prints the wall time of each
// stage, the CPU time, and the load average (the machine may be shared).
//   bench_plan [--source DIR] [--realisations N] [--exposures N]
#include <sys/resource.h>
#include <unistd.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>

#include "icmscope/config/plan_settings.hpp"
#include "icmscope/core/blocked.hpp"
#include "icmscope/pipeline/plan_goals.hpp"
#include "icmscope/pipeline/plan_run.hpp"

namespace fs = std::filesystem;
using namespace icmscope;

namespace {

double cpu_seconds() {
  rusage u{};
  getrusage(RUSAGE_SELF, &u);
  return u.ru_utime.tv_sec + u.ru_stime.tv_sec + 1e-6 * (u.ru_utime.tv_usec + u.ru_stime.tv_usec);
}

double load1() {
  double l[3] = {0, 0, 0};
  return getloadavg(l, 3) > 0 ? l[0] : -1.0;
}

}  // namespace

int main(int argc, char** argv) {
  fs::path src = fs::path(__FILE__).parent_path().parent_path();
  int nreal = 100, nexp = 10;
  for (int i = 1; i < argc; ++i) {
    if (!std::strcmp(argv[i], "--source") && i + 1 < argc) src = argv[++i];
    else if (!std::strcmp(argv[i], "--realisations") && i + 1 < argc) nreal = std::atoi(argv[++i]);
    else if (!std::strcmp(argv[i], "--exposures") && i + 1 < argc) nexp = std::atoi(argv[++i]);
    else {
      std::fprintf(stderr, "usage: bench_plan [--source DIR] [--realisations N] [--exposures N]\n");
      return 2;
    }
  }
  const fs::path work = fs::temp_directory_path() / ("icmscope_bench_plan_" + std::to_string(::getpid()));
  fs::create_directories(work);
  const fs::path plan = work / "plan.yaml";
  {
    std::ofstream f(plan);
    f << "target: {name: bench, redshift: 0.1}\n"
      << "scaled: {m500_msun: 5.0e14}\n"
      << "map: {pixels: 256, pixel_arcsec: 8.0}\n"
      << "instrument: {file: '" << (src / "config" / "instruments" / "vasta_la.yaml").string() << "'}\n"
      << "exposures_ks: {min: 2, max: 100, n: " << nexp << ", spacing: log}\n"
      << "realisations: " << nreal << "\nseed: 1\nbootstrap: 200\n"
      << "goals:\n  - {kind: precision, indicator: w, aperture: R500, sigma_max: 0.002}\n"
      << "  - {kind: class, scheme: w_two_class, confidence: 0.9}\n"
      << "output: {directory: '" << work.string() << "'}\n";
  }
  const double load0 = load1();
  const auto s = config::load_plan_run(plan.string());
  pipeline::Log log(true);
  const double c0 = cpu_seconds();
  auto t0 = std::chrono::steady_clock::now();
  auto since = [](std::chrono::steady_clock::time_point a) {
    return std::chrono::duration<double>(std::chrono::steady_clock::now() - a).count();
  };
  const auto ctx = pipeline::make_plan_context(s);
  const auto target = pipeline::build_plan_target(s, ctx, s.exposures_ks.back(), log);
  const double t_target = since(t0);
  t0 = std::chrono::steady_clock::now();
  std::vector<pipeline::PlanExposure> ex;
  for (double t : s.exposures_ks)
    ex.push_back(pipeline::simulate_exposure(target, t, s.realisations, pipeline::exposure_seed(s.seed, t), s.schemes,
                                             s.indicators, s.core_radius_r500));
  const double t_real = since(t0);
  t0 = std::chrono::steady_clock::now();
  std::vector<pipeline::GoalAnswer> goals;
  pipeline::GoalAnswer all;
  pipeline::answer_goals(s, ex, goals, all);
  const double t_goals = since(t0);
  const double cpu = cpu_seconds() - c0;
  const double total = t_target + t_real + t_goals;
  std::printf("bench_plan: %d exposures x %d realisations, 256^2 pixels, %d threads, load average %.2f -> %.2f\n",
              nexp, nreal, core::max_threads(), load0, load1());
  std::printf("  target (scaled model, maps, expected observation): %.2f s (maps %.2f s, expected %.2f s)\n", t_target,
              target.seconds_maps, target.seconds_expected);
  std::printf("  realisations + measurement: %.2f s (%.1f ms per realisation)\n", t_real,
              1e3 * t_real / (nexp * nreal));
  std::printf("  goals + %d bootstrap resamples: %.3f s\n", s.bootstrap, t_goals);
  std::printf("  total %.2f s wall, %.2f s CPU (target <= 60 s on 2 cores: %s)\n", total, cpu,
              total <= 60.0 ? "met" : "NOT met");
  std::printf("  answer: w precision goal %s %.3g ks, all goals %s %.3g ks\n", goals[0].status.c_str(),
              goals[0].exposure_ks, all.status.c_str(), all.exposure_ks);
  fs::remove_all(work);
  return 0;
}
