#pragma once
// Radial profiles of the intracluster gas used by the analytic cluster
// synthesiser (cells/analytic_model.hpp, cells/synth.hpp). Pure functions.
//
// Units: r in kpc (physical, from the profile centre), densities in cm^-3
// (n_p n_e in cm^-6), kT in keV, metallicity in solar units of the abundance
// set. Every function is defined for r >= 0; forms with a central cusp return
// +inf at r = 0.
namespace icmscope::cells {

// ---- density ---------------------------------------------------------------

// Isothermal beta model (Cavaliere & Fusco-Femiano 1976, A&A 49, 137):
//   n_e(r) = n_e0 [1 + (r/r_c)^2]^(-3 beta/2).
struct BetaDensity {
  double n_e0_cm3 = 1e-3;  // central electron density [cm^-3]
  double r_c_kpc = 100.0;  // core radius [kpc]
  double beta = 2.0 / 3.0; // outer slope parameter (> 1/3 for a finite projected brightness)
};
double beta_model_ne_cm3(double r_kpc, const BetaDensity& p);

// The beta-model shape integrated over the sphere of radius r:
//   V(r) = Int_0^r 4 pi r'^2 [1 + (r'/r_c)^2]^(-3 beta/2) dr'
//        = 4 pi r_c^3 (x^3/3) (1+x^2)^(-3 beta/2) 2F1(1, 3 beta/2; 5/2; x^2/(1+x^2)),  x = r/r_c
// (the Euler integral of 2F1(3/2, 3 beta/2; 5/2; -x^2) after the Pfaff
// transformation; GSL's 2F1). The gas mass inside r is rho_0 V(r). Units kpc^3.
double beta_model_volume_kpc3(double r_kpc, double r_c_kpc, double beta);

// Vikhlinin et al. 2006 (ApJ 640, 691), eq. 3: emission-measure density
//   n_p n_e = n0^2 (r/r_c)^-alpha / (1 + r^2/r_c^2)^(3 beta - alpha/2)
//                  / (1 + r^gamma/r_s^gamma)^(epsilon/gamma)
//           + n02^2 / (1 + r^2/r_c2^2)^(3 beta2)
// with gamma = 3 in the paper (kept as a parameter) and epsilon < 5.
struct Vikhlinin06Density {
  double n0_cm3 = 1e-3;     // amplitude of sqrt(n_p n_e) [cm^-3]
  double r_c_kpc = 100.0;   // core radius [kpc]
  double alpha = 0.0;       // central cusp slope (0 = no cusp)
  double beta = 2.0 / 3.0;  // slope parameter
  double r_s_kpc = 1000.0;  // radius of the outer steepening [kpc]
  double epsilon = 0.0;     // extra outer slope (0 = none)
  double gamma = 3.0;       // width of the steepening (3 in the paper)
  double n02_cm3 = 0.0;     // amplitude of the second (inner) component [cm^-3]
  double r_c2_kpc = 10.0;   // core radius of the second component [kpc]
  double beta2 = 1.0;       // slope of the second component
};
double vikhlinin06_npne_cm6(double r_kpc, const Vikhlinin06Density& p);

// ---- temperature -------------------------------------------------------------

// Vikhlinin et al. 2006 (ApJ 640, 691), eqs. 4-6: 3-D temperature
//   T(r) = T0 t_cool(r) t(r),
//   t(r) = (r/r_t)^-a / [1 + (r/r_t)^b]^(c/b),
//   t_cool(r) = (x + T_min/T0) / (x + 1),  x = (r/r_cool)^a_cool.
struct Vikhlinin06Temperature {
  double kT0_keV = 6.0;      // normalisation T0 [keV]
  double r_t_kpc = 1000.0;   // transition radius of the outer decline [kpc]
  double a = 0.0;            // inner slope of t(r)
  double b = 2.0;            // width of the transition (> 0)
  double c = 0.5;            // outer slope of t(r)
  double r_cool_kpc = 100.0; // cool-core radius [kpc]
  double a_cool = 2.0;       // sharpness of the cool core (> 0)
  double kT_min_keV = 6.0;   // T_min: the central floor of the cool core [keV] (= T0: no cool core)
};
double vikhlinin06_kT_keV(double r_kpc, const Vikhlinin06Temperature& p);

// Vikhlinin et al. 2006 (ApJ 640, 691), eq. 8: the average scaled profile
//   T / T_mg = 1.35 [(x/0.045)^1.9 + 0.45] / [(x/0.045)^1.9 + 1] [1 + (x/0.6)^2]^-0.45,
// x = r / r500, T_mg the gas-mass-weighted temperature (0.125-1 r500 in the paper).
struct Vikhlinin06UniversalTemperature {
  double kT_mg_keV = 6.0;   // T_mg [keV]
  double r500_kpc = 1200.0; // R500 [kpc]
};
double vikhlinin06_universal_kT_keV(double r_kpc, const Vikhlinin06UniversalTemperature& p);

// ---- metallicity -------------------------------------------------------------

// A cored, declining metallicity with an outer floor:
//   Z(r) = max(Z_out, Z0 [1 + (r/r_Z)^2]^(-alpha_Z)).
// Not a published fit: a form of common practice reproducing what X-ray
// spectroscopy shows (a central peak of ~0.5-1 Zsun in cool cores, a
// plateau of ~0.2-0.3 Zsun in the outskirts).
struct CoredMetallicity {
  double Z0_solar = 0.6;      // central metallicity [Zsun]
  double r_Z_kpc = 100.0;     // core radius of the peak [kpc]
  double alpha_Z = 0.5;       // decline slope (>= 0)
  double Z_out_solar = 0.25;  // outer floor [Zsun]
};
double cored_metallicity_solar(double r_kpc, const CoredMetallicity& p);

}  // namespace icmscope::cells
