#include "icmscope/morphology/asymmetry.hpp"

#include <algorithm>
#include <cmath>

#include "icmscope/core/errors.hpp"
#include "icmscope/morphology/apertures.hpp"
#include "icmscope/morphology/poisson.hpp"

namespace icmscope::morphology {

const char* to_string(AsymmetryNormalisation n) {
  return n == AsymmetryNormalisation::sum_abs ? "sum|I|" : "2 sum|I|";
}
const char* to_string(AsymmetryBackground b) {
  switch (b) {
    case AsymmetryBackground::none: return "none";
    case AsymmetryBackground::model: return "background model";
    case AsymmetryBackground::blank_region: return "blank region";
  }
  return "?";
}

AsymmetrySums asymmetry_sums(const core::ImageD& img, int hx, int hy, double radius_px, const RowPrefix* absp) {
  AsymmetrySums s;
  const int nx = img.nx(), ny = img.ny();
  const double* I = img.data();
  const double cx = 0.5 * hx, cy = 0.5 * hy;
  const std::size_t W = static_cast<std::size_t>(nx) + 1;
  double res = 0.0, ab = 0.0;
  // Each pair appears twice in sum |I - I_180|: rows above the centre are summed
  // and doubled, the centre row is summed in full, rows below add only to sum |I|.
  for_each_circle_row(nx, ny, cx, cy, radius_px, [&](int iy, double dy, int xa, int xb, int ia, int ib) {
    const int jy = hy - iy;  // 180-degree partner row
    if (jy < 0 || jy >= ny) {
      s.pairs_outside = true;
      return;
    }
    const double* row = I + static_cast<std::size_t>(iy) * nx;
    const double* prow = I + static_cast<std::size_t>(jy) * nx;
    const int lo = std::max(xa, hx - (nx - 1)), hi = std::min(xb, hx);  // partner column in the image
    if (lo > xa || hi < xb) s.pairs_outside = true;
    const int a0 = std::max(lo, ia), b0 = std::min(hi, ib);
    const bool interior = a0 <= b0;
    const int twice = 2 * iy - hy;  // > 0 above, 0 on, < 0 below the centre
    if (twice < 0) {  // sum |I| only
      if (absp && interior) {
        const double* a = absp->s0.data() + iy * W;
        ab += a[b0 + 1] - a[a0];
        for (int ix = lo; ix < a0; ++ix) ab += pixel_fraction_in_circle(ix - cx, dy, radius_px) * std::fabs(row[ix]);
        for (int ix = b0 + 1; ix <= hi; ++ix)
          ab += pixel_fraction_in_circle(ix - cx, dy, radius_px) * std::fabs(row[ix]);
      } else {
        for (int ix = lo; ix <= hi; ++ix) {
          const double w = (ix >= a0 && ix <= b0) ? 1.0 : pixel_fraction_in_circle(ix - cx, dy, radius_px);
          ab += w * std::fabs(row[ix]);
        }
      }
      return;
    }
    const double mult = twice > 0 ? 2.0 : 1.0;
    double r = 0.0, a = 0.0;
    const auto edge = [&](int ix) {
      const double w = pixel_fraction_in_circle(ix - cx, dy, radius_px);
      r += w * std::fabs(row[ix] - prow[hx - ix]);
      a += w * std::fabs(row[ix]);
    };
    if (!interior) {
      for (int ix = lo; ix <= hi; ++ix) edge(ix);
    } else {
      for (int ix = lo; ix < a0; ++ix) edge(ix);
      double ri = 0.0, ai = 0.0;
#pragma omp simd reduction(+ : ri, ai)
      for (int ix = a0; ix <= b0; ++ix) {
        const double v = row[ix];
        ri += std::fabs(v - prow[hx - ix]);
        ai += std::fabs(v);
      }
      r += ri;
      a += ai;
      for (int ix = b0 + 1; ix <= hi; ++ix) edge(ix);
    }
    res += mult * r;
    ab += a;
  });
  s.residual = res;
  s.abs = ab;
  return s;
}

AsymmetryResult asymmetry_minimum(const core::ImageD& img, PixelPoint start, const AsymmetrySettings& s,
                                  const RowPrefix* abs_prefix) {
  if (!(s.radius_px > 0.0)) throw core::DomainError("asymmetry: radius_px must be > 0");
  AsymmetryResult r;
  const int hx0 = static_cast<int>(std::lround(2.0 * start.x));
  const int hy0 = static_cast<int>(std::lround(2.0 * start.y));
  const int hmax = static_cast<int>(std::floor(2.0 * std::max(0.0, s.search_radius_px)));
  // Cache of evaluated centres on the (2 hmax + 1)^2 half-pixel grid.
  const int side = 2 * hmax + 1;
  std::vector<double> cache(static_cast<std::size_t>(side) * side, -1.0);
  std::vector<AsymmetrySums> sums(cache.size());
  const auto eval = [&](int dh, int dk) -> double {
    const std::size_t c = static_cast<std::size_t>(dk + hmax) * side + (dh + hmax);
    if (cache[c] < 0.0) {
      sums[c] = asymmetry_sums(img, hx0 + dh, hy0 + dk, s.radius_px, abs_prefix);
      cache[c] = sums[c].abs > 0.0 ? sums[c].residual / sums[c].abs : HUGE_VAL;
      ++r.evaluations;
    }
    return cache[c];
  };
  int bh = 0, bk = 0;
  double best = eval(0, 0);
  for (;;) {
    int nh = bh, nk = bk;
    double nb = best;
    for (int dk = -1; dk <= 1; ++dk)
      for (int dh = -1; dh <= 1; ++dh) {
        if (dh == 0 && dk == 0) continue;
        const int h = bh + dh, k = bk + dk;
        if (h * h + k * k > hmax * hmax) continue;
        const double v = eval(h, k);
        if (v < nb) {
          nb = v;
          nh = h;
          nk = k;
        }
      }
    if (nh == bh && nk == bk) break;
    bh = nh;
    bk = nk;
    best = nb;
  }
  const AsymmetrySums& bs = sums[static_cast<std::size_t>(bk + hmax) * side + (bh + hmax)];
  const double norm = s.normalisation == AsymmetryNormalisation::sum_abs ? 1.0 : 2.0;
  r.residual_sum = bs.residual;
  r.abs_sum = bs.abs;
  r.pairs_outside = bs.pairs_outside;
  r.A_raw = bs.abs > 0.0 ? bs.residual / (norm * bs.abs) : std::nan("");
  r.A = r.A_raw;
  r.centre = {0.5 * (hx0 + bh), 0.5 * (hy0 + bk)};
  return r;
}

double asymmetry_background_model(const core::ImageD& bkg_counts, const core::ImageD* rel_exposure,
                                  PixelPoint centre, double radius_px, int draws, core::RandomStream& rng) {
  if (draws <= 0) return 0.0;
  const int nx = bkg_counts.nx(), ny = bkg_counts.ny();
  const int hx = static_cast<int>(std::lround(2.0 * centre.x));
  const int hy = static_cast<int>(std::lround(2.0 * centre.y));
  const double* b = bkg_counts.data();
  const double* e = rel_exposure ? rel_exposure->data() : nullptr;
  // Noise image over the aperture bounding box, drawn pixel by pixel.
  core::ImageD noise(nx, ny, 0.0);
  double total = 0.0;
  for (int d = 0; d < draws; ++d) {
    for_each_in_circle(nx, ny, 0.5 * hx, 0.5 * hy, radius_px, [&](int, int, std::size_t i, double, double, double) {
      const double ee = e ? e[i] : 1.0;
      noise.pixels()[i] = ee > 0.0 ? (poisson_draw(b[i], rng) - b[i]) / ee : 0.0;
    });
    total += asymmetry_sums(noise, hx, hy, radius_px).residual;
  }
  return total / draws;
}

AsymmetryResult asymmetry(const core::ImageD& flux, PixelPoint start, const AsymmetrySettings& s,
                          const core::ImageD* bkg_counts, const core::ImageD* rel_exposure,
                          core::RandomStream& rng) {
  AsymmetryResult r = asymmetry_minimum(flux, start, s);
  const double norm = (s.normalisation == AsymmetryNormalisation::sum_abs ? 1.0 : 2.0) * r.abs_sum;
  if (!(norm > 0.0)) return r;
  double bres = 0.0;
  if (s.background == AsymmetryBackground::model && bkg_counts) {
    bres = asymmetry_background_model(*bkg_counts, rel_exposure, r.centre, s.radius_px, s.background_draws, rng);
  } else if (s.background == AsymmetryBackground::blank_region) {
    AsymmetrySettings bs = s;
    const AsymmetryResult b = asymmetry_minimum(flux, s.blank_centre, bs);
    bres = b.residual_sum;
  }
  r.background_term = bres / norm;
  r.A = r.A_raw - r.background_term;
  return r;
}

}  // namespace icmscope::morphology
