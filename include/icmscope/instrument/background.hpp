#pragma once
// Backgrounds (physics.md section 8).
//
// Particle (instrumental) background, in detected-energy space and not
// vignetted: a continuum B(E) = level (E / e_ref)^-slope counts s^-1 keV^-1
// arcmin^-2 plus Gaussian fluorescence lines (Al 1.49, Si 1.74, Au 2.12,
// Ni 7.47, Cu 8.04 keV [V line list]); level ~1e-3 [M, order of magnitude].
//
// Sky background, photons through the mirror (vignetted): the cosmic X-ray
// background power law I(E) = norm E^-Gamma photons cm^-2 s^-1 sr^-1 keV^-1,
// De Luca & Molendi 2004 (A&A 419, 837): norm 11.6 at 1 keV, Gamma 1.41,
// absorbed by the Galactic column through a transmission callback; plus
// optional soft Galactic foreground components (local hot bubble ~0.1 keV
// unabsorbed, halo ~0.2 keV absorbed, Liu et al. 2017) given by a spectral
// model callback so this module does not depend on the emission module.
#include <functional>
#include <string>
#include <vector>

#include "icmscope/core/image.hpp"
#include "icmscope/instrument/effective_area.hpp"

namespace icmscope::instrument {

struct FluorescenceLine {
  double energy_keV = 1.49;
  double sigma_keV = 0.05;                  // Gaussian width in detected energy
  double rate_counts_s_arcmin2 = 1e-4;      // line integral
};

struct ParticleBackgroundSettings {
  double level_counts_s_keV_arcmin2 = 1e-3; // continuum at e_ref_keV
  double e_ref_keV = 1.0;
  double slope = 0.0;                        // B ~ E^-slope
  std::vector<FluorescenceLine> lines;
};

// The fluorescence line energies of physics.md (Al, Si, Au, Ni, Cu), each with
// the same rate and width (illustrative strengths).
std::vector<FluorescenceLine> default_fluorescence_lines(double rate_counts_s_arcmin2 = 1e-4,
                                                         double sigma_keV = 0.05);

class ParticleBackground {
 public:
  ParticleBackground() = default;
  explicit ParticleBackground(ParticleBackgroundSettings s);  // DomainError naming the field
  const ParticleBackgroundSettings& settings() const { return s_; }
  // counts s^-1 keV^-1 arcmin^-2 at detected energy E.
  double spectrum(double E_keV) const;
  // counts s^-1 arcmin^-2 in [e_lo, e_hi] (closed form).
  double band_rate(double e_lo_keV, double e_hi_keV) const;

 private:
  ParticleBackgroundSettings s_;
};

struct CxbSettings {
  double norm_photons_cm2_s_sr_keV = 11.6;  // at 1 keV, De Luca & Molendi 2004
  double photon_index = 1.41;
  bool absorbed = true;                       // through the Galactic transmission
};

// A soft foreground component: photons cm^-2 s^-1 keV^-1 arcmin^-2 =
// norm * shape(E), shape from a spectral model evaluated at kT (the caller binds
// the model; kT is kept for the record).
struct ForegroundComponent {
  std::string name;
  double kT_keV = 0.1;
  double norm = 0.0;
  bool absorbed = false;
  std::function<double(double E_keV)> shape;
};

// Binds a two-argument model f(E, kT) into a component.
ForegroundComponent thermal_foreground(std::string name, double kT_keV, double norm, bool absorbed,
                                       const std::function<double(double E_keV, double kT_keV)>& model);

class SkyBackground {
 public:
  SkyBackground() = default;
  // transmission(E): Galactic photoelectric transmission exp(-N_H sigma(E));
  // empty = no absorption. DomainError naming the field for a bad setting.
  SkyBackground(CxbSettings cxb, std::function<double(double E_keV)> transmission = {},
                std::vector<ForegroundComponent> foreground = {});

  const CxbSettings& cxb() const { return cxb_; }
  // photons cm^-2 s^-1 keV^-1 arcmin^-2 arriving at the telescope.
  double photon_spectrum(double E_keV) const;
  // CXB alone, unabsorbed: photons cm^-2 s^-1 keV^-1 sr^-1.
  double cxb_unabsorbed_sr(double E_keV) const;
  // photons cm^-2 s^-1 arcmin^-2 in [e_lo, e_hi] (n-point Simpson in log E).
  double band_photon_flux(double e_lo_keV, double e_hi_keV, int n = 512) const;
  // erg cm^-2 s^-1 arcmin^-2 in [e_lo, e_hi].
  double band_energy_flux(double e_lo_keV, double e_hi_keV, int n = 512) const;
  // On-axis counts s^-1 arcmin^-2: Int photon_spectrum(E) A(E) dE.
  double count_rate(double e_lo_keV, double e_hi_keV, const EffectiveArea& area, int n = 512) const;

 private:
  CxbSettings cxb_;
  std::function<double(double)> trans_;
  std::vector<ForegroundComponent> fg_;
};

// Closed form of the unabsorbed CXB band intensity (erg cm^-2 s^-1 deg^-2) for a
// power law norm E^-Gamma photons cm^-2 s^-1 sr^-1 keV^-1.
double powerlaw_band_intensity_erg_deg2(double norm_photons_cm2_s_sr_keV, double photon_index,
                                        double e_lo_keV, double e_hi_keV);

// Expected background counts per pixel:
//   particle_rate [counts s^-1 arcmin^-2] * exposure_s * Omega_pix
// + sky_photon_flux [photons cm^-2 s^-1 arcmin^-2] * exposure_cm2_s_sky * Omega_pix,
// exposure_cm2_s_sky made with the sky spectrum as weight. Either map may be
// empty when its rate is 0. Unit "count".
core::ImageD background_counts(const core::ImageD& exposure_s, const core::ImageD& exposure_cm2_s_sky,
                               double particle_rate_counts_s_arcmin2,
                               double sky_photon_flux_cm2_s_arcmin2);

}  // namespace icmscope::instrument
