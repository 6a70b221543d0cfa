#pragma once
// Private helper: sorting doubles by a monotone 32-bit key with a stable LSD
// radix sort (11/11/10-bit digits, trivial passes skipped), then an insertion
// pass that orders values sharing a key, so the result is exactly sorted.
#include <algorithm>
#include <array>
#include <cstdint>
#include <cstring>
#include <vector>

namespace icmscope::morphology::detail {

// key(x) must be non-decreasing in x.
template <typename Key>
void sort_by_key32(std::vector<double>& v, std::vector<double>& tmp, Key key) {
  const std::size_t n = v.size();
  if (n < 512) {
    std::sort(v.begin(), v.end());
    return;
  }
  tmp.resize(n);
  std::array<std::uint32_t, 2048> count;
  double* src = v.data();
  double* dst = tmp.data();
  const int shifts[3] = {0, 11, 22};
  for (int pass = 0; pass < 3; ++pass) {
    const int sh = shifts[pass];
    count.fill(0u);
    for (std::size_t i = 0; i < n; ++i) ++count[(key(src[i]) >> sh) & 0x7FFu];
    std::uint32_t sum = 0;
    bool trivial = false;
    for (auto& c : count) {
      const std::uint32_t t = c;
      if (t == n) trivial = true;
      c = sum;
      sum += t;
    }
    if (trivial) continue;
    for (std::size_t i = 0; i < n; ++i) dst[count[(key(src[i]) >> sh) & 0x7FFu]++] = src[i];
    std::swap(src, dst);
  }
  if (src != v.data()) std::memcpy(v.data(), src, n * sizeof(double));
  // Equal keys may hold unequal values: insertion pass (only local inversions).
  for (std::size_t i = 1; i < n; ++i) {
    const double x = v[i];
    std::size_t j = i;
    while (j > 0 && v[j - 1] > x) {
      v[j] = v[j - 1];
      --j;
    }
    v[j] = x;
  }
}

// Non-negative doubles: the bits of the nearest float are monotone.
inline void sort_nonnegative(std::vector<double>& v, std::vector<double>& tmp) {
  sort_by_key32(v, tmp, [](double x) {
    const float f = static_cast<float>(x);
    std::uint32_t b;
    std::memcpy(&b, &f, 4);
    return b;
  });
}

// Values in [0, 1).
inline void sort_unit_interval(std::vector<double>& v, std::vector<double>& tmp) {
  sort_by_key32(v, tmp, [](double x) { return static_cast<std::uint32_t>(x * 4294967296.0); });
}

}  // namespace icmscope::morphology::detail
