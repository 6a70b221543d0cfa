// k-nearest-neighbour support radii: see include/icmscope/cells/neighbour_support.hpp.
#include "icmscope/cells/neighbour_support.hpp"

#include <nanoflann.hpp>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <limits>
#include <numeric>
#include <string>

#include "icmscope/core/blocked.hpp"
#include "icmscope/core/errors.hpp"

namespace icmscope::cells {

namespace {

constexpr std::size_t kLeafSize = 16;  // points per k-d tree leaf (8-32 perform alike for k ~ 48)

// Points packed as xyz triplets (one cache line holds five points).
struct PackedCloud {
  std::vector<float> xyz;
  std::size_t kdtree_get_point_count() const { return xyz.size() / 3; }
  float kdtree_get_pt(std::uint32_t i, std::size_t d) const { return xyz[3 * static_cast<std::size_t>(i) + d]; }
  template <class BBox>
  bool kdtree_get_bbox(BBox&) const {
    return false;
  }
};

using Tree = nanoflann::KDTreeSingleIndexAdaptor<nanoflann::L2_Simple_Adaptor<float, PackedCloud, float, std::uint32_t>,
                                                 PackedCloud, 3, std::uint32_t>;

// nanoflann result set that keeps only the k smallest squared distances, in
// a max-heap (replace-top on insertion: O(log k) instead of the O(k) sorted
// insertion of nanoflann::KNNResultSet), and accepts an upper bound on the
// k-th distance so that the search prunes from the start. The k-th smallest
// distance it returns does not depend on the bound as long as at least k
// points lie strictly inside it (checked by full()).
class KthDistance {
 public:
  using DistanceType = float;
  KthDistance(float* heap, std::size_t k, float bound_d2) : heap_(heap), k_(k), bound_(bound_d2) {}
  bool full() const { return n_ == k_; }
  std::size_t size() const { return n_; }
  float worstDist() const { return n_ < k_ ? bound_ : heap_[0]; }
  // nanoflann compares against worstDist() as it stood at the start of a
  // leaf, so d2 may already exceed the current k-th distance: test again.
  bool addPoint(float d2, std::uint32_t) {
    if (n_ < k_) {
      heap_[n_++] = d2;
      if (n_ == k_) std::make_heap(heap_, heap_ + k_);
      return true;
    }
    if (!(d2 < heap_[0])) return true;
    std::size_t i = 0;
    for (;;) {
      const std::size_t l = 2 * i + 1;
      if (l >= k_) break;
      const std::size_t m = (l + 1 < k_ && heap_[l + 1] > heap_[l]) ? l + 1 : l;
      if (!(heap_[m] > d2)) break;
      heap_[i] = heap_[m];
      i = m;
    }
    heap_[i] = d2;
    return true;
  }
  float kth() const { return heap_[0]; }

 private:
  float* heap_;
  std::size_t k_;
  std::size_t n_ = 0;
  float bound_;
};

// Interleave the low 21 bits of v with two zero bits between each.
inline std::uint64_t spread3(std::uint64_t v) {
  v &= 0x1fffff;
  v = (v | v << 32) & 0x1f00000000ffffULL;
  v = (v | v << 16) & 0x1f0000ff0000ffULL;
  v = (v | v << 8) & 0x100f00f00f00f00fULL;
  v = (v | v << 4) & 0x10c30c30c30c30c3ULL;
  v = (v | v << 2) & 0x1249249249249249ULL;
  return v;
}

}  // namespace

std::vector<float> neighbour_support_kpc(const std::vector<float>& x, const std::vector<float>& y,
                                         const std::vector<float>& z, int k, int threads) {
  const std::size_t n = x.size();
  if (y.size() != n || z.size() != n)
    throw core::DomainError("neighbour_support_kpc: x, y, z must have the same length");
  if (k < 1 || static_cast<std::size_t>(k) > n)
    throw core::DomainError("neighbour_support_kpc: k = " + std::to_string(k) + " must be in [1, " +
                            std::to_string(n) + "] (the number of particles)");
  if (n > 0xffffffffULL) throw core::DomainError("neighbour_support_kpc: more than 2^32 - 1 particles");
  if (threads <= 0) threads = core::max_threads();
  const std::ptrdiff_t nn = static_cast<std::ptrdiff_t>(n);

  // Morton order inside the bounding box.
  float lo[3] = {x[0], y[0], z[0]}, hi[3] = {x[0], y[0], z[0]};
  for (std::size_t i = 0; i < n; ++i) {
    lo[0] = std::min(lo[0], x[i]), hi[0] = std::max(hi[0], x[i]);
    lo[1] = std::min(lo[1], y[i]), hi[1] = std::max(hi[1], y[i]);
    lo[2] = std::min(lo[2], z[i]), hi[2] = std::max(hi[2], z[i]);
  }
  const double span = std::max({double(hi[0]) - lo[0], double(hi[1]) - lo[1], double(hi[2]) - lo[2], 1e-30});
  const double q = 2097151.0 / span;
  std::vector<std::uint64_t> key(n);
#pragma omp parallel for num_threads(threads) schedule(static)
  for (std::ptrdiff_t i = 0; i < nn; ++i) {
    const auto qx = static_cast<std::uint64_t>(std::min(2097151.0, (double(x[i]) - lo[0]) * q));
    const auto qy = static_cast<std::uint64_t>(std::min(2097151.0, (double(y[i]) - lo[1]) * q));
    const auto qz = static_cast<std::uint64_t>(std::min(2097151.0, (double(z[i]) - lo[2]) * q));
    key[i] = spread3(qx) | spread3(qy) << 1 | spread3(qz) << 2;
  }
  std::vector<std::uint32_t> order(n);
  std::iota(order.begin(), order.end(), 0u);
  std::sort(order.begin(), order.end(), [&](std::uint32_t a, std::uint32_t b) {
    return key[a] < key[b] || (key[a] == key[b] && a < b);
  });
  std::vector<std::uint64_t>().swap(key);

  PackedCloud cloud;
  cloud.xyz.resize(3 * n);
#pragma omp parallel for num_threads(threads) schedule(static)
  for (std::ptrdiff_t j = 0; j < nn; ++j) {
    const std::uint32_t i = order[j];
    cloud.xyz[3 * j] = x[i];
    cloud.xyz[3 * j + 1] = y[i];
    cloud.xyz[3 * j + 2] = z[i];
  }
  Tree tree(3, cloud, nanoflann::KDTreeSingleIndexAdaptorParams(kLeafSize));

  std::vector<float> support(n);
  const std::size_t kk = static_cast<std::size_t>(k);
  // Queries in Morton order. The previous query of the same thread (at
  // distance delta, support H_prev) bounds this one: its k neighbours lie
  // within H_prev + delta, so H <= H_prev + delta (a 1e-5 margin covers the
  // float rounding). The bound only prunes the search; the result is exact
  // and independent of which query came before, hence of the threads.
  constexpr float kHuge = std::numeric_limits<float>::max();
#pragma omp parallel num_threads(threads)
  {
    std::vector<float> heap(kk);
    nanoflann::SearchParams params;
    params.sorted = false;
    const float* prev = nullptr;
    double prev_h = 0.0;
#pragma omp for schedule(dynamic, 4096)
    for (std::ptrdiff_t j = 0; j < nn; ++j) {
      const float* q = &cloud.xyz[3 * static_cast<std::size_t>(j)];
      float bound = kHuge;
      if (prev) {
        const double dx = double(q[0]) - prev[0], dy = double(q[1]) - prev[1], dz = double(q[2]) - prev[2];
        const double b = (prev_h + std::sqrt(dx * dx + dy * dy + dz * dz)) * (1.0 + 1e-5) + 1e-30;
        if (b * b < double(kHuge)) bound = static_cast<float>(b * b);
      }
      KthDistance result(heap.data(), kk, bound);
      tree.findNeighbors(result, q, params);
      if (!result.full()) {  // the bound was too tight (cannot happen beyond rounding): search unbounded
        result = KthDistance(heap.data(), kk, kHuge);
        tree.findNeighbors(result, q, params);
      }
      const float h = std::sqrt(result.kth());
      support[order[j]] = h;
      prev = q;
      prev_h = h;
    }
  }
  return support;
}

}  // namespace icmscope::cells
