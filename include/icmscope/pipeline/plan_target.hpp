#pragma once
// The target of an exposure plan, built once: physical maps (analytic
// line-of-sight integration for scaled clusters and model files, projection
// for cells files, or a maps file written by `project`) and the expected
// observation through the instrument at a reference exposure.
//
// What scales with exposure (observe_run.hpp): every expected-counts image
// (cluster, point sources, sky, particle) and the exposure maps are
// proportional to the on-time; the relative exposure e_i = exposure / max,
// which the measurement uses, is not. The dither pattern is built for the
// reference exposure (the longest of the plan), so scaling to a shorter
// exposure keeps the long-exposure smoothing of chip gaps (a small, stated
// approximation).
#include <memory>
#include <string>

#include "icmscope/cells/scaling_relations.hpp"
#include "icmscope/config/plan_settings.hpp"
#include "icmscope/pipeline/instrument_model.hpp"
#include "icmscope/pipeline/log.hpp"
#include "icmscope/pipeline/observe_run.hpp"
#include "icmscope/pipeline/physical_maps.hpp"

namespace icmscope::pipeline {

struct PlanTarget {
  std::string name;
  std::string kind;                 // scaled | model | cells | maps
  double redshift = 0.0;
  double m500_msun = 0.0;           // 0 = unknown (R500 given)
  double r500_kpc = 0.0;
  std::string r500_source;
  double kpc_per_pixel = 0.0;
  double pixel_arcsec = 0.0;
  double nH_cm2 = 0.0;
  double band_min_keV = 0.5, band_max_keV = 2.0;
  // Scaled targets: what the scaling relations gave.
  bool scaled = false;
  cells::ScaledClusterSummary scaling;
  std::string mt_relation, lm_relation;  // relation names ("vikhlinin2009", ...)
  // The expected observation at the reference exposure.
  double reference_exposure_ks = 0.0;
  ExpectedObservation expected;
  core::ImageD background;          // expected sky + particle counts at the reference exposure
  double centre_x = 0.0, centre_y = 0.0;  // 0-based pixel of the target centre
  double seconds_maps = 0.0, seconds_expected = 0.0;
};

// Shared, per-run objects (spectral model, instrument, cosmology).
struct PlanContext {
  std::shared_ptr<const emission::SpectralModel> model;
  std::shared_ptr<const InstrumentModel> instrument;
  cosmo::Cosmology cosmology;
};

PlanContext make_plan_context(const config::PlanRunSettings& s);

// The plan's own target (s.target_kind) at reference_exposure_ks.
PlanTarget build_plan_target(const config::PlanRunSettings& s, const PlanContext& ctx, double reference_exposure_ks,
                             Log& log);

// A scaled cluster (spec with m500_msun and redshift set) on the plan's grid,
// instrument and band, at exposure_ks (the reverse question's grid points).
PlanTarget build_scaled_target(const cells::ScaledClusterSpec& spec, const config::PlanRunSettings& s,
                               const PlanContext& ctx, double exposure_ks, Log& log);

// Expected counts of one component image within a circle of radius R [pixels]
// about (cx, cy) (0-based), with exact pixel-area weights.
double counts_within(const core::ImageD& image, double cx, double cy, double radius_px);

}  // namespace icmscope::pipeline
