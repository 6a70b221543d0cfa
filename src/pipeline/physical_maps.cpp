#include "icmscope/pipeline/physical_maps.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdint>
#include <cstdio>

#include "icmscope/core/blocked.hpp"
#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/emission/abundances.hpp"
#include "icmscope/io/cells_reader.hpp"
#include "icmscope/io/emissivity_table.hpp"
#include "icmscope/io/ogip.hpp"
#include "icmscope/pipeline/project_run.hpp"
#include "icmscope/projection/line_of_sight.hpp"

namespace icmscope::pipeline {

namespace K = core::constants;

std::shared_ptr<const emission::SpectralModel> make_spectral_model(const config::EmissionSettings& e) {
  if (e.model == "table") {
    return std::make_shared<emission::TabulatedModel>(io::read_emissivity_table(e.table_file),
                                                      "table:" + e.table_file);
  }
  emission::ContinuumSettings cs;
  cs.recombination = e.recombination;
  return std::make_shared<emission::ContinuumModel>(emission::abundance_set(e.abundances), nullptr, cs);
}

emission::BandTable make_band_table(const emission::SpectralModel& model, const config::EmissionSettings& e,
                                    double redshift) {
  std::vector<double> E_keV, A_cm2;
  if (e.effective_area != "flat") {
    const auto arf = io::read_arf(e.effective_area);
    const auto& edges = arf.edges_keV();
    for (std::size_t i = 0; i < arf.size(); ++i) {
      E_keV.push_back(0.5 * (edges[i] + edges[i + 1]));
      A_cm2.push_back(arf.area_cm2()[i]);
    }
  }
  return make_band_table(model, e, redshift, std::move(E_keV), std::move(A_cm2));
}

emission::BandTable make_band_table(const emission::SpectralModel& model, const config::EmissionSettings& e,
                                    double redshift, std::vector<double> area_E_keV, std::vector<double> area_cm2) {
  emission::BandSpec band{e.band_min_keV, e.band_max_keV};
  emission::FoldingSpec fold;
  fold.redshift = redshift;
  fold.nH_cm2 = e.nH_cm2;
  fold.area_E_keV = std::move(area_E_keV);
  fold.area_cm2 = std::move(area_cm2);
  emission::BandGridSpec grid;
  grid.kT_min_keV = e.table_kT_min_keV;
  grid.kT_max_keV = e.table_kT_max_keV;
  grid.n_kT = e.table_kT_points;
  grid.Z_nodes.clear();
  for (int i = 0; i < e.table_Z_points; ++i)
    grid.Z_nodes.push_back(e.table_Z_max_solar * i / (e.table_Z_points - 1));
  return emission::BandTable(model, band, fold, grid);
}

cosmo::Cosmology make_cosmology(const config::CosmologySettings& c) {
  cosmo::CosmologyParams p;
  p.H0_km_s_Mpc = c.H0_km_s_Mpc;
  p.Omega_m = c.Omega_m;
  p.Omega_lambda = c.Omega_lambda;
  return cosmo::Cosmology(p);
}

projection::LineOfSight line_of_sight_of(const config::ViewSettings& v) {
  using projection::Axis;
  using projection::LineOfSight;
  if (v.axis == "x") return LineOfSight::along_axis(Axis::X);
  if (v.axis == "y") return LineOfSight::along_axis(Axis::Y);
  if (v.axis == "z") return LineOfSight::along_axis(Axis::Z);
  if (v.axis == "angles") return LineOfSight::from_angles(v.theta_deg, v.phi_deg);
  return LineOfSight::from_vector(Eigen::Vector3d(v.vector[0], v.vector[1], v.vector[2]));
}

static projection::DepositKernel kernel_of(const std::string& k) {
  if (k == "point") return projection::DepositKernel::Point;
  if (k == "wendland_c2") return projection::DepositKernel::WendlandC2;
  return projection::DepositKernel::CubicSpline;
}

namespace {

// Contiguous cells (non-owning), the unit of one deposit.
struct CellsView {
  std::size_t n = 0;
  const float *x = nullptr, *y = nullptr, *z = nullptr, *mass = nullptr, *density = nullptr, *kT = nullptr,
              *metallicity = nullptr, *support = nullptr;
  const std::uint8_t* flags = nullptr;  // null: no flags
};

CellsView view_of(const cells::GasCells& c, std::size_t begin, std::size_t count) {
  CellsView v;
  v.n = count;
  v.x = c.x.data() + begin;
  v.y = c.y.data() + begin;
  v.z = c.z.data() + begin;
  v.mass = c.mass.data() + begin;
  v.density = c.density.data() + begin;
  v.kT = c.kT.data() + begin;
  v.metallicity = c.metallicity.data() + begin;
  v.support = c.support.data() + begin;
  v.flags = c.has_flags() ? c.flags.data() + begin : nullptr;
  return v;
}

void add_stats(projection::ProjectionStats& t, const projection::ProjectionStats& b) {
  t.cells_in += b.cells_in;
  t.cells_deposited += b.cells_deposited;
  t.cells_point += b.cells_point;
  t.cells_stencil += b.cells_stencil;
  t.cells_exact += b.cells_exact;
  t.cells_sampled += b.cells_sampled;
  t.cells_huge += b.cells_huge;
  t.pixel_updates += b.pixel_updates;
  t.chunks += b.chunks;
  t.tile_pixels = b.tile_pixels;
  t.work_bytes = std::max(t.work_bytes, b.work_bytes);
}

enum { kRate, kFlux, kEm, kRateT, kWsl, kWslT, kMassT, kMass, kChannels };
// EM is carried in units of 1e60 cm^-3 per cell to stay within float range.
constexpr double kEmUnit = 1e60;

}  // namespace

struct MapAccumulator::Impl {
  const config::MapRunSettings& s;
  const emission::BandTable& table;
  MapOptions opt;
  int threads = 1;
  // Per-run constants.
  double DL = 0.0, inv4piDL2 = 0.0, kpc_per_arcsec = 0.0;
  double ne_a = 0.0, ne_b = 0.0, mh_a = 0.0, mh_b = 0.0;
  double rho_cgs = 0.0, r2max = INFINITY;
  projection::LineOfSight los;
  projection::PlaneOptions popt;
  Eigen::Vector3d centre;
  projection::ProjectionGrid grid;
  projection::ProjectorSettings ps;
  // Accumulated channel maps and totals (sums in block order).
  std::vector<std::vector<double>> maps;
  MapStats st;
  double total_rate = 0.0, cold_rate = 0.0;
  std::size_t added = 0;
  // The partial block (cells waiting for a full block).
  cells::GasCells buf;
  std::size_t buf_n = 0;
  // Per-block scratch, reused.
  std::vector<std::uint8_t> select;
  std::vector<double> coef_ph, coef_e;
  std::vector<std::vector<float>> ch;
  bool finished = false;

  Impl(const config::MapRunSettings& s_, const cosmo::Cosmology& cosmo, const emission::BandTable& table_,
       const MapOptions& opt_)
      : s(s_), table(table_), opt(opt_) {
    if (opt.block_cells == 0) throw core::DomainError("MapAccumulator: block_cells must be positive");
    threads = opt.threads > 0 ? opt.threads : core::max_threads();
    const double z = s.target.redshift;
    DL = cosmo.luminosity_distance_cm(z);
    inv4piDL2 = 1.0 / (4.0 * K::kPi * DL * DL);
    kpc_per_arcsec = cosmo.kpc_per_arcsec(z);
    // Composition is linear in Z (metals scale together): n_e/n_H = a + b Z,
    // gas mass per H nucleus m_H = m0 + m1 Z.
    const auto& set = emission::abundance_set(s.emission.abundances);
    const auto c0 = emission::composition(set, 0.0), c1 = emission::composition(set, 1.0);
    ne_a = c0.ne_over_nH;
    ne_b = c1.ne_over_nH - c0.ne_over_nH;
    mh_a = c0.mass_per_H_g;
    mh_b = c1.mass_per_H_g - c0.mass_per_H_g;
    rho_cgs = K::Msun_g / (K::kpc_cm * K::kpc_cm * K::kpc_cm);  // Msun/kpc^3 -> g/cm^3
    los = line_of_sight_of(s.view);
    popt.depth_kpc = s.view.depth_kpc;
    centre = Eigen::Vector3d(s.target.centre_kpc[0], s.target.centre_kpc[1], s.target.centre_kpc[2]);
    const auto& sel = s.selection;
    r2max = std::isfinite(sel.max_radius_kpc) ? sel.max_radius_kpc * sel.max_radius_kpc : INFINITY;
    grid.nx = s.view.nx;
    grid.ny = s.view.ny;
    grid.pixel_kpc = s.view.pixel_arcsec * kpc_per_arcsec;
    ps.kernel = kernel_of(s.view.kernel);
    ps.threads = opt.threads;
    maps.resize(kChannels);
    for (auto& m : maps) m.assign(grid.pixels(), 0.0);
    ch.resize(kChannels);
  }

  // One deposit block: selection, per-cell channels, deposit.
  void deposit(const CellsView& c) {
    using clock = std::chrono::steady_clock;
    const auto t0 = clock::now();
    const std::size_t n = c.n;
    st.cells_read += n;
    // Line of sight, depth slab and selection.
    const auto plane = los.to_plane(c.x, c.y, c.z, n, centre, popt);
    select.resize(n);
    const auto& sel = s.selection;
    const auto N = static_cast<std::ptrdiff_t>(n);
#pragma omp parallel for schedule(static) num_threads(threads)
    for (std::ptrdiff_t i = 0; i < N; ++i) {
      bool keep = plane.in_slab.empty() || plane.in_slab[i];
      if (c.kT[i] < sel.min_kT_keV) keep = false;
      if (c.flags) {
        if (sel.exclude_star_forming && (c.flags[i] & cells::kFlagStarForming)) keep = false;
        if (sel.exclude_cold_flag && (c.flags[i] & cells::kFlagCold)) keep = false;
      }
      if (std::isfinite(r2max)) {
        const double dx = c.x[i] - centre[0], dy = c.y[i] - centre[1], dz = c.z[i] - centre[2];
        if (dx * dx + dy * dy + dz * dz > r2max) keep = false;
      }
      select[i] = keep ? 1 : 0;
    }

    // Per-cell channels (float storage: values are scaled to stay in range).
    coef_ph.resize(n);
    coef_e.resize(n);
    table.photon_coefficients(c.kT, c.metallicity, n, coef_ph.data());
    table.energy_coefficients(c.kT, c.metallicity, n, coef_e.data());
    for (auto& v : ch) v.resize(n);
    // Ordered sums for determinism: per-sub-block partial sums, added in order.
    constexpr int kB = 64;
    double part_rate[kB] = {}, part_cold[kB] = {};
    std::size_t part_n[kB] = {};
    const double warn_kT = s.emission.warn_kT_keV;
#pragma omp parallel for schedule(static, 1) num_threads(threads)
    for (int b = 0; b < kB; ++b) {
      const auto r = core::block_range(n, kB, b);
      for (std::size_t i = r.begin; i < r.end; ++i) {
        const double Z = c.metallicity[i], T = c.kT[i];
        const double mh = mh_a + mh_b * Z;
        const double rho = c.density[i] * rho_cgs, m = c.mass[i] * K::Msun_g;
        const double em = (ne_a + ne_b * Z) * rho * m / (mh * mh);  // cm^-3
        const double rate = em * coef_ph[i] * inv4piDL2;
        const double flux = em * coef_e[i] * inv4piDL2;
        const double wsl = c.density[i] * c.mass[i] * std::pow(T, -0.75);
        ch[kRate][i] = static_cast<float>(rate);
        ch[kFlux][i] = static_cast<float>(flux);
        ch[kEm][i] = static_cast<float>(em / kEmUnit);
        ch[kRateT][i] = static_cast<float>(rate * T);
        ch[kWsl][i] = static_cast<float>(wsl);
        ch[kWslT][i] = static_cast<float>(wsl * T);
        ch[kMassT][i] = static_cast<float>(c.mass[i] * T);
        ch[kMass][i] = c.mass[i];
        if (select[i]) {
          part_rate[b] += rate;
          if (T < warn_kT) part_cold[b] += rate;
          ++part_n[b];
        }
      }
    }
    for (int b = 0; b < kB; ++b) {
      total_rate += part_rate[b];
      cold_rate += part_cold[b];
      st.cells_selected += part_n[b];
    }
    const auto t1 = clock::now();

    projection::PlaneCells pc;
    pc.n = n;
    pc.u = plane.u.data();
    pc.v = plane.v.data();
    pc.support = c.support;
    pc.select = select.data();
    std::vector<projection::WeightChannel> wch;
    for (auto& v : ch) wch.emplace_back(v);
    projection::ProjectionStats pst;
    projection::project_add(grid, pc, wch, maps, ps, &pst);
    add_stats(st.projection, pst);
    const auto t2 = clock::now();
    st.seconds_emission += std::chrono::duration<double>(t1 - t0).count();
    st.seconds_projection += std::chrono::duration<double>(t2 - t1).count();
  }

  void append(const cells::GasCells& c, std::size_t begin, std::size_t count) {
    const std::size_t B = opt.block_cells;
    if (buf.size() < B) {
      buf.resize(B);
      buf.flags.resize(B);
    }
    auto cp = [&](const std::vector<float>& from, std::vector<float>& to) {
      std::copy(from.begin() + static_cast<std::ptrdiff_t>(begin),
                from.begin() + static_cast<std::ptrdiff_t>(begin + count), to.begin() + static_cast<std::ptrdiff_t>(buf_n));
    };
    cp(c.x, buf.x);
    cp(c.y, buf.y);
    cp(c.z, buf.z);
    cp(c.mass, buf.mass);
    cp(c.density, buf.density);
    cp(c.kT, buf.kT);
    cp(c.metallicity, buf.metallicity);
    cp(c.support, buf.support);
    // Absent flags are zero flags (nothing excluded), so the buffer always has them.
    auto* f = buf.flags.data() + buf_n;
    if (c.has_flags())
      std::copy(c.flags.begin() + static_cast<std::ptrdiff_t>(begin),
                c.flags.begin() + static_cast<std::ptrdiff_t>(begin + count), f);
    else
      std::fill(f, f + count, std::uint8_t{0});
    buf_n += count;
  }

  void add(const cells::GasCells& c) {
    if (finished) throw core::DomainError("MapAccumulator: add() after finish()");
    const std::size_t n = c.size(), B = opt.block_cells;
    std::size_t i = 0;
    while (i < n) {
      if (buf_n == 0 && n - i >= B) {  // a whole block in place: no copy
        deposit(view_of(c, i, B));
        i += B;
        continue;
      }
      const std::size_t take = std::min(B - buf_n, n - i);
      append(c, i, take);
      i += take;
      if (buf_n == B) {
        deposit(view_of(buf, 0, B));
        buf_n = 0;
      }
    }
    added += n;
  }
};

MapAccumulator::MapAccumulator(const config::MapRunSettings& s, const cosmo::Cosmology& cosmo,
                               const emission::BandTable& table, const MapOptions& opt)
    : impl_(std::make_unique<Impl>(s, cosmo, table, opt)) {}
MapAccumulator::~MapAccumulator() = default;

void MapAccumulator::add(const cells::GasCells& cells) { impl_->add(cells); }
std::size_t MapAccumulator::cells_added() const { return impl_->added; }

PhysicalMaps MapAccumulator::finish(Log& log, MapStats* stats_out) {
  Impl& a = *impl_;
  if (a.finished) throw core::DomainError("MapAccumulator: finish() called twice");
  if (a.buf_n > 0) a.deposit(view_of(a.buf, 0, a.buf_n));
  a.buf_n = 0;
  a.finished = true;
  a.buf = cells::GasCells();
  a.ch.clear();
  a.coef_ph = a.coef_e = std::vector<double>();
  a.select = std::vector<std::uint8_t>();
  const auto& s = a.s;
  MapStats st = a.st;
  st.total_rate = a.total_rate;
  st.cold_fraction = a.total_rate > 0 ? a.cold_rate / a.total_rate : 0.0;
  st.cells_in_field = st.projection.cells_deposited;
  const auto& grid = a.grid;
  const auto& maps = a.maps;

  core::SkyAnchor anchor;
  anchor.ra_deg = s.target.ra_deg;
  anchor.dec_deg = s.target.dec_deg;
  anchor.crpix1 = 0.5 * (grid.nx + 1);
  anchor.crpix2 = 0.5 * (grid.ny + 1);
  anchor.pixel_arcsec = s.view.pixel_arcsec;
  auto make = [&](const std::string& unit) {
    core::ImageD im(grid.nx, grid.ny);
    im.set_anchor(anchor);
    im.set_unit(unit);
    return im;
  };
  PhysicalMaps out;
  out.pixel_kpc = grid.pixel_kpc;
  out.kpc_per_arcsec = a.kpc_per_arcsec;
  out.luminosity_distance_cm = a.DL;
  out.rate = make(s.emission.effective_area == "flat" ? "photon/(cm2 s)" : "count/s");
  out.sb_energy = make("erg/(s cm2 arcmin2)");
  out.em = make("cm**-3");
  out.t_ew = make("keV");
  out.t_sl = make("keV");
  out.t_mw = make("keV");
  out.gas_mass = make("solMass");
  const double pix_arcmin2 = std::pow(s.view.pixel_arcsec / 60.0, 2);
  for (std::size_t p = 0; p < grid.pixels(); ++p) {
    out.rate.data()[p] = maps[kRate][p];
    out.sb_energy.data()[p] = maps[kFlux][p] / pix_arcmin2;
    out.em.data()[p] = maps[kEm][p] * kEmUnit;
    out.t_ew.data()[p] = maps[kRate][p] > 0 ? maps[kRateT][p] / maps[kRate][p] : 0.0;
    out.t_sl.data()[p] = maps[kWsl][p] > 0 ? maps[kWslT][p] / maps[kWsl][p] : 0.0;
    out.t_mw.data()[p] = maps[kMass][p] > 0 ? maps[kMassT][p] / maps[kMass][p] : 0.0;
    out.gas_mass.data()[p] = maps[kMass][p];
  }
  a.maps.clear();
  st.map_rate = out.rate.sum();
  if (s.emission.model == "continuum" && st.cold_fraction > s.emission.warn_fraction) {
    char b[256];
    std::snprintf(b, sizeof b,
                  "%.0f%% of the band emission comes from gas below %.2g keV, where the continuum-only model "
                  "misses line emission (factor >= 2 below 1 keV); use an emissivity table for such gas",
                  100.0 * st.cold_fraction, s.emission.warn_kT_keV);
    log.warn(b);
  }
  if (stats_out) *stats_out = st;
  return out;
}

PhysicalMaps make_physical_maps(const cells::GasCells& cells, const config::MapRunSettings& s,
                                const cosmo::Cosmology& cosmo, const emission::BandTable& table, Log& log,
                                MapStats* stats_out, const MapOptions& opt) {
  MapAccumulator acc(s, cosmo, table, opt);
  acc.add(cells);
  return acc.finish(log, stats_out);
}

PhysicalMaps stream_physical_maps(const config::CellSourceSettings& src, std::size_t chunk_cells,
                                  const config::MapRunSettings& s, const cosmo::Cosmology& cosmo,
                                  const emission::BandTable& table, Log& log, MapStats* stats_out,
                                  const MapOptions& opt) {
  if (chunk_cells == 0) throw core::DomainError("stream_physical_maps: chunk_cells must be positive");
  io::CellsChunkReader reader(src.cells_file, src.fields, src.bad_cells);
  MapAccumulator acc(s, cosmo, table, opt);
  cells::GasCells chunk;
  std::size_t chunks = 0;
  while (reader.next(chunk_cells, chunk)) {
    acc.add(chunk);
    ++chunks;
  }
  chunk = cells::GasCells();
  const auto& info = reader.info();
  log.info("cells: read " + std::to_string(info.rows_read) + " rows from " + src.cells_file + " in " +
           std::to_string(chunks) + " chunks of up to " + std::to_string(chunk_cells) + " (cells: chunk_cells)");
  if (info.cells_dropped > 0)
    log.warn(src.cells_file + ": dropped " + std::to_string(info.cells_dropped) +
             " unusable cells (bad_cells: drop): " + info.validation.summary());
  return acc.finish(log, stats_out);
}

PhysicalMaps cell_source_maps(const config::MapRunSettings& s, const cosmo::Cosmology& cosmo,
                              const emission::BandTable& table, Log& log, MapStats* stats) {
  if (s.cells.model_file.empty() && s.cells.chunk_cells > 0)
    return stream_physical_maps(s.cells, s.cells.chunk_cells, s, cosmo, table, log, stats);
  const auto cells = load_cells(s.cells, log);
  return make_physical_maps(cells, s, cosmo, table, log, stats);
}

}  // namespace icmscope::pipeline
