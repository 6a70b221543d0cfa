#pragma once
// Thermal continuum of a hot, optically thin plasma: free-free emission of
// every ion of an abundance set plus (optionally) an approximate recombination
// continuum. No lines. Photon emissivity per unit emission measure
// (n_e n_H V = 1 cm^-3), at rest energy E [keV] for temperature kT [keV]:
//   units photons s^-1 keV^-1 cm^3 (multiply by EM = Int n_e n_H dV [cm^-3]
//   to get photons s^-1 keV^-1).
//
// Free-free (Rybicki & Lightman 1979, eq. 5.14; Sarazin 1986, RMP 58, 1):
//   eps_nu = C_nu Z^2 n_e n_i T^-1/2 exp(-h nu/kT) gbar,   C_nu = 2^5 pi e^6/(3 m_e c^3) sqrt(2 pi/(3 k m_e))
//          = 6.8416e-38 erg s^-1 cm^3 Hz^-1 K^1/2;
//   dN/dE  = C_N (kT)^-1/2 sum_i Z_i^2 (n_i/n_H) gbar(u, gamma2_i) exp(-E/kT)/E  per n_e n_H,
//   C_N    = C_nu / (h sqrt(1 keV / k_B)) = 3.031e-15 photons s^-1 cm^3 keV^-1/2,
// each ion with its own Z_i^2 and gamma2_i = Z_i^2 Ry/kT (Born x Elwert
// Gaunt factor from a GauntTable). Metals scale with Z_solar, He does not.
//
// Recombination continuum (APPROXIMATE; physics.md section 3, Kramers
// hydrogenic form, from memory, unverified): radiative recombination of the
// fully stripped ions of H, He, C, N, O, Ne, Mg, Si, S, Fe onto hydrogenic
// levels n = 1..n_max, with edges chi_n = Z^2 Ry / n^2. Above each edge the ion's
// free-free term is multiplied by (1 + ...), adding
//   (2 chi_n / (n kT)) exp(chi_n / kT) * eps_ff,ion     (free-bound Gaunt = free-free Gaunt).
// Only the bare ions are counted, so the density of the bare stage matters:
//  - BareFraction::coronal_upper_bound (default): bare-stage density from
//    R/(1+R) of a two-stage coronal balance between hydrogenic collisional
//    ionisation (Cen 1992, ApJS 78, 341 hydrogen rate, scaled hydrogenically:
//    S_Z(T) = Z^-3 S_H(T/Z^2)) and radiative recombination (Seaton 1959, MNRAS
//    119, 81). R/(1+R) bounds the true bare fraction from above, yet the result
//    is a lower estimate of the whole recombination continuum (recombination
//    onto partially stripped ions is missing). Rate coefficients from memory,
//    unverified (Seaton's form reproduces hydrogen's case-A alpha(1e4 K) =
//    4.1e-13 cm^3/s). Measured (AG89, 0.3 Zsun): recombination / free-free =
//    16%, 9%, 5%, 3%, 1.7% of the bolometric emission at kT = 0.5, 1, 2, 4, 8 keV;
//    25%, 10%, 5%, 2%, 1% of the 0.5-2 keV photon emissivity.
//  - BareFraction::fully_stripped: every ion bare, the literal form of
//    physics.md: 45%, 24%, 12.5%, 6.5%, 3.4% bolometric (31%, 12%, 5%, 2%, 1%
//    in 0.5-2 keV photons) at the same kT. Do not use it for gas much cooler than
//    an ion's edge: a bare Fe nucleus in 0.1 keV gas would put a strong, purely
//    fictitious edge at 1.02 keV (Fe n = 3) and 9.2 keV (n = 1).
// The spread between the two is a fair measure of this term's uncertainty above ~1 keV.
// Neither includes recombination onto partially stripped ions, two-photon or
// line emission: expect the continuum-only accuracy stated in physics.md
// section 3 (a few % above 5 keV, 10-30% at 2-3 keV, factor >= 2 below 1 keV).
#include <cstddef>
#include <memory>
#include <vector>

#include "icmscope/emission/abundances.hpp"
#include "icmscope/emission/gaunt.hpp"

namespace icmscope::emission {

// Free-free constants derived from core/constants.hpp (CODATA 2018).
// C_nu [erg s^-1 cm^3 Hz^-1 K^1/2] = 6.8416e-38.
double ff_nu_constant();
// C_N [photons s^-1 cm^3 keV^-1 keV^1/2] = 3.031e-15 (E, kT in keV).
double ff_photon_constant();
// Frequency-integrated C_tot = C_nu k_B / h [erg s^-1 cm^3 K^-1/2] = 1.4256e-27 (R&L eq. 5.15).
double ff_total_constant();

// Free-free photon emissivity of one ion species per (n_e n_ion):
// C_N kT^-1/2 Z^2 gbar exp(-E/kT) / E [photons s^-1 keV^-1 cm^3].
double ff_photon_emissivity_ion(double E_keV, double kT_keV, int Z, double gbar);

// Upper bound on the fraction of an element in its fully stripped stage (see
// the header comment; from memory, unverified). Z >= 1, kT > 0 [keV].
double coronal_bare_fraction_upper_bound(int Z, double kT_keV);

enum class BareFraction { fully_stripped, coronal_upper_bound };

struct ContinuumSettings {
  bool recombination = true;     // add the approximate recombination continuum
  int recombination_n_max = 3;   // hydrogenic levels 1..n_max (1..10)
  BareFraction bare_fraction = BareFraction::coronal_upper_bound;
};

// Atomic numbers of the ions whose recombination continuum is included.
const std::vector<int>& recombining_ions();

class ContinuumEmissivity {
 public:
  // gaunt may be shared between models; null builds a default GauntTable.
  ContinuumEmissivity(const AbundanceSet& set, std::shared_ptr<const GauntTable> gaunt = nullptr,
                      const ContinuumSettings& settings = {});

  // Photon emissivities per n_e n_H [photons s^-1 keV^-1 cm^3] at rest energy
  // E > 0 [keV], kT > 0 [keV], Z_solar >= 0. Throws DomainError on bad arguments.
  double free_free(double E_keV, double kT_keV, double Z_solar) const;
  double recombination(double E_keV, double kT_keV, double Z_solar) const;
  // Free-free plus, if enabled, recombination.
  double operator()(double E_keV, double kT_keV, double Z_solar) const;

  // out[k] = (*this)(E[k], kT, Z_solar) for n energies; Gaunt weights along the
  // gamma2 axis are computed once per ion. E must be > 0 (checked).
  void spectrum(const double* E_keV, std::size_t n, double kT_keV, double Z_solar, double* out) const;

  // Rest-frame recombination edges chi_n = Z^2 Ry / n^2 [keV], sorted (empty if disabled).
  std::vector<double> edges_keV() const;

  const AbundanceSet& abundances() const { return set_; }
  const ContinuumSettings& settings() const { return settings_; }
  const GauntTable& gaunt() const { return *gaunt_; }
  const std::shared_ptr<const GauntTable>& gaunt_ptr() const { return gaunt_; }

 private:
  enum Part { kFF = 1, kFB = 2 };
  void eval(const double* E, std::size_t n, double kT, double Zs, int parts, double* out) const;

  AbundanceSet set_;
  std::shared_ptr<const GauntTable> gaunt_;
  ContinuumSettings settings_;
  struct Ion {
    int Z;
    double z2_n_solar;   // Z^2 n_i/n_H at solar metallicity
    bool metal;          // scales with Z_solar
    bool recombines;
  };
  std::vector<Ion> ions_;
};

}  // namespace icmscope::emission
