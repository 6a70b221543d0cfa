// Throughput of the gas-cells I/O (io/cells_writer.hpp, io/cells_reader.hpp):
// n cells (default 4e6; argv[1] overrides) written in the own HDF5 layout,
// read back with the own field map, and read through a Gadget-style map
// (comoving h-scaled units, internal energy -> kT, mass fraction -> solar),
// plus the peak resident memory of the reading process (run as a child)
// against the size of the float arrays.
// Prints figures; not a test.
#include <sys/resource.h>

#include <chrono>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <string>

#include "icmscope/core/random.hpp"
#include "icmscope/io/cells_reader.hpp"
#include "icmscope/io/cells_writer.hpp"

using namespace icmscope;

namespace {

double seconds_since(std::chrono::steady_clock::time_point t0) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
}

double peak_rss_mb() {
  rusage u{};
  getrusage(RUSAGE_SELF, &u);
  return static_cast<double>(u.ru_maxrss) / 1024.0;  // Linux: kilobytes
}

}  // namespace

int main(int argc, char** argv) {
  const std::size_t n = argc > 1 ? std::strtoull(argv[1], nullptr, 10) : 4000000;
  const std::string dir = argc > 2 ? argv[2] : std::filesystem::temp_directory_path().string();
  const std::string mode = argc > 3 ? argv[3] : "all";
  const std::string path = dir + "/bench_cells_io.h5";

  if (mode == "all") {
    cells::GasCells c;
    c.resize(n);
    c.vx.resize(n);
    c.vy.resize(n);
    c.vz.resize(n);
    core::RandomStream rng(1, 0);
    for (std::size_t i = 0; i < n; ++i) {
      c.x[i] = static_cast<float>(rng.uniform() * 1000);
      c.y[i] = static_cast<float>(rng.uniform() * 1000);
      c.z[i] = static_cast<float>(rng.uniform() * 1000);
      c.vx[i] = c.vy[i] = c.vz[i] = 1.0f;
      c.mass[i] = 1e7f;
      c.density[i] = static_cast<float>(1e4 + 1e6 * rng.uniform());
      c.kT[i] = static_cast<float>(0.5 + 8 * rng.uniform());
      c.metallicity[i] = 0.3f;
      c.support[i] = static_cast<float>(5 + 20 * rng.uniform());
    }
    const double cells_mb = static_cast<double>(c.bytes()) / 1e6;
    std::printf("float arrays of %zu cells with velocities: %.0f MB\n", n, cells_mb);
    const auto t0 = std::chrono::steady_clock::now();
    io::write_cells_hdf5(path, c);
    const double tw = seconds_since(t0);
    std::printf("write  %zu cells: %.3f s  (%.1f Mcells/s, %.0f MB/s of float arrays)\n", n, tw, n / tw / 1e6,
                cells_mb / tw);
  }
  if (mode == "all") {
    // Read in a fresh process so that its peak memory is the reader's alone.
    std::fflush(stdout);
    const std::string cmd = std::string(argv[0]) + " " + std::to_string(n) + " '" + dir + "' read";
    const int rc = std::system(cmd.c_str());
    std::filesystem::remove(path);
    return rc == 0 ? 0 : 1;
  }
  {
    const auto t0 = std::chrono::steady_clock::now();
    const auto c = io::read_cells(path, io::own_layout_field_map());
    const double tr = seconds_since(t0);
    std::printf("read   own layout: %.3f s  (%.1f Mcells/s)\n", tr, c.size() / tr / 1e6);
  }
  {
    // The same file read as if it were comoving and h-scaled, with kT treated
    // as an internal energy: exercises every per-cell conversion.
    cells::FieldMap m;
    m.position = {"cells/position", {}, 1.0, 1.0, -1.0, false};
    m.velocity = {"cells/velocity", {}, 1.0, 0.5, 0.0, false};
    m.mass = {"cells/mass_msun", 1.0, 0.0, -1.0, false};
    m.density = {"cells/density_msun_kpc3", 1.0, -3.0, 2.0, false};
    m.internal_energy = {"cells/kT_keV", 1e4, 0.0, 0.0, false};
    m.metallicity = {"cells/metallicity_solar", 0.02, 0.0, 0.0, false};
    m.solar_metal_mass_fraction = cells::kSolarZAndersGrevesse1989;
    m.smoothing_length = {"cells/support_kpc", 1.0, 1.0, -1.0, false};
    m.scale_factor = 0.8;
    m.hubble_h = 0.7;
    const auto t0 = std::chrono::steady_clock::now();
    const auto c = io::read_cells(path, m);
    const double tr = seconds_since(t0);
    std::printf("read   Gadget-style conversion: %.3f s  (%.1f Mcells/s)\n", tr, c.size() / tr / 1e6);
  }
  std::printf("peak RSS of the reading process: %.0f MB\n", peak_rss_mb());
  return 0;
}
