#pragma once
// Block random streams: a reproducible generator per (seed, stream id), so that
// results do not depend on the thread count. xoshiro256** (Blackman & Vigna
// 2018) seeded through splitmix64; satisfies UniformRandomBitGenerator, so the
// <random> distributions can be used with it.
#include <cstdint>
#include <limits>

namespace icmscope::core {

inline std::uint64_t splitmix64(std::uint64_t& state) {
  std::uint64_t z = (state += 0x9e3779b97f4a7c15ULL);
  z = (z ^ (z >> 30)) * 0xbf58476d1ce4e5b9ULL;
  z = (z ^ (z >> 27)) * 0x94d049bb133111ebULL;
  return z ^ (z >> 31);
}

class RandomStream {
 public:
  using result_type = std::uint64_t;
  // seed: the user's seed; stream: a block / target / realisation id.
  explicit RandomStream(std::uint64_t seed = 0, std::uint64_t stream = 0) {
    std::uint64_t sm = seed ^ (0xd1b54a32d192ed03ULL * (stream + 1));
    for (auto& w : s_) w = splitmix64(sm);
  }
  static constexpr result_type min() { return 0; }
  static constexpr result_type max() { return std::numeric_limits<result_type>::max(); }
  result_type operator()() {
    const std::uint64_t result = rotl(s_[1] * 5, 7) * 9;
    const std::uint64_t t = s_[1] << 17;
    s_[2] ^= s_[0];
    s_[3] ^= s_[1];
    s_[1] ^= s_[2];
    s_[0] ^= s_[3];
    s_[2] ^= t;
    s_[3] = rotl(s_[3], 45);
    return result;
  }
  // Uniform double in [0, 1) with 53 random bits.
  double uniform() { return static_cast<double>((*this)() >> 11) * 0x1.0p-53; }

 private:
  static std::uint64_t rotl(std::uint64_t x, int k) { return (x << k) | (x >> (64 - k)); }
  std::uint64_t s_[4];
};

}  // namespace icmscope::core
