#include "icmscope/morphology/refill.hpp"

#include <algorithm>
#include <cmath>
#include <limits>

namespace icmscope::morphology {
namespace {

constexpr double kInf = std::numeric_limits<double>::infinity();

// 1-D squared distance transform of f (lower envelope of parabolas).
void dt1d(const double* f, int n, double* d, std::vector<int>& v, std::vector<double>& z) {
  v.resize(n);
  z.resize(n + 1);
  int k = -1;
  for (int q = 0; q < n; ++q) {
    if (f[q] == kInf) continue;
    if (k < 0) {
      k = 0;
      v[0] = q;
      z[0] = -kInf;
      z[1] = kInf;
      continue;
    }
    double s;
    for (;;) {
      const int p = v[k];
      s = ((f[q] + double(q) * q) - (f[p] + double(p) * p)) / (2.0 * (q - p));
      if (s <= z[k] && k > 0) {
        --k;
        continue;
      }
      break;
    }
    if (s <= z[k]) {  // k == 0 and the new parabola dominates everywhere
      v[0] = q;
      z[0] = -kInf;
      z[1] = kInf;
      continue;
    }
    ++k;
    v[k] = q;
    z[k] = s;
    z[k + 1] = kInf;
  }
  if (k < 0) {
    for (int q = 0; q < n; ++q) d[q] = kInf;
    return;
  }
  int j = 0;
  for (int q = 0; q < n; ++q) {
    while (z[j + 1] < q) ++j;
    const double dq = q - v[j];
    d[q] = dq * dq + f[v[j]];
  }
}

}  // namespace

std::vector<double> distance_to_good(const std::vector<std::uint8_t>& good, int nx, int ny) {
  const std::size_t n = static_cast<std::size_t>(nx) * ny;
  std::vector<double> d2(n);
  for (std::size_t i = 0; i < n; ++i) d2[i] = good[i] ? 0.0 : kInf;
  std::vector<double> col(std::max(nx, ny)), out(std::max(nx, ny));
  std::vector<int> v;
  std::vector<double> z;
  for (int ix = 0; ix < nx; ++ix) {
    for (int iy = 0; iy < ny; ++iy) col[iy] = d2[static_cast<std::size_t>(iy) * nx + ix];
    dt1d(col.data(), ny, out.data(), v, z);
    for (int iy = 0; iy < ny; ++iy) d2[static_cast<std::size_t>(iy) * nx + ix] = out[iy];
  }
  for (int iy = 0; iy < ny; ++iy) {
    double* row = d2.data() + static_cast<std::size_t>(iy) * nx;
    std::copy_n(row, nx, col.data());
    dt1d(col.data(), nx, row, v, z);
  }
  for (auto& x : d2) x = std::sqrt(x);
  return d2;
}

RefillResult local_annulus_refill(const std::vector<std::uint8_t>& good, int nx, int ny,
                                  const std::vector<const std::vector<double>*>& planes,
                                  const RefillSettings& s) {
  RefillResult r;
  const std::size_t n = static_cast<std::size_t>(nx) * ny;
  r.values.resize(planes.size());
  for (std::size_t i = 0; i < n; ++i) r.n_bad += good[i] ? 0 : 1;
  if (r.n_bad == 0) return r;
  if (s.method == RefillMethod::none) {
    for (std::size_t i = 0; i < n; ++i)
      if (!good[i]) r.unfilled.push_back(i);
    return r;
  }
  const std::vector<double> dist = distance_to_good(good, nx, ny);
  std::vector<double> acc(planes.size());
  for (int iy = 0; iy < ny; ++iy)
    for (int ix = 0; ix < nx; ++ix) {
      const std::size_t i = static_cast<std::size_t>(iy) * nx + ix;
      if (good[i]) continue;
      const double d = dist[i];
      if (!(d <= s.max_distance_px)) {
        r.unfilled.push_back(i);
        continue;
      }
      double width = std::max(s.min_width_px, d);
      int count = 0;
      for (int attempt = 0; attempt < 8; ++attempt) {
        const double ro = d + width;
        const double ro2 = ro * ro, ri2 = d * d - 1e-9;
        const int h = static_cast<int>(std::ceil(ro));
        std::fill(acc.begin(), acc.end(), 0.0);
        count = 0;
        for (int jy = std::max(0, iy - h); jy <= std::min(ny - 1, iy + h); ++jy)
          for (int jx = std::max(0, ix - h); jx <= std::min(nx - 1, ix + h); ++jx) {
            const std::size_t j = static_cast<std::size_t>(jy) * nx + jx;
            if (!good[j]) continue;
            const double dd = double(jx - ix) * (jx - ix) + double(jy - iy) * (jy - iy);
            if (dd < ri2 || dd > ro2) continue;
            ++count;
            for (std::size_t p = 0; p < planes.size(); ++p) acc[p] += (*planes[p])[j];
          }
        if (count >= s.min_pixels) break;
        width *= 2.0;
      }
      if (count == 0) {
        r.unfilled.push_back(i);
        continue;
      }
      r.index.push_back(i);
      for (std::size_t p = 0; p < planes.size(); ++p) r.values[p].push_back(acc[p] / count);
    }
  return r;
}

}  // namespace icmscope::morphology
