#pragma once
// Gaussian energy resolution of a CCD-like detector, used when no
// redistribution matrix is given. Illustrative form (physics.md section 8, [M]):
//   FWHM(E) = 2.3548 w sqrt(F E / w + sigma_read^2),
// w the energy per electron-hole pair, F the Fano factor, sigma_read the read
// noise in electrons (rms). Channels are uniform in energy: channel
// first_channel + floor(E' / channel_width_keV), clamped to the channel range.
#include <vector>

#include "icmscope/core/random.hpp"
#include "icmscope/instrument/response_matrix.hpp"

namespace icmscope::instrument {

struct GaussianResolution {
  double pair_energy_keV = 3.65e-3;  // w, silicon (common practice)
  double fano = 0.12;                // F, from memory, unverified
  double read_noise_electrons = 3.0; // rms
  double channel_width_keV = 0.0146; // common practice for CCD PI channels
  int n_channels = 1024;
  int first_channel = 1;

  double fwhm_keV(double E_keV) const;
  double sigma_keV(double E_keV) const { return fwhm_keV(E_keV) / 2.3548200450309493; }
  // Drawn channel for a photon of energy E (one normal deviate, ziggurat).
  int draw_channel(double E_keV, core::RandomStream& rng) const;
  // Channel number whose energy interval contains E, clamped to the range.
  int channel_for_energy(double E_keV) const;
  // Validates (DomainError naming the field).
  void validate() const;
};

// A ResponseMatrix from the Gaussian law on the given energy edges (keV,
// strictly increasing): each row is the Gaussian integrated over the channel
// intervals (values below 1e-9 of the row dropped), renormalised to 1 over
// the channel range; EBOUNDS from the channel width.
ResponseMatrix make_gaussian_response(const std::vector<double>& energy_edges_keV,
                                      const GaussianResolution& res);

}  // namespace icmscope::instrument
