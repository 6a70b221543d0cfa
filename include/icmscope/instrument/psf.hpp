#pragma once
// Point-spread functions: circular Gaussian, King profile, or a sampled image.
// All angles in arcsec on the sky (off-axis angles in arcmin); surface densities
// in arcsec^-2, normalised to unit integral over the plane. Immutable value
// type: at(theta, E) returns a broadened copy.
//
// Closed forms (physics.md section 8):
//   Gaussian: sigma = FWHM / 2.3548, EEF(<r) = 1 - exp(-r^2 / (2 sigma^2));
//   King:     P(r) = ((beta-1)/(pi r_c^2)) [1 + (r/r_c)^2]^-beta,
//             EEF(<r) = 1 - [1 + (r/r_c)^2]^(1-beta), beta > 1.
#include <cstdint>
#include <memory>
#include <vector>

#include "icmscope/core/image.hpp"
#include "icmscope/core/random.hpp"

namespace icmscope::instrument {

// Off-axis and energy broadening law, illustrative (grazing-incidence mirror
// PSFs broaden with off-axis angle and energy, physics.md [M]): every angular
// scale of the PSF (FWHM, r_c, image pixel) is multiplied by
//   s(theta, E) = sqrt(1 + (theta / theta_s)^2) * (E / E0)^eta,
// theta_s_arcmin <= 0 meaning no off-axis broadening.
struct PsfScaling {
  double theta_s_arcmin = 0.0;
  double e0_keV = 1.0;
  double eta = 0.0;
  double factor(double theta_arcmin, double E_keV) const;
};

// Rasterisation control for kernel().
struct KernelSettings {
  double eef_target = 0.995;  // half-size: smallest radius enclosing this fraction
  int max_half_size = 256;    // cap on the half-size (pixels)
  int min_half_size = 2;
  int oversample = 8;         // sub-samples per pixel side (Gauss-Legendre nodes for King/image)
};

enum class PsfKind { Gaussian, King, Image };

class Psf {
 public:
  Psf() = default;  // a Gaussian of FWHM 1 arcsec
  static Psf gaussian(double fwhm_arcsec, PsfScaling scaling = {});
  static Psf king(double r_c_arcsec, double beta, PsfScaling scaling = {});
  // Sampled PSF: non-negative pixels, its pixel_arcsec and its centre at the
  // anchor's crpix (1-based; the default anchor is the image centre). Pixels are
  // normalised to unit sum; DomainError for negative / non-finite pixels or a
  // zero sum.
  static Psf image(const core::ImageD& img, PsfScaling scaling = {});

  PsfKind kind() const { return kind_; }
  const PsfScaling& scaling() const { return scaling_; }
  // The current angular scale factor (1 for a PSF as built, s(theta, E) after at()).
  double scale() const { return scale_; }
  // A copy broadened by the scaling law at off-axis angle theta (arcmin) and E (keV).
  Psf at(double theta_arcmin, double E_keV) const;
  // A copy with every angular scale multiplied by f (> 0), relative to this one.
  Psf scaled(double f) const;

  double fwhm_arcsec() const;   // Gaussian: FWHM; King: 2 r_c sqrt(2^(1/beta) - 1); image: numeric
  double r_c_arcsec() const { return rc_ * scale_; }
  double beta() const { return beta_; }

  // Surface density (arcsec^-2) at offset (dx, dy) arcsec from the centre.
  double density(double dx_arcsec, double dy_arcsec) const;
  // Encircled-energy fraction within radius r (arcsec): closed form for Gaussian
  // and King, pixel sums with sub-sampling for an image.
  double eef(double r_arcsec) const;
  // Radius (arcsec) enclosing fraction f in (0, 1): closed form for Gaussian
  // and King, bisection for an image.
  double eef_radius(double f) const;
  double half_energy_radius_arcsec() const { return eef_radius(0.5); }

  // Kernel rasterised on square pixels of pixel_arcsec, odd size 2h+1, centred
  // on the middle pixel shifted by (shift_x, shift_y) pixels (|shift| <= 0.5;
  // used to place point sources at sub-pixel positions), integrated over each
  // pixel (Gaussian: exact erf products; King and image: oversample^2
  // Gauss-Legendre nodes, finer near the core), normalised to sum 1.
  core::ImageD kernel(double pixel_arcsec, const KernelSettings& ks = {}, double shift_x = 0.0,
                      double shift_y = 0.0) const;
  // Half-size (pixels) kernel() uses.
  int kernel_half_size(double pixel_arcsec, const KernelSettings& ks = {}) const;

  // A random scattering offset (arcsec) drawn from the PSF (event mode):
  // Gaussian by two ziggurat normals, King by inverting the EEF, image from the pixel CDF
  // plus a uniform position within the pixel.
  void draw_offset(core::RandomStream& rng, double& dx_arcsec, double& dy_arcsec) const;

 private:
  struct ImageData {
    int nx = 0, ny = 0;
    double pixel_arcsec = 1.0;
    double cx = 0.0, cy = 0.0;  // centre, 0-based pixel coordinates
    std::vector<double> p;      // normalised pixel fractions
    std::vector<double> cdf;    // cumulative over p
  };
  double image_density_unscaled(double dx, double dy) const;

  PsfKind kind_ = PsfKind::Gaussian;
  PsfScaling scaling_;
  double scale_ = 1.0;
  double fwhm_ = 1.0;  // Gaussian, unscaled
  double rc_ = 1.0;    // King, unscaled
  double beta_ = 1.5;
  std::shared_ptr<const ImageData> img_;
};

}  // namespace icmscope::instrument
