#pragma once
// `observe`: one target through one instrument.
//
// Expected counts per pixel on the map grid (all images share its WCS):
//   source  = [PSF (x) rate] * exposure_cm2_s / A_band
//             rate: physical maps with the instrument's on-axis area folded
//             into the band table (counts/s per pixel on axis); the PSF is
//             applied first (FFT convolution, off-axis zones), then the
//             relative exposure (vignetting, chip gaps, bad pixels, dither,
//             live time), so gaps stay sharp.
//   points  = Moretti et al. 2003 sources, each spread by the PSF at its
//             off-axis angle and multiplied by the exposure map (power-law weighted).
//   particle = B_band [counts s^-1 arcmin^-2] * exposure_s * Omega_pix (not vignetted)
//   sky     = F_band [photons cm^-2 s^-1 arcmin^-2] * exposure_cm2_s(sky spectrum) * Omega_pix
//   model   = source + points + particle + sky.
// Counts: each component is a Poisson image of its own seed (derived from
// observation.seed); the counts image is their sum. Events are made from
// those very counts (one event per count, instrument/realise.hpp), so the
// image binned from the event list equals the counts image exactly.
//
// Event energies: cluster photons from the absorbed, redshifted continuum at
// the pixel's emission-weighted temperature, quantised into
// temperature_bins spectra (log-spaced kT), times the on-axis area; pixels
// without projected emission (reached only through the PSF) use the spectrum
// at the field's emission-weighted mean kT. Point sources: absorbed power
// law x area. Sky: the sky spectrum x area. Particle background: its own
// spectrum, already in detected energy (PI = nominal channel, no
// redistribution). Photon PI channels are drawn through the response (RMF or
// Gaussian resolution). The band selects true photon energies.
#include <cstdint>
#include <string>
#include <vector>

#include "icmscope/config/observe_settings.hpp"
#include "icmscope/core/image.hpp"
#include "icmscope/instrument/point_sources.hpp"
#include "icmscope/instrument/pointing.hpp"
#include "icmscope/instrument/realise.hpp"
#include "icmscope/instrument/spectrum_sampler.hpp"
#include "icmscope/pipeline/instrument_model.hpp"
#include "icmscope/pipeline/log.hpp"
#include "icmscope/pipeline/physical_maps.hpp"

namespace icmscope::pipeline {

// Component tags of the event list (COMPONENT column).
enum ObsComponent : std::uint8_t { kCompCluster = 0, kCompPoints = 1, kCompSky = 2, kCompParticle = 3, kNComp = 4 };

struct ExpectedObservation {
  // Inputs on the grid.
  core::ImageD rate_onaxis;        // counts/s per pixel, on-axis area, before PSF
  core::ImageD t_ew;               // keV (0 where no emission)
  // Exposure.
  core::ImageD exposure_s;         // s (mask, dither, live time)
  core::ImageD exposure_cm2_s;     // cm**2 s, weighted by the cluster spectrum
  core::ImageD exposure_cm2_s_sky; // cm**2 s, weighted by the sky spectrum
  double band_area_cm2 = 0.0;      // on-axis A_band of the cluster spectrum
  double live_time_s = 0.0;
  // Expected counts per component (index = ObsComponent) and their sum.
  std::vector<core::ImageD> expected;
  core::ImageD model;
  std::vector<instrument::PointSource> sources;  // truth list
  // Pointing and the optical axis on the grid (FITS 1-based pixels).
  instrument::Pointing pointing;
  double axis_x = 0.0, axis_y = 0.0;
  double psf_energy_keV = 1.0;
  double mean_kT_keV = 0.0;        // emission-weighted over the field
  // Event energy models.
  std::vector<instrument::SpectrumSampler> cluster_spectra;  // per temperature bin
  std::vector<double> cluster_bin_kT;                         // keV, bin centres
  core::Image<std::int32_t> spectrum_index;                   // per pixel (-1 = global)
  instrument::SpectrumSampler cluster_global, points_spectrum, sky_spectrum, particle_spectrum;
  // Rates for the record.
  double particle_rate_counts_s_arcmin2 = 0.0;  // in the band
  double sky_photon_flux_cm2_s_arcmin2 = 0.0;   // in the band, absorbed
  double band_min_keV = 0.5, band_max_keV = 2.0;
  double seconds_psf = 0.0, seconds_exposure = 0.0;
};

struct Realisation {
  std::vector<instrument::CountsImage> counts;  // per component
  instrument::CountsImage total;
  instrument::EventList events;                 // empty unless requested
};

// Seed of component c derived from the observation seed (splitmix64).
std::uint64_t component_seed(std::uint64_t seed, int component);

// The expected images of an observation of physical maps (rate map with the
// instrument's area folded in, counts/s per pixel). redshift, nH_cm2 and the
// spectral model describe the cluster's spectrum for the event energies and the
// exposure-map weighting.
ExpectedObservation expect_observation(const PhysicalMaps& maps, const config::ObservationSettings& obs,
                                       const InstrumentModel& inst, const emission::SpectralModel& model,
                                       double redshift, double nH_cm2, double band_min_keV, double band_max_keV,
                                       Log& log);

// Poisson counts per component and (optionally) the event list, sorted by time.
Realisation realise_observation(const ExpectedObservation& x, const InstrumentModel& inst, std::uint64_t seed,
                                bool events, double exposure_s);

struct ObserveResult {
  std::string counts_file, exposure_file, background_file, model_file, events_file, sources_file;
  std::string config_file, instrument_config_file, quicklook_file;
  double expected[kNComp] = {0, 0, 0, 0};
  long long counts[kNComp] = {0, 0, 0, 0};
  std::size_t n_events = 0, n_sources = 0;
  double seconds_maps = 0, seconds_expected = 0, seconds_realise = 0, seconds_write = 0;
};

ObserveResult run_observe(const config::ObserveRunSettings& s, Log& log);

}  // namespace icmscope::pipeline
