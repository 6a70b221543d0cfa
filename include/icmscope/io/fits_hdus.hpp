#pragma once
// What a FITS file holds: a list of its HDUs (index, EXTNAME, type, image
// shape), so that a reader can pick images by name (io/fits_header.hpp reads
// the keywords of any one HDU).
#include <string>
#include <vector>

namespace icmscope::io {

struct FitsHduSummary {
  int index = 0;           // 0-based (0 = primary)
  std::string extname;     // "" if none
  bool is_image = false;   // IMAGE HDU (the primary is one)
  int naxis = 0;
  long long nx = 0, ny = 0;  // NAXIS1, NAXIS2 (0 when naxis < 2)
};

// Throws core::InputError naming the file when it is missing or not FITS.
std::vector<FitsHduSummary> list_fits_hdus(const std::string& path);

// The first HDU whose EXTNAME equals `name` (case-insensitive), or -1.
int find_hdu(const std::vector<FitsHduSummary>& hdus, const std::string& name);

}  // namespace icmscope::io
