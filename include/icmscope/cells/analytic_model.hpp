#pragma once
// Analytic cluster models: plain structs (filled from YAML by
// config/synth_settings.hpp) and their evaluation (ComponentProfile), used by
// cells/synth.hpp to draw gas particles.
//
// A model is a sum of spherical components (a main halo, subclumps, a merger
// partner), each with its own centre, bulk velocity, truncation radius and
// density / temperature / metallicity profiles (cells/profiles.hpp).
//
// Units: kpc (physical), km/s, Msun, cm^-3 for electron densities, keV,
// metallicity in solar units of the abundance set, gas mass density Msun/kpc^3.
//
// Gas mass density. The gas is a fully ionised plasma of the model's abundance
// set (emission/abundances.hpp) at the component's local metallicity Z(r):
//   rho = mu_e(Z) m_p n_e,   mu_e m_p = (mass per H nucleus) / (n_e / n_H),
// so that the emission layer, using the same abundance set and the cell's
// metallicity, recovers the model's n_e exactly (AG89 at 0.3 Zsun:
// mu_e = 1.165, n_e/n_H = 1.200; physics.md section 3). The Vikhlinin et al.
// 2006 form gives n_p n_e; with n_p = n_H (fully ionised hydrogen),
// n_e = sqrt(n_p n_e * n_e/n_H).
#include <array>
#include <cstddef>
#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "icmscope/cells/profiles.hpp"
#include "icmscope/emission/abundances.hpp"

namespace icmscope::cells {

enum class DensityKind { Beta, Vikhlinin06 };
enum class DensityNormalisation {
  Amplitude,  // the amplitude in the profile (beta: n_e0, V06: n0 and n02) is used as given
  GasMass,    // the amplitudes are rescaled so that M_gas(< gas_mass_radius_kpc) = gas_mass_msun
};
enum class TemperatureKind { Isothermal, Vikhlinin06, Vikhlinin06Universal };
enum class MetallicityKind { Constant, Cored };

struct DensityProfile {
  DensityKind kind = DensityKind::Beta;
  BetaDensity beta;       // kind Beta
  Vikhlinin06Density v06; // kind Vikhlinin06 (n_p n_e form)
  DensityNormalisation normalisation = DensityNormalisation::Amplitude;
  // GasMass: gas mass of this (truncated) component inside a sphere of radius
  // gas_mass_radius_kpc <= r_max_kpc about its centre. The amplitudes above
  // then only set the shape (for V06: the ratio n02/n0).
  double gas_mass_msun = 0.0;
  double gas_mass_radius_kpc = 0.0;
};

struct TemperatureProfile {
  TemperatureKind kind = TemperatureKind::Isothermal;
  double kT_keV = 5.0;                        // Isothermal [keV]
  Vikhlinin06Temperature v06;                 // Vikhlinin06 (with the cool-core factor)
  Vikhlinin06UniversalTemperature universal;  // Vikhlinin06Universal (T/T_mg of r/r500)
};

struct MetallicityProfile {
  MetallicityKind kind = MetallicityKind::Constant;
  double Z_solar = 0.3;   // Constant [Zsun]
  CoredMetallicity cored; // Cored
};

struct ClusterComponent {
  std::string name = "main";
  DensityProfile density;
  TemperatureProfile temperature;
  MetallicityProfile metallicity;
  std::array<double, 3> offset_kpc{0.0, 0.0, 0.0};     // centre relative to the model origin [kpc]
  std::array<double, 3> velocity_km_s{0.0, 0.0, 0.0};  // bulk velocity [km/s]
  double sigma_km_s = 0.0;     // 1-D isotropic Gaussian velocity dispersion [km/s] (0 = cold bulk flow)
  double r_max_kpc = 3000.0;   // truncation radius: no gas of this component beyond it [kpc]
};

inline constexpr int kDefaultNeighbours = 48;

struct ClusterModel {
  std::string name = "cluster";
  std::vector<ClusterComponent> components;
  std::uint64_t seed = 1;
  std::size_t n_particles = 200000;  // all components together
  // Kernel support H = distance to the k-th nearest particle (itself counted).
  int k_neighbours = kDefaultNeighbours;
  // Stratified radii: particle j of a component (j = 0..N-1) takes the mass
  // fraction q = (j + u_j)/N with u_j uniform, so every mass quantile holds
  // exactly one particle (variance reduction of the radial profile; directions
  // stay isotropic and random). false: q = u_j, independent draws.
  bool stratified_radii = true;
  // Abundance set of the plasma (emission::abundance_set names); it fixes
  // mu_e and n_e/n_H, and must match the set used for the emission.
  std::string abundance_set = "anders_grevesse_1989";
  // Metadata for later verbs (not used by the synthesis).
  std::optional<double> redshift;
  std::optional<double> ra_deg;
  std::optional<double> dec_deg;
  std::optional<double> m500_msun;  // total M500 of the system [Msun]
};

// Mass and electrons per hydrogen nucleus of a fully ionised plasma of an
// abundance set at metallicity Z (solar units). Both are linear in Z (metals
// scale with Z, He stays solar: emission/abundances.hpp), so two evaluations
// of emission::composition give them exactly at every Z.
class GasComposition {
 public:
  explicit GasComposition(const emission::AbundanceSet& set);
  double ne_over_nH(double Z_solar) const { return ne0_ + Z_solar * ne1_; }
  // rho / n_e = mu_e m_p [g].
  double mass_per_electron_g(double Z_solar) const { return (m0_ + Z_solar * m1_) / ne_over_nH(Z_solar); }
  double mu_e(double Z_solar) const;
  // Gas mass density [Msun/kpc^3] for an electron density [cm^-3].
  double rho_msun_kpc3(double ne_cm3, double Z_solar) const;

 private:
  double ne0_ = 0, ne1_ = 0;  // n_e/n_H at Z = 0 and its slope
  double m0_ = 0, m1_ = 0;    // mass per H nucleus [g] at Z = 0 and its slope
};

// Throws core::DomainError "model 'M', component 'C': <field>: <why>" when a
// parameter is outside its domain (beta <= 1/3, kT <= 0, r_max <= 0, ...).
void validate_model(const ClusterModel& model);

// One component, evaluated: the normalisation resolved and the gas mass
// profile M(<r) tabulated (log-spaced grid in r from 1e-7 r_max to r_max,
// 8-point Gauss-Legendre per interval in ln r, cubic Hermite interpolation of
// ln M in ln r with the exact slopes 4 pi r^3 rho / M; relative accuracy
// better than 1e-9). Immutable, thread-safe.
class ComponentProfile {
 public:
  ComponentProfile(const ClusterComponent& c, const GasComposition& composition);

  // The component with its amplitudes resolved (normalisation Amplitude).
  const ClusterComponent& component() const { return c_; }
  // Factor applied to the given amplitudes (1 for Amplitude normalisation).
  double amplitude_scale() const { return scale_; }

  // Profiles at distance r [kpc] from the component centre. Densities vanish
  // beyond r_max; kT and Z follow the formula at any r.
  double ne_cm3(double r_kpc) const;
  double rho_msun_kpc3(double r_kpc) const;
  double kT_keV(double r_kpc) const;
  double metallicity_solar(double r_kpc) const;

  // Gas mass inside radius r (clipped to r_max) [Msun], and inside r_max.
  double gas_mass_msun(double r_kpc) const;
  double total_gas_mass_msun() const { return m_total_; }
  // Inverse of M(<r) / M(<r_max): the radius enclosing the fraction q in [0, 1].
  double radius_at_mass_fraction(double q) const;

 private:
  double ne_shape(double r_kpc, double Z) const;  // n_e before truncation
  double lnm_at(double lnr) const;

  ClusterComponent c_;
  GasComposition comp_;
  double scale_ = 1.0;
  double m_total_ = 0.0;
  // Table on a uniform grid in ln r.
  double lnr0_ = 0.0, dlnr_ = 0.0;
  std::vector<double> lnm_;    // ln M(<r_i)
  std::vector<double> slope_;  // d ln M / d ln r at r_i
  double inner_slope_ = 3.0;   // M ~ r^inner_slope below the first node
};

}  // namespace icmscope::cells
