#include "icmscope/morphology/apertures.hpp"

#include <algorithm>

namespace icmscope::morphology {
namespace {

// Integral of sqrt(R^2 - x^2) dx over [a, b], 0 <= a <= b <= R, written so that
// short intervals far from the centre keep their relative accuracy:
// b s_b - a s_a and the angle asin(b/R) - asin(a/R) are formed from (b - a).
double segment(double a, double b, double R) {
  if (!(b > a)) return 0.0;
  const double sa = std::sqrt(std::max(0.0, (R - a) * (R + a)));
  const double sb = std::sqrt(std::max(0.0, (R - b) * (R + b)));
  const double d = b - a;
  const double den = sa + sb;
  const double q = den > 0.0 ? a * (a + b) / den : 0.0;
  const double t1 = d * (sb - q);                // b sb - a sa
  const double cross = d * (sa + q);             // b sa - a sb
  const double dot = a * b + sa * sb;
  double ang;
  if (dot > 0.0 && cross < 0.15 * dot) {
    // short arcs (the usual case for pixel-sized intervals): atan series, error < z^13/13 ~ 1e-12 z
    const double z = cross / dot, z2 = z * z;
    ang = z * (1.0 + z2 * (-1.0 / 3 + z2 * (1.0 / 5 + z2 * (-1.0 / 7 + z2 * (1.0 / 9 + z2 * (-1.0 / 11))))));
  } else {
    ang = std::atan2(cross, dot);
  }
  return 0.5 * (t1 + R * R * ang);
}

// Area of the circle inside [x0, x1] x [y0, y1] with 0 <= x0 <= x1, 0 <= y0 <= y1.
double quadrant_rect(double x0, double x1, double y0, double y1, double R) {
  if (!(x1 > x0) || !(y1 > y0)) return 0.0;
  if (x0 * x0 + y0 * y0 >= R * R) return 0.0;
  if (x1 * x1 + y1 * y1 <= R * R) return (x1 - x0) * (y1 - y0);
  const double xa = y1 < R ? std::sqrt((R - y1) * (R + y1)) : 0.0;  // circle height >= y1 for x <= xa
  const double xb = std::sqrt((R - y0) * (R + y0));                // circle height >= y0 for x <= xb
  const double full = std::max(0.0, std::min(x1, xa) - x0) * (y1 - y0);
  const double lo = std::max(x0, xa), hi = std::min(x1, xb);
  const double part = hi > lo ? segment(lo, hi, R) - y0 * (hi - lo) : 0.0;
  return full + part;
}

// Splits [v0, v1] at 0 into first-quadrant pieces (|v| ranges).
int fold(double v0, double v1, double* lo, double* hi) {
  if (v0 >= 0.0) {
    lo[0] = v0;
    hi[0] = v1;
    return 1;
  }
  if (v1 <= 0.0) {
    lo[0] = -v1;
    hi[0] = -v0;
    return 1;
  }
  lo[0] = 0.0;
  hi[0] = -v0;
  lo[1] = 0.0;
  hi[1] = v1;
  return 2;
}

}  // namespace

double circle_rectangle_overlap(double x0, double x1, double y0, double y1, double R) {
  if (!(R > 0.0) || x1 <= x0 || y1 <= y0) return 0.0;
  double xl[2], xh[2], yl[2], yh[2];
  const int nxp = fold(x0, x1, xl, xh), nyp = fold(y0, y1, yl, yh);
  double a = 0.0;
  for (int i = 0; i < nxp; ++i)
    for (int j = 0; j < nyp; ++j) a += quadrant_rect(xl[i], xh[i], yl[j], yh[j], R);
  return std::clamp(a, 0.0, (x1 - x0) * (y1 - y0));
}

CircleSums circle_sums(const double* img, int nx, int ny, double cx, double cy, double R) {
  double f = 0, fx = 0, fy = 0, fxx = 0, fyy = 0, fxy = 0, area = 0;
  for_each_circle_row(nx, ny, cx, cy, R, [&](int iy, double dy, int xa, int xb, int ia, int ib) {
    const double* row = img + static_cast<std::size_t>(iy) * nx;
    const auto edge = [&](int ix) {
      const double dx = ix - cx;
      const double w = pixel_fraction_in_circle(dx, dy, R);
      const double v = w * row[ix];
      f += v;
      fx += v * dx;
      fy += v * dy;
      fxx += v * dx * dx;
      fyy += v * dy * dy;
      fxy += v * dx * dy;
      area += w;
    };
    for (int ix = xa; ix < std::min(ia, xb + 1); ++ix) edge(ix);
    double s0 = 0, s1 = 0, s2 = 0;
#pragma omp simd reduction(+ : s0, s1, s2)
    for (int ix = ia; ix <= ib; ++ix) {
      const double dx = ix - cx;
      const double v = row[ix];
      s0 += v;
      s1 += v * dx;
      s2 += v * dx * dx;
    }
    f += s0;
    fx += s1;
    fy += s0 * dy;
    fxx += s2;
    fyy += s0 * dy * dy;
    fxy += s1 * dy;
    area += (ib >= ia) ? (ib - ia + 1) : 0;
    for (int ix = std::max(ib + 1, ia <= ib ? ib + 1 : xb + 1); ix <= xb; ++ix) edge(ix);
  });
  CircleSums s;
  s.f = f;
  s.fx = fx;
  s.fy = fy;
  s.fxx = fxx;
  s.fyy = fyy;
  s.fxy = fxy;
  s.area = area;
  return s;
}

CircleSums circle_first_moments(const double* img, int nx, int ny, double cx, double cy, double R) {
  double f = 0, fx = 0, fy = 0, area = 0;
  for_each_circle_row(nx, ny, cx, cy, R, [&](int iy, double dy, int xa, int xb, int ia, int ib) {
    const double* row = img + static_cast<std::size_t>(iy) * nx;
    const auto edge = [&](int ix) {
      const double dx = ix - cx;
      const double w = pixel_fraction_in_circle(dx, dy, R);
      const double v = w * row[ix];
      f += v;
      fx += v * dx;
      fy += v * dy;
      area += w;
    };
    for (int ix = xa; ix < std::min(ia, xb + 1); ++ix) edge(ix);
    double s0 = 0, s1 = 0;
#pragma omp simd reduction(+ : s0, s1)
    for (int ix = ia; ix <= ib; ++ix) {
      const double v = row[ix];
      s0 += v;
      s1 += v * (ix - cx);
    }
    f += s0;
    fx += s1;
    fy += s0 * dy;
    area += (ib >= ia) ? (ib - ia + 1) : 0;
    for (int ix = std::max(ib + 1, ia <= ib ? ib + 1 : xb + 1); ix <= xb; ++ix) edge(ix);
  });
  CircleSums s;
  s.f = f;
  s.fx = fx;
  s.fy = fy;
  s.area = area;
  return s;
}

void nested_circle_sums(const double* img, int nx, int ny, double cx, double cy,
                        const std::vector<double>& radii, std::vector<CircleSums>& out) {
  const std::size_t n = radii.size();
  out.assign(n, CircleSums{});
  if (n == 0) return;
  std::vector<double> r2(n);
  for (std::size_t k = 0; k < n; ++k) r2[k] = radii[k] * radii[k];
  // Pixels fully inside the smallest circle go straight to ring 0; others find
  // their first partial circle from the squared near / far corner distances.
  std::vector<double> ring_f(n, 0.0), ring_fx(n, 0.0), ring_fy(n, 0.0), ring_a(n, 0.0);
  for_each_circle_row(nx, ny, cx, cy, radii.back(), [&](int iy, double dy, int xa, int xb, int, int) {
    const double* row = img + static_cast<std::size_t>(iy) * nx;
    const double ay = std::fabs(dy);
    const double ny2 = ay > 0.5 ? (ay - 0.5) * (ay - 0.5) : 0.0;
    const double fy2 = (ay + 0.5) * (ay + 0.5);
    for (int ix = xa; ix <= xb; ++ix) {
      const double dx = ix - cx;
      const double ax = std::fabs(dx);
      const double rmin2 = (ax > 0.5 ? (ax - 0.5) * (ax - 0.5) : 0.0) + ny2;
      const double rmax2 = (ax + 0.5) * (ax + 0.5) + fy2;
      std::size_t k = 0;
      while (k < n && r2[k] <= rmin2) ++k;
      const double v = row[ix];
      double wprev = 0.0;
      for (; k < n; ++k) {
        const double wk = r2[k] >= rmax2 ? 1.0 : pixel_fraction_in_circle(dx, dy, radii[k]);
        const double dw = wk - wprev;
        if (dw != 0.0) {
          const double fv = dw * v;
          ring_f[k] += fv;
          ring_fx[k] += fv * dx;
          ring_fy[k] += fv * dy;
          ring_a[k] += dw;
        }
        wprev = wk;
        if (wk >= 1.0) break;
      }
    }
  });
  double f = 0, fx = 0, fy = 0, a = 0;
  for (std::size_t k = 0; k < n; ++k) {
    f += ring_f[k];
    fx += ring_fx[k];
    fy += ring_fy[k];
    a += ring_a[k];
    out[k].f = f;
    out[k].fx = fx;
    out[k].fy = fy;
    out[k].area = a;
  }
}

void RowPrefix::build(const double* img, int nx_, int ny_) {
  nx = nx_;
  ny = ny_;
  const std::size_t W = static_cast<std::size_t>(nx) + 1;
  s0.resize(W * ny);
  s1.resize(W * ny);
  for (int iy = 0; iy < ny; ++iy) {
    const double* row = img + static_cast<std::size_t>(iy) * nx;
    double* a = s0.data() + iy * W;
    double* b = s1.data() + iy * W;
    double c0 = 0.0, c1 = 0.0;
    a[0] = b[0] = 0.0;
    for (int ix = 0; ix < nx; ++ix) {
      c0 += row[ix];
      c1 += row[ix] * ix;
      a[ix + 1] = c0;
      b[ix + 1] = c1;
    }
  }
}

CircleSums circle_first_moments(const RowPrefix& p, const double* img, double cx, double cy, double R) {
  double f = 0, fx = 0, fy = 0, area = 0;
  const std::size_t W = static_cast<std::size_t>(p.nx) + 1;
  for_each_circle_row(p.nx, p.ny, cx, cy, R, [&](int iy, double dy, int xa, int xb, int ia, int ib) {
    const double* row = img + static_cast<std::size_t>(iy) * p.nx;
    const auto edge = [&](int ix) {
      const double dx = ix - cx;
      const double w = pixel_fraction_in_circle(dx, dy, R);
      const double v = w * row[ix];
      f += v;
      fx += v * dx;
      fy += v * dy;
      area += w;
    };
    if (ia > ib) {
      for (int ix = xa; ix <= xb; ++ix) edge(ix);
      return;
    }
    for (int ix = xa; ix < ia; ++ix) edge(ix);
    const double* a = p.s0.data() + iy * W;
    const double* b = p.s1.data() + iy * W;
    const double s0 = a[ib + 1] - a[ia];
    const double s1 = (b[ib + 1] - b[ia]) - cx * s0;
    f += s0;
    fx += s1;
    fy += s0 * dy;
    area += ib - ia + 1;
    for (int ix = ib + 1; ix <= xb; ++ix) edge(ix);
  });
  CircleSums s;
  s.f = f;
  s.fx = fx;
  s.fy = fy;
  s.area = area;
  return s;
}

void nested_circle_sums(const RowPrefix& p, const double* img, double cx, double cy,
                        const std::vector<double>& radii, std::vector<CircleSums>& out) {
  out.resize(radii.size());
  for (std::size_t k = 0; k < radii.size(); ++k) out[k] = circle_first_moments(p, img, cx, cy, radii[k]);
}

}  // namespace icmscope::morphology
