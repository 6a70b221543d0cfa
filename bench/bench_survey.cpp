// Survey throughput: the simulated targets of the demo sample
// (demo_clusters/demo_sample.yaml without its observed listing: 11 targets)
// run from scratch with 1 and 2 concurrent targets (one OpenMP thread each),
// and, in ICMSCOPE_MPI builds with mpirun on the PATH, 2 ranks x 1 thread.
// Prints targets per minute, the speed-up and the scaling efficiency
// (speed-up / workers), and whether the catalogs are identical.
//
//   bench_survey [--source DIR] [--keep DIR] [--no-mpi]
#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <string>
#include <thread>
#include <vector>

#include <sys/resource.h>
#include <unistd.h>

#include "icmscope/config/survey_settings.hpp"
#include "icmscope/pipeline/survey_run.hpp"

namespace fs = std::filesystem;
using namespace icmscope;

namespace {

std::string read_file(const fs::path& p) {
  std::ifstream in(p);
  std::ostringstream s;
  s << in.rdbuf();
  return s.str();
}

std::string replace_all(std::string s, const std::string& a, const std::string& b) {
  for (std::size_t k = s.find(a); k != std::string::npos; k = s.find(a, k + b.size())) s.replace(k, a.size(), b);
  return s;
}

}  // namespace

int main(int argc, char** argv) {
  fs::path src = fs::path(__FILE__).parent_path().parent_path();
  fs::path work = fs::temp_directory_path() / ("icmscope_bench_survey_" + std::to_string(::getpid()));
  bool keep = false, mpi = true;
  for (int i = 1; i < argc; ++i) {
    if (!std::strcmp(argv[i], "--source") && i + 1 < argc) src = argv[++i];
    else if (!std::strcmp(argv[i], "--keep") && i + 1 < argc) {
      work = argv[++i];
      keep = true;
    } else if (!std::strcmp(argv[i], "--no-mpi")) mpi = false;
    else {
      std::fprintf(stderr, "usage: bench_survey [--source DIR] [--keep DIR] [--no-mpi]\n");
      return 2;
    }
  }
  fs::create_directories(work);
  // The demo sample's simulated part, with absolute paths.
  std::string text = read_file(src / "demo_clusters" / "demo_sample.yaml");
  std::string sample;
  std::istringstream in(text);
  for (std::string line; std::getline(in, line);)
    if (line.find("entries_csv") == std::string::npos) sample += line + "\n";
  sample = replace_all(sample, "model: models/", "model: " + (src / "demo_clusters" / "models").string() + "/");
  sample = replace_all(sample, "../config/", (src / "config").string() + "/");
  const fs::path file = work / "bench_sample.yaml";
  std::ofstream(file) << sample;
  const auto settings = config::load_survey(file.string());

  struct Run {
    std::string label;
    int workers;
    double seconds;
    std::string catalog;
  };
  std::vector<Run> runs;
  std::size_t n = 0;
  for (int threads : {1, 2}) {
    pipeline::SurveyOptions o;
    o.output_directory = (work / ("threads" + std::to_string(threads))).string();
    o.threads = threads;
    o.omp_threads = 1;
    o.restart = true;
    o.progress = "none";
    o.plots = false;
    pipeline::Log log(true);
    auto cpu = [] {
      rusage u{};
      getrusage(RUSAGE_SELF, &u);
      return u.ru_utime.tv_sec + u.ru_stime.tv_sec + 1e-6 * (u.ru_utime.tv_usec + u.ru_stime.tv_usec);
    };
    const double c0 = cpu();
    const auto t0 = std::chrono::steady_clock::now();
    const auto r = pipeline::run_survey(settings, o, log);
    const double s = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    const double used = cpu() - c0;
    n = r.targets;
    runs.push_back({std::to_string(threads) + " thread" + (threads > 1 ? "s" : " "), threads, s, read_file(r.catalog_csv)});
    std::printf("  %-22s %6.1f s   %6.2f targets/min   CPU %6.1f s (%.2f cores busy; %.1f CPU s per target)  (%zu failed)\n",
                runs.back().label.c_str(), s, 60.0 * n / s, used, used / s, used / n, r.failures.size());
    std::fflush(stdout);
  }
  const fs::path exe = fs::path(argv[0]).parent_path().parent_path() / "icmscope";
  if (mpi && pipeline::survey_mpi_available() && std::system("command -v mpirun > /dev/null 2>&1") == 0 &&
      fs::exists(exe)) {
    const fs::path out = work / "mpi2";
    const std::string cmd =
        "OMPI_ALLOW_RUN_AS_ROOT=1 OMPI_ALLOW_RUN_AS_ROOT_CONFIRM=1 OMPI_MCA_btl_vader_single_copy_mechanism=none "
        "OMPI_MCA_btl=self,vader mpirun --allow-run-as-root --oversubscribe --bind-to none -np 2 '" + exe.string() + "' survey '" +
        file.string() + "' --mpi --threads 1 --omp-threads 1 --restart --progress none --no-plots --output-dir '" +
        out.string() + "' > /dev/null 2>&1";
    const auto t0 = std::chrono::steady_clock::now();
    const int rc = std::system(cmd.c_str());
    const double s = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    if (rc == 0) {
      runs.push_back({"2 MPI ranks x 1", 2, s, read_file(out / "demo_catalog.csv")});
      std::printf("  %-22s %6.1f s   %6.2f targets/min\n", runs.back().label.c_str(), s, 60.0 * n / s);
    } else {
      std::printf("  2 MPI ranks: mpirun failed (status %d)\n", rc);
    }
  } else {
    std::printf("  MPI: not measured (%s)\n", !pipeline::survey_mpi_available() ? "build without ICMSCOPE_MPI"
                                                                               : "mpirun or icmscope not found");
  }
  std::string load = read_file("/proc/loadavg");
  if (!load.empty() && load.back() == '\n') load.pop_back();
  std::printf("\nsurvey benchmark: %zu simulated targets of the demo sample (cores: %u; load average now: %s)\n", n,
              std::thread::hardware_concurrency(), load.c_str());
  const double base = runs.front().seconds;
  for (const auto& r : runs) {
    const double speedup = base / r.seconds;
    std::printf("  %-22s %6.2f targets/min  speed-up %.2f  efficiency %.0f%%  catalog %s\n", r.label.c_str(),
                60.0 * n / r.seconds, speedup, 100.0 * speedup / r.workers,
                r.catalog == runs.front().catalog ? "identical" : "DIFFERS");
  }
  if (!keep) fs::remove_all(work);
  return 0;
}
