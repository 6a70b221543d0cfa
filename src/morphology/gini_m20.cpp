#include "icmscope/morphology/gini_m20.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <cstring>

#include "icmscope/core/errors.hpp"
#include "sort_keys.hpp"

namespace icmscope::morphology {
namespace {

void sort_nonnegative(std::vector<double>& v, std::vector<double>& tmp) { detail::sort_nonnegative(v, tmp); }

double gini_sorted(const std::vector<double>& x) {
  const std::size_t n = x.size();
  if (n < 2) return std::nan("");
  double s = 0.0, tot = 0.0;
  const double N = static_cast<double>(n);
  for (std::size_t i = 0; i < n; ++i) {
    s += (2.0 * static_cast<double>(i + 1) - N - 1.0) * x[i];
    tot += x[i];
  }
  if (!(tot > 0.0)) return std::nan("");
  return s / (tot * (N - 1.0));  // mean|X| n (n - 1) = tot (n - 1)
}

}  // namespace

double gini(const std::vector<double>& values, std::vector<double>& scratch) {
  std::vector<double> a(values.size());
  for (std::size_t i = 0; i < values.size(); ++i) a[i] = std::fabs(values[i]);
  sort_nonnegative(a, scratch);
  return gini_sorted(a);
}

double gini(const std::vector<double>& values) {
  std::vector<double> s;
  return gini(values, s);
}

GiniM20Result gini_m20(const core::ImageD& flux, PixelPoint centre, const GiniM20Settings& s,
                       std::vector<double>& a, std::vector<double>& tmp) {
  if (!(s.radius_px > 0.0)) throw core::DomainError("gini_m20: radius_px must be > 0");
  GiniM20Result r;
  r.centre = centre;
  const int nx = flux.nx(), ny = flux.ny();
  const double R2 = s.radius_px * s.radius_px;
  const int y0 = std::max(0, static_cast<int>(std::ceil(centre.y - s.radius_px)));
  const int y1 = std::min(ny - 1, static_cast<int>(std::floor(centre.y + s.radius_px)));
  const int x0 = std::max(0, static_cast<int>(std::ceil(centre.x - s.radius_px)));
  const int x1 = std::min(nx - 1, static_cast<int>(std::floor(centre.x + s.radius_px)));
  a.clear();
  const double* I = flux.data();
  // One pass: |I| for Gini; flux and M_tot (with max(I, 0)); largest |negative|.
  double ftot = 0.0, mtot = 0.0, maxneg = 0.0;
  for (int iy = y0; iy <= y1; ++iy) {
    const double dy = iy - centre.y;
    const double* row = I + flux.index(0, iy);
    for (int ix = x0; ix <= x1; ++ix) {
      const double dx = ix - centre.x;
      const double r2 = dx * dx + dy * dy;
      if (r2 > R2) continue;
      const double v = row[ix];
      a.push_back(std::fabs(v));
      if (v > 0.0) {
        ftot += v;
        mtot += v * r2;
      } else {
        maxneg = std::max(maxneg, -v);
      }
    }
  }
  r.n_pixels = static_cast<int>(a.size());
  sort_nonnegative(a, tmp);
  r.gini = gini_sorted(a);
  if (!(ftot > 0.0) || !(mtot > 0.0)) {
    r.m20 = std::nan("");
    return r;
  }
  // Sorted |I| ascending in a. Walk from the top to find the flux threshold t:
  // the pixels with I >= t hold <= 20% of the flux (ties enter together). The
  // walk on |I| is exact while t exceeds the largest |negative| value;
  // otherwise the positive values are sorted on their own.
  const double target = s.m20_fraction * ftot;
  double thresh = HUGE_VAL;
  for (int attempt = 0; attempt < 2; ++attempt) {
  double cum = 0.0;
  std::size_t j = a.size();
  thresh = HUGE_VAL;
  while (j > 0) {
    const double f = a[j - 1];
    // include the whole group of equal values together
    std::size_t g = j;
    double gsum = 0.0;
    while (g > 0 && a[g - 1] == f) {
      gsum += f;
      --g;
    }
    if (cum + gsum > target) break;
    cum += gsum;
    thresh = f;
    j = g;
  }
  if (thresh == HUGE_VAL) {
    r.m20 = std::nan("");  // the brightest pixel alone holds more than 20%
    return r;
  }
  if (thresh > maxneg || attempt == 1) break;
  // Rebuild a from the positive fluxes only and walk again.
  a.clear();
  for (int iy = y0; iy <= y1; ++iy) {
    const double dy = iy - centre.y;
    for (int ix = x0; ix <= x1; ++ix) {
      const double dx = ix - centre.x;
      if (dx * dx + dy * dy > R2) continue;
      a.push_back(std::max(0.0, I[flux.index(ix, iy)]));
    }
  }
  sort_nonnegative(a, tmp);
  }
  double msel = 0.0;
  for (int iy = y0; iy <= y1; ++iy) {
    const double dy = iy - centre.y;
    for (int ix = x0; ix <= x1; ++ix) {
      const double dx = ix - centre.x;
      const double r2 = dx * dx + dy * dy;
      if (r2 > R2) continue;
      const double f = I[flux.index(ix, iy)];
      if (f >= thresh && f > 0.0) msel += f * r2;
    }
  }
  r.m20 = msel > 0.0 ? std::log10(msel / mtot) : -HUGE_VAL;
  return r;
}

GiniM20Result gini_m20(const core::ImageD& flux, PixelPoint centre, const GiniM20Settings& s) {
  std::vector<double> a, b;
  return gini_m20(flux, centre, s, a, b);
}

}  // namespace icmscope::morphology
