#include "icmscope/pipeline/plan_target.hpp"

#include <chrono>
#include <cmath>
#include <cstdio>

#include "icmscope/config/synth_settings.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/core/text_format.hpp"
#include "icmscope/emission/band_table.hpp"
#include "icmscope/emission/spectral_model.hpp"
#include "icmscope/io/fits_header.hpp"
#include "icmscope/io/fits_image.hpp"
#include "icmscope/morphology/apertures.hpp"
#include "icmscope/pipeline/analytic_maps.hpp"
#include "icmscope/pipeline/maps_file.hpp"
#include "icmscope/pipeline/project_run.hpp"
#include "icmscope/pipeline/stage_clock.hpp"

namespace icmscope::pipeline {

using core::format_number;

namespace {

config::ObservationSettings observation_of(const config::PlanRunSettings& s, double exposure_ks) {
  config::ObservationSettings o;
  o.instrument_file = s.instrument_file;
  o.exposure_ks = exposure_ks;
  o.seed = s.seed;
  o.roll_deg = s.roll_deg;
  o.offset_x_arcmin = s.offset_x_arcmin;
  o.offset_y_arcmin = s.offset_y_arcmin;
  o.events = false;
  o.point_sources.enabled = s.point_sources;
  o.temperature_bins = 1;  // no events: the spectra only weight the exposure maps
  o.spectrum_bins = 16;
  o.spectrum_metallicity_solar = s.spectrum_metallicity_solar;
  o.psf_mode = s.psf_mode;
  return o;
}

// Everything after the maps: the expected observation, background and centre.
void finish_target(PlanTarget& t, const PhysicalMaps& maps, const config::PlanRunSettings& s,
                   const config::MapRunSettings& m, const PlanContext& ctx, double exposure_ks, Log&) {
  t.redshift = m.target.redshift;
  t.nH_cm2 = m.emission.nH_cm2;
  t.band_min_keV = m.emission.band_min_keV;
  t.band_max_keV = m.emission.band_max_keV;
  t.pixel_arcsec = maps.rate.pixel_arcsec();
  t.kpc_per_pixel = maps.pixel_kpc > 0 ? maps.pixel_kpc : ctx.cosmology.kpc_per_arcsec(t.redshift) * t.pixel_arcsec;
  if (!(t.r500_kpc > 0) && t.m500_msun > 0) {
    t.r500_kpc = ctx.cosmology.r500_kpc_from_m500(t.m500_msun, t.redshift);
    if (t.r500_source.empty()) t.r500_source = "M500 via the cosmology (500 rho_crit(z))";
  }
  if (!(t.r500_kpc > 0)) throw core::ConfigError(s.source_file + ": target: R500 unknown (give m500_msun or r500_kpc)");
  t.reference_exposure_ks = exposure_ks;
  const auto t0 = clock_type::now();
  Log quiet(true);
  t.expected = expect_observation(maps, observation_of(s, exposure_ks), *ctx.instrument, *ctx.model, t.redshift,
                                  t.nH_cm2, t.band_min_keV, t.band_max_keV, quiet);
  t.seconds_expected = seconds_since(t0);
  t.background = t.expected.expected[kCompSky];
  for (std::size_t i = 0; i < t.background.size(); ++i)
    t.background.data()[i] += t.expected.expected[kCompParticle].data()[i];
  const auto& an = t.expected.model.anchor();
  t.centre_x = an.crpix1 - 1.0;
  t.centre_y = an.crpix2 - 1.0;
}

}  // namespace

double counts_within(const core::ImageD& image, double cx, double cy, double radius_px) {
  return morphology::circle_sums(image.data(), image.nx(), image.ny(), cx, cy, radius_px).f;
}

PlanContext make_plan_context(const config::PlanRunSettings& s) {
  PlanContext c;
  c.model = make_spectral_model(s.map.emission);
  std::shared_ptr<const emission::GauntTable> gaunt;
  if (const auto* cm = dynamic_cast<const emission::ContinuumModel*>(c.model.get())) gaunt = cm->emissivity().gaunt_ptr();
  double nH = s.map.emission.nH_cm2;
  if (s.target_kind == "maps") nH = io::read_fits_header(s.maps_file, 0).number("NH");
  c.instrument = std::make_shared<const InstrumentModel>(build_instrument(s.instrument, nH, gaunt));
  c.cosmology = make_cosmology(s.map.cosmology);
  return c;
}

PlanTarget build_scaled_target(const cells::ScaledClusterSpec& spec, const config::PlanRunSettings& s,
                               const PlanContext& ctx, double exposure_ks, Log& log) {
  PlanTarget t;
  config::MapRunSettings m = s.map;
  m.target.redshift = spec.redshift;
  m.target.name = spec.name;
  t.name = spec.name;
  t.kind = "scaled";
  t.scaled = true;
  const auto t0 = clock_type::now();
  const cells::ClusterModel cm = cells::scaled_cluster(spec, ctx.cosmology, &t.scaling);
  t.mt_relation = cells::relation_name(spec.mt);
  t.lm_relation = cells::relation_name(spec.lm);
  t.m500_msun = spec.m500_msun;
  t.r500_kpc = t.scaling.r500_kpc;
  t.r500_source = "scaling relations (scaled cluster)";
  const double s_model = seconds_since(t0);
  const auto table = instrument_band_table(*ctx.model, m.emission, spec.redshift, ctx.instrument.get());
  const double s_table = seconds_since(t0) - s_model;
  Log quiet(true);
  AnalyticMapOptions ao;
  ao.subsamples = s.scaled_subsamples;
  const PhysicalMaps maps = make_analytic_maps(cm, m, ctx.cosmology, table, quiet, ao);
  t.seconds_maps = seconds_since(t0);
  log.info("plan: " + spec.name + ": scaled model " + format_number(s_model, "%.2f") + " s, band table " + format_number(s_table, "%.2f") +
           " s, line-of-sight maps " + format_number(t.seconds_maps - s_model - s_table, "%.2f") + " s");
  finish_target(t, maps, s, m, ctx, exposure_ks, log);
  return t;
}

PlanTarget build_plan_target(const config::PlanRunSettings& s, const PlanContext& ctx, double exposure_ks, Log& log) {
  if (s.target_kind == "scaled") {
    PlanTarget t = build_scaled_target(s.scaled, s, ctx, exposure_ks, log);
    t.name = s.map.target.name;
    log.info("plan: " + t.name + ": scaled cluster M500 " + format_number(t.m500_msun) + " Msun, z " + format_number(t.redshift) +
             ": R500 " + format_number(t.r500_kpc) + " kpc, kT " + format_number(t.scaling.kT_keV) + " keV (" + t.scaling.mt_reference +
             "), L(0.5-2 keV) " + format_number(t.scaling.l_soft_erg_s) + " erg/s (" + t.scaling.lm_reference + "); maps " +
             format_number(t.seconds_maps, "%.2f") + " s, expected observation " + format_number(t.seconds_expected, "%.2f") + " s");
    return t;
  }
  PlanTarget t;
  config::MapRunSettings m = s.map;
  t.name = m.target.name;
  t.kind = s.target_kind;
  t.m500_msun = s.m500_msun;
  if (m.target.r500_kpc > 0) {
    t.r500_kpc = m.target.r500_kpc;
    t.r500_source = "target.r500_kpc";
  } else if (s.m500_msun > 0) {
    t.r500_source = "target.m500_msun via the cosmology (500 rho_crit(z))";
  }
  const auto t0 = clock_type::now();
  PhysicalMaps maps;
  Log quiet(true);
  if (s.target_kind == "maps") {
    maps = read_project_maps(s.maps_file, m, s.source_file, *ctx.instrument, *ctx.model, s.spectrum_metallicity_solar,
                             "plan", log);
  } else {
    const auto table = instrument_band_table(*ctx.model, m.emission, m.target.redshift, ctx.instrument.get());
    if (s.target_kind == "model" && m.cells.model_projection == "analytic") {
      const auto cm = config::load_cluster_model(m.cells.model_file);
      if (!(t.m500_msun > 0) && !(t.r500_kpc > 0) && cm.m500_msun) {
        t.m500_msun = *cm.m500_msun;
        t.r500_source = "m500_msun of " + m.cells.model_file + " via the cosmology";
      }
      AnalyticMapOptions ao;
      ao.subsamples = m.cells.analytic_subsamples;
      maps = make_analytic_maps(cm, m, ctx.cosmology, table, quiet, ao);
    } else {
      if (s.target_kind == "model" && !(t.m500_msun > 0) && !(t.r500_kpc > 0)) {
        const auto cm = config::load_cluster_model(m.cells.model_file);
        if (cm.m500_msun) {
          t.m500_msun = *cm.m500_msun;
          t.r500_source = "m500_msun of " + m.cells.model_file + " via the cosmology";
        }
      }
      const auto cells = load_cells(m.cells, quiet);
      maps = make_physical_maps(cells, m, ctx.cosmology, table, quiet);
    }
  }
  t.seconds_maps = seconds_since(t0);
  finish_target(t, maps, s, m, ctx, exposure_ks, log);
  log.info("plan: " + t.name + " (" + t.kind + "): z " + format_number(t.redshift) + ", R500 " + format_number(t.r500_kpc) + " kpc (" +
           t.r500_source + "), on-axis rate " + format_number(t.expected.rate_onaxis.sum()) + " counts/s; maps " + format_number(t.seconds_maps, "%.2f") +
           " s, expected observation " + format_number(t.seconds_expected, "%.2f") + " s");
  return t;
}

}  // namespace icmscope::pipeline
