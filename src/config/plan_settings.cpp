// YAML -> PlanRunSettings: see include/icmscope/config/plan_settings.hpp.
#include "icmscope/config/plan_settings.hpp"

#include <algorithm>
#include <cmath>
#include <cstdio>

#include "icmscope/config/synth_settings.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/core/text_hash.hpp"
#include "icmscope/morphology/classification.hpp"

namespace icmscope::config {

namespace {

using core::fnv1a;
using core::hex16;

std::string fmtg(double v) {
  char b[64];
  std::snprintf(b, sizeof b, "%.4g", v);
  return b;
}

// A grid: a list of values, or {min, max, n, spacing: log | linear}. Increasing, inside `range`.
std::vector<double> read_grid(const Section& s, const std::string& key, Range range, const std::string& default_spacing,
                              std::size_t max_n = 200) {
  std::vector<double> v;
  if (s.is_sequence(key)) {
    v = s.numbers(key, std::nullopt, range, 1, max_n);
  } else {
    const Section g = s.child(key);
    const double lo = g.number("min", std::nullopt, range);
    const double hi = g.number("max", std::nullopt, range);
    const int n = static_cast<int>(g.integer("n", std::nullopt, Range::closed(1, static_cast<double>(max_n))));
    const std::string sp = g.choice("spacing", {"log", "linear"}, default_spacing);
    if (!(hi >= lo)) g.fail("max", "expected >= min");
    if (n > 1 && !(hi > lo)) g.fail("max", "expected > min when n > 1");
    if (sp == "log" && !(lo > 0)) g.fail("min", "a log grid needs min > 0");
    for (int i = 0; i < n; ++i) {
      const double f = n > 1 ? static_cast<double>(i) / (n - 1) : 0.0;
      v.push_back(sp == "log" ? lo * std::pow(hi / lo, f) : lo + (hi - lo) * f);
    }
  }
  for (std::size_t i = 1; i < v.size(); ++i)
    if (!(v[i] > v[i - 1])) s.fail(key, "expected strictly increasing values");
  return v;
}

IndicatorRef parse_indicator(const Section& s, const std::string& key, const std::string& text) {
  // "name@aperture", e.g. "w@R500", "P3/P0@500 kpc", "c@100/500 kpc".
  const auto at = text.find('@');
  if (at == std::string::npos || at == 0 || at + 1 >= text.size())
    s.fail(key, "'" + text + "': expected name@aperture, e.g. w@R500, P3/P0@R500, c@100/500 kpc, A_phot@R500");
  return {text.substr(0, at), text.substr(at + 1)};
}

cells::ScaledClusterSpec read_scaled(const Section& s, double redshift, const std::string& name,
                                     const std::string& abundances, bool mass_required = true) {
  cells::ScaledClusterSpec c;
  c.name = name;
  c.redshift = redshift;
  c.m500_msun = s.number("m500_msun", mass_required ? std::nullopt : std::optional<double>(5e14),
                         Range::closed(1e12, 1e16));
  const std::string mt =
      s.choice("mt_relation", {"vikhlinin2009", "arnaud2005_all", "arnaud2005_hot"}, std::string("vikhlinin2009"));
  c.mt = mt == "arnaud2005_all"   ? cells::MassTemperatureRelation::Arnaud05All
         : mt == "arnaud2005_hot" ? cells::MassTemperatureRelation::Arnaud05Hot
                                  : cells::MassTemperatureRelation::Vikhlinin09;
  s.choice("lm_relation", {"vikhlinin2009"}, std::string("vikhlinin2009"));
  c.lm = cells::LuminosityMassRelation::Vikhlinin09;
  c.beta = s.number("beta", 2.0 / 3.0, Range{0.5, 2.0, true, false});
  c.core_radius_r500 = s.number("core_radius_r500", 0.15, Range{1e-3, 1.0, false, false});
  c.r_max_r500 = s.number("r_max_r500", 3.0, Range{1.0, 10.0, false, false});
  c.normalise_luminosity = s.flag("normalise_luminosity", true);
  c.gas_fraction = s.number("gas_fraction", 0.12, Range{0.0, 0.3, true, false});
  c.universal_temperature = s.flag("universal_temperature", true);
  c.Z_solar = s.number("metallicity_solar", 0.3, Range::closed(0.0, 3.0));
  c.abundance_set = abundances;
  for (const Section& k : s.children("subclumps", true)) {
    cells::ScaledSubclump sc;
    sc.mass_ratio = k.number("mass_ratio", std::nullopt, Range{0.0, 1.0, true, false});
    const auto o = k.numbers("offset_r500", std::nullopt, Range::closed(-10.0, 10.0), 3, 3);
    sc.offset_r500 = {o[0], o[1], o[2]};
    c.subclumps.push_back(sc);
  }
  return c;
}

PlanGoal read_goal(const Section& g) {
  PlanGoal p;
  const std::string kind = g.choice("kind", {"precision", "class", "counts"});
  if (kind == "precision") {
    p.kind = GoalKind::precision;
    p.indicator.name = g.text("indicator");
    p.indicator.aperture = g.text("aperture", std::string("R500"));
    const bool a = g.has("sigma_max"), r = g.has("relative_sigma_max");
    if (a == r) g.fail("sigma_max", "give exactly one of sigma_max (indicator units) or relative_sigma_max");
    if (a) p.sigma_max = g.number("sigma_max", std::nullopt, Range::positive());
    if (r) p.relative_sigma_max = g.number("relative_sigma_max", std::nullopt, Range::positive());
  } else if (kind == "class") {
    p.kind = GoalKind::classes;
    p.scheme = g.choice("scheme", morphology::preset_names());
    p.class_label = g.text("class", std::string(""));
    if (!p.class_label.empty()) {
      const auto sch = morphology::classification_preset(p.scheme);
      g.choice("class", sch.classes);  // validates the label against the scheme's classes
    }
    p.confidence = g.number("confidence", 0.9, Range{0.0, 1.0, true, false});
  } else {
    p.kind = GoalKind::counts;
    p.net_counts_min = g.number("net_counts_min", std::nullopt, Range::positive());
  }
  return p;
}

}  // namespace

std::string PlanGoal::text() const {
  switch (kind) {
    case GoalKind::precision:
      return "sigma(" + indicator.label() + ") <= " +
             (std::isfinite(sigma_max) ? fmtg(sigma_max) : fmtg(relative_sigma_max) + " |median|");
    case GoalKind::classes:
      return (class_label.empty() ? std::string("one class") : "class " + class_label) + " of " + scheme + " in >= " +
             fmtg(100.0 * confidence) + "% of realisations";
    case GoalKind::counts: return "net cluster counts within R500 >= " + fmtg(net_counts_min);
  }
  return "";
}

PlanRunSettings load_plan_run(const std::string& path) {
  auto file = SettingsFile::load(path);
  const Section r = file.root();
  PlanRunSettings p;
  p.source_file = path;
  MapRunSettings& m = p.map;
  m.source_file = path;
  const bool has_scaled = r.has("scaled"), has_cells = r.has("cells"), has_maps = r.has("maps");
  if (static_cast<int>(has_scaled) + static_cast<int>(has_cells) + static_cast<int>(has_maps) != 1)
    r.fail(has_scaled ? "scaled" : has_cells ? "cells" : "maps",
           "give exactly one target source: 'scaled' (M500 + scaling relations), 'cells' (a cells file or model "
           "file) or 'maps' (a maps file written by project)");
  const Section t = r.child("target");
  m.target = read_target(t);
  p.m500_msun = t.number("m500_msun", 0.0, Range::non_negative());
  m.cosmology = read_cosmology(r.maybe_child("cosmology"));
  const auto em = r.maybe_child("emission");
  if (em && em->has("effective_area"))
    em->fail("effective_area", "plan folds the instrument's effective area; remove emission.effective_area");
  m.emission = read_emission(em);
  if (has_scaled) {
    p.target_kind = "scaled";
    p.scaled = read_scaled(r.child("scaled"), m.target.redshift, m.target.name, m.emission.abundances);
    p.scaled_subsamples = static_cast<int>(r.child("scaled").integer("analytic_subsamples", 1, Range::closed(1, 16)));
    if (p.m500_msun > 0) t.fail("m500_msun", "the scaled target's mass is scaled.m500_msun; remove target.m500_msun");
    if (m.target.r500_kpc > 0) t.fail("r500_kpc", "a scaled target's R500 follows from scaled.m500_msun; remove it");
    p.m500_msun = p.scaled.m500_msun;
  } else if (has_cells) {
    const Section cs = r.child("cells");
    m.cells = read_cell_source(cs);
    p.target_kind = m.cells.model_file.empty() ? "cells" : "model";
    // A model file is integrated along the line of sight unless asked otherwise (no particle noise).
    if (!m.cells.model_file.empty() && !cs.has("model_projection")) {
      m.cells.model_projection = "analytic";
      m.cells.analytic_subsamples = 1;
    }
    m.selection = read_selection(r.maybe_child("selection"));
  } else {
    p.target_kind = "maps";
    p.maps_file = r.child("maps").path_value("file");
    if (r.has("selection")) r.fail("selection", "cells were already selected when maps.file was made; remove it");
    if (em && (em->has("band_keV") || em->has("nH_cm2")))
      em->fail(em->has("band_keV") ? "band_keV" : "nH_cm2",
               "the band and N_H come from maps.file (its E_MIN, E_MAX, NH keywords); remove it");
  }
  if (has_maps && r.has("map")) r.fail("map", "the grid comes from maps.file; remove the map section");
  m.view = read_view(r.maybe_child("map"));
  if (!r.has("map")) {  // plan default: 256 x 256 pixels of 8 arcsec (34 arcmin), a fast grid
    m.view.nx = m.view.ny = 256;
    m.view.pixel_arcsec = 8.0;
  }

  const Section in = r.child("instrument");
  p.instrument_file = in.path_value("file");
  p.roll_deg = in.number("roll_deg", 0.0, Range::closed(-360.0, 360.0));
  const auto off = in.numbers("offset_arcmin", std::vector<double>{0.0, 0.0}, Range::closed(-600.0, 600.0), 2, 2);
  p.offset_x_arcmin = off[0];
  p.offset_y_arcmin = off[1];
  p.psf_mode = in.choice("psf_mode", {"zones", "on_axis"}, std::string("zones"));
  p.point_sources = in.flag("point_sources", false);
  p.spectrum_metallicity_solar = in.number("spectrum_metallicity_solar", 0.3, Range::closed(0.0, 5.0));

  p.exposures_ks = read_grid(r, "exposures_ks", Range{0.0, 1e5, true, false}, "log", 100);
  p.realisations = static_cast<int>(r.integer("realisations", 100, Range::closed(5, 100000)));
  p.seed = static_cast<std::uint64_t>(r.integer("seed", 1, Range::closed(0, 9.0e15)));
  p.bootstrap = static_cast<int>(r.integer("bootstrap", 200, Range::closed(0, 100000)));
  p.core_radius_r500 = r.number("core_radius_r500", 0.15, Range{0.0, 1.0, true, false});
  if (r.has("classification")) {
    for (const auto& n : r.texts("classification"))
      if (std::find(morphology::preset_names().begin(), morphology::preset_names().end(), n) ==
          morphology::preset_names().end())
        r.fail("classification", "'" + n + "' is not a classification preset");
    p.schemes = r.texts("classification");
  } else {
    p.schemes = r.texts("classification", std::vector<std::string>{"w_two_class", "p3_two_class", "cassano2010"});
  }
  const std::vector<std::string> def_ind = {"w@R500", "P3/P0@R500", "c@100/500 kpc", "A_phot@R500"};
  for (const auto& s : r.texts("indicators", def_ind)) p.indicators.push_back(parse_indicator(r, "indicators", s));
  for (const Section& g : r.children("goals", true)) {
    PlanGoal goal = read_goal(g);
    if (goal.kind == GoalKind::precision) {
      bool listed = false;
      for (const auto& i : p.indicators)
        listed = listed || (i.name == goal.indicator.name && i.aperture == goal.indicator.aperture);
      if (!listed) p.indicators.push_back(goal.indicator);
    }
    if (goal.kind == GoalKind::classes &&
        std::find(p.schemes.begin(), p.schemes.end(), goal.scheme) == p.schemes.end())
      p.schemes.push_back(goal.scheme);
    p.goals.push_back(goal);
  }
  if (const auto rv = r.maybe_child("reverse")) {
    auto& q = p.reverse;
    q.enabled = true;
    q.exposure_ks = rv->number("exposure_ks", std::nullopt, Range{0.0, 1e5, true, false});
    q.m500_msun = read_grid(*rv, "m500_msun", Range::closed(1e12, 1e16), "log", 50);
    q.redshift = read_grid(*rv, "redshift", Range{0.0, 5.0, true, false}, "linear", 50);
    q.scheme = rv->choice("scheme", morphology::preset_names(), std::string("w_two_class"));
    q.class_label = rv->text("class", std::string(""));
    if (!q.class_label.empty()) rv->choice("class", morphology::classification_preset(q.scheme).classes);
    q.confidence = rv->number("confidence", 0.9, Range{0.0, 1.0, true, false});
    q.realisations = static_cast<int>(rv->integer("realisations", 50, Range::closed(5, 100000)));
    // The grid's clusters take the shape of the `scaled` section, or its defaults.
    if (!has_scaled) {
      if (const auto sh = rv->maybe_child("shape")) {
        p.scaled = read_scaled(*sh, m.target.redshift, m.target.name, m.emission.abundances, false);
      } else {
        p.scaled = cells::ScaledClusterSpec{};
        p.scaled.abundance_set = m.emission.abundances;
      }
    } else if (rv->has("shape")) {
      rv->fail("shape", "the reverse grid takes the shape of the 'scaled' section; remove reverse.shape");
    }
  }
  p.plots = r.flag("plots", true);
  m.output = read_output(r.maybe_child("output"), m.target.name);
  file.finish();
  if (p.target_kind != "scaled" && p.target_kind != "model" && !(p.m500_msun > 0) && !(m.target.r500_kpc > 0))
    throw core::ConfigError(path + ": target: give m500_msun or r500_kpc (R500 sets the apertures and the counts table)");
  p.resolved_yaml = file.resolved_yaml();
  m.resolved_yaml = p.resolved_yaml;
  p.instrument = load_instrument(p.instrument_file);
  p.config_hash = hex16(fnv1a(file.resolved_hash() + ":" + p.instrument.config_hash));
  m.config_hash = p.config_hash;
  return p;
}

const char* plan_caution_text() {
  return "CAUTION: these are simulations with an illustrative instrument model. Exposure requests must be "
         "confirmed with the observatory's own calibration and tools.";
}

const char* plan_example_yaml() {
  return R"(# icmscope plan: how long must this target be observed before the centroid shift,
# the power ratios or the photon asymmetry tell whether it is relaxed? Answered by
# simulation: Poisson realisations of the expected observation at each exposure,
# measured as an observer would measure them.
# CAUTION: simulations with an illustrative instrument model; exposure requests must be
# confirmed with the observatory's own calibration and tools.
# Relative paths resolve against this file's folder.

target:
  name: Scaled-5e14            # used in outputs and file names
  redshift: 0.1                # required (scaled: the cluster's redshift)
  ra_deg: 150.0                # default 0
  dec_deg: 2.2                 # default 0
  # m500_msun: 5.5e14          # cells / maps targets: M500 [Msun] or r500_kpc: R500 sets the
  # r500_kpc: 1200             # apertures and the counts table (model files carry m500_msun)

# Exactly one target source: scaled | cells | maps.
scaled:                        # an analytic cluster from M500 and the redshift (physics.md sec. 9)
  m500_msun: 5.0e14            # required, Msun, in [1e12, 1e16]
  mt_relation: vikhlinin2009   # vikhlinin2009 (default) | arnaud2005_all | arnaud2005_hot  (M500-T -> kT)
  lm_relation: vikhlinin2009   # vikhlinin2009 (only choice)  (L(0.5-2 keV)-M500 -> normalisation)
  beta: 0.6667                 # beta-model slope (> 1/2, at most 2), default 2/3
  core_radius_r500: 0.15       # r_c / R500 (0.001-1), default 0.15
  r_max_r500: 3.0              # truncation radius / R500, default 3
  normalise_luminosity: true   # true (default): L(0.5-2 keV, < R500) = the L-M median; false: gas_fraction
  gas_fraction: 0.12           # M_gas(< R500) / M500 when normalise_luminosity is false
  universal_temperature: true  # Vikhlinin et al. 2006 universal profile (default) | false: isothermal
  metallicity_solar: 0.3       # default 0.3
  analytic_subsamples: 1       # Gauss-Legendre points per pixel axis of the maps (default 1 = pixel centres)
  subclumps:                   # optional: plan for a disturbed system
    - {mass_ratio: 0.15, offset_r500: [0.4, 0.0, 0.0]}   # M500 ratio, centre offset in units of R500
# cells:                       # ... or a cells file (see `icmscope project --example` for the keys)
#   model: ../../demo_clusters/models/maren7_cool_core.yaml   # or an analytic model file,
#                              # integrated along the line of sight (model_projection: analytic, default here,
#                              # at pixel centres unless analytic_subsamples is given with model_projection)
# maps:                        # ... or a maps file written by `project` (RATE photon/(cm2 s), T_EW)
#   file: out/Maren-7_maps.fits

cosmology: {H0_km_s_Mpc: 70, Omega_m: 0.3, Omega_lambda: 0.7}   # the defaults

emission:
  band_keV: [0.5, 2.0]         # observed band, keV (default 0.5-2)
  nH_cm2: 3.0e20               # Galactic N_H, cm^-2 (default 3e20)

map:                           # the simulated sky grid (default here: 256 pixels of 8 arcsec)
  pixels: 256
  pixel_arcsec: 8.0

instrument:
  file: ../instruments/vasta_la.yaml   # required: an instrument file (presets in config/instruments/)
  roll_deg: 0                  # detector roll, deg (default 0)
  offset_arcmin: [0, 0]        # optical axis relative to the target (default on target)
  psf_mode: zones              # zones (default, off-axis PSF) | on_axis
  point_sources: false         # draw Moretti et al. 2003 point sources (default false; they are not masked)
  spectrum_metallicity_solar: 0.3

exposures_ks: {min: 2, max: 100, n: 8, spacing: log}   # or a list: [5, 10, 20, 50]; ks, increasing
realisations: 100              # Poisson realisations per exposure (default 100, >= 5)
seed: 1                        # every draw: exposure i, realisation k use RandomStream(seed_i, k)
bootstrap: 200                 # resamples of the realisations for the uncertainty of each answer (0 = none)
core_radius_r500: 0.15         # the "core" aperture of the counts table, in R500 (default 0.15)
classification: [w_two_class, p3_two_class, cassano2010]   # presets tabulated (default these three)
indicators: ["w@R500", "P3/P0@R500", "c@100/500 kpc", "A_phot@R500"]   # name@aperture (default these)

goals:                         # the shortest exposure meeting each goal, and all of them together
  - kind: precision            # sigma = (p84 - p16)/2 of the corrected values
    indicator: w
    aperture: R500
    sigma_max: 0.002           # absolute, indicator units (or relative_sigma_max: 0.3 = 30% of |median|)
  - kind: precision
    indicator: P3/P0
    aperture: R500
    relative_sigma_max: 0.5
  - kind: class                # >= confidence of the realisations in one class of the scheme
    scheme: w_two_class        # a classification preset (see `icmscope measure --help`)
    confidence: 0.9            # default 0.9
    # class: relaxed           # optional: that class must hold the confidence
  - kind: counts
    net_counts_min: 2000       # expected net cluster counts within R500

reverse:                       # optional: at one exposure, the faintest / most distant scaled cluster
  exposure_ks: 20              # whose class is still determined at the confidence
  m500_msun: {min: 1.0e14, max: 1.0e15, n: 3, spacing: log}   # or a list, Msun
  redshift: [0.1, 0.2, 0.4]                                    # or {min, max, n, spacing}
  scheme: w_two_class
  confidence: 0.9
  realisations: 50             # per grid point (default 50)
  # shape: {m500_msun: 5e14, beta: 0.6667, ...}   # cells / maps targets: the shape of the grid's
  #                            # clusters (the keys of `scaled`; m500_msun not needed); default: defaults

plots: true                    # PNG plots (default true)
output:
  directory: plan_out          # default icmscope_out
  prefix: Scaled-5e14          # default: the target name
)";
}

}  // namespace icmscope::config
