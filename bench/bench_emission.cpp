// Emission throughput: Gaunt-table build, band-table build, per-cell lookup.
// Prints figures; not a test. Usage: bench_emission [n_cells]
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <memory>
#include <random>
#include <vector>

#include "icmscope/core/blocked.hpp"
#include "icmscope/emission/band_table.hpp"

using namespace icmscope::emission;
using clk = std::chrono::steady_clock;

static double since(clk::time_point t0) { return std::chrono::duration<double>(clk::now() - t0).count(); }

int main(int argc, char** argv) {
  const std::size_t n = argc > 1 ? static_cast<std::size_t>(std::atoll(argv[1])) : 20000000;
  std::printf("threads: %d\n", icmscope::core::max_threads());
  auto t0 = clk::now();
  auto gaunt = std::make_shared<const GauntTable>();
  std::printf("GauntTable build: %.3f s (%zu x %zu nodes)\n", since(t0), gaunt->n_u(), gaunt->n_g2());
  const ContinuumModel model(anders_grevesse_1989(), gaunt);
  FoldingSpec fold;
  fold.redshift = 0.1;
  fold.nH_cm2 = 3e20;
  t0 = clk::now();
  const BandTable table(model, BandSpec{0.5, 2.0}, fold);
  std::printf("BandTable build (0.5-2 keV, 200 kT x 7 Z, %zu energy nodes): %.3f s\n", table.n_quadrature_nodes(),
              since(t0));
  BandGridSpec g;
  g.bolometric = true;
  t0 = clk::now();
  const BandTable tb(model, BandSpec{0.5, 2.0}, fold, g);
  std::printf("BandTable build with bolometric: %.3f s\n", since(t0));

  std::vector<float> kT(n), Z(n);
  std::mt19937 rng(1);
  std::uniform_real_distribution<float> lt(-1.0f, 1.3f), uz(0.0f, 1.0f);
  for (std::size_t i = 0; i < n; ++i) {
    kT[i] = std::pow(10.0f, lt(rng));
    Z[i] = uz(rng);
  }
  std::vector<double> out(n);
  table.photon_coefficients(kT.data(), Z.data(), n, out.data());  // warm-up
  t0 = clk::now();
  table.photon_coefficients(kT.data(), Z.data(), n, out.data());
  const double tb_s = since(t0);
  double acc = 0;
  t0 = clk::now();
  for (std::size_t i = 0; i < n; ++i) acc += table.photon_coefficient(kT[i], Z[i]);
  const double ts_s = since(t0);
  std::printf("photon_coefficients batch: %.2f ns/cell; scalar loop (1 thread): %.2f ns/cell (checksum %.6e)\n",
              tb_s / n * 1e9, ts_s / n * 1e9, acc);
  return 0;
}
