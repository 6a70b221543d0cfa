// libFuzzer driver: OGIP ARF / RMF readers.
// The entry (fuzz_entries.hpp) accepts success or a typed core::Error; any
// other outcome aborts the run. See scripts/fuzz.sh.
#include <cstddef>
#include <cstdint>

#include "fuzz_entries.hpp"

extern "C" int LLVMFuzzerTestOneInput(const std::uint8_t* data, std::size_t size) {
  icmscope::fuzz::ogip_response(data, size);
  return 0;
}
