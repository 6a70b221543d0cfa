// YAML (+ CSV listing) -> SurveySettings: see include/icmscope/config/survey_settings.hpp.
//
// Overrides work key by key: the defaults section is read first (over the
// built-in defaults), then each entry's sections are read with the defaults'
// values as their defaults. Lists (instruments, exposures, lines of sight,
// aperture lists) replace the defaults' list as a whole.
#include "icmscope/config/survey_settings.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <set>
#include <sstream>

#include "icmscope/config/synth_settings.hpp"
#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/core/random.hpp"
#include "icmscope/io/cells_reader.hpp"
#include "icmscope/morphology/classification.hpp"

namespace icmscope::config {

namespace fs = std::filesystem;

namespace {

std::string fmtg(double v, const char* f = "%.6g") {
  char b[64];
  std::snprintf(b, sizeof b, f, v);
  return b;
}

std::string lower(std::string s) {
  for (char& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return s;
}

std::string trim(const std::string& s) {
  std::size_t b = 0, e = s.size();
  while (b < e && std::isspace(static_cast<unsigned char>(s[b]))) ++b;
  while (e > b && std::isspace(static_cast<unsigned char>(s[e - 1]))) --e;
  return s.substr(b, e - b);
}

std::string key_path(const Section& s, const std::string& key) {
  return s.where(key) + ": " + (s.path().empty() ? key : s.path() + "." + key);
}

std::string resolve(const std::string& p, const std::string& folder) {
  if (p.empty()) return p;
  fs::path q(p);
  if (q.is_relative()) q = fs::path(folder) / q;
  return q.lexically_normal().string();
}

std::string folder_of(const Section& s) { return fs::path(s.file()).parent_path().string(); }

// ---- section readers with a base (the defaults) -----------------------------

CosmologySettings cosmology_over(const std::optional<Section>& s, CosmologySettings c) {
  if (!s) return c;
  c.H0_km_s_Mpc = s->number("H0_km_s_Mpc", c.H0_km_s_Mpc, Range{10.0, 200.0, false, false});
  c.Omega_m = s->number("Omega_m", c.Omega_m, Range{0.0, 2.0, true, false});
  c.Omega_lambda = s->number("Omega_lambda", c.Omega_lambda, Range::closed(-1.0, 2.0));
  return c;
}

SelectionSettings selection_over(const std::optional<Section>& s, SelectionSettings x) {
  if (!s) return x;
  x.min_kT_keV = s->number("min_kT_keV", x.min_kT_keV, Range::non_negative());
  x.exclude_star_forming = s->flag("exclude_star_forming", x.exclude_star_forming);
  x.exclude_cold_flag = s->flag("exclude_cold_flag", x.exclude_cold_flag);
  x.max_radius_kpc = s->number("max_radius_kpc", x.max_radius_kpc, Range::positive_or_unlimited());
  return x;
}

EmissionSettings emission_over(const std::optional<Section>& s, EmissionSettings e) {
  if (!s) return e;
  if (s->has("effective_area"))
    s->fail("effective_area", "a survey folds each instrument's effective area; remove emission.effective_area");
  e.model = s->choice("model", {"continuum", "table"}, e.model);
  if (e.model == "table") e.table_file = s->path_value("table_file", e.table_file.empty() ? std::nullopt
                                                                                           : std::optional<std::string>(e.table_file));
  e.abundances = s->choice("abundances", {"anders_grevesse_1989", "asplund_2009"}, e.abundances);
  e.recombination = s->flag("recombination", e.recombination);
  const auto band = s->numbers("band_keV", std::vector<double>{e.band_min_keV, e.band_max_keV},
                               Range{0.01, 100.0, false, false}, 2, 2);
  if (!(band[1] > band[0])) s->fail("band_keV", "expected [min, max] with max > min");
  e.band_min_keV = band[0];
  e.band_max_keV = band[1];
  e.nH_cm2 = s->number("nH_cm2", e.nH_cm2, Range::closed(0.0, 1e24));
  e.table_kT_min_keV = s->number("table_kT_min_keV", e.table_kT_min_keV, Range::positive());
  e.table_kT_max_keV = s->number("table_kT_max_keV", e.table_kT_max_keV, Range::positive());
  if (!(e.table_kT_max_keV > e.table_kT_min_keV)) s->fail("table_kT_max_keV", "expected > table_kT_min_keV");
  e.table_kT_points = static_cast<int>(s->integer("table_kT_points", e.table_kT_points, Range::closed(8, 100000)));
  e.table_Z_max_solar = s->number("table_Z_max_solar", e.table_Z_max_solar, Range::positive());
  e.table_Z_points = static_cast<int>(s->integer("table_Z_points", e.table_Z_points, Range::closed(2, 1000)));
  e.warn_kT_keV = s->number("warn_kT_keV", e.warn_kT_keV, Range::non_negative());
  e.warn_fraction = s->number("warn_fraction", e.warn_fraction, Range::closed(0.0, 1.0));
  return e;
}

// The grid of the mock images; the line of sight comes from lines_of_sight.
ViewSettings view_over(const std::optional<Section>& s, ViewSettings v) {
  if (!s) return v;
  if (s->has("line_of_sight"))
    s->fail("line_of_sight", "a survey sets the lines of sight with 'lines_of_sight' (beside 'map')");
  v.depth_kpc = s->number("depth_kpc", v.depth_kpc, Range::positive_or_unlimited());
  const int old_nx = v.nx;
  v.nx = static_cast<int>(s->integer("pixels", v.nx, Range::closed(8, 16384)));
  // A square grid stays square when only `pixels` changes.
  v.ny = static_cast<int>(s->integer("pixels_y", v.ny == old_nx ? v.nx : v.ny, Range::closed(8, 16384)));
  const bool has_width = s->has("width_arcmin");
  if (has_width && s->has("pixel_arcsec")) s->fail("width_arcmin", "give either width_arcmin or pixel_arcsec, not both");
  if (has_width) v.pixel_arcsec = s->number("width_arcmin", std::nullopt, Range::positive()) * 60.0 / v.nx;
  else v.pixel_arcsec = s->number("pixel_arcsec", v.pixel_arcsec, Range::positive());
  v.kernel = s->choice("kernel", {"cubic_spline", "wendland_c2", "point"}, v.kernel);
  return v;
}

std::vector<std::string> path_list(const Section& s, const std::string& key) {
  std::vector<std::string> out;
  for (const auto& p : s.texts(key)) {
    if (trim(p).empty()) s.fail(key, "expected file paths, got an empty value");
    out.push_back(resolve(trim(p), folder_of(s)));
  }
  if (out.empty()) s.fail(key, "expected at least one file");
  return out;
}

SurveyObserveSettings observation_over(const std::optional<Section>& s, SurveyObserveSettings o) {
  if (!s) return o;
  if (s->has("instrument") && s->has("instruments")) s->fail("instrument", "give instrument or instruments, not both");
  if (s->has("instruments")) o.instruments = path_list(*s, "instruments");
  else if (s->has("instrument")) o.instruments = {s->path_value("instrument")};
  else { s->accept("instrument"); s->accept("instruments"); }
  if (s->has("exposure_ks") && s->has("exposures_ks")) s->fail("exposure_ks", "give exposure_ks or exposures_ks, not both");
  if (s->has("exposures_ks"))
    o.exposures_ks = s->numbers("exposures_ks", std::nullopt, Range{0.0, 1e5, true, false}, 1);
  else if (s->has("exposure_ks"))
    o.exposures_ks = {s->number("exposure_ks", std::nullopt, Range{0.0, 1e5, true, false})};
  else { s->accept("exposure_ks"); s->accept("exposures_ks"); }
  if (s->has("seed")) s->fail("seed", "each target's seed derives from survey.seed and the target id; remove it");
  auto& b = o.base;
  b.roll_deg = s->number("roll_deg", b.roll_deg, Range::closed(-360.0, 360.0));
  const auto off = s->numbers("offset_arcmin", std::vector<double>{b.offset_x_arcmin, b.offset_y_arcmin},
                              Range::closed(-600.0, 600.0), 2, 2);
  b.offset_x_arcmin = off[0];
  b.offset_y_arcmin = off[1];
  b.events = s->flag("events", b.events);
  if (s->has("point_sources") && s->is_scalar("point_sources")) {
    b.point_sources.enabled = s->flag("point_sources");
  } else if (const auto p = s->maybe_child("point_sources")) {
    auto& q = b.point_sources;
    q.enabled = p->flag("enabled", true);
    q.logn_logs = p->choice("logn_logs", {"moretti2003_soft", "moretti2003_hard"}, q.logn_logs);
    q.flux_min_erg_cm2_s = p->number("flux_min_erg_cm2_s", q.flux_min_erg_cm2_s, Range{1e-20, 1e-8, false, false});
    q.flux_max_erg_cm2_s = p->number("flux_max_erg_cm2_s", q.flux_max_erg_cm2_s, Range{1e-20, 1e-6, false, false});
    if (!(q.flux_max_erg_cm2_s > q.flux_min_erg_cm2_s)) p->fail("flux_max_erg_cm2_s", "expected > flux_min_erg_cm2_s");
    q.photon_index = p->number("photon_index", q.photon_index, Range::closed(0.0, 4.0));
  }
  b.mjd_start = s->number("mjd_start", b.mjd_start, Range::closed(0.0, 1e6));
  b.temperature_bins = static_cast<int>(s->integer("temperature_bins", b.temperature_bins, Range::closed(1, 1024)));
  b.spectrum_bins = static_cast<int>(s->integer("spectrum_bins", b.spectrum_bins, Range::closed(4, 100000)));
  b.spectrum_metallicity_solar = s->number("spectrum_metallicity_solar", b.spectrum_metallicity_solar, Range::closed(0.0, 5.0));
  b.psf_mode = s->choice("psf_mode", {"zones", "on_axis"}, b.psf_mode);
  return o;
}

std::optional<ApertureText> aperture_over(const Section& s, const std::string& key, bool pair,
                                          std::optional<ApertureText> base, bool* off = nullptr) {
  if (!s.has(key)) {
    s.accept(key);
    return base;
  }
  const std::string t = s.text(key);
  if (off) {
    const std::string l = lower(trim(t));
    if (l == "off" || l == "false" || l == "none") {
      *off = true;
      return std::nullopt;
    }
    *off = false;
  }
  return parse_aperture(t, pair, key_path(s, key));
}

std::optional<std::vector<ApertureText>> aperture_list_over(const Section& s, const std::string& key, bool pair,
                                                            std::optional<std::vector<ApertureText>> base) {
  if (!s.has(key)) {
    s.accept(key);
    return base;
  }
  std::vector<ApertureText> out;
  const auto list = s.texts(key);
  for (std::size_t i = 0; i < list.size(); ++i)
    out.push_back(parse_aperture(list[i], pair, key_path(s, key) + "[" + std::to_string(i) + "]"));
  return out;
}

SurveyMeasureSettings measure_over(const std::optional<Section>& s, SurveyMeasureSettings m) {
  if (!s) return m;
  if (const auto a = s->maybe_child("apertures")) {
    auto& p = m.apertures;
    p.concentration = aperture_list_over(*a, "concentration", true, p.concentration);
    p.centroid_shift = aperture_list_over(*a, "centroid_shift", false, p.centroid_shift);
    p.power_ratios = aperture_list_over(*a, "power_ratios", false, p.power_ratios);
    p.asymmetry = aperture_over(*a, "asymmetry", false, p.asymmetry, &p.asymmetry_off);
    p.gini_m20 = aperture_over(*a, "gini_m20", false, p.gini_m20, &p.gini_m20_off);
    p.smoothness = aperture_over(*a, "smoothness", false, p.smoothness, &p.smoothness_off);
    p.ellipticity = aperture_over(*a, "ellipticity", false, p.ellipticity, &p.ellipticity_off);
    p.centroid = aperture_over(*a, "centroid", false, p.centroid);
    p.photon_asymmetry = a->flag("photon_asymmetry", p.photon_asymmetry);
    p.w_apertures = static_cast<int>(a->integer("w_apertures", p.w_apertures, Range::closed(3, 1000)));
    p.w_min_fraction = a->number("w_min_fraction", p.w_min_fraction, Range{0.0, 1.0, true, true});
    p.w_core_exclusion = aperture_over(*a, "w_core_exclusion", false, p.w_core_exclusion);
    p.ln_unit = a->choice("ln_unit", {"auto", "kpc", "mpc", "arcsec", "pixel"}, p.ln_unit);
    p.peak_smoothing = aperture_over(*a, "peak_smoothing", false, p.peak_smoothing);
    p.asymmetry_normalisation =
        a->choice("asymmetry_normalisation", {"sum_abs", "twice_sum_abs"}, p.asymmetry_normalisation);
    p.asymmetry_background = a->choice("asymmetry_background", {"model", "none"}, p.asymmetry_background);
  }
  auto& q = m.statistics;
  if (const auto st = s->maybe_child("realisations")) {
    if (st->has("seed")) st->fail("seed", "each target's seed derives from survey.seed and the target id; remove it");
    q.realisations = static_cast<int>(st->integer("number", q.realisations, Range::closed(0, 100000)));
    q.source = st->choice("source", {"observed", "expected"}, q.source);
    q.w_bias = st->choice("w_bias", {"quadrature", "linear", "none"}, q.w_bias);
  }
  if (const auto c = s->maybe_child("classification")) {
    if (c->has("presets")) {
      q.presets = c->texts("presets");
      const auto& names = morphology::preset_names();
      for (const auto& p : q.presets)
        if (std::find(names.begin(), names.end(), p) == names.end()) {
          std::string all;
          for (const auto& n : names) all += (all.empty() ? "" : ", ") + n;
          const std::string near = nearest(p, names);
          c->fail("presets", "'" + p + "' is not a preset (expected one of: " + all + ")" +
                                 (near.empty() ? "" : "; did you mean '" + near + "'?"));
        }
    }
  }
  if (const auto f = s->maybe_child("flags")) {
    q.low_counts_net = f->number("low_counts_net", q.low_counts_net, Range::non_negative());
    q.large_mask_fraction = f->number("large_mask_fraction", q.large_mask_fraction, Range::closed(0.0, 1.0));
    q.min_pixel_sn = f->number("min_pixel_sn", q.min_pixel_sn, Range::non_negative());
  }
  m.background = s->choice("background", {"image", "annulus", "none"}, m.background);
  m.background_annulus = aperture_over(*s, "background_annulus", true, m.background_annulus);
  if (m.background == "annulus" && !m.background_annulus)
    s->fail("background", "background: annulus needs background_annulus, e.g. \"1.6/2 R500\"");
  m.centre = s->choice("centre", {"find", "given"}, m.centre);
  m.centre_search_radius = aperture_over(*s, "centre_search_radius", false, m.centre_search_radius);
  m.min_relative_exposure = s->number("min_relative_exposure", m.min_relative_exposure, Range::closed(0.0, 1.0));
  m.quicklook = s->flag("quicklook", m.quicklook);
  m.stretch = s->choice("stretch", {"asinh", "log", "linear"}, m.stretch);
  m.json = s->flag("json", m.json);
  return m;
}

std::string angle_label(double theta, double phi) {
  auto num = [](double v) {
    std::string t = fmtg(v, "%.4g");
    for (char& c : t)
      if (c == '.') c = 'p';
      else if (c == '-') c = 'm';
    return t;
  };
  return "t" + num(theta) + "_p" + num(phi);
}

LineOfSight axis_los(const std::string& a) {
  LineOfSight l;
  l.label = a;
  l.axis = a;
  return l;
}

std::vector<LineOfSight> lines_of_sight_over(const Section& s, const std::string& key, std::vector<LineOfSight> base,
                                             std::uint64_t sample_seed, const std::string& entry) {
  if (!s.has(key)) {
    s.accept(key);
    return base;
  }
  std::vector<LineOfSight> out;
  auto add_axes = [&](const Section& sec, const std::string& k) {
    for (const auto& a : sec.texts(k)) {
      const std::string t = lower(trim(a));
      if (t != "x" && t != "y" && t != "z") sec.fail(k, "'" + a + "' is not an axis (expected x, y or z)");
      out.push_back(axis_los(t));
    }
  };
  if (s.is_map(key)) {
    const Section c = s.child(key);
    if (c.has("axes")) add_axes(c, "axes");
    else c.accept("axes");
    for (const auto& a : c.children("angles", true)) {
      LineOfSight l;
      l.axis = "angles";
      l.theta_deg = a.number("theta_deg", std::nullopt, Range::closed(0.0, 180.0));
      l.phi_deg = a.number("phi_deg", 0.0, Range::closed(-360.0, 360.0));
      l.label = angle_label(l.theta_deg, l.phi_deg);
      out.push_back(l);
    }
    const int n = static_cast<int>(c.integer("random", 0, Range::closed(0, 10000)));
    const auto seed = static_cast<std::uint64_t>(
        c.integer("random_seed", static_cast<std::int64_t>(derive_seed(sample_seed, "lines_of_sight:" + entry)),
                  Range::closed(0, 9.0e15)));
    for (const auto& l : isotropic_lines_of_sight(n, seed)) out.push_back(l);
  } else {
    add_axes(s, key);
  }
  if (out.empty()) s.fail(key, "expected at least one line of sight");
  std::set<std::string> seen;
  for (const auto& l : out)
    if (!seen.insert(l.label).second) s.fail(key, "line of sight '" + l.label + "' appears twice");
  return out;
}

// Everything an entry may inherit from the defaults section.
struct Defaults {
  CosmologySettings cosmology;
  SelectionSettings selection;
  EmissionSettings emission;
  ViewSettings view;
  std::vector<LineOfSight> lines_of_sight{axis_los("z")};
  std::int64_t model_particles = 0;
  std::string model_projection = "particles";
  SurveyObserveSettings observation;
  SurveyMeasureSettings measure;
};

Defaults read_defaults(const std::optional<Section>& s, std::uint64_t sample_seed) {
  Defaults d;
  d.view.nx = d.view.ny = 256;
  d.observation.base.events = false;  // surveys rarely need the event lists
  if (!s) return d;
  d.cosmology = cosmology_over(s->maybe_child("cosmology"), d.cosmology);
  d.selection = selection_over(s->maybe_child("selection"), d.selection);
  d.emission = emission_over(s->maybe_child("emission"), d.emission);
  d.view = view_over(s->maybe_child("map"), d.view);
  d.lines_of_sight = lines_of_sight_over(*s, "lines_of_sight", d.lines_of_sight, sample_seed, "defaults");
  d.model_particles = s->integer("model_particles", 0, Range::non_negative());
  d.model_projection = s->choice("model_projection", {"particles", "analytic"}, d.model_projection);
  d.observation = observation_over(s->maybe_child("observation"), d.observation);
  d.measure = measure_over(s->maybe_child("measure"), d.measure);
  return d;
}

// R500 / M500 of an entry: at most one.
void read_mass(const Section& e, double& r500, double& m500, double r500_def, double m500_def) {
  if (e.has("r500_kpc") && e.has("m500_msun")) e.fail("r500_kpc", "give r500_kpc or m500_msun, not both");
  if (e.has("r500_kpc")) {
    r500 = e.number("r500_kpc", std::nullopt, Range::positive());
    m500 = 0.0;
  } else if (e.has("m500_msun")) {
    m500 = e.number("m500_msun", std::nullopt, Range::positive());
    r500 = 0.0;
  } else {
    e.accept("r500_kpc");
    e.accept("m500_msun");
    r500 = r500_def;
    m500 = m500_def;
  }
}

// Metadata of a model file (redshift, RA/Dec, M500) and its resolved hash;
// failures are kept as the entry's load error.
void read_model_metadata(SurveyEntry& e, std::optional<double>& z, std::optional<double>& ra,
                         std::optional<double>& dec, std::optional<double>& m500) {
  try {
    std::string hash;
    const auto m = load_cluster_model(e.cells.model_file, nullptr, &hash);
    e.model_hash = hash;
    z = m.redshift;
    ra = m.ra_deg;
    dec = m.dec_deg;
    m500 = m.m500_msun;
  } catch (const core::Error& x) {
    e.load_error = x.what();
  }
}

void finish_simulated(SurveyEntry& e, const std::string& where) {
  if (e.observation.instruments.empty())
    throw core::ConfigError(where + ": entry '" + e.name +
                            "': no instrument (give defaults.observation.instruments or the entry's observation.instruments)");
  if (e.observation.exposures_ks.empty())
    throw core::ConfigError(where + ": entry '" + e.name +
                            "': no exposure (give defaults.observation.exposures_ks or the entry's observation.exposures_ks)");
  if (e.measure.statistics.source == "expected" && e.measure.statistics.realisations == 0)
    throw core::ConfigError(where + ": entry '" + e.name + "': measure.realisations.source expected needs number > 0");
}

SurveyEntry read_yaml_entry(const Section& c, const Defaults& d, std::uint64_t sample_seed, std::size_t index) {
  SurveyEntry e;
  e.name = trim(c.text("name"));
  if (e.name.empty()) c.fail("name", "expected a non-empty name");
  e.where = c.where();
  e.echo_prefix = c.path();
  const bool has_model = c.has("model"), has_cells = c.has("cells"), has_counts = c.has("counts");
  if (int(has_model) + int(has_cells) + int(has_counts) != 1)
    c.fail("name", "entry '" + e.name +
                       "': give exactly one of 'model' (analytic model), 'cells' (gas-cells file) or 'counts' (an observed counts image)");
  e.simulated = !has_counts;
  e.cosmology = cosmology_over(c.maybe_child("cosmology"), d.cosmology);
  e.measure = measure_over(c.maybe_child("measure"), d.measure);
  if (e.simulated) {
    auto& cs = e.cells;
    cs.fields = io::own_layout_field_map();
    if (has_model) {
      cs.model_file = c.path_value("model");
      cs.model_particles = c.integer("model_particles", d.model_particles, Range::non_negative());
      cs.model_projection = c.choice("model_projection", {"particles", "analytic"}, d.model_projection);
      if (cs.model_projection == "analytic")
        cs.analytic_subsamples = static_cast<int>(c.integer("analytic_subsamples", 2, Range::closed(1, 16)));
      if (c.has("fields")) c.fail("fields", "a field map applies to a cells file only");
    } else {
      cs.cells_file = c.path_value("cells");
      if (const auto f = c.maybe_child("fields")) cs.fields = read_field_map(*f);
      for (const char* k : {"model_particles", "model_projection", "analytic_subsamples"})
        if (c.has(k)) c.fail(k, "applies to an analytic model ('model') only");
    }
    cs.bad_cells = c.choice("bad_cells", {"error", "drop"}, std::string("error")) == "drop" ? cells::BadCellPolicy::Drop
                                                                                           : cells::BadCellPolicy::Error;
    std::optional<double> mz, mra, mdec, mm500;
    if (has_model) read_model_metadata(e, mz, mra, mdec, mm500);
    auto& t = e.target;
    t.name = e.name;
    // Default: the model's redshift (required for cells files and models without one).
    std::optional<double> zdef = mz;
    if (!zdef && !e.load_error.empty()) zdef = 0.1;  // the entry fails anyway with its load error
    t.redshift = c.number("redshift", zdef, Range{0.0, 20.0, true, false});
    t.ra_deg = c.number("ra_deg", mra.value_or(0.0), Range{0.0, 360.0, false, true});
    t.dec_deg = c.number("dec_deg", mdec.value_or(0.0), Range::closed(-90.0, 90.0));
    const auto cen = c.numbers("centre_kpc", std::vector<double>{0, 0, 0}, Range::any(), 3, 3);
    t.centre_kpc = {cen[0], cen[1], cen[2]};
    read_mass(c, t.r500_kpc, e.m500_msun, 0.0, mm500.value_or(0.0));
    e.selection = selection_over(c.maybe_child("selection"), d.selection);
    e.emission = emission_over(c.maybe_child("emission"), d.emission);
    e.view = view_over(c.maybe_child("map"), d.view);
    e.lines_of_sight = lines_of_sight_over(c, "lines_of_sight", d.lines_of_sight, sample_seed, e.name);
    e.observation = observation_over(c.maybe_child("observation"), d.observation);
    for (const char* k : {"exposure", "background", "background_level_counts_per_pixel", "background_annulus", "mask",
                          "mask_circles", "mask_circles_csv", "band_keV", "centre", "check_units",
                          "exposure_reference"})
      if (c.has(k)) c.fail(k, std::string("applies to an observed entry ('counts') only"));
    finish_simulated(e, e.where);
  } else {
    for (const char* k : {"model_particles", "model_projection", "analytic_subsamples", "fields", "bad_cells",
                          "centre_kpc", "selection", "emission", "map", "lines_of_sight", "observation", "ra_deg",
                          "dec_deg"})
      if (c.has(k))
        c.fail(k, std::string("applies to a simulated entry only") +
                      (std::string(k) == "ra_deg" || std::string(k) == "dec_deg"
                           ? " (an observed entry's centre is centre: {ra_deg, dec_deg} or centre: find)"
                           : ""));
    auto& i = e.inputs;
    auto ref = [&](const char* key) -> ImageRef {
      if (!c.has(key)) {
        c.accept(key);
        return {};
      }
      if (c.is_map(key)) {
        const Section m = c.child(key);
        ImageRef r;
        r.file = m.path_value("file");
        r.hdu = m.text("hdu", std::string(""));
        return r;
      }
      ImageRef r = parse_image_ref(c.text(key), key_path(c, key));
      r.file = resolve(r.file, folder_of(c));
      return r;
    };
    i.counts = ref("counts");
    i.exposure = ref("exposure");
    i.background = ref("background");
    i.mask = ref("mask");
    i.expected = ref("expected");
    if (c.has("background_level_counts_per_pixel"))
      i.background_level = c.number("background_level_counts_per_pixel", std::nullopt, Range::non_negative());
    else
      c.accept("background_level_counts_per_pixel");
    i.background_annulus = aperture_over(c, "background_annulus", true, std::nullopt);
    for (const auto& m : c.children("mask_circles", true)) {
      SkyCircle sc;
      sc.ra_deg = m.number("ra_deg", std::nullopt, Range{0.0, 360.0, false, true});
      sc.dec_deg = m.number("dec_deg", std::nullopt, Range::closed(-90.0, 90.0));
      sc.radius_arcsec = m.number("radius_arcsec", std::nullopt, Range::positive());
      i.mask_circles.push_back(sc);
    }
    if (c.has("mask_circles_csv")) i.mask_circle_files = path_list(c, "mask_circles_csv");
    else c.accept("mask_circles_csv");
    i.check_units = c.flag("check_units", true);
    i.exposure_reference = c.number("exposure_reference", 0.0, Range::non_negative());
    i.min_relative_exposure = e.measure.min_relative_exposure;
    if (c.has("band_keV")) i.band_keV = c.numbers("band_keV", std::nullopt, Range::positive(), 2, 2);
    else c.accept("band_keV");
    auto& g = e.observed_target;
    g.name = e.name;
    g.redshift = c.number("redshift", 0.0, Range{0.0, 20.0, false, false});
    read_mass(c, g.r500_kpc, g.m500_msun, 0.0, 0.0);
    if (c.has("centre") && c.is_map("centre")) {
      const Section m = c.child("centre");
      g.find_centre = false;
      g.centre_ra_deg = m.number("ra_deg", std::nullopt, Range{0.0, 360.0, false, true});
      g.centre_dec_deg = m.number("dec_deg", std::nullopt, Range::closed(-90.0, 90.0));
      g.search_radius = aperture_over(m, "search_radius", false, std::nullopt);
      if (g.search_radius) g.find_centre = true;
    } else {
      c.choice("centre", {"find"}, std::string("find"));
      g.find_centre = true;
    }
    const int nbkg = int(i.background.given()) + int(!std::isnan(i.background_level)) + int(bool(i.background_annulus));
    if (nbkg > 1)
      c.fail("background", "give one of background (image), background_level_counts_per_pixel, background_annulus");
    if (e.measure.statistics.source == "expected" && !i.expected.given())
      c.fail("counts", "entry '" + e.name + "': measure.realisations.source expected needs 'expected' (the mock's expected image)");
  }
  (void)index;
  return e;
}

// ---- CSV listing -------------------------------------------------------------

std::vector<std::string> split_csv_line(const std::string& line, const std::string& where) {
  std::vector<std::string> out;
  std::string cur;
  bool quoted = false;
  for (std::size_t i = 0; i < line.size(); ++i) {
    const char ch = line[i];
    if (quoted) {
      if (ch == '"') {
        if (i + 1 < line.size() && line[i + 1] == '"') {
          cur += '"';
          ++i;
        } else {
          quoted = false;
        }
      } else {
        cur += ch;
      }
    } else if (ch == '"') {
      quoted = true;
    } else if (ch == ',') {
      out.push_back(trim(cur));
      cur.clear();
    } else if (ch != '\r') {
      cur += ch;
    }
  }
  if (quoted) throw core::ConfigError(where + ": unterminated quoted field");
  out.push_back(trim(cur));
  return out;
}

std::vector<std::string> split_list(const std::string& v) {
  std::vector<std::string> out;
  std::string cur;
  for (char ch : v) {
    if (ch == ';') {
      if (!trim(cur).empty()) out.push_back(trim(cur));
      cur.clear();
    } else {
      cur += ch;
    }
  }
  if (!trim(cur).empty()) out.push_back(trim(cur));
  return out;
}

double csv_number(const std::string& v, const std::string& where, const Range& r) {
  char* end = nullptr;
  const double d = std::strtod(v.c_str(), &end);
  if (end == v.c_str() || *end != '\0' || !std::isfinite(d))
    throw core::ConfigError(where + ": expected a number, got '" + v + "'");
  if (!r.contains(d)) throw core::ConfigError(where + ": value " + v + " out of range (expected " + r.describe() + ")");
  return d;
}

const std::vector<std::string>& csv_columns() {
  static const std::vector<std::string> c = {
      "name", "model", "cells", "counts", "exposure", "background", "background_level_counts_per_pixel",
      "background_annulus", "mask", "mask_circles_csv", "expected", "band_min_keV", "band_max_keV", "redshift",
      "ra_deg", "dec_deg", "r500_kpc", "m500_msun", "centre_ra_deg", "centre_dec_deg", "centre_search_radius",
      "lines_of_sight", "instruments", "exposures_ks", "model_particles"};
  return c;
}

SurveyEntry csv_entry(const std::map<std::string, std::string>& row, const Defaults& d, std::uint64_t sample_seed,
                      const std::string& folder, const std::string& where) {
  auto get = [&](const std::string& k) {
    const auto it = row.find(k);
    return it == row.end() ? std::string() : it->second;
  };
  auto at = [&](const std::string& k) { return where + ": column " + k; };
  SurveyEntry e;
  e.name = get("name");
  if (e.name.empty()) throw core::ConfigError(at("name") + ": expected a non-empty name");
  e.where = where;
  for (const auto& k : csv_columns())
    if (!get(k).empty()) e.csv_echo += "csv." + k + "=" + get(k) + "\n";
  const bool has_model = !get("model").empty(), has_cells = !get("cells").empty(), has_counts = !get("counts").empty();
  if (int(has_model) + int(has_cells) + int(has_counts) != 1)
    throw core::ConfigError(at("name") + ": entry '" + e.name + "': give exactly one of model, cells or counts");
  e.simulated = !has_counts;
  e.cosmology = d.cosmology;
  e.measure = d.measure;
  auto num = [&](const std::string& k, const Range& r) -> std::optional<double> {
    const std::string v = get(k);
    if (v.empty()) return std::nullopt;
    return csv_number(v, at(k), r);
  };
  const auto z = num("redshift", Range{0.0, 20.0, true, false});
  const auto r500 = num("r500_kpc", Range::positive());
  const auto m500 = num("m500_msun", Range::positive());
  if (r500 && m500) throw core::ConfigError(at("r500_kpc") + ": give r500_kpc or m500_msun, not both");
  const std::vector<std::string> sim_only = {"lines_of_sight", "instruments", "exposures_ks", "model_particles",
                                             "ra_deg", "dec_deg"};
  const std::vector<std::string> obs_only = {"exposure", "background", "background_level_counts_per_pixel",
                                             "background_annulus", "mask", "mask_circles_csv", "expected",
                                             "band_min_keV", "band_max_keV", "centre_ra_deg", "centre_dec_deg",
                                             "centre_search_radius"};
  if (e.simulated) {
    for (const auto& k : obs_only)
      if (!get(k).empty()) throw core::ConfigError(at(k) + ": applies to an observed entry (counts) only");
    auto& cs = e.cells;
    cs.fields = io::own_layout_field_map();
    std::optional<double> mz, mra, mdec, mm500;
    if (has_model) {
      cs.model_file = resolve(get("model"), folder);
      cs.model_projection = d.model_projection;
      cs.model_particles = d.model_particles;
      if (const auto p = num("model_particles", Range::non_negative())) cs.model_particles = static_cast<std::int64_t>(*p);
      read_model_metadata(e, mz, mra, mdec, mm500);
    } else {
      cs.cells_file = resolve(get("cells"), folder);
      if (!get("model_particles").empty()) throw core::ConfigError(at("model_particles") + ": applies to a model only");
    }
    auto& t = e.target;
    t.name = e.name;
    if (z) t.redshift = *z;
    else if (mz) t.redshift = *mz;
    else if (e.load_error.empty()) throw core::ConfigError(at("redshift") + ": entry '" + e.name + "' needs a redshift");
    t.ra_deg = num("ra_deg", Range{0.0, 360.0, false, true}).value_or(mra.value_or(0.0));
    t.dec_deg = num("dec_deg", Range::closed(-90.0, 90.0)).value_or(mdec.value_or(0.0));
    t.r500_kpc = r500.value_or(0.0);
    e.m500_msun = r500 ? 0.0 : m500.value_or(mm500.value_or(0.0));
    e.selection = d.selection;
    e.emission = d.emission;
    e.view = d.view;
    e.lines_of_sight = d.lines_of_sight;
    if (!get("lines_of_sight").empty()) {
      e.lines_of_sight.clear();
      for (const auto& item : split_list(get("lines_of_sight"))) {
        const std::string l = lower(item);
        if (l == "x" || l == "y" || l == "z") {
          e.lines_of_sight.push_back(axis_los(l));
        } else if (l.rfind("iso:", 0) == 0) {
          const int n = static_cast<int>(csv_number(l.substr(4), at("lines_of_sight"), Range::closed(1, 10000)));
          for (const auto& x : isotropic_lines_of_sight(n, derive_seed(sample_seed, "lines_of_sight:" + e.name)))
            e.lines_of_sight.push_back(x);
        } else if (l.find('/') != std::string::npos) {
          const auto slash = l.find('/');
          LineOfSight x;
          x.axis = "angles";
          x.theta_deg = csv_number(l.substr(0, slash), at("lines_of_sight"), Range::closed(0.0, 180.0));
          x.phi_deg = csv_number(l.substr(slash + 1), at("lines_of_sight"), Range::closed(-360.0, 360.0));
          x.label = angle_label(x.theta_deg, x.phi_deg);
          e.lines_of_sight.push_back(x);
        } else {
          throw core::ConfigError(at("lines_of_sight") + ": '" + item +
                                  "' is not x, y, z, THETA/PHI (degrees) or iso:N; separate items with ';'");
        }
      }
    }
    e.observation = d.observation;
    if (!get("instruments").empty()) {
      e.observation.instruments.clear();
      for (const auto& p : split_list(get("instruments"))) e.observation.instruments.push_back(resolve(p, folder));
    }
    if (!get("exposures_ks").empty()) {
      e.observation.exposures_ks.clear();
      for (const auto& p : split_list(get("exposures_ks")))
        e.observation.exposures_ks.push_back(csv_number(p, at("exposures_ks"), Range{0.0, 1e5, true, false}));
    }
    finish_simulated(e, where);
  } else {
    for (const auto& k : sim_only)
      if (!get(k).empty()) throw core::ConfigError(at(k) + ": applies to a simulated entry (model or cells) only");
    auto ref = [&](const std::string& k) -> ImageRef {
      if (get(k).empty()) return {};
      ImageRef r = parse_image_ref(get(k), at(k));
      r.file = resolve(r.file, folder);
      return r;
    };
    auto& i = e.inputs;
    i.counts = ref("counts");
    i.exposure = ref("exposure");
    i.background = ref("background");
    i.mask = ref("mask");
    i.expected = ref("expected");
    if (const auto b = num("background_level_counts_per_pixel", Range::non_negative())) i.background_level = *b;
    if (!get("background_annulus").empty()) i.background_annulus = parse_aperture(get("background_annulus"), true, at("background_annulus"));
    for (const auto& p : split_list(get("mask_circles_csv"))) i.mask_circle_files.push_back(resolve(p, folder));
    const auto e1 = num("band_min_keV", Range::positive()), e2 = num("band_max_keV", Range::positive());
    if (bool(e1) != bool(e2)) throw core::ConfigError(at("band_min_keV") + ": give band_min_keV and band_max_keV together");
    if (e1) {
      if (!(*e2 > *e1)) throw core::ConfigError(at("band_max_keV") + ": expected > band_min_keV");
      i.band_keV = std::vector<double>{*e1, *e2};
    }
    i.min_relative_exposure = e.measure.min_relative_exposure;
    const int nbkg = int(i.background.given()) + int(!std::isnan(i.background_level)) + int(bool(i.background_annulus));
    if (nbkg > 1)
      throw core::ConfigError(at("background") +
                              ": give one of background, background_level_counts_per_pixel, background_annulus");
    auto& g = e.observed_target;
    g.name = e.name;
    g.redshift = z.value_or(0.0);
    g.r500_kpc = r500.value_or(0.0);
    g.m500_msun = m500.value_or(0.0);
    const auto cra = num("centre_ra_deg", Range{0.0, 360.0, false, true});
    const auto cdec = num("centre_dec_deg", Range::closed(-90.0, 90.0));
    if (bool(cra) != bool(cdec)) throw core::ConfigError(at("centre_ra_deg") + ": give centre_ra_deg and centre_dec_deg together");
    if (cra) {
      g.find_centre = false;
      g.centre_ra_deg = *cra;
      g.centre_dec_deg = *cdec;
      if (!get("centre_search_radius").empty()) {
        g.search_radius = parse_aperture(get("centre_search_radius"), false, at("centre_search_radius"));
        g.find_centre = true;
      }
    } else if (!get("centre_search_radius").empty()) {
      throw core::ConfigError(at("centre_search_radius") + ": needs centre_ra_deg and centre_dec_deg");
    }
    if (e.measure.statistics.source == "expected" && !i.expected.given())
      throw core::ConfigError(at("expected") + ": measure.realisations.source expected needs the expected image");
  }
  return e;
}

void read_csv_entries(const std::string& path, const Defaults& d, std::uint64_t seed, std::vector<SurveyEntry>& out) {
  std::ifstream in(path);
  if (!in) throw core::ConfigError(path + ": cannot open the entries CSV listing (survey.entries_csv)");
  const std::string folder = fs::path(path).parent_path().string();
  std::string line;
  std::vector<std::string> header;
  std::size_t lineno = 0;
  while (std::getline(in, line)) {
    ++lineno;
    const std::string t = trim(line);
    if (t.empty() || t[0] == '#') continue;
    const std::string where = path + ":" + std::to_string(lineno);
    auto cells = split_csv_line(line, where);
    if (header.empty()) {
      header = cells;
      std::set<std::string> seen;
      for (const auto& h : header) {
        if (std::find(csv_columns().begin(), csv_columns().end(), h) == csv_columns().end()) {
          const std::string near = nearest(h, csv_columns());
          throw core::ConfigError(where + ": unknown column '" + h + "'" +
                                  (near.empty() ? "" : " (did you mean '" + near + "'?)"));
        }
        if (!seen.insert(h).second) throw core::ConfigError(where + ": column '" + h + "' appears twice");
      }
      if (!seen.count("name")) throw core::ConfigError(where + ": the header needs a 'name' column");
      continue;
    }
    if (cells.size() != header.size())
      throw core::ConfigError(where + ": " + std::to_string(cells.size()) + " fields, the header has " +
                              std::to_string(header.size()));
    std::map<std::string, std::string> row;
    for (std::size_t k = 0; k < header.size(); ++k) row[header[k]] = cells[k];
    out.push_back(csv_entry(row, d, seed, folder, where));
  }
  if (header.empty()) throw core::ConfigError(path + ": empty entries CSV listing (expected a header row)");
}

}  // namespace

// ---- public ------------------------------------------------------------------

std::uint64_t derive_seed(std::uint64_t parent, const std::string& name) {
  std::uint64_t h = 1469598103934665603ULL;
  for (unsigned char c : name) {
    h ^= c;
    h *= 1099511628211ULL;
  }
  std::uint64_t state = parent ^ (h * 0x9e3779b97f4a7c15ULL);
  const std::uint64_t a = core::splitmix64(state);
  return a & ((1ULL << 53) - 1);
}

std::vector<LineOfSight> isotropic_lines_of_sight(int n, std::uint64_t seed) {
  std::vector<LineOfSight> out;
  core::RandomStream rng(seed, 0);
  for (int k = 0; k < n; ++k) {
    const double u = 2.0 * rng.uniform() - 1.0;  // cos theta
    const double phi = 360.0 * rng.uniform();
    LineOfSight l;
    l.axis = "angles";
    l.theta_deg = std::acos(std::max(-1.0, std::min(1.0, u))) * 180.0 / core::constants::kPi;
    l.phi_deg = phi;
    l.label = "iso" + std::to_string(k + 1);
    out.push_back(l);
  }
  return out;
}

SurveySettings load_survey(const std::string& path_in) {
  const std::string path = fs::absolute(path_in).lexically_normal().string();
  auto file = SettingsFile::load(path);
  const Section r = file.root();
  SurveySettings s;
  s.source_file = path;
  const std::string folder = fs::path(path).parent_path().string();
  std::vector<std::string> csv_files;
  if (const auto sv = r.maybe_child("survey")) {
    s.name = trim(sv->text("name", std::string("sample")));
    if (s.name.empty()) sv->fail("name", "expected a non-empty name");
    s.seed = static_cast<std::uint64_t>(sv->integer("seed", 1, Range::closed(0, 9.0e15)));
    s.output_directory = sv->path_value("output_directory", s.name + "_survey");
    s.threads = static_cast<int>(sv->integer("threads", 0, Range::closed(0, 4096)));
    if (sv->has("entries_csv")) csv_files = path_list(*sv, "entries_csv");
    else sv->accept("entries_csv");
  } else {
    s.output_directory = resolve(s.name + "_survey", folder);
  }
  const Defaults d = read_defaults(r.maybe_child("defaults"), s.seed);
  const auto list = r.children("clusters", !csv_files.empty());
  for (std::size_t k = 0; k < list.size(); ++k) s.entries.push_back(read_yaml_entry(list[k], d, s.seed, k));
  file.finish();
  for (const auto& f : csv_files) read_csv_entries(f, d, s.seed, s.entries);
  if (s.entries.empty()) r.fail("clusters", "the sample has no entries (clusters, or rows of survey.entries_csv)");
  std::set<std::string> names;
  for (const auto& e : s.entries)
    if (!names.insert(lower(e.name)).second)
      throw core::ConfigError(e.where + ": entry name '" + e.name + "' is used twice (names identify targets)");
  // Instruments: each file loaded once; failures are kept per file (their targets fail).
  for (const auto& e : s.entries)
    for (const auto& f : e.observation.instruments) {
      if (!e.simulated || s.instruments.count(f) || s.instrument_errors.count(f)) continue;
      try {
        s.instruments.emplace(f, load_instrument(f));
      } catch (const core::Error& x) {
        s.instrument_errors.emplace(f, x.what());
      }
    }
  s.resolved_yaml = file.resolved_yaml();
  s.config_hash = file.resolved_hash();
  s.resolved = file.resolved();
  return s;
}

const char* survey_example_yaml() {
  return R"(# icmscope survey: a sample of clusters -> one catalog.
# Simulated entries (an analytic model or a gas-cells file) are observed through every instrument and exposure
# along every line of sight, then measured; observed entries (a counts image) are checked, then measured.
# One catalog row per cluster x line of sight x instrument x exposure. Units are in the key names; relative
# paths resolve against this file's folder (CSV listings: against the CSV file's folder).

survey:
  name: example                  # names the output folder (default <name>_survey) and the catalog
  seed: 2026                     # every target's seed derives from this and the target id
  output_directory: example_survey  # default: <name>_survey beside this file
  threads: 0                     # targets in parallel (0 = all cores; --threads overrides)
  # entries_csv: more_clusters.csv   # optional CSV listing of more entries (columns in the README)

defaults:                        # shared by every entry; an entry overrides any key of these sections
  cosmology: {H0_km_s_Mpc: 70.0, Omega_m: 0.3, Omega_lambda: 0.7}
  emission:                      # simulated entries (see icmscope project --example)
    band_keV: [0.5, 2.0]
    nH_cm2: 3.0e20
    abundances: anders_grevesse_1989
  selection: {min_kT_keV: 0.0}
  map:                           # the grid of the mock images
    pixels: 256
    pixel_arcsec: 4.0            # or width_arcmin
    kernel: cubic_spline
  lines_of_sight: [x, y, z]      # or {axes: [z], angles: [{theta_deg: 30, phi_deg: 45}], random: 4, random_seed: 11}
  model_particles: 100000        # particles synthesised per model (0 = the model's own)
  model_projection: particles    # particles | analytic (noise-free line-of-sight integrals)
  observation:
    instruments: [../instruments/vasta_la.yaml]   # one or more instrument files
    exposures_ks: [20]           # one or more on-times [ks]
    point_sources: false         # or {enabled: true, flux_min_erg_cm2_s: 2e-15, ...} (see observe --example)
    events: false                # write the photon event lists
    psf_mode: zones              # zones | on_axis
  measure:
    apertures: {}                # as in icmscope measure --example; defaults: the published conventions
    realisations: {number: 100, source: observed, w_bias: quadrature}
    classification: {presets: [cassano2010, w_two_class, w_three_class, p3_two_class, p3_three_class, santos2008]}
    flags: {low_counts_net: 1000, large_mask_fraction: 0.1, min_pixel_sn: 3}
    background: image            # simulated: image (the mock's expected background) | annulus | none
    # background_annulus: "1.6/2 R500"   # background: annulus
    centre: find                 # find (peak of the smoothed image) | given (the entry's RA/Dec)
    # centre_search_radius: "50 kpc"     # centre: given -> search for the peak within this distance
    min_relative_exposure: 0.0   # pixels at or below this relative exposure are gaps
    quicklook: true              # per-target PNG with the centre and the apertures
    stretch: asinh
    json: true                   # per-target JSON of the measurement

clusters:
  - name: Maren-7                # simulated: an analytic model (redshift, RA/Dec, M500 default to the model's)
    model: ../../demo_clusters/models/maren7_cool_core.yaml
    map: {pixels: 384}           # a per-entry override of one key
  - name: Kessra-13
    model: ../../demo_clusters/models/kessra13_major_merger.yaml
    lines_of_sight: {axes: [z], random: 2}
    observation: {exposures_ks: [10, 40]}
  # - name: Sim-42               # simulated: a gas-cells file (HDF5, FITS table, CSV) with a field map
  #   cells: sim42_cells.h5
  #   fields: {...}              # as in icmscope project --example
  #   redshift: 0.1
  #   ra_deg: 150.0
  #   dec_deg: 2.0
  #   r500_kpc: 1100             # or m500_msun
  #   centre_kpc: [0, 0, 0]
  # - name: Obs-1                # observed: a counts image
  #   counts: obs1.fits[COUNTS]  # FILE, FILE[EXTNAME] or FILE[HDU number]
  #   exposure: obs1_exp.fits    # optional exposure map on the same grid [s or cm**2 s]
  #   background_annulus: "1.6/2 R500"   # or background: FILE[HDU], or background_level_counts_per_pixel: 0.01
  #   mask: obs1_mask.fits       # optional mask image (> 0.5 good) ...
  #   mask_circles: [{ra_deg: 150.1, dec_deg: 2.2, radius_arcsec: 12}]   # ... and/or circles on the sky
  #   mask_circles_csv: obs1_sources.csv  # columns ra_deg, dec_deg, radius_arcsec
  #   band_keV: [0.5, 2.0]       # default: the header's E_MIN / E_MAX
  #   redshift: 0.12             # default: the header's REDSHIFT
  #   m500_msun: 4.0e14          # or r500_kpc
  #   centre: find               # or {ra_deg: .., dec_deg: .., search_radius: "50 kpc"}
)";
}

}  // namespace icmscope::config
