#pragma once
// Vignetting V(theta, E): the fraction of the on-axis effective area left at
// off-axis angle theta (arcmin) and energy E (keV); V(0, E) = 1 and V <= 1.
// Applies to photons through the mirror (source, sky background), never to the
// particle background. Analytic law, illustrative:
//   V(theta, E) = [1 + (theta / theta_v(E))^2]^(-p),  theta_v(E) = theta_v0 (E / E0)^(-s),
// 1 on axis and monotone decreasing in theta for p > 0 (falling faster at high
// energy for s > 0, physics.md section 8 [M]); defaults give V ~ 0.6 at 10 arcmin
// and 1.5 keV. Or a table in (theta, E), bilinear, held constant beyond its ends.
#include <functional>
#include <string>
#include <vector>

namespace icmscope::instrument {

struct AnalyticVignetting {
  double theta_v0_arcmin = 12.0;
  double e0_keV = 1.5;
  double energy_slope = 0.3;  // s
  double p = 1.0;
};

class Vignetting {
 public:
  Vignetting() = default;  // none: V = 1 everywhere
  static Vignetting none() { return Vignetting(); }
  static Vignetting analytic(const AnalyticVignetting& a);
  // Table: theta_arcmin (strictly increasing, starting at 0), energy_keV
  // (strictly increasing, > 0; one value means energy independent), values
  // row-major [iE][itheta], in [0, 1], and 1 at theta = 0 within 1e-6.
  // DomainError naming `origin` and the field otherwise.
  static Vignetting table(std::vector<double> theta_arcmin, std::vector<double> energy_keV,
                          std::vector<double> values, std::string origin = "vignetting table");

  bool is_none() const { return kind_ == Kind::None; }
  double operator()(double theta_arcmin, double E_keV) const;

  // Band average weighted by w(E) (e.g. photon spectrum x effective area) on
  // [e_lo, e_hi] (n midpoint samples): Int w V dE / Int w dE. An empty w is flat.
  double band_average(double theta_arcmin, double e_lo_keV, double e_hi_keV,
                      const std::function<double(double)>& weight = {}, int n = 64) const;

 private:
  enum class Kind { None, Analytic, Table };
  Kind kind_ = Kind::None;
  AnalyticVignetting a_;
  std::vector<double> th_, en_, val_;
};

}  // namespace icmscope::instrument
