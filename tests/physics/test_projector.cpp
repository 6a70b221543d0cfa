// Projector: grid convention, exact conservation, accuracy against
// brute-force pixel integrals of the column kernel, edge clipping, depth
// slabs, channels, selection, thread-count invariance and input checks.
//
// The reference for a single cell is the column kernel F (kernel.hpp, itself
// checked against scipy in test_kernel.cpp) integrated over each pixel with
// composite Gauss-Legendre quadrature clipped to the footprint: the exact
// pixel integral the deposit aims at (Price 2007, PASA 24, 159: tabulated
// column kernels; renormalised per particle so flux is conserved).
#include <catch2/catch.hpp>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>
#include <string>
#include <vector>

#ifdef _OPENMP
#include <omp.h>
#endif

#include <Eigen/Dense>

#include "icmscope/core/errors.hpp"
#include "icmscope/core/random.hpp"
#include "icmscope/projection/kernel.hpp"
#include "icmscope/projection/line_of_sight.hpp"
#include "icmscope/projection/projector.hpp"

namespace pj = icmscope::projection;
using icmscope::core::DomainError;
using icmscope::core::RandomStream;
using pj::DepositKernel;

namespace {

// 8-point Gauss-Legendre on [-1, 1] (Abramowitz & Stegun 1972, Table 25.4).
constexpr double kGx[8] = {-0.9602898564975363, -0.7966664774136267, -0.5255324099163290, -0.1834346424956498,
                           0.1834346424956498,  0.5255324099163290,  0.7966664774136267,  0.9602898564975363};
constexpr double kGw[8] = {0.1012285362903763, 0.2223810344533745, 0.3137066458778873, 0.3626837833783620,
                           0.3626837833783620, 0.3137066458778873, 0.2223810344533745, 0.1012285362903763};

// Int over [x0, x0+1] x [y0, y0+1] (pixel units) of F(r/H) / H^2 for a cell
// at (uc, vc) with support H: composite 4 x 4 Gauss-Legendre (8 x 8) on the
// part of the pixel inside the footprint's bounding box.
double pixel_integral(const pj::ColumnKernel& ck, double uc, double vc, double H, double x0, double y0) {
  const double a0 = std::max(x0, uc - H), a1 = std::min(x0 + 1.0, uc + H);
  const double b0 = std::max(y0, vc - H), b1 = std::min(y0 + 1.0, vc + H);
  if (a0 >= a1 || b0 >= b1) return 0.0;
  constexpr int M = 4;
  double s = 0.0;
  for (int i = 0; i < M; ++i)
    for (int j = 0; j < M; ++j) {
      const double xa = a0 + (a1 - a0) * i / M, xb = a0 + (a1 - a0) * (i + 1) / M;
      const double ya = b0 + (b1 - b0) * j / M, yb = b0 + (b1 - b0) * (j + 1) / M;
      for (int p = 0; p < 8; ++p)
        for (int q = 0; q < 8; ++q) {
          const double x = 0.5 * (xa + xb) + 0.5 * (xb - xa) * kGx[p];
          const double y = 0.5 * (ya + yb) + 0.5 * (yb - ya) * kGx[q];
          const double s2 = ((x - uc) * (x - uc) + (y - vc) * (y - vc)) / (H * H);
          s += kGw[p] * kGw[q] * 0.25 * (xb - xa) * (yb - ya) * ck.value_s2(s2) / (H * H);
        }
    }
  return s;
}

double sum(const std::vector<double>& v) {
  double s = 0.0;
  for (double x : v) s += x;
  return s;
}

// A reproducible mixed population: every deposit class (point-like,
// sub-pixel, exact, sampled, multi-tile, huge) inside a 256^2 field of 1 kpc pixels.
struct Population {
  std::vector<float> u, v, H;
  std::vector<double> w0, w2;
  std::vector<float> w1;
  std::size_t n() const { return u.size(); }
};

Population mixed_population(std::size_t n, std::uint64_t seed, double margin_px, bool with_huge,
                            double h_cap = 1e9) {
  Population p;
  RandomStream rng(seed, 0);
  for (std::size_t i = 0; i < n; ++i) {
    const double r = rng.uniform();
    double h;
    if (r < 0.1) h = 0.0;
    else if (r < 0.2) h = 0.2 * rng.uniform();              // mostly inside one pixel
    else if (r < 0.55) h = 0.2 + 0.8 * rng.uniform();       // sub-pixel (3 x 3 exact)
    else if (r < 0.8) h = 1.0 + 15.0 * rng.uniform();       // exact pixel integrals, sampled above 10
    else if (r < 0.97) h = 16.0 + 30.0 * rng.uniform();     // centre sampling, several tiles
    else h = with_huge ? 60.0 + 60.0 * rng.uniform() : 40.0;
    h = std::min(h, h_cap);
    const double m = std::min(h, margin_px) + 1.0;
    const double half = 128.0 - m;
    p.u.push_back(static_cast<float>((2.0 * rng.uniform() - 1.0) * half));
    p.v.push_back(static_cast<float>((2.0 * rng.uniform() - 1.0) * half));
    p.H.push_back(static_cast<float>(h));
    p.w0.push_back(rng.uniform());
    p.w1.push_back(static_cast<float>(10.0 * rng.uniform()));
    p.w2.push_back(1e-3 * rng.uniform() - 5e-4);  // signed weights are fine
  }
  return p;
}

pj::ProjectionGrid grid256() {
  pj::ProjectionGrid g;
  g.nx = g.ny = 256;
  g.pixel_kpc = 1.0;
  return g;
}

}  // namespace

TEST_CASE("projector: grid convention (pixel 0 at the lowest u and v, row-major)", "[projector]") {
  pj::ProjectionGrid g;
  g.nx = 8;
  g.ny = 4;
  g.pixel_kpc = 2.0;
  g.u0_kpc = 10.0;
  g.v0_kpc = -3.0;  // u in [2, 18), v in [-7, 1)
  CHECK(g.u_min() == 2.0);
  CHECK(g.v_min() == -7.0);
  // (u, v) -> expected (ix, iy); the last three fall outside.
  const std::vector<float> u = {2.1f, 17.9f, 6.0f, 9.99f, 2.0f, 1.99f, 18.0f, 5.0f};
  const std::vector<float> v = {-6.9f, 0.9f, -3.0f, -1.01f, -7.0f, -5.0f, -5.0f, 1.0f};
  const std::vector<int> ix = {0, 7, 2, 3, 0, -1, -1, -1};
  const std::vector<int> iy = {0, 3, 2, 2, 0, -1, -1, -1};
  std::vector<double> w;
  for (std::size_t i = 0; i < u.size(); ++i) w.push_back(static_cast<double>(1u << i));
  for (DepositKernel k : {DepositKernel::Point, DepositKernel::CubicSpline}) {
    pj::ProjectorSettings s;
    s.kernel = k;
    const std::vector<float> H(u.size(), 0.0f);  // H = 0: point-like for kernels too
    pj::PlaneCells cells{u.size(), u.data(), v.data(), H.data(), nullptr};
    const auto maps = pj::project(g, cells, {pj::WeightChannel(w)}, s);
    REQUIRE(maps.size() == 1);
    REQUIRE(maps[0].size() == 32u);
    std::vector<double> expect(32, 0.0);
    for (std::size_t i = 0; i < u.size(); ++i)
      if (ix[i] >= 0) expect[static_cast<std::size_t>(iy[i] * g.nx + ix[i])] += w[i];
    CHECK(maps[0] == expect);
  }
}

TEST_CASE("projector: a footprint inside one pixel goes whole to that pixel", "[projector]") {
  pj::ProjectionGrid g;
  g.nx = g.ny = 16;
  g.pixel_kpc = 1.0;
  const float u = 0.5f, v = -2.5f, H = 0.3f;  // pixel centre of (8, 5), footprint within it
  const double w = 3.0;
  pj::PlaneCells cells{1, &u, &v, &H, nullptr};
  pj::ProjectionStats st;
  const auto m = pj::project(g, cells, {pj::WeightChannel(&w)}, {}, &st);
  CHECK(m[0][5 * 16 + 8] == 3.0);
  CHECK(sum(m[0]) == 3.0);
  CHECK(st.cells_point == 1u);
}

TEST_CASE("projector: exact conservation for cells inside the field", "[projector]") {
  // Every cell's footprint lies inside the field: each map total equals the
  // sum of its channel to 1e-12 (relative to the sum of |w|).
  const Population p = mixed_population(8000, 99, 1e9, false);
  const pj::PlaneCells cells{p.n(), p.u.data(), p.v.data(), p.H.data(), nullptr};
  double s0 = 0.0, s1 = 0.0, s2 = 0.0, a2 = 0.0;
  for (std::size_t i = 0; i < p.n(); ++i) {
    s0 += p.w0[i];
    s1 += p.w1[i];
    s2 += p.w2[i];
    a2 += std::abs(p.w2[i]);
  }
  for (DepositKernel k : {DepositKernel::Point, DepositKernel::CubicSpline, DepositKernel::WendlandC2}) {
    INFO(pj::deposit_kernel_name(k));
    pj::ProjectorSettings s;
    s.kernel = k;
    pj::ProjectionStats st;
    const auto maps = pj::project(grid256(), cells, {p.w0, p.w1, p.w2}, s, &st);
    REQUIRE(maps.size() == 3);
    CHECK(std::abs(sum(maps[0]) - s0) <= 1e-12 * s0);
    CHECK(std::abs(sum(maps[1]) - s1) <= 1e-12 * s1);
    CHECK(std::abs(sum(maps[2]) - s2) <= 1e-12 * a2);
    CHECK(st.cells_deposited == p.n());
    if (k != DepositKernel::Point) {
      // Every deposit class was exercised.
      CHECK(st.cells_point > 0u);
      CHECK(st.cells_stencil > 0u);
      CHECK(st.cells_exact > 0u);
      CHECK(st.cells_sampled > 0u);
      CHECK(st.cells_point + st.cells_stencil + st.cells_exact + st.cells_sampled == st.cells_deposited);
    }
  }
  // One cell at a time, for a range of support radii and offsets.
  RandomStream rng(3, 3);
  for (double h : {0.05, 0.4, 0.99, 1.0, 1.7, 2.5, 7.0, 12.3, 15.9, 16.1, 33.0, 63.0}) {
    for (int t = 0; t < 5; ++t) {
      const float u = static_cast<float>(40.0 * rng.uniform() - 20.0), v = static_cast<float>(40.0 * rng.uniform() - 20.0);
      const float H = static_cast<float>(h);
      const double w = 1.0 + rng.uniform();
      pj::PlaneCells c{1, &u, &v, &H, nullptr};
      for (DepositKernel k : {DepositKernel::CubicSpline, DepositKernel::WendlandC2}) {
        pj::ProjectorSettings s;
        s.kernel = k;
        const auto m = pj::project(grid256(), c, {pj::WeightChannel(&w)}, s);
        INFO("h = " << h << " kernel " << pj::deposit_kernel_name(k));
        CHECK(std::abs(sum(m[0]) - w) <= 1e-13 * w);
        CHECK(*std::min_element(m[0].begin(), m[0].end()) >= 0.0);
      }
    }
  }
}

TEST_CASE("projector: a single cell's map equals its column kernel integrated over pixels", "[projector]") {
  // Tolerances (fraction of the peak pixel) follow the documented accuracy of
  // each deposit path: exact pixel integrals (h < 10 pixels; the limit is the
  // 128^2 cumulative table), centre sampling with the Laplacian correction
  // (h >= 10; error O(h^-4) plus the table's interpolation).
  RandomStream rng(17, 1);
  pj::ProjectionGrid g;
  g.nx = g.ny = 128;
  g.pixel_kpc = 1.0;
  for (auto kk : {std::pair<DepositKernel, pj::SphKernel>{DepositKernel::CubicSpline, pj::SphKernel::CubicSpline},
                  {DepositKernel::WendlandC2, pj::SphKernel::WendlandC2}}) {
    const auto& ck = pj::ColumnKernel::get(kk.second);
    for (double h : {0.3, 0.7, 0.97, 1.3, 2.6, 5.0, 9.0, 9.9, 10.2, 15.0, 30.0, 45.0}) {
      const double tol = h < 10.0 ? 4e-4 : (h < 20.0 ? 4e-4 : 2e-5);
      for (int t = 0; t < 4; ++t) {
        const float u = static_cast<float>(8.0 * rng.uniform() - 4.0), v = static_cast<float>(8.0 * rng.uniform() - 4.0);
        const float H = static_cast<float>(h);
        const double w = 1.0;
        pj::PlaneCells c{1, &u, &v, &H, nullptr};
        pj::ProjectorSettings s;
        s.kernel = kk.first;
        const auto m = pj::project(g, c, {pj::WeightChannel(&w)}, s);
        const double uc = u + 64.0, vc = v + 64.0;
        double peak = 0.0, worst = 0.0, l1 = 0.0, ref_total = 0.0;
        for (int iy = 0; iy < g.ny; ++iy)
          for (int ix = 0; ix < g.nx; ++ix) {
            const double r = pixel_integral(ck, uc, vc, H, ix, iy);
            const double d = m[0][static_cast<std::size_t>(iy) * g.nx + ix];
            peak = std::max(peak, r);
            worst = std::max(worst, std::abs(d - r));
            l1 += std::abs(d - r);
            ref_total += r;
          }
        INFO(pj::deposit_kernel_name(kk.first) << " h = " << h << " at (" << uc << ", " << vc << ")");
        CHECK(ref_total == Approx(1.0).epsilon(1e-5));  // the reference itself is normalised
        CHECK(worst <= tol * peak);
        CHECK(l1 <= tol);
      }
    }
  }
}

TEST_CASE("projector: edge clipping loses only the part outside the field", "[projector]") {
  // The same cells on a large field and on a small field whose pixels are a
  // subset of it: the small map is the crop of the large one, and its total
  // is the large map's total over the crop.
  const Population p = mixed_population(3000, 5, 1e9, true);
  const pj::PlaneCells cells{p.n(), p.u.data(), p.v.data(), p.H.data(), nullptr};
  pj::ProjectionGrid big = grid256();
  pj::ProjectionGrid small;
  small.nx = 96;
  small.ny = 64;
  small.pixel_kpc = 1.0;
  small.u0_kpc = -37.0;  // u_min = -85 = big u_min + 43
  small.v0_kpc = 50.0;   // v_min = 18 = big v_min + 146
  const int ox = 43, oy = 146;
  for (DepositKernel k : {DepositKernel::Point, DepositKernel::CubicSpline, DepositKernel::WendlandC2}) {
    pj::ProjectorSettings s;
    s.kernel = k;
    const auto mb = pj::project(big, cells, {p.w0}, s);
    const auto ms = pj::project(small, cells, {p.w0}, s);
    double worst = 0.0, peak = 0.0, crop_total = 0.0;
    for (int iy = 0; iy < small.ny; ++iy)
      for (int ix = 0; ix < small.nx; ++ix) {
        const double b = mb[0][static_cast<std::size_t>(iy + oy) * big.nx + (ix + ox)];
        const double a = ms[0][static_cast<std::size_t>(iy) * small.nx + ix];
        worst = std::max(worst, std::abs(a - b));
        peak = std::max(peak, std::abs(b));
        crop_total += b;
      }
    INFO(pj::deposit_kernel_name(k));
    CHECK(worst <= 1e-13 * peak);
    CHECK(sum(ms[0]) == Approx(crop_total).epsilon(1e-12));
    CHECK(sum(ms[0]) < sum(mb[0]));
  }
}

TEST_CASE("projector: a footprint much larger than the field", "[projector]") {
  // A cell with H = 5000 pixels centred 1000 pixels off a 64^2 field: the
  // field receives the column kernel's integral over it (normalised by the
  // continuum integral of the table, documented to ~1e-8; the reference
  // samples the accurate table, which differs from the fast one by ~1e-7).
  pj::ProjectionGrid g;
  g.nx = g.ny = 64;
  g.pixel_kpc = 1.0;
  const float u = 1000.0f, v = -300.0f, H = 5000.0f;
  const double w = 1.0;
  pj::PlaneCells c{1, &u, &v, &H, nullptr};
  pj::ProjectionStats st;
  const auto m = pj::project(g, c, {pj::WeightChannel(&w)}, {}, &st);
  CHECK(st.cells_huge == 1u);
  const auto& ck = pj::ColumnKernel::get(pj::SphKernel::CubicSpline);
  double ref = 0.0;
  for (int iy = 0; iy < 64; ++iy)
    for (int ix = 0; ix < 64; ++ix) {
      const double x = ix + 0.5 - 32.0 - 1000.0, y = iy + 0.5 - 32.0 + 300.0;
      ref += ck.value_s2((x * x + y * y) / (5000.0 * 5000.0)) / (5000.0 * 5000.0);
    }
  CHECK(sum(m[0]) == Approx(ref).epsilon(1e-6));
}

TEST_CASE("projector: bitwise identical maps for 1 and 2 threads", "[projector][threads]") {
  // 40000 cells (several chunks), support radii up to 24 pixels (every deposit
  // path, including the normalisation pass); some footprints cross the edges.
  const Population p = mixed_population(40000, 123, 20.0, true, 24.0);
  const pj::PlaneCells cells{p.n(), p.u.data(), p.v.data(), p.H.data(), nullptr};
  for (DepositKernel k : {DepositKernel::Point, DepositKernel::CubicSpline, DepositKernel::WendlandC2}) {
    INFO(pj::deposit_kernel_name(k));
    pj::ProjectorSettings s;
    s.kernel = k;
    s.chunk_bytes = std::size_t{1} << 20;  // several chunks
#ifdef _OPENMP
    const int saved = omp_get_max_threads();
    omp_set_num_threads(1);
#endif
    pj::ProjectionStats st1;
    const auto m1 = pj::project(grid256(), cells, {p.w0, p.w1, p.w2}, s, &st1);
#ifdef _OPENMP
    omp_set_num_threads(2);
#endif
    pj::ProjectionStats st2;
    const auto m2 = pj::project(grid256(), cells, {p.w0, p.w1, p.w2}, s, &st2);
#ifdef _OPENMP
    omp_set_num_threads(saved);
#endif
    s.threads = 3;  // explicit setting, more threads than cores
    const auto m3 = pj::project(grid256(), cells, {p.w0, p.w1, p.w2}, s);
    if (k != DepositKernel::Point) CHECK(st1.chunks > 1u);
    for (std::size_t c = 0; c < 3; ++c) {
      CHECK(m1[c] == m2[c]);  // bitwise
      CHECK(m1[c] == m3[c]);
    }
    CHECK(st1.pixel_updates == st2.pixel_updates);
  }
}

TEST_CASE("projector: channels are independent of each other and of their type", "[projector]") {
  const Population p = mixed_population(5000, 77, 1e9, false);
  const pj::PlaneCells cells{p.n(), p.u.data(), p.v.data(), p.H.data(), nullptr};
  // w1 as float and as the same values in double.
  std::vector<double> w1d(p.w1.begin(), p.w1.end());
  const auto all = pj::project(grid256(), cells, {p.w0, p.w1, p.w2});
  const auto a0 = pj::project(grid256(), cells, {p.w0});
  const auto a1 = pj::project(grid256(), cells, {w1d});
  const auto a2 = pj::project(grid256(), cells, {p.w2});
  CHECK(all[0] == a0[0]);
  CHECK(all[1] == a1[0]);
  CHECK(all[2] == a2[0]);
  // Linearity: scaling a channel by a power of two scales its map exactly.
  std::vector<double> w4;
  for (double x : p.w0) w4.push_back(4.0 * x);
  const auto m4 = pj::project(grid256(), cells, {w4});
  for (std::size_t i = 0; i < m4[0].size(); i += 37) CHECK(m4[0][i] == 4.0 * a0[0][i]);
  // Nine channels (the generic path beyond the unrolled eight).
  std::vector<pj::WeightChannel> nine(9, pj::WeightChannel(p.w0));
  const auto m9 = pj::project(grid256(), cells, nine);
  REQUIRE(m9.size() == 9u);
  for (const auto& m : m9) CHECK(m == a0[0]);
}

TEST_CASE("projector: selection mask and depth slab", "[projector]") {
  // 3-D cells; the slab |w| <= 40 kpc along an oblique line of sight must
  // give the map of exactly the cells inside it.
  RandomStream rng(8, 2);
  const int n = 12000;
  std::vector<float> x(n), y(n), z(n), H(n);
  std::vector<double> w(n);
  for (int i = 0; i < n; ++i) {
    x[i] = static_cast<float>(200.0 * rng.uniform() - 100.0);
    y[i] = static_cast<float>(200.0 * rng.uniform() - 100.0);
    z[i] = static_cast<float>(200.0 * rng.uniform() - 100.0);
    H[i] = static_cast<float>(0.2 + 6.0 * rng.uniform());
    w[i] = rng.uniform();
  }
  const auto los = pj::LineOfSight::from_angles(50.0, 20.0);
  const Eigen::Vector3d centre(3.0, -4.0, 5.0);
  pj::PlaneOptions opt;
  opt.depth_kpc = 80.0;
  opt.keep_depth = true;
  const auto pc = los.to_plane(x.data(), y.data(), z.data(), n, centre, opt);
  REQUIRE(pc.selection() != nullptr);
  std::vector<float> us, vs, hs;
  std::vector<double> ws;
  double wsel = 0.0;
  for (int i = 0; i < n; ++i)
    if (std::abs(pc.w[i]) <= 40.0f) {
      us.push_back(pc.u[i]);
      vs.push_back(pc.v[i]);
      hs.push_back(H[i]);
      ws.push_back(w[i]);
      wsel += w[i];
    }
  REQUIRE(us.size() == pc.n_selected);
  REQUIRE(us.size() > 1000u);
  REQUIRE(us.size() < static_cast<std::size_t>(n) - 1000u);
  pj::ProjectionGrid g;
  g.nx = g.ny = 400;
  g.pixel_kpc = 0.5;  // a 200 kpc field: the rotated cube sticks out of it at the corners
  const pj::PlaneCells masked{static_cast<std::size_t>(n), pc.u.data(), pc.v.data(), H.data(), pc.selection()};
  const pj::PlaneCells compact{us.size(), us.data(), vs.data(), hs.data(), nullptr};
  pj::ProjectionStats st;
  const auto mm = pj::project(g, masked, {w}, {}, &st);
  const auto mc = pj::project(g, compact, {ws});
  CHECK(st.cells_in == pc.n_selected);
  double worst = 0.0, peak = 0.0;
  for (std::size_t i = 0; i < mm[0].size(); ++i) {
    worst = std::max(worst, std::abs(mm[0][i] - mc[0][i]));
    peak = std::max(peak, mc[0][i]);
  }
  CHECK(worst <= 1e-14 * peak);
  // At most the selected weights (some fall outside the field), most of them.
  CHECK(sum(mm[0]) <= wsel * (1.0 + 1e-12));
  CHECK(sum(mm[0]) > 0.5 * wsel);
}

TEST_CASE("projector: input checks", "[projector]") {
  const float u[2] = {0.0f, 1.0f}, v[2] = {0.0f, 1.0f}, H[2] = {1.0f, 2.0f};
  const double w[2] = {1.0, 1.0};
  const pj::PlaneCells ok{2, u, v, H, nullptr};
  pj::ProjectionGrid g = grid256();
  CHECK_NOTHROW(pj::project(g, ok, {pj::WeightChannel(w)}));
  CHECK_THROWS_AS(pj::project(g, ok, {}), DomainError);
  CHECK_THROWS_AS(pj::project(g, ok, {pj::WeightChannel()}), DomainError);
  pj::ProjectionGrid bad = g;
  bad.nx = 0;
  CHECK_THROWS_AS(pj::project(bad, ok, {pj::WeightChannel(w)}), DomainError);
  bad = g;
  bad.pixel_kpc = -1.0;
  CHECK_THROWS_AS(pj::project(bad, ok, {pj::WeightChannel(w)}), DomainError);
  const pj::PlaneCells no_h{2, u, v, nullptr, nullptr};
  CHECK_THROWS_AS(pj::project(g, no_h, {pj::WeightChannel(w)}), DomainError);
  pj::ProjectorSettings point;
  point.kernel = DepositKernel::Point;
  CHECK_NOTHROW(pj::project(g, no_h, {pj::WeightChannel(w)}, point));
  pj::ProjectorSettings tiles;
  tiles.tile_pixels = 48;  // not a power of two
  CHECK_THROWS_AS(pj::project(g, ok, {pj::WeightChannel(w)}, tiles), DomainError);
  // A NaN position or a negative support radius names the cell.
  const float un[2] = {0.0f, std::numeric_limits<float>::quiet_NaN()};
  const pj::PlaneCells nan_u{2, un, v, H, nullptr};
  for (DepositKernel k : {DepositKernel::Point, DepositKernel::CubicSpline}) {
    pj::ProjectorSettings s;
    s.kernel = k;
    try {
      pj::project(g, nan_u, {pj::WeightChannel(w)}, s);
      FAIL("expected DomainError");
    } catch (const DomainError& e) {
      CHECK(std::string(e.what()).find("cell 1") != std::string::npos);
    }
  }
  const float hn[2] = {1.0f, -0.5f};
  const pj::PlaneCells neg_h{2, u, v, hn, nullptr};
  CHECK_THROWS_AS(pj::project(g, neg_h, {pj::WeightChannel(w)}), DomainError);
  // A masked-out bad cell is not an error.
  const std::uint8_t sel[2] = {1, 0};
  const pj::PlaneCells masked{2, un, v, H, sel};
  CHECK_NOTHROW(pj::project(g, masked, {pj::WeightChannel(w)}));
  // No cells: zero maps.
  const pj::PlaneCells none{0, nullptr, nullptr, nullptr, nullptr};
  const auto z = pj::project(g, none, {pj::WeightChannel(w)});
  CHECK(sum(z[0]) == 0.0);
}
