#pragma once
// User-supplied emissivity tables on a (T, Z, E) grid, in icmscope's own FITS
// layout (documented in the README, section "Emissivity tables"):
//
//   HDU "EMISSIVITY"  IMAGE, 3-D, NAXIS1 = n_E (fastest), NAXIS2 = n_Z,
//                     NAXIS3 = n_T; values: photons s^-1 cm^3 emitted in each
//                     rest-frame energy bin per unit emission measure
//                     (n_e n_H V = 1 cm^-3). BUNIT 'photon cm3 / s'.
//   HDU "KT_GRID"     BINTABLE, column KT_KEV   (n_T rows, increasing, > 0)
//   HDU "Z_GRID"      BINTABLE, column Z_SOLAR  (n_Z rows, increasing, >= 0)
//   HDU "ENERGY_BINS" BINTABLE, columns E_LO_KEV, E_HI_KEV (n_E rows, rest frame)
//   optional keyword ABUNDSET in "EMISSIVITY": the abundance set the
//   metallicity axis refers to.
#include <string>

#include "icmscope/emission/spectral_model.hpp"

namespace icmscope::io {

// Reads and validates a table; InputError naming the file, HDU and column.
emission::EmissivityGrid read_emissivity_table(const std::string& path);

// Writes a grid in the same layout (temporary name, then rename).
void write_emissivity_table(const std::string& path, const emission::EmissivityGrid& grid,
                            const std::string& abundance_set = "");

}  // namespace icmscope::io
