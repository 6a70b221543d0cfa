#include "icmscope/morphology/centre.hpp"

#include <algorithm>
#include <cmath>

#include "icmscope/morphology/apertures.hpp"
#include "icmscope/morphology/filters.hpp"

namespace icmscope::morphology {

const char* to_string(CentreChoice c) {
  switch (c) {
    case CentreChoice::peak: return "peak";
    case CentreChoice::centroid: return "centroid";
    case CentreChoice::input: return "input";
  }
  return "?";
}

PeakResult find_peak(const core::ImageD& img, const PeakSettings& s, PixelPoint guess,
                     std::vector<double>& smoothed, std::vector<double>& tmp) {
  PeakResult r;
  const int nx = img.nx(), ny = img.ny();
  if (nx == 0 || ny == 0) return r;
  int x0 = 0, x1 = nx - 1, y0 = 0, y1 = ny - 1;
  const bool windowed = s.search_radius_px > 0.0 && guess.x > -1e299;
  if (windowed) {
    const double R = s.search_radius_px + 1.0;
    x0 = std::max(0, static_cast<int>(std::floor(guess.x - R)));
    x1 = std::min(nx - 1, static_cast<int>(std::ceil(guess.x + R)));
    y0 = std::max(0, static_cast<int>(std::floor(guess.y - R)));
    y1 = std::min(ny - 1, static_cast<int>(std::ceil(guess.y + R)));
    if (x1 < x0 || y1 < y0) return r;
  }
  smoothed.resize(img.size());
  gaussian_smooth_window(img.data(), nx, ny, s.smooth_sigma_px, x0, x1, y0, y1, smoothed.data(), tmp);
  const double R2 = s.search_radius_px * s.search_radius_px;
  double best = -HUGE_VAL;
  for (int iy = y0; iy <= y1; ++iy)
    for (int ix = x0; ix <= x1; ++ix) {
      if (windowed) {
        const double dx = ix - guess.x, dy = iy - guess.y;
        if (dx * dx + dy * dy > R2) continue;
      }
      const double v = smoothed[img.index(ix, iy)];
      if (v > best) {
        best = v;
        r.ix = ix;
        r.iy = iy;
      }
    }
  if (r.ix < 0) return r;
  r.found = true;
  r.value = best;
  const auto vertex = [](double fm, double f0, double fp) {
    const double den = fm - 2.0 * f0 + fp;
    if (!(den < 0.0)) return 0.0;
    return std::clamp(0.5 * (fm - fp) / den, -0.5, 0.5);
  };
  // The neighbours must be smoothed too; inside the window they are, at the
  // window edge the refinement falls back to 0 on that axis.
  const auto sm = [&](int ix, int iy) { return smoothed[img.index(ix, iy)]; };
  double ddx = 0.0, ddy = 0.0;
  if (r.ix > x0 && r.ix < x1) ddx = vertex(sm(r.ix - 1, r.iy), best, sm(r.ix + 1, r.iy));
  if (r.iy > y0 && r.iy < y1) ddy = vertex(sm(r.ix, r.iy - 1), best, sm(r.ix, r.iy + 1));
  r.refined = {r.ix + ddx, r.iy + ddy};
  return r;
}

PeakResult find_peak(const core::ImageD& img, const PeakSettings& s, PixelPoint guess) {
  std::vector<double> sm, tmp;
  return find_peak(img, s, guess, sm, tmp);
}

CentroidResult iterated_centroid(const core::ImageD& img, PixelPoint start, const CentroidSettings& s,
                                 const RowPrefix* prefix) {
  CentroidResult r;
  r.centre = start;
  if (!(s.radius_px > 0.0)) return r;
  for (int it = 0; it < s.max_iterations; ++it) {
    const CircleSums cs =
        prefix ? circle_first_moments(*prefix, img.data(), r.centre.x, r.centre.y, s.radius_px)
               : circle_first_moments(img.data(), img.nx(), img.ny(), r.centre.x, r.centre.y, s.radius_px);
    r.iterations = it + 1;
    r.flux = cs.f;
    if (!(cs.f > 0.0)) return r;
    const double sx = cs.fx / cs.f, sy = cs.fy / cs.f;
    r.centre.x += sx;
    r.centre.y += sy;
    if (std::hypot(sx, sy) < s.tolerance_px) {
      r.converged = true;
      return r;
    }
  }
  return r;
}

double centre_offset_px(PixelPoint a, PixelPoint b) { return std::hypot(a.x - b.x, a.y - b.y); }

}  // namespace icmscope::morphology
