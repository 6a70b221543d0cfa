// Instrument throughput: photon events generated and binned per second, Poisson
// map realisation, FFT convolution at 1024^2 and 2048^2, exposure maps.
// Prints figures; not a test. Next to wall-clock rates it prints the rate per
// CPU-second of the process (std::clock), which stays meaningful when other
// jobs share the machine: rate per core = events / CPU seconds.
#include <chrono>
#include <ctime>
#include <cmath>
#include <cstdio>
#include <vector>

#include "icmscope/core/blocked.hpp"
#include "icmscope/instrument/convolve.hpp"
#include "icmscope/instrument/energy_resolution.hpp"
#include "icmscope/instrument/exposure.hpp"
#include "icmscope/instrument/realise.hpp"

using namespace icmscope;
using namespace icmscope::instrument;
using Clock = std::chrono::steady_clock;

namespace {
double seconds_since(Clock::time_point t0) { return std::chrono::duration<double>(Clock::now() - t0).count(); }
double cpu_since(std::clock_t c0) { return static_cast<double>(std::clock() - c0) / CLOCKS_PER_SEC; }

core::ImageD cluster_image(int n, double total) {
  core::ImageD e(n, n, 0.0);
  core::SkyAnchor a;
  a.ra_deg = 150;
  a.dec_deg = 2;
  a.crpix1 = a.crpix2 = 0.5 * (n + 1);
  a.pixel_arcsec = 2.0;
  e.set_anchor(a);
  for (int j = 0; j < n; ++j)
    for (int i = 0; i < n; ++i) {
      const double r2 = (i - n / 2.0) * (i - n / 2.0) + (j - n / 2.0) * (j - n / 2.0);
      e(i, j) = std::pow(1.0 + r2 / 400.0, -1.5) + 0.02;
    }
  const double s = e.sum();
  for (double& v : e.pixels()) v *= total / s;
  return e;
}
}  // namespace

int main() {
  std::printf("icmscope instrument benchmark, %d threads\n", core::max_threads());
  const int n = 2048;
  const double total = 2.0e7;
  const core::ImageD e = cluster_image(n, total);
  const SpectrumSampler spec = SpectrumSampler::from_density(SpectrumSampler::log_edges(0.3, 10.0, 1000),
                                                             [](double E) { return std::pow(E, -1.6) * std::exp(-E / 6.0); });
  EnergyModel em;
  em.global = &spec;
  ChannelModel gauss;
  GaussianResolution res;
  const ResponseMatrix rmf = make_gaussian_response(SpectrumSampler::log_edges(0.3, 10.0, 1000), res);
  ChannelModel matrix;
  matrix.rmf = &rmf;
  EventSettings es;
  es.gti = {{0.0, 5.0e4}, {6.0e4, 1.0e5}};

  // Warm up (page faults, tables).
  (void)poisson_counts(e, 1);

  auto t0 = Clock::now();
  const CountsImage counts = poisson_counts(e, 7);
  const double t_map = seconds_since(t0);
  const double ncounts = counts.sum();
  std::printf("poisson map %dx%d, %.3g counts: %.3f s (%.1f Mpix/s)\n", n, n, ncounts, t_map, n * (double)n / t_map / 1e6);

  for (int variant = 0; variant < 3; ++variant) {
    EventSettings s = es;
    s.sort_by_time = variant == 2;
    const ChannelModel& cm = variant == 1 ? matrix : gauss;
    t0 = Clock::now();
    std::clock_t c0 = std::clock();
    const EventList ev = events_from_counts(counts, em, cm, s, 7);
    const double t_gen = seconds_since(t0), c_gen = cpu_since(c0);
    t0 = Clock::now();
    c0 = std::clock();
    const CountsImage b = bin_events(ev);
    const double t_bin = seconds_since(t0), c_bin = cpu_since(c0);
    const bool same = b.pixels() == counts.pixels();
    const char* name = variant == 0 ? "gaussian resolution, block order" : variant == 1 ? "response matrix, block order"
                                                                                       : "gaussian resolution, time-sorted";
    std::printf("events (%s): %zu events, generate %.3f s, bin %.3f s -> %.2f Mphot/s generated+binned wall "
                "(%.2f incl. map); %.2f Mphot per CPU-second%s\n",
                name, ev.size(), t_gen, t_bin, ev.size() / (t_gen + t_bin) / 1e6,
                ev.size() / (t_gen + t_bin + t_map) / 1e6, ev.size() / (c_gen + c_bin) / 1e6, same ? "" : "  MISMATCH");
  }

  // FFT convolution. The test image has a flat floor out to its edges, so the
  // printed flux ratio is below 1 by the flux scattered off the image.
  for (int size : {1024, 2048}) {
    const core::ImageD img = cluster_image(size, 1e6);
    for (int which = 0; which < 2; ++which) {
      const Psf psf = which == 0 ? Psf::gaussian(8.0) : Psf::king(4.0, 1.5);
      KernelSettings ks;
      ks.max_half_size = which == 0 ? 64 : 128;
      t0 = Clock::now();
      const core::ImageD k = psf.kernel(2.0, ks);
      const double t_k = seconds_since(t0);
      t0 = Clock::now();
      FftConvolver c(size, size, k);
      const double t_plan = seconds_since(t0);
      (void)c.apply(img);
      t0 = Clock::now();
      const int reps = 3;
      double s = 0;
      for (int r = 0; r < reps; ++r) s += c.apply(img).sum();
      const double t_c = seconds_since(t0) / reps;
      std::printf("fft convolution %dx%d, kernel %dx%d (%s), padded %dx%d: %.3f s per image (plan %.3f s, kernel %.3f s), flux ratio %.12f\n",
                  size, size, k.nx(), k.ny(), which == 0 ? "gaussian" : "king", c.padded_nx(), c.padded_ny(), t_c,
                  t_plan, t_k, s / reps / img.sum());
    }
    ZoneSettings z;
    z.edges_arcmin = {0.0, 5.0, 10.0, 15.0, 20.0};
    z.kernel.max_half_size = 64;
    const Psf br = Psf::gaussian(5.0, {10.0, 1.0, 0.0});
    t0 = Clock::now();
    const core::ImageD zz = convolve_zones(img, 0.5 * (size + 1), 0.5 * (size + 1), br, z);
    std::printf("psf zones %dx%d (5 zones): %.3f s, flux ratio %.9f\n", size, size, seconds_since(t0), zz.sum() / img.sum());
  }

  // Exposure map with dither and vignetting.
  {
    core::ImageD g(n, n, 0.0);
    g.set_anchor(e.anchor());
    DetectorSettings ds;
    ds.fov_arcmin = 30.0;
    ds.chips_u = ds.chips_v = 2;
    ds.chip_gap_arcsec = 20.0;
    ExposureSettings xs;
    xs.dither.pattern = DitherPattern::Lissajous;
    xs.dither.amplitude_arcsec = 16.0;
    t0 = Clock::now();
    const ExposureMaps m = make_exposure_maps(g, Detector(ds), pointing_at_anchor(g.anchor(), 30.0),
                                              EffectiveArea::analytic({}), Vignetting::analytic({}), xs);
    std::printf("exposure maps %dx%d (4x4 sub-pixels, gaps, dither, vignetting): %.3f s, max %.4g cm^2 s\n", n, n,
                seconds_since(t0), *std::max_element(m.exposure_cm2_s.pixels().begin(), m.exposure_cm2_s.pixels().end()));
  }
  return 0;
}
