// Projection throughput: point and kernel deposit of 1e6 and 1e7 gas cells
// onto a 1024^2 map, 1 and 2 threads, for smoothing mixes from sub-pixel to
// tens of pixels; the numpy np.bincount point deposit of the same cells as a
// baseline (run in the same process tree with /usr/bin/python3); peak memory
// against the cells' own size. Prints a table; not a test.
//
// Usage: bench_projection [--quick] [--reps N] [--numpy-script PATH]
//   --quick   1e6 cells only (no 1e7 runs)
#include <sys/resource.h>
#include <unistd.h>

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <fstream>
#include <string>
#include <vector>

#include "icmscope/cells/gas_cells.hpp"
#include "icmscope/core/random.hpp"
#include "icmscope/projection/line_of_sight.hpp"
#include "icmscope/projection/projector.hpp"

namespace pj = icmscope::projection;
using icmscope::cells::GasCells;

namespace {

constexpr int kNx = 1024;
constexpr double kPixelKpc = 2.0;     // field 2.048 Mpc
constexpr double kPlummerKpc = 200.0; // scale radius of the cell distribution

double now() {
  return std::chrono::duration<double>(std::chrono::steady_clock::now().time_since_epoch()).count();
}

double peak_rss_mb() {
  rusage r{};
  getrusage(RUSAGE_SELF, &r);
  return static_cast<double>(r.ru_maxrss) / 1024.0;  // Linux: kB
}

double current_rss_mb() {
  std::ifstream f("/proc/self/statm");
  long pages = 0, resident = 0;
  f >> pages >> resident;
  return static_cast<double>(resident) * static_cast<double>(sysconf(_SC_PAGESIZE)) / (1024.0 * 1024.0);
}

std::string loadavg() {
  std::ifstream f("/proc/loadavg");
  std::string a, b, c;
  f >> a >> b >> c;
  return a + " " + b + " " + c;
}

// A cluster-like cell set: positions from a Plummer sphere truncated at
// 1.5 Mpc (random order, as after a shuffle), all GasCells arrays filled.
GasCells make_cells(std::size_t n, std::uint64_t seed) {
  GasCells c;
  c.resize(n);
  c.vx.resize(n);
  c.vy.resize(n);
  c.vz.resize(n);
  c.flags.assign(n, 0);
  icmscope::core::RandomStream rng(seed, 0);
  for (std::size_t i = 0; i < n; ++i) {
    double r;
    do {
      const double m = std::max(rng.uniform(), 1e-12);
      r = kPlummerKpc / std::sqrt(std::pow(m, -2.0 / 3.0) - 1.0);
    } while (!(r < 1500.0));
    const double ct = 2.0 * rng.uniform() - 1.0, st = std::sqrt(1.0 - ct * ct), ph = 6.283185307179586 * rng.uniform();
    c.x[i] = static_cast<float>(r * st * std::cos(ph));
    c.y[i] = static_cast<float>(r * st * std::sin(ph));
    c.z[i] = static_cast<float>(r * ct);
    c.vx[i] = c.vy[i] = c.vz[i] = 0.0f;
    c.mass[i] = 1e8f;
    c.density[i] = static_cast<float>(1e7 / std::pow(1.0 + r * r / (kPlummerKpc * kPlummerKpc), 2.5));
    c.kT[i] = static_cast<float>(2.0 + 6.0 * rng.uniform());
    c.metallicity[i] = 0.3f;
    c.support[i] = 0.0f;
  }
  return c;
}

// Support radii log-uniform in [lo, hi] pixels (0, 0: none).
void set_support(GasCells& c, double lo, double hi, std::uint64_t seed) {
  icmscope::core::RandomStream rng(seed, 1);
  for (auto& h : c.support)
    h = hi > 0.0 ? static_cast<float>(kPixelKpc * lo * std::exp(std::log(hi / lo) * rng.uniform())) : 0.0f;
}

struct Mix {
  const char* name;
  double lo, hi;  // support radius range, pixels
};

struct Result {
  double seconds = 0.0;
  pj::ProjectionStats stats;
  double total = 0.0;
};

Result run(const pj::ProjectionGrid& g, const pj::PlaneCells& cells, const std::vector<pj::WeightChannel>& ch,
           pj::DepositKernel k, int threads, int reps) {
  pj::ProjectorSettings s;
  s.kernel = k;
  s.threads = threads;
  Result r;
  r.seconds = 1e300;
  for (int i = 0; i < reps; ++i) {
    const double t0 = now();
    const auto maps = pj::project(g, cells, ch, s, &r.stats);
    const double t = now() - t0;
    r.seconds = std::min(r.seconds, t);
    double tot = 0.0;
    for (double v : maps[0]) tot += v;
    r.total = tot;
  }
  return r;
}

struct NumpyResult {
  double seconds = 0.0;
  double total = 0.0;
  long inside = 0;
  bool ok = false;
};

NumpyResult numpy_baseline(const std::string& script, const pj::ProjectionGrid& g, const std::vector<float>& u,
                           const std::vector<float>& v, const std::vector<double>& w, int reps) {
  NumpyResult r;
  char tmpl[] = "/tmp/icmscope_bench_XXXXXX";
  const int fd = mkstemp(tmpl);
  if (fd < 0) return r;
  close(fd);
  {
    std::ofstream f(tmpl, std::ios::binary);
    f.write(reinterpret_cast<const char*>(u.data()), static_cast<std::streamsize>(u.size() * sizeof(float)));
    f.write(reinterpret_cast<const char*>(v.data()), static_cast<std::streamsize>(v.size() * sizeof(float)));
    f.write(reinterpret_cast<const char*>(w.data()), static_cast<std::streamsize>(w.size() * sizeof(double)));
  }
  char cmd[1024];
  std::snprintf(cmd, sizeof cmd, "/usr/bin/python3 %s %s %zu %d %d %.17g %.17g %.17g %d", script.c_str(), tmpl,
                u.size(), g.nx, g.ny, g.u_min(), g.v_min(), g.pixel_kpc, reps);
  FILE* p = popen(cmd, "r");
  if (p) {
    r.ok = std::fscanf(p, "%lf %lf %ld", &r.seconds, &r.total, &r.inside) == 3;
    r.ok = (pclose(p) == 0) && r.ok;
  }
  std::remove(tmpl);
  return r;
}

std::string script_default() {
  std::string f = __FILE__;
  const auto slash = f.rfind('/');
  return (slash == std::string::npos ? std::string(".") : f.substr(0, slash)) + "/numpy_point_deposit.py";
}

void row(const char* n, const char* mix, const char* kernel, int K, int threads, const Result& r, double ncells,
         double numpy_rate) {
  const double mcs = ncells / r.seconds / 1e6;
  const double mups = static_cast<double>(r.stats.pixel_updates) / r.seconds / 1e6;
  std::printf("%-5s %-22s %-8s %2d %3d %10.1f %9.1f %9.1f %9.1f %8.2fx\n", n, mix, kernel, K, threads,
              1e3 * r.seconds, mcs, mups, static_cast<double>(r.stats.pixel_updates) / ncells,
              numpy_rate > 0.0 ? mcs / numpy_rate : 0.0);
  std::fflush(stdout);
}

}  // namespace

int main(int argc, char** argv) {
  bool quick = false;
  int reps = 3;
  std::string script = script_default();
  for (int i = 1; i < argc; ++i) {
    if (!std::strcmp(argv[i], "--quick")) quick = true;
    else if (!std::strcmp(argv[i], "--reps") && i + 1 < argc) reps = std::max(1, std::atoi(argv[++i]));
    else if (!std::strcmp(argv[i], "--numpy-script") && i + 1 < argc) script = argv[++i];
    else {
      std::fprintf(stderr, "usage: bench_projection [--quick] [--reps N] [--numpy-script PATH]\n");
      return 2;
    }
  }
  pj::ProjectionGrid g;
  g.nx = g.ny = kNx;
  g.pixel_kpc = kPixelKpc;
  const std::vector<Mix> mixes = {
      {"pixel (H 0.25-1 px)", 0.25, 1.0},
      {"few px (H 1-4 px)", 1.0, 4.0},
      {"tens px (H 10-40 px)", 10.0, 40.0},
  };
  std::printf("icmscope projection benchmark: %d x %d pixels of %.1f kpc; cells in a Plummer sphere (a = %.0f kpc),\n"
              "random order; H log-uniform over each mix's range (support radius in pixels); best of %d.\n"
              "load average at start: %s  (this machine is shared: figures are wall-clock)\n\n",
              kNx, kNx, kPixelKpc, kPlummerKpc, reps, loadavg().c_str());
  std::printf("%-5s %-22s %-8s %2s %3s %10s %9s %9s %9s %9s\n", "cells", "smoothing mix", "kernel", "K", "thr",
              "time[ms]", "Mcells/s", "Mupd/s", "upd/cell", "vs numpy");

  const std::vector<std::size_t> sizes = quick ? std::vector<std::size_t>{1000000}
                                               : std::vector<std::size_t>{1000000, 10000000};
  double peak_before_projection = 0.0, cells_mb_big = 0.0, rss_before_big = 0.0;
  for (std::size_t n : sizes) {
    const char* nlabel = n == 1000000 ? "1e6" : "1e7";
    GasCells cells = make_cells(n, 42 + n);
    const double cells_mb = static_cast<double>(cells.bytes()) / (1024.0 * 1024.0);
    const auto los = pj::LineOfSight::along_axis(pj::Axis::Z);
    pj::PlaneCoordinates pc = los.to_plane(cells, Eigen::Vector3d::Zero());
    std::vector<double> w(n);
    {
      icmscope::core::RandomStream rng(7, 3);
      for (auto& x : w) x = rng.uniform();
    }
    const pj::PlaneCells plane{n, pc.u.data(), pc.v.data(), cells.support.data(), nullptr};
    const std::vector<pj::WeightChannel> one = {pj::WeightChannel(w)};
    const int r = n >= 10000000 ? std::max(1, reps - 1) : reps;

    // numpy baseline (point deposit of the same plane coordinates and weights).
    const NumpyResult np = numpy_baseline(script, g, pc.u, pc.v, w, r);
    const double np_rate = np.ok ? static_cast<double>(n) / np.seconds / 1e6 : 0.0;
    if (np.ok)
      std::printf("%-5s %-22s %-8s %2d %3d %10.1f %9.1f %9s %9s %8.2fx\n", nlabel, "numpy np.bincount", "point", 1, 1,
                  1e3 * np.seconds, np_rate, "-", "1.0", 1.0);
    else
      std::printf("%-5s numpy baseline failed (script %s)\n", nlabel, script.c_str());

    if (n >= 10000000) {
      rss_before_big = current_rss_mb();
      cells_mb_big = cells_mb;
    }
    for (int th : {1, 2}) {
      const Result rp = run(g, plane, one, pj::DepositKernel::Point, th, r);
      row(nlabel, "point (H ignored)", "point", 1, th, rp, static_cast<double>(n), np_rate);
      if (np.ok && th == 1 && std::abs(rp.total - np.total) > 1e-9 * np.total)
        std::printf("      note: map totals differ from numpy: %.17g vs %.17g (cells on pixel edges)\n", rp.total,
                    np.total);
    }
    for (const auto& mix : mixes) {
      if (n >= 10000000 && mix.lo >= 10.0 && quick) continue;
      set_support(cells, mix.lo, mix.hi, 5);
      const int rr = (mix.lo >= 10.0 && n >= 10000000) ? 1 : r;
      for (int th : {1, 2}) {
        const Result rk = run(g, plane, one, pj::DepositKernel::CubicSpline, th, rr);
        row(nlabel, mix.name, "cubic", 1, th, rk, static_cast<double>(n), np_rate);
      }
      if (n < 10000000) {
        // Pipeline-like: 8 channels deposited at once (count rate, SB, EM,
        // sum w T for three weightings, their weights...): weights computed
        // once per cell-pixel pair.
        std::vector<std::vector<double>> w8(8, w);
        std::vector<pj::WeightChannel> eight;
        for (const auto& x : w8) eight.emplace_back(x);
        const Result r8 = run(g, plane, eight, pj::DepositKernel::CubicSpline, 2, r);
        row(nlabel, mix.name, "cubic", 8, 2, r8, static_cast<double>(n), np_rate);
        const Result rw = run(g, plane, one, pj::DepositKernel::WendlandC2, 2, r);
        row(nlabel, mix.name, "wendland", 1, 2, rw, static_cast<double>(n), np_rate);
      }
    }
    if (n < 10000000) peak_before_projection = peak_rss_mb();
    std::printf("\n");
  }

  // Peak memory: the process holds the cells, their plane coordinates, one
  // weight channel, the projector's working memory and the map.
  const double peak = peak_rss_mb();
  std::printf("memory (RSS high-water mark of the whole run, MiB): %.0f\n", peak);
  if (cells_mb_big > 0.0) {
    std::printf("  1e7 cells' own size (GasCells::bytes, 11 float arrays + flags): %.0f MiB\n", cells_mb_big);
    std::printf("  RSS before the 1e7 projections (cells + u, v + weights + 1e6 leftovers): %.0f MiB\n",
                rss_before_big);
    std::printf("  peak / cells' own size: %.2f; projection overhead (peak - RSS before) / cells: %.2f\n",
                peak / cells_mb_big, (peak - rss_before_big) / cells_mb_big);
  } else {
    std::printf("  (quick run: peak after the 1e6 section %.0f MiB)\n", peak_before_projection);
  }
  std::printf("load average at end: %s\n", loadavg().c_str());
  return 0;
}
