// YAML -> ObserveRunSettings: see include/icmscope/config/observe_settings.hpp.
#include "icmscope/config/observe_settings.hpp"

#include <cstdio>

#include "icmscope/core/errors.hpp"
#include "icmscope/core/text_hash.hpp"

namespace icmscope::config {

namespace {

using core::fnv1a;
using core::hex16;

PointSourceSettings read_point_sources(const std::optional<Section>& s) {
  PointSourceSettings p;
  if (!s) return p;
  p.enabled = s->flag("enabled", true);
  p.logn_logs = s->choice("logn_logs", {"moretti2003_soft", "moretti2003_hard"}, std::string("moretti2003_soft"));
  p.flux_min_erg_cm2_s = s->number("flux_min_erg_cm2_s", 1e-15, Range{1e-20, 1e-8, false, false});
  p.flux_max_erg_cm2_s = s->number("flux_max_erg_cm2_s", 1e-11, Range{1e-20, 1e-6, false, false});
  if (!(p.flux_max_erg_cm2_s > p.flux_min_erg_cm2_s))
    s->fail("flux_max_erg_cm2_s", "expected > flux_min_erg_cm2_s");
  p.photon_index = s->number("photon_index", 1.4, Range::closed(0.0, 4.0));
  return p;
}

}  // namespace

ObservationSettings read_observation(const Section& s) {
  ObservationSettings o;
  o.instrument_file = s.path_value("instrument");
  o.exposure_ks = s.number("exposure_ks", std::nullopt, Range{0.0, 1e5, true, false});
  o.seed = static_cast<std::uint64_t>(s.integer("seed", std::nullopt, Range::closed(0, 9.0e15)));
  o.roll_deg = s.number("roll_deg", 0.0, Range::closed(-360.0, 360.0));
  const auto off = s.numbers("offset_arcmin", std::vector<double>{0.0, 0.0}, Range::closed(-600.0, 600.0), 2, 2);
  o.offset_x_arcmin = off[0];
  o.offset_y_arcmin = off[1];
  o.events = s.flag("events", true);
  if (s.has("point_sources") && s.is_scalar("point_sources")) {
    o.point_sources.enabled = s.flag("point_sources");
  } else {
    o.point_sources = read_point_sources(s.maybe_child("point_sources"));
  }
  o.mjd_start = s.number("mjd_start", 60000.0, Range::closed(0.0, 1e6));
  o.temperature_bins = static_cast<int>(s.integer("temperature_bins", 16, Range::closed(1, 1024)));
  o.spectrum_bins = static_cast<int>(s.integer("spectrum_bins", 256, Range::closed(4, 100000)));
  o.spectrum_metallicity_solar = s.number("spectrum_metallicity_solar", 0.3, Range::closed(0.0, 5.0));
  o.psf_mode = s.choice("psf_mode", {"zones", "on_axis"}, std::string("zones"));
  return o;
}

ObserveRunSettings load_observe_run(const std::string& path) {
  auto file = SettingsFile::load(path);
  const Section r = file.root();
  ObserveRunSettings o;
  o.source_file = path;
  MapRunSettings& m = o.map;
  m.source_file = path;
  const bool has_cells = r.has("cells"), has_maps = r.has("maps");
  if (has_cells == has_maps)
    r.fail(has_cells ? "maps" : "cells",
           "give exactly one of 'cells' (gas cells or a model) or 'maps' (a maps file written by project)");
  o.from_maps_file = has_maps;
  if (has_maps) {
    const Section ms = r.child("maps");
    o.maps.file = ms.path_value("file");
    if (r.has("map")) r.fail("map", "the grid comes from maps.file; remove the map section");
    if (r.has("selection")) r.fail("selection", "cells were already selected when maps.file was made; remove it");
    if (r.has("target")) {
      m.target = read_target(r.child("target"));
    } else {
      m.target.name.clear();  // filled from the file's OBJECT / REDSHIFT keywords
    }
  } else {
    m.target = read_target(r.child("target"));
    m.cells = read_cell_source(r.child("cells"));
    m.selection = read_selection(r.maybe_child("selection"));
    m.view = read_view(r.maybe_child("map"));
  }
  m.cosmology = read_cosmology(r.maybe_child("cosmology"));
  const auto em = r.maybe_child("emission");
  if (em && em->has("effective_area"))
    em->fail("effective_area", "observe folds the instrument's effective area; remove emission.effective_area");
  if (has_maps && em && (em->has("band_keV") || em->has("nH_cm2")))
    em->fail(em->has("band_keV") ? "band_keV" : "nH_cm2",
             "the band and N_H come from maps.file (its E_MIN, E_MAX, NH keywords); remove it");
  m.emission = read_emission(em);
  o.observation = read_observation(r.child("observation"));
  m.output = read_output(r.maybe_child("output"), m.target.name);  // empty prefix: set from the maps file
  file.finish();
  o.resolved_yaml = file.resolved_yaml();
  m.resolved_yaml = o.resolved_yaml;
  o.instrument = load_instrument(o.observation.instrument_file);
  o.config_hash = hex16(fnv1a(file.resolved_hash() + ":" + o.instrument.config_hash));
  m.config_hash = o.config_hash;
  return o;
}

const char* observe_example_yaml() {
  return R"(# icmscope observe: one target through one instrument -> counts, exposure,
# background and model images, a photon event list, point sources.
# The sections target, cosmology, cells, selection, emission and map are those of
# `icmscope project --example`. Relative paths resolve against this file's folder.

target:
  name: Maren-7
  redshift: 0.08
  ra_deg: 148.62
  dec_deg: 21.37

cells:
  model: ../../demo_clusters/models/maren7_cool_core.yaml
  model_particles: 100000      # fewer particles than the model file, for speed
# maps:                        # ... or, instead of cells: a maps file written by `project`
#   file: out/Maren-7_maps.fits   # uses its RATE (photon/(cm2 s), flat area) and T_EW HDUs;
#                                 # band, N_H, redshift and target come from its keywords

emission:                      # spectral model, band (observed, keV), Galactic column
  band_keV: [0.5, 2.0]
  nH_cm2: 2.5e20
  abundances: anders_grevesse_1989

map:                           # the sky grid of every output (counts, exposure, background, model, events)
  pixels: 256
  pixel_arcsec: 4.0

observation:
  instrument: ../instruments/vasta_la.yaml   # an instrument file (presets in config/instruments/)
  exposure_ks: 20              # on-time, ks
  seed: 12345                  # every random draw (counts, events, point sources, random dither)
  roll_deg: 0                  # position angle of the detector +v axis, north through east
  offset_arcmin: [0, 0]        # optical axis relative to the target (+x west, +y north)
  events: true                 # write the photon event list (FITS EVENTS + GTI)
  point_sources:               # or point_sources: false
    enabled: true
    logn_logs: moretti2003_soft    # Moretti et al. 2003: moretti2003_soft (0.5-2 keV) | moretti2003_hard (2-10)
    flux_min_erg_cm2_s: 2.0e-15    # flux limit of the drawn sources (unabsorbed, logN-logS band)
    flux_max_erg_cm2_s: 1.0e-11
    photon_index: 1.4              # power-law spectrum of the sources
  mjd_start: 60000.0           # MJDREF of the event times (TT)
  temperature_bins: 16         # event energies: the emission-weighted kT map in this many spectra
  spectrum_bins: 256           # energy bins of each spectrum
  spectrum_metallicity_solar: 0.3
  psf_mode: zones              # zones (PSF varies with off-axis angle) | on_axis

output:
  directory: out
  prefix: Maren-7_vasta
  quicklook: true              # PNG of the counts image with the field edge and chip gaps outlined
  stretch: asinh
)";
}

}  // namespace icmscope::config
