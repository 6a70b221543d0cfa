#pragma once
// OGIP response files (HEASARC CAL/GEN/92-002 and 92-002a):
//   ARF: extension SPECRESP, columns ENERG_LO, ENERG_HI (keV), SPECRESP (cm^2);
//   RMF: extension MATRIX or SPECRESP MATRIX (chosen by EXTVER when several),
//        columns ENERG_LO, ENERG_HI, N_GRP, F_CHAN, N_CHAN, MATRIX (F_CHAN,
//        N_CHAN, MATRIX scalar, fixed vector or variable length; rows with
//        N_GRP = 0 allowed; fixed vectors zero-padded, only sum N_CHAN values
//        of MATRIX used), first channel = TLMIN of F_CHAN (else the first
//        CHANNEL of EBOUNDS, else 1); EBOUNDS extension CHANNEL, E_MIN, E_MAX.
// Errors are core::InputError naming the file, the extension and the column.
#include <string>

#include "icmscope/instrument/effective_area.hpp"
#include "icmscope/instrument/response_matrix.hpp"

namespace icmscope::io {

instrument::EffectiveArea read_arf(const std::string& path);

// extver 0: the first MATRIX / SPECRESP MATRIX extension found.
instrument::ResponseMatrix read_rmf(const std::string& path, int extver = 0);

}  // namespace icmscope::io
