#pragma once
// SPH smoothing kernels and their line-of-sight (column) integrals.
//
// Length unit: the COMPACT SUPPORT RADIUS H (GasCells::support); the kernel
// vanishes for r >= H. Dimensionless radii: s = r / H in 3-D, S = R / H for
// the projected (image-plane) radius.
//
//   Cubic spline (Monaghan & Lattanzio 1985, A&A 149, 135), smoothing length
//   h = H/2, q = r/h = 2s:  W = w(q) / (pi h^3) = 8 w(2s) / (pi H^3),
//     w(q) = 1 - 1.5 q^2 + 0.75 q^3 (q < 1), 0.25 (2 - q)^3 (1 <= q < 2).
//   Wendland C2 (Wendland 1995; Dehnen & Aly 2012, MNRAS 425, 1068):
//     W = 21 / (2 pi H^3) (1 - s)^4 (1 + 4 s), s < 1.
//
// Column kernel F(R) = Int W(sqrt(R^2 + z^2)) dz, normalised so that
// Int F 2 pi R dR = 1; here F is returned in units of H^-2 as a function of
// S = R/H: F_H(S) = H^2 F(R). (physics.md section 7 quotes the cubic spline in
// units of h^-2 against R/h: F_h(R/h) = F_H(S) / 4 at S = (R/h) / 2.)
//
// Everything is computed once per kernel (ColumnKernel::get) by direct
// quadrature and kept in immutable tables:
//   - an accurate table of F in S^2 (linear interpolation, ~1e-8 relative);
//   - a fast hot-loop table: F and its 2-D Laplacian at the midpoints of
//     kFastBins equal bins in S^2 (indexed by int(S^2 * kFastBins), no sqrt);
//   - the quadrant cumulative integral Q(X, Y) = Int_0^X Int_0^Y F dx dy
//     (X, Y in units of H), from which exact pixel integrals follow by double
//     differences.
#include <cstddef>
#include <vector>

namespace icmscope::projection {

enum class SphKernel { CubicSpline, WendlandC2 };

const char* kernel_name(SphKernel k);

// 3-D kernel W(r) H^3 at s = r/H (0 for s >= 1).
double kernel_3d(SphKernel k, double s);
// 3-D Laplacian of W, times H^5, at s = r/H.
double kernel_3d_laplacian(SphKernel k, double s);

// Reference evaluations by direct Gauss-Legendre quadrature along the line of
// sight (slow; used to build the tables and by tests). F_H(S) = H^2 F(R) and
// its 2-D Laplacian H^4 (d^2/dX^2 + d^2/dY^2) F, at S = R/H.
double column_kernel_quadrature(SphKernel k, double S);
double column_laplacian_quadrature(SphKernel k, double S);

class ColumnKernel {
 public:
  static constexpr int kFastBins = 1024;       // bins in S^2 in [0, 1) (16 KiB: stays in L1)
  static constexpr int kFastPad = 16;          // zero entries after the last bin
  static constexpr double kLapLimit = 384.0;   // 24 * 4^2: see fast()
  static constexpr int kAccurateNodes = 8192;  // intervals in S^2 of the accurate table
  static constexpr int kQuadrantCells = 128;   // cells per axis of the Q table on [0, 1]^2

  // The shared immutable instance (built on first use, thread-safe).
  static const ColumnKernel& get(SphKernel k);

  SphKernel kind() const { return kind_; }

  // F_H(S) = H^2 F(R), S = R/H; 0 for S >= 1. Linear interpolation in S^2.
  double value(double S) const { return value_s2(S * S); }
  double value_s2(double S2) const;
  // 2-D Laplacian of F_H at S (units H^-4), linear interpolation in S^2.
  double laplacian(double S) const;

  // Q(X, Y) = Int_0^X Int_0^Y F_H(sqrt(x^2 + y^2)) dx dy for any real X, Y
  // (odd in each argument; |X|, |Y| clipped to 1). Q(1, 1) = 1/4.
  // Bilinear interpolation of the tabulated nodes: the implied density is
  // the exact average of F over each table cell, so double differences
  // (pixel integrals) are never negative.
  double quadrant_integral(double X, double Y) const;

  // Hot-loop tables. fast(): 4 * (kFastBins + kFastPad) floats; bin i
  // (S^2 in [i, i+1) / kFastBins) holds {F_i, F_{i+1} - F_i, L_i, L_{i+1} - L_i}
  // with F_i, L_i = F, LapF at S^2 = i / kFastBins, so that at
  // S^2 kFastBins = i + t the linear interpolant is
  // (F_i + t dF_i) + c (L_i + t dL_i). The kFastPad bins from kFastBins on are
  // zero, so an index that rounding pushes to or just past kFastBins yields
  // zero without a clamp. L is limited to >= -kLapLimit F at the nodes so
  // that the corrected value is >= 0 for all 0 <= c <= 1 / kLapLimit
  // (c = 1 / (24 h^2) with h >= 4 pixels); the limit acts only near S = 1.
  const float* fast() const { return fast_.data(); }
  // quadrant(): (kQuadrantCells + 1)^2 doubles, Q at nodes (ix, iy) / kQ,
  // row-major [iy * (kQ + 1) + ix].
  const double* quadrant() const { return quadrant_.data(); }

  // Int (F + c LapF) d^2S of the fast table's piecewise-linear interpolant
  // (pi Int d(S^2)); used to normalise footprints too large to sum over
  // pixel by pixel.
  double fast_integral(double laplacian_coefficient) const {
    return fast_sum_f_ + laplacian_coefficient * fast_sum_lap_;
  }

  explicit ColumnKernel(SphKernel k);  // builds the tables; prefer get()

 private:
  SphKernel kind_;
  std::vector<double> accurate_;      // F at S^2 = j / kAccurateNodes, j = 0..N
  std::vector<double> accurate_lap_;  // LapF at the same nodes
  std::vector<float> fast_;
  std::vector<double> quadrant_;
  double fast_sum_f_ = 0.0;
  double fast_sum_lap_ = 0.0;
};

}  // namespace icmscope::projection
