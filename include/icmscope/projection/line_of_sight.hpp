#pragma once
// Line of sight: a rotation from the cells' frame (x, y, z) to the
// observer's frame (u, v, w).
//
// Convention (right-handed, e_u x e_v = e_w):
//   - e_w = n, the unit line-of-sight vector pointing FROM the cluster
//     TOWARDS the observer; w grows towards the observer, so the observer
//     looks along -e_w. Depth = w (kpc) relative to the centre.
//   - (u, v) are image-plane coordinates (kpc): u along the image x axis
//     (pixel ix grows with u), v along the image y axis.
//   - "Up" rule: e_v is the image-plane projection of +z ("z up"), so e_u
//     is horizontal: e_u = (z x n) / |z x n|, e_v = n x e_u. When n is within
//     1e-9 of +-z the rule is undefined and e_u = +x is used instead (so
//     n = +z gives u = x, v = y, w = z).
//   - Resulting axis views: along_axis(Z): (u, v, w) = (x, y, z);
//     along_axis(X): (y, z, x); along_axis(Y): (-x, z, y).
//     along_axis(a) == from_vector(unit vector of a) by construction.
//   - from_angles(theta, phi): n = (sin t cos p, sin t sin p, cos t), the
//     spherical polar direction of n (degrees); theta = 0 is axis z,
//     (90, 0) is axis x, (90, 90) is axis y.
#include <cstddef>
#include <cstdint>
#include <limits>
#include <vector>

#include <Eigen/Core>

namespace icmscope::cells {
struct GasCells;
}

namespace icmscope::projection {

enum class Axis { X, Y, Z };

// Plane coordinates of a cell set, float storage (kpc).
struct PlaneCoordinates {
  std::vector<float> u, v;
  std::vector<float> w;                // depth (kpc); filled only when requested
  // Depth-slab selection, 1 = inside |w| <= depth/2. Empty when the slab is
  // infinite (every cell selected).
  std::vector<std::uint8_t> in_slab;
  std::size_t n_selected = 0;
  const std::uint8_t* selection() const { return in_slab.empty() ? nullptr : in_slab.data(); }
};

struct PlaneOptions {
  double depth_kpc = std::numeric_limits<double>::infinity();  // slab thickness, centred on the centre
  bool keep_depth = false;                                     // fill PlaneCoordinates::w
};

class LineOfSight {
 public:
  LineOfSight() : LineOfSight(along_axis(Axis::Z)) {}

  static LineOfSight along_axis(Axis a);
  // theta, phi: spherical polar angles of n (degrees). DomainError if not finite.
  static LineOfSight from_angles(double theta_deg, double phi_deg);
  // Any non-zero finite vector (normalised here); DomainError otherwise.
  static LineOfSight from_vector(const Eigen::Vector3d& n);

  // Rows e_u, e_v, e_w in the cells' frame: (u, v, w) = R (p - centre).
  const Eigen::Matrix3d& rotation() const { return R_; }
  Eigen::Vector3d e_u() const { return R_.row(0).transpose(); }
  Eigen::Vector3d e_v() const { return R_.row(1).transpose(); }
  Eigen::Vector3d n() const { return R_.row(2).transpose(); }  // towards the observer

  // (u, v, w) of one point relative to centre (kpc).
  Eigen::Vector3d to_plane(const Eigen::Vector3d& p, const Eigen::Vector3d& centre) const {
    return R_ * (p - centre);
  }

  // Plane coordinates of n points given as float arrays (kpc), relative to
  // centre; rotation in double, stored as float. Parallel, deterministic.
  PlaneCoordinates to_plane(const float* x, const float* y, const float* z, std::size_t n,
                            const Eigen::Vector3d& centre_kpc, const PlaneOptions& opt = {}) const;
  PlaneCoordinates to_plane(const cells::GasCells& cells, const Eigen::Vector3d& centre_kpc,
                            const PlaneOptions& opt = {}) const;

 private:
  explicit LineOfSight(const Eigen::Matrix3d& R) : R_(R) {}
  Eigen::Matrix3d R_;
};

}  // namespace icmscope::projection
