// Watson U^2 and the photon asymmetry (Nurgaliev et al. 2013).
#include <catch2/catch.hpp>

#include <cmath>
#include <sstream>

#include "icmscope/morphology/photon_asymmetry.hpp"
#include "morph_test_models.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::morphology;

TEST_CASE("Watson U^2: exact small cases", "[morphology][photon_asymmetry]") {
  // [D] N = 1: U^2 = 1/12 whatever u.
  for (double u : {0.0, 0.3, 0.999}) {
    std::vector<double> v{u};
    CHECK(watson_u2(v) == Approx(1.0 / 12.0).epsilon(1e-14));
  }
  // [D] All N values equal: U^2 = N / 12.
  std::vector<double> same(37, 0.61);
  CHECK(watson_u2(same) == Approx(37.0 / 12.0).epsilon(1e-12));
}

TEST_CASE("Watson U^2 is invariant under rotation of the angles", "[morphology][photon_asymmetry]") {
  // [D] Watson (1961): U^2 does not depend on the origin of the circle.
  core::RandomStream rng(3, 0);
  std::vector<double> u(200);
  for (auto& x : u) x = std::pow(rng.uniform(), 2.0);  // non-uniform
  std::vector<double> a = u;
  const double u0 = watson_u2(a);
  for (double t : {0.1, 0.5, 0.77}) {
    std::vector<double> b = u;
    for (auto& x : b) x = std::fmod(x + t, 1.0);
    CHECK(watson_u2(b) == Approx(u0).epsilon(1e-10));
  }
  CHECK(u0 > 0.5);
}

TEST_CASE("Watson U^2 = Cramer-von Mises W^2 - N (mean - 1/2)^2, W^2 from scipy", "[morphology][photon_asymmetry]") {
  // Cross-check with scipy.stats.cramervonmises (W^2 against the uniform law).
  core::RandomStream rng(11, 0);
  std::vector<double> u(25);
  std::ostringstream list;
  list.precision(17);
  double mean = 0;
  for (std::size_t i = 0; i < u.size(); ++i) {
    u[i] = std::sqrt(rng.uniform());
    mean += u[i];
    list << (i ? "," : "") << u[i];
  }
  mean /= u.size();
  const std::string cmd = testing::python() +
                          " -c \"from scipy.stats import cramervonmises; print(repr(cramervonmises([" + list.str() +
                          "], 'uniform').statistic))\" 2>/dev/null";
  int status = 0;
  const std::string out = testing::run_capture(cmd, &status);
  if (status != 0 || out.empty()) {
    WARN("scipy not available: cross-check skipped");
    return;
  }
  const double W2 = std::stod(out);
  std::vector<double> v = u;
  CHECK(watson_u2(v) == Approx(W2 - u.size() * (mean - 0.5) * (mean - 0.5)).epsilon(1e-12));
}

TEST_CASE("mean Watson U^2 of isotropic angles is 1/12 at any N", "[morphology][photon_asymmetry]") {
  // [D] E[U^2] = 1/12 (morphology.md sec. 5); var(U^2) ~ 1/360 at large N, so the
  // mean of 4000 draws has a standard error ~ 0.0008. Tolerance 4 standard errors.
  for (int N : {2, 5, 50, 400}) {
    core::RandomStream rng(2024, static_cast<std::uint64_t>(N));
    const int K = 4000;
    double s = 0, s2 = 0;
    std::vector<double> u(N);
    for (int k = 0; k < K; ++k) {
      for (auto& x : u) x = rng.uniform();
      const double v = watson_u2(u);
      s += v;
      s2 += v * v;
    }
    const double mean = s / K, se = std::sqrt((s2 / K - mean * mean) / K);
    INFO("N " << N << " mean " << mean << " se " << se);
    CHECK(std::fabs(mean - 1.0 / 12.0) < 4 * se);
  }
}

TEST_CASE("A_phot: ~0 for noise-only circular clusters, large for an offset clump", "[morphology][photon_asymmetry]") {
  // morphology.md sec. 5/9: E[U^2] = 1/12 makes A_phot of a circular cluster ~0 at
  // any count; a clump makes it positive. 30 Poisson images (seeds 1..30) of a beta
  // model with ~5000 counts plus a flat background.
  const int n = 201;
  core::ImageD mu = testing::beta_image(n, n, 100, 100, 8, 0.7, 6.0);
  core::ImageD bkg(n, n, 0.05);
  for (std::size_t i = 0; i < mu.size(); ++i) mu.pixels()[i] += 0.05;
  PhotonAsymmetrySettings s;
  s.r500_px = 95;
  double sum = 0, sum2 = 0;
  const int K = 30;
  for (int k = 0; k < K; ++k) {
    const core::ImageD c = testing::poisson_image(mu, 9, k);
    core::RandomStream rng(10, k);
    const double a = photon_asymmetry(c, &bkg, {100, 100}, s, rng).A_phot;
    sum += a;
    sum2 += a * a;
  }
  const double mean = sum / K, se = std::sqrt((sum2 / K - mean * mean) / K);
  INFO("mean A_phot " << mean << " +- " << se);
  CHECK(std::fabs(mean) < 4 * se);
  CHECK(std::fabs(mean) < 0.1);
  // Add a clump at 30 px.
  core::ImageD mu2 = mu;
  const core::ImageD clump = testing::gaussian_image(n, n, 130, 100, 4, 4, 1500);
  for (std::size_t i = 0; i < mu2.size(); ++i) mu2.pixels()[i] += clump.pixels()[i];
  core::RandomStream rng(10, 999);
  const PhotonAsymmetryResult r = photon_asymmetry(testing::poisson_image(mu2, 9, 999), &bkg, {100, 100}, s, rng);
  CHECK(r.A_phot > 1.0);
  REQUIRE(r.annuli.size() == 4);
  // Background counts per annulus: exact area of the annulus times 0.05.
  for (const auto& a : r.annuli)
    CHECK(a.B == Approx(0.05 * M_PI * (a.r_out_px * a.r_out_px - a.r_in_px * a.r_in_px)).epsilon(1e-9));
}
