// libFuzzer driver: FITS image reader with header and WCS.
// The entry (fuzz_entries.hpp) accepts success or a typed core::Error; any
// other outcome aborts the run. See scripts/fuzz.sh.
#include <cstddef>
#include <cstdint>

#include "fuzz_entries.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  icmscope::fuzz::fits_image(data, size);
  return 0;
}
