// `plan` (exposure planning): counts and S/N against exposure, precision
// against exposure, the shortest-exposure answer under reseeding, the goal
// interpolation on closed forms, thread-count independence, and that the plan
// reports the scaling relations it used with the values they gave.
//
// Statistical checks use fixed seeds and tolerances derived from the
// statistics (stated beside each check), not tuned to pass.
#include <catch2/catch.hpp>

#include <cmath>
#include <fstream>
#include <memory>

#include "icmscope/config/plan_settings.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/instrument/realise.hpp"
#include "icmscope/pipeline/plan_goals.hpp"
#include "icmscope/pipeline/plan_run.hpp"
#include "test_support.hpp"

using namespace icmscope;
namespace fs = std::filesystem;

namespace {

// A small scaled-cluster plan file in a scratch folder; `extra` is appended.
fs::path write_plan(const std::string& name, double m500, double z, const std::string& extra) {
  const auto dir = testing::scratch_dir("plan/" + name);
  const auto p = dir / "plan.yaml";
  std::ofstream f(p);
  f << "target: {name: " << name << ", redshift: " << z << "}\n"
    << "scaled: {m500_msun: " << m500 << "}\n"
    << "emission: {table_kT_points: 48, table_Z_points: 3}\n"
    << "map: {pixels: 128, pixel_arcsec: 10.0}\n"
    << "instrument: {file: '" << (testing::source_dir() / "config" / "instruments" / "vasta_la.yaml").string()
    << "', psf_mode: on_axis}\n"
    << "output: {directory: '" << dir.string() << "'}\n"
    << extra;
  return p;
}

struct Fixture {
  config::PlanRunSettings s;
  pipeline::PlanContext ctx;
  pipeline::PlanTarget t;
};

// Built once per target (the maps are the slow part).
const Fixture& bright() {
  static std::unique_ptr<Fixture> f;
  if (!f) {
    f = std::make_unique<Fixture>();
    f->s = config::load_plan_run(
        write_plan("bright", 4e14, 0.15, "exposures_ks: [2, 4, 8, 16, 32]\nrealisations: 100\nseed: 5\n").string());
    f->ctx = pipeline::make_plan_context(f->s);
    pipeline::Log log(true);
    f->t = pipeline::build_plan_target(f->s, f->ctx, 32.0, log);
  }
  return *f;
}

// Net counts within R500 of Poisson draws of the expected image, with a hard
// pixel-centre aperture (so that each pixel's counts enter with weight 1).
struct HardAperture {
  double S = 0, B = 0;
  std::vector<std::size_t> pix;
};

HardAperture hard_aperture(const pipeline::PlanTarget& t, double f, double radius_px) {
  HardAperture h;
  const auto& c = t.expected.expected[pipeline::kCompCluster];
  for (int iy = 0; iy < c.ny(); ++iy)
    for (int ix = 0; ix < c.nx(); ++ix)
      if (std::hypot(ix - t.centre_x, iy - t.centre_y) < radius_px) {
        const std::size_t i = static_cast<std::size_t>(iy) * c.nx() + ix;
        h.pix.push_back(i);
        h.S += f * c.data()[i];
        h.B += f * (t.expected.model.data()[i] - c.data()[i]);
      }
  return h;
}

}  // namespace

TEST_CASE("plan: expected counts are linear in exposure", "[plan]") {
  const Fixture& F = bright();
  const std::vector<double> t = {2, 8, 32};
  std::vector<pipeline::PlanExposure> e;
  for (double x : t) e.push_back(pipeline::simulate_exposure(F.t, x, 5, 1, {}, {}, 0.15));
  for (std::size_t i = 0; i < t.size(); ++i) {
    // Invariant: S, B proportional to t (every expected image scales with the on-time).
    CHECK(e[i].source_r500 / t[i] == Approx(e[2].source_r500 / t[2]).epsilon(1e-12));
    CHECK(e[i].background_r500 / t[i] == Approx(e[2].background_r500 / t[2]).epsilon(1e-12));
    CHECK(e[i].source_core / t[i] == Approx(e[2].source_core / t[2]).epsilon(1e-12));
    CHECK(e[i].source_core < e[i].source_r500);
  }
  // The scaled expected observation against one built directly at 8 ks: the
  // only difference is the dither pattern's duration (exposure map smoothing of
  // chip gaps), a small effect inside R500 (stated tolerance 1%).
  pipeline::Log log(true);
  const pipeline::PlanTarget t8 = pipeline::build_plan_target(F.s, F.ctx, 8.0, log);
  const auto d8 = pipeline::simulate_exposure(t8, 8.0, 5, 1, {}, {}, 0.15);
  std::printf("plan counts: S(R500) at 8 ks scaled from 32 ks %.1f, built at 8 ks %.1f (ratio %.5f)\n",
              e[1].source_r500, d8.source_r500, e[1].source_r500 / d8.source_r500);
  CHECK(e[1].source_r500 == Approx(d8.source_r500).epsilon(0.01));
  CHECK(e[1].background_r500 == Approx(d8.background_r500).epsilon(0.01));
}

TEST_CASE("plan: S/N is S/sqrt(S+B), grows as sqrt(t) and matches Poisson draws in both limits", "[plan]") {
  const Fixture& F = bright();
  // Background-dominated target: a 1e14 Msun cluster at z = 0.6.
  config::PlanRunSettings sf = config::load_plan_run(
      write_plan("faint", 1e14, 0.6, "exposures_ks: [10]\nrealisations: 5\n").string());
  pipeline::Log log(true);
  const pipeline::PlanTarget faint = pipeline::build_plan_target(sf, F.ctx, 10.0, log);
  struct Case {
    const pipeline::PlanTarget* t;
    double exposure_ks, radius_r500;
    const char* what;
  };
  // Source-dominated: the bright cluster's core at a long exposure; background-
  // dominated: the faint cluster within R500.
  const std::vector<Case> cases = {{&F.t, 32.0, 0.15, "source-dominated"}, {&faint, 10.0, 1.0, "background-dominated"}};
  for (const auto& c : cases) {
    const auto e1 = pipeline::simulate_exposure(*c.t, c.exposure_ks, 5, 1, {}, {}, c.radius_r500);
    const auto e4 = pipeline::simulate_exposure(*c.t, 4 * c.exposure_ks, 5, 1, {}, {}, c.radius_r500);
    const double S = c.radius_r500 < 1 ? e1.source_core : e1.source_r500;
    const double B = c.radius_r500 < 1 ? e1.background_core : e1.background_r500;
    const double sn = c.radius_r500 < 1 ? e1.sn_core : e1.sn_r500;
    const double sn4 = c.radius_r500 < 1 ? e4.sn_core : e4.sn_r500;
    const double fB = B / (S + B);
    CHECK(sn == Approx(S / std::sqrt(S + B)).epsilon(1e-12));
    CHECK(sn4 / sn == Approx(2.0).epsilon(1e-12));  // sqrt(4): S and B both scale with t
    // The limits: S/N -> sqrt(S) when B << S, S/N -> S/sqrt(B) when B >> S; the
    // exact form differs from each limit by a factor sqrt(1 - fB) or sqrt(1 - fS).
    if (fB < 0.5) CHECK(sn / std::sqrt(S) == Approx(std::sqrt(1.0 - fB)).epsilon(1e-12));
    else CHECK(sn / (S / std::sqrt(B)) == Approx(std::sqrt(fB)).epsilon(1e-12));
    // Against Poisson draws: net = n - B in a hard aperture, M draws. mean(net)
    // has standard error sqrt(S+B)/sqrt(M); the sample standard deviation has
    // relative standard error 1/sqrt(2(M-1)). Tolerance: 3 standard errors.
    const double f = c.exposure_ks / c.t->reference_exposure_ks;
    const double R = c.radius_r500 * c.t->r500_kpc / c.t->kpc_per_pixel;
    const HardAperture h = hard_aperture(*c.t, f, R);
    CHECK(h.S == Approx(S).epsilon(0.03));  // hard vs exact-area aperture: edge pixels only
    core::ImageD model = c.t->expected.model;
    for (double& v : model.pixels()) v *= f;
    const int M = 400;
    double s1 = 0, s2 = 0;
    for (int k = 0; k < M; ++k) {
      const auto draw = instrument::poisson_counts(model, 9000 + static_cast<std::uint64_t>(k));
      double n = 0;
      for (std::size_t i : h.pix) n += draw.data()[i];
      const double net = n - h.B;
      s1 += net;
      s2 += net * net;
    }
    const double mean = s1 / M, sd = std::sqrt((s2 - M * mean * mean) / (M - 1));
    const double sn_emp = mean / sd, sn_h = h.S / std::sqrt(h.S + h.B);
    std::printf("plan S/N %s: S %.0f B %.0f (B fraction %.2f): S/sqrt(S+B) %.2f, Poisson draws %.2f\n", c.what, h.S,
                h.B, fB, sn_h, sn_emp);
    CHECK(std::fabs(mean - h.S) < 3.0 * std::sqrt(h.S + h.B) / std::sqrt(M));
    CHECK(std::fabs(sd / std::sqrt(h.S + h.B) - 1.0) < 3.0 / std::sqrt(2.0 * (M - 1)));
  }
}

TEST_CASE("plan: indicator precision improves with exposure within statistical tolerance", "[plan]") {
  const Fixture& F = bright();
  const std::vector<config::IndicatorRef> refs = {{"w", "R500"}, {"P3/P0", "R500"}, {"c", "100/500 kpc"}};
  const int N = 100;
  std::vector<pipeline::PlanExposure> e;
  for (double t : F.s.exposures_ks)
    e.push_back(pipeline::simulate_exposure(F.t, t, N, pipeline::exposure_seed(5, t), {}, refs, 0.15));
  // sigma = (p84 - p16)/2 of N Gaussian samples has relative standard error
  // ~0.97/sqrt(N) (quantile variances q(1-q)/(N f^2) and their covariance); two
  // independent estimates differ by sqrt(2) of that. Tolerance: 3 standard errors.
  const double rel = 3.0 * std::sqrt(2.0) * 0.97 / std::sqrt(N);
  for (std::size_t j = 0; j < refs.size(); ++j) {
    std::printf("plan precision %s:", refs[j].label().c_str());
    for (std::size_t i = 0; i < e.size(); ++i) std::printf(" %.3g ks %.3g;", e[i].exposure_ks, e[i].indicators[j].sigma);
    std::printf("\n");
    for (std::size_t i = 0; i + 1 < e.size(); ++i) {
      INFO(refs[j].label() << " " << e[i].exposure_ks << " -> " << e[i + 1].exposure_ks << " ks");
      REQUIRE(e[i].indicators[j].available);
      CHECK(e[i + 1].indicators[j].sigma <= e[i].indicators[j].sigma * (1.0 + rel));
    }
    // Over the whole grid (x16 in exposure) the precision improves by more than
    // the tolerance: sigma ~ t^-1/2 predicts x4 (concentration saturates more slowly).
    CHECK(e.back().indicators[j].sigma < e.front().indicators[j].sigma / (1.0 + rel));
  }
}

TEST_CASE("plan: realisations do not depend on the thread count", "[plan]") {
  const Fixture& F = bright();
  const std::vector<config::IndicatorRef> refs = {{"w", "R500"}, {"A_phot", "R500"}};
  const auto a = pipeline::simulate_exposure(F.t, 4.0, 12, 77, {"w_two_class"}, refs, 0.15, 1);
  const auto b = pipeline::simulate_exposure(F.t, 4.0, 12, 77, {"w_two_class"}, refs, 0.15, 2);
  for (std::size_t j = 0; j < refs.size(); ++j)
    for (std::size_t k = 0; k < a.indicators[j].corrected.size(); ++k)
      CHECK(a.indicators[j].corrected[k] == b.indicators[j].corrected[k]);  // bitwise
  CHECK(a.classes[0].per_realisation == b.classes[0].per_realisation);
}

TEST_CASE("plan: goal interpolation reproduces closed forms", "[plan]") {
  config::PlanGoal g;
  g.kind = config::GoalKind::precision;
  g.sigma_max = 0.01;
  const std::vector<double> t = {1, 2, 4, 8, 16, 32};
  std::vector<double> m;
  for (double x : t) m.push_back(0.05 / std::sqrt(x));  // sigma = a t^-1/2
  pipeline::GoalAnswer a;
  pipeline::shortest_exposure(g, t, m, 0.01, a);
  // a / sqrt(t*) = thr  ->  t* = (a / thr)^2 = 25 ks; log-log interpolation is exact for a power law.
  CHECK(a.status == "reached");
  CHECK(a.exposure_ks == Approx(25.0).epsilon(1e-12));
  pipeline::shortest_exposure(g, t, m, 0.001, a);  // beyond the grid: extrapolated with t^-1/2
  CHECK(a.status == "not_reached");
  CHECK(a.extrapolated_ks == Approx(2500.0).epsilon(1e-12));
  pipeline::shortest_exposure(g, t, m, 0.1, a);
  CHECK(a.status == "below_grid");
  // A class fraction linear in log t: f = 0.5 + 0.1 log2(t) reaches 0.9 at t = 16 exactly; 0.85 at 2^3.5.
  config::PlanGoal c;
  c.kind = config::GoalKind::classes;
  std::vector<double> f;
  for (double x : t) f.push_back(0.5 + 0.1 * std::log2(x));
  pipeline::shortest_exposure(c, t, f, 0.85, a);
  CHECK(a.exposure_ks == Approx(std::pow(2.0, 3.5)).epsilon(1e-12));
  // A dip below the threshold after a first crossing: the answer is the last crossing.
  std::vector<double> d = {0.5, 0.95, 0.8, 0.92, 0.95, 0.97};
  pipeline::shortest_exposure(c, t, d, 0.9, a);
  CHECK(a.exposure_ks > 4.0);
  CHECK(a.exposure_ks < 8.0);
}

TEST_CASE("plan: the reverse question's crossing between grid points reproduces closed forms", "[plan]") {
  // Closed forms (common practice: linear interpolation of a monotonic metric).
  // A fraction linear in log M: f = 0.4 + 0.2 log10(M / 1e14) = 0.8 at log10(M / 1e14) = 2, M = 1e16;
  // between grid masses 3e15 and 3e16 the log-linear crossing is exact.
  auto f = [](double M) { return 0.4 + 0.2 * std::log10(M / 1e14); };
  CHECK(pipeline::level_crossing(3e15, f(3e15), 3e16, f(3e16), 0.8, true) == Approx(1e16).epsilon(1e-12));
  // Decreasing with z (the most distant redshift): f = 0.95 - 0.5 z crosses 0.8 at z = 0.3 exactly.
  CHECK(pipeline::level_crossing(0.2, 0.85, 0.4, 0.75, 0.8, false) == Approx(0.3).epsilon(1e-12));
  // Equal fractions: the determined point; non-finite input: NaN; out-of-bracket levels clamp to the ends.
  CHECK(pipeline::level_crossing(1.0, 0.8, 2.0, 0.8, 0.8, false) == 2.0);
  CHECK(std::isnan(pipeline::level_crossing(1.0, std::nan(""), 2.0, 0.8, 0.8, false)));
  CHECK(std::isnan(pipeline::level_crossing(0.0, 0.5, 2.0, 0.9, 0.8, true)));
  CHECK(pipeline::level_crossing(1.0, 0.5, 2.0, 0.7, 0.8, false) == 2.0);
}

TEST_CASE("plan: the shortest exposure is stable under reseeding within its quoted uncertainty", "[plan]") {
  const Fixture& F = bright();
  const std::string goals =
      "goals:\n  - {kind: precision, indicator: w, aperture: R500, sigma_max: 0.004}\n"
      "  - {kind: class, scheme: w_two_class, confidence: 0.95}\n";
  double ans[2], sig[2];
  for (int k = 0; k < 2; ++k) {
    auto s = config::load_plan_run(
        write_plan("reseed" + std::to_string(k), 4e14, 0.15,
                   "exposures_ks: [2, 4, 8, 16, 32]\nrealisations: 100\nbootstrap: 200\nseed: " +
                       std::to_string(101 + k) + "\nclassification: [w_two_class]\nindicators: ['w@R500']\n" + goals)
            .string());
    pipeline::Log log(true);
    const auto r = pipeline::run_plan(s, log, false);
    REQUIRE(r.goals.size() == 2);
    REQUIRE(r.goals[0].status == "reached");
    ans[k] = r.goals[0].exposure_ks;
    sig[k] = r.goals[0].sigma_ks;
    std::printf("plan reseed %d: sigma(w) <= 0.004 at %.3g ks (bootstrap %.3g-%.3g, sigma %.3g); all goals %s %.3g ks\n",
                101 + k, ans[k], r.goals[0].p16_ks, r.goals[0].p84_ks, sig[k], r.all_goals.status.c_str(),
                r.all_goals.exposure_ks);
    CHECK(sig[k] > 0.0);
    CHECK(r.goals[0].p16_ks <= ans[k] * 1.000001);
    CHECK(r.goals[0].p84_ks >= ans[k] * 0.999999);
    CHECK(r.all_goals.exposure_ks >= ans[k] * 0.999999);
  }
  (void)F;
  // Two independent estimates: their difference has sigma sqrt(s1^2 + s2^2); 3 sigma.
  CHECK(std::fabs(ans[0] - ans[1]) <= 3.0 * std::hypot(sig[0], sig[1]));
}

TEST_CASE("plan: reports the scaling relations used and the values they gave", "[plan]") {
  const Fixture& F = bright();
  cells::ScaledClusterSummary sum;
  cells::ScaledClusterSpec spec = F.s.scaled;
  (void)cells::scaled_cluster(spec, F.ctx.cosmology, &sum);
  CHECK(F.t.scaled);
  CHECK(F.t.mt_relation == "vikhlinin2009");
  CHECK(F.t.scaling.mt_reference == cells::relation_reference(cells::MassTemperatureRelation::Vikhlinin09));
  CHECK(F.t.scaling.lm_reference == cells::relation_reference(cells::LuminosityMassRelation::Vikhlinin09));
  CHECK(F.t.scaling.kT_keV == sum.kT_keV);
  CHECK(F.t.scaling.r500_kpc == sum.r500_kpc);
  CHECK(F.t.r500_kpc == sum.r500_kpc);
  CHECK(F.t.scaling.l_soft_erg_s == sum.l_soft_erg_s);
  // The relation named in the file is the one used.
  auto s = config::load_plan_run(
      write_plan("arnaud", 4e14, 0.15, "exposures_ks: [5]\n").string());
  CHECK(s.scaled.mt == cells::MassTemperatureRelation::Vikhlinin09);
  const auto p = write_plan("arnaud2", 4e14, 0.15, "exposures_ks: [5]\n");
  {
    std::ifstream in(p);
    std::string text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
    const auto at = text.find("scaled: {m500_msun: 4e+14}");
    REQUIRE(at != std::string::npos);
    text.replace(at, std::string("scaled: {m500_msun: 4e+14}").size(),
                 "scaled: {m500_msun: 4e+14, mt_relation: arnaud2005_hot}");
    std::ofstream(p) << text;
  }
  CHECK(config::load_plan_run(p.string()).scaled.mt == cells::MassTemperatureRelation::Arnaud05Hot);
}

TEST_CASE("plan: bad plan files are one-line errors naming the key", "[plan]") {
  auto msg = [](const std::string& extra, bool scaled = true) {
    const auto p = write_plan("bad", 4e14, 0.15, extra);
    if (!scaled) {
      std::ofstream(p, std::ios::app) << "maps: {file: x.fits}\n";
    }
    try {
      config::load_plan_run(p.string());
    } catch (const core::ConfigError& e) {
      return std::string(e.what());
    }
    return std::string();
  };
  CHECK(msg("exposures_ks: [5, 2]\n").find("exposures_ks") != std::string::npos);
  CHECK(msg("exposures_ks: [5]\nrealisation: 10\n").find("realisations") != std::string::npos);  // nearest key
  CHECK(msg("exposures_ks: [5]\ngoals:\n  - {kind: precision, indicator: w}\n").find("sigma_max") != std::string::npos);
  CHECK(msg("exposures_ks: [5]\n", false).find("exactly one target source") != std::string::npos);
  CHECK(msg("exposures_ks: [5]\ngoals:\n  - {kind: class, scheme: w_two_class, class: calm}\n").find("class") !=
        std::string::npos);
}

TEST_CASE("plan: model, maps-file and cells-file targets of one cluster agree", "[plan]") {
  // Maren-7 three ways: its model integrated along the line of sight, a `project`
  // maps file of the same integration, and 30000 synthesised particles. The
  // expected counts within R500 agree (maps file: the same integration, 0.5%;
  // particles: the particle projection's ~0.6% annulus accuracy, 2%).
  const auto dir = testing::scratch_dir("plan/kinds");
  const fs::path model = testing::source_dir() / "demo_clusters" / "models" / "maren7_cool_core.yaml";
  const std::string exe = (testing::binary_dir() / "icmscope").string();
  const std::string inst = (testing::source_dir() / "config" / "instruments" / "vasta_la.yaml").string();
  {
    std::ofstream(dir / "proj.yaml") << "target: {name: Maren-7, redshift: 0.08}\n"
                                     << "cells: {model: '" << model.string()
                                     << "', model_projection: analytic, analytic_subsamples: 1}\n"
                                     << "emission: {table_kT_points: 48, table_Z_points: 3}\n"
                                     << "map: {pixels: 160, pixel_arcsec: 12}\n"
                                     << "output: {directory: '" << dir.string() << "', prefix: m7, quicklook: false}\n";
  }
  int st = 0;
  const std::string txt = testing::run_capture(exe + " project -q '" + (dir / "proj.yaml").string() + "' 2>&1 && " +
                                                   exe + " synth -q '" + model.string() + "' -o '" +
                                                   (dir / "cells.h5").string() + "' --particles 30000 2>&1",
                                               &st);
  INFO(txt);
  REQUIRE(st == 0);
  const std::string common = "instrument: {file: '" + inst + "', psf_mode: on_axis}\nexposures_ks: [10]\n"
                             "realisations: 10\nindicators: ['w@R500']\nclassification: [w_two_class]\n"
                             "output: {directory: '" + dir.string() + "'}\n";
  const std::string grid = "emission: {table_kT_points: 48, table_Z_points: 3}\nmap: {pixels: 160, pixel_arcsec: 12}\n";
  std::ofstream(dir / "model.yaml") << "target: {name: a, redshift: 0.08}\ncells: {model: '" << model.string()
                                    << "'}\n" << grid << common;
  std::ofstream(dir / "maps.yaml") << "target: {name: b, redshift: 0.08, m500_msun: 5.5e14}\nmaps: {file: m7_maps.fits}\n"
                                   << common;
  std::ofstream(dir / "cells.yaml") << "target: {name: c, redshift: 0.08, m500_msun: 5.5e14}\ncells: {file: cells.h5}\n"
                                    << grid << common;
  double S[3], R[3];
  const char* names[3] = {"model", "maps", "cells"};
  for (int k = 0; k < 3; ++k) {
    const auto s = config::load_plan_run((dir / (std::string(names[k]) + ".yaml")).string());
    CHECK(s.target_kind == names[k]);
    pipeline::Log log(true);
    const auto r = pipeline::run_plan(s, log, false);
    S[k] = r.exposures[0].source_r500;
    R[k] = r.target.r500_kpc;
    std::printf("plan target kinds: %s S(R500, 10 ks) = %.1f\n", names[k], S[k]);
  }
  // R500: the model file's m500_msun and the given 5.5e14 Msun through the same cosmology.
  CHECK(R[1] == Approx(R[0]).epsilon(1e-12));
  CHECK(R[2] == Approx(R[0]).epsilon(1e-12));
  CHECK(S[1] == Approx(S[0]).epsilon(0.005));
  CHECK(S[2] == Approx(S[0]).epsilon(0.02));
}
