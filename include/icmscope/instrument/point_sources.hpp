#pragma once
// Point sources from the Moretti et al. 2003 (ApJ 588, 696) logN-logS
// (physics.md section 8, parameters [M], consistency [C]):
//   N(>S) = N0 (2e-15)^a1 / (S^a1 + S0^(a1-a2) S^a2)  deg^-2, S in erg cm^-2 s^-1,
// 0.5-2 keV: a1 = 1.82, a2 = 0.60, S0 = 1.48e-14, N0 = 6150;
// 2-10 keV: a1 = 1.57, a2 = 0.44, S0 = 4.5e-15, N0 = 5300.
// A Poisson number of sources with fluxes in [s_min, s_max] is drawn over a
// sky grid, uniform in position, and deposited through the PSF.
#include <cstdint>
#include <vector>

#include "icmscope/core/image.hpp"
#include "icmscope/instrument/psf.hpp"

namespace icmscope::instrument {

struct LogNLogS {
  double n0_deg2 = 6150.0;
  double a1 = 1.82;
  double a2 = 0.60;
  double s0_cgs = 1.48e-14;
  double band_lo_keV = 0.5;  // band of the fluxes
  double band_hi_keV = 2.0;
  static LogNLogS moretti2003_soft();
  static LogNLogS moretti2003_hard();
  // Sources per deg^2 brighter than S (erg cm^-2 s^-1).
  double n_above(double s_cgs) const;
  // Flux S with n_above(S) = n (deg^-2), bisection in log S (n > 0).
  double flux_at(double n_deg2) const;
};

struct PointSource {
  int id = 0;
  double x = 0.0, y = 0.0;        // FITS 1-based pixel coordinates on the grid
  double ra_deg = 0.0, dec_deg = 0.0;
  double flux_cgs = 0.0;          // erg cm^-2 s^-1 in the logN-logS band
  double expected_counts = 0.0;   // filled by add_point_sources
};

// Draws the sources over the whole grid (area nx ny pixel^2) with
// RandomStream(seed, 2^48) (a stream id no counts or event block uses, so the
// same seed may serve the whole realisation). DomainError for s_min <= 0 or s_max <= s_min.
std::vector<PointSource> draw_point_sources(const core::ImageD& grid, const LogNLogS& lns, double s_min_cgs,
                                            double s_max_cgs, std::uint64_t seed);

// Photons in [count_lo, count_hi] per erg in [flux_lo, flux_hi] for a power law
// of photon index gamma (photons keV^-1 ~ E^-gamma).
double powerlaw_photons_per_erg(double gamma, double flux_lo_keV, double flux_hi_keV, double count_lo_keV,
                                double count_hi_keV);

// Adds the sources to an expected-counts image: each source's photon flux
// flux_i * photons_per_erg (photons cm^-2 s^-1) is spread by the PSF at its
// off-axis angle from the axis (FITS pixels axis_x, axis_y) and energy_keV, at
// its sub-pixel position, and multiplied by the exposure map (cm^2 s) of each
// receiving pixel (so chip gaps and vignetting act as on extended emission);
// fills expected_counts in the truth list.
void add_point_sources(core::ImageD& expected, std::vector<PointSource>& sources,
                       const core::ImageD& exposure_cm2_s, double photons_per_erg, const Psf& psf,
                       double axis_x, double axis_y, double energy_keV, const KernelSettings& ks = {});

}  // namespace icmscope::instrument
