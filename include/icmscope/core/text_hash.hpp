#pragma once
// FNV-1a 64-bit hash of a text and its 16-hex-digit form: the configuration
// hashes recorded beside outputs (resolved settings, input-file contents).
// Not cryptographic; stable across platforms and program runs.
#include <cstdint>
#include <cstdio>
#include <string>

namespace icmscope::core {

inline constexpr std::uint64_t kFnvOffset = 1469598103934665603ULL;

// Continues a hash `h` over the bytes of `s` (start from kFnvOffset).
inline std::uint64_t fnv1a(const std::string& s, std::uint64_t h = kFnvOffset) {
  for (unsigned char c : s) {
    h ^= c;
    h *= 1099511628211ULL;
  }
  return h;
}

inline std::string hex16(std::uint64_t h) {
  char b[24];
  std::snprintf(b, sizeof b, "%016llx", static_cast<unsigned long long>(h));
  return b;
}

}  // namespace icmscope::core
