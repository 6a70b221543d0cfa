#include "icmscope/emission/absorption.hpp"

#include <cmath>
#include <sstream>
#include <string>

#include "icmscope/core/errors.hpp"

namespace icmscope::emission {
namespace {

struct Row {
  double lo, c0, c1, c2;
};
// Morrison & McCammon 1983, Table 2 (physics.md section 4).
constexpr Row kRows[14] = {
    {0.030, 17.3, 608.1, -2150.0}, {0.100, 34.6, 267.9, -476.1}, {0.284, 78.1, 18.8, 4.3},
    {0.400, 71.4, 66.8, -51.4},    {0.532, 95.5, 145.8, -61.1},  {0.707, 308.9, -380.6, 294.0},
    {0.867, 120.6, 169.3, -47.7},  {1.303, 141.3, 146.8, -31.5}, {1.840, 202.7, 104.7, -17.0},
    {2.471, 342.7, 18.7, 0.0},     {3.210, 352.2, 18.7, 0.0},    {4.038, 433.9, -2.4, 0.75},
    {7.111, 629.0, 30.9, 0.0},     {8.331, 701.2, 25.2, 0.0},
};

inline double poly(const Row& r, double E) { return (r.c0 + E * (r.c1 + E * r.c2)) / (E * E * E) * 1e-24; }

std::string num(double v) {
  std::ostringstream os;
  os << v;
  return os.str();
}

}  // namespace

const std::array<double, 15>& mm83_edges_keV() {
  static const std::array<double, 15> e = {0.030, 0.100, 0.284, 0.400, 0.532, 0.707, 0.867, 1.303,
                                           1.840, 2.471, 3.210, 4.038, 7.111, 8.331, 10.000};
  return e;
}

double mm83_cross_section_cm2(double E) {
  if (!(E > 0.0) || !std::isfinite(E))
    throw core::DomainError("mm83_cross_section_cm2: energy E_keV must be finite and > 0, got " + num(E));
  if (E < kRows[0].lo) return poly(kRows[0], kRows[0].lo);
  int i = 13;
  while (i > 0 && E < kRows[i].lo) --i;
  return poly(kRows[i], E);
}

double mm83_transmission(double E, double nH) {
  if (!(nH >= 0.0) || !std::isfinite(nH))
    throw core::DomainError("mm83_transmission: column nH_cm2 must be finite and >= 0, got " + num(nH));
  if (nH == 0.0) return 1.0;
  return std::exp(-mm83_cross_section_cm2(E) * nH);
}

}  // namespace icmscope::emission
