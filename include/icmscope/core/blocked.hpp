#pragma once
// Deterministic parallel accumulation. Work is cut into a fixed number of
// blocks that does not depend on the thread count; each block accumulates into
// its own zeroed buffer; buffers are added to the total serially in block
// order, in double precision. Blocks run in waves of at most `threads` so that
// only `threads` buffers are alive at once. The result is bitwise identical for
// any thread count.
#include <algorithm>
#include <cstddef>
#include <vector>

#ifdef _OPENMP
#include <omp.h>
#endif

namespace icmscope::core {

inline constexpr int kDefaultBlocks = 16;

struct BlockRange {
  std::size_t begin = 0;
  std::size_t end = 0;
};

// The b-th of nblocks contiguous ranges covering [0, n).
inline BlockRange block_range(std::size_t n, int nblocks, int b) {
  const std::size_t nb = static_cast<std::size_t>(nblocks);
  const std::size_t bb = static_cast<std::size_t>(b);
  return {n * bb / nb, n * (bb + 1) / nb};
}

inline int max_threads() {
#ifdef _OPENMP
  return omp_get_max_threads();
#else
  return 1;
#endif
}

// fn(block_index, BlockRange, double* buffer) accumulates one block into a
// zeroed buffer of length buffer_len; total receives the ordered sum.
template <typename Fn>
void blocked_accumulate(std::size_t n_items, int nblocks, std::size_t buffer_len,
                        std::vector<double>& total, Fn&& fn, int threads = 0) {
  if (threads <= 0) threads = max_threads();
  threads = std::max(1, std::min(threads, nblocks));
  total.assign(buffer_len, 0.0);
  std::vector<std::vector<double>> bufs(static_cast<std::size_t>(threads));
  for (int wave = 0; wave < nblocks; wave += threads) {
    const int nw = std::min(threads, nblocks - wave);
#pragma omp parallel for num_threads(nw) schedule(static, 1) if (nw > 1)
    for (int k = 0; k < nw; ++k) {
      auto& buf = bufs[static_cast<std::size_t>(k)];
      buf.assign(buffer_len, 0.0);
      fn(wave + k, block_range(n_items, nblocks, wave + k), buf.data());
    }
    for (int k = 0; k < nw; ++k) {
      const double* b = bufs[static_cast<std::size_t>(k)].data();
      double* t = total.data();
#pragma omp parallel for num_threads(threads) schedule(static) if (threads > 1 && buffer_len > 65536)
      for (std::ptrdiff_t i = 0; i < static_cast<std::ptrdiff_t>(buffer_len); ++i) t[i] += b[i];
    }
  }
}

}  // namespace icmscope::core
