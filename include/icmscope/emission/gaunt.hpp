#pragma once
// Free-free Gaunt factors for a Maxwellian plasma.
//
// Variables (van Hoof et al. 2014, MNRAS 444, 420, arXiv:1407.5048):
//   u = E / kT,   gamma2 = Z^2 Ry / kT   (Ry = 13.6057 eV; H: gamma2 = 0.0136 / kT[keV]).
//
//  (a) gaunt_ff_born(u): Born approximation, closed form (Rybicki & Lightman
//      1979, sec. 5.3): (sqrt(3)/pi) exp(u/2) K0(u/2), via GSL's exp-scaled K0.
//  (b) gaunt_ff_born_elwert(u, gamma2): Born cross-section times the Elwert
//      factor, thermally averaged by numerical integration (physics.md 2(b);
//      Elwert 1939; Chluba, Ravenni & Bolliet 2020, MNRAS 492, 177):
//        gbar = Int_0^inf exp(-x) (sqrt(3)/pi) ln[(sqrt(x+u)+sqrt(x))^2/u] f_E dx,
//        f_E  = sqrt((x+u)/x) [1 - exp(-2 pi sqrt(g2/(x+u)))] / [1 - exp(-2 pi sqrt(g2/x))].
//      Accuracy against van Hoof 2014 (exact non-relativistic): <= 0.5% for
//      gamma2 <= 0.01, <= 3% at gamma2 = 0.1 (u >= 0.1), 3-15% at gamma2 = 1 for
//      u < 1; poor for gamma2 >> 1 (heavy ions in cool gas), where it is still
//      used (documented approximation; those ions carry a few % of the emission).
//  (c) GauntTable: (b) tabulated once on a (log10 u, log10 gamma2) grid,
//      4-point (cubic Lagrange) interpolation along each axis.
//  (d) gaunt_ff_integrated_vanhoof2014(gamma2): frequency-integrated Gaunt
//      factor, van Hoof et al. 2014 rational fit.
#include <cstddef>
#include <vector>

#include "icmscope/core/constants.hpp"

namespace icmscope::emission {

// gamma^2 = Z^2 Ry / kT for an ion of charge Z at temperature kT [keV].
inline double gaunt_gamma2(int Z, double kT_keV) {
  return static_cast<double>(Z) * Z * core::constants::Ry_keV / kT_keV;
}

// (a) Born thermally averaged Gaunt factor; u > 0 (DomainError otherwise).
double gaunt_ff_born(double u);

// (b) Born x Elwert, thermally averaged by numerical integration (GSL CQUAD)
// to relative tolerance rel_tol. u > 0, gamma2 >= 0 (0 gives the Born value).
double gaunt_ff_born_elwert(double u, double gamma2, double rel_tol = 1e-10);

// (d) van Hoof et al. 2014 frequency-integrated free-free Gaunt factor (the
// rational fit in L = log10 gamma2 with its two asymptotic limits); gamma2 > 0.
double gaunt_ff_integrated_vanhoof2014(double gamma2);

struct GauntTableSettings {
  double log10_u_min = -6.0, log10_u_max = 2.5, dlog10_u = 0.1;
  double log10_g2_min = -6.0, log10_g2_max = 3.0, dlog10_g2 = 0.1;
  double rel_tol = 1e-8;  // quadrature tolerance of every node
};

// (c) Born x Elwert Gaunt factor tabulated once (OpenMP over nodes), then
// interpolated. Immutable after construction; evaluation is thread-safe.
//
// Interpolation: 4-point cubic Lagrange in log10 u and in log10 gamma2 on gbar
// itself (so every lookup is a fixed linear combination of 16 nodes).
// Measured interpolation error against direct integration with the default
// grid (0.1 dex in u and gamma2; test_gaunt.cpp, 2000 random points, log10 u in
// [-4, 2], log10 gamma2 in [-6, 3]): max relative error 1.0e-5, rms 1.3e-6.
// Build: 173 x 93 nodes, ~0.3 s on 2 cores.
//
// Outside the grid (documented extrapolation):
//   u < u_min: linear in log10 u from the first two nodes (the Born small-u
//              limit is linear in ln u);
//   u > u_max: gbar(u_max) sqrt(u_max / u) (the large-u limit ~ u^-1/2);
//   gamma2 outside [g2_min, g2_max]: clamped to the edge (Born limit below;
//              above 1e3 the recipe is unreliable anyway).
class GauntTable {
 public:
  explicit GauntTable(const GauntTableSettings& s = {});

  // Interpolated Born x Elwert gbar(u, gamma2); u > 0, gamma2 >= 0.
  double operator()(double u, double gamma2) const { return eval(u_weights(u), g2_weights(gamma2)); }

  // Fast path for spectra: axis weights are computed once per energy (u) and
  // once per ion (gamma2) and combined in eval().
  struct Weights {
    int i0 = 0;        // first of the 4 nodes
    double w[4] = {0, 0, 0, 0};
  };
  Weights u_weights(double u) const;
  Weights g2_weights(double gamma2) const;
  double eval(const Weights& wu, const Weights& wg) const {
    double s = 0.0;
    for (int b = 0; b < 4; ++b) {
      const double* row = &g_[static_cast<std::size_t>(wg.i0 + b) * nu_ + static_cast<std::size_t>(wu.i0)];
      s += wg.w[b] * (wu.w[0] * row[0] + wu.w[1] * row[1] + wu.w[2] * row[2] + wu.w[3] * row[3]);
    }
    return s;
  }

  const GauntTableSettings& settings() const { return s_; }
  std::size_t n_u() const { return nu_; }
  std::size_t n_g2() const { return ng_; }

 private:
  GauntTableSettings s_;
  std::size_t nu_ = 0, ng_ = 0;  // nodes including one guard node at each end
  int nu_in_ = 0, ng_in_ = 0;    // number of intervals inside the nominal range
  std::vector<double> g_;        // [ig][iu]
};

}  // namespace icmscope::emission
