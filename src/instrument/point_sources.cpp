#include "icmscope/instrument/point_sources.hpp"

#include <algorithm>
#include <cmath>
#include <string>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/core/random.hpp"
#include "icmscope/instrument/pointing.hpp"
#include "icmscope/instrument/realise.hpp"

namespace icmscope::instrument {

namespace {
[[noreturn]] void fail(const std::string& w) { throw core::DomainError("point sources: " + w); }

double power_integral(double s, double a, double b) {  // Int_a^b E^-s dE
  if (std::fabs(1.0 - s) < 1e-12) return std::log(b / a);
  return (std::pow(b, 1.0 - s) - std::pow(a, 1.0 - s)) / (1.0 - s);
}
}  // namespace

LogNLogS LogNLogS::moretti2003_soft() { return {6150.0, 1.82, 0.60, 1.48e-14, 0.5, 2.0}; }
LogNLogS LogNLogS::moretti2003_hard() { return {5300.0, 1.57, 0.44, 4.5e-15, 2.0, 10.0}; }

double LogNLogS::n_above(double S) const {
  if (!(S > 0)) fail("n_above: flux " + std::to_string(S) + ", expected > 0");
  return n0_deg2 * std::pow(2e-15, a1) / (std::pow(S, a1) + std::pow(s0_cgs, a1 - a2) * std::pow(S, a2));
}

double LogNLogS::flux_at(double n) const {
  if (!(n > 0)) fail("flux_at: surface density " + std::to_string(n) + " deg^-2, expected > 0");
  double lo = std::log(1e-25), hi = std::log(1e-3);  // n_above decreases with S
  for (int it = 0; it < 200 && hi - lo > 1e-13; ++it) {
    const double mid = 0.5 * (lo + hi);
    (n_above(std::exp(mid)) > n ? lo : hi) = mid;
  }
  return std::exp(0.5 * (lo + hi));
}

std::vector<PointSource> draw_point_sources(const core::ImageD& grid, const LogNLogS& lns, double s_min,
                                            double s_max, std::uint64_t seed) {
  if (grid.empty()) fail("the sky grid is empty");
  if (!(s_min > 0)) fail("s_min_cgs = " + std::to_string(s_min) + ", expected > 0");
  if (!(s_max > s_min)) fail("s_max_cgs = " + std::to_string(s_max) + ", expected > s_min_cgs");
  const double pix_deg = grid.pixel_arcsec() / 3600.0;
  const double area = grid.nx() * pix_deg * grid.ny() * pix_deg;
  const double n_lo = lns.n_above(s_max), n_hi = lns.n_above(s_min);
  core::RandomStream rng(seed, std::uint64_t{1} << 48);  // apart from the counts / event streams
  const std::int32_t n = poisson_draw(rng, (n_hi - n_lo) * area);
  std::vector<PointSource> out(static_cast<std::size_t>(n));
  for (std::int32_t i = 0; i < n; ++i) {
    PointSource& p = out[static_cast<std::size_t>(i)];
    p.id = i + 1;
    p.x = 0.5 + grid.nx() * rng.uniform();
    p.y = 0.5 + grid.ny() * rng.uniform();
    p.flux_cgs = lns.flux_at(n_lo + (n_hi - n_lo) * (1.0 - rng.uniform()));
    const SkyPoint sp = pixel_to_sky(grid.anchor(), p.x, p.y);
    p.ra_deg = sp.ra_deg;
    p.dec_deg = sp.dec_deg;
  }
  return out;
}

double powerlaw_photons_per_erg(double g, double flo, double fhi, double clo, double chi) {
  if (!(flo > 0 && fhi > flo && clo > 0 && chi > clo)) fail("powerlaw_photons_per_erg: bands must satisfy 0 < lo < hi");
  return power_integral(g, clo, chi) / (core::constants::keV_erg * power_integral(g - 1.0, flo, fhi));
}

void add_point_sources(core::ImageD& expected, std::vector<PointSource>& src, const core::ImageD& exposure,
                       double ppe, const Psf& psf, double axis_x, double axis_y, double energy_keV,
                       const KernelSettings& ks) {
  if (!expected.same_grid(exposure)) fail("the expected image and the exposure map differ in shape");
  if (!(ppe >= 0)) fail("photons_per_erg must be >= 0");
  const double pix = expected.pixel_arcsec();
  for (PointSource& s : src) {
    const double theta = std::hypot(s.x - axis_x, s.y - axis_y) * pix / 60.0;
    const double cx = s.x - 1.0, cy = s.y - 1.0;  // 0-based centre
    const int icx = static_cast<int>(std::lround(cx)), icy = static_cast<int>(std::lround(cy));
    const double shx = std::clamp(cx - icx, -0.5, 0.5), shy = std::clamp(cy - icy, -0.5, 0.5);
    const core::ImageD k = psf.at(theta, energy_keV).kernel(pix, ks, shx, shy);
    const int h = k.nx() / 2;
    const double photons = s.flux_cgs * ppe;  // photons cm^-2 s^-1
    double tot = 0.0;
    for (int j = 0; j < k.ny(); ++j) {
      const int iy = icy + j - h;
      if (iy < 0 || iy >= expected.ny()) continue;
      for (int i = 0; i < k.nx(); ++i) {
        const int ix = icx + i - h;
        if (ix < 0 || ix >= expected.nx()) continue;
        const double c = photons * k(i, j) * exposure(ix, iy);
        expected(ix, iy) += c;
        tot += c;
      }
    }
    s.expected_counts = tot;
  }
}

}  // namespace icmscope::instrument
