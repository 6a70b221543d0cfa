#include "icmscope/instrument/detector.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <string>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/core/random.hpp"

namespace icmscope::instrument {

namespace {
std::string num(double v) {
  char b[64];
  std::snprintf(b, sizeof b, "%.9g", v);
  return b;
}
[[noreturn]] void fail(const std::string& w) { throw core::DomainError("detector: " + w); }
}  // namespace

Detector::Detector(DetectorSettings s, std::optional<core::ImageD> bad) : s_(std::move(s)), bad_(std::move(bad)) {
  if (!(s_.fov_arcmin > 0) || !std::isfinite(s_.fov_arcmin)) fail("fov_arcmin = " + num(s_.fov_arcmin) + ", expected > 0");
  if (!(s_.pixel_arcsec > 0) || !std::isfinite(s_.pixel_arcsec)) fail("pixel_arcsec = " + num(s_.pixel_arcsec) + ", expected > 0");
  if (s_.chips_u < 1) fail("chips_u = " + std::to_string(s_.chips_u) + ", expected >= 1");
  if (s_.chips_v < 1) fail("chips_v = " + std::to_string(s_.chips_v) + ", expected >= 1");
  if (!(s_.chip_gap_arcsec >= 0)) fail("chip_gap_arcsec = " + num(s_.chip_gap_arcsec) + ", expected >= 0");
  if (!std::isfinite(s_.aim_u_arcsec) || !std::isfinite(s_.aim_v_arcsec)) fail("aim_u_arcsec / aim_v_arcsec must be finite");
  for (std::size_t i = 0; i < s_.extra_gaps.size(); ++i) {
    const GapLine& g = s_.extra_gaps[i];
    if (g.axis != 'u' && g.axis != 'v')
      fail("extra_gaps[" + std::to_string(i) + "].axis = '" + std::string(1, g.axis) + "', expected 'u' or 'v'");
    if (!(g.width_arcsec >= 0) || !std::isfinite(g.position_arcsec))
      fail("extra_gaps[" + std::to_string(i) + "]: width_arcsec = " + num(g.width_arcsec) + ", expected >= 0 and a finite position");
  }
  const double L = s_.fov_arcmin * 60.0;
  for (int k = 1; k < s_.chips_u; ++k) gap_u_.push_back(-0.5 * L + k * L / s_.chips_u);
  for (int k = 1; k < s_.chips_v; ++k) gap_v_.push_back(-0.5 * L + k * L / s_.chips_v);
  if (bad_ && bad_->empty()) bad_.reset();
}

double Detector::reach_arcsec() const {
  const double h = 0.5 * s_.fov_arcmin * 60.0;
  return h + std::max(std::fabs(s_.aim_u_arcsec), std::fabs(s_.aim_v_arcsec));
}

bool Detector::sensitive(double u, double v) const {
  // a, b: about the FoV centre.
  const double a = u + s_.aim_u_arcsec, b = v + s_.aim_v_arcsec;
  const double h = 0.5 * s_.fov_arcmin * 60.0;
  if (s_.fov_shape == FovShape::Square) {
    if (std::fabs(a) > h || std::fabs(b) > h) return false;
  } else if (a * a + b * b > h * h) {
    return false;
  }
  const double hg = 0.5 * s_.chip_gap_arcsec;
  if (hg > 0) {
    for (double g : gap_u_)
      if (std::fabs(a - g) < hg) return false;
    for (double g : gap_v_)
      if (std::fabs(b - g) < hg) return false;
  }
  for (const GapLine& g : s_.extra_gaps) {
    const double c = g.axis == 'u' ? u : v;
    if (std::fabs(c - g.position_arcsec) < 0.5 * g.width_arcsec) return false;
  }
  if (bad_) {
    const core::ImageD& m = *bad_;
    const double px = a / s_.pixel_arcsec + m.anchor().crpix1 - 1.0;
    const double py = b / s_.pixel_arcsec + m.anchor().crpix2 - 1.0;
    const double fx = std::floor(px + 0.5), fy = std::floor(py + 0.5);
    if (fx >= 0 && fy >= 0 && fx < m.nx() && fy < m.ny() && m(static_cast<int>(fx), static_cast<int>(fy)) != 0.0)
      return false;
  }
  return true;
}

core::ImageD Detector::mask(const core::ImageD& grid, const Pointing& p, int subpixel) const {
  core::ImageD m = mask(grid.nx(), grid.ny(), detector_frame(grid.anchor(), p), subpixel);
  m.set_anchor(grid.anchor());
  return m;
}

core::ImageD Detector::mask(int nx, int ny, const DetectorFrame& f, int subpixel) const {
  const int n = std::max(1, subpixel);
  core::ImageD m(nx, ny, 0.0);
  const double reach = reach_arcsec() * std::sqrt(2.0) + f.pixel_arcsec;  // conservative bound
  const double inv = 1.0 / (n * n);
#pragma omp parallel for schedule(static)
  for (int iy = 0; iy < ny; ++iy) {
    for (int ix = 0; ix < nx; ++ix) {
      const double X = ix + 1.0, Y = iy + 1.0;
      double uc, vc;
      f.to_detector(X, Y, uc, vc);
      if (std::hypot(uc, vc) > reach) continue;
      int hits = 0;
      for (int sy = 0; sy < n; ++sy)
        for (int sx = 0; sx < n; ++sx) {
          double u, v;
          f.to_detector(X - 0.5 + (sx + 0.5) / n, Y - 0.5 + (sy + 0.5) / n, u, v);
          hits += sensitive(u, v);
        }
      m(ix, iy) = hits * inv;
    }
  }
  return m;
}

std::vector<DitherOffset> dither_offsets(const DitherSettings& d) {
  auto bad = [](const std::string& w) { throw core::DomainError("dither: " + w); };
  if (d.pattern == DitherPattern::None) return {DitherOffset{}};
  if (d.n_samples < 1) bad("n_samples = " + std::to_string(d.n_samples) + ", expected >= 1");
  if (!(d.amplitude_arcsec >= 0) || !std::isfinite(d.amplitude_arcsec))
    bad("amplitude_arcsec = " + num(d.amplitude_arcsec) + ", expected >= 0");
  std::vector<DitherOffset> out(static_cast<std::size_t>(d.n_samples));
  if (d.pattern == DitherPattern::Lissajous) {
    if (!(d.period_u_s > 0) || !(d.period_v_s > 0)) bad("period_u_s / period_v_s must be > 0");
    if (!(d.duration_s > 0)) bad("duration_s = " + num(d.duration_s) + ", expected > 0");
    const double tw = 2.0 * core::constants::kPi;
    for (int k = 0; k < d.n_samples; ++k) {
      const double t = (k + 0.5) / d.n_samples * d.duration_s;
      out[k] = {d.amplitude_arcsec * std::sin(tw * t / d.period_u_s), d.amplitude_arcsec * std::sin(tw * t / d.period_v_s)};
    }
  } else {
    core::RandomStream rng(d.seed, (std::uint64_t{1} << 48) + 1);
    for (auto& o : out) {
      o.u_arcsec = d.amplitude_arcsec * (2.0 * rng.uniform() - 1.0);
      o.v_arcsec = d.amplitude_arcsec * (2.0 * rng.uniform() - 1.0);
    }
  }
  return out;
}

core::ImageD dither_kernel(const std::vector<DitherOffset>& offsets, double roll_deg, double pixel_arcsec) {
  if (offsets.empty()) throw core::DomainError("dither: no offsets");
  if (!(pixel_arcsec > 0)) throw core::DomainError("dither: pixel_arcsec = " + num(pixel_arcsec) + ", expected > 0");
  DetectorFrame f;
  f.cos_roll = std::cos(roll_deg * core::constants::deg_rad);
  f.sin_roll = std::sin(roll_deg * core::constants::deg_rad);
  std::vector<double> px(offsets.size()), py(offsets.size());
  double reach = 0.0;
  for (std::size_t k = 0; k < offsets.size(); ++k) {
    double dx, dy;
    f.to_sky_offset(offsets[k].u_arcsec, offsets[k].v_arcsec, dx, dy);
    px[k] = dx / pixel_arcsec;
    py[k] = dy / pixel_arcsec;
    reach = std::max({reach, std::fabs(px[k]), std::fabs(py[k])});
  }
  const int h = static_cast<int>(std::ceil(reach)) + 1;
  const int n = 2 * h + 1;
  core::ImageD k(n, n, 0.0);
  const double w = 1.0 / static_cast<double>(offsets.size());
  for (std::size_t i = 0; i < offsets.size(); ++i) {
    const double x = h + px[i], y = h + py[i];
    const int ix = static_cast<int>(std::floor(x)), iy = static_cast<int>(std::floor(y));
    const double tx = x - ix, ty = y - iy;
    k(ix, iy) += w * (1 - tx) * (1 - ty);
    if (tx > 0) k(ix + 1, iy) += w * tx * (1 - ty);
    if (ty > 0) k(ix, iy + 1) += w * (1 - tx) * ty;
    if (tx > 0 && ty > 0) k(ix + 1, iy + 1) += w * tx * ty;
  }
  core::SkyAnchor a;
  a.crpix1 = a.crpix2 = h + 1;
  a.pixel_arcsec = pixel_arcsec;
  k.set_anchor(a);
  return k;
}

}  // namespace icmscope::instrument
