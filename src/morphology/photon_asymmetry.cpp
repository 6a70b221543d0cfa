#include "icmscope/morphology/photon_asymmetry.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/morphology/apertures.hpp"
#include "sort_keys.hpp"

namespace icmscope::morphology {

namespace {
double watson_sorted(const std::vector<double>& u);

// atan2 to ~1e-12 rad: octant reduction, then atan t = pi/6 + atan((t sqrt3 - 1)/(t + sqrt3))
// for t > tan(pi/12), and the odd series to t^17 on |t| <= tan(pi/12) = 0.268.
inline double fast_atan2(double y, double x) {
  constexpr double kPi = core::constants::kPi;
  const double ax = std::fabs(x), ay = std::fabs(y);
  const double mx = std::max(ax, ay), mn = std::min(ax, ay);
  if (mx == 0.0) return 0.0;
  constexpr double kTan15 = 0.26794919243112270, kSqrt3 = 1.7320508075688772;
  double t, off = 0.0;
  if (mn > kTan15 * mx) {  // (t sqrt3 - 1)/(t + sqrt3) with t = mn/mx, one division
    t = (mn * kSqrt3 - mx) / (mn + mx * kSqrt3);
    off = kPi / 6.0;
  } else {
    t = mn / mx;
  }
  const double s = t * t;
  const double p =
      t * (1.0 + s * (-1.0 / 3 + s * (1.0 / 5 + s * (-1.0 / 7 + s * (1.0 / 9 + s * (-1.0 / 11 + s * (1.0 / 13 +
                                                                              s * (-1.0 / 15 + s * (1.0 / 17)))))))));
  double r = off + p;
  if (ay > ax) r = 0.5 * kPi - r;
  if (x < 0.0) r = kPi - r;
  return y < 0.0 ? -r : r;
}
}  // namespace

double watson_u2(std::vector<double>& u) {
  std::sort(u.begin(), u.end());
  return watson_sorted(u);
}

namespace {
double watson_sorted(const std::vector<double>& u) {
  const std::size_t n = u.size();
  if (n == 0) return std::nan("");
  const double N = static_cast<double>(n);
  double s = 0.0, mean = 0.0;
  for (std::size_t j = 0; j < n; ++j) {
    const double d = u[j] - (2.0 * static_cast<double>(j) + 1.0) / (2.0 * N);
    s += d * d;
    mean += u[j];
  }
  mean /= N;
  return s + 1.0 / (12.0 * N) - N * (mean - 0.5) * (mean - 0.5);
}
}  // namespace

PhotonAsymmetryResult photon_asymmetry(const core::ImageD& counts, const core::ImageD* bkg_counts,
                                       PixelPoint centre, const PhotonAsymmetrySettings& s,
                                       core::RandomStream& rng, PhotonScratch& scratch) {
  if (!(s.r500_px > 0.0) || s.edges_r500.size() < 2)
    throw core::DomainError("photon_asymmetry: need r500_px > 0 and at least two annulus edges");
  for (std::size_t k = 1; k < s.edges_r500.size(); ++k)
    if (!(s.edges_r500[k] > s.edges_r500[k - 1]) || !(s.edges_r500[0] >= 0.0))
      throw core::DomainError("photon_asymmetry: annulus edges must be increasing and >= 0");
  if (bkg_counts && !bkg_counts->same_grid(counts))
    throw core::DomainError("photon_asymmetry: background must be on the counts grid");
  const std::size_t na = s.edges_r500.size() - 1;
  std::vector<double> edges(s.edges_r500.size());
  for (std::size_t k = 0; k < edges.size(); ++k) edges[k] = s.edges_r500[k] * s.r500_px;
  PhotonAsymmetryResult res;
  res.annuli.resize(na);
  for (std::size_t k = 0; k < na; ++k) {
    res.annuli[k].r_in_px = edges[k];
    res.annuli[k].r_out_px = edges[k + 1];
  }
  scratch.u.resize(na);
  for (auto& v : scratch.u) v.clear();
  const double rin = edges.front(), rout = edges.back();
  std::vector<double> edges2(edges.size());
  for (std::size_t k = 0; k < edges.size(); ++k) edges2[k] = edges[k] * edges[k];
  const double rin2 = rin * rin, rout2 = rout * rout;
  const double* n = counts.data();
  const double* b = bkg_counts ? bkg_counts->data() : nullptr;
  const double inv2pi = 1.0 / (2.0 * core::constants::kPi);
  for_each_in_circle(counts.nx(), counts.ny(), centre.x, centre.y, rout,
                     [&](int, int, std::size_t i, double dx, double dy, double w) {
                       // Background: exact area fraction of the pixel in each annulus.
                       if (b && b[i] > 0.0) {
                                                  double fin = edges[0] > 0.0 ? pixel_fraction_in_circle(dx, dy, edges[0]) : 0.0;
                         for (std::size_t k = 0; k < na; ++k) {
                           const double fout = (k + 1 == na) ? w : pixel_fraction_in_circle(dx, dy, edges[k + 1]);
                           res.annuli[k].B += b[i] * (fout - fin);
                           fin = fout;
                         }
                       }
                       const int np = static_cast<int>(n[i] + 0.5);
                       for (int p = 0; p < np; ++p) {
                         double x = dx, y = dy;
                         if (s.jitter_within_pixel) {  // one 64-bit draw: two 32-bit uniform offsets
                           const std::uint64_t bits = rng();
                           x += static_cast<double>(bits >> 32) * 0x1.0p-32 - 0.5;
                           y += static_cast<double>(bits & 0xFFFFFFFFULL) * 0x1.0p-32 - 0.5;
                         }
                         const double r2 = x * x + y * y;
                         if (r2 < rin2 || r2 >= rout2) continue;
                         std::size_t k = 0;
                         while (k + 1 < na && r2 >= edges2[k + 1]) ++k;
                         double u = fast_atan2(y, x) * inv2pi;
                         if (u < 0.0) u += 1.0;
                         if (u >= 1.0) u -= 1.0;
                         scratch.u[k].push_back(u);
                       }
                     });
  double num = 0.0, den = 0.0;
  for (std::size_t k = 0; k < na; ++k) {
    PhotonAnnulus& a = res.annuli[k];
    a.N = static_cast<double>(scratch.u[k].size());
    a.C = a.N - a.B;
    if (a.N >= 2.0) {
      detail::sort_unit_interval(scratch.u[k], scratch.tmp);
      a.U2 = watson_sorted(scratch.u[k]);
    }
    if (a.N >= 2.0 && a.C > 0.0) {
      a.d = (a.N / (a.C * a.C)) * (a.U2 - 1.0 / 12.0);
      a.used = true;
      num += a.C * a.d;
      den += a.C;
    }
  }
  res.A_phot = den > 0.0 ? 100.0 * num / den : std::nan("");
  res.inside_image = circle_inside_image(counts.nx(), counts.ny(), centre.x, centre.y, rout);
  return res;
}

PhotonAsymmetryResult photon_asymmetry(const core::ImageD& counts, const core::ImageD* bkg_counts,
                                       PixelPoint centre, const PhotonAsymmetrySettings& s,
                                       core::RandomStream& rng) {
  PhotonScratch scratch;
  return photon_asymmetry(counts, bkg_counts, centre, s, rng, scratch);
}

}  // namespace icmscope::morphology
