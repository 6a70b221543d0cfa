#pragma once
// Circular apertures on a pixel grid with exact pixel-circle overlap areas.
// Pixel coordinates: 0-based, pixel (ix, iy) is the unit square centred on
// (ix, iy), i.e. [ix - 1/2, ix + 1/2] x [iy - 1/2, iy + 1/2]. (FITS 1-based pixel
// p corresponds to ix = p - 1.) A pixel's weight in an aperture is the exact
// fraction of its area inside the circle (analytic circle-rectangle overlap), so
// aperture sums vary smoothly with the centre and radius and are sub-pixel
// accurate for images that are locally uniform across a pixel.
#include <algorithm>
#include <cmath>
#include <cstddef>
#include <vector>

namespace icmscope::morphology {

// Area of {x^2 + y^2 <= R^2} inside the rectangle [x0, x1] x [y0, y1] (x0 <= x1,
// y0 <= y1; any units). Exact up to rounding.
double circle_rectangle_overlap(double x0, double x1, double y0, double y1, double R);

// Fraction of the unit pixel centred at offset (dx, dy) from the circle centre
// that lies inside the circle of radius R (pixels).
inline double pixel_fraction_in_circle(double dx, double dy, double R) {
  const double ax = std::fabs(dx), ay = std::fabs(dy);
  const double fx = ax + 0.5, fy = ay + 0.5;
  if (fx * fx + fy * fy <= R * R) return 1.0;
  const double nx = ax > 0.5 ? ax - 0.5 : 0.0, ny = ay > 0.5 ? ay - 0.5 : 0.0;
  if (nx * nx + ny * ny >= R * R) return 0.0;
  return circle_rectangle_overlap(ax - 0.5, ax + 0.5, ay - 0.5, ay + 0.5, R);
}

// True if the circle (cx, cy, R) lies entirely within the image footprint
// [-1/2, nx - 1/2] x [-1/2, ny - 1/2].
inline bool circle_inside_image(int nx, int ny, double cx, double cy, double R) {
  return cx - R >= -0.5 && cy - R >= -0.5 && cx + R <= nx - 0.5 && cy + R <= ny - 0.5;
}

// Calls fn(ix, iy, index, dx, dy, w) for every pixel of an nx x ny image with a
// non-zero overlap w with the circle (cx, cy, R); dx = ix - cx, dy = iy - cy.
// Pixels fully inside get w = 1 without evaluating the overlap formula.
template <typename Fn>
void for_each_in_circle(int nx, int ny, double cx, double cy, double R, Fn&& fn) {
  if (!(R > 0.0)) return;
  const int y0 = std::max(0, static_cast<int>(std::floor(cy - R - 0.5)));
  const int y1 = std::min(ny - 1, static_cast<int>(std::ceil(cy + R + 0.5)));
  for (int iy = y0; iy <= y1; ++iy) {
    const double dy = iy - cy;
    const double ady = std::fabs(dy);
    const double hy = ady > 0.5 ? ady - 0.5 : 0.0;
    if (hy >= R) continue;
    const double half = std::sqrt(R * R - hy * hy) + 0.5;
    const int xa = std::max(0, static_cast<int>(std::floor(cx - half)));
    const int xb = std::min(nx - 1, static_cast<int>(std::ceil(cx + half)));
    const double hy2 = ady + 0.5;
    const double inner = (R * R > hy2 * hy2) ? std::sqrt(R * R - hy2 * hy2) - 0.5 : -1.0;
    std::size_t idx = static_cast<std::size_t>(iy) * static_cast<std::size_t>(nx) + static_cast<std::size_t>(xa);
    for (int ix = xa; ix <= xb; ++ix, ++idx) {
      const double dx = ix - cx;
      const double w = (std::fabs(dx) <= inner) ? 1.0 : pixel_fraction_in_circle(dx, dy, R);
      if (w > 0.0) fn(ix, iy, idx, dx, dy, w);
    }
  }
}

// Row decomposition of a circle for vectorisable kernels: for each image row
// that the circle touches, fn(iy, dy, xa, xb, ia, ib) with [xa, xb] the pixels of
// non-zero overlap and [ia, ib] (possibly empty, ia > ib) the pixels fully inside
// (w = 1); the pixels of [xa, ia) and (ib, xb] need pixel_fraction_in_circle.
template <typename RowFn>
void for_each_circle_row(int nx, int ny, double cx, double cy, double R, RowFn&& fn) {
  if (!(R > 0.0)) return;
  const int y0 = std::max(0, static_cast<int>(std::floor(cy - R - 0.5)));
  const int y1 = std::min(ny - 1, static_cast<int>(std::ceil(cy + R + 0.5)));
  for (int iy = y0; iy <= y1; ++iy) {
    const double dy = iy - cy;
    const double ady = std::fabs(dy);
    const double hy = ady > 0.5 ? ady - 0.5 : 0.0;
    if (hy >= R) continue;
    const double half = std::sqrt(R * R - hy * hy) + 0.5;
    const int xa = std::max(0, static_cast<int>(std::floor(cx - half)));
    const int xb = std::min(nx - 1, static_cast<int>(std::ceil(cx + half)));
    const double hy2 = ady + 0.5;
    int ia = xb + 1, ib = xb;
    if (R * R > hy2 * hy2) {
      const double inner = std::sqrt(R * R - hy2 * hy2) - 0.5;
      if (inner >= 0.0) {
        ia = std::max(xa, static_cast<int>(std::ceil(cx - inner)));
        ib = std::min(xb, static_cast<int>(std::floor(cx + inner)));
        // guard against rounding at the run ends
        while (ia <= ib && pixel_fraction_in_circle(ia - cx, dy, R) < 1.0) ++ia;
        while (ib >= ia && pixel_fraction_in_circle(ib - cx, dy, R) < 1.0) --ib;
        if (ia > ib) {
          ia = xb + 1;
          ib = xb;
        }
      }
    }
    fn(iy, dy, xa, xb, ia, ib);
  }
}

// Flux-weighted sums inside a circle: sum w I, sum w I dx, sum w I dy,
// sum w I dx^2, dy^2, dx dy (dx, dy relative to the circle centre), sum w.
struct CircleSums {
  double f = 0.0, fx = 0.0, fy = 0.0, fxx = 0.0, fyy = 0.0, fxy = 0.0, area = 0.0;
};
CircleSums circle_sums(const double* img, int nx, int ny, double cx, double cy, double R);
// Only f, fx, fy and area (the rest left 0): the centroid kernel.
CircleSums circle_first_moments(const double* img, int nx, int ny, double cx, double cy, double R);

// Sum of w I inside each of the circles radii[0] < radii[1] < ... about (cx, cy)
// (strictly increasing), with first moments, in one pass over the largest
// circle. out[k] receives the sums of circle k (dx, dy relative to (cx, cy)).
void nested_circle_sums(const double* img, int nx, int ny, double cx, double cy,
                        const std::vector<double>& radii, std::vector<CircleSums>& out);

// Row prefix sums of an image: s0[iy (nx + 1) + ix] = sum_{x < ix} I(x, iy),
// s1 likewise of I * x. With them the flux and first moments of a circle cost
// O(rows + boundary pixels) instead of O(area): the interior run of every row is
// a difference of two prefix values, only the boundary pixels need overlaps.
struct RowPrefix {
  int nx = 0, ny = 0;
  std::vector<double> s0, s1;
  void build(const double* img, int nx, int ny);
};
// Same results as circle_first_moments (to rounding).
CircleSums circle_first_moments(const RowPrefix& p, const double* img, double cx, double cy, double R);
// Nested circles through the prefix sums: f, fx, fy, area of each circle.
void nested_circle_sums(const RowPrefix& p, const double* img, double cx, double cy,
                        const std::vector<double>& radii, std::vector<CircleSums>& out);

}  // namespace icmscope::morphology
