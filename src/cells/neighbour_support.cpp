// k-nearest-neighbour support radii: see include/icmscope/cells/neighbour_support.hpp.
#include "icmscope/cells/neighbour_support.hpp"

#include <nanoflann.hpp>

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <numeric>
#include <string>

#include "icmscope/core/blocked.hpp"
#include "icmscope/core/errors.hpp"

namespace icmscope::cells {

namespace {

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
    const auto qx = static_cast<std::uint64_t>((x[i] - lo[0]) * q);
    const auto qy = static_cast<std::uint64_t>((y[i] - lo[1]) * q);
    const auto qz = static_cast<std::uint64_t>((z[i] - lo[2]) * q);
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
  Tree tree(3, cloud, nanoflann::KDTreeSingleIndexAdaptorParams(16));

  std::vector<float> support(n);
  const std::size_t kk = static_cast<std::size_t>(k);
#pragma omp parallel num_threads(threads)
  {
    std::vector<std::uint32_t> idx(kk);
    std::vector<float> d2(kk);
    nanoflann::SearchParams params;
    params.sorted = false;
#pragma omp for schedule(dynamic, 4096)
    for (std::ptrdiff_t j = 0; j < nn; ++j) {
      nanoflann::KNNResultSet<float, std::uint32_t, std::size_t> result(kk);
      result.init(idx.data(), d2.data());
      tree.findNeighbors(result, &cloud.xyz[3 * static_cast<std::size_t>(j)], params);
      // The result set is kept sorted by insertion: d2[k-1] is the largest.
      support[order[j]] = std::sqrt(d2[kk - 1]);
    }
  }
  return support;
}

}  // namespace icmscope::cells
