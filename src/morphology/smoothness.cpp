#include "icmscope/morphology/smoothness.hpp"

#include <algorithm>
#include <cmath>

#include "icmscope/core/errors.hpp"
#include "icmscope/morphology/apertures.hpp"
#include "icmscope/morphology/poisson.hpp"

namespace icmscope::morphology {

int smoothness_half_width(const SmoothnessSettings& s) {
  if (s.box_half_width_px > 0) return s.box_half_width_px;
  return std::max(1, static_cast<int>(std::lround(0.125 * s.radius_px)));
}

double smoothness_exclusion(const SmoothnessSettings& s) {
  return s.exclude_radius_px >= 0.0 ? s.exclude_radius_px : 2.0 * smoothness_half_width(s) + 1.0;
}

void smoothness_sums(const core::ImageD& img, PixelPoint centre, double r_in, double r_out, int h,
                     SmoothnessScratch& scratch, double& residual, double& flux) {
  const int nx = img.nx(), ny = img.ny();
  // Summed-area table over the aperture's bounding box plus h (clipped).
  const int x0 = std::max(0, static_cast<int>(std::floor(centre.x - r_out - 1)) - h);
  const int x1 = std::min(nx - 1, static_cast<int>(std::ceil(centre.x + r_out + 1)) + h);
  const int y0 = std::max(0, static_cast<int>(std::floor(centre.y - r_out - 1)) - h);
  const int y1 = std::min(ny - 1, static_cast<int>(std::ceil(centre.y + r_out + 1)) + h);
  residual = flux = 0.0;
  if (x1 < x0 || y1 < y0) return;
  const int w = x1 - x0 + 1, hgt = y1 - y0 + 1;
  const std::size_t W = static_cast<std::size_t>(w) + 1;
  std::vector<double>& sat = scratch.sat;
  sat.resize(W * (static_cast<std::size_t>(hgt) + 1));
  std::fill(sat.begin(), sat.begin() + W, 0.0);
  for (int iy = 0; iy < hgt; ++iy) {
    const double* row = img.data() + img.index(x0, y0 + iy);
    double* s1 = sat.data() + (iy + 1) * W;
    const double* s0 = sat.data() + iy * W;
    double acc = 0.0;
    s1[0] = 0.0;
    for (int ix = 0; ix < w; ++ix) {
      acc += row[ix];
      s1[ix + 1] = s0[ix + 1] + acc;
    }
  }
  const double inv_full = 1.0 / static_cast<double>((2 * h + 1) * (2 * h + 1));
  const double* I = img.data();
  for_each_circle_row(nx, ny, centre.x, centre.y, r_out, [&](int iy, double dy, int xa, int xb, int ia, int ib) {
    const int ly = iy - y0;
    const int ya = std::max(0, ly - h), yb = std::min(hgt - 1, ly + h);
    const double* top = sat.data() + static_cast<std::size_t>(yb + 1) * W;
    const double* bot = sat.data() + static_cast<std::size_t>(ya) * W;
    const bool full_y = (yb - ya) == 2 * h;
    const double* row = I + static_cast<std::size_t>(iy) * nx;
    for (int ix = xa; ix <= xb; ++ix) {
      double wt = (ix >= ia && ix <= ib) ? 1.0 : pixel_fraction_in_circle(ix - centre.x, dy, r_out);
      if (r_in > 0.0) wt -= pixel_fraction_in_circle(ix - centre.x, dy, r_in);
      if (wt <= 0.0) continue;
      const int lx = ix - x0;
      const int xa2 = std::max(0, lx - h), xb2 = std::min(w - 1, lx + h);
      const double box = top[xb2 + 1] - bot[xb2 + 1] - top[xa2] + bot[xa2];
      const double mean = (full_y && xb2 - xa2 == 2 * h)
                              ? box * inv_full
                              : box / static_cast<double>((xb2 - xa2 + 1) * (yb - ya + 1));
      const double v = row[ix];
      flux += wt * v;
      const double d = v - mean;
      if (d > 0.0) residual += wt * d;
    }
  });
}

double smoothness_background_model(const core::ImageD& bkg_counts, const core::ImageD* rel_exposure,
                                   PixelPoint centre, const SmoothnessSettings& s, core::RandomStream& rng,
                                   SmoothnessScratch& scratch) {
  if (s.background_draws <= 0) return 0.0;
  const int h = smoothness_half_width(s);
  const double rin = smoothness_exclusion(s);
  core::ImageD noise(bkg_counts.nx(), bkg_counts.ny(), 0.0);
  const double* b = bkg_counts.data();
  const double* e = rel_exposure ? rel_exposure->data() : nullptr;
  double total = 0.0;
  for (int d = 0; d < s.background_draws; ++d) {
    for_each_in_circle(noise.nx(), noise.ny(), centre.x, centre.y, s.radius_px + 2 * h + 2,
                       [&](int, int, std::size_t i, double, double, double) {
                         const double ee = e ? e[i] : 1.0;
                         noise.pixels()[i] = ee > 0.0 ? (poisson_draw(b[i], rng) - b[i]) / ee : 0.0;
                       });
    double res = 0.0, fl = 0.0;
    smoothness_sums(noise, centre, rin, s.radius_px, h, scratch, res, fl);
    total += res;
  }
  return total / s.background_draws;
}

SmoothnessResult smoothness(const core::ImageD& flux, PixelPoint centre, const SmoothnessSettings& s,
                            double background_residual, SmoothnessScratch& scratch) {
  if (!(s.radius_px > 0.0)) throw core::DomainError("smoothness: radius_px must be > 0");
  SmoothnessResult r;
  r.half_width = smoothness_half_width(s);
  double res = 0.0, fl = 0.0;
  smoothness_sums(flux, centre, smoothness_exclusion(s), s.radius_px, r.half_width, scratch, res, fl);
  if (!(fl > 0.0)) {
    r.S = r.S_raw = std::nan("");
    return r;
  }
  r.S_raw = 10.0 * res / fl;
  r.background_term = 10.0 * background_residual / fl;
  r.S = r.S_raw - r.background_term;
  return r;
}

}  // namespace icmscope::morphology
