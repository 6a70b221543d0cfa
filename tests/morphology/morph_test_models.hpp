#pragma once
// Analytic test images for the morphology tests: pixel-integrated beta models
// (Gauss-Legendre sub-sampling), point-sampled Gaussians, image transforms.
#include <cmath>
#include <functional>

#include "icmscope/core/image.hpp"
#include "icmscope/core/random.hpp"
#include "icmscope/morphology/poisson.hpp"

namespace icmscope::testing {

// Mean of f over each pixel by an n x n Gauss-Legendre rule (n = 2..8 supported
// via a small table).
inline core::ImageD integrate_pixels(int nx, int ny, const std::function<double(double, double)>& f, int n = 4) {
  static const double x4[4] = {-0.8611363115940526, -0.3399810435848563, 0.3399810435848563, 0.8611363115940526};
  static const double w4[4] = {0.3478548451374538, 0.6521451548625461, 0.6521451548625461, 0.3478548451374538};
  static const double x8[8] = {-0.9602898564975363, -0.7966664774136267, -0.5255324099163290, -0.1834346424956498,
                               0.1834346424956498,  0.5255324099163290,  0.7966664774136267,  0.9602898564975363};
  static const double w8[8] = {0.1012285362903763, 0.2223810344533745, 0.3137066458778873, 0.3626837833783620,
                               0.3626837833783620, 0.3137066458778873, 0.2223810344533745, 0.1012285362903763};
  const double* xs = n == 8 ? x8 : x4;
  const double* ws = n == 8 ? w8 : w4;
  const int m = n == 8 ? 8 : 4;
  core::ImageD img(nx, ny, 0.0);
  for (int iy = 0; iy < ny; ++iy)
    for (int ix = 0; ix < nx; ++ix) {
      double s = 0.0;
      for (int a = 0; a < m; ++a)
        for (int b = 0; b < m; ++b) s += ws[a] * ws[b] * f(ix + 0.5 * xs[a], iy + 0.5 * xs[b]);
      img(ix, iy) = 0.25 * s;
    }
  return img;
}

// Projected beta model S(R) = S0 (1 + R^2/rc^2)^(1/2 - 3 beta), centre (cx, cy), rc in pixels.
inline core::ImageD beta_image(int nx, int ny, double cx, double cy, double rc_px, double beta, double S0 = 1.0,
                               int gl = 4) {
  const double p = 0.5 - 3.0 * beta;
  return integrate_pixels(
      nx, ny,
      [=](double x, double y) {
        const double r2 = ((x - cx) * (x - cx) + (y - cy) * (y - cy)) / (rc_px * rc_px);
        return S0 * std::pow(1.0 + r2, p);
      },
      gl);
}

// Point-sampled Gaussian of total flux F (pixel values = F * density at the
// pixel centre): discrete moments equal the continuous ones to exponentially
// small error for sigma >~ 2 pixels. theta: major axis angle from +x (rad).
inline core::ImageD gaussian_image(int nx, int ny, double cx, double cy, double sx, double sy, double F,
                                   double theta = 0.0) {
  core::ImageD img(nx, ny, 0.0);
  const double c = std::cos(theta), s = std::sin(theta);
  for (int iy = 0; iy < ny; ++iy)
    for (int ix = 0; ix < nx; ++ix) {
      const double dx = ix - cx, dy = iy - cy;
      const double u = c * dx + s * dy, v = -s * dx + c * dy;
      img(ix, iy) = F / (2.0 * M_PI * sx * sy) * std::exp(-0.5 * (u * u / (sx * sx) + v * v / (sy * sy)));
    }
  return img;
}

// Poisson realisation of an expected image.
inline core::ImageD poisson_image(const core::ImageD& mu, std::uint64_t seed, std::uint64_t stream = 0) {
  core::RandomStream rng(seed, stream);
  core::ImageD out(mu.nx(), mu.ny(), 0.0);
  for (std::size_t i = 0; i < mu.size(); ++i) out.pixels()[i] = morphology::poisson_draw(mu.pixels()[i], rng);
  return out;
}

// Rotation by +90 degrees of a square image: (ix, iy) -> (n - 1 - iy, ix).
inline core::ImageD rot90(const core::ImageD& a) {
  const int n = a.nx();
  core::ImageD b(n, n, 0.0);
  for (int iy = 0; iy < n; ++iy)
    for (int ix = 0; ix < n; ++ix) b(n - 1 - iy, ix) = a(ix, iy);
  return b;
}

// Flip in x: (ix, iy) -> (nx - 1 - ix, iy).
inline core::ImageD flip_x(const core::ImageD& a) {
  core::ImageD b(a.nx(), a.ny(), 0.0);
  for (int iy = 0; iy < a.ny(); ++iy)
    for (int ix = 0; ix < a.nx(); ++ix) b(a.nx() - 1 - ix, iy) = a(ix, iy);
  return b;
}

// Bilinear resampling of `a` rotated by angle (rad) about (cx, cy).
inline core::ImageD rotate_bilinear(const core::ImageD& a, double angle, double cx, double cy) {
  core::ImageD b(a.nx(), a.ny(), 0.0);
  const double c = std::cos(angle), s = std::sin(angle);
  for (int iy = 0; iy < a.ny(); ++iy)
    for (int ix = 0; ix < a.nx(); ++ix) {
      // source position = inverse rotation of the target
      const double dx = ix - cx, dy = iy - cy;
      const double x = cx + c * dx + s * dy, y = cy - s * dx + c * dy;
      const int x0 = static_cast<int>(std::floor(x)), y0 = static_cast<int>(std::floor(y));
      if (x0 < 0 || y0 < 0 || x0 + 1 >= a.nx() || y0 + 1 >= a.ny()) continue;
      const double tx = x - x0, ty = y - y0;
      b(ix, iy) = (1 - tx) * (1 - ty) * a(x0, y0) + tx * (1 - ty) * a(x0 + 1, y0) + (1 - tx) * ty * a(x0, y0 + 1) +
                  tx * ty * a(x0 + 1, y0 + 1);
    }
  return b;
}

}  // namespace icmscope::testing
