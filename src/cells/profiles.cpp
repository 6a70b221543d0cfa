// Radial gas profiles: see include/icmscope/cells/profiles.hpp.
#include "icmscope/cells/profiles.hpp"

#include <gsl/gsl_errno.h>
#include <gsl/gsl_sf_hyperg.h>

#include <algorithm>
#include <cmath>
#include <limits>
#include <string>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"

namespace icmscope::cells {

double beta_model_ne_cm3(double r_kpc, const BetaDensity& p) {
  const double x = r_kpc / p.r_c_kpc;
  return p.n_e0_cm3 * std::pow(1.0 + x * x, -1.5 * p.beta);
}

double beta_model_volume_kpc3(double r_kpc, double r_c_kpc, double beta) {
  if (!(r_kpc >= 0.0) || !(r_c_kpc > 0.0) || !(beta > 0.0))
    throw core::DomainError("beta_model_volume_kpc3: need r >= 0, r_c > 0, beta > 0");
  const double x = r_kpc / r_c_kpc;
  if (x == 0.0) return 0.0;
  const double x2 = x * x;
  const double w = x2 / (1.0 + x2);
  const double p = 1.5 * beta;
  gsl_sf_result res;
  // GSL's default handler aborts; status codes are checked instead (as the
  // other GSL users of the project do, once).
  static const bool handler_off = [] {
    gsl_set_error_handler_off();
    return true;
  }();
  (void)handler_off;
  const int status = gsl_sf_hyperg_2F1_e(1.0, p, 2.5, w, &res);
  if (status != GSL_SUCCESS)
    throw core::DomainError("beta_model_volume_kpc3: GSL 2F1 failed at r/r_c = " + std::to_string(x) +
                            ", beta = " + std::to_string(beta) + ": " + gsl_strerror(status));
  const double r3 = r_c_kpc * r_c_kpc * r_c_kpc;
  return 4.0 * core::constants::kPi * r3 * (x2 * x / 3.0) * std::pow(1.0 + x2, -p) * res.val;
}

double vikhlinin06_npne_cm6(double r_kpc, const Vikhlinin06Density& p) {
  const double x = r_kpc / p.r_c_kpc;
  double main = 0.0;
  if (p.n0_cm3 != 0.0) {
    const double cusp = p.alpha == 0.0 ? 1.0 : std::pow(x, -p.alpha);
    const double core = std::pow(1.0 + x * x, -(3.0 * p.beta - 0.5 * p.alpha));
    const double outer =
        p.epsilon == 0.0 ? 1.0 : std::pow(1.0 + std::pow(r_kpc / p.r_s_kpc, p.gamma), -p.epsilon / p.gamma);
    main = p.n0_cm3 * p.n0_cm3 * cusp * core * outer;
  }
  double second = 0.0;
  if (p.n02_cm3 != 0.0) {
    const double x2 = r_kpc / p.r_c2_kpc;
    second = p.n02_cm3 * p.n02_cm3 * std::pow(1.0 + x2 * x2, -3.0 * p.beta2);
  }
  return main + second;
}

double vikhlinin06_kT_keV(double r_kpc, const Vikhlinin06Temperature& p) {
  const double y = r_kpc / p.r_t_kpc;
  const double t = (p.a == 0.0 ? 1.0 : std::pow(y, -p.a)) * std::pow(1.0 + std::pow(y, p.b), -p.c / p.b);
  const double x = std::pow(r_kpc / p.r_cool_kpc, p.a_cool);
  const double tcool = (x + p.kT_min_keV / p.kT0_keV) / (x + 1.0);
  return p.kT0_keV * tcool * t;
}

double vikhlinin06_universal_kT_keV(double r_kpc, const Vikhlinin06UniversalTemperature& p) {
  const double x = r_kpc / p.r500_kpc;
  const double s = std::pow(x / 0.045, 1.9);
  const double outer = 1.0 + (x / 0.6) * (x / 0.6);
  return p.kT_mg_keV * 1.35 * (s + 0.45) / (s + 1.0) * std::pow(outer, -0.45);
}

double cored_metallicity_solar(double r_kpc, const CoredMetallicity& p) {
  const double x = r_kpc / p.r_Z_kpc;
  const double z = p.Z0_solar * std::pow(1.0 + x * x, -p.alpha_Z);
  return std::max(p.Z_out_solar, z);
}

}  // namespace icmscope::cells
