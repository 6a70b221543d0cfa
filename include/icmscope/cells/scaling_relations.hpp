#pragma once
// Published cluster scaling relations, and an analytic cluster model built
// from M500 and redshift alone (for exposure planning and the reverse
// "faintest cluster" question).
//
// Relations (physics.md section 9; every function names its source):
//   M-T: Vikhlinin et al. 2009 (ApJ 692, 1033), M500 = 3.02e14 h^-1 Msun (T/5 keV)^1.53 / E(z);
//        Arnaud, Pointecouteau & Pratt 2005 (A&A 441, 893), M500 = A (T/5 keV)^alpha / h(z)
//        ("all": alpha 1.71, A 3.84e14 h70^-1; "hot", kT > 3.5 keV: alpha 1.49, A 4.10e14 h70^-1).
//   L-M: Vikhlinin et al. 2009, ln L(0.5-2 keV) [erg/s] = 47.392 + 1.61 ln M500 + 1.85 ln E(z)
//        - 0.39 ln(h/0.72), scatter 0.40 (physics.md gives it; mass units and h convention are
//        documented and checked beside the implementation).
// h(z) = E(z) here (self-similar evolution, common practice).
// h conventions (with h = Cosmology::h() = H0/100, h70 = H0/70): V09 M-T
// M500 [Msun] = 3.02e14 / h ...; A05 M500 [Msun] = A / h70 ...; V09 L-M takes
// M500 in Msun (not h^-1 Msun: the explicit -0.39 ln(h/0.72) term carries the h
// dependence), which gives 0.85e44 erg/s at 10^14.5 Msun, z = 0 (physics.md
// section 10: ~0.8e44). Coefficients tagged [M] in physics.md: from memory, unverified.
//
// Units: Msun, kpc (physical), keV, erg/s, cm^-3.
#include <array>
#include <string>
#include <vector>

#include "icmscope/cells/analytic_model.hpp"
#include "icmscope/cosmo/cosmology.hpp"

namespace icmscope::cells {

enum class MassTemperatureRelation { Vikhlinin09, Arnaud05All, Arnaud05Hot };
enum class LuminosityMassRelation { Vikhlinin09 };

// Choice names as they appear in YAML and in outputs: "vikhlinin2009",
// "arnaud2005_all", "arnaud2005_hot"; "vikhlinin2009".
MassTemperatureRelation mass_temperature_relation(const std::string& name);  // DomainError on an unknown name
std::string relation_name(MassTemperatureRelation r);
std::string relation_name(LuminosityMassRelation r);
// One-line bibliographic reference, e.g. "Vikhlinin et al. 2009, ApJ 692, 1033 (M500-T)".
std::string relation_reference(MassTemperatureRelation r);
std::string relation_reference(LuminosityMassRelation r);

// Mean (spectroscopic-like) temperature [keV] of a cluster of mass M500 [Msun]
// at redshift z from an M-T relation (inverted for T). DomainError when
// M500 <= 0 or z < 0.
double kT_from_m500_keV(double m500_msun, double z, MassTemperatureRelation rel, const cosmo::Cosmology& c);
// M500 [Msun] for a temperature [keV] (the relation as published).
double m500_from_kT_msun(double kT_keV, double z, MassTemperatureRelation rel, const cosmo::Cosmology& c);
// Rest-frame 0.5-2 keV luminosity [erg/s] from an L-M relation (median, no scatter).
double l_soft_from_m500_erg_s(double m500_msun, double z, LuminosityMassRelation rel, const cosmo::Cosmology& c);
// Log-normal scatter (natural log) of that relation at fixed mass.
double l_soft_scatter_ln(LuminosityMassRelation rel);

// A subclump added to the scaled cluster (to plan for a disturbed system).
struct ScaledSubclump {
  double mass_ratio = 0.1;                      // M500 of the subclump / M500 of the main halo
  std::array<double, 3> offset_r500{0.5, 0.0, 0.0};  // centre offset in units of the main R500
};

// How the scaled cluster is built.
struct ScaledClusterSpec {
  std::string name = "scaled";
  double m500_msun = 5e14;
  double redshift = 0.1;
  MassTemperatureRelation mt = MassTemperatureRelation::Vikhlinin09;
  LuminosityMassRelation lm = LuminosityMassRelation::Vikhlinin09;
  // Density shape: beta model with r_c = core_radius_r500 * R500 and this beta,
  // truncated at r_max_r500 * R500 (physics.md section 9: beta ~ 2/3, r_c ~ 0.1-0.2 R500).
  double beta = 2.0 / 3.0;          // > 1/2
  double core_radius_r500 = 0.15;   // in [1e-3, 10]
  double r_max_r500 = 3.0;          // >= 1
  // Normalisation: the model's own rest-frame 0.5-2 keV luminosity inside R500
  // (continuum + the emission layer's default spectral model at Z) equals the
  // L-M relation's median (normalise_luminosity = true); otherwise the gas mass
  // inside R500 is gas_fraction * M500.
  bool normalise_luminosity = true;
  double gas_fraction = 0.12;  // in (0, 1)
  // Temperature: universal profile of Vikhlinin et al. 2006 scaled to the
  // relation's kT (universal_temperature = true) or isothermal. Scaling: the
  // emission-measure-weighted (weight n_e n_H) mean of T over the 3-D shell
  // 0.15-1 R500 equals the relation's kT.
  bool universal_temperature = true;
  double Z_solar = 0.3;
  std::string abundance_set = "anders_grevesse_1989";
  std::vector<ScaledSubclump> subclumps;  // each scaled by its own M500 with the same relations
};

// What was derived, for the output ("which relation gave what"). All figures
// are of the main halo alone (its own R500-sphere, without the subclumps'
// gas; each subclump is normalised on its own in the same way).
struct ScaledClusterSummary {
  double r500_kpc = 0;
  double kT_keV = 0;          // from the M-T relation
  double l_soft_erg_s = 0;    // 0.5-2 keV, rest frame, inside R500, of the built model
  double l_soft_relation_erg_s = 0;  // the L-M relation's median
  double gas_mass_r500_msun = 0;
  double ne0_cm3 = 0;         // central electron density of the main halo
  std::string mt_reference, lm_reference;
};

// Builds the analytic model (main halo "main" + "subclump_1", ...) with
// redshift and m500_msun filled in; m500_msun = M500 (1 + sum of mass_ratio),
// the sum of the halo masses (a label, not a re-measured M500 of the whole
// system). Where components overlap, the projected emission counts
// (rho_1 + rho_2)^2, so the system is brighter than the sum of the halos.
// The Gaunt table of the default spectral model is built once per process
// (~0.3 s); a call then costs a few ms per halo.
// DomainError "scaled cluster 'name': <field>: <why>" on bad input. Pure function.
ClusterModel scaled_cluster(const ScaledClusterSpec& spec, const cosmo::Cosmology& c,
                            ScaledClusterSummary* summary = nullptr);

}  // namespace icmscope::cells
