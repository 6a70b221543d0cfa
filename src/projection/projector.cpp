#include "icmscope/projection/projector.hpp"

#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <string>

#include "icmscope/core/blocked.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/projection/kernel.hpp"

#ifdef _OPENMP
#include <omp.h>
#endif

namespace icmscope::projection {

const char* deposit_kernel_name(DepositKernel k) {
  switch (k) {
    case DepositKernel::Point: return "point";
    case DepositKernel::CubicSpline: return "cubic_spline";
    case DepositKernel::WendlandC2: return "wendland_c2";
  }
  return "?";
}

namespace {

using core::DomainError;

constexpr int kFast = ColumnKernel::kFastBins;
constexpr int kQ = ColumnKernel::kQuadrantCells;
constexpr std::size_t kQW = static_cast<std::size_t>(kQ) + 1;  // Q table row length

// Cells whose footprint bounding box has at most this many pixels are
// normalised by every tile they touch from their full weight block (cheap,
// no separate pass); larger ones get a normalisation pass first.
constexpr long long kSelfArea = 576;


// Everything the per-cell code needs, fixed for one call.
struct Setup {
  int nx = 0, ny = 0, T = 64, shift = 6, ntx = 0, nty = 0, ntiles = 0;  // T = 1 << shift
  double umin = 0.0, vmin = 0.0, inv_pix = 1.0;
  bool point_only = false;
  double exact_below = 10.0;
  double huge_area = 0.0;  // bounding-box area (pixels) above which the norm is analytic
  const ColumnKernel* ck = nullptr;
  int K = 1;
};

enum : int { kSkip = 0, kPoint = 1, kStencil = 2, kKernel = 3, kBad = -1 };

// Per-cell geometry in pixel units (origin at the field's lower-left corner).
struct Geo {  // filled by classify as far as the class needs (no initialisers: hot loop)
  double uc, vc, hp;
  long long x0, x1, y0, y1;  // full footprint bounding box (inclusive), kKernel
  int tx0, tx1, ty0, ty1;    // overlapped tiles (inclusive), kStencil / kKernel
  int px, py;                // pixel, kPoint / kStencil
};

// floor / ceil without libm calls (the baseline x86-64 ISA has no roundsd,
// so std::floor is a function call): truncate, then correct.
inline long long floor_ll(double x) {
  constexpr double kLim = 1e15;  // far beyond any field; keeps the cast defined
  x = x < -kLim ? -kLim : (x > kLim ? kLim : x);
  const long long t = static_cast<long long>(x);
  return t - (static_cast<double>(t) > x ? 1 : 0);
}
inline long long ceil_ll(double x) {
  constexpr double kLim = 1e15;
  x = x < -kLim ? -kLim : (x > kLim ? kLim : x);
  const long long t = static_cast<long long>(x);
  return t + (static_cast<double>(t) < x ? 1 : 0);
}

#if defined(__GNUC__)
#define ICMSCOPE_ALWAYS_INLINE inline __attribute__((always_inline))
#else
#define ICMSCOPE_ALWAYS_INLINE inline
#endif

// Classification. Point-like (the footprint lies inside one pixel, or
// H = 0): the whole weight goes to pixel (px, py). Stencil (support radius
// h < 1 pixel): 3 x 3 pixels around (px, py). Kernel (h >= 1): bounding box
// [x0, x1] x [y0, y1]. The same arithmetic runs in every pass, so a cell is
// always classified, binned and deposited alike.
ICMSCOPE_ALWAYS_INLINE long long ifloor(double x) {  // |x| < 2^62
  const long long t = static_cast<long long>(x);
  return t - (static_cast<double>(t) > x ? 1 : 0);
}

ICMSCOPE_ALWAYS_INLINE void tiles_of(const Setup& S, long long cx0, long long cx1, long long cy0, long long cy1,
                                     Geo& g) {
  g.tx0 = static_cast<int>(cx0) >> S.shift;
  g.tx1 = static_cast<int>(cx1) >> S.shift;
  g.ty0 = static_cast<int>(cy0) >> S.shift;
  g.ty1 = static_cast<int>(cy1) >> S.shift;
}

ICMSCOPE_ALWAYS_INLINE int classify(const Setup& S, float u, float v, float H, Geo& g) {
  const double x = (static_cast<double>(u) - S.umin) * S.inv_pix;
  const double y = (static_cast<double>(v) - S.vmin) * S.inv_pix;
  // Rounded to float once: entries store it as float, and every pass must
  // see the same footprint.
  const double hp =
      S.point_only ? 0.0 : static_cast<double>(static_cast<float>(static_cast<double>(H) * S.inv_pix));
  g.uc = x;
  g.vc = y;
  g.hp = hp;
  const long long nx = S.nx, ny = S.ny;
  // One test covers the common case (finite, moderate values); NaN fails it.
  if (hp >= 0.0 && std::fabs(x) + hp < 1e9 && std::fabs(y) + hp < 1e9) {
    const long long px = ifloor(x), py = ifloor(y);
    const double fx = x - static_cast<double>(px), fy = y - static_cast<double>(py);
    if (hp <= fx && fx + hp < 1.0 && hp <= fy && fy + hp < 1.0) {
      if (px < 0 || py < 0 || px >= nx || py >= ny) return kSkip;
      g.px = static_cast<int>(px);
      g.py = static_cast<int>(py);
      return kPoint;
    }
    if (hp < 1.0) {
      const long long cx0 = std::max(px - 1, 0LL), cx1 = std::min(px + 1, nx - 1);
      const long long cy0 = std::max(py - 1, 0LL), cy1 = std::min(py + 1, ny - 1);
      if (cx0 > cx1 || cy0 > cy1) return kSkip;
      tiles_of(S, cx0, cx1, cy0, cy1, g);
      g.px = static_cast<int>(px);
      g.py = static_cast<int>(py);
      return kStencil;
    }
    g.x0 = ifloor(x - hp);
    g.x1 = ifloor(x + hp);
    g.y0 = ifloor(y - hp);
    g.y1 = ifloor(y + hp);
  } else {
    if (!std::isfinite(u) || !std::isfinite(v)) return kBad;
    if (!S.point_only && (!(H >= 0.0f) || !std::isfinite(H))) return kBad;
    // |x| or |y| >= 1e9 - h pixels: only a huge footprint can reach the field.
    if (hp < 1.0) return kSkip;
    g.x0 = floor_ll(x - hp);
    g.x1 = floor_ll(x + hp);
    g.y0 = floor_ll(y - hp);
    g.y1 = floor_ll(y + hp);
  }
  const long long cx0 = std::max(g.x0, 0LL), cx1 = std::min(g.x1, nx - 1);
  const long long cy0 = std::max(g.y0, 0LL), cy1 = std::min(g.y1, ny - 1);
  if (cx0 > cx1 || cy0 > cy1) return kSkip;
  tiles_of(S, cx0, cx1, cy0, cy1, g);
  return kKernel;
}

// Per-cell code of pass 1 (64 bits): 0 = skip; top bits 01 = point
// (tile << 16 | tile-local pixel); 10 = small (h < 1) cell ((px+1) << 20 |
// (py+1)); 11 = kernel (re-classified in pass 2).
constexpr std::uint64_t kCodePoint = 1ull << 62, kCodeStencil = 2ull << 62, kCodeKernelK = 3ull << 62;
constexpr std::uint64_t kCodeKind = 3ull << 62;
// Point-only deposit uses 32-bit codes: tile << 16 | tile-local pixel, or skip.
constexpr std::uint32_t kCode32Skip = 0xFFFFFFFFu;

// Tile-sorted small cell (support radius h < 1 pixel): offset of the centre
// within its pixel, radius, and the centre pixel relative to the tile origin
// (may lie just outside the tile).
struct StencilEntry {
  float fx, fy, h;
  std::int16_t lx, ly;
};

// Tile-sorted copy of a kernel cell (its K weights are stored alongside).
struct KernelEntry {
  double uc, vc;   // centre (pixels)
  double norm;     // 1 / (sum of the weights over the full footprint); unused if kSelf
  float hp;        // support radius (pixels)
  std::uint32_t flags;
};
constexpr std::uint32_t kExact = 1u;  // exact pixel integrals (cumulative table)
constexpr std::uint32_t kSelf = 2u;   // small: each tile normalises from the full block
constexpr std::uint32_t kHuge = 4u;   // norm from the continuum integral

// Per-thread scratch, grown on demand (never per cell once large enough).
struct Scratch {
  std::vector<float> dxn, row;  // row generators
  std::vector<double> p0, p1;   // exact path: corner rows
  std::vector<int> xi;
  std::vector<double> xf, xs, xm;
  std::vector<float> block;     // self-normalised cells: full weight block
  std::vector<int> ra, rb;      // per block row: first / last column (relative), empty if ra > rb
  std::vector<double> tile;     // T * T * K accumulation buffer
  std::size_t updates = 0;
  void ensure_width(std::size_t w) {
    if (dxn.size() < w + 2) {
      dxn.resize(w + 2);
      row.resize(w + 2);
      p0.resize(w + 2);
      p1.resize(w + 2);
      xi.resize(w + 2);
      xf.resize(w + 2);
      xs.resize(w + 2);
      xm.resize(w + 2);
    }
  }
};

// ---- weight generators -------------------------------------------------------
// Both call fn(b, a0, a1, w) for every non-empty row b of the footprint within
// the pixel region [rx0, rx1] x [ry0, ry1], w[j] being the weight of pixel
// (a0 + j, b). The values depend only on the cell and the global pixel index,
// never on the region: the normalisation pass and the tile passes agree
// bitwise.

// Centre sampling of F + LapF / (24 h^2) from the fast S^2 table: the chord
// of each row (pixel centres inside the support) and the scaled squared
// distances. fn(b, a0, a1, dxn + a0 - rx0, dyn): S^2 kFast = dxn[j] + dyn.
template <typename Fn>
inline void sampled_chords(const KernelEntry& e, int rx0, int rx1, int ry0, int ry1, Scratch& s, Fn&& fn) {
  const double hp = e.hp;
  const double inv_h2 = 1.0 / (hp * hp);
  const double scale = inv_h2 * kFast;
  // Clip the region to the pixel centres inside the support's bounding box.
  rx0 = static_cast<int>(std::max<long long>(rx0, ceil_ll(e.uc - 0.5 - hp)));
  rx1 = static_cast<int>(std::min<long long>(rx1, floor_ll(e.uc - 0.5 + hp)));
  ry0 = static_cast<int>(std::max<long long>(ry0, ceil_ll(e.vc - 0.5 - hp)));
  ry1 = static_cast<int>(std::min<long long>(ry1, floor_ll(e.vc - 0.5 + hp)));
  if (rx0 > rx1 || ry0 > ry1) return;
  s.ensure_width(static_cast<std::size_t>(rx1 - rx0 + 1));
  float* dxn = s.dxn.data();
  for (int a = rx0; a <= rx1; ++a) {
    const double dx = a + 0.5 - e.uc;
    dxn[a - rx0] = static_cast<float>(dx * dx * scale);
  }
  for (int b = ry0; b <= ry1; ++b) {
    const double dy = b + 0.5 - e.vc;
    const double dy2 = dy * dy * inv_h2;
    if (dy2 >= 1.0) continue;
    const double hw = hp * std::sqrt(1.0 - dy2);
    const int a0 = static_cast<int>(std::max<long long>(rx0, ceil_ll(e.uc - 0.5 - hw)));
    const int a1 = static_cast<int>(std::min<long long>(rx1, floor_ll(e.uc - 0.5 + hw)));
    if (a0 > a1) continue;
    fn(b, a0, a1, static_cast<const float*>(dxn + (a0 - rx0)), static_cast<float>(dy2 * kFast));
  }
}

// The weight of one sampled pixel: F + c LapF at S^2 kFast = d, linearly
// interpolated. Within a chord d < kFast up to rounding, and the table's zero
// padding absorbs the rounding; the table keeps F + c LapF >= 0 for
// c <= 1 / ColumnKernel::kLapLimit (h >= 4 >= exact_below_pixels).
ICMSCOPE_ALWAYS_INLINE float sampled_weight(const float* tab, float d, float c) {
  const int i = static_cast<int>(d);
  const float t = d - static_cast<float>(i);
  const float* e = tab + 4 * i;
  return (e[0] + t * e[1]) + c * (e[2] + t * e[3]);
}

template <typename Fn>
inline void sampled_rows(const KernelEntry& e, int rx0, int rx1, int ry0, int ry1, const float* tab,
                         Scratch& s, Fn&& fn) {
  const float c = static_cast<float>(1.0 / (24.0 * static_cast<double>(e.hp) * e.hp));
  sampled_chords(e, rx0, rx1, ry0, ry1, s, [&](int b, int a0, int a1, const float* d, float dyn) {
    float* w = s.row.data();
    const int m = a1 - a0 + 1;
    for (int j = 0; j < m; ++j) w[j] = sampled_weight(tab, d[j] + dyn, c);
    fn(b, a0, a1, static_cast<const float*>(w));
  });
}

// Exact pixel integrals: double differences of P(X, Y) = sgn X sgn Y Q(|X|, |Y|)
// at the pixel corners, X, Y in units of H relative to the centre.
template <typename Fn>
inline void exact_rows(const KernelEntry& e, int rx0, int rx1, int ry0, int ry1, const double* Q, Scratch& s,
                       Fn&& fn) {
  const double hp = e.hp;
  const double inv = 1.0 / hp;
  rx0 = static_cast<int>(std::max<long long>(rx0, floor_ll(e.uc - hp)));
  rx1 = static_cast<int>(std::min<long long>(rx1, floor_ll(e.uc + hp)));
  ry0 = static_cast<int>(std::max<long long>(ry0, floor_ll(e.vc - hp)));
  ry1 = static_cast<int>(std::min<long long>(ry1, floor_ll(e.vc + hp)));
  if (rx0 > rx1 || ry0 > ry1) return;
  const int nc = rx1 - rx0 + 2;  // corner columns
  s.ensure_width(static_cast<std::size_t>(nc));
  int* xi = s.xi.data();
  double* xf = s.xf.data();
  double* xs = s.xs.data();
  double* xm = s.xm.data();  // sgn X * Q(|X|, 1): the corner value on the rows Y = +-1
  const double* top = Q + kQW * kQ;  // Q(x, 1) = Q(1, x) (symmetric table)
  for (int j = 0; j < nc; ++j) {
    double X = (rx0 + j - e.uc) * inv;
    xs[j] = X < 0.0 ? -1.0 : 1.0;
    X = std::min(std::fabs(X), 1.0) * kQ;
    const int i = std::min(static_cast<int>(X), kQ - 1);
    xi[j] = i;
    xf[j] = X - i;
    xm[j] = xs[j] * (top[i] + xf[j] * (top[i + 1] - top[i]));
  }
  auto corner_row = [&](int b, double* P) {
    double Y = (b - e.vc) * inv;
    const double sy = Y < 0.0 ? -1.0 : 1.0;
    if (std::fabs(Y) >= 1.0) {  // outside the support: P = sgn Y * sgn X Q(|X|, 1)
      for (int j = 0; j < nc; ++j) P[j] = sy * xm[j];
      return;
    }
    Y *= sy * kQ;
    const int iy = std::min(static_cast<int>(Y), kQ - 1);
    const double fy = Y - iy;
    const double* r0 = Q + static_cast<std::size_t>(iy) * kQW;
    const double* r1 = r0 + kQW;
    for (int j = 0; j < nc; ++j) {
      const int i = xi[j];
      const double f = xf[j];
      const double q0 = r0[i] + f * (r0[i + 1] - r0[i]);
      const double q1 = r1[i] + f * (r1[i + 1] - r1[i]);
      P[j] = sy * xs[j] * (q0 + fy * (q1 - q0));
    }
  };
  double* Pb = s.p0.data();
  double* Pt = s.p1.data();
  float* w = s.row.data();
  corner_row(ry0, Pb);
  for (int b = ry0; b <= ry1; ++b) {
    corner_row(b + 1, Pt);
    for (int j = 0; j + 1 < nc; ++j) {
      const double v = (Pt[j + 1] - Pt[j]) - (Pb[j + 1] - Pb[j]);
      w[j] = v > 0.0 ? static_cast<float>(v) : 0.0f;
    }
    fn(b, rx0, rx1, static_cast<const float*>(w));
    std::swap(Pb, Pt);
  }
}

inline double sum_floats(const float* w, int m) {
  double s0 = 0.0, s1 = 0.0, s2 = 0.0, s3 = 0.0;
  int j = 0;
  for (; j + 4 <= m; j += 4) {
    s0 += static_cast<double>(w[j]);
    s1 += static_cast<double>(w[j + 1]);
    s2 += static_cast<double>(w[j + 2]);
    s3 += static_cast<double>(w[j + 3]);
  }
  for (; j < m; ++j) s0 += static_cast<double>(w[j]);
  return (s0 + s1) + (s2 + s3);
}

template <typename Fn>
inline void kernel_rows(const Setup& S, const KernelEntry& e, int rx0, int rx1, int ry0, int ry1, Scratch& s,
                        Fn&& fn) {
  if (e.flags & kExact)
    exact_rows(e, rx0, rx1, ry0, ry1, S.ck->quadrant(), s, fn);
  else
    sampled_rows(e, rx0, rx1, ry0, ry1, S.ck->fast(), s, fn);
}

// 1 / (sum of the weights over the full footprint), for cells that are not kSelf.
double footprint_norm(const Setup& S, const KernelEntry& e, const Geo& g, Scratch& s) {
  if (e.flags & kHuge) {
    if (e.flags & kExact) return 1.0;  // the cumulative table telescopes to 4 Q(1,1) = 1
    const double hp = e.hp;
    return 1.0 / (hp * hp * S.ck->fast_integral(1.0 / (24.0 * hp * hp)));
  }
  double sum = 0.0;
  const int x0 = static_cast<int>(g.x0), x1 = static_cast<int>(g.x1);
  const int y0 = static_cast<int>(g.y0), y1 = static_cast<int>(g.y1);
  if (e.flags & kExact) {
    exact_rows(e, x0, x1, y0, y1, S.ck->quadrant(), s,
               [&](int, int a0, int a1, const float* w) { sum += sum_floats(w, a1 - a0 + 1); });
  } else {
    const float* tab = S.ck->fast();
    const float c = static_cast<float>(1.0 / (24.0 * static_cast<double>(e.hp) * e.hp));
    sampled_chords(e, x0, x1, y0, y1, s, [&](int, int a0, int a1, const float* d, float dyn) {
      const int m = a1 - a0 + 1;
      double s0 = 0.0, s1 = 0.0;
      int j = 0;
      for (; j + 2 <= m; j += 2) {
        s0 += static_cast<double>(sampled_weight(tab, d[j] + dyn, c));
        s1 += static_cast<double>(sampled_weight(tab, d[j + 1] + dyn, c));
      }
      if (j < m) s0 += static_cast<double>(sampled_weight(tab, d[j] + dyn, c));
      sum += s0 + s1;
    });
  }
  return sum > 0.0 ? 1.0 / sum : 0.0;
}

// Exact pixel integrals for a footprint whose bounding box is at most 4 x 4
// pixels (support radius < 1.5 pixels): the same double differences as
// exact_rows with fixed-size arrays, and the corners on the clamped
// boundary (|X| or |Y| >= 1) read from the edge of the table. W is 4 x 4,
// row-major, rows of the block [by0, by0 + bh).
struct SmallBlock {
  int bx0, by0, bw, bh;
  float W[16];
  double sum;
};

inline bool small_exact_block(const KernelEntry& e, const double* Q, SmallBlock& B) {
  const double hp = e.hp;
  const long long x0 = floor_ll(e.uc - hp), x1 = floor_ll(e.uc + hp);
  const long long y0 = floor_ll(e.vc - hp), y1 = floor_ll(e.vc + hp);
  if (x1 - x0 > 3 || y1 - y0 > 3) return false;
  B.bx0 = static_cast<int>(x0);
  B.by0 = static_cast<int>(y0);
  const int bw = static_cast<int>(x1 - x0) + 1, bh = static_cast<int>(y1 - y0) + 1;
  B.bw = bw;
  B.bh = bh;
  const double inv = 1.0 / hp;
  const double* top = Q + kQW * kQ;  // Q(t, 1) = Q(1, t)
  const double q11 = top[kQ];
  // Interior corner columns j = 1 .. bw-1 (|X| < 1 up to rounding).
  int xi[4];
  double xf[4], xs[4], xm[4];
  for (int j = 1; j < bw; ++j) {
    double X = (static_cast<double>(x0 + j) - e.uc) * inv;
    xs[j] = X < 0.0 ? -1.0 : 1.0;
    X = std::min(std::fabs(X), 1.0) * kQ;
    const int i = std::min(static_cast<int>(X), kQ - 1);
    xi[j] = i;
    xf[j] = X - i;
    xm[j] = xs[j] * (top[i] + xf[j] * (top[i + 1] - top[i]));
  }
  double P[5][5];
  // Row Y = -1 and Y = +1.
  P[0][0] = q11;
  P[0][bw] = -q11;
  P[bh][0] = -q11;
  P[bh][bw] = q11;
  for (int j = 1; j < bw; ++j) {
    P[0][j] = -xm[j];
    P[bh][j] = xm[j];
  }
  for (int b = 1; b < bh; ++b) {
    double Y = (static_cast<double>(y0 + b) - e.vc) * inv;
    const double sy = Y < 0.0 ? -1.0 : 1.0;
    Y = std::min(std::fabs(Y), 1.0) * kQ;
    const int iy = std::min(static_cast<int>(Y), kQ - 1);
    const double fy = Y - iy;
    const double ym = sy * (top[iy] + fy * (top[iy + 1] - top[iy]));
    P[b][0] = -ym;
    P[b][bw] = ym;
    const double* r0 = Q + static_cast<std::size_t>(iy) * kQW;
    const double* r1 = r0 + kQW;
    for (int j = 1; j < bw; ++j) {
      const int i = xi[j];
      const double f = xf[j];
      const double q0 = r0[i] + f * (r0[i + 1] - r0[i]);
      const double q1 = r1[i] + f * (r1[i + 1] - r1[i]);
      P[b][j] = sy * xs[j] * (q0 + fy * (q1 - q0));
    }
  }
  double sum = 0.0;
  for (int r = 0; r < bh; ++r)
    for (int c = 0; c < bw; ++c) {
      const double v = (P[r + 1][c + 1] - P[r + 1][c]) - (P[r][c + 1] - P[r][c]);
      const float w = v > 0.0 ? static_cast<float>(v) : 0.0f;
      B.W[r * 4 + c] = w;
      sum += static_cast<double>(w);
    }
  B.sum = sum;
  return true;
}

// Exact pixel integrals of a footprint with support radius h < 1 pixel
// centred at (fx, fy) in [0, 1)^2 of its pixel, over the 3 x 3 pixels around
// it (W[3 r + c] for the pixel (c - 1, r - 1) from the centre pixel). The
// footprint can cross only the lines x = 0, 1 and y = 0, 1 of the centre
// pixel: the corner values are P(X, Y) = sgn X sgn Y Q(|X|, |Y|) at
// X in {-1, -fx/h, (1-fx)/h, 1} (clamped to [-1, 1]), likewise Y, and
// W = double differences of P. Branch-free; the weights sum to 4 Q(1, 1) = 1
// up to rounding (telescoping), so no normalisation pass is needed.
ICMSCOPE_ALWAYS_INLINE void exact_3x3(const double* __restrict Q, double fx, double fy, double h, double* W) {
  const double inv = 1.0 / h;
  const double* top = Q + kQW * kQ;  // Q(t, 1) = Q(1, t)
  const double q11 = top[kQ];
  // |X| of the two lines per axis, in table units.
  auto node = [](double t, int& i, double& f) {
    t = (t < 1.0 ? t : 1.0) * kQ;
    i = static_cast<int>(t);
    i = i < kQ - 1 ? i : kQ - 1;
    f = t - i;
  };
  int ia, ib, ja, jb;
  double fa, fb, ga, gb;
  node(fx * inv, ia, fa);          // line x = 0: X = -fx/h
  node((1.0 - fx) * inv, ib, fb);  // line x = 1: X = (1-fx)/h
  node(fy * inv, ja, ga);
  node((1.0 - fy) * inv, jb, gb);
  auto edge = [&](int i, double f) { return top[i] + f * (top[i + 1] - top[i]); };
  auto bil = [&](int i, double f, int j, double g) {
    const double* r0 = Q + static_cast<std::size_t>(j) * kQW;
    const double* r1 = r0 + kQW;
    const double q0 = r0[i] + f * (r0[i + 1] - r0[i]);
    const double q1 = r1[i] + f * (r1[i + 1] - r1[i]);
    return q0 + g * (q1 - q0);
  };
  const double Ma = edge(ia, fa), Mb = edge(ib, fb), Na = edge(ja, ga), Nb = edge(jb, gb);
  const double Qaa = bil(ia, fa, ja, ga), Qab = bil(ia, fa, jb, gb);
  const double Qba = bil(ib, fb, ja, ga), Qbb = bil(ib, fb, jb, gb);
  // Corner values P[row][col], rows Y = -1, -fy/h, (1-fy)/h, 1, columns X
  // likewise:  row 0 { q11, Ma, -Mb, -q11},  row 1 { Na, Qaa, -Qba, -Na},
  //            row 2 {-Nb, -Qab, Qbb, Nb},   row 3 = -row 0.
  // D = differences along each row, W = differences of D between rows,
  // clamped at 0 (rounding can leave a zero weight at -1e-17; the sum still
  // telescopes to 1 to rounding).
  const double d00 = Ma - q11, d01 = -Mb - Ma, d02 = Mb - q11;
  const double d10 = Qaa - Na, d11 = -Qba - Qaa, d12 = Qba - Na;
  const double d20 = Nb - Qab, d21 = Qbb + Qab, d22 = Nb - Qbb;
  W[0] = std::max(d10 - d00, 0.0);
  W[1] = std::max(d11 - d01, 0.0);
  W[2] = std::max(d12 - d02, 0.0);
  W[3] = std::max(d20 - d10, 0.0);
  W[4] = std::max(d21 - d11, 0.0);
  W[5] = std::max(d22 - d12, 0.0);
  W[6] = std::max(-d00 - d20, 0.0);
  W[7] = std::max(-d01 - d21, 0.0);
  W[8] = std::max(-d02 - d22, 0.0);
}

// ---- tile deposit ------------------------------------------------------------

// One row of weights into the tile buffer; K = KT when KT > 0, else K_.
template <int KT>
inline void deposit_row(double* buf, int T, int K_, int lx0, int ly, int m, const float* w, double norm,
                        const double* q) {
  const int K = KT > 0 ? KT : K_;
  double* p = buf + (static_cast<std::size_t>(ly) * T + lx0) * K;
  if (K == 1) {  // same arithmetic as below, so channel results do not depend on K
    const double q0 = q[0];
    for (int j = 0; j < m; ++j) p[j] += (static_cast<double>(w[j]) * norm) * q0;
    return;
  }
  for (int j = 0; j < m; ++j) {
    const double wn = static_cast<double>(w[j]) * norm;
    double* pj = p + static_cast<std::size_t>(j) * K;
    for (int k = 0; k < K; ++k) pj[k] += wn * q[k];
  }
}

struct ChunkData {
  std::vector<std::uint64_t> code;    // per cell of the chunk (see kCodePoint)
  std::vector<std::uint32_t> code32;  // the same for point-only deposit
  std::vector<std::uint16_t> pidx;    // point entries: tile-local pixel index
  std::vector<double> pw;             // point entries: K weights each
  std::vector<StencilEntry> sent;     // stencil entries
  std::vector<double> sw;             // stencil entries: K weights each
  std::vector<KernelEntry> kent;      // kernel entries
  std::vector<double> kw;             // kernel entries: K weights each
  std::vector<std::uint32_t> cntP, cntS, cntK;    // [sub * ntiles + tile]: counts, then cursors
  std::vector<std::size_t> startP, startS, startK;  // [tile], size ntiles + 1
  std::vector<long long> bad;               // first bad cell per sub-block (or -1)
};

template <int KT>
void deposit_tile(const Setup& Sref, int t, const ChunkData& cd, Scratch& s, std::vector<std::vector<double>>& maps) {
  const Setup S = Sref;  // private copy (see pass 1)
  const int K = KT > 0 ? KT : S.K;
  const std::size_t p0 = cd.startP[static_cast<std::size_t>(t)], p1 = cd.startP[static_cast<std::size_t>(t) + 1];
  const std::size_t k0 = cd.startK[static_cast<std::size_t>(t)], k1 = cd.startK[static_cast<std::size_t>(t) + 1];
  const std::size_t s0 = cd.startS[static_cast<std::size_t>(t)], s1 = cd.startS[static_cast<std::size_t>(t) + 1];
  if (p0 == p1 && k0 == k1 && s0 == s1) return;
  const int T = S.T;
  const int tx = t % S.ntx, ty = t / S.ntx;
  const int x0 = tx * T, y0 = ty * T;
  const int tw = std::min(T, S.nx - x0), th = std::min(T, S.ny - y0);
  double* buf = s.tile.data();
  std::fill(buf, buf + static_cast<std::size_t>(th) * T * K, 0.0);

  // Point entries.
  {
    const std::uint16_t* idx = cd.pidx.data();
    const double* w = cd.pw.data();
    for (std::size_t e = p0; e < p1; ++e) {
      double* p = buf + static_cast<std::size_t>(idx[e]) * K;
      const double* q = w + e * K;
      for (int k = 0; k < K; ++k) p[k] += q[k];
    }
  }
  // Small cells (h < 1): exact 3 x 3 pixel integrals.
  std::size_t updates = 0;
  if (s0 < s1) {
    const double* __restrict Q = S.ck->quadrant();
    const StencilEntry* __restrict sent = cd.sent.data();
    const double* __restrict swp = cd.sw.data();
    double* __restrict B = buf;
    for (std::size_t e = s0; e < s1; ++e) {
      const StencilEntry se = sent[e];
      double W[9];
      exact_3x3(Q, se.fx, se.fy, se.h, W);
      const double* __restrict q = swp + e * K;
      const int lx = se.lx, ly = se.ly;
      if (lx >= 1 && ly >= 1 && lx + 1 < tw && ly + 1 < th) {
        double* c = B + (static_cast<std::ptrdiff_t>(ly - 1) * T + (lx - 1)) * K;
        if (K == 1) {
          const double q0 = q[0];
          for (int r = 0; r < 3; ++r) {
            double* p = c + static_cast<std::ptrdiff_t>(r) * T;
            p[0] += W[3 * r] * q0;
            p[1] += W[3 * r + 1] * q0;
            p[2] += W[3 * r + 2] * q0;
          }
        } else {
          for (int r = 0; r < 3; ++r)
            for (int cc = 0; cc < 3; ++cc) {
              double* p = c + (static_cast<std::ptrdiff_t>(r) * T + cc) * K;
              const double wn = W[3 * r + cc];
              for (int k = 0; k < K; ++k) p[k] += wn * q[k];
            }
        }
        updates += 9;
      } else {
        for (int r = 0; r < 3; ++r) {
          const int yy = ly - 1 + r;
          if (yy < 0 || yy >= th) continue;
          for (int cc = 0; cc < 3; ++cc) {
            const int xx = lx - 1 + cc;
            if (xx < 0 || xx >= tw) continue;
            double* p = B + (static_cast<std::size_t>(yy) * T + xx) * K;
            const double wn = W[3 * r + cc];
            for (int k = 0; k < K; ++k) p[k] += wn * q[k];
            ++updates;
          }
        }
      }
    }
  }
  // Kernel entries.
  const int rx0 = x0, rx1 = x0 + tw - 1, ry0 = y0, ry1 = y0 + th - 1;
  for (std::size_t e = k0; e < k1; ++e) {
    const KernelEntry& ke = cd.kent[e];
    const double* q = cd.kw.data() + e * K;
    if ((ke.flags & kSelf) && (ke.flags & kExact)) {
      SmallBlock B;
      if (small_exact_block(ke, S.ck->quadrant(), B)) {
        if (!(B.sum > 0.0)) continue;
        const double norm = 1.0 / B.sum;
        const int b0 = std::max(B.by0, ry0), b1 = std::min(B.by0 + B.bh - 1, ry1);
        const int a0 = std::max(B.bx0, rx0), a1 = std::min(B.bx0 + B.bw - 1, rx1);
        if (a0 > a1) continue;
        for (int b = b0; b <= b1; ++b)
          deposit_row<KT>(buf, T, K, a0 - x0, b - y0, a1 - a0 + 1, B.W + (b - B.by0) * 4 + (a0 - B.bx0), norm, q);
        updates += static_cast<std::size_t>(a1 - a0 + 1) * static_cast<std::size_t>(std::max(0, b1 - b0 + 1));
        continue;
      }
    }
    if (ke.flags & kSelf) {
      // Small footprint: build its full weight block, normalise, deposit the
      // part inside this tile. Every tile the cell touches builds the same block.
      const double hp = ke.hp;
      const int bx0 = static_cast<int>(floor_ll(ke.uc - hp)), bx1 = static_cast<int>(floor_ll(ke.uc + hp));
      const int by0 = static_cast<int>(floor_ll(ke.vc - hp)), by1 = static_cast<int>(floor_ll(ke.vc + hp));
      const int bw = bx1 - bx0 + 1, bh = by1 - by0 + 1;
      float* blk = s.block.data();
      int* ra = s.ra.data();
      int* rb = s.rb.data();
      for (int r = 0; r < bh; ++r) {
        ra[r] = 1;
        rb[r] = 0;
      }
      double sum = 0.0;
      kernel_rows(S, ke, bx0, bx1, by0, by1, s, [&](int b, int a0, int a1, const float* w) {
        const int r = b - by0, m = a1 - a0 + 1;
        float* dst = blk + static_cast<std::size_t>(r) * bw + (a0 - bx0);
        for (int j = 0; j < m; ++j) dst[j] = w[j];
        ra[r] = a0 - bx0;
        rb[r] = a1 - bx0;
        sum += sum_floats(w, m);
      });
      if (!(sum > 0.0)) continue;
      const double norm = 1.0 / sum;
      const int b0 = std::max(by0, ry0), b1 = std::min(by1, ry1);
      for (int b = b0; b <= b1; ++b) {
        const int r = b - by0;
        const int a0 = std::max(bx0 + ra[r], rx0), a1 = std::min(bx0 + rb[r], rx1);
        if (a0 > a1) continue;
        deposit_row<KT>(buf, T, K, a0 - x0, b - y0, a1 - a0 + 1, blk + static_cast<std::size_t>(r) * bw + (a0 - bx0),
                        norm, q);
        updates += static_cast<std::size_t>(a1 - a0 + 1);
      }
    } else if (ke.flags & kExact) {
      const double norm = ke.norm;
      exact_rows(ke, rx0, rx1, ry0, ry1, S.ck->quadrant(), s, [&](int b, int a0, int a1, const float* w) {
        deposit_row<KT>(buf, T, K, a0 - x0, b - y0, a1 - a0 + 1, w, norm, q);
        updates += static_cast<std::size_t>(a1 - a0 + 1);
      });
    } else {
      // Large footprint: weights generated and deposited in one loop (the
      // same float values as the normalisation pass).
      const double norm = ke.norm;
      const float* tab = S.ck->fast();
      const float c = static_cast<float>(1.0 / (24.0 * static_cast<double>(ke.hp) * ke.hp));
      sampled_chords(ke, rx0, rx1, ry0, ry1, s, [&](int b, int a0, int a1, const float* d, float dyn) {
        const int m = a1 - a0 + 1;
        double* __restrict p = buf + (static_cast<std::size_t>(b - y0) * T + (a0 - x0)) * K;
        if (K == 1) {
          const double q0 = q[0];
          for (int j = 0; j < m; ++j) p[j] += (static_cast<double>(sampled_weight(tab, d[j] + dyn, c)) * norm) * q0;
        } else {
          for (int j = 0; j < m; ++j) {
            const double wn = static_cast<double>(sampled_weight(tab, d[j] + dyn, c)) * norm;
            for (int k = 0; k < K; ++k) p[static_cast<std::size_t>(j) * K + k] += wn * q[k];
          }
        }
        updates += static_cast<std::size_t>(m);
      });
    }
  }
  s.updates += updates + (p1 - p0);

  // Add the tile to the maps (each map pixel belongs to exactly one tile).
  for (int k = 0; k < K; ++k) {
    double* m = maps[static_cast<std::size_t>(k)].data();
    for (int ly = 0; ly < th; ++ly) {
      double* dst = m + static_cast<std::size_t>(y0 + ly) * S.nx + x0;
      const double* src = buf + static_cast<std::size_t>(ly) * T * K + k;
      for (int lx = 0; lx < tw; ++lx) dst[lx] += src[static_cast<std::size_t>(lx) * K];
    }
  }
}

using TileFn = void (*)(const Setup&, int, const ChunkData&, Scratch&, std::vector<std::vector<double>>&);

TileFn tile_function(int K) {
  switch (K) {
    case 1: return &deposit_tile<1>;
    case 2: return &deposit_tile<2>;
    case 3: return &deposit_tile<3>;
    case 4: return &deposit_tile<4>;
    case 5: return &deposit_tile<5>;
    case 6: return &deposit_tile<6>;
    case 7: return &deposit_tile<7>;
    case 8: return &deposit_tile<8>;
    default: return &deposit_tile<0>;
  }
}

inline int thread_id() {
#ifdef _OPENMP
  return omp_get_thread_num();
#else
  return 0;
#endif
}

// Channel values of cell i into dst[0..K).
struct ChannelReader {
  std::vector<const double*> d;
  std::vector<const float*> f;
  explicit ChannelReader(const std::vector<WeightChannel>& ch) {
    for (const auto& c : ch) {
      d.push_back(c.doubles());
      f.push_back(c.floats());
    }
  }
  inline void read(std::size_t i, double* dst) const {
    const std::size_t K = d.size();
    if (K == 1) {
      dst[0] = d[0] ? d[0][i] : static_cast<double>(f[0][i]);
      return;
    }
    for (std::size_t k = 0; k < K; ++k) dst[k] = d[k] ? d[k][i] : static_cast<double>(f[k][i]);
  }
};

}  // namespace

std::vector<std::vector<double>> project(const ProjectionGrid& grid, const PlaneCells& cells,
                                         const std::vector<WeightChannel>& channels,
                                         const ProjectorSettings& settings, ProjectionStats* stats) {
  std::vector<std::vector<double>> maps(channels.size());
  if (grid.nx > 0 && grid.ny > 0 && grid.nx <= 1000000 && grid.ny <= 1000000)
    for (auto& m : maps) m.assign(grid.pixels(), 0.0);
  project_add(grid, cells, channels, maps, settings, stats);
  return maps;
}

void project_add(const ProjectionGrid& grid, const PlaneCells& cells, const std::vector<WeightChannel>& channels,
                 std::vector<std::vector<double>>& maps, const ProjectorSettings& settings,
                 ProjectionStats* stats) {
  // ---- validation ----
  if (grid.nx <= 0 || grid.ny <= 0)
    throw DomainError("project: grid nx, ny must be positive, got " + std::to_string(grid.nx) + " x " +
                      std::to_string(grid.ny));
  if (grid.nx > 1000000 || grid.ny > 1000000)
    throw DomainError("project: grid nx, ny must be at most 1000000, got " + std::to_string(grid.nx) + " x " +
                      std::to_string(grid.ny));
  if (!(grid.pixel_kpc > 0.0) || !std::isfinite(grid.pixel_kpc))
    throw DomainError("project: pixel_kpc must be positive and finite, got " + std::to_string(grid.pixel_kpc));
  if (!std::isfinite(grid.u0_kpc) || !std::isfinite(grid.v0_kpc))
    throw DomainError("project: grid centre (u0_kpc, v0_kpc) must be finite");
  if (channels.empty()) throw DomainError("project: at least one weight channel is required");
  for (std::size_t k = 0; k < channels.size(); ++k)
    if (cells.n > 0 && !channels[k].valid())
      throw DomainError("project: weight channel " + std::to_string(k) + " has no data");
  const bool point_only = settings.kernel == DepositKernel::Point;
  if (cells.n > 0 && (!cells.u || !cells.v)) throw DomainError("project: plane coordinates u, v are missing");
  if (cells.n > 0 && !point_only && !cells.support)
    throw DomainError("project: support radii are required for kernel deposit");
  // Below 4 pixels the centre-sampling correction is not used (see
  // ColumnKernel::kLapLimit); above 256 the exact path's scratch grows large.
  if (!(settings.exact_below_pixels >= 4.0) || settings.exact_below_pixels > 256.0)
    throw DomainError("project: exact_below_pixels must be in [4, 256], got " +
                      std::to_string(settings.exact_below_pixels));
  const int tp = settings.tile_pixels;
  if (tp != 0 && (tp < 8 || tp > 256 || (tp & (tp - 1)) != 0))
    throw DomainError("project: tile_pixels must be 0 (automatic) or a power of two in [8, 256], got " +
                      std::to_string(tp));

  const int K = static_cast<int>(channels.size());
  Setup S;
  S.nx = grid.nx;
  S.ny = grid.ny;
  S.K = K;
  S.umin = grid.u_min();
  S.vmin = grid.v_min();
  S.inv_pix = 1.0 / grid.pixel_kpc;
  S.point_only = point_only;
  S.exact_below = settings.exact_below_pixels;
  S.huge_area = std::min(std::max(4.0 * static_cast<double>(grid.nx) * grid.ny, 4194304.0), 67108864.0);
  if (!point_only) {
    S.ck = &ColumnKernel::get(settings.kernel == DepositKernel::WendlandC2 ? SphKernel::WendlandC2
                                                                          : SphKernel::CubicSpline);
  }
  auto ntiles_for = [&](int T) {
    return static_cast<long long>((grid.nx + T - 1) / T) * ((grid.ny + T - 1) / T);
  };
  if (tp > 0) {
    S.T = tp;
  } else {
    S.T = 64;
    while (S.T > 16 && ntiles_for(S.T) < 16) S.T /= 2;
    while (S.T < 256 && ntiles_for(S.T) > 65535) S.T *= 2;
  }
  if (ntiles_for(S.T) > 65535)
    throw DomainError("project: grid " + std::to_string(grid.nx) + " x " + std::to_string(grid.ny) +
                      " needs more than 65535 tiles of " + std::to_string(S.T) + " pixels; use larger tiles");
  S.shift = 0;
  while ((1 << S.shift) < S.T) ++S.shift;
  S.ntx = (grid.nx + S.T - 1) / S.T;
  S.nty = (grid.ny + S.T - 1) / S.T;
  S.ntiles = S.ntx * S.nty;

  const Setup& Sglobal = S;
  if (maps.size() != static_cast<std::size_t>(K))
    throw DomainError("project: " + std::to_string(maps.size()) + " maps given for " + std::to_string(K) +
                      " weight channels");
  for (const auto& m : maps)
    if (m.size() != grid.pixels())
      throw DomainError("project: a map has " + std::to_string(m.size()) + " pixels, the grid " +
                        std::to_string(grid.pixels()));
  ProjectionStats st;
  st.tile_pixels = S.T;
  const std::size_t n = cells.n;
  if (n == 0) {
    if (stats) *stats = st;
    return;
  }

  int threads = settings.threads > 0 ? settings.threads : core::max_threads();
  threads = std::max(1, threads);

  const std::size_t point_bytes = sizeof(std::uint16_t) + sizeof(double) * static_cast<std::size_t>(K);
  const std::size_t stencil_bytes = sizeof(StencilEntry) + sizeof(double) * static_cast<std::size_t>(K);
  const std::size_t kernel_bytes = sizeof(KernelEntry) + sizeof(double) * static_cast<std::size_t>(K);
  const float* Hs = cells.support;
  const ChannelReader reader(channels);

  // ---- chunk size from a deterministic sample of the cells ----
  std::size_t chunk = n;
  {
    const std::size_t m = std::min<std::size_t>(n, 4096);
    double bytes = 0.0;
    for (std::size_t j = 0; j < m; ++j) {
      const std::size_t i = j * n / m;
      Geo g;
      const int c = classify(S, cells.u[i], cells.v[i], point_only ? 0.0f : Hs[i], g);
      if (c == kPoint) bytes += static_cast<double>(point_bytes);
      if (c == kStencil || c == kKernel)
        bytes += static_cast<double>(c == kStencil ? stencil_bytes : kernel_bytes) *
                 static_cast<double>(g.tx1 - g.tx0 + 1) * (g.ty1 - g.ty0 + 1);
    }
    const double per_cell = std::max(bytes / static_cast<double>(m), 1.0) + sizeof(std::uint64_t);
    const double c = static_cast<double>(std::max<std::size_t>(settings.chunk_bytes, 1u << 20)) / per_cell;
    chunk = static_cast<std::size_t>(std::min(static_cast<double>(n), std::max(16384.0, c)));
  }
  const std::size_t nchunks = (n + chunk - 1) / chunk;

  // ---- per-thread scratch ----
  std::vector<Scratch> scratch(static_cast<std::size_t>(threads));
  for (auto& s : scratch) {
    s.tile.assign(static_cast<std::size_t>(S.T) * S.T * K, 0.0);
    s.ensure_width(static_cast<std::size_t>(2 * std::ceil(S.exact_below) + 4));
    s.block.assign(static_cast<std::size_t>(kSelfArea), 0.0f);
    s.ra.assign(static_cast<std::size_t>(kSelfArea) + 1, 0);
    s.rb.assign(static_cast<std::size_t>(kSelfArea) + 1, 0);
  }
  const TileFn tile_fn = tile_function(K);

  ChunkData cd;
  const int ntiles = S.ntiles;
  const int shift = S.shift, ntx = S.ntx;
  std::size_t peak_entries_bytes = 0;
  std::size_t n_point = 0, n_stencil = 0, n_exact = 0, n_sampled = 0, n_huge = 0;

  for (std::size_t ch = 0; ch < nchunks; ++ch) {
    const std::size_t c0 = ch * n / nchunks, c1 = (ch + 1) * n / nchunks;
    const std::size_t nc = c1 - c0;
    const int nsub = static_cast<int>(std::min<std::size_t>(64, std::max<std::size_t>(1, nc / 8192)));
    const std::size_t ncnt = static_cast<std::size_t>(nsub) * ntiles;
    cd.cntP.assign(ncnt, 0u);
    cd.cntS.assign(ncnt, 0u);
    cd.cntK.assign(ncnt, 0u);
    cd.bad.assign(static_cast<std::size_t>(nsub), -1);
    if (point_only) {
      if (cd.code32.size() < nc) cd.code32.resize(nc);
    } else if (cd.code.size() < nc) {
      cd.code.resize(nc);
    }

    // ---- pass 1: classify, count entries per (sub-block, tile) ----
#pragma omp parallel for schedule(dynamic, 1) num_threads(threads)
    for (int sb = 0; sb < nsub; ++sb) {
      // A private copy: the counter stores (unsigned) could otherwise alias
      // the int members and force reloads in the hot loop.
      const Setup S = Sglobal;
      const core::BlockRange r = core::block_range(nc, nsub, sb);
      std::uint32_t* cp = cd.cntP.data() + static_cast<std::size_t>(sb) * ntiles;
      std::uint32_t* cs = cd.cntS.data() + static_cast<std::size_t>(sb) * ntiles;
      std::uint32_t* ck = cd.cntK.data() + static_cast<std::size_t>(sb) * ntiles;
      std::uint64_t* code = cd.code.data();
      const float* U = cells.u;
      const float* V = cells.v;
      const std::uint8_t* sel = cells.select;
      if (point_only) {
        // Point deposit: the classify() logic for H = 0, reduced to a
        // branch-free loop the compiler vectorises, then the histogram.
        const double umin = S.umin, vmin = S.vmin, inv = S.inv_pix;
        const double nxd = S.nx, nyd = S.ny;
        const int mask = S.T - 1;
        std::uint32_t* __restrict c32 = cd.code32.data() + r.begin;
        const float* __restrict Ub = U + c0 + r.begin;
        const float* __restrict Vb = V + c0 + r.begin;
        const std::size_t m = r.end - r.begin;
        for (std::size_t j = 0; j < m; ++j) {
          const double x = (static_cast<double>(Ub[j]) - umin) * inv;
          const double y = (static_cast<double>(Vb[j]) - vmin) * inv;
          const bool in = (x >= 0.0) & (y >= 0.0) & (x < nxd) & (y < nyd);  // NaN: false
          const double xs = in ? x : 0.0, ys = in ? y : 0.0;
          const int px = static_cast<int>(xs), py = static_cast<int>(ys);  // >= 0: truncation = floor
          const std::uint32_t c = (static_cast<std::uint32_t>((py >> shift) * ntx + (px >> shift)) << 16) |
                                  static_cast<std::uint32_t>(((py & mask) << shift) | (px & mask));
          c32[j] = in ? c : kCode32Skip;
        }
        for (std::size_t j = 0; j < m; ++j) {
          const std::size_t i = c0 + r.begin + j;
          if (c32[j] == kCode32Skip) {
            if ((!sel || sel[i]) && (!std::isfinite(U[i]) || !std::isfinite(V[i]))) {
              cd.bad[static_cast<std::size_t>(sb)] = static_cast<long long>(i);
              break;
            }
            continue;
          }
          if (sel && !sel[i]) {
            c32[j] = kCode32Skip;
            continue;
          }
          ++cp[c32[j] >> 16];
        }
        continue;
      }
      for (std::size_t j = r.begin; j < r.end; ++j) {
        const std::size_t i = c0 + j;
        code[j] = 0;
        if (sel && !sel[i]) continue;
        Geo g;
        const int c = classify(S, U[i], V[i], point_only ? 0.0f : Hs[i], g);
        if (c == kPoint) {
          const int tx = g.px >> shift, ty = g.py >> shift;
          const int tile = ty * ntx + tx;
          ++cp[tile];
          code[j] = kCodePoint | (static_cast<std::uint64_t>(tile) << 16) |
                    static_cast<std::uint64_t>(((g.py - (ty << shift)) << shift) + (g.px - (tx << shift)));
        } else if (c == kStencil) {
          code[j] = kCodeStencil | (static_cast<std::uint64_t>(g.px + 1) << 20) | static_cast<std::uint64_t>(g.py + 1);
          if (g.tx0 == g.tx1 && g.ty0 == g.ty1) {
            ++cs[g.ty0 * ntx + g.tx0];
          } else {
            for (int ty = g.ty0; ty <= g.ty1; ++ty)
              for (int tx = g.tx0; tx <= g.tx1; ++tx) ++cs[ty * ntx + tx];
          }
        } else if (c == kKernel) {
          code[j] = kCodeKernelK;
          for (int ty = g.ty0; ty <= g.ty1; ++ty)
            for (int tx = g.tx0; tx <= g.tx1; ++tx) ++ck[ty * ntx + tx];
        } else if (c == kBad) {
          cd.bad[static_cast<std::size_t>(sb)] = static_cast<long long>(i);
          break;
        }
      }
    }
    for (long long b : cd.bad)
      if (b >= 0) {
        const auto i = static_cast<std::size_t>(b);
        throw DomainError("project: cell " + std::to_string(i) + " has non-finite u/v (" +
                          std::to_string(cells.u[i]) + ", " + std::to_string(cells.v[i]) +
                          ") or a negative / non-finite support radius (" +
                          std::to_string(point_only ? 0.0f : Hs[i]) + ")");
      }

    // ---- offsets: tile-major, sub-block-minor (stable in cell order) ----
    auto offsets = [&](std::vector<std::uint32_t>& cnt, std::vector<std::size_t>& start) {
      start.assign(static_cast<std::size_t>(ntiles) + 1, 0);
      std::size_t acc = 0;
      for (int t = 0; t < ntiles; ++t) {
        start[static_cast<std::size_t>(t)] = acc;
        for (int sb = 0; sb < nsub; ++sb) {
          const std::size_t j = static_cast<std::size_t>(sb) * ntiles + t;
          const std::uint32_t a = cnt[j];
          cnt[j] = static_cast<std::uint32_t>(acc);  // becomes the cursor (chunk-local)
          acc += a;
        }
      }
      start[static_cast<std::size_t>(ntiles)] = acc;
      if (acc > std::numeric_limits<std::uint32_t>::max())
        throw DomainError("project: too many footprint entries in one chunk; lower chunk_bytes");
      return acc;
    };
    const std::size_t nP = offsets(cd.cntP, cd.startP);
    const std::size_t nS = offsets(cd.cntS, cd.startS);
    const std::size_t nK = offsets(cd.cntK, cd.startK);
    if (cd.pidx.size() < nP) {
      cd.pidx.resize(nP);
      cd.pw.resize(nP * static_cast<std::size_t>(K));
    }
    if (cd.sent.size() < nS) {
      cd.sent.resize(nS);
      cd.sw.resize(nS * static_cast<std::size_t>(K));
    }
    if (cd.kent.size() < nK) {
      cd.kent.resize(nK);
      cd.kw.resize(nK * static_cast<std::size_t>(K));
    }
    peak_entries_bytes =
        std::max(peak_entries_bytes, cd.pidx.size() * point_bytes + cd.sent.size() * stencil_bytes +
                                         cd.kent.size() * kernel_bytes + cd.code.size() * sizeof(std::uint64_t) +
                                         cd.code32.size() * sizeof(std::uint32_t));

    // ---- pass 2: scatter entries (normalising large cells first) ----
    std::size_t cp_n = 0, cs_n = 0, ce_n = 0, ca_n = 0, ch_n = 0;
#pragma omp parallel for schedule(dynamic, 1) num_threads(threads) reduction(+ : cp_n, cs_n, ce_n, ca_n, ch_n)
    for (int sb = 0; sb < nsub; ++sb) {
      const Setup S = Sglobal;
      Scratch& s = scratch[static_cast<std::size_t>(thread_id())];
      const core::BlockRange r = core::block_range(nc, nsub, sb);
      std::uint32_t* cp = cd.cntP.data() + static_cast<std::size_t>(sb) * ntiles;
      std::uint32_t* cs = cd.cntS.data() + static_cast<std::size_t>(sb) * ntiles;
      std::uint32_t* ck = cd.cntK.data() + static_cast<std::size_t>(sb) * ntiles;
      const std::uint64_t* __restrict code = cd.code.data();
      std::uint16_t* __restrict pidx = cd.pidx.data();
      double* __restrict pw = cd.pw.data();
      StencilEntry* __restrict sent = cd.sent.data();
      double* __restrict sw = cd.sw.data();
      const std::size_t Ku = static_cast<std::size_t>(K);
      // Fast paths: one channel given as doubles (the common benchmark case).
      const double* d0 = (K == 1) ? reader.d[0] : nullptr;
      if (point_only) {
        const std::uint32_t* __restrict c32 = cd.code32.data();
        for (std::size_t j = r.begin; j < r.end; ++j) {
          const std::uint32_t cj = c32[j];
          if (cj == kCode32Skip) continue;
          const std::size_t e = cp[cj >> 16]++;
          pidx[e] = static_cast<std::uint16_t>(cj & 0xFFFFu);
          if (d0)
            pw[e] = d0[c0 + j];
          else
            reader.read(c0 + j, pw + e * Ku);
          ++cp_n;
        }
        continue;
      }
      double wk[64];
      double* wbuf = K <= 64 ? wk : nullptr;
      for (std::size_t j = r.begin; j < r.end; ++j) {
        const std::uint64_t cj = code[j];
        if (cj == 0) continue;
        const std::size_t i = c0 + j;
        const std::uint64_t kind = cj & kCodeKind;
        if (kind == kCodePoint) {
          const std::size_t e = cp[(cj >> 16) & 0xFFFFu]++;
          pidx[e] = static_cast<std::uint16_t>(cj & 0xFFFFu);
          if (d0)
            pw[e] = d0[i];
          else
            reader.read(i, pw + e * Ku);
          ++cp_n;
          continue;
        }
        if (kind == kCodeStencil) {
          const int px = static_cast<int>((cj >> 20) & 0xFFFFFu) - 1, py = static_cast<int>(cj & 0xFFFFFu) - 1;
          // Offset within the centre pixel and radius, recomputed with the
          // arithmetic of classify().
          const double x = (static_cast<double>(cells.u[i]) - S.umin) * S.inv_pix;
          const double y = (static_cast<double>(cells.v[i]) - S.vmin) * S.inv_pix;
          const float hp = static_cast<float>(static_cast<double>(Hs[i]) * S.inv_pix);
          const float fx = static_cast<float>(x - px), fy = static_cast<float>(y - py);
          const int tx0 = std::max(px - 1, 0) >> shift, tx1 = std::min(px + 1, S.nx - 1) >> shift;
          const int ty0 = std::max(py - 1, 0) >> shift, ty1 = std::min(py + 1, S.ny - 1) >> shift;
          ++cs_n;
          if (tx0 == tx1 && ty0 == ty1) {
            const std::size_t e = cs[ty0 * ntx + tx0]++;
            sent[e] = {fx, fy, hp, static_cast<std::int16_t>(px - (tx0 << shift)),
                       static_cast<std::int16_t>(py - (ty0 << shift))};
            if (d0)
              sw[e] = d0[i];
            else
              reader.read(i, sw + e * Ku);
            continue;
          }
          for (int ty = ty0; ty <= ty1; ++ty)
            for (int tx = tx0; tx <= tx1; ++tx) {
              const std::size_t e = cs[ty * ntx + tx]++;
              sent[e] = {fx, fy, hp, static_cast<std::int16_t>(px - (tx << shift)),
                         static_cast<std::int16_t>(py - (ty << shift))};
              reader.read(i, sw + e * Ku);
            }
          continue;
        }
        if (wbuf) reader.read(i, wbuf);
        auto put_weights = [&](double* w) {
          if (wbuf)
            for (int k = 0; k < K; ++k) w[k] = wbuf[k];
          else
            reader.read(i, w);
        };
        Geo g;
        if (classify(S, cells.u[i], cells.v[i], Hs[i], g) != kKernel) continue;  // (always kKernel here)
        KernelEntry ke;
        ke.uc = g.uc;
        ke.vc = g.vc;
        ke.hp = static_cast<float>(g.hp);
        ke.flags = 0;
        ke.norm = 0.0;
        if (g.hp < S.exact_below) ke.flags |= kExact;
        const double area = static_cast<double>(g.x1 - g.x0 + 1) * static_cast<double>(g.y1 - g.y0 + 1);
        if (area > S.huge_area) ke.flags |= kHuge;
        if (area <= static_cast<double>(kSelfArea))
          ke.flags |= kSelf;
        else
          ke.norm = footprint_norm(S, ke, g, s);
        if (ke.flags & kHuge) ++ch_n;
        if (ke.flags & kExact) ++ce_n; else ++ca_n;
        for (int ty = g.ty0; ty <= g.ty1; ++ty)
          for (int tx = g.tx0; tx <= g.tx1; ++tx) {
            const std::size_t e = ck[ty * ntx + tx]++;
            cd.kent[e] = ke;
            put_weights(cd.kw.data() + e * static_cast<std::size_t>(K));
          }
      }
    }
    n_point += cp_n;
    n_stencil += cs_n;
    n_exact += ce_n;
    n_sampled += ca_n;
    n_huge += ch_n;

    // ---- pass 3: deposit tile by tile ----
#pragma omp parallel for schedule(dynamic, 1) num_threads(threads)
    for (int t = 0; t < ntiles; ++t) tile_fn(Sglobal, t, cd, scratch[static_cast<std::size_t>(thread_id())], maps);
  }

  if (stats) {
    std::size_t n_in = n;
    if (cells.select) {
      n_in = 0;
      for (std::size_t i = 0; i < n; ++i) n_in += cells.select[i] ? 1 : 0;
    }
    st.cells_in = n_in;
    st.cells_point = n_point;
    st.cells_stencil = n_stencil;
    st.cells_exact = n_exact;
    st.cells_sampled = n_sampled;
    st.cells_huge = n_huge;
    st.cells_deposited = n_point + n_stencil + n_exact + n_sampled;
    for (const auto& s : scratch) st.pixel_updates += s.updates;
    st.chunks = nchunks;
    std::size_t sb = 0;
    for (const auto& s : scratch)
      sb += s.tile.capacity() * sizeof(double) + s.block.capacity() * sizeof(float) +
            s.dxn.capacity() * 2 * sizeof(float) + s.p0.capacity() * 5 * sizeof(double);
    st.work_bytes = peak_entries_bytes + sb +
                    (cd.cntP.capacity() + cd.cntS.capacity() + cd.cntK.capacity()) * sizeof(std::uint32_t);
    *stats = st;
  }
}

}  // namespace icmscope::projection
