#include "icmscope/instrument/background.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <string>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"

namespace icmscope::instrument {

namespace cst = core::constants;

namespace {
std::string num(double v) {
  char b[64];
  std::snprintf(b, sizeof b, "%.9g", v);
  return b;
}
[[noreturn]] void fail(const std::string& w) { throw core::DomainError("background: " + w); }

double phi(double z) { return 0.5 * std::erfc(-z / std::sqrt(2.0)); }

// Int_{a}^{b} E^-s dE, a, b > 0 (a = 0 allowed for s < 1).
double power_integral(double s, double a, double b) {
  if (std::fabs(1.0 - s) < 1e-12) return std::log(b / a);
  return (std::pow(b, 1.0 - s) - std::pow(a, 1.0 - s)) / (1.0 - s);
}

void check_band(double lo, double hi) {
  if (!(hi > lo) || !(lo >= 0) || !std::isfinite(hi)) fail("band [" + num(lo) + ", " + num(hi) + "] keV, expected 0 <= e_min < e_max");
}

// Simpson in ln E of f(E) E over [lo, hi] (lo > 0).
template <typename F>
double log_simpson(F&& f, double lo, double hi, int n) {
  n = std::max(2, n + (n % 2));
  const double l0 = std::log(lo), h = (std::log(hi) - l0) / n;
  double s = 0.0;
  for (int k = 0; k <= n; ++k) {
    const double E = std::exp(l0 + k * h);
    const double w = (k == 0 || k == n) ? 1.0 : (k % 2 ? 4.0 : 2.0);
    s += w * f(E) * E;
  }
  return s * h / 3.0;
}
}  // namespace

std::vector<FluorescenceLine> default_fluorescence_lines(double rate, double sigma) {
  // Al K, Si K, Au M, Ni K, Cu K (physics.md section 8 [V line list]).
  std::vector<FluorescenceLine> v;
  for (double e : {1.49, 1.74, 2.12, 7.47, 8.04}) v.push_back({e, sigma, rate});
  return v;
}

ParticleBackground::ParticleBackground(ParticleBackgroundSettings s) : s_(std::move(s)) {
  if (!(s_.level_counts_s_keV_arcmin2 >= 0) || !std::isfinite(s_.level_counts_s_keV_arcmin2))
    fail("level_counts_s_keV_arcmin2 = " + num(s_.level_counts_s_keV_arcmin2) + ", expected >= 0");
  if (!(s_.e_ref_keV > 0)) fail("e_ref_keV = " + num(s_.e_ref_keV) + ", expected > 0");
  if (!std::isfinite(s_.slope)) fail("slope must be finite");
  for (std::size_t i = 0; i < s_.lines.size(); ++i) {
    const auto& l = s_.lines[i];
    const std::string f = "lines[" + std::to_string(i) + "]";
    if (!(l.energy_keV > 0)) fail(f + ".energy_keV = " + num(l.energy_keV) + ", expected > 0");
    if (!(l.sigma_keV > 0)) fail(f + ".sigma_keV = " + num(l.sigma_keV) + ", expected > 0");
    if (!(l.rate_counts_s_arcmin2 >= 0)) fail(f + ".rate_counts_s_arcmin2 = " + num(l.rate_counts_s_arcmin2) + ", expected >= 0");
  }
}

double ParticleBackground::spectrum(double E) const {
  if (!(E > 0)) return 0.0;
  double b = s_.level_counts_s_keV_arcmin2 * (s_.slope == 0.0 ? 1.0 : std::pow(E / s_.e_ref_keV, -s_.slope));
  for (const auto& l : s_.lines) {
    const double z = (E - l.energy_keV) / l.sigma_keV;
    b += l.rate_counts_s_arcmin2 * std::exp(-0.5 * z * z) / (l.sigma_keV * std::sqrt(2.0 * cst::kPi));
  }
  return b;
}

double ParticleBackground::band_rate(double lo, double hi) const {
  check_band(lo, hi);
  if (lo == 0.0 && s_.slope >= 1.0) fail("band starting at 0 keV with slope >= 1 diverges; expected e_min > 0");
  double r = s_.level_counts_s_keV_arcmin2 * std::pow(s_.e_ref_keV, s_.slope) * power_integral(s_.slope, lo, hi);
  for (const auto& l : s_.lines)
    r += l.rate_counts_s_arcmin2 * (phi((hi - l.energy_keV) / l.sigma_keV) - phi((lo - l.energy_keV) / l.sigma_keV));
  return r;
}

ForegroundComponent thermal_foreground(std::string name, double kT, double norm, bool absorbed,
                                       const std::function<double(double, double)>& model) {
  if (!model) fail("foreground '" + name + "': no spectral model given");
  if (!(kT > 0)) fail("foreground '" + name + "': kT_keV = " + num(kT) + ", expected > 0");
  ForegroundComponent c;
  c.name = std::move(name);
  c.kT_keV = kT;
  c.norm = norm;
  c.absorbed = absorbed;
  c.shape = [model, kT](double E) { return model(E, kT); };
  return c;
}

SkyBackground::SkyBackground(CxbSettings cxb, std::function<double(double)> transmission,
                             std::vector<ForegroundComponent> fg)
    : cxb_(cxb), trans_(std::move(transmission)), fg_(std::move(fg)) {
  if (!(cxb_.norm_photons_cm2_s_sr_keV >= 0) || !std::isfinite(cxb_.norm_photons_cm2_s_sr_keV))
    fail("cxb norm_photons_cm2_s_sr_keV = " + num(cxb_.norm_photons_cm2_s_sr_keV) + ", expected >= 0");
  if (!std::isfinite(cxb_.photon_index)) fail("cxb photon_index must be finite");
  for (std::size_t i = 0; i < fg_.size(); ++i) {
    if (!fg_[i].shape) fail("foreground[" + std::to_string(i) + "] ('" + fg_[i].name + "') has no spectrum");
    if (!(fg_[i].norm >= 0)) fail("foreground[" + std::to_string(i) + "].norm = " + num(fg_[i].norm) + ", expected >= 0");
  }
}

double SkyBackground::cxb_unabsorbed_sr(double E) const {
  if (!(E > 0)) return 0.0;
  return cxb_.norm_photons_cm2_s_sr_keV * std::pow(E, -cxb_.photon_index);
}

double SkyBackground::photon_spectrum(double E) const {
  if (!(E > 0)) return 0.0;
  const double t = trans_ ? trans_(E) : 1.0;
  double f = cxb_unabsorbed_sr(E) * cst::arcmin2_sr * (cxb_.absorbed ? t : 1.0);
  for (const auto& c : fg_) f += c.norm * c.shape(E) * (c.absorbed ? t : 1.0);
  return f;
}

double SkyBackground::band_photon_flux(double lo, double hi, int n) const {
  check_band(lo, hi);
  if (lo == 0.0) fail("band_photon_flux needs e_min > 0");
  return log_simpson([&](double E) { return photon_spectrum(E); }, lo, hi, n);
}

double SkyBackground::band_energy_flux(double lo, double hi, int n) const {
  check_band(lo, hi);
  if (lo == 0.0) fail("band_energy_flux needs e_min > 0");
  return cst::keV_erg * log_simpson([&](double E) { return photon_spectrum(E) * E; }, lo, hi, n);
}

double SkyBackground::count_rate(double lo, double hi, const EffectiveArea& area, int n) const {
  check_band(lo, hi);
  if (lo == 0.0) fail("count_rate needs e_min > 0");
  return log_simpson([&](double E) { return photon_spectrum(E) * area.at(E); }, lo, hi, n);
}

double powerlaw_band_intensity_erg_deg2(double norm, double gamma, double lo, double hi) {
  check_band(lo, hi);
  // Int norm E^-Gamma E dE [keV cm^-2 s^-1 sr^-1] -> erg, per deg^2.
  return norm * power_integral(gamma - 1.0, lo, hi) * cst::keV_erg * cst::deg_rad * cst::deg_rad;
}

core::ImageD background_counts(const core::ImageD& exp_s, const core::ImageD& exp_a, double particle_rate,
                               double sky_flux) {
  const core::ImageD& ref = exp_s.empty() ? exp_a : exp_s;
  if (ref.empty()) fail("background_counts needs an exposure map");
  if (!exp_s.empty() && !exp_a.empty() && !exp_s.same_grid(exp_a)) fail("exposure maps of different shapes");
  if (!(particle_rate >= 0) || !(sky_flux >= 0)) fail("background rates must be >= 0");
  if (particle_rate > 0 && exp_s.empty()) fail("a particle rate needs the exposure map in s");
  if (sky_flux > 0 && exp_a.empty()) fail("a sky flux needs the exposure map in cm**2 s");
  const double omega = std::pow(ref.pixel_arcsec() / 60.0, 2);  // arcmin^2
  core::ImageD out(ref.nx(), ref.ny(), 0.0);
  out.set_anchor(ref.anchor());
  out.set_unit("count");
  for (std::size_t i = 0; i < out.size(); ++i) {
    double v = 0.0;
    if (particle_rate > 0) v += particle_rate * exp_s.data()[i] * omega;
    if (sky_flux > 0) v += sky_flux * exp_a.data()[i] * omega;
    out.data()[i] = v;
  }
  return out;
}

}  // namespace icmscope::instrument
