#pragma once
// `plan`: exposure planning by simulation.
//
// Forward question (per exposure t of the grid): the expected observation of
// the target is built once (plan_target.hpp) and scaled to t; N Poisson
// realisations of the expected image (cluster + backgrounds) are measured by
// the morphology code exactly as `measure` measures a mock in expected mode
// (morphology/indicators.hpp: realisation k of exposure t uses
// RandomStream(seed_t, k), seed_t derived from the plan seed and t, so results
// do not depend on the thread count or on the other exposures of the grid).
// Each realisation's value is noise-bias corrected with the bias of that
// exposure, b = <v> - v_ref (v_ref = the noise-free value; Weissmann et al.
// 2013): v_k - b (linear) or sign(X) sqrt|X| with X = v_k^2 - (<v^2> - v_ref^2)
// (quadrature, w); the corrected values give the median, the 16th / 84th
// percentiles, sigma = (p84 - p16) / 2 and, through each scheme's cuts, the
// class of every realisation and the class probabilities.
// Expected counts (noise-free) within R500 and within the core radius about the
// target centre: net cluster counts S, background B (sky + particle), the
// background fraction B / (S + B) and S/N = S / sqrt(S + B).
//
// Reverse question (plan_settings reverse): at one exposure, a grid of scaled
// clusters (M500 x z); for each, N realisations and the fraction in the
// dominant (or named) class of one scheme.
#include <cstdint>
#include <string>
#include <vector>

#include "icmscope/config/plan_settings.hpp"
#include "icmscope/pipeline/log.hpp"
#include "icmscope/pipeline/plan_target.hpp"

namespace icmscope::pipeline {

struct PlanIndicator {
  config::IndicatorRef ref;
  bool available = false;
  double reference = 0.0;            // noise-free value
  double bias = 0.0;                 // <v> - reference
  double median = 0.0, p16 = 0.0, p84 = 0.0, sigma = 0.0;
  std::vector<double> corrected;     // per realisation (NaN where the measurement failed)
};

struct PlanClasses {
  std::string scheme;
  bool verified = false;
  std::vector<std::string> classes;
  std::vector<int> per_realisation;  // class index, -1 = not available
  std::vector<double> probability;   // per class, over available realisations
  int dominant = -1;                 // most probable class
};

struct PlanExposure {
  double exposure_ks = 0.0;
  std::uint64_t seed = 0;
  int realisations = 0;
  // Expected counts (noise-free) about the target centre.
  double source_r500 = 0.0, source_core = 0.0;
  double background_r500 = 0.0, background_core = 0.0;
  double background_fraction_r500 = 0.0;  // B / (S + B) within R500
  double sn_r500 = 0.0;                   // S / sqrt(S + B) within R500
  double sn_core = 0.0;
  std::vector<PlanIndicator> indicators;  // settings.indicators order
  std::vector<PlanClasses> classes;       // settings.schemes order
  double seconds = 0.0;
};

// Seed of the realisations of one exposure: depends only on the plan seed and
// the exposure value (to 1 ms), so adding exposures to the grid changes nothing else.
std::uint64_t exposure_seed(std::uint64_t seed, double exposure_ks);

// Expected counts and N measured realisations of `t` scaled to exposure_ks.
PlanExposure simulate_exposure(const PlanTarget& t, double exposure_ks, int realisations, std::uint64_t seed,
                               const std::vector<std::string>& schemes,
                               const std::vector<config::IndicatorRef>& indicators, double core_radius_r500,
                               int threads = 0);

struct GoalAnswer {
  std::string text;
  std::string status;        // reached (interpolated) | below_grid | not_reached | unavailable
  double exposure_ks = 0.0;  // the answer (interpolated in log t; NaN when none)
  double extrapolated_ks = 0.0;  // precision / counts goals outside the grid: sigma ~ t^-1/2, counts ~ t (NaN if none)
  double p16_ks = 0.0, p84_ks = 0.0, sigma_ks = 0.0;  // bootstrap over realisations (NaN if not available)
  double reached_fraction = 0.0;  // of the bootstrap replicates that reach the goal in the grid
  std::vector<double> metric;     // per exposure: sigma, sigma/|median|, class fraction or counts
  double threshold = 0.0;
};

struct ReversePoint {
  double m500_msun = 0.0, redshift = 0.0;
  double r500_kpc = 0.0, kT_keV = 0.0, l_soft_erg_s = 0.0;
  double source_r500 = 0.0, sn_r500 = 0.0;
  std::string dominant;      // dominant class label ("" = none available)
  double fraction = 0.0;     // of the goal class (dominant or named)
  bool determined = false;   // fraction >= confidence
};

struct ReverseAnswer {
  double exposure_ks = 0.0;
  std::string scheme, class_label;
  double confidence = 0.0;
  int realisations = 0;
  std::vector<double> m500_msun, redshift;
  std::vector<ReversePoint> grid;                // redshift-major: grid[iz * nM + iM]
  std::vector<double> min_mass_at_z;             // per redshift: lowest M500 determined at it and above (NaN: none)
  std::vector<double> max_redshift_at_mass;      // per mass: highest z determined at it and below (NaN: none)
  // The same between grid points: the class fraction interpolated linearly in
  // log M500 (in z) between the last undetermined and the first determined
  // grid point (plan_goals level_crossing); equal to the grid value when the
  // run reaches the grid edge (a bound, see *_at_edge), NaN when none.
  std::vector<double> min_mass_interp_at_z, max_redshift_interp_at_mass;
  std::vector<char> min_mass_at_edge, max_redshift_at_edge;  // 1: the grid edge was reached (a bound)
  std::string mt_relation, lm_relation, mt_reference, lm_reference;
};

struct PlanResult {
  PlanTarget target;                 // maps released after the run (expected images kept)
  std::vector<PlanExposure> exposures;
  std::vector<GoalAnswer> goals;
  GoalAnswer all_goals;
  bool has_reverse = false;
  ReverseAnswer reverse;
  std::vector<std::string> written;
  double seconds = 0.0;
};

PlanResult run_plan(const config::PlanRunSettings& s, Log& log, bool write_outputs = true);

}  // namespace icmscope::pipeline
