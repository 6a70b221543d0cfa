// Throughput of the morphology measurement: all indicators + 100 realisations
// on a mock counts image (beta model + clump + flat background, a chip gap of
// zero exposure, two masked point sources) at 512^2 and 2048^2.
// Usage: bench_morphology [realisations=100] [threads=2]
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <ctime>

#include "icmscope/core/random.hpp"
#include "icmscope/morphology/indicators.hpp"
#include "icmscope/morphology/poisson.hpp"

using namespace icmscope;
using namespace icmscope::morphology;

namespace {

MeasureInput mock(int n, double kpc_per_pixel, double total_counts, std::uint64_t seed) {
  const double c = 0.5 * (n - 1);
  const double rc = 120.0 / kpc_per_pixel, beta = 2.0 / 3.0;
  core::ImageD mu(n, n, 0.0);
  double s = 0.0;
  for (int iy = 0; iy < n; ++iy)
    for (int ix = 0; ix < n; ++ix) {
      const double dx = ix - c, dy = iy - c;
      const double ex = dx - 250.0 / kpc_per_pixel, ey = dy - 120.0 / kpc_per_pixel;
      double v = std::pow(1.0 + (dx * dx / 1.2 + dy * dy / 0.85) / (rc * rc), 0.5 - 3 * beta);
      v += 0.15 * std::exp(-0.5 * (ex * ex + ey * ey) / std::pow(60.0 / kpc_per_pixel, 2));
      mu(ix, iy) = v;
      s += v;
    }
  const double bkg = 2e-3 * total_counts / (n * n);
  MeasureInput in;
  in.exposure = core::ImageD(n, n, 1.0e5);
  in.mask.assign(static_cast<std::size_t>(n) * n, 1);
  for (int iy = 0; iy < n; ++iy)  // chip gap: 6 px (at 512) strip of zero exposure
    for (int ix = static_cast<int>(c + 0.3 * n); ix < static_cast<int>(c + 0.3 * n) + n / 85 + 1; ++ix)
      in.exposure->operator()(ix, iy) = 0.0;
  for (auto ps : {std::pair<double, double>{c - 0.2 * n, c + 0.1 * n}, {c + 0.05 * n, c - 0.25 * n}})
    for (int iy = 0; iy < n; ++iy)
      for (int ix = 0; ix < n; ++ix)
        if (std::hypot(ix - ps.first, iy - ps.second) < n / 100.0 + 1) in.mask[static_cast<std::size_t>(iy) * n + ix] = 0;
  core::RandomStream rng(seed, 0);
  in.counts = core::ImageD(n, n, 0.0);
  in.expected = core::ImageD(n, n, 0.0);
  for (std::size_t i = 0; i < mu.size(); ++i) {
    const double m = mu.pixels()[i] * total_counts / s * (in.exposure->pixels()[i] > 0 ? 1.0 : 0.0) + bkg;
    in.expected->pixels()[i] = m;
    in.counts.pixels()[i] = poisson_draw(m, rng);
  }
  in.background_level = bkg;
  in.kpc_per_pixel = kpc_per_pixel;
  return in;
}

void run(int n, double kpp, int nreal, int threads) {
  const MeasureInput in = mock(n, kpp, 2e5, 42);
  MeasureSettings s = default_measure_settings(kpp, 1000.0);
  s.realisations = nreal;
  s.threads = threads;
  s.presets = {"cassano2010", "p3_two_class", "w_two_class"};
  // Warm-up (page faults, first allocation).
  MeasureSettings s0 = s;
  s0.realisations = 0;
  const auto t0 = std::chrono::steady_clock::now();
  const std::clock_t c0 = std::clock();
  const Indicators raw = measure(in, s0);
  const auto t1 = std::chrono::steady_clock::now();
  const std::clock_t c1 = std::clock();
  const Indicators ind = measure(in, s);
  const auto t2 = std::chrono::steady_clock::now();
  const std::clock_t c2 = std::clock();
  const double t_raw = std::chrono::duration<double>(t1 - t0).count();
  const double t_all = std::chrono::duration<double>(t2 - t1).count();
  const double cpu_raw = double(c1 - c0) / CLOCKS_PER_SEC, cpu_all = double(c2 - c1) / CLOCKS_PER_SEC;
  // CPU time is reported too: on a shared machine the wall time includes other load.
  std::printf("%5d^2  R500 = %.0f px  crop %dx%d\n", n, 1000.0 / kpp, ind.crop_nx, ind.crop_ny);
  std::printf("   raw only: wall %.3f s, cpu %.3f s\n", t_raw, cpu_raw);
  std::printf("   raw + %d realisations on %d threads: wall %.3f s, cpu %.3f s; cpu per realisation %.1f ms;"
              " ideal wall on %d idle cores %.2f s\n",
              nreal, threads, t_all, cpu_all, 1e3 * (cpu_all - cpu_raw) / std::max(1, nreal), threads,
              cpu_raw + (cpu_all - cpu_raw) / threads);
  for (const char* name : {"c", "w", "P3/P0", "A", "A_phot", "gini", "M20", "S", "ellipticity"}) {
    const NamedEstimate* e = ind.find(name, name[0] == 'c' ? "100/500 kpc" : "");
    if (name[0] == 'P' || name[0] == 'w') e = ind.find(name, "R500");
    if (!e) continue;
    std::printf("   %-12s %-12s raw %-12.5g corrected %-12.5g sigma %-10.3g\n", name, e->aperture.c_str(), e->value.raw,
                e->value.corrected, e->value.sigma);
  }
  for (const auto& c : ind.classes) std::printf("   class %-14s %s\n", c.scheme.c_str(), c.label.c_str());
  (void)raw;
}

}  // namespace

int main(int argc, char** argv) {
  const int nreal = argc > 1 ? std::atoi(argv[1]) : 100;
  const int threads = argc > 2 ? std::atoi(argv[2]) : 2;
  run(512, 4.5, nreal, threads);
  run(2048, 4.5 / 4, nreal, threads);
  return 0;
}
