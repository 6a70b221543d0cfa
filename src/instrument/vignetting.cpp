#include "icmscope/instrument/vignetting.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <string>

#include "icmscope/core/errors.hpp"

namespace icmscope::instrument {

namespace {
std::string num(double v) {
  char b[64];
  std::snprintf(b, sizeof b, "%.9g", v);
  return b;
}

// Index i with x[i] <= v < x[i+1] and the fraction, clamped to the ends.
void locate(const std::vector<double>& x, double v, std::size_t& i, double& t) {
  if (x.size() == 1 || v <= x.front()) {
    i = 0;
    t = 0.0;
    return;
  }
  if (v >= x.back()) {
    i = x.size() - 2;
    t = 1.0;
    return;
  }
  i = static_cast<std::size_t>(std::upper_bound(x.begin(), x.end(), v) - x.begin()) - 1;
  t = (v - x[i]) / (x[i + 1] - x[i]);
}
}  // namespace

Vignetting Vignetting::analytic(const AnalyticVignetting& a) {
  auto bad = [](const char* f, double v, const char* want) {
    throw core::DomainError(std::string("vignetting: ") + f + " = " + num(v) + ", expected " + want);
  };
  if (!(a.theta_v0_arcmin > 0) || !std::isfinite(a.theta_v0_arcmin)) bad("theta_v0_arcmin", a.theta_v0_arcmin, "> 0");
  if (!(a.e0_keV > 0)) bad("e0_keV", a.e0_keV, "> 0");
  if (!std::isfinite(a.energy_slope)) bad("energy_slope", a.energy_slope, "a finite value");
  if (!(a.p > 0) || !std::isfinite(a.p)) bad("p", a.p, "> 0 (V decreasing with off-axis angle)");
  Vignetting v;
  v.kind_ = Kind::Analytic;
  v.a_ = a;
  return v;
}

Vignetting Vignetting::table(std::vector<double> th, std::vector<double> en, std::vector<double> val,
                             std::string origin) {
  auto fail = [&](const std::string& w) { throw core::DomainError(origin + ": " + w); };
  if (th.size() < 2) fail("theta_arcmin has " + std::to_string(th.size()) + " values, expected at least 2");
  if (en.empty()) fail("energy_keV is empty, expected at least one energy");
  if (th.front() != 0.0) fail("theta_arcmin[0] = " + num(th.front()) + ", expected 0 (on axis)");
  for (std::size_t i = 1; i < th.size(); ++i)
    if (!(th[i] > th[i - 1])) fail("theta_arcmin[" + std::to_string(i) + "] = " + num(th[i]) + ", expected strictly increasing");
  for (std::size_t i = 0; i < en.size(); ++i)
    if (!(en[i] > 0.0) || (i > 0 && !(en[i] > en[i - 1])))
      fail("energy_keV[" + std::to_string(i) + "] = " + num(en[i]) + ", expected > 0 and strictly increasing");
  if (val.size() != th.size() * en.size())
    fail("values has " + std::to_string(val.size()) + " entries, expected " + std::to_string(th.size()) + " x " +
         std::to_string(en.size()) + " (energy rows of theta columns)");
  for (std::size_t k = 0; k < val.size(); ++k)
    if (!(val[k] >= 0.0 && val[k] <= 1.0 + 1e-6))
      fail("values[" + std::to_string(k) + "] = " + num(val[k]) + ", expected in [0, 1] (relative to on-axis)");
  for (std::size_t e = 0; e < en.size(); ++e)
    if (std::fabs(val[e * th.size()] - 1.0) > 1e-6)
      fail("values at theta 0 and energy " + num(en[e]) + " keV = " + num(val[e * th.size()]) + ", expected 1");
  Vignetting v;
  v.kind_ = Kind::Table;
  v.th_ = std::move(th);
  v.en_ = std::move(en);
  v.val_ = std::move(val);
  return v;
}

double Vignetting::operator()(double theta, double E) const {
  switch (kind_) {
    case Kind::None:
      return 1.0;
    case Kind::Analytic: {
      double tv = a_.theta_v0_arcmin;
      if (a_.energy_slope != 0.0 && E > 0.0) tv *= std::pow(E / a_.e0_keV, -a_.energy_slope);
      const double x = theta / tv;
      return a_.p == 1.0 ? 1.0 / (1.0 + x * x) : std::pow(1.0 + x * x, -a_.p);
    }
    case Kind::Table: {
      std::size_t i, j;
      double t, u;
      locate(th_, std::fabs(theta), i, t);
      const std::size_t nt = th_.size();
      auto row = [&](std::size_t e) { return (1 - t) * val_[e * nt + i] + t * val_[e * nt + i + 1]; };
      if (en_.size() == 1) return std::min(1.0, row(0));
      locate(en_, E, j, u);
      return std::min(1.0, (1 - u) * row(j) + u * row(j + 1));
    }
  }
  return 1.0;
}

double Vignetting::band_average(double theta, double e_lo, double e_hi, const std::function<double(double)>& w,
                                int n) const {
  if (kind_ == Kind::None) return 1.0;
  if (!(e_hi > e_lo)) throw core::DomainError("vignetting: band [" + num(e_lo) + ", " + num(e_hi) + "] keV, expected e_min < e_max");
  n = std::max(1, n);
  const double h = (e_hi - e_lo) / n;
  double s = 0.0, sw = 0.0;
  for (int k = 0; k < n; ++k) {
    const double E = e_lo + (k + 0.5) * h;
    const double ww = w ? w(E) : 1.0;
    s += ww * (*this)(theta, E);
    sw += ww;
  }
  return sw > 0.0 ? s / sw : (*this)(theta, 0.5 * (e_lo + e_hi));
}

}  // namespace icmscope::instrument
