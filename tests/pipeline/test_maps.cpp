// Gas cells -> physical maps, checked against closed forms and invariants.
#include <catch2/catch.hpp>

#include <cmath>
#include <numeric>

#ifdef _OPENMP
#include <omp.h>
#endif

#include "icmscope/cells/synth.hpp"
#include "icmscope/core/constants.hpp"
#include "icmscope/emission/abundances.hpp"
#include "icmscope/pipeline/analytic_maps.hpp"
#include "icmscope/pipeline/physical_maps.hpp"

using namespace icmscope;
namespace K = core::constants;

namespace {

cells::ClusterModel beta_model(double r_max_kpc, std::size_t n, double rc = 150.0, double beta = 2.0 / 3.0) {
  cells::ClusterModel m;
  m.name = "beta-test";
  m.seed = 20261201;
  m.n_particles = n;
  cells::ClusterComponent c;
  c.density.kind = cells::DensityKind::Beta;
  c.density.beta.n_e0_cm3 = 1e-2;
  c.density.beta.r_c_kpc = rc;
  c.density.beta.beta = beta;
  c.temperature.kind = cells::TemperatureKind::Isothermal;
  c.temperature.kT_keV = 5.0;
  c.metallicity.Z_solar = 0.3;
  c.r_max_kpc = r_max_kpc;
  m.components.push_back(c);
  return m;
}

config::MapRunSettings settings(double z, int npix, double pixel_arcsec) {
  config::MapRunSettings s;
  s.target.name = "test";
  s.target.redshift = z;
  s.target.ra_deg = 150.0;
  s.target.dec_deg = 2.0;
  s.emission.nH_cm2 = 0.0;
  s.emission.warn_fraction = 1.0;
  s.view.nx = s.view.ny = npix;
  s.view.pixel_arcsec = pixel_arcsec;
  return s;
}

struct Ctx {
  cosmo::Cosmology cosmo;
  std::shared_ptr<const emission::SpectralModel> model;
  emission::BandTable table;
  Ctx(const config::MapRunSettings& s)
      : cosmo(pipeline::make_cosmology(s.cosmology)),
        model(pipeline::make_spectral_model(s.emission)),
        table(pipeline::make_band_table(*model, s.emission, s.target.redshift)) {}
};

// Mean of an image in annuli [edges[k], edges[k+1]) (radius in pixels from the centre).
std::vector<double> annular_means(const core::ImageD& im, const std::vector<double>& edges_px) {
  std::vector<double> sum(edges_px.size() - 1, 0.0), cnt(edges_px.size() - 1, 0.0);
  for (int iy = 0; iy < im.ny(); ++iy)
    for (int ix = 0; ix < im.nx(); ++ix) {
      const double r = std::hypot(ix + 0.5 - 0.5 * im.nx(), iy + 0.5 - 0.5 * im.ny());
      for (std::size_t k = 0; k + 1 < edges_px.size(); ++k)
        if (r >= edges_px[k] && r < edges_px[k + 1]) { sum[k] += im(ix, iy); cnt[k] += 1; }
    }
  for (std::size_t k = 0; k < sum.size(); ++k) sum[k] /= std::max(1.0, cnt[k]);
  return sum;
}

}  // namespace

TEST_CASE("analytic beta-model projection matches the Cavaliere & Fusco-Femiano 1976 closed form", "[maps]") {
  // S(R) = n_e0 n_H0 r_c sqrt(pi) Gamma(3b - 1/2)/Gamma(3b) (1 + R^2/r_c^2)^(1/2 - 3b) * K / (4 pi D_L^2)
  // (Cavaliere & Fusco-Femiano 1976, A&A 49, 137; physics.md section 9), isothermal gas.
  for (double beta : {2.0 / 3.0, 0.55, 0.8}) {
    const double rc = 150.0;
    const auto model = beta_model(1.0e7, 1000, rc, beta);
    auto s = settings(0.1, 48, 12.0);
    Ctx ctx(s);
    pipeline::Log log(true);
    pipeline::AnalyticMapOptions ao;
    ao.subsamples = 1;
    const auto maps = pipeline::make_analytic_maps(model, s, ctx.cosmo, ctx.table, log, ao);
    const auto& set = emission::abundance_set("anders_grevesse_1989");
    const auto comp = emission::composition(set, 0.3);
    const double ne0 = 1e-2, nH0 = ne0 / comp.ne_over_nH;
    const double Kph = ctx.table.photon_coefficient(5.0, 0.3);
    const double DL = ctx.cosmo.luminosity_distance_cm(0.1);
    const double pix_cm = maps.pixel_kpc * K::kpc_cm;
    const double col0 = ne0 * nH0 * rc * K::kpc_cm * std::sqrt(K::kPi) * std::tgamma(3 * beta - 0.5) /
                        std::tgamma(3 * beta);
    double worst = 0.0;
    for (int iy = 0; iy < s.view.ny; ++iy)
      for (int ix = 0; ix < s.view.nx; ++ix) {
        const double R = std::hypot(ix + 0.5 - 0.5 * s.view.nx, iy + 0.5 - 0.5 * s.view.ny) * maps.pixel_kpc;
        const double expect = col0 * std::pow(1 + R * R / (rc * rc), 0.5 - 3 * beta) * Kph * pix_cm * pix_cm /
                              (4 * K::kPi * DL * DL);
        worst = std::max(worst, std::fabs(maps.rate(ix, iy) / expect - 1.0));
      }
    INFO("beta = " << beta << ", worst relative deviation " << worst);
    CHECK(worst <= 1e-4);
    // Isothermal gas: every temperature map is 5 keV wherever there is gas.
    CHECK(maps.t_ew(10, 20) == Approx(5.0).epsilon(1e-9));
    CHECK(maps.t_sl(10, 20) == Approx(5.0).epsilon(1e-9));
    CHECK(maps.t_mw(10, 20) == Approx(5.0).epsilon(1e-9));
  }
}

TEST_CASE("synthesised particle cluster reproduces the projected beta model within 1% at 0.05-1 R500", "[maps][slow]") {
  // Issue acceptance: azimuthal averages of the particle projection against the
  // noise-free analytic projection of the same truncated model (which itself
  // matches Cavaliere & Fusco-Femiano 1976, test above).
  const double r500 = 1000.0, rc = 150.0;
  const auto model = beta_model(3000.0, 1000000, rc);
  const auto gas = cells::synthesise(model);
  auto s = settings(0.1, 256, 0.0);
  Ctx ctx(s);
  const double kpa = ctx.cosmo.kpc_per_arcsec(0.1);
  s.view.pixel_arcsec = 2.0 * 1.05 * r500 / 256 / kpa;  // field = 2.1 R500
  pipeline::Log log(true);
  const auto pm = pipeline::make_physical_maps(gas, s, ctx.cosmo, ctx.table, log);
  const auto am = pipeline::make_analytic_maps(model, s, ctx.cosmo, ctx.table, log);
  std::vector<double> edges;
  for (int k = 0; k <= 10; ++k) edges.push_back(0.05 * r500 * std::pow(20.0, k / 10.0) / pm.pixel_kpc);
  const auto p = annular_means(pm.rate, edges), a = annular_means(am.rate, edges);
  for (std::size_t k = 0; k < p.size(); ++k) {
    INFO("annulus " << k << " R = " << edges[k] * pm.pixel_kpc << " kpc: particles/analytic = " << p[k] / a[k]);
    CHECK(std::fabs(p[k] / a[k] - 1.0) <= 0.01);
  }
}

TEST_CASE("map totals conserve every cell's contribution; doubling densities quadruples the flux", "[maps]") {
  const auto model = beta_model(1500.0, 40000);
  auto gas = cells::synthesise(model);
  double max_h = 0;
  for (float h : gas.support) max_h = std::max<double>(max_h, h);
  auto s = settings(0.2, 200, 0.0);
  Ctx ctx(s);
  s.view.pixel_arcsec = 2.2 * (1500.0 + max_h) / 200 / ctx.cosmo.kpc_per_arcsec(0.2);
  pipeline::Log log(true);
  for (const char* kernel : {"cubic_spline", "wendland_c2", "point"}) {
    s.view.kernel = kernel;
    pipeline::MapStats st;
    const auto m1 = pipeline::make_physical_maps(gas, s, ctx.cosmo, ctx.table, log, &st);
    INFO("kernel " << kernel);
    // Conservation (issue acceptance): map total = sum over cells in the field, 1e-6.
    CHECK(st.map_rate == Approx(st.total_rate).epsilon(1e-6));
    CHECK(m1.gas_mass.sum() == Approx(std::accumulate(gas.mass.begin(), gas.mass.end(), 0.0)).epsilon(1e-6));
  }
  s.view.kernel = "cubic_spline";
  const auto m1 = pipeline::make_physical_maps(gas, s, ctx.cosmo, ctx.table, log);
  auto gas2 = gas;
  for (auto& d : gas2.density) d *= 2.0f;
  for (auto& m : gas2.mass) m *= 2.0f;
  const auto m2 = pipeline::make_physical_maps(gas2, s, ctx.cosmo, ctx.table, log);
  // n_e n_H V scales as rho^2 V: doubling the density at fixed volume (mass x 2) gives x 4.
  CHECK(m2.rate.sum() == Approx(4.0 * m1.rate.sum()).epsilon(1e-6));
  CHECK(m2.em.sum() == Approx(4.0 * m1.em.sum()).epsilon(1e-6));
  CHECK(m2.t_ew(100, 100) == Approx(m1.t_ew(100, 100)).epsilon(1e-6));
}

TEST_CASE("surface brightness dims as (1+z)^-4 (energy) and (1+z)^-3 (photons) for a fixed rest band", "[maps]") {
  // Tolman dimming; photon surface brightness one power less (physics.md section 5).
  const auto model = beta_model(2000.0, 1000);
  const double rest_lo = 0.6, rest_hi = 3.0, pix_kpc = 20.0;
  std::vector<double> sb_e, sb_ph;
  const std::vector<double> zs = {0.05, 0.3, 1.0};
  for (double z : zs) {
    auto s = settings(z, 32, 1.0);
    s.emission.band_min_keV = rest_lo / (1 + z);
    s.emission.band_max_keV = rest_hi / (1 + z);
    Ctx ctx(s);
    s.view.pixel_arcsec = pix_kpc / ctx.cosmo.kpc_per_arcsec(z);
    pipeline::Log log(true);
    pipeline::AnalyticMapOptions ao;
    ao.subsamples = 1;
    const auto m = pipeline::make_analytic_maps(model, s, ctx.cosmo, ctx.table, log, ao);
    const double pix_arcmin2 = std::pow(s.view.pixel_arcsec / 60.0, 2);
    sb_e.push_back(m.sb_energy(16, 16));
    sb_ph.push_back(m.rate(16, 16) / pix_arcmin2);
  }
  for (std::size_t k = 1; k < zs.size(); ++k) {
    const double f = (1 + zs[0]) / (1 + zs[k]);
    CHECK(sb_e[k] / sb_e[0] == Approx(std::pow(f, 4)).epsilon(1e-4));
    CHECK(sb_ph[k] / sb_ph[0] == Approx(std::pow(f, 3)).epsilon(1e-4));
  }
}

TEST_CASE("a spherically symmetric model gives the same total and profile along any line of sight", "[maps]") {
  const auto model = beta_model(1200.0, 60000);
  const auto gas = cells::synthesise(model);
  double max_h = 0;
  for (float h : gas.support) max_h = std::max<double>(max_h, h);
  auto base = settings(0.1, 128, 0.0);
  Ctx ctx(base);
  base.view.pixel_arcsec = 2.2 * (1200.0 + max_h) / 128 / ctx.cosmo.kpc_per_arcsec(0.1);
  pipeline::Log log(true);
  std::vector<config::ViewSettings> views;
  for (const char* a : {"x", "y", "z"}) {
    auto v = base.view;
    v.axis = a;
    views.push_back(v);
  }
  auto va = base.view;
  va.axis = "angles";
  va.theta_deg = 37.0;
  va.phi_deg = 121.0;
  views.push_back(va);
  auto vv = base.view;
  vv.axis = "vector";
  vv.vector = {1, -2, 0.5};
  views.push_back(vv);
  std::vector<double> totals;
  std::vector<std::vector<double>> analytic_profiles;
  const std::vector<double> edges = {0, 2, 4, 8, 16, 32, 56};
  for (const auto& v : views) {
    auto s = base;
    s.view = v;
    totals.push_back(pipeline::make_physical_maps(gas, s, ctx.cosmo, ctx.table, log).rate.sum());
    analytic_profiles.push_back(
        annular_means(pipeline::make_analytic_maps(model, s, ctx.cosmo, ctx.table, log).rate, edges));
  }
  for (std::size_t k = 1; k < views.size(); ++k) {
    CHECK(totals[k] == Approx(totals[0]).epsilon(1e-6));
    for (std::size_t b = 0; b < analytic_profiles[0].size(); ++b)
      CHECK(analytic_profiles[k][b] == Approx(analytic_profiles[0][b]).epsilon(1e-6));
  }
}

TEST_CASE("maps are bitwise identical for 1 and 2 threads", "[maps]") {
#ifdef _OPENMP
  const auto model = beta_model(1500.0, 30000);
  const auto gas = cells::synthesise(model);
  auto s = settings(0.15, 96, 8.0);
  Ctx ctx(s);
  pipeline::Log log(true);
  omp_set_num_threads(1);
  const auto a = pipeline::make_physical_maps(gas, s, ctx.cosmo, ctx.table, log);
  omp_set_num_threads(2);
  const auto b = pipeline::make_physical_maps(gas, s, ctx.cosmo, ctx.table, log);
  CHECK(a.rate.pixels() == b.rate.pixels());
  CHECK(a.t_sl.pixels() == b.t_sl.pixels());
  CHECK(a.em.pixels() == b.em.pixels());
#endif
}
