#pragma once
// Power ratios (Buote & Tsai 1995, ApJ 452, 522; 1996, ApJ 458, 27):
//   a_m = sum w_i I_i r_i^m cos(m phi_i),  b_m = sum w_i I_i r_i^m sin(m phi_i),
//   a_0 = sum w_i I_i,  P_0 = [a_0 ln R]^2,  P_m = (a_m^2 + b_m^2) / (2 m^2 R^(2m)),
// over the pixels inside the aperture R (w_i = exact area fraction).
// P_m (m >= 1) does not depend on the length unit; P_0 does, through ln R, so
// the unit of R inside the logarithm is explicit (LengthUnit, factor recorded).
// Origin: the flux centroid iterated within the aperture (so P_1 = 0), or a fixed
// centre. Noise bias (morphology.md sec. 3, exact in expectation):
//   E[a_m^2 + b_m^2] = true + sum w_i^2 var_i r_i^(2m),
// var_i = n_i / e_i^2 for I_i = (n_i - b_i) / e_i with n_i the raw counts.
#include <array>
#include <string>
#include <vector>

#include "icmscope/core/image.hpp"
#include "icmscope/morphology/centre.hpp"

namespace icmscope::morphology {

enum class LengthUnit { pixel, arcsec, kpc, mpc };
const char* to_string(LengthUnit u);

inline constexpr int kMaxPowerOrder = 4;

struct PowerRatioSettings {
  double radius_px = 0.0;                     // aperture R [pixels]
  std::string label;                          // aperture label ("500 kpc", "R500", ...)
  CentreChoice origin = CentreChoice::centroid;
  LengthUnit ln_unit = LengthUnit::kpc;       // unit of R inside ln R (P_0)
};

// Moments and power ratios. Index m = 0..4; ratio[0] = 1.
struct PowerRatioResult {
  std::array<double, kMaxPowerOrder + 1> a{}, b{};  // a_m, b_m (r in the unit of R, see unit_per_px)
  std::array<double, kMaxPowerOrder + 1> P{};       // P_m
  std::array<double, kMaxPowerOrder + 1> ratio{};   // P_m / P_0
  std::array<double, kMaxPowerOrder + 1> noise{};   // sum w^2 var r^(2m) / (2 m^2 R^(2m)) (0 without variance)
  std::array<double, kMaxPowerOrder + 1> P_corrected{};      // P_m - noise_m (analytic correction)
  std::array<double, kMaxPowerOrder + 1> ratio_corrected{};  // P_corrected_m / P_0
  double radius = 0.0;        // R in ln_unit
  double ln_R = 0.0;          // ln(R / 1 ln_unit)
  double unit_per_px = 1.0;   // length of one pixel in ln_unit
  PixelPoint origin;          // pixels
  bool inside_image = true;
};

// Power ratios of a weighted point set about the origin (0, 0), aperture R,
// coordinates and R in one dimensionless unit (every point is used, whatever
// its radius). Exact: the two-point-mass check values of morphology.md sec. 9
// come from this function.
struct WeightedPoint {
  double x = 0.0, y = 0.0, w = 1.0;
};
PowerRatioResult power_ratios_points(const std::vector<WeightedPoint>& pts, double R);

// Power ratios of an image about `origin` [pixels] within radius_px.
// variance (same grid, may be null) gives the analytic noise-bias term.
// unit_per_px converts pixels to the unit of R used in ln R.
PowerRatioResult power_ratios(const core::ImageD& flux, const core::ImageD* variance, PixelPoint origin,
                              double radius_px, double unit_per_px);

}  // namespace icmscope::morphology
