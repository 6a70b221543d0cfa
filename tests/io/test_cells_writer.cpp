// Round trip of the project's own HDF5 cells layout, and its documented shape
// checked independently with h5py.
#include <catch2/catch.hpp>

#include <cmath>
#include <filesystem>
#include <sstream>

#include "icmscope/cells/gas_cells.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/core/random.hpp"
#include "icmscope/io/cells_reader.hpp"
#include "icmscope/io/cells_writer.hpp"
#include "io/py_util.hpp"
#include "test_support.hpp"

using namespace icmscope;
namespace fs = std::filesystem;

namespace {

cells::GasCells random_cells(std::size_t n, bool vel, bool flags, std::uint64_t seed) {
  core::RandomStream rng(seed, 0);
  cells::GasCells c;
  c.resize(n);
  if (vel) {
    c.vx.resize(n);
    c.vy.resize(n);
    c.vz.resize(n);
  }
  if (flags) c.flags.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    c.x[i] = static_cast<float>(2000.0 * rng.uniform() - 1000.0);
    c.y[i] = static_cast<float>(2000.0 * rng.uniform() - 1000.0);
    c.z[i] = static_cast<float>(2000.0 * rng.uniform() - 1000.0);
    c.mass[i] = static_cast<float>(1e8 * (1.0 + rng.uniform()));
    c.density[i] = static_cast<float>(1e4 * std::exp(8.0 * rng.uniform()));
    c.kT[i] = static_cast<float>(0.1 + 10.0 * rng.uniform());
    c.metallicity[i] = static_cast<float>(rng.uniform());
    c.support[i] = static_cast<float>(1.0 + 50.0 * rng.uniform());
    if (vel) {
      c.vx[i] = static_cast<float>(1000.0 * (rng.uniform() - 0.5));
      c.vy[i] = static_cast<float>(1000.0 * (rng.uniform() - 0.5));
      c.vz[i] = static_cast<float>(1000.0 * (rng.uniform() - 0.5));
    }
    if (flags) c.flags[i] = static_cast<std::uint8_t>(rng() & 3u);
  }
  return c;
}

void require_equal(const cells::GasCells& a, const cells::GasCells& b) {
  REQUIRE(a.size() == b.size());
  CHECK(a.kind == b.kind);
  CHECK(a.x == b.x);
  CHECK(a.y == b.y);
  CHECK(a.z == b.z);
  CHECK(a.vx == b.vx);
  CHECK(a.vy == b.vy);
  CHECK(a.vz == b.vz);
  CHECK(a.mass == b.mass);
  CHECK(a.density == b.density);
  CHECK(a.kT == b.kT);
  CHECK(a.metallicity == b.metallicity);
  CHECK(a.support == b.support);
  CHECK(a.flags == b.flags);
}

}  // namespace

TEST_CASE("own HDF5 layout round trip is exact", "[io][cells_writer]") {
  const auto dir = testing::scratch_dir("cells_writer_roundtrip");
  SECTION("mesh cells with velocities and flags, several chunks") {
    auto c = random_cells(10007, true, true, 11);
    c.kind = cells::CellKind::Mesh;
    const auto path = (dir / "mesh.h5").string();
    io::write_cells_hdf5(path, c, {{"seed", "11"}});
    auto map = io::own_layout_field_map();
    map.chunk_rows = 1000;  // 11 chunks, the last one partial
    io::CellsReadInfo info;
    const auto back = io::read_cells(path, map, cells::BadCellPolicy::Error, &info);
    require_equal(c, back);
    CHECK(info.rows_read == 10007);
    CHECK(info.kind == cells::CellKind::Mesh);
    CHECK(info.cells_dropped == 0);
  }
  SECTION("particles without velocities or flags") {
    const auto c = random_cells(500, false, false, 12);
    const auto path = (dir / "particles.hdf5").string();
    io::write_cells_hdf5(path, c);
    const auto back = io::read_cells(path, io::own_layout_field_map());
    require_equal(c, back);
    CHECK_FALSE(back.has_velocity());
    CHECK_FALSE(back.has_flags());
  }
  // No temporary files are left next to the outputs.
  for (const auto& e : fs::directory_iterator(dir)) CHECK(e.path().filename().string().find(".tmp-") == std::string::npos);
}

TEST_CASE("own HDF5 layout matches its documentation (read by h5py)", "[io][cells_writer][python]") {
  const auto dir = testing::scratch_dir("cells_writer_h5py");
  auto c = random_cells(321, true, true, 5);
  const auto path = (dir / "cells.h5").string();
  io::write_cells_hdf5(path, c, {{"config_hash", "abc123"}});
  // Independent reader: h5py (python3-h5py), the layout of cells_writer.hpp.
  const std::string code = R"PY(
import sys, h5py, numpy as np
f = h5py.File(sys.argv[1], 'r')
def s(v): return v.decode() if isinstance(v, bytes) else str(v)
g = f['cells']
print('program', s(f.attrs['program']))
print('hash', s(f.attrs['config_hash']))
print('layout', int(f.attrs['layout_version']))
print('units_has_kpc', int('kpc' in s(f.attrs['units'])))
print('kind', s(g.attrs['kind']))
print('count', int(g.attrs['count']))
print('pos_shape', *g['position'].shape)
print('vel_shape', *g['velocity'].shape)
for k in ['mass_msun', 'density_msun_kpc3', 'kT_keV', 'metallicity_solar', 'support_kpc', 'flags']:
    print('shape', k, *g[k].shape, g[k].dtype)
p = g['position'][:]
print('pos7', repr(float(p[7,0])), repr(float(p[7,1])), repr(float(p[7,2])))
print('kT7', repr(float(g['kT_keV'][7])))
print('flag7', int(g['flags'][7]))
)PY";
  const auto r = testing::run_python(dir, "check_layout", code, "'" + path + "'");
  INFO(r.out);
  REQUIRE(r.status == 0);
  std::istringstream in(r.out);
  std::string line;
  int shapes = 0;
  while (std::getline(in, line)) {
    std::istringstream ls(line);
    std::string key;
    ls >> key;
    if (key == "program") { std::string v; ls >> v; CHECK(v == "icmscope"); }
    if (key == "hash") { std::string v; ls >> v; CHECK(v == "abc123"); }
    if (key == "layout") { int v; ls >> v; CHECK(v == 1); }
    if (key == "units_has_kpc") { int v; ls >> v; CHECK(v == 1); }
    if (key == "kind") { std::string v; ls >> v; CHECK(v == "particles"); }
    if (key == "count") { long v; ls >> v; CHECK(v == 321); }
    if (key == "pos_shape" || key == "vel_shape") { long a, b; ls >> a >> b; CHECK(a == 321); CHECK(b == 3); }
    if (key == "shape") {
      std::string name, dtype;
      long n;
      ls >> name >> n >> dtype;
      CHECK(n == 321);
      CHECK(dtype == (name == "flags" ? "uint8" : "float32"));
      ++shapes;
    }
    if (key == "pos7") {
      double a, b, d;
      ls >> a >> b >> d;
      CHECK(a == static_cast<double>(c.x[7]));
      CHECK(b == static_cast<double>(c.y[7]));
      CHECK(d == static_cast<double>(c.z[7]));
    }
    if (key == "kT7") { double v; ls >> v; CHECK(v == static_cast<double>(c.kT[7])); }
    if (key == "flag7") { int v; ls >> v; CHECK(v == c.flags[7]); }
  }
  CHECK(shapes == 6);
}

TEST_CASE("cells writer refuses bad input and leaves nothing behind", "[io][cells_writer]") {
  const auto dir = testing::scratch_dir("cells_writer_errors");
  auto c = random_cells(10, false, false, 1);
  CHECK_THROWS_AS(io::write_cells_hdf5((dir / "no_such_dir" / "x.h5").string(), c), core::OutputError);
  c.kT.pop_back();
  CHECK_THROWS_AS(io::write_cells_hdf5((dir / "short.h5").string(), c), core::DomainError);
  CHECK(fs::is_empty(dir));
}
