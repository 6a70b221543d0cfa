#pragma once
// Homogeneous Friedmann-Lemaitre cosmology with matter, curvature and a
// cosmological constant; no radiation, no massive neutrinos (the CMB
// temperature is taken as 0 K). Distances follow Hogg 1999 (astro-ph/9905116):
//   E(z) = sqrt(Om (1+z)^3 + Ok (1+z)^2 + OL),   Ok = 1 - Om - OL,
//   D_C  = D_H Int_0^z dz'/E(z'),                 D_H = c / H0,
//   D_M  = D_C (flat), D_H/sqrt(Ok) sinh(sqrt(Ok) D_C/D_H) (Ok > 0),
//          D_H/sqrt(|Ok|) sin(sqrt(|Ok|) D_C/D_H) (Ok < 0),
//   D_A  = D_M / (1+z),  D_L = (1+z) D_M.
// The integrals use GSL's CQUAD with relative tolerance 1e-10.
//
// A Cosmology is immutable and cheap to copy; every method is const and
// thread-safe. Bad arguments throw core::DomainError naming the argument.
#include <string>

namespace icmscope::cosmo {

struct CosmologyParams {
  double H0_km_s_Mpc = 70.0;  // Hubble constant [km s^-1 Mpc^-1]
  double Omega_m = 0.3;       // matter density today (critical units)
  double Omega_lambda = 0.7;  // cosmological-constant density today
  std::string name = "flat LCDM H0=70 Om=0.3";
  // Curvature density, derived: 1 - Omega_m - Omega_lambda.
  double Omega_k() const { return 1.0 - Omega_m - Omega_lambda; }
};

class Cosmology {
 public:
  // Throws DomainError if H0 <= 0, Omega_m < 0, a parameter is not finite, or
  // the model has no big bang (E(z)^2 <= 0 somewhere at z >= 0).
  explicit Cosmology(const CosmologyParams& p = {});

  const CosmologyParams& params() const { return p_; }
  double Omega_k() const { return Ok_; }
  double hubble_distance_Mpc() const { return DH_Mpc_; }  // c / H0 [Mpc]
  double h() const { return p_.H0_km_s_Mpc / 100.0; }

  // Dimensionless expansion rate H(z)/H0.
  double E(double z) const;
  // H(z) in s^-1 and km s^-1 Mpc^-1.
  double hubble_s(double z) const;
  double hubble_km_s_Mpc(double z) const;

  // Line-of-sight comoving distance D_C [Mpc].
  double comoving_distance_Mpc(double z) const;
  // Transverse comoving distance D_M [Mpc] (sinh/sin forms when curved).
  double transverse_comoving_distance_Mpc(double z) const;
  double angular_diameter_distance_Mpc(double z) const;  // D_A [Mpc]
  double luminosity_distance_Mpc(double z) const;        // D_L [Mpc]
  // Proper transverse size of one arcsecond at redshift z [kpc/arcsec].
  double kpc_per_arcsec(double z) const;
  // Luminosity distance in cm (convenience for flux = L / (4 pi D_L^2)).
  double luminosity_distance_cm(double z) const;

  // Critical density 3 H(z)^2 / (8 pi G): g cm^-3 and Msun kpc^-3.
  double rho_crit_g_cm3(double z) const;
  double rho_crit_Msun_kpc3(double z) const;

  // Spherical-overdensity radius and mass at Delta times the critical density:
  // M = (4 pi / 3) Delta rho_c(z) R^3; R in physical kpc, M in Msun.
  double r_delta_kpc(double M_Msun, double z, double Delta) const;
  double m_delta_Msun(double R_kpc, double z, double Delta) const;
  double r500_kpc_from_m500(double M500_Msun, double z) const { return r_delta_kpc(M500_Msun, z, 500.0); }
  double m500_from_r500(double R500_kpc, double z) const { return m_delta_Msun(R500_kpc, z, 500.0); }

  // Age of the universe at redshift z [Gyr], t = (1/H0) Int_0^{1/(1+z)} da / (a E(a)).
  // Requires Omega_m > 0 (otherwise the integral diverges at a -> 0).
  double age_Gyr(double z) const;
  // Lookback time to redshift z [Gyr] = age(0) - age(z).
  double lookback_time_Gyr(double z) const;

 private:
  void check_z(double z, const char* what) const;
  double E2(double z) const;
  // Int_{z1}^{z2} dz / E(z), dimensionless.
  double inv_E_integral(double z1, double z2) const;

  CosmologyParams p_;
  double Ok_ = 0.0;
  double DH_Mpc_ = 0.0;
  double H0_s_ = 0.0;
};

}  // namespace icmscope::cosmo
