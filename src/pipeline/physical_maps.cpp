#include "icmscope/pipeline/physical_maps.hpp"

#include <chrono>
#include <cmath>
#include <cstdio>

#include "icmscope/core/blocked.hpp"
#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/emission/abundances.hpp"
#include "icmscope/io/emissivity_table.hpp"
#include "icmscope/io/ogip.hpp"
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
  emission::BandSpec band{e.band_min_keV, e.band_max_keV};
  emission::FoldingSpec fold;
  fold.redshift = redshift;
  fold.nH_cm2 = e.nH_cm2;
  if (e.effective_area != "flat") {
    const auto arf = io::read_arf(e.effective_area);
    const auto& edges = arf.edges_keV();
    for (std::size_t i = 0; i < arf.size(); ++i) {
      fold.area_E_keV.push_back(0.5 * (edges[i] + edges[i + 1]));
      fold.area_cm2.push_back(arf.area_cm2()[i]);
    }
  }
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

PhysicalMaps make_physical_maps(const cells::GasCells& cells, const config::MapRunSettings& s,
                                const cosmo::Cosmology& cosmo, const emission::BandTable& table, Log& log,
                                MapStats* stats_out) {
  using clock = std::chrono::steady_clock;
  const auto t0 = clock::now();
  const std::size_t n = cells.size();
  MapStats st;
  st.cells_read = n;

  const double z = s.target.redshift;
  const double DL = cosmo.luminosity_distance_cm(z);
  const double inv4piDL2 = 1.0 / (4.0 * K::kPi * DL * DL);
  const double kpc_per_arcsec = cosmo.kpc_per_arcsec(z);

  // Composition is linear in Z (metals scale together): n_e/n_H = a + b Z,
  // gas mass per H nucleus m_H = m0 + m1 Z.
  const auto& set = emission::abundance_set(s.emission.abundances);
  const auto c0 = emission::composition(set, 0.0), c1 = emission::composition(set, 1.0);
  const double ne_a = c0.ne_over_nH, ne_b = c1.ne_over_nH - c0.ne_over_nH;
  const double mh_a = c0.mass_per_H_g, mh_b = c1.mass_per_H_g - c0.mass_per_H_g;
  const double rho_cgs = K::Msun_g / (K::kpc_cm * K::kpc_cm * K::kpc_cm);  // Msun/kpc^3 -> g/cm^3

  // Line of sight, depth slab and selection.
  const auto los = line_of_sight_of(s.view);
  projection::PlaneOptions popt;
  popt.depth_kpc = s.view.depth_kpc;
  const Eigen::Vector3d centre(s.target.centre_kpc[0], s.target.centre_kpc[1], s.target.centre_kpc[2]);
  auto plane = los.to_plane(cells, centre, popt);
  std::vector<std::uint8_t> select(n, 1);
  const auto& sel = s.selection;
  const double r2max = std::isfinite(sel.max_radius_kpc) ? sel.max_radius_kpc * sel.max_radius_kpc : INFINITY;
#pragma omp parallel for schedule(static)
  for (std::ptrdiff_t i = 0; i < static_cast<std::ptrdiff_t>(n); ++i) {
    bool keep = plane.in_slab.empty() || plane.in_slab[i];
    if (cells.kT[i] < sel.min_kT_keV) keep = false;
    if (cells.has_flags()) {
      if (sel.exclude_star_forming && (cells.flags[i] & cells::kFlagStarForming)) keep = false;
      if (sel.exclude_cold_flag && (cells.flags[i] & cells::kFlagCold)) keep = false;
    }
    if (std::isfinite(r2max)) {
      const double dx = cells.x[i] - centre[0], dy = cells.y[i] - centre[1], dz = cells.z[i] - centre[2];
      if (dx * dx + dy * dy + dz * dz > r2max) keep = false;
    }
    select[i] = keep ? 1 : 0;
  }

  // Per-cell channels (float storage: values are scaled to stay in range).
  // EM is carried in units of 1e60 cm^-3 per cell to stay within float range.
  constexpr double kEmUnit = 1e60;
  std::vector<double> coef_ph(n), coef_e(n);
  table.photon_coefficients(cells.kT.data(), cells.metallicity.data(), n, coef_ph.data());
  table.energy_coefficients(cells.kT.data(), cells.metallicity.data(), n, coef_e.data());
  enum { kRate, kFlux, kEm, kRateT, kWsl, kWslT, kMassT, kMass, kChannels };
  std::vector<std::vector<float>> ch(kChannels, std::vector<float>(n));
  double total_rate = 0.0, cold_rate = 0.0, lum_unabs = 0.0;
  std::size_t n_sel = 0;
  // Ordered sums for determinism: per-block partial sums, added in block order.
  constexpr int kB = 64;
  std::vector<double> part_rate(kB, 0.0), part_cold(kB, 0.0);
  std::vector<std::size_t> part_n(kB, 0);
#pragma omp parallel for schedule(static, 1)
  for (int b = 0; b < kB; ++b) {
    const auto r = core::block_range(n, kB, b);
    for (std::size_t i = r.begin; i < r.end; ++i) {
      const double Z = cells.metallicity[i], T = cells.kT[i];
      const double mh = mh_a + mh_b * Z;
      const double rho = cells.density[i] * rho_cgs, m = cells.mass[i] * K::Msun_g;
      const double em = (ne_a + ne_b * Z) * rho * m / (mh * mh);  // cm^-3
      const double rate = em * coef_ph[i] * inv4piDL2;
      const double flux = em * coef_e[i] * inv4piDL2;
      const double wsl = cells.density[i] * cells.mass[i] * std::pow(T, -0.75);
      const bool keep = select[i] != 0;
      ch[kRate][i] = static_cast<float>(rate);
      ch[kFlux][i] = static_cast<float>(flux);
      ch[kEm][i] = static_cast<float>(em / kEmUnit);
      ch[kRateT][i] = static_cast<float>(rate * T);
      ch[kWsl][i] = static_cast<float>(wsl);
      ch[kWslT][i] = static_cast<float>(wsl * T);
      ch[kMassT][i] = static_cast<float>(cells.mass[i] * T);
      ch[kMass][i] = cells.mass[i];
      if (keep) {
        part_rate[b] += rate;
        if (T < s.emission.warn_kT_keV) part_cold[b] += rate;
        ++part_n[b];
      }
    }
  }
  for (int b = 0; b < kB; ++b) {
    total_rate += part_rate[b];
    cold_rate += part_cold[b];
    n_sel += part_n[b];
  }
  (void)lum_unabs;
  st.cells_selected = n_sel;
  st.total_rate = total_rate;
  st.cold_fraction = total_rate > 0 ? cold_rate / total_rate : 0.0;
  const auto t1 = clock::now();

  // Projection.
  projection::ProjectionGrid grid;
  grid.nx = s.view.nx;
  grid.ny = s.view.ny;
  grid.pixel_kpc = s.view.pixel_arcsec * kpc_per_arcsec;
  projection::PlaneCells pc;
  pc.n = n;
  pc.u = plane.u.data();
  pc.v = plane.v.data();
  pc.support = cells.support.data();
  pc.select = select.data();
  std::vector<projection::WeightChannel> wch;
  for (auto& c : ch) wch.emplace_back(c);
  projection::ProjectorSettings ps;
  ps.kernel = kernel_of(s.view.kernel);
  auto maps = projection::project(grid, pc, wch, ps, &st.projection);
  ch.clear();
  const auto t2 = clock::now();
  st.cells_in_field = st.projection.cells_deposited;

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
  out.kpc_per_arcsec = kpc_per_arcsec;
  out.luminosity_distance_cm = DL;
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
  st.map_rate = out.rate.sum();
  st.seconds_emission = std::chrono::duration<double>(t1 - t0).count();
  st.seconds_projection = std::chrono::duration<double>(t2 - t1).count();
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

}  // namespace icmscope::pipeline
