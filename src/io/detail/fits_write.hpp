#pragma once
// Shared pieces of the FITS writers: checked user keywords, HISTORY, the
// standard DATE / CREATOR pair, the checksum.
#include <fitsio.h>

#include <string>
#include <vector>

#include "icmscope/io/fits_keywords.hpp"

namespace icmscope::io::detail {

// Where keywords are going, for messages.
struct HduContext {
  std::string file;  // the final path the user asked for
  std::string hdu;   // "PRIMARY", an EXTNAME or an index
};

// Throws core::DomainError when a key is malformed, reserved (structure,
// WCS, BUNIT, checksums) or repeated, or a real value is not finite.
void check_keywords(const std::vector<FitsKeyword>& keys, const std::string& where, bool image_hdu);

// DATE (UTC now) and CREATOR ("icmscope <version>").
void write_standard_keys(fitsfile* f, const HduContext& ctx);
// Writes (fits_update_key) each keyword; OutputError on a CFITSIO status.
void write_keywords(fitsfile* f, const std::vector<FitsKeyword>& keys, const HduContext& ctx);
void write_history(fitsfile* f, const std::vector<std::string>& lines, const HduContext& ctx);
// DATASUM and CHECKSUM; call last on each HDU.
void write_checksum(fitsfile* f, const HduContext& ctx);

// Upper-cased key.
std::string fits_upper(const std::string& s);

}  // namespace icmscope::io::detail
