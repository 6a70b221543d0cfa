#pragma once
// Instrument settings (config/instrument_settings.hpp) -> the instrument
// objects of the instrument library: effective area, response, detector,
// PSF, vignetting, backgrounds, dither. Files named by the settings (OGIP
// SPECRESP / RMF, PSF image, bad-pixel mask) are read here.
//
// Soft Galactic foreground components get the spectral shape of icmscope's
// thermal continuum (emission::ContinuumModel, free-free + recombination, no
// lines) at their kT and metallicity; each is normalised so that its
// unabsorbed energy intensity in flux_band_keV equals flux_erg_cm2_s_deg2.
// The CXB and the absorbed components pass through the Galactic column of the
// observation (Morrison & McCammon 1983).
#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "icmscope/config/instrument_settings.hpp"
#include "icmscope/emission/gaunt.hpp"
#include "icmscope/instrument/background.hpp"
#include "icmscope/instrument/convolve.hpp"
#include "icmscope/instrument/detector.hpp"
#include "icmscope/instrument/effective_area.hpp"
#include "icmscope/instrument/energy_resolution.hpp"
#include "icmscope/instrument/psf.hpp"
#include "icmscope/instrument/response_matrix.hpp"
#include "icmscope/instrument/vignetting.hpp"

namespace icmscope::pipeline {

struct InstrumentModel {
  config::InstrumentSettings settings;
  instrument::EffectiveArea area;                       // on axis, scale applied
  std::optional<instrument::ResponseMatrix> rmf;        // response kind ogip
  instrument::GaussianResolution resolution;            // response kind gaussian
  instrument::Detector detector;
  double dead_fraction = 0.0;
  instrument::Psf psf;
  instrument::ZoneSettings zones;                       // energy_keV set per observation
  instrument::KernelSettings kernel;
  instrument::Vignetting vignetting;
  instrument::ParticleBackground particle;
  instrument::SkyBackground sky;                        // with the observation's N_H
  instrument::DitherSettings dither;                    // duration and seed set per observation

  const std::string& name() const { return settings.name; }
  // First and last PI channel numbers of the event lists (TLMIN / TLMAX of PI).
  int first_channel() const;
  int last_channel() const;
  // Channel of a photon of true energy E, drawn through the response.
  int draw_channel(double E_keV, core::RandomStream& rng) const;
  // Nominal channel whose energy interval contains a detected energy E (no
  // redistribution: for the particle background, already in detected energy).
  int nominal_channel(double E_keV) const;
};

// The on-axis area curve of the settings (ogip: read_arf, then scaled).
instrument::EffectiveArea make_effective_area(const config::AreaCurveSettings& a, const std::string& instrument_file);

// Builds every object. nH_cm2: the Galactic column of the observation.
// gaunt: a Gaunt table to share with the run's continuum model (null: built here).
// Errors: core::ConfigError / InputError naming the instrument file and the
// offending section or file.
InstrumentModel build_instrument(const config::InstrumentSettings& s, double nH_cm2,
                                 std::shared_ptr<const emission::GauntTable> gaunt = nullptr);

// The instrument's effective-area nodes as a band-table folding curve: the
// curve's interpolation nodes plus its outer edges, so that the band table
// integrates exactly what EffectiveArea::at() describes.
void area_folding_curve(const InstrumentModel& m, std::vector<double>& E_keV, std::vector<double>& A_cm2);

}  // namespace icmscope::pipeline
