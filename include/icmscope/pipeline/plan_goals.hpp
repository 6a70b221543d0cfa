#pragma once
// The shortest exposure meeting a goal, from the per-exposure results of a plan.
//
// Metric per exposure: sigma (or sigma / |median|) of the corrected values for
// precision goals, the fraction of realisations in the dominant (or named)
// class for class goals, the expected net counts within R500 for counts goals.
// The answer is the first grid exposure from which the goal holds at every
// longer exposure, interpolated between it and the exposure before in log t:
// log sigma and log counts are linear in log t (sigma ~ t^-1/2 and counts ~ t
// in the limits), class fractions are linear in log t. Met at the shortest
// exposure: status below_grid (answer = that exposure, an upper bound); never
// met at the longest: not_reached. Precision and counts goals also carry an
// extrapolation from the nearest grid end (sigma ~ t^-1/2, counts ~ t).
//
// Uncertainty: B bootstrap resamples of the realisations of every exposure
// (with replacement; replicate b draws from RandomStream(seed, b)); each
// replicate recomputes the metrics and the answer; p16 / p84 of the replicate
// answers that fall in the grid, sigma = (p84 - p16) / 2. All goals together:
// the largest of the answers, per replicate too. Counts goals are noise-free
// (no scatter).
#include <cstdint>
#include <vector>

#include "icmscope/config/plan_settings.hpp"
#include "icmscope/pipeline/plan_run.hpp"

namespace icmscope::pipeline {

// Metric of a goal at one exposure over a subset of the realisations (idx:
// realisation indices, may repeat; null = all). NaN when unavailable.
double goal_metric(const config::PlanGoal& g, const config::PlanRunSettings& s, const PlanExposure& e,
                   const std::vector<int>* idx = nullptr);

// Interpolated answer from metrics per exposure (see above); fills status,
// exposure_ks and extrapolated_ks of `out`.
void shortest_exposure(const config::PlanGoal& g, const std::vector<double>& exposures_ks,
                       const std::vector<double>& metric, double threshold, GoalAnswer& out);

// Where a metric, linear between two grid points in x (log_x: in log x),
// crosses `level`: x0 + (level - f0) / (f1 - f0) (x1 - x0), in log x when
// log_x. Requires f0 and f1 on either side of level (either order); returns
// x1 when f1 == f0 and NaN for non-finite input. Used by the reverse question
// (class fraction against log M500 and against z).
double level_crossing(double x0, double f0, double x1, double f1, double level, bool log_x);

// Answers for every goal and for all goals together, with bootstrap uncertainties.
void answer_goals(const config::PlanRunSettings& s, const std::vector<PlanExposure>& ex,
                  std::vector<GoalAnswer>& goals, GoalAnswer& all);

}  // namespace icmscope::pipeline
