#include "icmscope/instrument/exposure.hpp"

#include <algorithm>
#include <cmath>
#include <string>

#include "icmscope/core/errors.hpp"
#include "icmscope/instrument/convolve.hpp"

namespace icmscope::instrument {

namespace {
[[noreturn]] void fail(const std::string& w) { throw core::DomainError("exposure: " + w); }

core::ImageD crop(const core::ImageD& big, int off, int nx, int ny) {
  core::ImageD out(nx, ny, 0.0);
  for (int iy = 0; iy < ny; ++iy)
    for (int ix = 0; ix < nx; ++ix) out(ix, iy) = big(ix + off, iy + off);
  return out;
}
}  // namespace

core::ImageD off_axis_map(const core::ImageD& grid, const Pointing& pointing) {
  const DetectorFrame f = detector_frame(grid.anchor(), pointing);
  core::ImageD t(grid.nx(), grid.ny(), 0.0);
  t.set_anchor(grid.anchor());
  t.set_unit("arcmin");
  for (int iy = 0; iy < grid.ny(); ++iy)
    for (int ix = 0; ix < grid.nx(); ++ix)
      t(ix, iy) = std::hypot(ix + 1.0 - f.axis_x, iy + 1.0 - f.axis_y) * f.pixel_arcsec / 60.0;
  return t;
}

ExposureMaps make_exposure_maps(const core::ImageD& grid, const Detector& det, const Pointing& pointing,
                                const EffectiveArea& area, const Vignetting& vig, const ExposureSettings& s,
                                const SpectrumFn& spectrum) {
  if (grid.empty()) fail("the sky grid is empty");
  if (!(s.exposure_s > 0) || !std::isfinite(s.exposure_s)) fail("exposure_s = " + std::to_string(s.exposure_s) + ", expected > 0");
  if (!(s.dead_fraction >= 0 && s.dead_fraction < 1)) fail("dead_fraction = " + std::to_string(s.dead_fraction) + ", expected in [0, 1)");
  if (!(s.e_max_keV > s.e_min_keV) || !(s.e_min_keV >= 0))
    fail("band [" + std::to_string(s.e_min_keV) + ", " + std::to_string(s.e_max_keV) + "] keV, expected 0 <= e_min_keV < e_max_keV");
  if (area.empty()) fail("the effective-area curve is empty");
  if (!(grid.pixel_arcsec() > 0)) fail("grid pixel_arcsec must be > 0");

  ExposureMaps out;
  out.live_time_s = s.exposure_s * (1.0 - s.dead_fraction);
  out.band_area_cm2 = area.band_average_cm2(s.e_min_keV, s.e_max_keV, spectrum, s.n_energy);

  // Dither kernel and padding.
  const std::vector<DitherOffset> offs = dither_offsets(s.dither);
  const bool dithered = s.dither.pattern != DitherPattern::None;
  core::ImageD dk;
  int pad = 0;
  if (dithered) {
    dk = dither_kernel(offs, pointing.roll_deg, grid.pixel_arcsec());
    pad = dk.nx() / 2;
  }
  const int nx = grid.nx() + 2 * pad, ny = grid.ny() + 2 * pad;
  DetectorFrame f = detector_frame(grid.anchor(), pointing);
  f.axis_x += pad;
  f.axis_y += pad;

  core::ImageD m = det.mask(nx, ny, f, s.subpixel);

  // V_band(theta) table, weight S(E) A(E).
  double tmax = 0.0;
  for (double cx : {0.0, nx + 1.0})
    for (double cy : {0.0, ny + 1.0}) tmax = std::max(tmax, std::hypot(cx - f.axis_x, cy - f.axis_y) * f.pixel_arcsec / 60.0);
  const int nt = std::max(2, s.n_theta);
  std::vector<double> vt(static_cast<std::size_t>(nt), 1.0);
  if (!vig.is_none()) {
    auto w = [&](double E) { return (spectrum ? spectrum(E) : 1.0) * area.at(E); };
    for (int i = 0; i < nt; ++i) vt[i] = vig.band_average(tmax * i / (nt - 1), s.e_min_keV, s.e_max_keV, w, s.n_energy);
  }
  auto vband = [&](double t) {
    const double x = t / tmax * (nt - 1);
    const int i = std::min(nt - 2, static_cast<int>(x));
    const double u = x - i;
    return (1 - u) * vt[i] + u * vt[i + 1];
  };

  core::ImageD a(nx, ny, 0.0);
#pragma omp parallel for schedule(static)
  for (int iy = 0; iy < ny; ++iy)
    for (int ix = 0; ix < nx; ++ix) {
      const double mv = m(ix, iy);
      if (mv == 0.0) continue;
      const double t = std::hypot(ix + 1.0 - f.axis_x, iy + 1.0 - f.axis_y) * f.pixel_arcsec / 60.0;
      a(ix, iy) = mv * out.band_area_cm2 * vband(t);
    }
  if (dithered) {
    m = convolve(m, dk);
    a = convolve(a, dk);
  }
  out.exposure_s = crop(m, pad, grid.nx(), grid.ny());
  out.exposure_cm2_s = crop(a, pad, grid.nx(), grid.ny());
  for (double& v : out.exposure_s.pixels()) v = std::max(0.0, v) * out.live_time_s;  // FFT round-off
  for (double& v : out.exposure_cm2_s.pixels()) v = std::max(0.0, v) * out.live_time_s;
  out.exposure_s.set_anchor(grid.anchor());
  out.exposure_cm2_s.set_anchor(grid.anchor());
  out.exposure_s.set_unit("s");
  out.exposure_cm2_s.set_unit("cm**2 s");
  return out;
}

}  // namespace icmscope::instrument
