#include "icmscope/morphology/filters.hpp"

#include <algorithm>
#include <cmath>
#include <cstddef>

namespace icmscope::morphology {

void gaussian_smooth_window(const double* in, int nx, int ny, double sigma, int x0, int x1, int y0,
                            int y1, double* out, std::vector<double>& tmp) {
  x0 = std::max(0, x0);
  y0 = std::max(0, y0);
  x1 = std::min(nx - 1, x1);
  y1 = std::min(ny - 1, y1);
  if (x1 < x0 || y1 < y0) return;
  const auto at = [nx](int ix, int iy) { return static_cast<std::size_t>(iy) * nx + ix; };
  if (!(sigma > 0.0)) {
    for (int iy = y0; iy <= y1; ++iy)
      for (int ix = x0; ix <= x1; ++ix) out[at(ix, iy)] = in[at(ix, iy)];
    return;
  }
  const int h = std::max(1, static_cast<int>(std::ceil(4.0 * sigma)));
  double kern[1025];
  const int hk = std::min(h, 512);
  double ksum = 0.0;
  for (int k = -hk; k <= hk; ++k) ksum += (kern[k + hk] = std::exp(-0.5 * k * k / (sigma * sigma)));
  for (int k = 0; k <= 2 * hk; ++k) kern[k] /= ksum;
  // Horizontal pass over rows y0-hk .. y1+hk, columns x0..x1.
  const int ry0 = std::max(0, y0 - hk), ry1 = std::min(ny - 1, y1 + hk);
  const int w = x1 - x0 + 1;
  tmp.assign(static_cast<std::size_t>(ry1 - ry0 + 1) * w, 0.0);
  for (int iy = ry0; iy <= ry1; ++iy) {
    const double* row = in + at(0, iy);
    double* t = tmp.data() + static_cast<std::size_t>(iy - ry0) * w;
    for (int ix = x0; ix <= x1; ++ix) {
      const int ka = std::max(-hk, -ix), kb = std::min(hk, nx - 1 - ix);
      double s = 0.0;
      for (int k = ka; k <= kb; ++k) s += kern[k + hk] * row[ix + k];
      t[ix - x0] = s;
    }
  }
  // Vertical pass.
  for (int iy = y0; iy <= y1; ++iy) {
    double* o = out + at(x0, iy);
    for (int ix = 0; ix < w; ++ix) o[ix] = 0.0;
    const int ka = std::max(-hk, ry0 - iy), kb = std::min(hk, ry1 - iy);
    for (int k = ka; k <= kb; ++k) {
      const double kv = kern[k + hk];
      const double* t = tmp.data() + static_cast<std::size_t>(iy + k - ry0) * w;
      for (int ix = 0; ix < w; ++ix) o[ix] += kv * t[ix];
    }
  }
}

void boxcar_mean(const double* in, int nx, int ny, int h, double* out, std::vector<double>& sat) {
  const std::size_t W = static_cast<std::size_t>(nx) + 1;
  sat.assign(W * (static_cast<std::size_t>(ny) + 1), 0.0);
  for (int iy = 0; iy < ny; ++iy) {
    double row = 0.0;
    for (int ix = 0; ix < nx; ++ix) {
      row += in[static_cast<std::size_t>(iy) * nx + ix];
      sat[(iy + 1) * W + ix + 1] = sat[iy * W + ix + 1] + row;
    }
  }
  for (int iy = 0; iy < ny; ++iy) {
    const int ya = std::max(0, iy - h), yb = std::min(ny - 1, iy + h);
    for (int ix = 0; ix < nx; ++ix) {
      const int xa = std::max(0, ix - h), xb = std::min(nx - 1, ix + h);
      const double s = sat[(yb + 1) * W + xb + 1] - sat[ya * W + xb + 1] - sat[(yb + 1) * W + xa] + sat[ya * W + xa];
      out[static_cast<std::size_t>(iy) * nx + ix] = s / static_cast<double>((xb - xa + 1) * (yb - ya + 1));
    }
  }
}

}  // namespace icmscope::morphology
