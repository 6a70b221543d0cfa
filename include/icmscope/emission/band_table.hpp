#pragma once
// Band coefficients: a SpectralModel folded through redshift, Galactic
// absorption and an effective-area curve, tabulated once on a (log kT, Z) grid
// so that the per-cell cost is one interpolation in plain arrays.
//
// Redshift (physics.md section 5): the photon flux per observed energy from a
// cell of emission measure EM = Int n_e n_H dV at luminosity distance D_L is
//   F_N(E_o) = (1+z)^2 EM eps_N((1+z) E_o, T, Z) / (4 pi D_L^2).
// Hence, for the observed band [e_min, e_max]:
//   photon_coefficient(kT, Z) = (1+z)^2 Int eps_N((1+z)E_o) A(E_o) exp(-sigma(E_o) N_H) dE_o
//       [photons s^-1 cm^3 * cm^2 = cm^5 s^-1]; count rate = coefficient * EM / (4 pi D_L^2)
//       with EM in cm^-3 and D_L in cm. With no area curve A = 1 cm^2, so the
//       coefficient is numerically the photon flux per unit EM/(4 pi D_L^2).
//   energy_coefficient(kT, Z) = (1+z)^2 Int E_o eps_N((1+z)E_o) exp(-sigma N_H) dE_o  [erg s^-1 cm^3]
//       (no area); absorbed energy flux [erg s^-1 cm^-2] = coefficient * EM / (4 pi D_L^2).
//   bolometric_coefficient(kT, Z) = Int_0^inf E eps_N(E) dE  [erg s^-1 cm^3], rest frame,
//       unabsorbed: L_bol = coefficient * EM (the cooling function per n_e n_H).
// Integrating energy_coefficient over all observed energies with N_H = 0 gives
// bolometric_coefficient: the observed energy flux is L_bol / (4 pi D_L^2).
//
// Quadrature: the observed band is cut at every discontinuity (band edges,
// absorption edges, model edges / (1+z), area-curve nodes) and into intervals
// no wider than min(1 / n_energy_per_keV, E (10^(1/n_energy_per_decade) - 1));
// each interval uses 3-point Gauss-Legendre. The same fixed nodes serve every
// (kT, Z), so the table build costs one model spectrum per grid node.
//
// Interpolation: kT nodes are log-spaced, with one guard node beyond each end;
// ln(coefficient) is interpolated by 4-point cubic Lagrange in ln kT (linear
// in the coefficient instead if any tabulated value is <= 0); linear in Z.
// Measured interpolation error against direct evaluation with the default grid
// (200 kT nodes over 0.05-50 keV, Z nodes 0..3 step 0.5; ContinuumModel AG89
// with recombination; bands 0.5-2, 0.1-2.4, 2-7 keV; z = 0 and 0.5; N_H = 0 and
// 3e20; kT midway between nodes and Z = 0.3, 0.75, 2.2): max relative error
// 5.4e-7 for the photon and energy coefficients (test_band_table.cpp).
// The recombination edges make the spectrum jump with kT only smoothly, but a
// TabulatedModel with coarse kT nodes limits the accuracy to its own.
//
// Out of range (documented): kT below/above the grid extrapolates ln c
// linearly in ln kT from the end interval (log mode; measured 0.1% off at 55 keV,
// 0.5% at 80 keV for the continuum in 0.5-2 keV) or clamps (linear mode);
// kT <= 0 or NaN gives 0. Z below the first node is clamped; above the last
// node it is extrapolated linearly (exact for a model linear in metals; never
// below 0).
#include <cstddef>
#include <string>
#include <vector>

#include "icmscope/emission/spectral_model.hpp"

namespace icmscope::emission {

struct BandSpec {
  double e_min_keV = 0.5;  // observed frame, > 0
  double e_max_keV = 2.0;  // > e_min_keV
};

struct FoldingSpec {
  double redshift = 0.0;           // z >= 0
  double nH_cm2 = 0.0;             // Galactic H column for MM83 absorption [cm^-2]
  std::vector<double> area_E_keV;  // effective-area curve (observed energies, increasing); empty = flat 1 cm^2
  std::vector<double> area_cm2;    // same length; linear interpolation, 0 outside the curve
  double n_energy_per_keV = 200.0;     // quadrature: max interval 1/n keV
  double n_energy_per_decade = 64.0;   // quadrature: max interval E (10^(1/n) - 1)
};

struct BandGridSpec {
  double kT_min_keV = 0.05;
  double kT_max_keV = 50.0;
  int n_kT = 200;                                            // log-spaced nodes (>= 4)
  std::vector<double> Z_nodes = {0.0, 0.5, 1.0, 1.5, 2.0, 2.5, 3.0};  // solar units, increasing
  bool bolometric = false;  // also tabulate the bolometric coefficient (costs ~3x the band build)
};

// Validation helpers (throw core::DomainError naming the field).
void validate(const BandSpec& b);
void validate(const FoldingSpec& f);
void validate(const BandGridSpec& g);

// Effective area [cm^2] at observed energy E from a FoldingSpec (1 if no curve).
double folding_area_cm2(const FoldingSpec& f, double E_obs_keV);

// The fixed quadrature of an observed band: coefficient = sum_k w[k] eps_N(E_rest[k]).
struct BandQuadrature {
  std::vector<double> E_obs_keV;   // nodes, observed frame
  std::vector<double> E_rest_keV;  // (1+z) E_obs
  std::vector<double> w_photon;    // (1+z)^2 * weight * A(E_obs) * transmission   [keV cm^2]
  std::vector<double> w_energy;    // (1+z)^2 * weight * E_obs[erg] * transmission [keV erg]
};
BandQuadrature make_band_quadrature(const SpectralModel& model, const BandSpec& band, const FoldingSpec& fold);

// Direct (non-tabulated) evaluations with the same quadrature as the table.
double band_photon_coefficient_direct(const SpectralModel& model, const BandSpec& band, const FoldingSpec& fold,
                                      double kT_keV, double Z_solar);
double band_energy_coefficient_direct(const SpectralModel& model, const BandSpec& band, const FoldingSpec& fold,
                                      double kT_keV, double Z_solar);
// Rest frame, unabsorbed, all energies: Int E eps_N dE over [1e-9 kT, 60 kT]
// (clipped to the model's energy range) in ln E steps of ln(10)/n_per_decade
// and linear steps of at most kT/8 [erg s^-1 cm^3].
double bolometric_coefficient_direct(const SpectralModel& model, double kT_keV, double Z_solar,
                                     double n_per_decade = 64.0);

class BandTable {
 public:
  // Builds the table (OpenMP over kT nodes). The model is only used here.
  BandTable(const SpectralModel& model, const BandSpec& band, const FoldingSpec& fold,
            const BandGridSpec& grid = {});

  // Per-cell coefficients (see the header comment for units). Thread-safe.
  double photon_coefficient(double kT_keV, double Z_solar) const { return lookup(photon_, kT_keV, Z_solar); }
  double energy_coefficient(double kT_keV, double Z_solar) const { return lookup(energy_, kT_keV, Z_solar); }
  // Throws DomainError if the table was built with grid.bolometric = false.
  double bolometric_coefficient(double kT_keV, double Z_solar) const;

  // Batch lookups over gas cells (OpenMP, static schedule; out[i] depends only on input i).
  void photon_coefficients(const float* kT_keV, const float* Z_solar, std::size_t n, double* out) const;
  void energy_coefficients(const float* kT_keV, const float* Z_solar, std::size_t n, double* out) const;

  const BandSpec& band() const { return band_; }
  const FoldingSpec& folding() const { return fold_; }
  const BandGridSpec& grid() const { return grid_; }
  const std::string& model_name() const { return model_name_; }
  // kT nodes of the nominal grid [keV].
  std::vector<double> kT_nodes() const;
  // Number of quadrature nodes of the band integral.
  std::size_t n_quadrature_nodes() const { return n_quad_; }

 private:
  struct Table {
    std::vector<double> v;  // [iZ][j], j = 0..n_kT+1 (guard nodes at 0 and n_kT+1)
    bool log_mode = true;   // v holds ln(coefficient)
    bool present = false;
  };
  double lookup(const Table& t, double kT, double Z) const;
  double at_Z(const Table& t, std::size_t iz, double x) const;
  void finish(Table& t, std::vector<double>&& raw) const;

  BandSpec band_;
  FoldingSpec fold_;
  BandGridSpec grid_;
  std::string model_name_;
  double lnT0_ = 0.0, dlnT_ = 1.0, inv_dlnT_ = 1.0;  // ln kT of nominal node 0 and the step
  bool Z_uniform_ = false;                          // equally spaced Z nodes: direct indexing
  double inv_dZ_ = 1.0;
  int nT_ = 0;                       // nominal nodes
  std::size_t nj_ = 0;               // nodes per Z row including guards
  std::size_t n_quad_ = 0;
  Table photon_, energy_, bolo_;
};

}  // namespace icmscope::emission
