// Sparse redistribution matrix: storage, folding, channel draws; Gaussian resolution.
#include <catch2/catch.hpp>

#include <cmath>
#include <vector>

#include "icmscope/core/errors.hpp"
#include "icmscope/core/random.hpp"
#include "icmscope/instrument/energy_resolution.hpp"
#include "icmscope/instrument/response_matrix.hpp"
#include "instrument_stats.hpp"
#include "test_support.hpp"

using namespace icmscope;
using instrument::ResponseMatrix;
using instrument::ResponseRows;

namespace {
// 4 energy bins x 6 channels, one empty row (N_GRP = 0), one row of two groups.
const std::vector<std::vector<double>> kDense = {
    {0.0, 0.5, 0.3, 0.0, 0.0, 0.0},
    {0.0, 0.0, 0.0, 0.0, 0.0, 0.0},
    {0.1, 0.2, 0.0, 0.0, 0.4, 0.3},
    {0.0, 0.0, 0.0, 0.0, 0.0, 0.9},
};
ResponseMatrix small_matrix() {
  ResponseRows r;
  r.n_channels = 6;
  r.first_channel = 0;
  for (std::size_t i = 0; i < kDense.size(); ++i) r.add_dense_row(1.0 + i, 2.0 + i, kDense[i]);
  return ResponseMatrix(r, "small");
}
}  // namespace

TEST_CASE("sparse rows reproduce the dense matrix, empty rows included", "[instrument][rmf]") {
  const ResponseMatrix m = small_matrix();
  REQUIRE(m.n_energies() == 4);
  CHECK(m.n_groups() == 4);  // 1 + 0 + 2 + 1
  for (std::size_t i = 0; i < kDense.size(); ++i)
    for (int j = 0; j < 6; ++j) CHECK(m.element(i, j) == kDense[i][j]);
  CHECK(m.row_sum(1) == 0.0);
  CHECK(m.draw_channel(2.5, 0.3) == -1);  // empty row: no channel
  CHECK(m.draw_channel(0.5, 0.3) == -1);  // below the grid
  CHECK(m.draw_channel(5.0, 0.3) == -1);  // at the top edge (exclusive)
  CHECK(m.energy_row(4.999) == 3);
}

TEST_CASE("folding equals the dense matrix product", "[instrument][rmf]") {
  const ResponseMatrix m = small_matrix();
  const std::vector<double> s{2.0, 7.0, 3.0, 0.5};
  const std::vector<double> c = m.fold(s);
  for (int j = 0; j < 6; ++j) {
    double e = 0.0;
    for (std::size_t i = 0; i < 4; ++i) e += s[i] * kDense[i][j];
    CHECK(c[j] == Approx(e).margin(1e-15));
  }
  CHECK_THROWS_AS(m.fold({1.0}), core::DomainError);
}

TEST_CASE("drawn channels follow the normalised row (chi-square)", "[instrument][rmf]") {
  const ResponseMatrix m = small_matrix();
  core::RandomStream rng(20240611, 7);
  const int n = 200000;
  std::vector<int> hist(6, 0);
  for (int k = 0; k < n; ++k) {
    const int c = m.draw_channel(3.5, rng);  // row 2, first channel 0
    REQUIRE(c >= 0);
    REQUIRE(c < 6);
    ++hist[c];
  }
  CHECK(hist[2] == 0);
  CHECK(hist[3] == 0);
  double chi2 = 0.0;
  int dof = -1;
  for (int j = 0; j < 6; ++j) {
    const double p = kDense[2][j] / 1.0;
    if (p == 0) continue;
    chi2 += std::pow(hist[j] - n * p, 2) / (n * p);
    ++dof;
  }
  INFO("chi2 = " << chi2 << " for " << dof << " dof");
  CHECK(chi2 < testing::chi2_quantile(dof));
}

TEST_CASE("invalid rows are refused naming the problem", "[instrument][rmf]") {
  ResponseRows r;
  r.n_channels = 3;
  r.add_dense_row(2.0, 1.0, {1.0, 0, 0});
  CHECK_THROWS_WITH(ResponseMatrix(r, "bad"), Catch::Contains("ENERG_LO < ENERG_HI"));
  ResponseRows r2;
  r2.n_channels = 3;
  const double v[2] = {0.5, 0.5};
  r2.begin_row(1.0, 2.0);
  r2.add_group(2, v, 2);  // channels 2..3 of 3
  CHECK_THROWS_WITH(ResponseMatrix(r2, "bad"), Catch::Contains("expected inside [0, 3)"));
}

TEST_CASE("Gaussian resolution: FWHM law and channel statistics", "[instrument][rmf]") {
  instrument::GaussianResolution g;
  g.read_noise_electrons = 0.0;
  // FWHM = 2.355 w sqrt(F E / w): ~120 eV at 6 keV for w = 3.65 eV, F = 0.12
  // (physics.md section 8 [M]: from memory, unverified).
  CHECK(g.fwhm_keV(6.0) == Approx(0.120).epsilon(0.02));
  g.read_noise_electrons = 3.0;
  g.channel_width_keV = 0.005;
  g.n_channels = 4096;
  g.first_channel = 1;
  core::RandomStream rng(5, 1);
  const int n = 100000;
  double s = 0, s2 = 0;
  for (int k = 0; k < n; ++k) {
    const double e = (g.draw_channel(3.0, rng) - g.first_channel + 0.5) * g.channel_width_keV;
    s += e;
    s2 += e * e;
  }
  const double mean = s / n, var = s2 / n - mean * mean;
  const double sig = g.sigma_keV(3.0);
  // Channel binning adds width^2 / 12 to the variance (uniform quantisation).
  const double var_expect = sig * sig + g.channel_width_keV * g.channel_width_keV / 12.0;
  CHECK(mean == Approx(3.0).margin(5 * std::sqrt(var_expect / n)));
  CHECK(var == Approx(var_expect).epsilon(5 * std::sqrt(2.0 / n)));

  // The analytic matrix: rows normalised, mean channel energy at the bin centre.
  const ResponseMatrix m = instrument::make_gaussian_response({2.0, 2.1, 6.0, 6.1}, g);
  CHECK(m.n_energies() == 3);
  CHECK(m.row_sum(0) == Approx(1.0).epsilon(1e-6));
  double mu = 0;
  for (int j = 0; j < m.n_channels(); ++j) mu += m.element(2, j) * 0.5 * (m.chan_e_min_keV()[j] + m.chan_e_max_keV()[j]);
  CHECK(mu == Approx(6.05).margin(1e-4));
  CHECK(m.channel_for_energy(6.0) == g.channel_for_energy(6.0));
}

TEST_CASE("folding a spectrum through a matrix and an ARF on the same grid", "[instrument][rmf]") {
  const ResponseMatrix m = small_matrix();
  // ARF on the matrix grid 1..5 keV: one area per bin (OGIP convention).
  const instrument::EffectiveArea arf = instrument::EffectiveArea::from_bins({1, 2, 3, 4, 5}, {100, 200, 300, 400});
  // F(E) = E photons cm^-2 s^-1 keV^-1: Int over [1+i, 2+i] = 1.5 + i.
  const std::vector<double> c = m.fold_spectrum([](double E) { return E; }, &arf, 4);
  for (int j = 0; j < 6; ++j) {
    double e = 0;
    for (int i = 0; i < 4; ++i) e += (1.5 + i) * arf.area_cm2()[i] * kDense[i][j];
    CHECK(c[j] == Approx(e).epsilon(1e-12));
  }
  CHECK(arf.bin_value(2.7) == 200.0);
  CHECK(arf.same_bins({1, 2, 3, 4, 5}));
  CHECK_FALSE(arf.same_bins({1, 2, 3, 5}));
}
