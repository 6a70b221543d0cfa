#pragma once
// Settings of the `observe` verb: one target seen through one instrument.
// The RUN file reuses the sections of the `project` RUN file (target,
// cosmology, cells, selection, emission, map, output; see map_settings.hpp)
// and adds an `observation` section; instead of `cells` it may name an
// existing maps file written by `project` (section `maps`).
#include <cstdint>
#include <string>

#include "icmscope/config/instrument_settings.hpp"
#include "icmscope/config/map_settings.hpp"

namespace icmscope::config {

struct PointSourceSettings {
  bool enabled = false;
  std::string logn_logs = "moretti2003_soft";  // moretti2003_soft (0.5-2 keV) | moretti2003_hard (2-10 keV)
  double flux_min_erg_cm2_s = 1e-15;           // in the logN-logS band (unabsorbed)
  double flux_max_erg_cm2_s = 1e-11;
  double photon_index = 1.4;                   // power-law spectrum of every source
};

struct ObservationSettings {
  std::string instrument_file;                 // an instrument YAML (a preset in config/instruments/)
  double exposure_ks = 10.0;                   // on-time
  std::uint64_t seed = 1;                      // drives every random draw of the observation
  double roll_deg = 0.0;                       // position angle of the detector +v axis (N through E)
  double offset_x_arcmin = 0.0;                // optical axis relative to the target, along image +x
  double offset_y_arcmin = 0.0;                // ... and +y (north)
  bool events = true;                          // write the photon event list
  PointSourceSettings point_sources;
  double mjd_start = 60000.0;                  // MJDREF of the event times (TT)
  int temperature_bins = 16;                   // event energies: T_EW quantised into this many spectra
  int spectrum_bins = 256;                     // energy bins of each event spectrum
  double spectrum_metallicity_solar = 0.3;     // metallicity of those spectra (and of the maps-file conversion)
  std::string psf_mode = "zones";              // zones (off-axis varying) | on_axis (one PSF)
};

// Maps from a `project` output file instead of cells.
struct MapsInputSettings {
  std::string file;                            // <prefix>_maps.fits (RATE in photon/(cm2 s), T_EW)
};

struct ObserveRunSettings {
  MapRunSettings map;                          // target, cosmology, cells, selection, emission, map, output
  bool from_maps_file = false;
  MapsInputSettings maps;
  ObservationSettings observation;
  InstrumentSettings instrument;               // loaded from observation.instrument_file
  std::string source_file;
  std::string resolved_yaml;                   // the RUN file's resolved configuration
  std::string config_hash;                     // hash of the RUN and instrument configurations
};

ObservationSettings read_observation(const Section& s);
// The whole RUN file of `observe` (and the instrument file it names).
ObserveRunSettings load_observe_run(const std::string& path);
// A complete, commented example of that file.
const char* observe_example_yaml();

}  // namespace icmscope::config
