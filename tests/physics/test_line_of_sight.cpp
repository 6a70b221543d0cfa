// Line of sight: frame conventions, orthonormality, angles and vectors, depth
// slabs, and rotation invariance of projected maps of a spherically
// symmetric cell set (a thin shell: enclosed projected fraction
// 1 - sqrt(1 - r^2 / R^2), elementary geometry).
#include <catch2/catch.hpp>

#include <cmath>
#include <functional>
#include <limits>
#include <string>
#include <vector>

#include <Eigen/Dense>

#include "icmscope/cells/gas_cells.hpp"
#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/core/random.hpp"
#include "icmscope/projection/line_of_sight.hpp"
#include "icmscope/projection/projector.hpp"

namespace pj = icmscope::projection;
using icmscope::core::DomainError;
using icmscope::core::constants::kPi;
using pj::Axis;
using pj::LineOfSight;

namespace {

void check_frame(const LineOfSight& los) {
  const Eigen::Matrix3d& R = los.rotation();
  CHECK((R * R.transpose() - Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff() < 1e-14);
  CHECK(R.determinant() == Approx(1.0).epsilon(1e-14));                      // right-handed
  CHECK((los.e_u().cross(los.e_v()) - los.n()).norm() < 1e-14);              // e_u x e_v = e_w
}

bool same(const LineOfSight& a, const LineOfSight& b, double tol = 1e-14) {
  return (a.rotation() - b.rotation()).cwiseAbs().maxCoeff() < tol;
}

// N points of a Fibonacci lattice on the unit sphere (near-uniform, deterministic).
std::vector<Eigen::Vector3d> fibonacci_sphere(int n) {
  std::vector<Eigen::Vector3d> p;
  const double ga = kPi * (3.0 - std::sqrt(5.0));
  for (int i = 0; i < n; ++i) {
    const double z = 1.0 - (2.0 * i + 1.0) / n;
    const double r = std::sqrt(1.0 - z * z);
    p.emplace_back(r * std::cos(ga * i), r * std::sin(ga * i), z);
  }
  return p;
}

}  // namespace

TEST_CASE("line of sight: axis views", "[line_of_sight]") {
  // Axis z: image (x, y), depth z towards the observer.
  const auto z = LineOfSight::along_axis(Axis::Z);
  CHECK((z.rotation() - Eigen::Matrix3d::Identity()).cwiseAbs().maxCoeff() == 0.0);
  // Axis x: (u, v, w) = (y, z, x); axis y: (-x, z, y) ("z up").
  const auto x = LineOfSight::along_axis(Axis::X);
  CHECK((x.e_u() - Eigen::Vector3d::UnitY()).norm() < 1e-15);
  CHECK((x.e_v() - Eigen::Vector3d::UnitZ()).norm() < 1e-15);
  CHECK((x.n() - Eigen::Vector3d::UnitX()).norm() < 1e-15);
  const auto y = LineOfSight::along_axis(Axis::Y);
  CHECK((y.e_u() + Eigen::Vector3d::UnitX()).norm() < 1e-15);
  CHECK((y.e_v() - Eigen::Vector3d::UnitZ()).norm() < 1e-15);
  CHECK((y.n() - Eigen::Vector3d::UnitY()).norm() < 1e-15);
  for (const auto& l : {x, y, z}) check_frame(l);
  // A point displaced towards the observer has positive depth.
  const Eigen::Vector3d c(1.0, 2.0, 3.0);
  CHECK(x.to_plane(c + 5.0 * Eigen::Vector3d::UnitX(), c).z() == Approx(5.0));
  CHECK(z.to_plane(Eigen::Vector3d(4.0, 6.0, -1.0), c).isApprox(Eigen::Vector3d(3.0, 4.0, -4.0)));
}

TEST_CASE("line of sight: angles and vectors", "[line_of_sight]") {
  // Spherical polar angles of n: theta = 0 is +z, (90, 0) is +x, (90, 90) is +y.
  CHECK(same(LineOfSight::from_angles(0.0, 0.0), LineOfSight::along_axis(Axis::Z)));
  CHECK(same(LineOfSight::from_angles(0.0, 123.0), LineOfSight::along_axis(Axis::Z)));
  CHECK(same(LineOfSight::from_angles(90.0, 0.0), LineOfSight::along_axis(Axis::X)));
  CHECK(same(LineOfSight::from_angles(90.0, 90.0), LineOfSight::along_axis(Axis::Y)));
  CHECK(same(LineOfSight::from_vector(Eigen::Vector3d(0.0, 7.0, 0.0)), LineOfSight::along_axis(Axis::Y)));
  // Looking up from -z: a right-handed frame with u = x.
  const auto down = LineOfSight::from_vector(-Eigen::Vector3d::UnitZ());
  check_frame(down);
  CHECK((down.e_u() - Eigen::Vector3d::UnitX()).norm() < 1e-15);

  icmscope::core::RandomStream rng(2024, 7);
  for (int i = 0; i < 200; ++i) {
    const double t = 180.0 * rng.uniform(), p = 360.0 * rng.uniform() - 180.0;
    const auto los = LineOfSight::from_angles(t, p);
    INFO("theta " << t << " phi " << p);
    check_frame(los);
    const double tr = t * kPi / 180.0, pr = p * kPi / 180.0;
    const Eigen::Vector3d n(std::sin(tr) * std::cos(pr), std::sin(tr) * std::sin(pr), std::cos(tr));
    CHECK((los.n() - n).norm() < 1e-14);
    // "z up": e_u horizontal, e_v with a non-negative z component.
    CHECK(std::abs(los.e_u().z()) < 1e-14);
    CHECK(los.e_v().z() >= 0.0);
    // from_vector of any positive multiple gives the same frame.
    CHECK(same(LineOfSight::from_vector(3.7 * n), los, 1e-13));
  }
}

TEST_CASE("line of sight: invalid input", "[line_of_sight]") {
  CHECK_THROWS_AS(LineOfSight::from_vector(Eigen::Vector3d::Zero()), DomainError);
  CHECK_THROWS_AS(LineOfSight::from_vector(Eigen::Vector3d(std::nan(""), 0, 1)), DomainError);
  CHECK_THROWS_AS(LineOfSight::from_angles(std::numeric_limits<double>::infinity(), 0.0), DomainError);
  const float x = 1.0f;
  pj::PlaneOptions bad;
  bad.depth_kpc = 0.0;
  CHECK_THROWS_AS(LineOfSight().to_plane(&x, &x, &x, 1, Eigen::Vector3d::Zero(), bad), DomainError);
}

TEST_CASE("line of sight: plane coordinates and depth slab", "[line_of_sight]") {
  icmscope::cells::GasCells cells;
  const int n = 5000;
  cells.resize(n);
  icmscope::core::RandomStream rng(11, 0);
  for (int i = 0; i < n; ++i) {
    cells.x[i] = static_cast<float>(400.0 * rng.uniform() - 200.0);
    cells.y[i] = static_cast<float>(400.0 * rng.uniform() - 200.0);
    cells.z[i] = static_cast<float>(400.0 * rng.uniform() - 200.0);
  }
  const Eigen::Vector3d c(12.0, -30.0, 5.0);
  const auto los = LineOfSight::from_angles(63.0, -20.0);
  pj::PlaneOptions opt;
  opt.keep_depth = true;
  const auto all = los.to_plane(cells, c, opt);
  CHECK(all.in_slab.empty());
  CHECK(all.selection() == nullptr);
  CHECK(all.n_selected == static_cast<std::size_t>(n));
  for (int i = 0; i < n; i += 97) {
    const Eigen::Vector3d p = los.to_plane(Eigen::Vector3d(cells.x[i], cells.y[i], cells.z[i]), c);
    CHECK(all.u[i] == Approx(p.x()).margin(1e-4));
    CHECK(all.v[i] == Approx(p.y()).margin(1e-4));
    CHECK(all.w[i] == Approx(p.z()).margin(1e-4));
  }
  // Slab |w| <= 60 kpc: selection equals the depth test, counted independently.
  opt.depth_kpc = 120.0;
  opt.keep_depth = false;
  const auto slab = los.to_plane(cells, c, opt);
  REQUIRE(slab.in_slab.size() == static_cast<std::size_t>(n));
  CHECK(slab.w.empty());
  std::size_t expect = 0;
  for (int i = 0; i < n; ++i) {
    const bool in = std::abs(all.w[i]) <= 60.0;
    expect += in ? 1 : 0;
    if (std::abs(std::abs(all.w[i]) - 60.0) > 1e-3) CHECK((slab.in_slab[i] != 0) == in);
  }
  CHECK(slab.n_selected == expect);
  CHECK(expect > 0u);
  CHECK(expect < static_cast<std::size_t>(n));
}

TEST_CASE("rotation invariance: a thin spherical shell projected along any axis", "[line_of_sight][projector]") {
  // 20000 cells on a shell of radius R = 50 kpc around c. The enclosed
  // projected fraction within r is 1 - sqrt(1 - r^2/R^2) for any line of
  // sight; the Fibonacci lattice reproduces it to ~1e-3.
  const int n = 20000;
  const double R = 50.0;
  const Eigen::Vector3d c(10.0, -20.0, 30.0);
  const auto pts = fibonacci_sphere(n);
  std::vector<float> x(n), y(n), z(n), h(n, 3.0f);
  std::vector<double> w(n, 1.0);
  for (int i = 0; i < n; ++i) {
    const Eigen::Vector3d p = c + R * pts[static_cast<std::size_t>(i)];
    x[i] = static_cast<float>(p.x());
    y[i] = static_cast<float>(p.y());
    z[i] = static_cast<float>(p.z());
  }
  pj::ProjectionGrid grid;
  grid.nx = grid.ny = 256;
  grid.pixel_kpc = 0.5;  // field 128 kpc: the whole shell plus its kernels
  const std::vector<double> radii = {15.0, 25.0, 35.0, 45.0};
  std::vector<std::vector<double>> enclosed_maps;
  const std::vector<LineOfSight> views = {
      LineOfSight::along_axis(Axis::X), LineOfSight::along_axis(Axis::Y), LineOfSight::along_axis(Axis::Z),
      LineOfSight::from_angles(37.0, 61.0), LineOfSight::from_angles(121.0, -45.0),
      LineOfSight::from_vector(Eigen::Vector3d(1.0, 2.0, 3.0))};
  for (const auto& los : views) {
    const auto pc = los.to_plane(x.data(), y.data(), z.data(), n, c);
    // Cell-based enclosed fractions against the shell's closed form.
    for (double r : radii) {
      int inside = 0;
      for (int i = 0; i < n; ++i) inside += (pc.u[i] * pc.u[i] + pc.v[i] * pc.v[i] < r * r) ? 1 : 0;
      const double expect = 1.0 - std::sqrt(1.0 - r * r / (R * R));
      CHECK(static_cast<double>(inside) / n == Approx(expect).margin(2e-3));
    }
    // Map-based: kernel deposit (H = 3 kpc), all cells inside the field.
    pj::PlaneCells cells{static_cast<std::size_t>(n), pc.u.data(), pc.v.data(), h.data(), nullptr};
    const auto maps = pj::project(grid, cells, {pj::WeightChannel(w)});
    double total = 0.0;
    for (double m : maps[0]) total += m;
    CHECK(total == Approx(static_cast<double>(n)).epsilon(1e-12));
    std::vector<double> enc;
    for (double r : radii) {
      double s = 0.0;
      for (int iy = 0; iy < grid.ny; ++iy)
        for (int ix = 0; ix < grid.nx; ++ix) {
          const double u = grid.u_min() + (ix + 0.5) * grid.pixel_kpc, v = grid.v_min() + (iy + 0.5) * grid.pixel_kpc;
          if (u * u + v * v < r * r) s += maps[0][static_cast<std::size_t>(iy) * grid.nx + ix];
        }
      enc.push_back(s / total);
    }
    enclosed_maps.push_back(enc);
  }
  // The same enclosed fractions from every direction.
  for (std::size_t k = 1; k < enclosed_maps.size(); ++k)
    for (std::size_t j = 0; j < radii.size(); ++j) {
      INFO("view " << k << ", r = " << radii[j]);
      CHECK(enclosed_maps[k][j] == Approx(enclosed_maps[0][j]).margin(2e-3));
    }
}
