#pragma once
// Instrument description files (icmscope's own YAML schema, documented in the
// README section "Instruments"): plain settings structs filled by a strict
// reader. Units are in the field names. The instrument objects themselves are
// built from these settings by pipeline/instrument_model.hpp (files named here,
// OGIP responses, PSF images and bad-pixel masks, are read there, not here).
//
// Top-level sections of an instrument file:
//   instrument           name, telescope, description
//   effective_area       kind analytic | table | ogip (+ scale)
//   response             kind gaussian | ogip (PI channels of events)
//   detector             field of view, chips and gaps, pixel, bad pixels, dead time
//   psf                  kind gaussian | king | image, off-axis and energy law, zones
//   vignetting           kind none | analytic | table
//   particle_background  continuum level, slope, fluorescence lines (not vignetted)
//   sky_background       absorbed CXB power law, thermal foreground components
//   dither               pattern none | lissajous | random
#include <string>
#include <vector>

#include "icmscope/config/settings_reader.hpp"
#include "icmscope/instrument/background.hpp"
#include "icmscope/instrument/detector.hpp"
#include "icmscope/instrument/effective_area.hpp"
#include "icmscope/instrument/energy_resolution.hpp"
#include "icmscope/instrument/psf.hpp"
#include "icmscope/instrument/vignetting.hpp"

namespace icmscope::config {

struct AreaCurveSettings {
  std::string kind = "analytic";          // analytic | table | ogip
  instrument::AnalyticAreaSettings analytic;
  std::vector<double> energy_keV;         // table: points, strictly increasing, > 0
  std::vector<double> area_cm2;           // table: one value per point, >= 0
  std::string file;                       // ogip: SPECRESP file (path resolved against the YAML)
  double scale = 1.0;                     // multiplies the whole curve (> 0)
};

struct ResponseSettings {
  std::string kind = "gaussian";          // gaussian | ogip
  instrument::GaussianResolution gaussian;
  std::string file;                       // ogip: RMF (MATRIX or SPECRESP MATRIX + EBOUNDS)
  int extver = 0;                         // 0 = first matrix extension
};

struct DetectorLayoutSettings {
  instrument::DetectorSettings layout;
  std::string bad_pixel_file;             // optional FITS image, nonzero = bad (detector pixels)
  double dead_fraction = 0.0;             // live time = exposure (1 - dead_fraction)
};

struct PsfSettings {
  std::string kind = "gaussian";          // gaussian | king | image
  double fwhm_arcsec = 1.0;               // gaussian
  double core_radius_arcsec = 1.0;        // king r_c
  double beta = 1.5;                      // king, > 1
  std::string image_file;                 // image: FITS file
  std::string image_extension;            // image: EXTNAME ("" = first 2-D image)
  double image_pixel_arcsec = 0.0;        // image: pixel size; 0 = from the file's WCS
  instrument::PsfScaling scaling;         // off-axis and energy broadening
  std::vector<double> zones_arcmin{0.0, 3.0, 6.0, 9.0, 12.0};  // off-axis zone edges (first 0)
  double zone_blend_arcmin = 1.0;
  double kernel_eef = 0.995;              // kernel half-size: radius enclosing this fraction
  int kernel_max_half_size = 256;         // pixels
};

struct VignettingSettings {
  std::string kind = "analytic";          // none | analytic | table
  instrument::AnalyticVignetting analytic;
  std::vector<double> theta_arcmin;       // table: strictly increasing, first 0
  std::vector<double> energy_keV;         // table: one per row, strictly increasing
  std::vector<double> values;             // table: [iE][itheta]
};

struct ForegroundSettings {
  std::string name;
  double kT_keV = 0.1;                    // temperature of the thermal continuum shape
  double Z_solar = 1.0;                   // metallicity of that shape
  bool absorbed = false;                  // behind the Galactic column (halo) or not (local bubble)
  // Normalisation: unabsorbed energy intensity in flux_band_keV.
  double flux_erg_cm2_s_deg2 = 0.0;
  double flux_band_min_keV = 0.5;
  double flux_band_max_keV = 2.0;
};

struct SkyBackgroundSettings {
  bool cxb_enabled = true;
  instrument::CxbSettings cxb;
  std::vector<ForegroundSettings> foreground;
};

struct InstrumentSettings {
  std::string name = "instrument";        // INSTRUME keyword
  std::string telescope;                  // TELESCOP keyword (default: name)
  std::string description;
  AreaCurveSettings area;
  ResponseSettings response;
  DetectorLayoutSettings detector;
  PsfSettings psf;
  VignettingSettings vignetting;
  instrument::ParticleBackgroundSettings particle;
  SkyBackgroundSettings sky;
  instrument::DitherSettings dither;      // duration_s and seed are set per observation
  std::string source_file;                // the YAML read
  std::string resolved_yaml;              // resolved configuration, defaults marked
  std::string config_hash;
};

// Reads the sections of an instrument description from a file's root section
// (so an instrument may also be embedded in another file).
InstrumentSettings read_instrument(const Section& root);
// A whole instrument file: strict (unknown keys are errors with file:line:column).
InstrumentSettings load_instrument(const std::string& path);
// A complete, commented example instrument file.
const char* instrument_example_yaml();

}  // namespace icmscope::config
