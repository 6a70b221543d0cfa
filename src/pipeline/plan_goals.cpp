#include "icmscope/pipeline/plan_goals.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

#include "icmscope/core/random.hpp"
#include "icmscope/morphology/realisations.hpp"

namespace icmscope::pipeline {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();
constexpr double kInf = std::numeric_limits<double>::infinity();

bool lower_is_better(const config::PlanGoal& g) { return g.kind == config::GoalKind::precision; }
bool log_metric(const config::PlanGoal& g) { return g.kind != config::GoalKind::classes; }

bool met(const config::PlanGoal& g, double m, double thr) {
  if (!std::isfinite(m)) return false;
  return lower_is_better(g) ? m <= thr : m >= thr;
}

double threshold_of(const config::PlanGoal& g) {
  switch (g.kind) {
    case config::GoalKind::precision: return std::isfinite(g.sigma_max) ? g.sigma_max : g.relative_sigma_max;
    case config::GoalKind::classes: return g.confidence;
    case config::GoalKind::counts: return g.net_counts_min;
  }
  return kNaN;
}

int indicator_index(const config::PlanRunSettings& s, const config::IndicatorRef& r) {
  for (std::size_t i = 0; i < s.indicators.size(); ++i)
    if (s.indicators[i].name == r.name && s.indicators[i].aperture == r.aperture) return static_cast<int>(i);
  return -1;
}

int scheme_index(const config::PlanRunSettings& s, const std::string& name) {
  for (std::size_t i = 0; i < s.schemes.size(); ++i)
    if (s.schemes[i] == name) return static_cast<int>(i);
  return -1;
}

double percentile(std::vector<double> v, double q) {
  std::sort(v.begin(), v.end());
  return morphology::percentile_sorted(v, q);
}

}  // namespace

double goal_metric(const config::PlanGoal& g, const config::PlanRunSettings& s, const PlanExposure& e,
                   const std::vector<int>* idx) {
  if (g.kind == config::GoalKind::counts) return e.source_r500;
  if (g.kind == config::GoalKind::precision) {
    const int i = indicator_index(s, g.indicator);
    if (i < 0 || !e.indicators[static_cast<std::size_t>(i)].available) return kNaN;
    const auto& c = e.indicators[static_cast<std::size_t>(i)].corrected;
    std::vector<double> v;
    v.reserve(c.size());
    if (idx) {
      for (int k : *idx)
        if (std::isfinite(c[static_cast<std::size_t>(k)])) v.push_back(c[static_cast<std::size_t>(k)]);
    } else {
      for (double x : c)
        if (std::isfinite(x)) v.push_back(x);
    }
    if (v.size() < 3) return kNaN;
    std::sort(v.begin(), v.end());
    const double sigma = 0.5 * (morphology::percentile_sorted(v, 0.84) - morphology::percentile_sorted(v, 0.16));
    if (std::isfinite(g.sigma_max)) return sigma;
    const double med = std::fabs(morphology::percentile_sorted(v, 0.5));
    return med > 0 ? sigma / med : kInf;
  }
  const int j = scheme_index(s, g.scheme);
  if (j < 0) return kNaN;
  const PlanClasses& pc = e.classes[static_cast<std::size_t>(j)];
  std::vector<int> n(pc.classes.size(), 0);
  int avail = 0;
  auto add = [&](int k) {
    const int c = pc.per_realisation[static_cast<std::size_t>(k)];
    if (c >= 0) {
      ++n[static_cast<std::size_t>(c)];
      ++avail;
    }
  };
  if (idx) {
    for (int k : *idx) add(k);
  } else {
    for (std::size_t k = 0; k < pc.per_realisation.size(); ++k) add(static_cast<int>(k));
  }
  if (avail == 0) return kNaN;
  int cnt = 0;
  if (!g.class_label.empty()) {
    for (std::size_t c = 0; c < pc.classes.size(); ++c)
      if (pc.classes[c] == g.class_label) cnt = n[c];
  } else {
    cnt = *std::max_element(n.begin(), n.end());
  }
  return static_cast<double>(cnt) / avail;
}

void shortest_exposure(const config::PlanGoal& g, const std::vector<double>& t, const std::vector<double>& m,
                       double thr, GoalAnswer& out) {
  out.exposure_ks = kNaN;
  out.extrapolated_ks = kNaN;
  const std::size_t n = t.size();
  bool any = false;
  for (double v : m) any = any || std::isfinite(v);
  if (!any || n == 0) {
    out.status = "unavailable";
    return;
  }
  // First index from which the goal holds at every longer exposure.
  std::size_t first = n;
  for (std::size_t i = n; i-- > 0;) {
    if (!met(g, m[i], thr)) break;
    first = i;
  }
  // Extrapolation law: sigma ~ t^-1/2 (precision), counts ~ t.
  auto extrapolate = [&](std::size_t i) {
    if (!std::isfinite(m[i]) || !(m[i] > 0)) return kNaN;
    if (g.kind == config::GoalKind::precision) return t[i] * (m[i] / thr) * (m[i] / thr);
    if (g.kind == config::GoalKind::counts) return t[i] * thr / m[i];
    return kNaN;
  };
  if (first == n) {
    out.status = "not_reached";
    out.extrapolated_ks = extrapolate(n - 1);
    return;
  }
  if (first == 0) {
    out.status = "below_grid";
    out.exposure_ks = t[0];
    out.extrapolated_ks = extrapolate(0);
    return;
  }
  out.status = "reached";
  const double m0 = m[first - 1], m1 = m[first];
  const double lt0 = std::log(t[first - 1]), lt1 = std::log(t[first]);
  double u = 1.0;
  if (std::isfinite(m0)) {
    const bool lg = log_metric(g) && m0 > 0 && m1 > 0 && thr > 0;
    const double g0 = lg ? std::log(m0) : m0, g1 = lg ? std::log(m1) : m1, gt = lg ? std::log(thr) : thr;
    if (g1 != g0) u = std::clamp((gt - g0) / (g1 - g0), 0.0, 1.0);
  }
  out.exposure_ks = std::exp(lt0 + u * (lt1 - lt0));
}

void answer_goals(const config::PlanRunSettings& s, const std::vector<PlanExposure>& ex, std::vector<GoalAnswer>& goals,
                  GoalAnswer& all) {
  std::vector<double> t;
  for (const auto& e : ex) t.push_back(e.exposure_ks);
  const std::size_t ng = s.goals.size();
  goals.assign(ng, GoalAnswer());
  for (std::size_t g = 0; g < ng; ++g) {
    auto& a = goals[g];
    a.text = s.goals[g].text();
    a.threshold = threshold_of(s.goals[g]);
    for (const auto& e : ex) a.metric.push_back(goal_metric(s.goals[g], s, e));
    shortest_exposure(s.goals[g], t, a.metric, a.threshold, a);
  }
  all = GoalAnswer();
  all.text = "all goals together";
  all.exposure_ks = kNaN;
  all.extrapolated_ks = kNaN;
  if (ng == 0) {
    all.status = "unavailable";
  } else {
    all.status = "reached";
    double best = 0.0, extra = 0.0;
    bool below = true, extra_ok = true;
    for (const auto& a : goals) {
      if (a.status == "not_reached" || a.status == "unavailable") all.status = a.status;
      if (all.status == "reached" || all.status == "below_grid") best = std::max(best, a.exposure_ks);
      below = below && a.status == "below_grid";
      const double x = a.status == "not_reached" ? a.extrapolated_ks : a.exposure_ks;
      extra_ok = extra_ok && std::isfinite(x);
      if (std::isfinite(x)) extra = std::max(extra, x);
    }
    if (all.status == "reached") {
      all.exposure_ks = best;
      if (below) all.status = "below_grid";
    } else if (all.status == "not_reached" && extra_ok) {
      all.extrapolated_ks = extra;
    }
  }

  // Bootstrap over the realisations of every exposure.
  const int B = s.bootstrap;
  auto fill_nan = [](GoalAnswer& a) { a.p16_ks = a.p84_ks = a.sigma_ks = kNaN; a.reached_fraction = kNaN; };
  for (auto& a : goals) fill_nan(a);
  fill_nan(all);
  if (B <= 0 || ex.empty()) return;
  std::vector<std::vector<double>> rep(ng + 1, std::vector<double>(static_cast<std::size_t>(B), kInf));
  const std::uint64_t bseed = s.seed ^ 0x626f6f7473747261ULL;  // "bootstra"
#pragma omp parallel for schedule(dynamic)
  for (int b = 0; b < B; ++b) {
    core::RandomStream rng(bseed, static_cast<std::uint64_t>(b));
    std::vector<std::vector<int>> idx(ex.size());
    for (std::size_t e = 0; e < ex.size(); ++e) {
      const int n = ex[e].realisations;
      idx[e].resize(static_cast<std::size_t>(n));
      for (int k = 0; k < n; ++k)
        idx[e][static_cast<std::size_t>(k)] = std::min(n - 1, static_cast<int>(rng.uniform() * n));
    }
    double worst = 0.0;
    for (std::size_t g = 0; g < ng; ++g) {
      std::vector<double> m;
      for (std::size_t e = 0; e < ex.size(); ++e) m.push_back(goal_metric(s.goals[g], s, ex[e], &idx[e]));
      GoalAnswer a;
      shortest_exposure(s.goals[g], t, m, goals[g].threshold, a);
      const double v = (a.status == "reached" || a.status == "below_grid") ? a.exposure_ks : kInf;
      rep[g][static_cast<std::size_t>(b)] = v;
      worst = std::max(worst, v);
    }
    rep[ng][static_cast<std::size_t>(b)] = worst;
  }
  auto summarise = [&](const std::vector<double>& r, GoalAnswer& a) {
    int reached = 0;
    for (double v : r) reached += std::isfinite(v) ? 1 : 0;
    a.reached_fraction = static_cast<double>(reached) / static_cast<double>(r.size());
    const double p16 = percentile(r, 0.16), p84 = percentile(r, 0.84);
    a.p16_ks = std::isfinite(p16) ? p16 : kNaN;
    a.p84_ks = std::isfinite(p84) ? p84 : kNaN;
    a.sigma_ks = std::isfinite(p16) && std::isfinite(p84) ? 0.5 * (p84 - p16) : kNaN;
  };
  for (std::size_t g = 0; g < ng; ++g) summarise(rep[g], goals[g]);
  summarise(rep[ng], all);
}

double level_crossing(double x0, double f0, double x1, double f1, double level, bool log_x) {
  if (!std::isfinite(x0) || !std::isfinite(x1) || !std::isfinite(f0) || !std::isfinite(f1) || !std::isfinite(level))
    return std::nan("");
  if (log_x && (!(x0 > 0) || !(x1 > 0))) return std::nan("");
  if (f1 == f0) return x1;
  const double t = std::clamp((level - f0) / (f1 - f0), 0.0, 1.0);
  if (log_x) return std::exp(std::log(x0) + t * (std::log(x1) - std::log(x0)));
  return x0 + t * (x1 - x0);
}

}  // namespace icmscope::pipeline
