#include "icmscope/emission/gaunt.hpp"

#include <gsl/gsl_errno.h>
#include <gsl/gsl_integration.h>
#include <gsl/gsl_sf_bessel.h>

#include <algorithm>
#include <cmath>
#include <memory>
#include <sstream>
#include <string>

#include "icmscope/core/errors.hpp"

namespace icmscope::emission {
namespace {

namespace k = core::constants;
const double kSqrt3OverPi = std::sqrt(3.0) / k::kPi;

std::string num(double v) {
  std::ostringstream os;
  os.precision(8);
  os << v;
  return os.str();
}

void gsl_handler_off_once() {
  static const bool done = [] {
    gsl_set_error_handler_off();  // GSL's default handler aborts; we check status codes
    return true;
  }();
  (void)done;
}

struct CquadDeleter {
  void operator()(gsl_integration_cquad_workspace* w) const { gsl_integration_cquad_workspace_free(w); }
};

struct ElwertParams {
  double u, g2;
};

// Integrand of the thermal average, x = final electron energy / kT.
// ln[(sqrt(x+u)+sqrt(x))^2/u] = 2 asinh(sqrt(x/u)); the x -> 0 limit is finite.
double elwert_integrand(double x, void* vp) {
  const auto* p = static_cast<const ElwertParams*>(vp);
  const double u = p->u, g2 = p->g2;
  const double ex = std::exp(-x);
  if (x <= 1e-14 * u) {
    // x -> 0: 2 asinh(sqrt(x/u)) sqrt((x+u)/x) -> 2 and the Elwert denominator -> 1.
    return ex * kSqrt3OverPi * 2.0 * -std::expm1(-2.0 * k::kPi * std::sqrt(g2 / u));
  }
  const double t = x / u;
  const double lg = 2.0 * std::asinh(std::sqrt(t));
  double fe = 1.0;
  if (g2 > 0.0) {
    const double a = -std::expm1(-2.0 * k::kPi * std::sqrt(g2 / (x + u)));
    const double b = -std::expm1(-2.0 * k::kPi * std::sqrt(g2 / x));
    fe = std::sqrt((x + u) / x) * a / b;
    // Non-relativistic Coulomb normalisation: for g2 -> 0, a/b -> sqrt(x/(x+u)) and fe -> 1.
  }
  return ex * kSqrt3OverPi * lg * fe;
}

}  // namespace

double gaunt_ff_born(double u) {
  if (!(u > 0.0) || !std::isfinite(u)) throw core::DomainError("gaunt_ff_born: u = E/kT must be finite and > 0, got " + num(u));
  gsl_sf_result r;
  gsl_handler_off_once();
  const int st = gsl_sf_bessel_K0_scaled_e(0.5 * u, &r);  // exp(u/2) K0(u/2)
  if (st != GSL_SUCCESS) throw core::DomainError("gaunt_ff_born: GSL K0 failed for u = " + num(u));
  return kSqrt3OverPi * r.val;
}

double gaunt_ff_born_elwert(double u, double gamma2, double rel_tol) {
  if (!(u > 0.0) || !std::isfinite(u))
    throw core::DomainError("gaunt_ff_born_elwert: u = E/kT must be finite and > 0, got " + num(u));
  if (!(gamma2 >= 0.0) || !std::isfinite(gamma2))
    throw core::DomainError("gaunt_ff_born_elwert: gamma2 must be finite and >= 0, got " + num(gamma2));
  if (gamma2 == 0.0) return gaunt_ff_born(u);
  gsl_handler_off_once();
  std::unique_ptr<gsl_integration_cquad_workspace, CquadDeleter> ws(gsl_integration_cquad_workspace_alloc(200));
  ElwertParams par{u, gamma2};
  gsl_function f;
  f.function = &elwert_integrand;
  f.params = &par;
  // Break the range where the integrand changes character: x ~ u (log term),
  // x ~ gamma2 (Elwert factor), then the exponential tail (exp(-60) ~ 1e-26).
  std::vector<double> pts = {0.0, 1.0, 5.0, 15.0, 60.0};
  for (double p : {u, 0.1 * u, gamma2, 0.1 * gamma2})
    if (p > 1e-12 && p < 60.0) pts.push_back(p);
  std::sort(pts.begin(), pts.end());
  pts.erase(std::unique(pts.begin(), pts.end(), [](double a, double b) { return std::abs(a - b) <= 1e-12 * b; }),
            pts.end());
  double total = 0.0;
  for (std::size_t i = 0; i + 1 < pts.size(); ++i) {
    double r = 0.0, err = 0.0;
    size_t nev = 0;
    const int st = gsl_integration_cquad(&f, pts[i], pts[i + 1], 0.0, rel_tol, ws.get(), &r, &err, &nev);
    if (st != GSL_SUCCESS && !(err <= 1e-7 * std::abs(r)))
      throw core::DomainError("gaunt_ff_born_elwert: integration failed at u = " + num(u) + ", gamma2 = " +
                              num(gamma2) + " (" + gsl_strerror(st) + ")");
    total += r;
  }
  return total;
}

double gaunt_ff_integrated_vanhoof2014(double gamma2) {
  if (!(gamma2 > 0.0) || !std::isfinite(gamma2))
    throw core::DomainError("gaunt_ff_integrated_vanhoof2014: gamma2 must be finite and > 0, got " + num(gamma2));
  if (gamma2 < 1e-6) {
    const double g = std::sqrt(gamma2);
    return 1.102635 + 1.186 * g + 0.86 * gamma2;
  }
  if (gamma2 > 1e10) return 1.0 + std::pow(gamma2, -1.0 / 3.0);
  const double L = std::log10(gamma2);
  static const double a_lo[5] = {1.43251926625281, 3.50626935257777e-1, 4.36183448595035e-1, 6.03536387105599e-2,
                                 3.66626405363100e-2};
  static const double b_lo[5] = {1.0, 2.92525161994346e-1, 4.05566949766954e-1, 5.62573012783879e-2,
                                 3.33019373823972e-2};
  static const double a_hi[5] = {1.45481634667278, -9.55399384620923e-2, 1.46327814151538e-1,
                                 -1.41489406498468e-2, 2.76891413242655e-3};
  static const double b_hi[5] = {1.0, 3.31149751183539e-2, 1.31127367293310e-1, -1.32658217746618e-2,
                                 2.74809263365693e-3};
  const double* a = L <= 0.8 ? a_lo : a_hi;
  const double* b = L <= 0.8 ? b_lo : b_hi;
  double n = 0.0, d = 0.0;
  for (int i = 4; i >= 0; --i) {
    n = n * L + a[i];
    d = d * L + b[i];
  }
  return n / d;
}

// ---------------------------------------------------------------------------
// GauntTable

namespace {
inline void lagrange4(double t, double* w) {
  // Nodes at -1, 0, 1, 2; t in [0, 1].
  const double tm1 = t - 1.0, tm2 = t - 2.0, tp1 = t + 1.0;
  w[0] = -t * tm1 * tm2 / 6.0;
  w[1] = tp1 * tm1 * tm2 / 2.0;
  w[2] = -tp1 * t * tm2 / 2.0;
  w[3] = tp1 * t * tm1 / 6.0;
}
}  // namespace

GauntTable::GauntTable(const GauntTableSettings& s) : s_(s) {
  auto check = [](bool ok, const char* field, double v) {
    if (!ok) throw core::DomainError(std::string("GauntTableSettings: ") + field + " is invalid, got " + num(v));
  };
  check(std::isfinite(s.dlog10_u) && s.dlog10_u > 0.0 && s.dlog10_u <= 0.5, "dlog10_u (expected (0, 0.5])", s.dlog10_u);
  check(std::isfinite(s.dlog10_g2) && s.dlog10_g2 > 0.0 && s.dlog10_g2 <= 0.5, "dlog10_g2 (expected (0, 0.5])",
        s.dlog10_g2);
  check(std::isfinite(s.log10_u_min) && std::isfinite(s.log10_u_max) && s.log10_u_max > s.log10_u_min + 3 * s.dlog10_u,
        "log10_u_max (expected > log10_u_min + 3 steps)", s.log10_u_max);
  check(std::isfinite(s.log10_g2_min) && std::isfinite(s.log10_g2_max) &&
            s.log10_g2_max > s.log10_g2_min + 3 * s.dlog10_g2,
        "log10_g2_max (expected > log10_g2_min + 3 steps)", s.log10_g2_max);
  check(s.rel_tol >= 1e-13 && s.rel_tol <= 1e-3, "rel_tol (expected 1e-13..1e-3)", s.rel_tol);
  nu_in_ = static_cast<int>(std::ceil((s.log10_u_max - s.log10_u_min) / s.dlog10_u - 1e-9));
  ng_in_ = static_cast<int>(std::ceil((s.log10_g2_max - s.log10_g2_min) / s.dlog10_g2 - 1e-9));
  // Exact steps so that the last interior node is the maximum.
  s_.dlog10_u = (s.log10_u_max - s.log10_u_min) / nu_in_;
  s_.dlog10_g2 = (s.log10_g2_max - s.log10_g2_min) / ng_in_;
  nu_ = static_cast<std::size_t>(nu_in_) + 3;
  ng_ = static_cast<std::size_t>(ng_in_) + 3;
  g_.assign(nu_ * ng_, 0.0);
  const long n = static_cast<long>(nu_ * ng_);
  bool failed = false;
  std::string msg;
#pragma omp parallel for schedule(dynamic, 16)
  for (long idx = 0; idx < n; ++idx) {
    const std::size_t ig = static_cast<std::size_t>(idx) / nu_, iu = static_cast<std::size_t>(idx) % nu_;
    const double lu = s_.log10_u_min + (static_cast<double>(iu) - 1.0) * s_.dlog10_u;
    const double lg = s_.log10_g2_min + (static_cast<double>(ig) - 1.0) * s_.dlog10_g2;
    try {
      g_[static_cast<std::size_t>(idx)] = gaunt_ff_born_elwert(std::pow(10.0, lu), std::pow(10.0, lg), s_.rel_tol);
    } catch (const std::exception& e) {
#pragma omp critical(icmscope_gaunt_table_error)
      {
        failed = true;
        msg = e.what();
      }
    }
  }
  if (failed) throw core::DomainError("GauntTable: " + msg);
}

GauntTable::Weights GauntTable::u_weights(double u) const {
  if (!(u > 0.0))
    throw core::DomainError("GauntTable: u = E/kT must be > 0, got " + num(u));
  Weights w;
  const double t = (std::log10(u) - s_.log10_u_min) / s_.dlog10_u;
  if (t < 0.0) {
    // Linear in log10 u from nodes 1 (u_min) and 2.
    const double tau = -t;
    w.i0 = 0;
    w.w[1] = 1.0 + tau;
    w.w[2] = -tau;
    return w;
  }
  if (t > nu_in_) {
    w.i0 = nu_in_ - 1;
    w.w[2] = std::sqrt(std::pow(10.0, s_.log10_u_max) / u);
    return w;
  }
  int kk = std::min(static_cast<int>(t), nu_in_ - 1);
  w.i0 = kk;
  lagrange4(t - kk, w.w);
  return w;
}

GauntTable::Weights GauntTable::g2_weights(double gamma2) const {
  if (!(gamma2 >= 0.0))
    throw core::DomainError("GauntTable: gamma2 must be >= 0, got " + num(gamma2));
  Weights w;
  double t = gamma2 > 0.0 ? (std::log10(gamma2) - s_.log10_g2_min) / s_.dlog10_g2 : 0.0;
  t = std::clamp(t, 0.0, static_cast<double>(ng_in_));
  int kk = std::min(static_cast<int>(t), ng_in_ - 1);
  w.i0 = kk;
  lagrange4(t - kk, w.w);
  return w;
}

}  // namespace icmscope::emission
