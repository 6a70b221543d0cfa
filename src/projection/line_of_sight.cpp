#include "icmscope/projection/line_of_sight.hpp"

#include <cmath>
#include <string>

#include <Eigen/Geometry>

#include "icmscope/cells/gas_cells.hpp"
#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"

namespace icmscope::projection {

LineOfSight LineOfSight::from_vector(const Eigen::Vector3d& dir) {
  const double len = dir.norm();
  if (!std::isfinite(len) || len <= 0.0)
    throw core::DomainError("line of sight: vector must be finite and non-zero, got (" +
                            std::to_string(dir.x()) + ", " + std::to_string(dir.y()) + ", " +
                            std::to_string(dir.z()) + ")");
  const Eigen::Vector3d n = dir / len;
  // e_u = (z x n) / |z x n| = (-n_y, n_x, 0) / rho is horizontal; e_v = n x e_u
  // is then the normalised sky projection of +z (n x (z x n) = z - n_z n).
  // Written this way the frame stays orthonormal to rounding near the poles.
  const double rho = std::hypot(n.x(), n.y());
  Eigen::Vector3d eu;
  if (rho < 1e-9)
    eu = Eigen::Vector3d::UnitX();  // looking along +-z
  else
    eu = Eigen::Vector3d(-n.y() / rho, n.x() / rho, 0.0);
  const Eigen::Vector3d ev = n.cross(eu);
  Eigen::Matrix3d R;
  R.row(0) = eu.transpose();
  R.row(1) = ev.transpose();
  R.row(2) = n.transpose();
  return LineOfSight(R);
}

LineOfSight LineOfSight::along_axis(Axis a) {
  switch (a) {
    case Axis::X: return from_vector(Eigen::Vector3d::UnitX());
    case Axis::Y: return from_vector(Eigen::Vector3d::UnitY());
    case Axis::Z: break;
  }
  return from_vector(Eigen::Vector3d::UnitZ());
}

LineOfSight LineOfSight::from_angles(double theta_deg, double phi_deg) {
  if (!std::isfinite(theta_deg) || !std::isfinite(phi_deg))
    throw core::DomainError("line of sight: theta_deg and phi_deg must be finite");
  const double t = theta_deg * core::constants::deg_rad, p = phi_deg * core::constants::deg_rad;
  return from_vector(Eigen::Vector3d(std::sin(t) * std::cos(p), std::sin(t) * std::sin(p), std::cos(t)));
}

PlaneCoordinates LineOfSight::to_plane(const float* x, const float* y, const float* z, std::size_t n,
                                       const Eigen::Vector3d& c, const PlaneOptions& opt) const {
  if (!(opt.depth_kpc > 0.0))
    throw core::DomainError("line of sight: depth_kpc must be positive (infinite for no slab), got " +
                            std::to_string(opt.depth_kpc));
  PlaneCoordinates out;
  out.u.resize(n);
  out.v.resize(n);
  if (opt.keep_depth) out.w.resize(n);
  const bool slab = std::isfinite(opt.depth_kpc);
  if (slab) out.in_slab.resize(n);
  const double half = 0.5 * opt.depth_kpc;
  const double r00 = R_(0, 0), r01 = R_(0, 1), r02 = R_(0, 2);
  const double r10 = R_(1, 0), r11 = R_(1, 1), r12 = R_(1, 2);
  const double r20 = R_(2, 0), r21 = R_(2, 1), r22 = R_(2, 2);
  const double cx = c.x(), cy = c.y(), cz = c.z();
  float* u = out.u.data();
  float* v = out.v.data();
  float* w = opt.keep_depth ? out.w.data() : nullptr;
  std::uint8_t* sel = slab ? out.in_slab.data() : nullptr;
  std::size_t nsel = 0;
  const auto N = static_cast<std::ptrdiff_t>(n);
#pragma omp parallel for schedule(static) reduction(+ : nsel)
  for (std::ptrdiff_t i = 0; i < N; ++i) {
    const double dx = x[i] - cx, dy = y[i] - cy, dz = z[i] - cz;
    u[i] = static_cast<float>(r00 * dx + r01 * dy + r02 * dz);
    v[i] = static_cast<float>(r10 * dx + r11 * dy + r12 * dz);
    const double d = r20 * dx + r21 * dy + r22 * dz;
    if (w) w[i] = static_cast<float>(d);
    if (sel) {
      const bool in = std::fabs(d) <= half;
      sel[i] = in ? 1 : 0;
      nsel += in ? 1 : 0;
    }
  }
  out.n_selected = slab ? nsel : n;
  return out;
}

PlaneCoordinates LineOfSight::to_plane(const cells::GasCells& cells, const Eigen::Vector3d& centre_kpc,
                                       const PlaneOptions& opt) const {
  const std::size_t n = cells.size();
  if (cells.y.size() != n || cells.z.size() != n)
    throw core::DomainError("line of sight: GasCells x, y, z arrays differ in length");
  return to_plane(cells.x.data(), cells.y.data(), cells.z.data(), n, centre_kpc, opt);
}

}  // namespace icmscope::projection
