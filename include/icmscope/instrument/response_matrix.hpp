#pragma once
// Redistribution matrix R(E_i -> channel j) stored as sparse rows (OGIP
// CAL/GEN/92-002 layout: per energy bin, groups of consecutive channels). Built
// from raw rows (as io::read_rmf delivers them, or analytically); immutable.
// Per-row cumulative sums are precomputed so that drawing a channel for a
// photon of energy E is two binary searches.
#include <cstddef>
#include <cstdint>
#include <string>
#include <vector>

#include "icmscope/core/random.hpp"
#include "icmscope/instrument/effective_area.hpp"

namespace icmscope::instrument {

// Raw sparse content of a response: energy bins, groups of channels per bin,
// their values, and optionally the channel energy bounds (EBOUNDS).
struct ResponseRows {
  std::vector<double> energ_lo_keV;            // n_e
  std::vector<double> energ_hi_keV;            // n_e
  std::vector<std::size_t> row_group_begin{0};  // n_e + 1 offsets into the groups
  std::vector<int> group_first;                 // 0-based channel index of each group
  std::vector<int> group_count;                 // channels in each group
  std::vector<double> values;                   // all groups' values, in order
  std::vector<double> chan_e_min_keV;           // n_channels or empty
  std::vector<double> chan_e_max_keV;           // n_channels or empty
  int n_channels = 0;
  int first_channel = 1;                        // channel number of index 0 (TLMIN)

  // Appends an energy bin with no groups yet (a row with N_GRP = 0 stays empty).
  void begin_row(double e_lo_keV, double e_hi_keV);
  // Appends a group of n values for channel indices first .. first+n-1 to the last row.
  void add_group(int first_index, const double* v, int n);
  // Appends a row from a dense vector of n_channels values, zero runs dropped.
  void add_dense_row(double e_lo_keV, double e_hi_keV, const std::vector<double>& dense);
};

class ResponseMatrix {
 public:
  ResponseMatrix() = default;
  // Validates (DomainError naming `origin` and the field: energy bins strictly
  // increasing and contiguous, values finite and >= 0, groups inside
  // [0, n_channels), EBOUNDS sizes) and builds the row CDFs.
  ResponseMatrix(ResponseRows rows, std::string origin = "response");

  bool empty() const { return lo_.empty(); }
  std::size_t n_energies() const { return lo_.size(); }
  int n_channels() const { return n_channels_; }
  int first_channel() const { return first_channel_; }
  const std::vector<double>& energ_lo_keV() const { return lo_; }
  const std::vector<double>& energ_hi_keV() const { return hi_; }
  const std::vector<double>& chan_e_min_keV() const { return ch_lo_; }
  const std::vector<double>& chan_e_max_keV() const { return ch_hi_; }
  const std::string& origin() const { return origin_; }
  std::size_t n_groups() const { return gfirst_.size(); }

  // Energy bin containing E (lo <= E < hi), or -1 outside the grid.
  long energy_row(double E_keV) const;
  // Sum of a row's values (1 for a normalised RMF; the area in cm^2 for a
  // SPECRESP MATRIX; 0 for a row with N_GRP = 0).
  double row_sum(std::size_t row) const { return rowsum_[row]; }
  // Matrix element of `row` at 0-based channel index (0 where no group covers it).
  double element(std::size_t row, int channel_index) const;

  // Channel number (first_channel-based) for a detected photon of energy E,
  // drawn from the row normalised to 1 with the uniform u in [0, 1); -1 when
  // E is outside the grid or the row is empty. The row is taken as the
  // conditional channel distribution: detection probability (row sum) is the
  // caller's business (see row_sum).
  int draw_channel(double E_keV, double u) const;
  int draw_channel(double E_keV, core::RandomStream& rng) const {
    return draw_channel(E_keV, rng.uniform());
  }

  // Folds photons per energy bin (n_energies values, e.g. photons s^-1 already
  // multiplied by the area) to counts per channel (n_channels values).
  std::vector<double> fold(const std::vector<double>& per_energy_bin) const;
  // Integrates a photon flux (photons cm^-2 s^-1 keV^-1) over each energy bin
  // (n_sub midpoints), times the ARF area (one value per bin when the ARF has
  // the matrix's energy grid, as OGIP intends; interpolated at each sample
  // otherwise), and folds: counts s^-1 per channel (cm^2 already in the matrix for a
  // SPECRESP MATRIX: pass arf = nullptr then).
  std::vector<double> fold_spectrum(const SpectrumFn& photon_flux, const EffectiveArea* arf = nullptr,
                                    int n_sub = 8) const;

  // Nominal channel number whose EBOUNDS interval contains E (-1 outside or
  // when the matrix has no EBOUNDS).
  int channel_for_energy(double E_keV) const;

 private:
  std::vector<double> lo_, hi_, ch_lo_, ch_hi_;
  std::vector<std::size_t> rowg_;              // n_e + 1
  std::vector<int> gfirst_, gcount_;
  std::vector<std::size_t> goff_;              // n_groups + 1 offsets into values
  std::vector<double> val_;
  std::vector<double> cdf_;                    // cumulative within each row, same index as val_
  std::vector<double> rowsum_;
  std::vector<std::uint32_t> guide_;           // energy -> first candidate row, uniform in E
  double guide_e0_ = 0.0, guide_inv_de_ = 0.0;
  int n_channels_ = 0;
  int first_channel_ = 1;
  std::string origin_;
};

}  // namespace icmscope::instrument
