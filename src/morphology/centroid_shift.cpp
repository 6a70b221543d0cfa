#include "icmscope/morphology/centroid_shift.hpp"

#include <algorithm>
#include <cmath>

#include "icmscope/core/errors.hpp"
#include "icmscope/morphology/apertures.hpp"

namespace icmscope::morphology {

std::vector<double> centroid_shift_radii(const CentroidShiftSettings& s) {
  if (!(s.r_max_px > 0.0) || s.n_apertures < 2 || !(s.min_fraction > 0.0) || !(s.min_fraction < 1.0))
    throw core::DomainError("centroid_shift: need r_max_px > 0, n_apertures >= 2, 0 < min_fraction < 1");
  std::vector<double> r;
  const double step = (1.0 - s.min_fraction) / (s.n_apertures - 1);
  for (int k = 0; k < s.n_apertures; ++k) {
    const double rk = s.r_max_px * (1.0 - k * step);
    if (rk > s.core_exclusion_px) r.push_back(rk);
  }
  return r;
}

CentroidShiftResult centroid_shift(const core::ImageD& flux, PixelPoint peak, const CentroidShiftSettings& s,
                                   const RowPrefix* prefix) {
  CentroidShiftResult res;
  res.radii_px = centroid_shift_radii(s);
  const std::size_t n = res.radii_px.size();
  std::vector<double> asc(res.radii_px.rbegin(), res.radii_px.rend());
  const bool core = s.core_exclusion_px > 0.0;
  if (core) asc.insert(asc.begin(), s.core_exclusion_px);
  std::vector<CircleSums> sums;
  if (prefix)
    nested_circle_sums(*prefix, flux.data(), peak.x, peak.y, asc, sums);
  else
    nested_circle_sums(flux.data(), flux.nx(), flux.ny(), peak.x, peak.y, asc, sums);
  const CircleSums zero{};
  const CircleSums& ex = core ? sums[0] : zero;
  res.delta_px.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    const CircleSums& a = sums[(core ? 1 : 0) + (n - 1 - i)];  // largest first
    const double f = a.f - ex.f;
    res.delta_px[i] = f != 0.0 ? std::hypot((a.fx - ex.fx) / f, (a.fy - ex.fy) / f) : std::nan("");
  }
  if (n < 2) {
    res.w = std::nan("");
    return res;
  }
  double mean = 0.0;
  for (double d : res.delta_px) mean += d;
  mean /= static_cast<double>(n);
  double ss = 0.0;
  for (double d : res.delta_px) ss += (d - mean) * (d - mean);
  res.w = std::sqrt(ss / static_cast<double>(n - 1)) / s.r_max_px;
  res.inside_image = circle_inside_image(flux.nx(), flux.ny(), peak.x, peak.y, s.r_max_px);
  return res;
}

}  // namespace icmscope::morphology
