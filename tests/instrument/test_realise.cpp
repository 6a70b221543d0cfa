// Realisations: Poisson statistics, thread-count independence, events that bin
// back to the counts image, the mean of many realisations, point sources from
// the Moretti et al. 2003 logN-logS.
#include <catch2/catch.hpp>

#include <cmath>
#include <vector>

#ifdef _OPENMP
#include <omp.h>
#endif

#include "icmscope/core/errors.hpp"
#include "icmscope/instrument/point_sources.hpp"
#include "icmscope/instrument/realise.hpp"
#include "instrument_stats.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::instrument;

namespace {
core::ImageD smooth_expected(int n, double peak) {
  core::ImageD e(n, n, 0.0);
  core::SkyAnchor a;
  a.ra_deg = 100;
  a.dec_deg = -20;
  a.crpix1 = a.crpix2 = 0.5 * (n + 1);
  a.pixel_arcsec = 2.0;
  e.set_anchor(a);
  for (int j = 0; j < n; ++j)
    for (int i = 0; i < n; ++i) {
      const double r2 = (i - n / 2.0) * (i - n / 2.0) + (j - n / 2.0) * (j - n / 2.0);
      e(i, j) = 0.05 + peak / (1.0 + r2 / 25.0);
    }
  return e;
}
void set_threads(int n) {
#ifdef _OPENMP
  omp_set_num_threads(n);
#else
  (void)n;
#endif
}
}  // namespace

TEST_CASE("Poisson deviates: mean and variance equal lambda", "[instrument][realise]") {
  // Poisson distribution: mean = variance = lambda; the sample variance has
  // variance (mu4 - sigma^4)/N = (lambda + 2 lambda^2)/N (mu4 = lambda (1 + 3 lambda)).
  const int n = 200000;
  for (double lam : {0.05, 0.7, 3.0, 9.9, 10.1, 42.0, 1000.0, 1.0e6}) {
    core::RandomStream rng(31337, static_cast<std::uint64_t>(lam * 100));
    double s = 0, s2 = 0;
    for (int k = 0; k < n; ++k) {
      const double x = poisson_draw(rng, lam);
      s += x;
      s2 += x * x;
    }
    const double mean = s / n, var = s2 / n - mean * mean;
    INFO("lambda " << lam << ": mean " << mean << " var " << var);
    CHECK(std::fabs(mean - lam) < 5 * std::sqrt(lam / n));
    CHECK(std::fabs(var - lam) < 5 * std::sqrt((lam + 2 * lam * lam) / n));
  }
  core::RandomStream r(1, 1);
  CHECK(poisson_draw(r, 0.0) == 0);
  CHECK(poisson_draw(r, -1e-17) == 0);
}

TEST_CASE("Poisson probabilities match the pmf (chi-square) on both branches", "[instrument][realise]") {
  for (double lam : {3.0, 42.0}) {
    core::RandomStream rng(7, static_cast<std::uint64_t>(lam));
    const int n = 400000, kmax = static_cast<int>(lam + 8 * std::sqrt(lam) + 10);
    std::vector<double> hist(static_cast<std::size_t>(kmax + 1), 0.0);
    for (int i = 0; i < n; ++i) {
      const int k = poisson_draw(rng, lam);
      hist[static_cast<std::size_t>(std::min(k, kmax))] += 1;
    }
    // pmf e^-lambda lambda^k / k!, bins with expectation >= 20, tails pooled.
    double chi2 = 0, tail_obs = 0, tail_exp = 0;
    int dof = -1;
    for (int k = 0; k <= kmax; ++k) {
      const double p = std::exp(-lam + k * std::log(lam) - std::lgamma(k + 1.0));
      const double e = n * p;
      if (e < 20) {
        tail_obs += hist[k];
        tail_exp += e;
        continue;
      }
      chi2 += (hist[k] - e) * (hist[k] - e) / e;
      ++dof;
    }
    tail_exp = n - [&] {
      double s = 0;
      for (int k = 0; k <= kmax; ++k) {
        const double p = std::exp(-lam + k * std::log(lam) - std::lgamma(k + 1.0));
        if (n * p >= 20) s += n * p;
      }
      return s;
    }();
    chi2 += (tail_obs - tail_exp) * (tail_obs - tail_exp) / tail_exp;
    ++dof;
    INFO("lambda " << lam << " chi2 " << chi2 << " dof " << dof);
    CHECK(chi2 < testing::chi2_quantile(dof));
  }
}

TEST_CASE("counts images do not depend on the thread count", "[instrument][realise]") {
  const core::ImageD e = smooth_expected(203, 30.0);
  set_threads(1);
  const CountsImage a = poisson_counts(e, 42);
  set_threads(2);
  const CountsImage b = poisson_counts(e, 42);
  CHECK(a.pixels() == b.pixels());
  const CountsImage c = poisson_counts(e, 43);
  CHECK(a.pixels() != c.pixels());
  core::ImageD bad = e;
  bad(3, 4) = std::nan("");
  CHECK_THROWS_WITH(poisson_counts(bad, 1), Catch::Contains("pixel (3, 4)"));
}

TEST_CASE("events bin back to the counts image exactly and their attributes are consistent", "[instrument][realise]") {
  const core::ImageD e = smooth_expected(96, 50.0);
  const SpectrumSampler spec = SpectrumSampler::from_density(SpectrumSampler::log_edges(0.3, 10.0, 300),
                                                             [](double E) { return std::pow(E, -1.7); });
  EnergyModel em;
  em.global = &spec;
  ChannelModel ch;
  EventSettings es;
  es.gti = {{100.0, 2100.0}, {3000.0, 4000.0}};
  set_threads(2);
  const EventList ev = realise_events(e, em, ch, es, 2024);
  const CountsImage counts = poisson_counts(e, 2024);
  CHECK(static_cast<double>(ev.size()) == counts.sum());
  CHECK(bin_events(ev).pixels() == counts.pixels());
  // Times inside the GTIs, sorted; the split between GTIs follows their lengths (2:1).
  std::size_t in_first = 0;
  for (std::size_t i = 0; i < ev.size(); ++i) {
    const double t = ev.time_s[i];
    const bool ok = (t >= 100.0 && t <= 2100.0) || (t >= 3000.0 && t <= 4000.0);
    if (!ok) FAIL("event time outside the GTIs: " << t);
    if (i > 0 && t < ev.time_s[i - 1]) FAIL("events not sorted by time at " << i);
    in_first += t <= 2100.0;
  }
  const double f = static_cast<double>(in_first) / ev.size();
  CHECK(f == Approx(2.0 / 3.0).margin(4 * std::sqrt(2.0 / 9.0 / ev.size())));
  // Energies: mean of the sampler within 5 sigma.
  double s = 0, s2 = 0;
  for (float x : ev.energy_keV) {
    s += x;
    s2 += static_cast<double>(x) * x;
  }
  const double m = s / ev.size(), v = s2 / ev.size() - m * m;
  CHECK(m == Approx(spec.mean_keV()).margin(5 * std::sqrt(v / ev.size())));
  // Same events for any thread count.
  set_threads(1);
  const EventList ev1 = realise_events(e, em, ch, es, 2024);
  set_threads(2);
  CHECK(ev1.x == ev.x);
  CHECK(ev1.pi == ev.pi);
  CHECK(ev1.time_s == ev.time_s);
  // Channel selection in binning.
  const CountsImage low = bin_events(ev, 1, ch.resolution.channel_for_energy(2.0));
  CHECK(low.sum() < counts.sum());
  CHECK(low.sum() > 0);
}

TEST_CASE("per-pixel spectra through an index image", "[instrument][realise]") {
  core::ImageD e(20, 20, 5.0);
  const SpectrumSampler lo({0.5, 1.0}, {1.0}), hi({5.0, 6.0}, {1.0});
  std::vector<SpectrumSampler> spectra{lo, hi};
  core::Image<std::int32_t> idx(20, 20, 0);
  for (int j = 0; j < 20; ++j)
    for (int i = 10; i < 20; ++i) idx(i, j) = 1;
  EnergyModel em;
  em.spectra = &spectra;
  em.spectrum_index = &idx;
  EventSettings es;
  es.sort_by_time = false;
  const EventList ev = realise_events(e, em, ChannelModel{}, es, 5);
  for (std::size_t i = 0; i < ev.size(); ++i) {
    const bool right = ev.x[i] > 10.5;
    if (right ? (ev.energy_keV[i] < 5.0f || ev.energy_keV[i] > 6.0f) : (ev.energy_keV[i] < 0.5f || ev.energy_keV[i] > 1.0f))
      FAIL("event " << i << " at x = " << ev.x[i] << " has energy " << ev.energy_keV[i]);
  }
  idx(0, 0) = 7;
  CHECK_THROWS_WITH(realise_events(e, em, ChannelModel{}, es, 5), Catch::Contains("spectrum_index"));
}

TEST_CASE("the mean of K event realisations matches the expected image", "[instrument][realise]") {
  const core::ImageD e = smooth_expected(64, 8.0);
  const SpectrumSampler spec({0.5, 2.0}, {1.0});
  EnergyModel em;
  em.global = &spec;
  EventSettings es;
  es.sort_by_time = false;
  const int K = 40;
  std::vector<double> sum(e.size(), 0.0);
  for (int k = 0; k < K; ++k) {
    const CountsImage c = bin_events(realise_events(e, em, ChannelModel{}, es, 1000 + k));
    for (std::size_t i = 0; i < e.size(); ++i) sum[i] += c.data()[i];
  }
  // Group pixels into 20 groups by expected value (sorted), chi-square of the
  // group totals over K realisations against K * expected.
  std::vector<std::size_t> order(e.size());
  for (std::size_t i = 0; i < order.size(); ++i) order[i] = i;
  std::sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return e.data()[a] < e.data()[b]; });
  const int G = 20;
  double chi2 = 0;
  for (int g = 0; g < G; ++g) {
    double obs = 0, exp = 0;
    for (std::size_t q = order.size() * g / G; q < order.size() * (g + 1) / G; ++q) {
      obs += sum[order[q]];
      exp += K * e.data()[order[q]];
    }
    chi2 += (obs - exp) * (obs - exp) / exp;
  }
  INFO("chi2 = " << chi2 << " for " << G << " groups");
  CHECK(chi2 < testing::chi2_quantile(G));
}

TEST_CASE("Moretti et al. 2003 logN-logS counts and drawn source lists", "[instrument][realise]") {
  const LogNLogS soft = LogNLogS::moretti2003_soft();
  // physics.md section 8 [C]: N(>2e-15) = 492, N(>1e-14) = 126, N(>1e-13) = 4.5 deg^-2
  // (Moretti et al. 2003, ApJ 588, 696, 0.5-2 keV parameters [M]).
  CHECK(soft.n_above(2e-15) == Approx(492).epsilon(0.005));
  CHECK(soft.n_above(1e-14) == Approx(126).epsilon(0.005));
  CHECK(soft.n_above(1e-13) == Approx(4.5).epsilon(0.02));
  CHECK(soft.flux_at(126.0) == Approx(1e-14).epsilon(0.01));
  CHECK(soft.flux_at(soft.n_above(3.7e-15)) == Approx(3.7e-15).epsilon(1e-9));
  // Hard band, self-consistency of the parameter set: at S = 2e-15 the formula is
  // N0 / (1 + (S0/S)^(a1 - a2)).
  const LogNLogS hard = LogNLogS::moretti2003_hard();
  CHECK(hard.n_above(2e-15) == Approx(5300.0 / (1 + std::pow(4.5e-15 / 2e-15, 1.57 - 0.44))).epsilon(1e-12));

  // A 1 deg^2 grid: source count and N(>1e-14) within Poisson errors.
  core::ImageD g(900, 900, 0.0);
  core::SkyAnchor a;
  a.ra_deg = 150;
  a.dec_deg = 2;
  a.crpix1 = a.crpix2 = 450.5;
  a.pixel_arcsec = 4.0;
  g.set_anchor(a);
  const std::vector<PointSource> src = draw_point_sources(g, soft, 2e-15, 1e-11, 77);
  const double expect = soft.n_above(2e-15) - soft.n_above(1e-11);
  CHECK(std::fabs(src.size() - expect) < 4 * std::sqrt(expect));
  int bright = 0;
  for (const auto& s : src) {
    bright += s.flux_cgs > 1e-14;
    CHECK(s.x >= 0.5);
    CHECK(s.x <= 900.5);
    CHECK(s.flux_cgs >= 2e-15 * (1 - 1e-9));
    CHECK(s.flux_cgs <= 1e-11 * (1 + 1e-9));
  }
  const double eb = soft.n_above(1e-14) - soft.n_above(1e-11);
  CHECK(std::fabs(bright - eb) < 4 * std::sqrt(eb));

  // Deposited counts = flux x photons/erg x exposure on a flat exposure map.
  core::ImageD exp(900, 900, 1.0e7);  // cm^2 s
  exp.set_anchor(a);
  core::ImageD img(900, 900, 0.0);
  img.set_anchor(a);
  std::vector<PointSource> two(src.begin(), src.begin() + 2);
  two[0].x = 300.3;
  two[0].y = 400.8;
  two[1].x = 600.0;
  two[1].y = 500.5;
  const double ppe = powerlaw_photons_per_erg(1.4, 0.5, 2.0, 0.5, 2.0);
  // Int E^-1.4 / (keV_erg Int E^-0.4) over [0.5, 2] keV.
  const double ppe_closed = ((std::pow(0.5, -0.4) - std::pow(2.0, -0.4)) / 0.4) /
                            (1.602176634e-9 * (std::pow(2.0, 0.6) - std::pow(0.5, 0.6)) / 0.6);
  CHECK(ppe == Approx(ppe_closed).epsilon(1e-12));
  add_point_sources(img, two, exp, ppe, Psf::gaussian(6.0), 450.5, 450.5, 1.0);
  for (const auto& s : two) CHECK(s.expected_counts == Approx(s.flux_cgs * ppe * 1.0e7).epsilon(1e-10));
  CHECK(img.sum() == Approx(two[0].expected_counts + two[1].expected_counts).epsilon(1e-12));
  double cx = 0, w = 0;
  for (int j = 380; j < 420; ++j)
    for (int i = 280; i < 320; ++i) {
      cx += (i + 1) * img(i, j);
      w += img(i, j);
    }
  CHECK(cx / w == Approx(300.3).margin(1e-6));
}

TEST_CASE("event-mode PSF scattering spreads events by the PSF and keeps them otherwise", "[instrument][realise]") {
  // A point-like expected image: all counts in one pixel; after scattering the
  // event offsets follow the Gaussian EEF (physics.md section 8).
  core::ImageD e(101, 101, 0.0);
  core::SkyAnchor a;
  a.crpix1 = a.crpix2 = 51;
  a.pixel_arcsec = 1.0;
  e.set_anchor(a);
  e(50, 50) = 40000.0;
  const SpectrumSampler spec({1.0, 2.0}, {1.0});
  EnergyModel em;
  em.global = &spec;
  EventSettings es;
  es.sort_by_time = false;
  EventList ev = realise_events(e, em, ChannelModel{}, es, 11);
  const std::vector<double> x0 = ev.x;
  const Psf g = Psf::gaussian(6.0);
  scatter_events(ev, g, 51.0, 51.0, 12);
  const double r50 = g.eef_radius(0.5) / a.pixel_arcsec;
  std::size_t in = 0;
  for (std::size_t i = 0; i < ev.size(); ++i) in += std::hypot(ev.x[i] - 51.0, ev.y[i] - 51.0) <= r50;
  // The in-pixel spread (uniform, 1/12 pixel^2 per axis) broadens slightly: 1%.
  CHECK(static_cast<double>(in) / ev.size() == Approx(0.5).margin(0.01 + 4 * std::sqrt(0.25 / ev.size())));
  CHECK(bin_events(ev).sum() == Approx(static_cast<double>(ev.size())).epsilon(1e-3));  // nearly all stay on the grid
  EventList ev2 = realise_events(e, em, ChannelModel{}, es, 11);
  scatter_events(ev2, g, 51.0, 51.0, 12);
  CHECK(ev2.x == ev.x);
  CHECK(ev.x != x0);
}
