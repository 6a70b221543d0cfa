#pragma once
// Kernel deposit of gas cells onto an image-plane grid: K weight channels at
// once (count rate, surface brightness, emission measure, sum w T, sum w,
// mass, ...), each cell's pixel weights computed once and shared by the
// channels.
//
// Grid convention: pixel (ix, iy) covers
//   u in [u_min + ix p, u_min + (ix+1) p),  v in [v_min + iy p, v_min + (iy+1) p),
// with u_min = u0 - nx p / 2, v_min = v0 - ny p / 2 (p = pixel_kpc). Pixel
// ix = 0 is at the LOWEST u, iy = 0 at the lowest v; maps are row-major,
// index iy * nx + ix, as core::Image (FITS pixel (1,1) = (ix, iy) = (0, 0)).
//
// Deposit (Price 2007, PASA 24, 159, for tabulated column kernels): each
// cell's pixel weights are renormalised to sum to exactly 1 over its FULL
// footprint (in or out of the field), so each cell deposits exactly its
// weight minus the part of its footprint outside the field. With support
// radius h = H / p in pixels:
//   - footprint inside one pixel (or DepositKernel::Point, or H = 0): the
//     whole weight goes to the cell's pixel;
//   - h < 1: exact pixel integrals over the 3 x 3 pixels around the centre
//     pixel (the footprint crosses at most two pixel lines per axis), in a
//     short branch-free computation;
//   - 1 <= h < exact_below_pixels: exact pixel integrals of F, from double
//     differences of the tabulated cumulative integral Q(X, Y) (kernel.hpp);
//   - larger h: F sampled at pixel centres with the second-order pixel-
//     average correction F + LapF / (24 h^2) (midpoint rule of the square
//     pixel, error O(h^-4)), from a linearly interpolated table in S^2 (no
//     sqrt).
// Against brute-force pixel integrals of F the deposited pixel values are
// within ~2e-4 of the peak pixel for h < 10 (exact path; the limit is the
// 128^2 cumulative table) and within ~2e-4 (h = 10) falling as h^-4 (~5e-5 at
// h = 15, ~1e-5 for h >= 30, the limit of the table interpolation) for centre
// sampling; tests/physics/test_projector.cpp.
// Footprints too large to sum pixel by pixel (bounding box over
// min(max(4 nx ny, 2^22), 2^26) pixels, i.e. much larger than the field) are
// normalised with the table's continuum integral instead (the lattice sum
// differs from it by ~1e-9, so such a cell's deposit is conserved to ~1e-8).
//
// Determinism and threads: the field is cut into square tiles (64 pixels by
// default); cells are binned (stable counting sort) into every tile their
// footprint overlaps, and each tile is deposited by one thread, in cell
// order, into a private tile buffer that is then added to the maps (each map
// pixel belongs to one tile). Every pixel therefore receives its
// contributions in an order fixed by the data alone: the maps are bitwise
// identical for any thread count. This replaces core::blocked_accumulate,
// whose fixed blocks would each need a full nx * ny * K buffer (16 x 8 MiB
// per channel at 1024^2, zeroed and summed every call) and would scatter
// randomly over the whole map; tiles keep the accumulation in cache and need
// no per-block maps. Cells are processed in chunks whose size depends only on
// the data and the settings, bounding the working memory (about chunk_bytes
// of tile-sorted copies, plus one tile buffer per thread) independently of
// the number of cells.
#include <cstddef>
#include <cstdint>
#include <vector>

namespace icmscope::projection {

struct ProjectionGrid {
  int nx = 0, ny = 0;
  double pixel_kpc = 1.0;              // pixel side (kpc, in the image plane)
  double u0_kpc = 0.0, v0_kpc = 0.0;   // plane coordinates of the field centre
  double u_min() const { return u0_kpc - 0.5 * nx * pixel_kpc; }
  double v_min() const { return v0_kpc - 0.5 * ny * pixel_kpc; }
  std::size_t pixels() const { return static_cast<std::size_t>(nx) * static_cast<std::size_t>(ny); }
};

enum class DepositKernel { Point, CubicSpline, WendlandC2 };

const char* deposit_kernel_name(DepositKernel k);

// A non-owning view of one per-cell weight array, float or double.
class WeightChannel {
 public:
  WeightChannel() = default;
  WeightChannel(const double* p) : d_(p) {}  // NOLINT: implicit by design
  WeightChannel(const float* p) : f_(p) {}   // NOLINT
  WeightChannel(const std::vector<double>& v) : d_(v.data()) {}  // NOLINT
  WeightChannel(const std::vector<float>& v) : f_(v.data()) {}   // NOLINT
  bool valid() const { return d_ != nullptr || f_ != nullptr; }
  double operator[](std::size_t i) const { return d_ ? d_[i] : static_cast<double>(f_[i]); }
  const double* doubles() const { return d_; }
  const float* floats() const { return f_; }

 private:
  const double* d_ = nullptr;
  const float* f_ = nullptr;
};

// The cells as seen in the image plane (non-owning).
struct PlaneCells {
  std::size_t n = 0;
  const float* u = nullptr;            // kpc
  const float* v = nullptr;            // kpc
  const float* support = nullptr;      // compact support radius H (kpc); unused for Point
  const std::uint8_t* select = nullptr;  // optional: cells with select[i] == 0 are skipped
};

// Accuracy and performance knobs (all results are independent of `threads`).
struct ProjectorSettings {
  DepositKernel kernel = DepositKernel::CubicSpline;
  double exact_below_pixels = 10.0;  // support radius (pixels, in [4, 256]) below which pixel integrals are exact
  int tile_pixels = 0;               // tile side; 0 = 64, halved until there are >= 16 tiles (min 16)
  std::size_t chunk_bytes = std::size_t{32} << 20;  // budget for tile-sorted cell copies per chunk
  int threads = 0;                   // 0 = omp_get_max_threads()
};

// What the deposit did (for benchmarks and logs).
struct ProjectionStats {
  std::size_t cells_in = 0;           // cells offered (after selection)
  std::size_t cells_deposited = 0;    // cells with a footprint touching the field
  std::size_t cells_point = 0;        // deposited whole into one pixel
  std::size_t cells_stencil = 0;      // support radius < 1 pixel: exact 3 x 3 pixel integrals
  std::size_t cells_exact = 0;        // exact pixel integrals
  std::size_t cells_sampled = 0;      // centre sampling with Laplacian correction
  std::size_t cells_huge = 0;         // normalised by the continuum integral
  std::size_t pixel_updates = 0;      // (cell, pixel) pairs written, per channel set
  std::size_t chunks = 0;
  int tile_pixels = 0;
  std::size_t work_bytes = 0;         // peak working memory of the deposit (excluding the maps)
};

// Deposit K = channels.size() weight channels; returns K maps of nx*ny
// doubles (row-major, iy * nx + ix). Channel values are in any unit; map
// pixel values are per pixel (sum of deposited weights), not per area.
// DomainError on a bad grid, missing arrays, non-finite u/v or negative or
// non-finite support of a selected cell.
std::vector<std::vector<double>> project(const ProjectionGrid& grid, const PlaneCells& cells,
                                         const std::vector<WeightChannel>& channels,
                                         const ProjectorSettings& settings = {},
                                         ProjectionStats* stats = nullptr);

// The same deposit added onto existing maps (K maps of nx*ny doubles, as
// returned by project()): project() is project_add() onto zeroed maps. Used to
// accumulate cells that arrive in pieces (chunked reading): the result depends
// only on how the cells are cut into calls, never on the thread count, so a
// caller that cuts at fixed cell counts gets the same maps however it reads.
// DomainError also when the maps do not match the channels and the grid.
void project_add(const ProjectionGrid& grid, const PlaneCells& cells, const std::vector<WeightChannel>& channels,
                 std::vector<std::vector<double>>& maps, const ProjectorSettings& settings = {},
                 ProjectionStats* stats = nullptr);

}  // namespace icmscope::projection
