#include "icmscope/morphology/power_ratios.hpp"

#include <cmath>

#include "icmscope/core/errors.hpp"
#include "icmscope/morphology/apertures.hpp"

namespace icmscope::morphology {

const char* to_string(LengthUnit u) {
  switch (u) {
    case LengthUnit::pixel: return "pixel";
    case LengthUnit::arcsec: return "arcsec";
    case LengthUnit::kpc: return "kpc";
    case LengthUnit::mpc: return "Mpc";
  }
  return "?";
}

namespace {

static_assert(kMaxPowerOrder == 4, "the interior kernel of power_ratios writes orders 0..4");

// Accumulates scaled moments: coordinates divided by R, so that sums of
// (x + iy)^m / R^m stay O(a_0).
struct Acc {
  double re[kMaxPowerOrder + 1] = {};
  double im[kMaxPowerOrder + 1] = {};
  double nz[kMaxPowerOrder + 1] = {};
  void add(double u, double v, double f, double var) {
    double zr = 1.0, zi = 0.0;
    const double r2 = u * u + v * v;
    double r2m = 1.0;
    re[0] += f;
    nz[0] += var;
    for (int m = 1; m <= kMaxPowerOrder; ++m) {
      const double t = zr * u - zi * v;
      zi = zr * v + zi * u;
      zr = t;
      r2m *= r2;
      re[m] += f * zr;
      im[m] += f * zi;
      nz[m] += var * r2m;
    }
  }
};

PowerRatioResult finish(const Acc& acc, double R_unit, double unit_per_px) {
  PowerRatioResult r;
  r.radius = R_unit;
  r.unit_per_px = unit_per_px;
  r.ln_R = std::log(R_unit);
  double Rm = 1.0;
  for (int m = 0; m <= kMaxPowerOrder; ++m) {
    r.a[m] = acc.re[m] * Rm;
    r.b[m] = acc.im[m] * Rm;
    Rm *= R_unit;
  }
  r.P[0] = (acc.re[0] * r.ln_R) * (acc.re[0] * r.ln_R);
  r.P_corrected[0] = r.P[0];
  r.ratio[0] = r.ratio_corrected[0] = 1.0;
  for (int m = 1; m <= kMaxPowerOrder; ++m) {
    const double d = 2.0 * m * m;
    r.P[m] = (acc.re[m] * acc.re[m] + acc.im[m] * acc.im[m]) / d;  // scaled: R^(2m) cancels
    r.noise[m] = acc.nz[m] / d;
    r.P_corrected[m] = r.P[m] - r.noise[m];
    r.ratio[m] = r.P[m] / r.P[0];
    r.ratio_corrected[m] = r.P_corrected[m] / r.P[0];
  }
  return r;
}

}  // namespace

PowerRatioResult power_ratios_points(const std::vector<WeightedPoint>& pts, double R) {
  if (!(R > 0.0)) throw core::DomainError("power_ratios_points: R must be > 0");
  Acc acc;
  for (const auto& p : pts) acc.add(p.x / R, p.y / R, p.w, 0.0);
  PowerRatioResult r = finish(acc, R, 1.0);
  r.origin = {0.0, 0.0};
  return r;
}

PowerRatioResult power_ratios(const core::ImageD& flux, const core::ImageD* variance, PixelPoint origin,
                              double radius_px, double unit_per_px) {
  if (!(radius_px > 0.0) || !(unit_per_px > 0.0))
    throw core::DomainError("power_ratios: radius_px and unit_per_px must be > 0");
  if (variance && !variance->same_grid(flux))
    throw core::DomainError("power_ratios: variance image must be on the flux grid");
  Acc acc;
  const double inv = 1.0 / radius_px;
  const double* I = flux.data();
  const double* V = variance ? variance->data() : nullptr;
  const int nx = flux.nx();
  for_each_circle_row(nx, flux.ny(), origin.x, origin.y, radius_px, [&](int iy, double dy, int xa, int xb, int ia,
                                                                        int ib) {
    const std::size_t off = static_cast<std::size_t>(iy) * nx;
    const double v = dy * inv;
    const auto edge = [&](int ix) {
      const double dx = ix - origin.x;
      const double w = pixel_fraction_in_circle(dx, dy, radius_px);
      if (w > 0.0) acc.add(dx * inv, v, w * I[off + ix], V ? w * w * V[off + ix] : 0.0);
    };
    if (ia > ib) {
      for (int ix = xa; ix <= xb; ++ix) edge(ix);
      return;
    }
    for (int ix = xa; ix < ia; ++ix) edge(ix);
    // Interior run: (u + i v)^m by recurrence, reductions vectorised.
    double r0 = 0, r1 = 0, r2 = 0, r3 = 0, r4 = 0, i1 = 0, i2 = 0, i3 = 0, i4 = 0;
    double n0 = 0, n1 = 0, n2 = 0, n3 = 0, n4 = 0;
    const double* row = I + off;
    const double* vrow = V ? V + off : nullptr;
    const double v2 = v * v;
#pragma omp simd reduction(+ : r0, r1, r2, r3, r4, i1, i2, i3, i4)
    for (int ix = ia; ix <= ib; ++ix) {
      const double u = (ix - origin.x) * inv;
      const double f = row[ix];
      // z = u + i v; z^2 = (u^2 - v^2) + 2uv i; z^3 = z^2 z; z^4 = (z^2)^2
      const double z2r = u * u - v2, z2i = 2.0 * u * v;
      const double z3r = z2r * u - z2i * v, z3i = z2r * v + z2i * u;
      const double z4r = z2r * z2r - z2i * z2i, z4i = 2.0 * z2r * z2i;
      r0 += f;
      r1 += f * u;
      i1 += f * v;
      r2 += f * z2r;
      i2 += f * z2i;
      r3 += f * z3r;
      i3 += f * z3i;
      r4 += f * z4r;
      i4 += f * z4i;
    }
    if (vrow) {
#pragma omp simd reduction(+ : n0, n1, n2, n3, n4)
      for (int ix = ia; ix <= ib; ++ix) {
        const double u = (ix - origin.x) * inv;
        const double q = vrow[ix];
        const double rr = u * u + v2;
        const double rr2 = rr * rr;
        n0 += q;
        n1 += q * rr;
        n2 += q * rr2;
        n3 += q * rr2 * rr;
        n4 += q * rr2 * rr2;
      }
    }
    acc.re[0] += r0;
    acc.re[1] += r1;
    acc.im[1] += i1;
    acc.re[2] += r2;
    acc.im[2] += i2;
    acc.re[3] += r3;
    acc.im[3] += i3;
    acc.re[4] += r4;
    acc.im[4] += i4;
    acc.nz[0] += n0;
    acc.nz[1] += n1;
    acc.nz[2] += n2;
    acc.nz[3] += n3;
    acc.nz[4] += n4;
    for (int ix = ib + 1; ix <= xb; ++ix) edge(ix);
  });
  PowerRatioResult r = finish(acc, radius_px * unit_per_px, unit_per_px);
  r.origin = origin;
  r.inside_image = circle_inside_image(flux.nx(), flux.ny(), origin.x, origin.y, radius_px);
  return r;
}

}  // namespace icmscope::morphology
