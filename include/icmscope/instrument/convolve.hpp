#pragma once
// Image convolution with a PSF kernel.
//   out(x) = sum_k image(x - k) kernel(k),  k about the kernel's middle pixel,
// on the image's own grid ("same" size); flux scattered beyond the image edges
// is lost, nothing wraps around (FFT arrays zero-padded to >= n + h per axis,
// h the kernel half-size, rounded up to a 2^a 3^b 5^c 7^d length).
// FFTW r2c/c2r plans are made once per FftConvolver, under a lock (the FFTW
// planner is not thread-safe; only execution is).
#include <memory>
#include <vector>

#include "icmscope/core/image.hpp"
#include "icmscope/instrument/psf.hpp"

namespace icmscope::instrument {

class FftConvolver {
 public:
  // For images of nx x ny and an odd-sized kernel (DomainError otherwise).
  // measure = true plans with FFTW_MEASURE (slower to plan, faster to run).
  FftConvolver(int nx, int ny, const core::ImageD& kernel, bool measure = false);
  ~FftConvolver();
  FftConvolver(FftConvolver&&) noexcept;
  FftConvolver& operator=(FftConvolver&&) noexcept;
  FftConvolver(const FftConvolver&) = delete;
  FftConvolver& operator=(const FftConvolver&) = delete;

  // Convolves an nx x ny image (anchor and unit kept). Uses the object's buffers:
  // one call at a time per object.
  core::ImageD apply(const core::ImageD& image);
  int padded_nx() const;
  int padded_ny() const;

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

// One-shot FFT convolution.
core::ImageD convolve_fft(const core::ImageD& image, const core::ImageD& kernel);
// Direct summation (reference for tests; O(N M)).
core::ImageD convolve_direct(const core::ImageD& image, const core::ImageD& kernel);
// FFT above a small-kernel threshold, direct below it.
core::ImageD convolve(const core::ImageD& image, const core::ImageD& kernel);

// Smallest n' >= n with no prime factor above 7.
int fft_good_size(int n);

// Spatially varying PSF through off-axis zones: annuli about the optical axis
// with inner edges edges_arcmin (first 0, increasing; the last zone is open).
// Zone weights w_k(theta) form a partition of unity with linear ramps of
// blend_arcmin across each edge; the image is split as image * w_k, each part
// convolved with the PSF at the zone's representative angle (the middle of the
// zone's part of the image) and energy_keV, and the parts summed: flux is
// conserved as for one PSF, and each photon is blurred by the PSF of where it
// comes from.
struct ZoneSettings {
  std::vector<double> edges_arcmin{0.0, 3.0, 6.0, 9.0, 12.0};
  double blend_arcmin = 1.0;
  double energy_keV = 1.5;
  KernelSettings kernel;
};

// Weight of zone k at off-axis angle theta (arcmin).
double zone_weight(const ZoneSettings& z, std::size_t k, double theta_arcmin);

// axis_x, axis_y: optical axis in FITS 1-based pixel coordinates of `image`.
core::ImageD convolve_zones(const core::ImageD& image, double axis_x, double axis_y, const Psf& psf,
                            const ZoneSettings& z);

}  // namespace icmscope::instrument
