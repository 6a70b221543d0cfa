#include "icmscope/emission/band_table.hpp"

#include <algorithm>
#include <cmath>
#include <sstream>
#include <string>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/emission/absorption.hpp"

namespace icmscope::emission {
namespace {

namespace k = core::constants;

std::string num(double v) {
  std::ostringstream os;
  os.precision(10);
  os << v;
  return os.str();
}

[[noreturn]] void bad(const std::string& where, const std::string& what) { throw core::DomainError(where + ": " + what); }

// 3-point Gauss-Legendre on [-1, 1].
constexpr double kGLx[3] = {-0.7745966692414834, 0.0, 0.7745966692414834};
constexpr double kGLw[3] = {5.0 / 9.0, 8.0 / 9.0, 5.0 / 9.0};

// Append Gauss-Legendre nodes covering [a, b] split at the sorted breakpoints,
// intervals no wider than min(h_abs, x * rel).
void gl_nodes(double a, double b, std::vector<double> brk, double h_abs, double rel, std::vector<double>& x,
              std::vector<double>& w) {
  brk.push_back(a);
  brk.push_back(b);
  std::sort(brk.begin(), brk.end());
  std::vector<double> cuts;
  for (double p : brk)
    if (p >= a && p <= b && (cuts.empty() || p > cuts.back() * (1.0 + 1e-13))) cuts.push_back(p);
  for (std::size_t s = 0; s + 1 < cuts.size(); ++s) {
    double lo = cuts[s];
    const double hi = cuts[s + 1];
    while (lo < hi) {
      const double wmax = std::min(h_abs, lo * rel);
      double up = lo + wmax;
      if (up >= hi - 0.25 * wmax) up = hi;
      const double c = 0.5 * (lo + up), h = 0.5 * (up - lo);
      for (int q = 0; q < 3; ++q) {
        x.push_back(c + h * kGLx[q]);
        w.push_back(h * kGLw[q]);
      }
      lo = up;
    }
  }
}

double dot(const std::vector<double>& w, const std::vector<double>& f) {
  double s = 0.0;
  for (std::size_t i = 0; i < w.size(); ++i) s += w[i] * f[i];
  return s;
}

inline void lagrange4(double t, double* w) {
  const double tm1 = t - 1.0, tm2 = t - 2.0, tp1 = t + 1.0;
  w[0] = -t * tm1 * tm2 / 6.0;
  w[1] = tp1 * tm1 * tm2 / 2.0;
  w[2] = -tp1 * t * tm2 / 2.0;
  w[3] = tp1 * t * tm1 / 6.0;
}

}  // namespace

// ---------------------------------------------------------------------------
// validation

void validate(const BandSpec& b) {
  if (!std::isfinite(b.e_min_keV) || b.e_min_keV <= 0.0)
    bad("BandSpec", "e_min_keV must be finite and > 0, got " + num(b.e_min_keV));
  if (!std::isfinite(b.e_max_keV) || !(b.e_max_keV > b.e_min_keV))
    bad("BandSpec", "e_max_keV must be finite and > e_min_keV = " + num(b.e_min_keV) + ", got " + num(b.e_max_keV));
}

void validate(const FoldingSpec& f) {
  if (!std::isfinite(f.redshift) || f.redshift < 0.0)
    bad("FoldingSpec", "redshift must be finite and >= 0, got " + num(f.redshift));
  if (!std::isfinite(f.nH_cm2) || f.nH_cm2 < 0.0)
    bad("FoldingSpec", "nH_cm2 must be finite and >= 0, got " + num(f.nH_cm2));
  if (f.area_E_keV.size() != f.area_cm2.size())
    bad("FoldingSpec", "area_cm2 has " + std::to_string(f.area_cm2.size()) + " entries, expected " +
                           std::to_string(f.area_E_keV.size()) + " (one per area_E_keV)");
  if (f.area_E_keV.size() == 1) bad("FoldingSpec", "area_E_keV needs at least 2 points (or none for a flat 1 cm^2)");
  for (std::size_t i = 0; i < f.area_E_keV.size(); ++i) {
    if (!std::isfinite(f.area_E_keV[i]) || f.area_E_keV[i] <= 0.0)
      bad("FoldingSpec", "area_E_keV[" + std::to_string(i) + "] must be finite and > 0, got " + num(f.area_E_keV[i]));
    if (i > 0 && !(f.area_E_keV[i] > f.area_E_keV[i - 1]))
      bad("FoldingSpec", "area_E_keV must be strictly increasing at [" + std::to_string(i) + "] = " +
                             num(f.area_E_keV[i]));
    if (!std::isfinite(f.area_cm2[i]) || f.area_cm2[i] < 0.0)
      bad("FoldingSpec", "area_cm2[" + std::to_string(i) + "] must be finite and >= 0, got " + num(f.area_cm2[i]));
  }
  if (!std::isfinite(f.n_energy_per_keV) || f.n_energy_per_keV < 1.0 || f.n_energy_per_keV > 1e5)
    bad("FoldingSpec", "n_energy_per_keV must be in [1, 1e5], got " + num(f.n_energy_per_keV));
  if (!std::isfinite(f.n_energy_per_decade) || f.n_energy_per_decade < 4.0 || f.n_energy_per_decade > 1e4)
    bad("FoldingSpec", "n_energy_per_decade must be in [4, 1e4], got " + num(f.n_energy_per_decade));
}

void validate(const BandGridSpec& g) {
  if (!std::isfinite(g.kT_min_keV) || g.kT_min_keV <= 0.0)
    bad("BandGridSpec", "kT_min_keV must be finite and > 0, got " + num(g.kT_min_keV));
  if (!std::isfinite(g.kT_max_keV) || !(g.kT_max_keV > g.kT_min_keV))
    bad("BandGridSpec", "kT_max_keV must be finite and > kT_min_keV, got " + num(g.kT_max_keV));
  if (g.n_kT < 4 || g.n_kT > 100000) bad("BandGridSpec", "n_kT must be in [4, 100000], got " + std::to_string(g.n_kT));
  if (g.Z_nodes.empty()) bad("BandGridSpec", "Z_nodes needs at least one metallicity");
  for (std::size_t i = 0; i < g.Z_nodes.size(); ++i) {
    if (!std::isfinite(g.Z_nodes[i]) || g.Z_nodes[i] < 0.0)
      bad("BandGridSpec", "Z_nodes[" + std::to_string(i) + "] must be finite and >= 0, got " + num(g.Z_nodes[i]));
    if (i > 0 && !(g.Z_nodes[i] > g.Z_nodes[i - 1]))
      bad("BandGridSpec", "Z_nodes must be strictly increasing at [" + std::to_string(i) + "] = " + num(g.Z_nodes[i]));
  }
}

double folding_area_cm2(const FoldingSpec& f, double E) {
  if (f.area_E_keV.empty()) return 1.0;
  const auto& x = f.area_E_keV;
  if (E < x.front() || E > x.back()) return 0.0;
  auto it = std::upper_bound(x.begin(), x.end(), E);
  if (it == x.end()) return f.area_cm2.back();
  const std::size_t i = static_cast<std::size_t>(it - x.begin()) - 1;
  const double t = (E - x[i]) / (x[i + 1] - x[i]);
  return f.area_cm2[i] + t * (f.area_cm2[i + 1] - f.area_cm2[i]);
}

// ---------------------------------------------------------------------------
// quadrature and direct evaluation

BandQuadrature make_band_quadrature(const SpectralModel& model, const BandSpec& band, const FoldingSpec& fold) {
  validate(band);
  validate(fold);
  const double zp1 = 1.0 + fold.redshift;
  double a = band.e_min_keV, b = band.e_max_keV;
  // Only the part of the band where the model emits and the area curve is non-zero.
  a = std::max(a, model.E_min_keV() / zp1);
  b = std::min(b, model.E_max_keV() / zp1);
  if (!fold.area_E_keV.empty()) {
    a = std::max(a, fold.area_E_keV.front());
    b = std::min(b, fold.area_E_keV.back());
  }
  BandQuadrature q;
  if (!(b > a)) return q;  // no overlap: all coefficients vanish
  std::vector<double> brk;
  if (fold.nH_cm2 > 0.0)
    for (double e : mm83_edges_keV()) brk.push_back(e);
  for (double e : model.discontinuities_keV()) brk.push_back(e / zp1);
  for (double e : fold.area_E_keV) brk.push_back(e);
  std::vector<double> w;
  gl_nodes(a, b, std::move(brk), 1.0 / fold.n_energy_per_keV, std::pow(10.0, 1.0 / fold.n_energy_per_decade) - 1.0,
           q.E_obs_keV, w);
  const std::size_t n = q.E_obs_keV.size();
  q.E_rest_keV.resize(n);
  q.w_photon.resize(n);
  q.w_energy.resize(n);
  for (std::size_t i = 0; i < n; ++i) {
    const double e = q.E_obs_keV[i];
    const double tr = fold.nH_cm2 > 0.0 ? mm83_transmission(e, fold.nH_cm2) : 1.0;
    q.E_rest_keV[i] = zp1 * e;
    q.w_photon[i] = zp1 * zp1 * w[i] * folding_area_cm2(fold, e) * tr;
    q.w_energy[i] = zp1 * zp1 * w[i] * e * k::keV_erg * tr;
  }
  return q;
}

double band_photon_coefficient_direct(const SpectralModel& model, const BandSpec& band, const FoldingSpec& fold,
                                      double kT, double Z) {
  const BandQuadrature q = make_band_quadrature(model, band, fold);
  std::vector<double> f(q.E_rest_keV.size());
  if (!f.empty()) model.photon_spectrum(q.E_rest_keV.data(), f.size(), kT, Z, f.data());
  return dot(q.w_photon, f);
}

double band_energy_coefficient_direct(const SpectralModel& model, const BandSpec& band, const FoldingSpec& fold,
                                      double kT, double Z) {
  const BandQuadrature q = make_band_quadrature(model, band, fold);
  std::vector<double> f(q.E_rest_keV.size());
  if (!f.empty()) model.photon_spectrum(q.E_rest_keV.data(), f.size(), kT, Z, f.data());
  return dot(q.w_energy, f);
}

double bolometric_coefficient_direct(const SpectralModel& model, double kT, double Z, double n_per_decade) {
  if (!(kT > 0.0) || !std::isfinite(kT))
    bad("bolometric_coefficient_direct", "kT_keV must be finite and > 0, got " + num(kT));
  if (!(n_per_decade >= 4.0) || !std::isfinite(n_per_decade))
    bad("bolometric_coefficient_direct", "n_per_decade must be >= 4, got " + num(n_per_decade));
  const double a = std::max(1e-9 * kT, model.E_min_keV());
  const double b = std::min(60.0 * kT, model.E_max_keV());
  if (!(b > a)) return 0.0;
  std::vector<double> x, w;
  gl_nodes(a, b, model.discontinuities_keV(), kT / 8.0, std::pow(10.0, 1.0 / n_per_decade) - 1.0, x, w);
  std::vector<double> f(x.size());
  model.photon_spectrum(x.data(), x.size(), kT, Z, f.data());
  double s = 0.0;
  for (std::size_t i = 0; i < x.size(); ++i) s += w[i] * x[i] * f[i];
  return s * k::keV_erg;
}

// ---------------------------------------------------------------------------
// BandTable

BandTable::BandTable(const SpectralModel& model, const BandSpec& band, const FoldingSpec& fold,
                     const BandGridSpec& grid)
    : band_(band), fold_(fold), grid_(grid), model_name_(model.name()) {
  validate(band_);
  validate(fold_);
  validate(grid_);
  nT_ = grid_.n_kT;
  lnT0_ = std::log(grid_.kT_min_keV);
  dlnT_ = (std::log(grid_.kT_max_keV) - lnT0_) / (nT_ - 1);
  inv_dlnT_ = 1.0 / dlnT_;
  {
    const auto& zn = grid_.Z_nodes;
    Z_uniform_ = zn.size() > 1;
    for (std::size_t i = 1; i < zn.size() && Z_uniform_; ++i)
      Z_uniform_ = std::abs((zn[i] - zn[i - 1]) - (zn[1] - zn[0])) <= 1e-12 * (zn[1] - zn[0]);
    if (zn.size() > 1) inv_dZ_ = 1.0 / (zn[1] - zn[0]);
  }
  nj_ = static_cast<std::size_t>(nT_) + 2;
  const std::size_t nZ = grid_.Z_nodes.size();
  const BandQuadrature q = make_band_quadrature(model, band_, fold_);
  n_quad_ = q.E_rest_keV.size();

  std::vector<double> rp(nZ * nj_, 0.0), re(nZ * nj_, 0.0), rb(grid_.bolometric ? nZ * nj_ : 0, 0.0);
  const long njobs = static_cast<long>(nj_ * nZ);
  bool failed = false;
  std::string msg;
#pragma omp parallel
  {
    std::vector<double> f(n_quad_);
#pragma omp for schedule(dynamic, 4)
    for (long job = 0; job < njobs; ++job) {
      const std::size_t iz = static_cast<std::size_t>(job) / nj_, j = static_cast<std::size_t>(job) % nj_;
      const double kT = std::exp(lnT0_ + (static_cast<double>(j) - 1.0) * dlnT_);
      const double Z = grid_.Z_nodes[iz];
      try {
        if (n_quad_ > 0) {
          model.photon_spectrum(q.E_rest_keV.data(), n_quad_, kT, Z, f.data());
          rp[iz * nj_ + j] = dot(q.w_photon, f);
          re[iz * nj_ + j] = dot(q.w_energy, f);
        }
        if (grid_.bolometric) rb[iz * nj_ + j] = bolometric_coefficient_direct(model, kT, Z, fold_.n_energy_per_decade);
      } catch (const std::exception& e) {
#pragma omp critical(icmscope_band_table_error)
        {
          failed = true;
          msg = e.what();
        }
      }
    }
  }
  if (failed) throw core::DomainError("BandTable (" + model_name_ + "): " + msg);
  finish(photon_, std::move(rp));
  finish(energy_, std::move(re));
  if (grid_.bolometric) finish(bolo_, std::move(rb));
}

void BandTable::finish(Table& t, std::vector<double>&& raw) const {
  t.present = true;
  t.log_mode = std::all_of(raw.begin(), raw.end(), [](double v) { return v > 0.0 && std::isfinite(v); });
  t.v = std::move(raw);
  if (t.log_mode)
    for (double& v : t.v) v = std::log(v);
}

std::vector<double> BandTable::kT_nodes() const {
  std::vector<double> r(static_cast<std::size_t>(nT_));
  for (int i = 0; i < nT_; ++i) r[static_cast<std::size_t>(i)] = std::exp(lnT0_ + i * dlnT_);
  return r;
}

// Coefficient of Z row iz at x = (ln kT - lnT0) / dlnT (nominal node index),
// outside the nominal range only (extrapolation or clamp).
double BandTable::at_Z(const Table& t, std::size_t iz, double x) const {
  const double* row = t.v.data() + iz * nj_;  // row[m + 1] is nominal node m
  const int last = nT_ - 1;
  if (!t.log_mode) return x < 0.0 ? row[1] : row[last + 1];
  // Linear extrapolation of ln c in ln kT from the end interval.
  if (x < 0.0) return std::exp(row[1] + x * (row[2] - row[1]));
  return std::exp(row[last + 1] + (x - last) * (row[last + 1] - row[last]));
}

double BandTable::lookup(const Table& t, double kT, double Z) const {
  if (!(kT > 0.0) || !std::isfinite(kT)) return 0.0;
  const double x = (std::log(kT) - lnT0_) * inv_dlnT_;
  // Metallicity segment: clamp below the first node (NaN too), extrapolate above the last.
  const auto& zn = grid_.Z_nodes;
  const std::size_t nZ = zn.size();
  std::size_t iz = 0;
  double f = 0.0;
  const bool two = nZ > 1 && Z > zn.front();
  if (two) {
    if (Z_uniform_) {
      const double zz = (Z - zn.front()) * inv_dZ_;
      iz = zz < static_cast<double>(nZ - 2) ? static_cast<std::size_t>(zz) : nZ - 2;
      f = zz - static_cast<double>(iz);
    } else {
      while (iz + 2 < nZ && Z > zn[iz + 1]) ++iz;
      f = (Z - zn[iz]) / (zn[iz + 1] - zn[iz]);
    }
  }
  const int last = nT_ - 1;
  double c0, c1 = 0.0;
  if (x >= 0.0 && x <= last) {
    int kk = static_cast<int>(x);
    if (kk > last - 1) kk = last - 1;
    double w[4];
    lagrange4(x - kk, w);
    // Nominal nodes kk-1 .. kk+2 are row[kk .. kk+3].
    const double* p0 = t.v.data() + iz * nj_ + kk;
    double v0 = w[0] * p0[0] + w[1] * p0[1] + w[2] * p0[2] + w[3] * p0[3];
    double v1 = 0.0;
    if (two) {
      const double* p1 = p0 + nj_;
      v1 = w[0] * p1[0] + w[1] * p1[1] + w[2] * p1[2] + w[3] * p1[3];
    }
    if (t.log_mode) {
      c0 = std::exp(v0);
      c1 = two ? std::exp(v1) : 0.0;
    } else {
      c0 = std::max(v0, 0.0);
      c1 = std::max(v1, 0.0);
    }
  } else {
    c0 = at_Z(t, iz, x);
    if (two) c1 = at_Z(t, iz + 1, x);
  }
  if (!two) return c0;
  return std::max(0.0, c0 + f * (c1 - c0));
}

double BandTable::bolometric_coefficient(double kT, double Z) const {
  if (!bolo_.present) throw core::DomainError("BandTable: built with grid.bolometric = false; no bolometric coefficient");
  return lookup(bolo_, kT, Z);
}

void BandTable::photon_coefficients(const float* kT, const float* Z, std::size_t n, double* out) const {
  const long nn = static_cast<long>(n);
#pragma omp parallel for schedule(static) if (nn > 8192)
  for (long i = 0; i < nn; ++i) out[i] = lookup(photon_, kT[i], Z[i]);
}

void BandTable::energy_coefficients(const float* kT, const float* Z, std::size_t n, double* out) const {
  const long nn = static_cast<long>(n);
#pragma omp parallel for schedule(static) if (nn > 8192)
  for (long i = 0; i < nn; ++i) out[i] = lookup(energy_, kT[i], Z[i]);
}

}  // namespace icmscope::emission
