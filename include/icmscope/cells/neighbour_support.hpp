#pragma once
// Kernel support radii from the k nearest neighbours, for particle sets that
// come without smoothing lengths (analytic models, point samples).
//
// H_i = distance from particle i to its k-th nearest particle, counting
// particle i itself as the first (so k - 1 others lie strictly inside H_i,
// barring ties): the adaptive-smoothing convention of SPH codes, which fix
// the number of neighbours inside the kernel support (common practice;
// k ~ 32-64 for 3-D kernels with compact support).
//
// Exact k-d tree search (nanoflann 1.4, single-index adaptor) on the float
// positions, the points reordered along a Morton curve for memory locality;
// the squared distances are those of nanoflann's L2 metric in float
// ((dx^2 + dy^2) + dz^2). Each query keeps the k smallest distances in a heap
// and starts from the bound H_prev + delta given by the previous query of its
// thread (pruning only: the result is exact). Queries run in parallel with
// OpenMP; each result depends only on the positions, so the output is
// identical for any thread count.
#include <cstddef>
#include <vector>

namespace icmscope::cells {

// x, y, z: finite positions [kpc], all of length n; k >= 1 and k <= n (DomainError
// otherwise). threads <= 0: the OpenMP default. Returns H [kpc] per particle.
std::vector<float> neighbour_support_kpc(const std::vector<float>& x, const std::vector<float>& y,
                                         const std::vector<float>& z, int k, int threads = 0);

}  // namespace icmscope::cells
