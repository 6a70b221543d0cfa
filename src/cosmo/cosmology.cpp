#include "icmscope/cosmo/cosmology.hpp"

#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>

#include <cmath>
#include <memory>
#include <sstream>
#include <string>
#include <type_traits>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"

namespace icmscope::cosmo {
namespace {

namespace k = core::constants;

constexpr double kRelTol = 1e-10;

std::string num(double v) {
  std::ostringstream os;
  os.precision(10);
  os << v;
  return os.str();
}

// GSL's default error handler aborts the process; we check return codes instead.
void gsl_handler_off_once() {
  static const bool done = [] {
    gsl_set_error_handler_off();
    return true;
  }();
  (void)done;
}

struct CquadDeleter {
  void operator()(gsl_integration_cquad_workspace* w) const { gsl_integration_cquad_workspace_free(w); }
};

// Integrate f over [a, b] with CQUAD to relative tolerance kRelTol.
template <typename F>
double cquad(F&& f, double a, double b, const char* what) {
  gsl_handler_off_once();
  std::unique_ptr<gsl_integration_cquad_workspace, CquadDeleter> ws(gsl_integration_cquad_workspace_alloc(200));
  if (!ws) throw core::DomainError(std::string("Cosmology: cannot allocate an integration workspace for ") + what);
  gsl_function gf;
  using Fn = std::remove_reference_t<F>;
  gf.function = [](double x, void* p) { return (*static_cast<Fn*>(p))(x); };
  gf.params = &f;
  double result = 0.0, abserr = 0.0;
  size_t nevals = 0;
  const int st = gsl_integration_cquad(&gf, a, b, 0.0, kRelTol, ws.get(), &result, &abserr, &nevals);
  if (st != GSL_SUCCESS && !(std::abs(abserr) <= 1e-8 * std::abs(result)))
    throw core::DomainError(std::string("Cosmology: integration of ") + what + " failed (" + gsl_strerror(st) + ")");
  return result;
}

}  // namespace

Cosmology::Cosmology(const CosmologyParams& p) : p_(p) {
  if (!std::isfinite(p.H0_km_s_Mpc) || p.H0_km_s_Mpc <= 0.0)
    throw core::DomainError("Cosmology: H0_km_s_Mpc must be finite and > 0, got " + num(p.H0_km_s_Mpc));
  if (!std::isfinite(p.Omega_m) || p.Omega_m < 0.0)
    throw core::DomainError("Cosmology: Omega_m must be finite and >= 0, got " + num(p.Omega_m));
  if (!std::isfinite(p.Omega_lambda))
    throw core::DomainError("Cosmology: Omega_lambda must be finite, got " + num(p.Omega_lambda));
  Ok_ = p.Omega_k();
  // E^2(y) = Om y^3 + Ok y^2 + OL with y = 1 + z >= 1; f(1) = 1. It must stay
  // positive for all y >= 1 (a big bang in the past, no bounce).
  const double Om = p.Omega_m, OL = p.Omega_lambda;
  bool ok = true;
  if (Om == 0.0) {
    ok = Ok_ >= 0.0;  // E^2 = Ok y^2 + (1 - Ok)
  } else {
    const double ystar = -2.0 * Ok_ / (3.0 * Om);  // local minimum when Ok < 0
    if (ystar > 1.0) ok = Om * ystar * ystar * ystar + Ok_ * ystar * ystar + OL > 0.0;
  }
  if (!ok)
    throw core::DomainError("Cosmology: Omega_m = " + num(Om) + ", Omega_lambda = " + num(OL) +
                            " give E(z)^2 <= 0 at some z > 0 (no big bang); expected a Friedmann model with a "
                            "hot past");
  H0_s_ = p.H0_km_s_Mpc / (k::Mpc_cm / 1e5);
  DH_Mpc_ = k::c_km_s / p.H0_km_s_Mpc;
}

void Cosmology::check_z(double z, const char* what) const {
  if (!std::isfinite(z) || z < 0.0)
    throw core::DomainError(std::string("Cosmology::") + what + ": redshift z must be finite and >= 0, got " +
                            num(z));
}

double Cosmology::E2(double z) const {
  const double y = 1.0 + z;
  return (p_.Omega_m * y + Ok_) * y * y + p_.Omega_lambda;
}

double Cosmology::E(double z) const {
  check_z(z, "E");
  return std::sqrt(E2(z));
}

double Cosmology::hubble_s(double z) const { return H0_s_ * E(z); }
double Cosmology::hubble_km_s_Mpc(double z) const { return p_.H0_km_s_Mpc * E(z); }

double Cosmology::inv_E_integral(double z1, double z2) const {
  if (z2 <= z1) return 0.0;
  auto f = [this](double z) { return 1.0 / std::sqrt(E2(z)); };
  return cquad(f, z1, z2, "1/E(z)");
}

double Cosmology::comoving_distance_Mpc(double z) const {
  check_z(z, "comoving_distance_Mpc");
  return DH_Mpc_ * inv_E_integral(0.0, z);
}

double Cosmology::transverse_comoving_distance_Mpc(double z) const {
  check_z(z, "transverse_comoving_distance_Mpc");
  const double x = inv_E_integral(0.0, z);  // D_C / D_H
  if (Ok_ == 0.0) return DH_Mpc_ * x;
  const double s = std::sqrt(std::abs(Ok_));
  // sinh and sin keep full relative precision for small arguments.
  return Ok_ > 0.0 ? DH_Mpc_ * std::sinh(s * x) / s : DH_Mpc_ * std::sin(s * x) / s;
}

double Cosmology::angular_diameter_distance_Mpc(double z) const {
  return transverse_comoving_distance_Mpc(z) / (1.0 + z);
}

double Cosmology::luminosity_distance_Mpc(double z) const {
  return transverse_comoving_distance_Mpc(z) * (1.0 + z);
}

double Cosmology::luminosity_distance_cm(double z) const { return luminosity_distance_Mpc(z) * k::Mpc_cm; }

double Cosmology::kpc_per_arcsec(double z) const {
  return angular_diameter_distance_Mpc(z) * 1e3 * k::arcsec_rad;
}

double Cosmology::rho_crit_g_cm3(double z) const {
  const double H = hubble_s(z);
  return 3.0 * H * H / (8.0 * k::kPi * k::G_cgs);
}

double Cosmology::rho_crit_Msun_kpc3(double z) const {
  return rho_crit_g_cm3(z) * (k::kpc_cm * k::kpc_cm * k::kpc_cm) / k::Msun_g;
}

double Cosmology::r_delta_kpc(double M_Msun, double z, double Delta) const {
  if (!std::isfinite(M_Msun) || M_Msun <= 0.0)
    throw core::DomainError("Cosmology::r_delta_kpc: mass M_Msun must be finite and > 0, got " + num(M_Msun));
  if (!std::isfinite(Delta) || Delta <= 0.0)
    throw core::DomainError("Cosmology::r_delta_kpc: overdensity Delta must be finite and > 0, got " + num(Delta));
  check_z(z, "r_delta_kpc");
  return std::cbrt(3.0 * M_Msun / (4.0 * k::kPi * Delta * rho_crit_Msun_kpc3(z)));
}

double Cosmology::m_delta_Msun(double R_kpc, double z, double Delta) const {
  if (!std::isfinite(R_kpc) || R_kpc <= 0.0)
    throw core::DomainError("Cosmology::m_delta_Msun: radius R_kpc must be finite and > 0, got " + num(R_kpc));
  if (!std::isfinite(Delta) || Delta <= 0.0)
    throw core::DomainError("Cosmology::m_delta_Msun: overdensity Delta must be finite and > 0, got " + num(Delta));
  check_z(z, "m_delta_Msun");
  return 4.0 * k::kPi / 3.0 * Delta * rho_crit_Msun_kpc3(z) * R_kpc * R_kpc * R_kpc;
}

double Cosmology::age_Gyr(double z) const {
  check_z(z, "age_Gyr");
  if (p_.Omega_m <= 0.0 && Ok_ <= 0.0)
    throw core::DomainError("Cosmology::age_Gyr: the age is infinite for Omega_m = 0 and Omega_k <= 0");
  const double a1 = 1.0 / (1.0 + z);
  // 1/(a E(a)) = 1/sqrt(Om/a + Ok + OL a^2); finite as a -> 0.
  auto f = [this](double a) {
    if (a <= 0.0) return p_.Omega_m > 0.0 ? 0.0 : 1.0 / std::sqrt(Ok_);
    return 1.0 / std::sqrt(p_.Omega_m / a + Ok_ + p_.Omega_lambda * a * a);
  };
  return cquad(f, 0.0, a1, "the age integral") / H0_s_ / k::Gyr_s;
}

double Cosmology::lookback_time_Gyr(double z) const {
  check_z(z, "lookback_time_Gyr");
  if (z == 0.0) return 0.0;
  const double a1 = 1.0 / (1.0 + z);
  auto f = [this](double a) { return 1.0 / std::sqrt(p_.Omega_m / a + Ok_ + p_.Omega_lambda * a * a); };
  return cquad(f, a1, 1.0, "the lookback-time integral") / H0_s_ / k::Gyr_s;
}

}  // namespace icmscope::cosmo
