// Re-Poissonised realisations: sampler, summaries, determinism, bias corrections.
#include <catch2/catch.hpp>

#include <cmath>

#include "icmscope/morphology/indicators.hpp"
#include "icmscope/morphology/poisson.hpp"
#include "icmscope/morphology/realisations.hpp"
#include "morph_test_models.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::morphology;

TEST_CASE("Poisson sampler: moments and pmf", "[morphology][realisations]") {
  // Mean and variance both equal mu; chi-square of the histogram against the exact pmf
  // (P(k) = mu^k e^-mu / k!). 2e5 draws per mean, fixed seeds; tolerances 5 sigma.
  for (double mu : {0.05, 0.7, 3.5, 11.9, 12.1, 40.0, 900.0}) {
    PoissonTable t({mu});
    core::RandomStream rng(17, static_cast<std::uint64_t>(mu * 100));
    const int N = 200000;
    std::vector<double> hist(static_cast<std::size_t>(mu + 12 * std::sqrt(mu) + 20), 0.0);
    double s = 0, s2 = 0;
    bool integral = true;
    for (int i = 0; i < N; ++i) {
      const double k = t.draw(0, rng);
      integral = integral && k == std::floor(k) && k >= 0;
      s += k;
      s2 += k * k;
      if (k < hist.size()) hist[static_cast<std::size_t>(k)] += 1;
    }
    CHECK(integral);
    const double mean = s / N, var = s2 / N - mean * mean;
    INFO("mu " << mu << " mean " << mean << " var " << var);
    CHECK(std::fabs(mean - mu) < 5 * std::sqrt(mu / N));
    CHECK(std::fabs(var - mu) < 5 * mu * std::sqrt(2.0 / N) + 5 * std::sqrt(mu / N));
    double chi2 = 0;
    int dof = 0;
    for (std::size_t k = 0; k < hist.size(); ++k) {
      const double p = std::exp(k * std::log(mu) - mu - std::lgamma(k + 1.0));
      const double e = N * p;
      if (e < 20) continue;
      chi2 += (hist[k] - e) * (hist[k] - e) / e;
      ++dof;
    }
    if (dof > 1) CHECK(chi2 < dof + 5 * std::sqrt(2.0 * dof));
  }
}

TEST_CASE("percentiles and summaries", "[morphology][realisations]") {
  // numpy.percentile default (linear, position (N - 1) q).
  CHECK(percentile_sorted({1, 2, 3, 4, 5}, 0.16) == Approx(1.64));
  CHECK(percentile_sorted({1, 2, 3, 4, 5}, 0.84) == Approx(4.36));
  const Estimate e = summarise(10.0, {11, 12, 13, 12, 12}, BiasMode::linear);
  CHECK(e.mean == Approx(12.0));
  CHECK(e.bias == Approx(2.0));
  CHECK(e.corrected == Approx(8.0));
  CHECK(e.sample_corrected(2) == Approx(9.0));
  // quadrature: X = raw^2 - (<v^2> - raw^2)
  const Estimate q = summarise(3.0, {4.0, 4.0}, BiasMode::quadrature);
  CHECK(q.corrected == Approx(std::sqrt(9.0 - 7.0)));
  const Estimate q2 = summarise(1.0, {2.0, 2.0}, BiasMode::quadrature);
  CHECK(q2.corrected == Approx(-std::sqrt(2.0)));
  // expected mode: bias relative to the reference
  const Estimate r = summarise(5.0, {7, 7}, BiasMode::linear, 4.0);
  CHECK(r.bias == Approx(3.0));
  CHECK(r.corrected == Approx(2.0));
  // angles unwrap about raw (period 180)
  const Estimate a = summarise(179.0, {1.0, 178.0, 2.0}, BiasMode::none, std::nan(""), 180.0);
  CHECK(a.mean == Approx((181.0 + 178.0 + 182.0) / 3));
}

namespace {
MeasureInput noisy_cluster(std::uint64_t seed, double total = 2e4, int n = 161) {
  core::ImageD mu = testing::beta_image(n, n, 80, 80, 6, 2.0 / 3.0, 1.0);
  const double s = mu.sum();
  for (auto& v : mu.pixels()) v = v * total / s + 0.02;
  MeasureInput in;
  in.counts = testing::poisson_image(mu, seed);
  in.expected = mu;
  in.background_level = 0.02;
  in.kpc_per_pixel = 5.0;
  return in;
}
MeasureSettings pr_w_settings(int nreal) {
  MeasureSettings st;
  st.power_ratios.push_back({70, "R500", CentreChoice::centroid, LengthUnit::pixel});
  st.centroid_shift.push_back({70, 20, 0.05, 3, "R500"});
  st.realisations = nreal;
  return st;
}
}  // namespace

TEST_CASE("realisations do not depend on the thread count", "[morphology][realisations]") {
  const MeasureInput in = noisy_cluster(3);
  MeasureSettings st = default_measure_settings(5.0, 350.0);
  st.realisations = 12;
  st.seed = 99;
  st.threads = 1;
  const Indicators a = measure(in, st);
  st.threads = 2;
  const Indicators b = measure(in, st);
  REQUIRE(a.values.size() == b.values.size());
  for (std::size_t i = 0; i < a.values.size(); ++i) {
    INFO(a.values[i].name << " " << a.values[i].aperture);
    CHECK(a.values[i].value.samples == b.values[i].value.samples);
    if (std::isfinite(a.values[i].value.corrected)) CHECK(a.values[i].value.corrected == b.values[i].value.corrected);
  }
  st.seed = 100;  // a different seed changes the realisations
  const Indicators c = measure(in, st);
  CHECK(c.find("w", "R500")->value.samples != a.find("w", "R500")->value.samples);
}

TEST_CASE("bias corrections bring P3/P0 and w of noise-only circular clusters to ~0", "[morphology][realisations]") {
  // morphology.md sec. 2, 3, 9 (Weissmann et al. 2013 scheme): 20 Poisson images
  // (seeds 500..519) of a circular beta model with 2e4 counts, 50 realisations each
  // (seeds 100..119). Raw P3/P0 and w are biased up by noise; the corrected means are
  // consistent with 0 within 3.5 standard errors and well below the raw means.
  const int K = 20;
  double p_raw = 0, p_cor = 0, p_cor2 = 0, p_an = 0, p_an2 = 0, w_raw = 0, w_cor = 0, w_cor2 = 0, w_lin = 0;
  for (int k = 0; k < K; ++k) {
    const MeasureInput in = noisy_cluster(500 + k);
    MeasureSettings st = pr_w_settings(50);
    st.seed = 100 + k;
    const Indicators ind = measure(in, st);
    const Estimate& p = ind.find("P3/P0", "R500")->value;
    const Estimate& pa = ind.find("P3/P0_analytic", "R500")->value;
    const Estimate& w = ind.find("w", "R500")->value;
    p_raw += p.raw;
    p_cor += p.corrected;
    p_cor2 += p.corrected * p.corrected;
    p_an += pa.raw;
    p_an2 += pa.raw * pa.raw;
    w_raw += w.raw;
    w_cor += w.corrected;
    w_cor2 += w.corrected * w.corrected;
    w_lin += w.raw - w.bias;
  }
  const auto se = [&](double s1, double s2) { const double m = s1 / K; return std::sqrt((s2 / K - m * m) / (K - 1)); };
  INFO("P3/P0 raw " << p_raw / K << " corrected " << p_cor / K << " +- " << se(p_cor, p_cor2) << " analytic "
                    << p_an / K << " +- " << se(p_an, p_an2));
  INFO("w raw " << w_raw / K << " corrected (quadrature) " << w_cor / K << " +- " << se(w_cor, w_cor2)
                << " linear " << w_lin / K);
  CHECK(std::fabs(p_cor / K) < 3.5 * se(p_cor, p_cor2));
  CHECK(std::fabs(p_an / K) < 3.5 * se(p_an, p_an2));
  CHECK(std::fabs(p_cor / K) < 0.25 * p_raw / K);
  CHECK(std::fabs(w_cor / K) < 3.5 * se(w_cor, w_cor2));
  CHECK(std::fabs(w_cor / K) < 0.5 * w_raw / K);
  // The linear form only removes part of a pure-noise w (realisations.hpp):
  // about 1 - 1/sqrt(2) = 29% of it.
  CHECK(w_lin / K > 0.5 * w_raw / K);
}

TEST_CASE("expected-image realisations: bias relative to the noise-free value", "[morphology][realisations]") {
  const MeasureInput in = noisy_cluster(42);
  MeasureSettings st = pr_w_settings(40);
  st.source = RealisationSource::expected;
  st.seed = 5;
  const Indicators ind = measure(in, st);
  const Estimate& p = ind.find("P3/P0", "R500")->value;
  CHECK(std::isfinite(p.reference));
  CHECK(p.reference < 1e-12);  // the noise-free circular model (pixel-grid symmetric)
  CHECK(p.bias == Approx(p.mean - p.reference));
  CHECK(p.corrected == Approx(p.raw - p.bias));
  CHECK(p.bias > 0.0);
  // without an expected image the mode is refused
  MeasureInput in2 = in;
  in2.expected.reset();
  CHECK_THROWS_AS(measure(in2, st), core::ConfigError);
}
