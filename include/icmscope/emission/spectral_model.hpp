#pragma once
// SpectralModel: photon emissivity of an optically thin plasma per unit
// emission measure n_e n_H V = 1 cm^-3, at rest-frame energy E [keV], for
// temperature kT [keV] and metallicity Z [solar units of the model's set]:
//   photons s^-1 keV^-1 cm^3 (multiply by EM [cm^-3] for photons s^-1 keV^-1).
// Implementations are immutable and thread-safe. Virtual calls are meant for
// table building (BandTable), never per gas cell.
//
//  - ContinuumModel: built-in free-free (+ optional approximate recombination)
//    continuum, see continuum.hpp. No lines.
//  - TabulatedModel: a user emissivity table on a (kT, Z, energy-bin) grid, e.g.
//    produced by a plasma code the user trusts (the FITS layout is read in io/).
#include <cstddef>
#include <limits>
#include <memory>
#include <string>
#include <vector>

#include "icmscope/emission/abundances.hpp"
#include "icmscope/emission/continuum.hpp"
#include "icmscope/emission/gaunt.hpp"

namespace icmscope::emission {

class SpectralModel {
 public:
  virtual ~SpectralModel() = default;

  // Photon emissivity per n_e n_H [photons s^-1 keV^-1 cm^3]; E_rest > 0, kT > 0, Z >= 0 [keV, keV, solar].
  virtual double photon_emissivity(double E_rest_keV, double kT_keV, double Z_solar) const = 0;
  virtual std::string name() const = 0;

  // out[k] = photon_emissivity(E[k], kT, Z) for n energies (default: a loop;
  // implementations hoist the (kT, Z) work out of the energy loop).
  virtual void photon_spectrum(const double* E_rest_keV, std::size_t n, double kT_keV, double Z_solar,
                               double* out) const;

  // Rest-frame energies [keV] where the spectrum is discontinuous (edges, bin
  // boundaries), sorted; integrators split their energy grid there.
  virtual std::vector<double> discontinuities_keV() const { return {}; }

  // Range of rest energies with non-zero emission [keV].
  virtual double E_min_keV() const { return 0.0; }
  virtual double E_max_keV() const { return std::numeric_limits<double>::infinity(); }
  // Temperature range in which the model is defined [keV] (TabulatedModel clamps outside).
  virtual double kT_min_keV() const { return 0.0; }
  virtual double kT_max_keV() const { return std::numeric_limits<double>::infinity(); }
};

// Built-in continuum model (free-free summed over ions + optional recombination).
class ContinuumModel final : public SpectralModel {
 public:
  explicit ContinuumModel(const AbundanceSet& set, std::shared_ptr<const GauntTable> gaunt = nullptr,
                          const ContinuumSettings& settings = {});

  double photon_emissivity(double E_rest_keV, double kT_keV, double Z_solar) const override {
    return emis_(E_rest_keV, kT_keV, Z_solar);
  }
  void photon_spectrum(const double* E_rest_keV, std::size_t n, double kT_keV, double Z_solar,
                       double* out) const override {
    emis_.spectrum(E_rest_keV, n, kT_keV, Z_solar, out);
  }
  std::string name() const override;
  std::vector<double> discontinuities_keV() const override { return emis_.edges_keV(); }

  const ContinuumEmissivity& emissivity() const { return emis_; }

 private:
  ContinuumEmissivity emis_;
};

// An emissivity table in memory. values are photons s^-1 cm^3 per n_e n_H,
// integrated over each energy bin, stored in C order [iT][iZ][iE].
struct EmissivityGrid {
  std::vector<double> kT_keV;    // strictly increasing, > 0; at least 2
  std::vector<double> Z_solar;   // strictly increasing, >= 0; at least 1
  std::vector<double> E_lo_keV;  // bin lower edges (rest frame), > 0
  std::vector<double> E_hi_keV;  // bin upper edges; E_lo[i] < E_hi[i] <= E_lo[i+1]
  std::vector<double> values;    // size kT * Z * E, finite and >= 0

  std::size_t n_kT() const { return kT_keV.size(); }
  std::size_t n_Z() const { return Z_solar.size(); }
  std::size_t n_E() const { return E_lo_keV.size(); }
  double value(std::size_t iT, std::size_t iZ, std::size_t iE) const { return values[(iT * n_Z() + iZ) * n_E() + iE]; }

  // Throws core::DomainError naming the offending field (and index) if the
  // grid is malformed: non-monotone axes, size mismatch, negative or non-finite values.
  void validate() const;
};

// User-tabulated model. Interpolation:
//  - kT: linear in ln kT; in ln(value) when both bracketing values are > 0,
//    else linear in value. Clamped to the table's kT range outside it.
//  - Z: linear; clamped to the table's Z range.
//  - energy: piecewise constant within each bin (value / bin width); zero
//    outside the bins and in gaps between them.
class TabulatedModel final : public SpectralModel {
 public:
  explicit TabulatedModel(EmissivityGrid grid, std::string name = "table");

  double photon_emissivity(double E_rest_keV, double kT_keV, double Z_solar) const override;
  void photon_spectrum(const double* E_rest_keV, std::size_t n, double kT_keV, double Z_solar,
                       double* out) const override;
  std::string name() const override { return name_; }
  std::vector<double> discontinuities_keV() const override;
  double E_min_keV() const override { return grid_.E_lo_keV.front(); }
  double E_max_keV() const override { return grid_.E_hi_keV.back(); }
  double kT_min_keV() const override { return grid_.kT_keV.front(); }
  double kT_max_keV() const override { return grid_.kT_keV.back(); }

  const EmissivityGrid& grid() const { return grid_; }

 private:
  struct Weights {
    std::size_t iT = 0, iZ = 0;
    double t = 0.0, fz = 0.0;  // fractional positions in ln kT and Z
    bool one_T = false, one_Z = false;
  };
  Weights weights(double kT_keV, double Z_solar) const;
  double bin_value(const Weights& w, std::size_t iE) const;  // interpolated bin-integrated value
  long bin_of(double E) const;                                // -1 outside the bins

  EmissivityGrid grid_;
  std::string name_;
  std::vector<double> lnT_;
  std::vector<double> inv_width_;
};

}  // namespace icmscope::emission
