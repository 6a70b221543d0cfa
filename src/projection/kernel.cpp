#include "icmscope/projection/kernel.hpp"

#include <algorithm>
#include <array>
#include <cmath>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"

namespace icmscope::projection {
namespace {

using core::constants::kPi;

// Gauss-Legendre nodes and weights on [-1, 1] (Newton iteration on P_n).
void gauss_legendre(int n, double* x, double* w) {
  for (int i = 0; i < n; ++i) {
    double z = std::cos(kPi * (i + 0.75) / (n + 0.5));
    double dp = 0.0;
    for (int it = 0; it < 100; ++it) {
      double p0 = 1.0, p1 = 0.0;
      for (int j = 1; j <= n; ++j) {
        const double p2 = p1;
        p1 = p0;
        p0 = ((2.0 * j - 1.0) * z * p1 - (j - 1.0) * p2) / j;
      }
      dp = n * (z * p0 - p1) / (z * z - 1.0);
      const double dz = p0 / dp;
      z -= dz;
      if (std::fabs(dz) < 1e-16) break;
    }
    x[i] = z;
    w[i] = 2.0 / ((1.0 - z * z) * dp * dp);
  }
}

struct GaussLegendre {
  static constexpr int kN = 20;
  std::array<double, kN> x{}, w{};
  GaussLegendre() { gauss_legendre(kN, x.data(), w.data()); }
};

const GaussLegendre& gauss() {
  static const GaussLegendre g;
  return g;
}

// 2 Int_0^sqrt(1-S^2) f(sqrt(S^2 + z^2)) dz with breakpoints where the
// integrand is not analytic or varies on a scale ~S (branch points of
// sqrt(S^2 + z^2) at z = +-iS): geometric subintervals from S outwards keep
// the Gauss-Legendre rule converged for any S.
template <typename F>
double column_integral(SphKernel k, double S, F&& f) {
  if (!(S >= 0.0)) S = -S;
  if (S >= 1.0) return 0.0;
  const double zm = std::sqrt(1.0 - S * S);
  std::vector<double> pts{0.0, zm};
  if (S > 0.0)
    for (double b = S; b < zm; b *= 2.0) pts.push_back(b);
  if (k == SphKernel::CubicSpline && S < 0.5) pts.push_back(std::sqrt(0.25 - S * S));
  std::sort(pts.begin(), pts.end());
  const auto& g = gauss();
  double total = 0.0;
  for (std::size_t i = 0; i + 1 < pts.size(); ++i) {
    const double a = pts[i], b = pts[i + 1];
    if (b <= a) continue;
    const double c = 0.5 * (a + b), h = 0.5 * (b - a);
    double s = 0.0;
    for (int j = 0; j < GaussLegendre::kN; ++j) {
      const double z = c + h * g.x[static_cast<std::size_t>(j)];
      s += g.w[static_cast<std::size_t>(j)] * f(std::sqrt(S * S + z * z));
    }
    total += h * s;
  }
  return 2.0 * total;
}

double interp_s2(const std::vector<double>& t, double S2) {
  if (!(S2 >= 0.0)) S2 = 0.0;
  if (S2 >= 1.0) return 0.0;
  const double x = S2 * ColumnKernel::kAccurateNodes;
  const int i = std::min(static_cast<int>(x), ColumnKernel::kAccurateNodes - 1);
  const double f = x - i;
  return t[static_cast<std::size_t>(i)] + f * (t[static_cast<std::size_t>(i) + 1] - t[static_cast<std::size_t>(i)]);
}

}  // namespace

const char* kernel_name(SphKernel k) {
  return k == SphKernel::CubicSpline ? "cubic_spline" : "wendland_c2";
}

double kernel_3d(SphKernel k, double s) {
  s = std::fabs(s);
  if (s >= 1.0) return 0.0;
  if (k == SphKernel::CubicSpline) {
    const double q = 2.0 * s;
    const double w = q < 1.0 ? 1.0 - 1.5 * q * q + 0.75 * q * q * q : 0.25 * (2.0 - q) * (2.0 - q) * (2.0 - q);
    return 8.0 / kPi * w;
  }
  const double t = 1.0 - s;
  return 21.0 / (2.0 * kPi) * t * t * t * t * (1.0 + 4.0 * s);
}

double kernel_3d_laplacian(SphKernel k, double s) {
  s = std::fabs(s);
  if (s >= 1.0) return 0.0;
  if (k == SphKernel::CubicSpline) {
    // W = (8/pi) w(2s): Lap W = (32/pi) (w'' + 2 w'/q).
    const double q = 2.0 * s;
    const double l = q < 1.0 ? -9.0 + 9.0 * q : 1.5 * (2.0 - q) - 1.5 * (2.0 - q) * (2.0 - q) / q;
    return 32.0 / kPi * l;
  }
  // W = c (1-s)^4 (1+4s): W' = -20 c s (1-s)^3, Lap W = -60 c (1-s)^2 (1-2s).
  const double c = 21.0 / (2.0 * kPi);
  const double t = 1.0 - s;
  return -60.0 * c * t * t * (1.0 - 2.0 * s);
}

double column_kernel_quadrature(SphKernel k, double S) {
  return column_integral(k, S, [k](double r) { return kernel_3d(k, r); });
}

// Lap_2D F = Int Lap_3D W dz: the boundary term [dW/dz] vanishes because
// W'(H) = 0 for both kernels.
double column_laplacian_quadrature(SphKernel k, double S) {
  return column_integral(k, S, [k](double r) { return kernel_3d_laplacian(k, r); });
}

ColumnKernel::ColumnKernel(SphKernel k) : kind_(k) {
  const int N = kAccurateNodes;
  accurate_.resize(static_cast<std::size_t>(N) + 1);
  accurate_lap_.resize(static_cast<std::size_t>(N) + 1);
  for (int j = 0; j <= N; ++j) {
    const double S = std::sqrt(static_cast<double>(j) / N);
    accurate_[static_cast<std::size_t>(j)] = column_kernel_quadrature(k, S);
    accurate_lap_[static_cast<std::size_t>(j)] = column_laplacian_quadrature(k, S);
  }

  // Fast table: nodes S^2 = i / kFastBins are accurate nodes i * kStride.
  static_assert(kAccurateNodes % kFastBins == 0, "fast nodes must sit on accurate nodes");
  constexpr std::size_t kStride = kAccurateNodes / kFastBins;
  fast_.assign(4 * (static_cast<std::size_t>(kFastBins) + kFastPad), 0.0f);
  // The corrected value F + c LapF is used with c = 1 / (24 h^2) <= 1 / kLapLimit
  // (h >= 4 pixels); keep it non-negative at the nodes for every such c (the
  // interpolant is then non-negative too). This acts only at the outer edge
  // of the support, where F -> 0 faster than LapF.
  auto fnode = [&](int i) { return static_cast<float>(accurate_[kStride * static_cast<std::size_t>(i)]); };
  auto lnode = [&](int i) {
    return std::max(static_cast<float>(accurate_lap_[kStride * static_cast<std::size_t>(i)]),
                    -static_cast<float>(kLapLimit) * fnode(i));
  };
  double sf = 0.0, sl = 0.0;
  for (int i = 0; i < kFastBins; ++i) {
    const float f0 = fnode(i), f1 = fnode(i + 1), l0 = lnode(i), l1 = lnode(i + 1);
    float* e = fast_.data() + 4 * static_cast<std::size_t>(i);
    e[0] = f0;
    e[1] = f1 - f0;
    e[2] = l0;
    e[3] = l1 - l0;
    sf += static_cast<double>(e[0]) + 0.5 * static_cast<double>(e[1]);
    sl += static_cast<double>(e[2]) + 0.5 * static_cast<double>(e[3]);
  }
  fast_sum_f_ = kPi * sf / kFastBins;
  fast_sum_lap_ = kPi * sl / kFastBins;

  // Quadrant cumulative table from 8x8-point Gauss-Legendre cell integrals.
  const int M = kQuadrantCells;
  const double d = 1.0 / M;
  constexpr int kG = 8;
  std::array<double, kG> gx{}, gw{};
  gauss_legendre(kG, gx.data(), gw.data());
  std::vector<double> cell(static_cast<std::size_t>(M) * M, 0.0);
  for (int iy = 0; iy < M; ++iy)
    for (int ix = 0; ix < M; ++ix) {
      const double x0 = ix * d, y0 = iy * d;
      if (x0 * x0 + y0 * y0 >= 1.0) continue;
      double s = 0.0;
      for (int a = 0; a < kG; ++a) {
        const double y = y0 + 0.5 * d * (1.0 + gx[static_cast<std::size_t>(a)]);
        for (int b = 0; b < kG; ++b) {
          const double x = x0 + 0.5 * d * (1.0 + gx[static_cast<std::size_t>(b)]);
          s += gw[static_cast<std::size_t>(a)] * gw[static_cast<std::size_t>(b)] * value_s2(x * x + y * y);
        }
      }
      cell[static_cast<std::size_t>(iy) * M + ix] = 0.25 * d * d * s;
    }
  const std::size_t W = static_cast<std::size_t>(M) + 1;
  quadrant_.assign(W * W, 0.0);
  for (int iy = 1; iy <= M; ++iy) {
    double row = 0.0;
    for (int ix = 1; ix <= M; ++ix) {
      row += cell[static_cast<std::size_t>(iy - 1) * M + (ix - 1)];
      quadrant_[static_cast<std::size_t>(iy) * W + ix] = quadrant_[static_cast<std::size_t>(iy - 1) * W + ix] + row;
    }
  }
  // Symmetrise (Q(X, Y) = Q(Y, X) exactly; the quadrature of transposed
  // cells differs in rounding only), then remove the residual normalisation
  // error (~1e-9) so that a whole footprint telescopes to exactly
  // 4 Q(1, 1) = 1.
  for (std::size_t iy = 0; iy < W; ++iy)
    for (std::size_t ix = iy + 1; ix < W; ++ix) {
      const double m = 0.5 * (quadrant_[iy * W + ix] + quadrant_[ix * W + iy]);
      quadrant_[iy * W + ix] = quadrant_[ix * W + iy] = m;
    }
  const double scale = 0.25 / quadrant_[W * W - 1];
  for (double& q : quadrant_) q *= scale;
  quadrant_[W * W - 1] = 0.25;  // exactly, whatever the rounding of the scaling
}

const ColumnKernel& ColumnKernel::get(SphKernel k) {
  static const ColumnKernel cubic(SphKernel::CubicSpline);
  static const ColumnKernel wendland(SphKernel::WendlandC2);
  return k == SphKernel::CubicSpline ? cubic : wendland;
}

double ColumnKernel::value_s2(double S2) const { return interp_s2(accurate_, S2); }

double ColumnKernel::laplacian(double S) const { return interp_s2(accurate_lap_, S * S); }

double ColumnKernel::quadrant_integral(double X, double Y) const {
  const double sx = X < 0.0 ? -1.0 : 1.0, sy = Y < 0.0 ? -1.0 : 1.0;
  const double ax = std::min(std::fabs(X), 1.0) * kQuadrantCells;
  const double ay = std::min(std::fabs(Y), 1.0) * kQuadrantCells;
  const int ix = std::min(static_cast<int>(ax), kQuadrantCells - 1);
  const int iy = std::min(static_cast<int>(ay), kQuadrantCells - 1);
  const double fx = ax - ix, fy = ay - iy;
  const std::size_t W = static_cast<std::size_t>(kQuadrantCells) + 1;
  const double* r0 = quadrant_.data() + static_cast<std::size_t>(iy) * W + ix;
  const double* r1 = r0 + W;
  const double q0 = r0[0] + fx * (r0[1] - r0[0]);
  const double q1 = r1[0] + fx * (r1[1] - r1[0]);
  return sx * sy * (q0 + fy * (q1 - q0));
}

}  // namespace icmscope::projection
