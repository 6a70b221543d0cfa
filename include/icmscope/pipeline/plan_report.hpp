#pragma once
// Outputs of `plan`, each written atomically (temporary name, then rename):
//   <prefix>_plan.csv      one row per exposure: expected counts within R500 and
//                          the core, background fraction, S/N, each indicator's
//                          median / p16 / p84 / sigma / noise-free value / bias,
//                          class probabilities per scheme
//   <prefix>_goals.csv     one row per goal and one for all goals together
//   <prefix>_plan.json     everything above, the target (relations used and
//                          their outputs), settings and the caution
//   <prefix>_plan.txt      the terminal table
//   <prefix>_plan.png      indicator precision, class confidence and counts
//                          against exposure (plots: true)
//   <prefix>_reverse.csv, <prefix>_reverse.png   the reverse question (if asked)
//   <prefix>_config.yaml   the resolved configuration
// Every file carries the caution text (config::plan_caution_text()).
#include <string>
#include <vector>

#include "icmscope/config/plan_settings.hpp"
#include "icmscope/pipeline/log.hpp"
#include "icmscope/pipeline/plan_run.hpp"

namespace icmscope::pipeline {

// The human-readable summary (tables, answers, the caution in a box).
std::string plan_text_report(const PlanResult& r, const config::PlanRunSettings& s);

// Writes every output; returns the paths written. If one fails, the ones
// already written are removed.
std::vector<std::string> write_plan_outputs(const PlanResult& r, const config::PlanRunSettings& s, Log& log);

}  // namespace icmscope::pipeline
