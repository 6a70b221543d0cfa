#pragma once
// Reading the keywords of one FITS header (any HDU type, including an empty
// primary HDU), e.g. the run keywords `project` writes into the primary
// header of a maps file.
#include <map>
#include <optional>
#include <string>

namespace icmscope::io {

struct FitsHeader {
  std::string file;
  int hdu_index = 0;                         // 0-based (0 = primary)
  std::map<std::string, std::string> values;  // upper-case keyword -> value text (string quotes removed)

  bool has(const std::string& key) const;
  // The value text; InputError naming the file, HDU and keyword when absent.
  std::string text(const std::string& key) const;
  // A numeric value; InputError when absent or not a number.
  double number(const std::string& key) const;
  std::optional<double> maybe_number(const std::string& key) const;
};

// Keywords of HDU hdu_index (0-based). InputError naming the file when it
// cannot be read or has fewer HDUs. COMMENT / HISTORY cards are skipped;
// long strings (CONTINUE) are joined.
FitsHeader read_fits_header(const std::string& path, int hdu_index = 0);

}  // namespace icmscope::io
