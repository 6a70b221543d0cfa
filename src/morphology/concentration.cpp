#include "icmscope/morphology/concentration.hpp"

#include <cmath>
#include <vector>

#include "icmscope/core/errors.hpp"
#include "icmscope/morphology/apertures.hpp"

namespace icmscope::morphology {

const char* concentration_label(ConcentrationConvention c) {
  switch (c) {
    case ConcentrationConvention::santos2008_40_400kpc: return "40/400 kpc";
    case ConcentrationConvention::cassano2010_100_500kpc: return "100/500 kpc";
    case ConcentrationConvention::scaled_0p1_1_r500: return "0.1/1 R500";
    case ConcentrationConvention::custom: return "custom";
  }
  return "?";
}

ConcentrationResult concentration(const core::ImageD& flux, PixelPoint centre, double r1_px, double r2_px,
                                  const RowPrefix* prefix) {
  if (!(r1_px > 0.0) || !(r2_px > r1_px))
    throw core::DomainError("concentration: need 0 < r1_px < r2_px, got " + std::to_string(r1_px) + ", " +
                            std::to_string(r2_px));
  std::vector<CircleSums> s;
  if (prefix)
    nested_circle_sums(*prefix, flux.data(), centre.x, centre.y, {r1_px, r2_px}, s);
  else
    nested_circle_sums(flux.data(), flux.nx(), flux.ny(), centre.x, centre.y, {r1_px, r2_px}, s);
  ConcentrationResult r;
  r.f1 = s[0].f;
  r.f2 = s[1].f;
  r.c = r.f2 != 0.0 ? r.f1 / r.f2 : std::nan("");
  r.inside_image = circle_inside_image(flux.nx(), flux.ny(), centre.x, centre.y, r2_px);
  return r;
}

double beta_model_concentration(double beta, double rc, double r1, double r2) {
  const double x1 = r1 * r1 / (rc * rc), x2 = r2 * r2 / (rc * rc);
  const double p = 1.5 - 3.0 * beta;
  if (std::fabs(p) < 1e-12) return std::log1p(x1) / std::log1p(x2);
  // 1 - (1+x)^p = -expm1(p log1p(x)), accurate for small p.
  return std::expm1(p * std::log1p(x1)) / std::expm1(p * std::log1p(x2));
}

}  // namespace icmscope::morphology
