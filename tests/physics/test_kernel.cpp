// SPH kernels and column kernels: closed forms, the physics.md section 7
// values, normalisation integrals, and an independent scipy quadrature
// (scipy.integrate.quad run from /usr/bin/python3).
//
// Units: the compact support radius H. The cubic spline's smoothing length is
// h = H/2, so physics.md's F_h(R/h) (units h^-2) equals F_H(S) / 4 at
// S = R/H = (R/h) / 2.
#include <catch2/catch.hpp>

#include <array>
#include <cmath>
#include <fstream>
#include <sstream>
#include <string>
#include <vector>

#include "icmscope/core/constants.hpp"
#include "icmscope/projection/kernel.hpp"
#include "python_reference.hpp"
#include "test_support.hpp"

using icmscope::projection::ColumnKernel;
using icmscope::projection::SphKernel;
namespace pj = icmscope::projection;
namespace ts = icmscope::testing;
using icmscope::testing::python_rows;
using icmscope::core::constants::kPi;

namespace {


// Gauss-Legendre-free midpoint integral of g over [a, b] with n cells.
template <typename G>
double midpoint(G&& g, double a, double b, int n) {
  const double d = (b - a) / n;
  double s = 0.0;
  for (int i = 0; i < n; ++i) s += g(a + (i + 0.5) * d);
  return s * d;
}

}  // namespace

TEST_CASE("3-D kernels: normalisation and continuity", "[kernel]") {
  for (SphKernel k : {SphKernel::CubicSpline, SphKernel::WendlandC2}) {
    INFO(pj::kernel_name(k));
    // Int W 4 pi r^2 dr = 1 (kernel normalisation; Monaghan & Lattanzio 1985,
    // Dehnen & Aly 2012 eq. for Wendland C2).
    const double norm = midpoint([&](double s) { return 4.0 * kPi * s * s * pj::kernel_3d(k, s); }, 0.0, 1.0, 200000);
    CHECK(norm == Approx(1.0).epsilon(1e-9));
    CHECK(pj::kernel_3d(k, 1.0) == 0.0);
    CHECK(pj::kernel_3d(k, 1.5) == 0.0);
  }
  // Cubic spline: both branches give w(1) = 1/4 at q = 1 (s = 1/2);
  // W(0) = 8 / (pi H^3) since h = H/2.
  CHECK(pj::kernel_3d(SphKernel::CubicSpline, 0.5 - 1e-12) ==
        Approx(pj::kernel_3d(SphKernel::CubicSpline, 0.5 + 1e-12)).epsilon(1e-9));
  CHECK(pj::kernel_3d(SphKernel::CubicSpline, 0.5) == Approx(8.0 / kPi * 0.25));
  CHECK(pj::kernel_3d(SphKernel::CubicSpline, 0.0) == Approx(8.0 / kPi));
  // Wendland C2: W(0) = 21 / (2 pi H^3).
  CHECK(pj::kernel_3d(SphKernel::WendlandC2, 0.0) == Approx(21.0 / (2.0 * kPi)));
}

TEST_CASE("3-D Laplacian matches finite differences of W", "[kernel]") {
  for (SphKernel k : {SphKernel::CubicSpline, SphKernel::WendlandC2}) {
    INFO(pj::kernel_name(k));
    for (double s : {0.1, 0.3, 0.45, 0.55, 0.7, 0.9}) {
      const double d = 1e-4;
      const double w0 = pj::kernel_3d(k, s), wp = pj::kernel_3d(k, s + d), wm = pj::kernel_3d(k, s - d);
      const double lap = (wp - 2.0 * w0 + wm) / (d * d) + (2.0 / s) * (wp - wm) / (2.0 * d);
      CHECK(pj::kernel_3d_laplacian(k, s) == Approx(lap).epsilon(1e-5).margin(1e-6));
    }
  }
}

TEST_CASE("column kernel: closed-form central values", "[kernel]") {
  // F(0) = 2 Int_0^H W(z) dz: cubic (units h^-2) 1.5/pi, i.e. 6/pi in H^-2;
  // Wendland C2 7/pi (physics.md section 7, re-derived here in closed form:
  // Int_0^1 (1-z)^4 (1+4z) dz = 1/3).
  const auto& c = ColumnKernel::get(SphKernel::CubicSpline);
  const auto& w = ColumnKernel::get(SphKernel::WendlandC2);
  CHECK(pj::column_kernel_quadrature(SphKernel::CubicSpline, 0.0) == Approx(6.0 / kPi).epsilon(1e-13));
  CHECK(pj::column_kernel_quadrature(SphKernel::WendlandC2, 0.0) == Approx(7.0 / kPi).epsilon(1e-13));
  CHECK(c.value(0.0) == Approx(6.0 / kPi).epsilon(1e-12));
  CHECK(w.value(0.0) == Approx(7.0 / kPi).epsilon(1e-12));
  CHECK(c.value(1.0) == 0.0);
  CHECK(w.value(1.2) == 0.0);
}

TEST_CASE("column kernel: physics.md section 7 values", "[kernel]") {
  // physics.md section 7 [C], 5 significant digits. Cubic spline values are
  // quoted in units of h^-2 at R/h = 0.5, 1, 1.5: F_h = F_H(S) / 4, S = (R/h)/2.
  const auto& c = ColumnKernel::get(SphKernel::CubicSpline);
  CHECK(c.value(0.0) / 4.0 == Approx(0.47746).margin(5e-6));
  CHECK(c.value(0.25) / 4.0 == Approx(0.33875).margin(5e-6));
  CHECK(c.value(0.5) / 4.0 == Approx(0.11104).margin(5e-6));
  CHECK(c.value(0.75) / 4.0 == Approx(0.01144).margin(5e-6));
  // Wendland C2 quoted directly in H^-2 at R/H = 0, 0.25, 0.5, 0.75.
  const auto& w = ColumnKernel::get(SphKernel::WendlandC2);
  CHECK(w.value(0.0) == Approx(2.22817).margin(5e-6));
  CHECK(w.value(0.25) == Approx(1.45119).margin(5e-6));
  CHECK(w.value(0.5) == Approx(0.40899).margin(5e-6));
  CHECK(w.value(0.75) == Approx(0.02720).margin(5e-6));
}

TEST_CASE("column kernel agrees with scipy.integrate.quad", "[kernel][python]") {
  // Independent line-of-sight integral of the same 3-D kernels with scipy.
  const std::vector<double> S = {0.0, 0.05, 0.2, 0.37, 0.5, 0.61, 0.8, 0.95, 0.99};
  std::ostringstream py;
  py.precision(17);
  py << "import numpy as np\nfrom scipy.integrate import quad\n"
        "def cubic(s):\n"
        "    q = 2*s\n"
        "    w = 1 - 1.5*q*q + 0.75*q**3 if q < 1 else (0.25*(2-q)**3 if q < 2 else 0.0)\n"
        "    return 8/np.pi*w\n"
        "def wend(s):\n"
        "    return 21/(2*np.pi)*(1-s)**4*(1+4*s) if s < 1 else 0.0\n"
        "for S in [";
  for (double s : S) py << s << ",";
  py << "]:\n"
        "    zm = np.sqrt(max(0.0, 1 - S*S))\n"
        "    pts = [np.sqrt(0.25 - S*S)] if S < 0.5 else None\n"
        "    fc = 2*quad(lambda z: cubic(np.hypot(S, z)), 0, zm, points=pts, epsabs=1e-14, epsrel=1e-13, limit=200)[0]\n"
        "    fw = 2*quad(lambda z: wend(np.hypot(S, z)), 0, zm, epsabs=1e-14, epsrel=1e-13, limit=200)[0]\n"
        "    print(repr(S), repr(fc), repr(fw))\n";
  const auto rows = python_rows("kernel_scipy", py.str());
  REQUIRE(rows.size() == S.size());
  const auto& c = ColumnKernel::get(SphKernel::CubicSpline);
  const auto& w = ColumnKernel::get(SphKernel::WendlandC2);
  for (const auto& r : rows) {
    INFO("S = " << r[0]);
    CHECK(pj::column_kernel_quadrature(SphKernel::CubicSpline, r[0]) == Approx(r[1]).epsilon(1e-10).margin(1e-13));
    CHECK(pj::column_kernel_quadrature(SphKernel::WendlandC2, r[0]) == Approx(r[2]).epsilon(1e-10).margin(1e-13));
    // Tabulated values (linear in S^2, 8192 intervals).
    CHECK(c.value(r[0]) == Approx(r[1]).epsilon(1e-6).margin(1e-9));
    CHECK(w.value(r[0]) == Approx(r[2]).epsilon(1e-6).margin(1e-9));
  }
}

TEST_CASE("column kernel normalisation: Int F 2 pi R dR = 1", "[kernel]") {
  for (SphKernel k : {SphKernel::CubicSpline, SphKernel::WendlandC2}) {
    INFO(pj::kernel_name(k));
    const auto& ck = ColumnKernel::get(k);
    // Direct quadrature (no table): 2 pi Int_0^1 F(S) S dS.
    const double direct =
        midpoint([&](double s) { return 2.0 * kPi * s * pj::column_kernel_quadrature(k, s); }, 0.0, 1.0, 4000);
    CHECK(direct == Approx(1.0).epsilon(1e-6));
    // The accurate table: pi Int_0^1 F d(S^2).
    const double table = midpoint([&](double s2) { return kPi * ck.value_s2(s2); }, 0.0, 1.0, 200000);
    CHECK(table == Approx(1.0).epsilon(1e-7));
    // The fast (hot-loop) table, piecewise linear in S^2 (trapezoid rule,
    // error O(kFastBins^-2)).
    CHECK(ck.fast_integral(0.0) == Approx(1.0).epsilon(1e-5));
    // Quadrant table: 4 Q(1, 1) = 1.
    CHECK(4.0 * ck.quadrant_integral(1.0, 1.0) == Approx(1.0).epsilon(1e-14));
  }
}

TEST_CASE("column kernel Laplacian", "[kernel]") {
  for (SphKernel k : {SphKernel::CubicSpline, SphKernel::WendlandC2}) {
    INFO(pj::kernel_name(k));
    const auto& ck = ColumnKernel::get(k);
    // Lap F = F'' + F'/S by central differences of the direct quadrature.
    for (double S : {0.15, 0.3, 0.45, 0.6, 0.8}) {
      const double d = 1e-3;
      const double f0 = pj::column_kernel_quadrature(k, S), fp = pj::column_kernel_quadrature(k, S + d),
                   fm = pj::column_kernel_quadrature(k, S - d);
      const double lap = (fp - 2.0 * f0 + fm) / (d * d) + (fp - fm) / (2.0 * d) / S;
      INFO("S = " << S);
      CHECK(pj::column_laplacian_quadrature(k, S) == Approx(lap).epsilon(2e-5).margin(1e-4));
      CHECK(ck.laplacian(S) == Approx(lap).epsilon(2e-5).margin(1e-4));
    }
    // Divergence theorem: Int Lap F d^2S = 2 pi S F'(S) at S = 1, which is 0.
    const double flux = midpoint([&](double s2) { return kPi * ck.laplacian(std::sqrt(s2)); }, 0.0, 1.0, 200000);
    CHECK(std::abs(flux) < 1e-6 * std::abs(ck.laplacian(0.0)));
  }
}

TEST_CASE("fast table: nodes, slopes and zero padding", "[kernel]") {
  for (SphKernel k : {SphKernel::CubicSpline, SphKernel::WendlandC2}) {
    INFO(pj::kernel_name(k));
    const auto& ck = ColumnKernel::get(k);
    const float* t = ck.fast();
    constexpr int N = ColumnKernel::kFastBins;
    for (int i : {0, 1, N / 10, N / 2, 3 * N / 4, 97 * N / 100, N - 1}) {
      const float* e = t + 4 * i;
      const double s2 = static_cast<double>(i) / N, s2n = static_cast<double>(i + 1) / N;
      // {F_i, F_{i+1} - F_i} at the nodes S^2 = i / N.
      CHECK(e[0] == Approx(ck.value_s2(s2)).epsilon(1e-6).margin(1e-7));
      CHECK(e[0] + e[1] == Approx(ck.value_s2(s2n)).epsilon(1e-6).margin(1e-7));
      const float lim = static_cast<float>(ColumnKernel::kLapLimit);
      // LapF, unless limited to -kLapLimit F where F is tiny (near S = 1).
      if (e[2] > -lim * e[0] * (1.0f - 1e-6f))
        CHECK(e[2] == Approx(ck.laplacian(std::sqrt(s2))).epsilon(1e-5).margin(1e-5));
      // The corrected value is non-negative for any c <= 1/kLapLimit at both nodes.
      CHECK(e[0] + e[2] / lim >= 0.0f);
      CHECK((e[0] + e[1]) + (e[2] + e[3]) / lim >= -1e-7f);
    }
    // The limit acts only at the outer edge of the support (S > 0.8).
    int first_limited = N;
    for (int i = 0; i < N; ++i)
      if (!(t[4 * i + 2] > -static_cast<float>(ColumnKernel::kLapLimit) * t[4 * i])) {
        first_limited = i;
        break;
      }
    CHECK(first_limited > N * 64 / 100);
    for (int i = N; i < N + ColumnKernel::kFastPad; ++i)
      for (int j = 0; j < 4; ++j) CHECK(t[4 * i + j] == 0.0f);
  }
}

TEST_CASE("quadrant integral Q(X, Y)", "[kernel]") {
  for (SphKernel k : {SphKernel::CubicSpline, SphKernel::WendlandC2}) {
    INFO(pj::kernel_name(k));
    const auto& ck = ColumnKernel::get(k);
    // Symmetries: odd in each argument, symmetric under X <-> Y, clipped at 1.
    CHECK(ck.quadrant_integral(-0.3, 0.7) == -ck.quadrant_integral(0.3, 0.7));
    CHECK(ck.quadrant_integral(-0.3, -0.7) == ck.quadrant_integral(0.3, 0.7));
    CHECK(ck.quadrant_integral(0.3, 0.7) == ck.quadrant_integral(0.7, 0.3));
    CHECK(ck.quadrant_integral(2.0, 0.4) == ck.quadrant_integral(1.0, 0.4));
    CHECK(ck.quadrant_integral(0.0, 0.5) == 0.0);
    // Against a direct 2-D midpoint integral of the table F: at table nodes
    // (multiples of 1/128) to the quadrature accuracy, between nodes to the
    // bilinear interpolation accuracy.
    for (auto xyt : {std::array<double, 3>{0.5, 0.3125, 1e-6}, {0.1875, 0.875, 1e-6}, {1.0, 0.25, 1e-6},
                     {0.703125, 0.703125, 1e-6}, {0.3, 0.61, 1e-3}}) {
      const double X = xyt[0], Y = xyt[1];
      const int n = 800;
      double s = 0.0;
      for (int i = 0; i < n; ++i)
        for (int j = 0; j < n; ++j) {
          const double x = (i + 0.5) * X / n, y = (j + 0.5) * Y / n;
          s += ck.value_s2(x * x + y * y);
        }
      s *= X * Y / (static_cast<double>(n) * n);
      INFO("X = " << X << ", Y = " << Y);
      CHECK(ck.quadrant_integral(X, Y) == Approx(s).epsilon(xyt[2]));
    }
  }
}
