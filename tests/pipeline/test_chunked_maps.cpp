// Chunked reading + projection (pipeline::stream_physical_maps,
// io::CellsChunkReader, pipeline::MapAccumulator) against the all-in-memory
// path (io::read_cells + pipeline::make_physical_maps): the maps must be
// bitwise identical for HDF5, FITS and CSV inputs, for read chunks that do
// not divide the cell count, for deposit blocks that do not divide it either,
// and for 1 and 2 threads (deterministic fixed-block accumulation: the
// project's rule, core/blocked.hpp and projection/projector.hpp).
#include <catch2/catch.hpp>

#include <cmath>
#include <cstdio>
#include <fstream>
#include <limits>
#include <numeric>
#include <string>
#include <vector>

#ifdef _OPENMP
#include <omp.h>
#endif

#include "icmscope/cells/synth.hpp"
#include "icmscope/config/map_settings.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/io/cells_reader.hpp"
#include "icmscope/io/cells_writer.hpp"
#include "icmscope/io/fits_table.hpp"
#include "icmscope/pipeline/physical_maps.hpp"
#include "test_support.hpp"

using namespace icmscope;
using Catch::Matchers::Contains;
namespace fs = std::filesystem;

namespace {

// A small beta-model cluster with a star-forming flag on every 7th cell (so
// the selection matters) and n cells (not a round number).
cells::GasCells test_cells(std::size_t n) {
  cells::ClusterModel m;
  m.name = "chunk-test";
  m.seed = 20261201;
  m.n_particles = n;
  cells::ClusterComponent c;
  c.density.kind = cells::DensityKind::Beta;
  c.density.beta.n_e0_cm3 = 1e-2;
  c.density.beta.r_c_kpc = 150.0;
  c.density.beta.beta = 2.0 / 3.0;
  c.temperature.kind = cells::TemperatureKind::Isothermal;
  c.temperature.kT_keV = 4.0;
  c.metallicity.Z_solar = 0.3;
  c.r_max_kpc = 1500.0;
  m.components.push_back(c);
  auto gas = cells::synthesise(m);
  gas.vx.clear();
  gas.vy.clear();
  gas.vz.clear();
  gas.flags.assign(gas.size(), 0);
  for (std::size_t i = 0; i < gas.size(); i += 7) gas.flags[i] = cells::kFlagStarForming;
  // A few cold cells (below the selection's min_kT_keV) and a spread of temperatures.
  for (std::size_t i = 0; i < gas.size(); ++i) gas.kT[i] = static_cast<float>(1.0 + 6.0 * ((i * 2654435761u) % 1000) / 1000.0);
  return gas;
}

config::MapRunSettings map_settings() {
  config::MapRunSettings s;
  s.target.name = "chunk-test";
  s.target.redshift = 0.1;
  s.target.centre_kpc = {10.0, -20.0, 5.0};
  s.emission.nH_cm2 = 2e20;
  s.emission.warn_fraction = 1.0;
  s.view.nx = 80;
  s.view.ny = 72;
  s.view.pixel_arcsec = 20.0;
  s.view.depth_kpc = 2400.0;  // a slab: cuts some cells
  s.view.axis = "angles";
  s.view.theta_deg = 30.0;
  s.view.phi_deg = 50.0;
  s.selection.min_kT_keV = 1.3;
  s.selection.max_radius_kpc = 1400.0;
  return s;
}

struct Ctx {
  cosmo::Cosmology cosmo;
  std::shared_ptr<const emission::SpectralModel> model;
  emission::BandTable table;
  explicit Ctx(const config::MapRunSettings& s)
      : cosmo(pipeline::make_cosmology(s.cosmology)),
        model(pipeline::make_spectral_model(s.emission)),
        table(pipeline::make_band_table(*model, s.emission, s.target.redshift)) {}
};

// Field map for the FITS and CSV files: scalar columns in internal units.
cells::FieldMap column_map() {
  cells::FieldMap m;
  m.kind = cells::CellKind::Particles;
  m.position.components = {"x", "y", "z"};
  m.mass.source = "mass";
  m.density.source = "density";
  m.temperature.source = "kT";
  m.metallicity.source = "metal";
  m.metallicity_convention = cells::MetallicityConvention::Solar;
  m.smoothing_length.source = "H";
  m.smoothing_convention = cells::SmoothingConvention::Support;
  m.flags.source = "flags";
  return m;
}

void write_fits(const std::string& path, const cells::GasCells& g) {
  io::FitsTable t;
  t.extname = "CELLS";
  auto col = [&](const char* name, const std::vector<float>& v) {
    io::FitsColumn c;
    c.name = name;
    c.data = std::vector<double>(v.begin(), v.end());  // float -> double is exact
    t.columns.push_back(c);
  };
  col("x", g.x);
  col("y", g.y);
  col("z", g.z);
  col("mass", g.mass);
  col("density", g.density);
  col("kT", g.kT);
  col("metal", g.metallicity);
  col("H", g.support);
  io::FitsColumn f;
  f.name = "flags";
  f.data = std::vector<long long>(g.flags.begin(), g.flags.end());
  t.columns.push_back(f);
  io::write_fits_tables(path, {t});
}

// %.9g round-trips every float exactly (9 significant digits suffice for binary32).
void write_csv(const std::string& path, const cells::GasCells& g) {
  std::FILE* f = std::fopen(path.c_str(), "w");
  REQUIRE(f);
  std::fprintf(f, "# chunked-reading test cells\nx,y,z,mass,density,kT,metal,H,flags\n");
  for (std::size_t i = 0; i < g.size(); ++i)
    std::fprintf(f, "%.9g,%.9g,%.9g,%.9g,%.9g,%.9g,%.9g,%.9g,%d\n", g.x[i], g.y[i], g.z[i], g.mass[i], g.density[i],
                 g.kT[i], g.metallicity[i], g.support[i], int(g.flags[i]));
  std::fclose(f);
}

void require_same(const pipeline::PhysicalMaps& a, const pipeline::PhysicalMaps& b) {
  CHECK(a.rate.pixels() == b.rate.pixels());
  CHECK(a.sb_energy.pixels() == b.sb_energy.pixels());
  CHECK(a.em.pixels() == b.em.pixels());
  CHECK(a.t_ew.pixels() == b.t_ew.pixels());
  CHECK(a.t_sl.pixels() == b.t_sl.pixels());
  CHECK(a.t_mw.pixels() == b.t_mw.pixels());
  CHECK(a.gas_mass.pixels() == b.gas_mass.pixels());
}

void set_threads(int t) {
#ifdef _OPENMP
  omp_set_num_threads(t);
#else
  (void)t;
#endif
}

}  // namespace

TEST_CASE("chunked projection of HDF5, FITS and CSV files equals the all-in-memory maps bitwise", "[maps][chunked]") {
  const auto dir = testing::scratch_dir("chunked_maps");
  const auto gas = test_cells(7919);  // prime: no chunk or block size divides it
  REQUIRE(gas.size() == 7919);
  const std::string h5 = (dir / "cells.h5").string(), fits = (dir / "cells.fits").string(),
                    csv = (dir / "cells.csv").string();
  io::write_cells_hdf5(h5, gas);
  write_fits(fits, gas);
  write_csv(csv, gas);
  auto s = map_settings();
  Ctx ctx(s);
  pipeline::Log log(true);

  for (const auto& [file, fields] : {std::make_pair(h5, io::own_layout_field_map()), std::make_pair(fits, column_map()),
                                     std::make_pair(csv, column_map())}) {
    config::CellSourceSettings src;
    src.cells_file = file;
    src.fields = fields;
    src.fields.chunk_rows = 1000;
    // The file reads back the cells exactly (the comparisons below are then
    // also against the in-memory cells).
    const auto back = io::read_cells(file, fields);
    REQUIRE(back.size() == gas.size());
    CHECK(back.x == gas.x);
    CHECK(back.support == gas.support);
    CHECK(back.flags == gas.flags);
    for (std::size_t block : {std::size_t{1000}, std::size_t{4096}, pipeline::kMapBlockCells}) {
      pipeline::MapOptions opt;
      opt.block_cells = block;
      set_threads(1);
      opt.threads = 1;
      pipeline::MapStats st_ref;
      const auto ref = pipeline::make_physical_maps(back, s, ctx.cosmo, ctx.table, log, &st_ref, opt);
      REQUIRE(ref.rate.sum() > 0.0);
      REQUIRE(st_ref.cells_selected < gas.size());  // the selection removed cells
      REQUIRE(st_ref.cells_selected > gas.size() / 2);
      for (std::size_t chunk : {std::size_t{1}, std::size_t{777}, std::size_t{1000}, std::size_t{5000},
                                std::size_t{1} << 20}) {
        if (chunk == 1 && block != 1000) continue;  // one-row chunks: the slowest case, once per file
        for (int threads : {1, 2}) {
          INFO(file << ": deposit block " << block << ", read chunk " << chunk << ", " << threads << " thread(s)");
          set_threads(threads);
          opt.threads = threads;
          pipeline::MapStats st;
          const auto m = pipeline::stream_physical_maps(src, chunk, s, ctx.cosmo, ctx.table, log, &st, opt);
          require_same(m, ref);
          CHECK(st.cells_read == gas.size());
          CHECK(st.cells_selected == st_ref.cells_selected);
          CHECK(st.total_rate == st_ref.total_rate);
          CHECK(st.cells_in_field == st_ref.cells_in_field);
          if (chunk == 1) break;
        }
      }
    }
  }
  set_threads(2);
}

TEST_CASE("deposit blocks change only the rounding: maps agree to 1e-12 and conserve the rate", "[maps][chunked]") {
  // Invariant: the block cut reorders the additions, so the maps differ from
  // the one-block maps by rounding only (double accumulation of float
  // weights: relative 1e-12 is far above the ~1e-15 expected, far below any
  // real error); and each map total equals the sum over deposited cells.
  const auto gas = test_cells(7919);
  auto s = map_settings();
  s.view.depth_kpc = std::numeric_limits<double>::infinity();
  s.selection = config::SelectionSettings();
  s.selection.exclude_star_forming = false;
  s.view.pixel_arcsec = 60.0;  // field wider than the cluster: every cell deposited whole
  Ctx ctx(s);
  pipeline::Log log(true);
  pipeline::MapOptions one, many;
  many.block_cells = 333;
  pipeline::MapStats st1, st2;
  const auto a = pipeline::make_physical_maps(gas, s, ctx.cosmo, ctx.table, log, &st1, one);
  const auto b = pipeline::make_physical_maps(gas, s, ctx.cosmo, ctx.table, log, &st2, many);
  CHECK(st1.projection.chunks == 1);
  CHECK(st2.projection.chunks == (gas.size() + 332) / 333);
  double worst = 0.0;
  for (std::size_t p = 0; p < a.rate.pixels().size(); ++p) {
    const double x = a.rate.pixels()[p], y = b.rate.pixels()[p];
    if (x > 0) worst = std::max(worst, std::fabs(y / x - 1.0));
  }
  INFO("worst relative pixel difference " << worst);
  CHECK(worst < 1e-12);
  CHECK(a.rate.pixels() != b.rate.pixels());  // the cut is visible: the bitwise tests above are not trivial
  CHECK(st2.cells_in_field == gas.size());
  CHECK(b.rate.sum() == Approx(st2.total_rate).epsilon(1e-9));
  CHECK(b.gas_mass.sum() == Approx(std::accumulate(gas.mass.begin(), gas.mass.end(), 0.0)).epsilon(1e-9));
}

TEST_CASE("chunked reading drops bad cells like the all-in-memory reader and names the file row", "[maps][chunked]") {
  const auto dir = testing::scratch_dir("chunked_maps_bad");
  auto gas = test_cells(3001);
  // Bad cells in several chunks (and a whole chunk of bad cells: rows 1200-1299).
  gas.density[5] = std::numeric_limits<float>::quiet_NaN();
  gas.kT[1234] = -1.0f;
  for (std::size_t i = 1200; i < 1300; ++i) gas.mass[i] = 0.0f;
  gas.support[2999] = std::numeric_limits<float>::infinity();
  const std::string csv = (dir / "bad.csv").string(), h5 = (dir / "bad.h5").string();
  write_csv(csv, gas);
  io::write_cells_hdf5(h5, gas);
  auto s = map_settings();
  Ctx ctx(s);
  pipeline::Log log(true);
  for (const auto& [file, fields] : {std::make_pair(h5, io::own_layout_field_map()), std::make_pair(csv, column_map())}) {
    INFO(file);
    config::CellSourceSettings src;
    src.cells_file = file;
    src.fields = fields;
    src.bad_cells = cells::BadCellPolicy::Drop;
    io::CellsReadInfo info;
    const auto kept = io::read_cells(file, fields, cells::BadCellPolicy::Drop, &info);
    CHECK(info.cells_dropped == 102);
    pipeline::MapOptions opt;
    opt.block_cells = 700;
    const auto ref = pipeline::make_physical_maps(kept, s, ctx.cosmo, ctx.table, log, nullptr, opt);
    const auto m = pipeline::stream_physical_maps(src, 100, s, ctx.cosmo, ctx.table, log, nullptr, opt);
    require_same(m, ref);
    // The reader's own totals match read_cells'.
    io::CellsChunkReader rd(file, fields, cells::BadCellPolicy::Drop);
    cells::GasCells chunk;
    std::size_t n = 0, chunks = 0;
    while (rd.next(100, chunk)) {
      n += chunk.size();
      ++chunks;
    }
    CHECK(n == kept.size());
    CHECK(chunks == 30);  // 31 chunks of rows, the all-bad one skipped
    CHECK(rd.info().rows_read == 3001);
    CHECK(rd.info().cells_dropped == 102);
    CHECK(rd.info().validation.summary() == info.validation.summary());
    // Error policy: the first bad cell is named by its row in the file.
    src.bad_cells = cells::BadCellPolicy::Error;
    io::CellsChunkReader strict(file, fields);
    CHECK_THROWS_WITH(
        [&] {
          while (strict.next(4, chunk)) {
          }
        }(),
        Contains("index 5, field density = nan"));
    CHECK_THROWS_AS(pipeline::stream_physical_maps(src, 1000, s, ctx.cosmo, ctx.table, log), core::InputError);
  }
}

TEST_CASE("project: chunk_cells is read for cells files and refused for models", "[maps][chunked]") {
  const auto dir = testing::scratch_dir("chunked_maps_config");
  io::write_cells_hdf5((dir / "c.h5").string(), test_cells(500));
  auto write = [&](const std::string& name, const std::string& cells_block) {
    std::ofstream f(dir / name);
    f << "target:\n  name: T\n  redshift: 0.1\ncells:\n" << cells_block << "map:\n  pixels: 16\n  pixel_arcsec: 10\n"
      << "output:\n  directory: out\n";
    return (dir / name).string();
  };
  const auto s1 = config::load_map_run(write("a.yaml", "  file: c.h5\n  chunk_cells: 1234\n"));
  CHECK(s1.cells.chunk_cells == 1234);
  const auto s2 = config::load_map_run(write("b.yaml", "  file: c.h5\n"));
  CHECK(s2.cells.chunk_cells == pipeline::kMapBlockCells);
  const auto s0 = config::load_map_run(write("c.yaml", "  file: c.h5\n  chunk_cells: 0\n"));
  CHECK(s0.cells.chunk_cells == 0);
  const auto model = (testing::source_dir() / "demo_clusters" / "models" / "maren7_cool_core.yaml").string();
  CHECK_THROWS_AS(config::load_map_run(write("d.yaml", "  model: " + model + "\n  chunk_cells: 1000\n")),
                  core::ConfigError);
  CHECK_THROWS_WITH(config::load_map_run(write("d.yaml", "  model: " + model + "\n  chunk_cells: 1000\n")),
                    Contains("chunk_cells") && Contains("cells file only"));
  // Both modes give the same maps through cell_source_maps.
  Ctx ctx(s1);
  pipeline::Log log(true);
  const auto a = pipeline::cell_source_maps(s1, ctx.cosmo, ctx.table, log);
  const auto b = pipeline::cell_source_maps(s0, ctx.cosmo, ctx.table, log);
  require_same(a, b);
  CHECK(a.rate.sum() > 0.0);
}
