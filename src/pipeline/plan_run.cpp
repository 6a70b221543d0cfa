#include "icmscope/pipeline/plan_run.hpp"

#include <algorithm>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <limits>
#include <set>

#include "icmscope/core/errors.hpp"
#include "icmscope/core/random.hpp"
#include "icmscope/core/text_format.hpp"
#include "icmscope/morphology/indicators.hpp"
#include "icmscope/pipeline/plan_goals.hpp"
#include "icmscope/pipeline/plan_report.hpp"
#include "icmscope/pipeline/project_run.hpp"
#include "icmscope/pipeline/stage_clock.hpp"

namespace icmscope::pipeline {

using core::format_number;

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

core::ImageD scaled(const core::ImageD& im, double f) {
  core::ImageD o = im;
  for (double& v : o.pixels()) v *= f;
  return o;
}

// Per-realisation values corrected with the exposure's noise bias (see plan_run.hpp).
std::vector<double> corrected_values(const morphology::Estimate& e) {
  std::vector<double> out(e.samples.size(), kNaN);
  double s1 = 0.0, s2 = 0.0;
  int n = 0;
  for (double v : e.samples)
    if (std::isfinite(v)) {
      s1 += v;
      s2 += v * v;
      ++n;
    }
  if (n == 0) return out;
  const double mean = s1 / n, mean2 = s2 / n, ref = e.reference;
  for (std::size_t k = 0; k < e.samples.size(); ++k) {
    const double v = e.samples[k];
    if (!std::isfinite(v)) continue;
    if (!std::isfinite(ref) || e.mode == morphology::BiasMode::none) {
      out[k] = v;
    } else if (e.mode == morphology::BiasMode::quadrature) {
      const double X = v * v - (mean2 - ref * ref);
      out[k] = X >= 0 ? std::sqrt(X) : -std::sqrt(-X);
    } else {
      out[k] = v - (mean - ref);
    }
  }
  return out;
}

// Which indicator families a set of names needs.
struct Needs {
  std::set<std::string> c, w, p;  // apertures
  bool A = false, A_phot = false, gini = false, S = false, ell = false;
  void add(const std::string& name, const std::string& ap) {
    if (name == "c") c.insert(ap);
    else if (name == "w") w.insert(ap);
    else if (!name.empty() && name[0] == 'P') p.insert(ap);
    else if (name == "A" || name == "A_raw") A = true;
    else if (name == "A_phot") A_phot = true;
    else if (name == "gini" || name == "M20") gini = true;
    else if (name == "S") S = true;
    else if (name == "ellipticity" || name == "pa_deg") ell = true;
  }
};

}  // namespace

std::uint64_t exposure_seed(std::uint64_t seed, double exposure_ks) {
  std::uint64_t st = seed ^ (0x9e3779b97f4a7c15ULL * static_cast<std::uint64_t>(std::llround(exposure_ks * 1000.0) + 1));
  return core::splitmix64(st);
}

PlanExposure simulate_exposure(const PlanTarget& t, double exposure_ks, int realisations, std::uint64_t seed,
                               const std::vector<std::string>& schemes,
                               const std::vector<config::IndicatorRef>& indicators, double core_radius_r500,
                               int threads) {
  const auto t0 = clock_type::now();
  PlanExposure e;
  e.exposure_ks = exposure_ks;
  e.seed = seed;
  e.realisations = realisations;
  const double f = exposure_ks / t.reference_exposure_ks;
  const ExpectedObservation& x = t.expected;
  const core::ImageD model = scaled(x.model, f);
  const core::ImageD bkg = scaled(t.background, f);
  // Expected counts about the target centre. B: everything that is not cluster
  // emission (sky, particle and, when drawn, point sources).
  const double R = t.r500_kpc / t.kpc_per_pixel, Rc = core_radius_r500 * R;
  const double all_r = counts_within(model, t.centre_x, t.centre_y, R);
  const double all_c = counts_within(model, t.centre_x, t.centre_y, Rc);
  e.source_r500 = f * counts_within(x.expected[kCompCluster], t.centre_x, t.centre_y, R);
  e.source_core = f * counts_within(x.expected[kCompCluster], t.centre_x, t.centre_y, Rc);
  e.background_r500 = all_r - e.source_r500;
  e.background_core = all_c - e.source_core;
  e.background_fraction_r500 = all_r > 0 ? e.background_r500 / all_r : kNaN;
  e.sn_r500 = all_r > 0 ? e.source_r500 / std::sqrt(all_r) : 0.0;
  e.sn_core = all_c > 0 ? e.source_core / std::sqrt(all_c) : 0.0;

  // The measurement, as `measure` does a mock in expected mode.
  std::vector<morphology::ClassificationScheme> sch;
  Needs need;
  for (const auto& r : indicators) need.add(r.name, r.aperture);
  for (const auto& n : schemes) {
    sch.push_back(morphology::classification_preset(n));
    for (const auto& rule : sch.back().rules) need.add(rule.indicator, rule.aperture);
  }
  morphology::MeasureSettings ms = morphology::default_measure_settings(t.kpc_per_pixel, t.r500_kpc);
  auto keep = [](auto& v, const std::set<std::string>& labels) {
    v.erase(std::remove_if(v.begin(), v.end(), [&](const auto& a) { return !labels.count(a.label); }), v.end());
  };
  keep(ms.concentration, need.c);
  keep(ms.centroid_shift, need.w);
  keep(ms.power_ratios, need.p);
  if (!need.A) ms.asymmetry.radius_px = 0.0;
  if (!need.A_phot) ms.photon_asymmetry.r500_px = 0.0;
  if (!need.gini) ms.gini_m20.radius_px = 0.0;
  if (!need.S) ms.smoothness.radius_px = 0.0;
  if (!need.ell) ms.ellipticity.radius_px = 0.0;
  ms.realisations = realisations;
  ms.seed = seed;
  ms.source = morphology::RealisationSource::expected;
  ms.threads = threads;
  ms.presets.clear();
  morphology::MeasureInput in;
  in.counts = model;
  in.exposure = x.exposure_s;
  in.background = bkg;
  in.expected = model;
  in.kpc_per_pixel = t.kpc_per_pixel;
  const morphology::Indicators ind = morphology::measure(in, ms);

  for (const auto& r : indicators) {
    PlanIndicator pi;
    pi.ref = r;
    const morphology::NamedEstimate* ne = ind.find(r.name, r.aperture);
    if (ne && !ne->value.samples.empty()) {
      pi.corrected = corrected_values(ne->value);
      pi.reference = ne->value.reference;
      pi.bias = ne->value.mean - ne->value.reference;
      std::vector<double> v;
      for (double c : pi.corrected)
        if (std::isfinite(c)) v.push_back(c);
      if (v.size() >= 3) {
        std::sort(v.begin(), v.end());
        pi.available = true;
        pi.median = morphology::percentile_sorted(v, 0.5);
        pi.p16 = morphology::percentile_sorted(v, 0.16);
        pi.p84 = morphology::percentile_sorted(v, 0.84);
        pi.sigma = 0.5 * (pi.p84 - pi.p16);
      }
    }
    e.indicators.push_back(std::move(pi));
  }
  for (const auto& s : sch) {
    PlanClasses pc;
    pc.scheme = s.name;
    pc.verified = s.verified;
    pc.classes = s.classes;
    pc.per_realisation.assign(static_cast<std::size_t>(realisations), -1);
    std::vector<std::vector<double>> vals;
    bool ok = true;
    for (const auto& rule : s.rules) {
      const morphology::NamedEstimate* ne = ind.find(rule.indicator, rule.aperture);
      if (!ne || ne->value.samples.size() != static_cast<std::size_t>(realisations)) {
        ok = false;
        break;
      }
      vals.push_back(corrected_values(ne->value));
    }
    std::vector<int> n(s.classes.size(), 0);
    int avail = 0;
    if (ok) {
      std::vector<double> v(vals.size());
      for (int k = 0; k < realisations; ++k) {
        bool fin = true;
        for (std::size_t i = 0; i < vals.size(); ++i) {
          v[i] = vals[i][static_cast<std::size_t>(k)];
          fin = fin && std::isfinite(v[i]);
        }
        if (!fin) continue;
        const int c = morphology::scheme_class(s, v);
        pc.per_realisation[static_cast<std::size_t>(k)] = c;
        if (c >= 0 && c < static_cast<int>(n.size())) {
          ++n[static_cast<std::size_t>(c)];
          ++avail;
        }
      }
    }
    pc.probability.assign(s.classes.size(), kNaN);
    if (avail > 0) {
      for (std::size_t c = 0; c < n.size(); ++c) pc.probability[c] = static_cast<double>(n[c]) / avail;
      pc.dominant = static_cast<int>(std::max_element(n.begin(), n.end()) - n.begin());
    }
    e.classes.push_back(std::move(pc));
  }
  e.seconds = seconds_since(t0);
  return e;
}

PlanResult run_plan(const config::PlanRunSettings& s, Log& log, bool write_outputs) {
  const auto t0 = clock_type::now();
  PlanResult res;
  if (s.exposures_ks.empty()) throw core::ConfigError(s.source_file + ": exposures_ks: expected at least one exposure");
  if (write_outputs) ensure_directory(s.map.output.directory);
  const PlanContext ctx = make_plan_context(s);
  const double t_ref = s.exposures_ks.back();
  res.target = build_plan_target(s, ctx, t_ref, log);
  for (double t : s.exposures_ks) {
    PlanExposure e = simulate_exposure(res.target, t, s.realisations, exposure_seed(s.seed, t), s.schemes,
                                       s.indicators, s.core_radius_r500);
    if (res.exposures.empty()) {
      for (const auto& pi : e.indicators)
        if (pi.corrected.empty())
          throw core::ConfigError(s.source_file + ": indicators: '" + pi.ref.name + "@" + pi.ref.aperture +
                                  "' is not measured (names: c, w, P2/P0, P3/P0, P4/P0, A, A_phot, gini, M20, S, "
                                  "ellipticity; apertures: R500, 500 kpc, 100/500 kpc, 40/400 kpc, 0.1/1 R500)");
    }
    std::string line = "plan: " + format_number(t) + " ks: S(R500) " + format_number(e.source_r500, "%.0f") + ", S/N " +
                       format_number(e.sn_r500, "%.1f");
    for (const auto& pi : e.indicators)
      if (pi.available) line += ", " + pi.ref.label() + " " + format_number(pi.median, "%.3g") + " +- " + format_number(pi.sigma, "%.2g");
    log.info(line + " (" + format_number(e.seconds, "%.1f") + " s)");
    res.exposures.push_back(std::move(e));
  }
  answer_goals(s, res.exposures, res.goals, res.all_goals);

  if (s.reverse.enabled) {
    const auto& q = s.reverse;
    auto& rv = res.reverse;
    res.has_reverse = true;
    rv.exposure_ks = q.exposure_ks;
    rv.scheme = q.scheme;
    rv.class_label = q.class_label;
    rv.confidence = q.confidence;
    rv.realisations = q.realisations;
    rv.m500_msun = q.m500_msun;
    rv.redshift = q.redshift;
    rv.mt_relation = cells::relation_name(s.scaled.mt);
    rv.lm_relation = cells::relation_name(s.scaled.lm);
    rv.mt_reference = cells::relation_reference(s.scaled.mt);
    rv.lm_reference = cells::relation_reference(s.scaled.lm);
    config::PlanGoal g;
    g.kind = config::GoalKind::classes;
    g.scheme = q.scheme;
    g.class_label = q.class_label;
    g.confidence = q.confidence;
    config::PlanRunSettings one = s;
    one.schemes = {q.scheme};
    const std::size_t nM = q.m500_msun.size(), nz = q.redshift.size();
    for (std::size_t iz = 0; iz < nz; ++iz) {
      for (std::size_t iM = 0; iM < nM; ++iM) {
        ReversePoint p;
        p.m500_msun = q.m500_msun[iM];
        p.redshift = q.redshift[iz];
        cells::ScaledClusterSpec spec = s.scaled;
        spec.m500_msun = p.m500_msun;
        spec.redshift = p.redshift;
        spec.name = s.map.target.name + "_M" + format_number(p.m500_msun, "%.3g") + "_z" + format_number(p.redshift, "%.3g");
        try {
          const PlanTarget t = build_scaled_target(spec, s, ctx, q.exposure_ks, log);
          p.r500_kpc = t.r500_kpc;
          p.kT_keV = t.scaling.kT_keV;
          p.l_soft_erg_s = t.scaling.l_soft_erg_s;
          const std::uint64_t sd = exposure_seed(s.seed ^ (0x7265766572736521ULL + 7919ULL * (iz * nM + iM)), q.exposure_ks);
          const PlanExposure e = simulate_exposure(t, q.exposure_ks, q.realisations, sd, one.schemes, {},
                                                   s.core_radius_r500);
          p.source_r500 = e.source_r500;
          p.sn_r500 = e.sn_r500;
          const PlanClasses& pc = e.classes.front();
          if (pc.dominant >= 0) p.dominant = pc.classes[static_cast<std::size_t>(pc.dominant)];
          const double fr = goal_metric(g, one, e);
          p.fraction = std::isfinite(fr) ? fr : 0.0;
        } catch (const core::InputError& err) {
          // No usable image (e.g. no peak at all): not determined.
          log.warn("plan: reverse grid M500 " + format_number(p.m500_msun) + ", z " + format_number(p.redshift) + ": " + err.what());
        }
        p.determined = p.fraction >= q.confidence;
        log.info("plan: reverse: M500 " + format_number(p.m500_msun, "%.3g") + " Msun, z " + format_number(p.redshift, "%.3g") + ": " +
                 (p.dominant.empty() ? "-" : p.dominant) + " " + format_number(p.fraction, "%.2f") +
                 (p.determined ? " (determined)" : ""));
        rv.grid.push_back(p);
      }
    }
    rv.min_mass_at_z.assign(nz, kNaN);
    for (std::size_t iz = 0; iz < nz; ++iz)
      for (std::size_t iM = nM; iM-- > 0;) {
        if (!rv.grid[iz * nM + iM].determined) break;
        rv.min_mass_at_z[iz] = q.m500_msun[iM];
      }
    rv.max_redshift_at_mass.assign(nM, kNaN);
    for (std::size_t iM = 0; iM < nM; ++iM)
      for (std::size_t iz = 0; iz < nz; ++iz) {
        if (!rv.grid[iz * nM + iM].determined) break;
        rv.max_redshift_at_mass[iM] = q.redshift[iz];
      }
    // Between grid points: where the fraction crosses the confidence.
    rv.min_mass_interp_at_z.assign(nz, kNaN);
    rv.min_mass_at_edge.assign(nz, 0);
    for (std::size_t iz = 0; iz < nz; ++iz) {
      std::size_t first = nM;  // first mass of the determined run that reaches the top of the grid
      for (std::size_t iM = nM; iM-- > 0;) {
        if (!rv.grid[iz * nM + iM].determined) break;
        first = iM;
      }
      if (first == nM) continue;
      if (first == 0) {
        rv.min_mass_interp_at_z[iz] = q.m500_msun[0];
        rv.min_mass_at_edge[iz] = 1;
        continue;
      }
      const auto& lo = rv.grid[iz * nM + first - 1];
      const auto& hi = rv.grid[iz * nM + first];
      rv.min_mass_interp_at_z[iz] =
          level_crossing(lo.m500_msun, lo.fraction, hi.m500_msun, hi.fraction, q.confidence, true);
    }
    rv.max_redshift_interp_at_mass.assign(nM, kNaN);
    rv.max_redshift_at_edge.assign(nM, 0);
    for (std::size_t iM = 0; iM < nM; ++iM) {
      std::size_t last = nz;  // last redshift of the determined run that starts at the lowest one
      for (std::size_t iz = 0; iz < nz; ++iz) {
        if (!rv.grid[iz * nM + iM].determined) break;
        last = iz;
      }
      if (last == nz) continue;
      if (last + 1 == nz) {
        rv.max_redshift_interp_at_mass[iM] = q.redshift[nz - 1];
        rv.max_redshift_at_edge[iM] = 1;
        continue;
      }
      const auto& lo = rv.grid[last * nM + iM];
      const auto& hi = rv.grid[(last + 1) * nM + iM];
      rv.max_redshift_interp_at_mass[iM] =
          level_crossing(lo.redshift, lo.fraction, hi.redshift, hi.fraction, q.confidence, false);
    }
  }
  res.seconds = seconds_since(t0);
  if (write_outputs) res.written = write_plan_outputs(res, s, log);
  return res;
}

}  // namespace icmscope::pipeline
