#include "icmscope/pipeline/analytic_maps.hpp"

#include <chrono>
#include <cmath>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/emission/abundances.hpp"
#include "icmscope/projection/column_integral.hpp"
#include "icmscope/projection/line_of_sight.hpp"

namespace icmscope::pipeline {

namespace K = core::constants;

PhysicalMaps make_analytic_maps(const cells::ClusterModel& model, const config::MapRunSettings& s,
                                const cosmo::Cosmology& cosmo, const emission::BandTable& table, Log& log,
                                const AnalyticMapOptions& opt, MapStats* stats_out) {
  (void)log;
  const auto t0 = std::chrono::steady_clock::now();
  const auto& set = emission::abundance_set(model.abundance_set);
  const cells::GasComposition gc(set);
  const auto c0 = emission::composition(set, 0.0), c1 = emission::composition(set, 1.0);
  const double ne_a = c0.ne_over_nH, ne_b = c1.ne_over_nH - c0.ne_over_nH;
  const double mh_a = c0.mass_per_H_g, mh_b = c1.mass_per_H_g - c0.mass_per_H_g;
  std::vector<cells::ComponentProfile> prof;
  for (const auto& c : model.components) prof.emplace_back(c, gc);
  const std::size_t nc = prof.size();

  const double z = s.target.redshift;
  const double DL = cosmo.luminosity_distance_cm(z);
  const double inv4piDL2 = 1.0 / (4.0 * K::kPi * DL * DL);
  const double kpa = cosmo.kpc_per_arcsec(z);
  const double pix_kpc = s.view.pixel_arcsec * kpa;
  const int nx = s.view.nx, ny = s.view.ny;
  const auto los = line_of_sight_of(s.view);
  const Eigen::Matrix3d R = los.rotation();
  const Eigen::Vector3d centre(s.target.centre_kpc[0], s.target.centre_kpc[1], s.target.centre_kpc[2]);
  std::vector<Eigen::Vector3d> q(nc);
  for (std::size_t c = 0; c < nc; ++c) {
    const auto& o = model.components[c].offset_kpc;
    q[c] = R * (Eigen::Vector3d(o[0], o[1], o[2]) - centre);
  }
  const double half_depth = std::isfinite(s.view.depth_kpc) ? 0.5 * s.view.depth_kpc : INFINITY;
  const double rho_cgs = K::Msun_g / (K::kpc_cm * K::kpc_cm * K::kpc_cm);
  const double msun_per_kpc3_to_g_cm3 = rho_cgs;

  enum { kRate, kFlux, kEm, kRateT, kWsl, kWslT, kMassT, kMass, kCh };
  std::vector<double> maps(static_cast<std::size_t>(kCh) * nx * ny, 0.0);
  const int ns = std::max(1, opt.subsamples);
  std::vector<double> gx(ns), gw(ns);
  if (ns == 1) { gx[0] = 0.0; gw[0] = 1.0; }
  else {
    // Gauss-Legendre on [-1/2, 1/2] with weights summing to 1.
    for (int i = 0; i < ns; ++i) {
      const double xi = -std::cos(K::kPi * (i + 0.75) / (ns + 0.5));
      double x = xi;
      for (int it = 0; it < 50; ++it) {
        double p0 = 1, p1 = x;
        for (int k = 2; k <= ns; ++k) { const double p2 = ((2 * k - 1) * x * p1 - (k - 1) * p0) / k; p0 = p1; p1 = p2; }
        const double dp = ns * (x * p1 - p0) / (x * x - 1);
        const double dx = p1 / dp;
        x -= dx;
        if (std::fabs(dx) < 1e-15) break;
      }
      double p0 = 1, p1 = x;
      for (int k = 2; k <= ns; ++k) { const double p2 = ((2 * k - 1) * x * p1 - (k - 1) * p0) / k; p0 = p1; p1 = p2; }
      const double dp = ns * (x * p1 - p0) / (x * x - 1);
      gx[i] = 0.5 * x;
      gw[i] = 0.5 * 2.0 / ((1 - x * x) * dp * dp);
    }
  }
  const double pix_area_cm2 = std::pow(pix_kpc * K::kpc_cm, 2);

#pragma omp parallel for schedule(dynamic, 4)
  for (int iy = 0; iy < ny; ++iy) {
    std::vector<double> rho_c(nc), T_c(nc), Z_c(nc);
    std::vector<projection::ColumnCentre> centres(nc);
    std::vector<double> breaks;
    for (int ix = 0; ix < nx; ++ix) {
      double acc[kCh] = {0, 0, 0, 0, 0, 0, 0, 0};
      for (int sy = 0; sy < ns; ++sy)
        for (int sx = 0; sx < ns; ++sx) {
          const double u = (ix + 0.5 - 0.5 * nx + gx[sx]) * pix_kpc;
          const double v = (iy + 0.5 - 0.5 * ny + gx[sy]) * pix_kpc;
          const double wsub = gw[sx] * gw[sy];
          breaks.clear();
          double wlo = INFINITY, whi = -INFINITY;
          std::size_t live = 0;
          for (std::size_t c = 0; c < nc; ++c) {
            const double du = u - q[c][0], dv = v - q[c][1];
            const double d = std::sqrt(du * du + dv * dv);
            const double rmax = model.components[c].r_max_kpc;
            centres[c] = {q[c][2], std::max(d, 1e-4 * rmax)};
            if (d < rmax) {
              const double h = std::sqrt(rmax * rmax - d * d);
              breaks.push_back(q[c][2] - h);
              breaks.push_back(q[c][2] + h);
              wlo = std::min(wlo, q[c][2] - h);
              whi = std::max(whi, q[c][2] + h);
              ++live;
            }
          }
          if (!live) continue;
          wlo = std::max(wlo, -half_depth);
          whi = std::min(whi, half_depth);
          projection::integrate_column(wlo, whi, breaks, centres, [&](double w, double jw) {
            const Eigen::Vector3d pl(u, v, w);
            double rho_tot = 0.0;
            for (std::size_t c = 0; c < nc; ++c) {
              const double r = (pl - q[c]).norm();
              rho_c[c] = prof[c].rho_msun_kpc3(r);
              rho_tot += rho_c[c];
              if (rho_c[c] > 0) {
                T_c[c] = prof[c].kT_keV(r);
                Z_c[c] = prof[c].metallicity_solar(r);
              }
            }
            if (rho_tot <= 0) return;
            const double jwk = jw * wsub;  // kpc
            for (std::size_t c = 0; c < nc; ++c) {
              if (rho_c[c] <= 0) continue;
              const double Z = Z_c[c], T = T_c[c];
              const double mh = mh_a + mh_b * Z;
              // n_e n_H per volume [cm^-6] of this component's share.
              const double nenh = (ne_a + ne_b * Z) * rho_tot * msun_per_kpc3_to_g_cm3 * rho_c[c] *
                                  msun_per_kpc3_to_g_cm3 / (mh * mh);
              const double em = nenh * jwk * K::kpc_cm;  // cm^-5 (times pixel area later)
              const double rate = em * table.photon_coefficient(T, Z);
              acc[kRate] += rate;
              acc[kFlux] += em * table.energy_coefficient(T, Z);
              acc[kEm] += em;
              acc[kRateT] += rate * T;
              const double wsl = rho_tot * rho_c[c] * std::pow(T, -0.75) * jwk;
              acc[kWsl] += wsl;
              acc[kWslT] += wsl * T;
              acc[kMassT] += rho_c[c] * T * jwk;
              acc[kMass] += rho_c[c] * jwk;
            }
          });
        }
      const std::size_t p = static_cast<std::size_t>(iy) * nx + ix;
      for (int k = 0; k < kCh; ++k) maps[static_cast<std::size_t>(k) * nx * ny + p] = acc[k];
    }
  }

  core::SkyAnchor anchor;
  anchor.ra_deg = s.target.ra_deg;
  anchor.dec_deg = s.target.dec_deg;
  anchor.crpix1 = 0.5 * (nx + 1);
  anchor.crpix2 = 0.5 * (ny + 1);
  anchor.pixel_arcsec = s.view.pixel_arcsec;
  auto make = [&](const std::string& unit) {
    core::ImageD im(nx, ny);
    im.set_anchor(anchor);
    im.set_unit(unit);
    return im;
  };
  PhysicalMaps out;
  out.pixel_kpc = pix_kpc;
  out.kpc_per_arcsec = kpa;
  out.luminosity_distance_cm = DL;
  out.rate = make(s.emission.effective_area == "flat" ? "photon/(cm2 s)" : "count/s");
  out.sb_energy = make("erg/(s cm2 arcmin2)");
  out.em = make("cm**-3");
  out.t_ew = make("keV");
  out.t_sl = make("keV");
  out.t_mw = make("keV");
  out.gas_mass = make("solMass");
  const double pix_arcmin2 = std::pow(s.view.pixel_arcsec / 60.0, 2);
  const double pix_area_kpc2 = pix_kpc * pix_kpc;
  const std::size_t np = static_cast<std::size_t>(nx) * ny;
  auto M = [&](int k, std::size_t p) { return maps[static_cast<std::size_t>(k) * np + p]; };
  for (std::size_t p = 0; p < np; ++p) {
    out.rate.data()[p] = M(kRate, p) * pix_area_cm2 * inv4piDL2;
    out.sb_energy.data()[p] = M(kFlux, p) * pix_area_cm2 * inv4piDL2 / pix_arcmin2;
    out.em.data()[p] = M(kEm, p) * pix_area_cm2;
    out.t_ew.data()[p] = M(kRate, p) > 0 ? M(kRateT, p) / M(kRate, p) : 0.0;
    out.t_sl.data()[p] = M(kWsl, p) > 0 ? M(kWslT, p) / M(kWsl, p) : 0.0;
    out.t_mw.data()[p] = M(kMass, p) > 0 ? M(kMassT, p) / M(kMass, p) : 0.0;
    out.gas_mass.data()[p] = M(kMass, p) * pix_area_kpc2;
  }
  if (stats_out) {
    MapStats st;
    st.map_rate = out.rate.sum();
    st.total_rate = st.map_rate;
    st.seconds_projection = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
    *stats_out = st;
  }
  return out;
}

}  // namespace icmscope::pipeline
