// Throughput of the analytic cluster synthesiser (cells/synth.hpp): a
// two-component merger model, n particles (default 1e6; argv[1] overrides),
// timed in full and for the k-nearest-neighbour support alone.
// Prints figures; not a test.
#include <chrono>
#include <cstdio>
#include <cstdlib>

#include "icmscope/cells/neighbour_support.hpp"
#include "icmscope/cells/synth.hpp"
#include "icmscope/core/blocked.hpp"

using namespace icmscope;

int main(int argc, char** argv) {
  const std::size_t n = argc > 1 ? std::strtoull(argv[1], nullptr, 10) : 1000000;
  cells::ClusterModel m;
  m.name = "bench";
  m.seed = 7;
  m.n_particles = n;
  cells::ClusterComponent a;
  a.name = "a";
  a.density.kind = cells::DensityKind::Vikhlinin06;
  a.density.v06.n0_cm3 = 5e-3;
  a.density.v06.r_c_kpc = 150;
  a.density.v06.alpha = 1.0;
  a.density.v06.beta = 0.6;
  a.density.v06.r_s_kpc = 1200;
  a.density.v06.epsilon = 3.0;
  a.density.v06.n02_cm3 = 3e-2;
  a.density.v06.r_c2_kpc = 20;
  a.temperature.kind = cells::TemperatureKind::Vikhlinin06;
  a.metallicity.kind = cells::MetallicityKind::Cored;
  a.offset_kpc = {-600, 0, 0};
  a.velocity_km_s = {800, 0, 0};
  a.sigma_km_s = 300;
  cells::ClusterComponent b = a;
  b.name = "b";
  b.offset_kpc = {600, 0, 0};
  b.velocity_km_s = {-800, 0, 0};
  m.components = {a, b};

  using clock = std::chrono::steady_clock;
  const auto t0 = clock::now();
  const cells::GasCells g = cells::synthesise(m);
  const auto t1 = clock::now();
  const std::vector<float> h = cells::neighbour_support_kpc(g.x, g.y, g.z, m.k_neighbours);
  const auto t2 = clock::now();
  const double ts = std::chrono::duration<double>(t1 - t0).count();
  const double tk = std::chrono::duration<double>(t2 - t1).count();
  std::printf("synth: %zu particles, %d threads, k = %d\n", g.size(), core::max_threads(), m.k_neighbours);
  std::printf("  synthesise (total)        %.3f s  (%.2f Mparticles/s)\n", ts, 1e-6 * double(n) / ts);
  std::printf("  k-NN support alone        %.3f s\n", tk);
  std::printf("  sampling + density (diff) %.3f s\n", ts - tk);
  return 0;
}
