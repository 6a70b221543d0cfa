#include "icmscope/config/measure_settings.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "icmscope/core/errors.hpp"
#include "icmscope/morphology/classification.hpp"

namespace icmscope::config {

namespace {

std::string trim(const std::string& s) {
  std::size_t b = 0, e = s.size();
  while (b < e && std::isspace(static_cast<unsigned char>(s[b]))) ++b;
  while (e > b && std::isspace(static_cast<unsigned char>(s[e - 1]))) --e;
  return s.substr(b, e - b);
}

std::string lower(std::string s) {
  for (char& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return s;
}

bool parse_number(const std::string& t, double& v) {
  if (t.empty()) return false;
  char* end = nullptr;
  v = std::strtod(t.c_str(), &end);
  return end && *end == '\0' && std::isfinite(v);
}

std::string fmt(double v) {
  char b[40];
  std::snprintf(b, sizeof b, "%.6g", v);
  return b;
}

}  // namespace

std::string ImageRef::describe() const { return hdu.empty() ? file : file + "[" + hdu + "]"; }

ImageRef parse_image_ref(const std::string& text, const std::string& where) {
  ImageRef r;
  const std::string t = trim(text);
  if (t.empty()) throw core::ConfigError(where + ": expected a FITS file name, got an empty value");
  if (t.back() == ']') {
    const std::size_t open = t.rfind('[');
    if (open == std::string::npos || open == 0)
      throw core::ConfigError(where + ": '" + t + "' is not FILE or FILE[HDU]");
    r.file = t.substr(0, open);
    r.hdu = trim(t.substr(open + 1, t.size() - open - 2));
    if (r.hdu.empty()) throw core::ConfigError(where + ": '" + t + "' names an empty HDU (use FILE or FILE[NAME])");
  } else {
    r.file = t;
  }
  return r;
}

const char* to_string(ApertureUnit u) {
  switch (u) {
    case ApertureUnit::kpc: return "kpc";
    case ApertureUnit::r500: return "R500";
    case ApertureUnit::arcsec: return "arcsec";
    case ApertureUnit::pixel: return "px";
  }
  return "?";
}

std::string ApertureText::label() const {
  const std::string u = to_string(unit);
  if (pair) return fmt(inner) + "/" + fmt(outer) + " " + u;
  if (unit == ApertureUnit::r500 && outer == 1.0) return "R500";
  return fmt(outer) + " " + u;
}

ApertureText parse_aperture(const std::string& text, bool pair, const std::string& where) {
  ApertureText a;
  a.text = trim(text);
  a.pair = pair;
  a.where = where;
  const std::string expect = pair ? "expected 'INNER/OUTER UNIT' like '40/400 kpc', '0.1/1 R500', '30/60 arcsec'"
                                  : "expected 'VALUE UNIT' like '500 kpc', '1 R500', 'R500', '90 arcsec', '40 px'";
  const auto bad = [&](const std::string& why) -> ApertureText {
    throw core::ConfigError(where + ": '" + a.text + "': " + why + " (" + expect + ")");
  };
  std::string t = a.text;
  if (t.empty()) bad("empty");
  // Split the unit off the end: the trailing letters (R500 keeps its digits).
  std::string num, unit;
  const std::string lt = lower(t);
  if (!pair && (lt == "r500")) {
    num = "1";
    unit = "r500";
  } else {
    std::size_t k = t.size();
    // "R500" unit: a trailing "r500" token
    if (lt.size() >= 4 && lt.compare(lt.size() - 4, 4, "r500") == 0) {
      k = t.size() - 4;
    } else {
      while (k > 0 && std::isalpha(static_cast<unsigned char>(t[k - 1]))) --k;
    }
    num = trim(t.substr(0, k));
    unit = lower(trim(t.substr(k)));
  }
  if (unit == "kpc") a.unit = ApertureUnit::kpc;
  else if (unit == "mpc") a.unit = ApertureUnit::kpc;  // converted below
  else if (unit == "r500") a.unit = ApertureUnit::r500;
  else if (unit == "arcsec" || unit == "as") a.unit = ApertureUnit::arcsec;
  else if (unit == "arcmin") a.unit = ApertureUnit::arcsec;  // converted below
  else if (unit == "px" || unit == "pix" || unit == "pixel" || unit == "pixels") a.unit = ApertureUnit::pixel;
  else bad(unit.empty() ? "no unit" : "unknown unit '" + unit + "'");
  const double scale = unit == "mpc" ? 1000.0 : unit == "arcmin" ? 60.0 : 1.0;
  if (pair) {
    const std::size_t slash = num.find('/');
    if (slash == std::string::npos) bad("not a pair");
    double a1 = 0, a2 = 0;
    if (!parse_number(trim(num.substr(0, slash)), a1) || !parse_number(trim(num.substr(slash + 1)), a2))
      bad("not two numbers");
    if (!(a1 >= 0.0) || !(a2 > a1)) bad("need 0 <= INNER < OUTER");
    a.inner = a1 * scale;
    a.outer = a2 * scale;
  } else {
    double v = 0;
    if (!parse_number(num, v)) bad("not a number");
    if (!(v >= 0.0)) bad("must be >= 0");
    a.outer = v * scale;
  }
  return a;
}

std::vector<SkyCircle> read_sky_circles_csv(const std::string& path) {
  std::ifstream in(path);
  if (!in) throw core::InputError(path + ": cannot open the circles file");
  std::vector<SkyCircle> out;
  std::string line;
  int lineno = 0;
  int cra = -1, cdec = -1, crad = -1;
  std::size_t ncols = 0;
  const auto split = [](const std::string& l) {
    std::vector<std::string> f;
    std::string cur;
    for (char c : l) {
      if (c == ',') {
        f.push_back(trim(cur));
        cur.clear();
      } else {
        cur += c;
      }
    }
    f.push_back(trim(cur));
    return f;
  };
  while (std::getline(in, line)) {
    ++lineno;
    if (!line.empty() && line.back() == '\r') line.pop_back();
    const std::string t = trim(line);
    if (t.empty() || t[0] == '#') continue;
    const auto f = split(t);
    if (cra < 0) {
      for (std::size_t i = 0; i < f.size(); ++i) {
        const std::string n = lower(f[i]);
        if (n == "ra_deg") cra = static_cast<int>(i);
        if (n == "dec_deg") cdec = static_cast<int>(i);
        if (n == "radius_arcsec") crad = static_cast<int>(i);
      }
      if (cra < 0 || cdec < 0 || crad < 0)
        throw core::InputError(path + ":" + std::to_string(lineno) +
                               ": header must name the columns ra_deg, dec_deg, radius_arcsec");
      ncols = f.size();
      continue;
    }
    if (f.size() != ncols)
      throw core::InputError(path + ":" + std::to_string(lineno) + ": " + std::to_string(f.size()) +
                             " fields, the header has " + std::to_string(ncols));
    SkyCircle c;
    if (!parse_number(f[cra], c.ra_deg) || !parse_number(f[cdec], c.dec_deg) ||
        !parse_number(f[crad], c.radius_arcsec))
      throw core::InputError(path + ":" + std::to_string(lineno) + ": ra_deg, dec_deg, radius_arcsec must be numbers");
    if (c.dec_deg < -90.0 || c.dec_deg > 90.0 || !(c.radius_arcsec > 0.0))
      throw core::InputError(path + ":" + std::to_string(lineno) +
                             ": need dec_deg in [-90, 90] and radius_arcsec > 0");
    out.push_back(c);
  }
  if (cra < 0) throw core::InputError(path + ": no header line (ra_deg, dec_deg, radius_arcsec)");
  return out;
}

void resolve_observation(MeasureInputSettings& in) {
  if (in.observation.empty()) return;
  const std::string p = in.observation;
  const auto exists = [](const std::string& f) {
    std::error_code ec;
    return std::filesystem::is_regular_file(f, ec);
  };
  if (!in.counts.given()) {
    if (!exists(p + "_counts.fits"))
      throw core::ConfigError("inputs.observation: " + p + "_counts.fits does not exist (expected the products of "
                              "`icmscope observe` with this directory/prefix)");
    in.counts = {p + "_counts.fits", "COUNTS"};
  }
  if (!in.exposure.given() && exists(p + "_exposure.fits")) in.exposure = {p + "_exposure.fits", "EXPOSURE"};
  if (!in.background.given() && std::isnan(in.background_level) && !in.background_annulus &&
      exists(p + "_background.fits"))
    in.background = {p + "_background.fits", "BACKGROUND"};
  if (!in.expected.given() && exists(p + "_model.fits")) in.expected = {p + "_model.fits", "MODEL"};
}

namespace {

std::string key_path(const Section& s, const std::string& key) {
  return s.where(key) + ": " + (s.path().empty() ? key : s.path() + "." + key);
}

// FILE, FILE[HDU], or a map {file, hdu}. Text forms are resolved against the
// YAML folder by the caller (resolve_relative); maps through path_value.
ImageRef read_image_ref(const Section& s, const std::string& key) {
  if (!s.has(key)) {
    s.accept(key);
    return {};
  }
  if (s.is_map(key)) {
    const Section c = s.child(key);
    ImageRef r;
    r.file = c.path_value("file");
    r.hdu = c.text("hdu", std::string(""));
    return r;
  }
  return parse_image_ref(s.text(key), key_path(s, key));
}

std::optional<ApertureText> read_ap(const Section& s, const std::string& key, bool pair, bool* off = nullptr) {
  if (!s.has(key)) {
    s.accept(key);
    return std::nullopt;
  }
  const std::string t = s.text(key);
  if (off && (lower(t) == "off" || lower(t) == "false" || lower(t) == "none")) {
    *off = true;
    return std::nullopt;
  }
  return parse_aperture(t, pair, key_path(s, key));
}

std::optional<std::vector<ApertureText>> read_ap_list(const Section& s, const std::string& key, bool pair) {
  if (!s.has(key)) {
    s.accept(key);
    return std::nullopt;
  }
  std::vector<ApertureText> out;
  const auto list = s.texts(key);
  for (std::size_t i = 0; i < list.size(); ++i)
    out.push_back(parse_aperture(list[i], pair, key_path(s, key) + "[" + std::to_string(i) + "]"));
  return out;
}

// Relative file names in text form ("file.fits[HDU]") resolve against the YAML folder.
void resolve_relative(ImageRef& r, const std::string& yaml_file) {
  if (r.file.empty()) return;
  std::filesystem::path p(r.file);
  if (p.is_relative()) {
    const auto folder = std::filesystem::path(yaml_file).parent_path();
    r.file = (folder.empty() ? p : (folder / p)).lexically_normal().string();
  }
}

}  // namespace

MeasureRunSettings load_measure_run(const std::string& path, bool resolve_observation_products) {
  auto file = SettingsFile::load(path);
  const Section r = file.root();
  MeasureRunSettings m;
  m.source_file = path;
  {
    const Section in = r.child("inputs");
    auto& i = m.inputs;
    i.observation = in.has("observation") ? in.path_value("observation") : (in.accept("observation"), std::string());
    for (auto [key, ref] : {std::pair<const char*, ImageRef*>{"counts", &i.counts},
                            {"exposure", &i.exposure},
                            {"background", &i.background},
                            {"mask", &i.mask},
                            {"expected", &i.expected}}) {
      const bool textual = in.has(key) && !in.is_map(key);
      *ref = read_image_ref(in, key);
      if (textual) resolve_relative(*ref, path);
    }
    if (in.has("background_level_counts_per_pixel"))
      i.background_level = in.number("background_level_counts_per_pixel", std::nullopt, Range::non_negative());
    else
      in.accept("background_level_counts_per_pixel");
    i.background_annulus = read_ap(in, "background_annulus", true);
    for (const auto& c : in.children("mask_circles", true)) {
      SkyCircle sc;
      sc.ra_deg = c.number("ra_deg", std::nullopt, Range{0.0, 360.0, false, true});
      sc.dec_deg = c.number("dec_deg", std::nullopt, Range::closed(-90.0, 90.0));
      sc.radius_arcsec = c.number("radius_arcsec", std::nullopt, Range::positive());
      i.mask_circles.push_back(sc);
    }
    if (in.has("mask_circles_csv")) {
      if (in.is_sequence("mask_circles_csv")) {
        for (auto p : in.texts("mask_circles_csv")) {
          ImageRef tmp{p, ""};
          resolve_relative(tmp, path);
          i.mask_circle_files.push_back(tmp.file);
        }
      } else {
        i.mask_circle_files.push_back(in.path_value("mask_circles_csv"));
      }
    } else {
      in.accept("mask_circles_csv");
    }
    i.check_units = in.flag("check_units", true);
    i.exposure_reference = in.number("exposure_reference", 0.0, Range::non_negative());
    i.min_relative_exposure = in.number("min_relative_exposure", 0.0, Range::closed(0.0, 1.0));
    if (in.has("band_keV")) i.band_keV = in.numbers("band_keV", std::nullopt, Range::positive(), 2, 2);
    else in.accept("band_keV");
    if (!i.observation.empty() && resolve_observation_products) resolve_observation(i);
    if (!i.counts.given() && (resolve_observation_products || i.observation.empty()))
      in.fail("counts", "missing required key (the counts image, FILE or FILE[HDU]; or inputs.observation)");
  }
  if (const auto t = r.maybe_child("target")) {
    auto& g = m.target;
    g.name = t->text("name", std::string(""));
    g.redshift = t->number("redshift", 0.0, Range{0.0, 20.0, false, false});
    g.header_redshift = t->flag("header_redshift", true);
    g.r500_kpc = t->number("r500_kpc", 0.0, Range::non_negative());
    g.m500_msun = t->number("m500_msun", 0.0, Range::non_negative());
    if (t->has("centre") && t->is_map("centre")) {
      const Section c = t->child("centre");
      g.find_centre = false;
      g.centre_ra_deg = c.number("ra_deg", std::nullopt, Range{0.0, 360.0, false, true});
      g.centre_dec_deg = c.number("dec_deg", std::nullopt, Range::closed(-90.0, 90.0));
      g.search_radius = read_ap(c, "search_radius", false);
      if (g.search_radius) g.find_centre = true;
    } else {
      t->choice("centre", {"find"}, std::string("find"));
      g.find_centre = true;
    }
  }
  m.cosmology = read_cosmology(r.maybe_child("cosmology"));
  if (const auto a = r.maybe_child("apertures")) {
    auto& p = m.apertures;
    p.concentration = read_ap_list(*a, "concentration", true);
    p.centroid_shift = read_ap_list(*a, "centroid_shift", false);
    p.power_ratios = read_ap_list(*a, "power_ratios", false);
    p.asymmetry = read_ap(*a, "asymmetry", false, &p.asymmetry_off);
    p.gini_m20 = read_ap(*a, "gini_m20", false, &p.gini_m20_off);
    p.smoothness = read_ap(*a, "smoothness", false, &p.smoothness_off);
    p.ellipticity = read_ap(*a, "ellipticity", false, &p.ellipticity_off);
    p.centroid = read_ap(*a, "centroid", false);
    p.photon_asymmetry = a->flag("photon_asymmetry", true);
    p.w_apertures = static_cast<int>(a->integer("w_apertures", 20, Range::closed(3, 1000)));
    p.w_min_fraction = a->number("w_min_fraction", 0.05, Range{0.0, 1.0, true, true});
    p.w_core_exclusion = read_ap(*a, "w_core_exclusion", false);
    p.ln_unit = a->choice("ln_unit", {"auto", "kpc", "mpc", "arcsec", "pixel"}, std::string("auto"));
    p.peak_smoothing = read_ap(*a, "peak_smoothing", false);
    p.asymmetry_normalisation = a->choice("asymmetry_normalisation", {"sum_abs", "twice_sum_abs"}, std::string("sum_abs"));
    p.asymmetry_background = a->choice("asymmetry_background", {"model", "none"}, std::string("model"));
  }
  if (const auto st = r.maybe_child("realisations")) {
    auto& q = m.statistics;
    q.realisations = static_cast<int>(st->integer("number", 100, Range::closed(0, 100000)));
    q.seed = static_cast<std::uint64_t>(st->integer("seed", 1, Range::closed(0, 9.0e15)));
    q.source = st->choice("source", {"observed", "expected"}, std::string("observed"));
    q.w_bias = st->choice("w_bias", {"quadrature", "linear", "none"}, std::string("quadrature"));
    q.threads = static_cast<int>(st->integer("threads", 0, Range::closed(0, 4096)));
  }
  if (const auto c = r.maybe_child("classification")) {
    auto& q = m.statistics;
    if (c->has("presets")) {
      q.presets = c->texts("presets");
      for (std::size_t k = 0; k < q.presets.size(); ++k) {
        const auto& names = morphology::preset_names();
        if (std::find(names.begin(), names.end(), q.presets[k]) == names.end()) {
          std::string all;
          for (const auto& n : names) all += (all.empty() ? "" : ", ") + n;
          const std::string near = nearest(q.presets[k], names);
          c->fail("presets", "'" + q.presets[k] + "' is not a preset (expected one of: " + all + ")" +
                                 (near.empty() ? "" : "; did you mean '" + near + "'?"));
        }
      }
    } else {
      c->accept("presets");
    }
  }
  if (const auto f = r.maybe_child("flags")) {
    auto& q = m.statistics;
    q.low_counts_net = f->number("low_counts_net", 1000.0, Range::non_negative());
    q.large_mask_fraction = f->number("large_mask_fraction", 0.1, Range::closed(0.0, 1.0));
    q.min_pixel_sn = f->number("min_pixel_sn", 3.0, Range::non_negative());
  }
  if (const auto o = r.maybe_child("output")) {
    auto& q = m.output;
    q.json = o->has("json") ? o->path_value("json") : (o->accept("json"), std::string());
    q.csv = o->has("csv") ? o->path_value("csv") : (o->accept("csv"), std::string());
    q.quicklook = o->has("quicklook") ? o->path_value("quicklook") : (o->accept("quicklook"), std::string());
    q.stretch = o->choice("stretch", {"asinh", "log", "linear"}, std::string("asinh"));
    q.table = o->flag("table", true);
  }
  file.finish();
  m.resolved_yaml = file.resolved_yaml();
  m.config_hash = file.resolved_hash();
  if (resolve_observation_products || m.inputs.observation.empty()) check_measure_run(m);  // else: the caller's
  return m;
}

void check_measure_run(const MeasureRunSettings& s) {
  const auto& i = s.inputs;
  if (!i.counts.given()) throw core::ConfigError("inputs.counts: the counts image is required (--counts FILE[HDU])");
  int nbkg = (i.background.given() ? 1 : 0) + (std::isnan(i.background_level) ? 0 : 1) + (i.background_annulus ? 1 : 0);
  if (nbkg > 1)
    throw core::ConfigError(
        "inputs.background: give one of background (image), background_level_counts_per_pixel, background_annulus");
  if (!std::isnan(i.background_level) && !(i.background_level >= 0.0))
    throw core::ConfigError("inputs.background_level_counts_per_pixel: expected >= 0");
  if (i.band_keV && !((*i.band_keV)[1] > (*i.band_keV)[0]))
    throw core::ConfigError("inputs.band_keV: expected [E_MIN, E_MAX] with E_MAX > E_MIN");
  const auto& t = s.target;
  if (!(t.redshift >= 0.0)) throw core::ConfigError("target.redshift: expected >= 0");
  if (t.r500_kpc < 0.0 || t.m500_msun < 0.0) throw core::ConfigError("target.r500_kpc / m500_msun: expected >= 0");
  if (t.r500_kpc > 0.0 && t.m500_msun > 0.0)
    throw core::ConfigError("target: give r500_kpc or m500_msun, not both");
  const bool has_ra = std::isfinite(t.centre_ra_deg), has_dec = std::isfinite(t.centre_dec_deg);
  if (has_ra != has_dec) throw core::ConfigError("target.centre: give both ra_deg and dec_deg");
  if (has_dec && std::fabs(t.centre_dec_deg) > 90.0)
    throw core::ConfigError("target.centre.dec_deg: expected in [-90, 90], got " + fmt(t.centre_dec_deg));
  if (has_ra && !(t.centre_ra_deg >= 0.0 && t.centre_ra_deg < 360.0))
    throw core::ConfigError("target.centre.ra_deg: expected in [0, 360), got " + fmt(t.centre_ra_deg));
  if (!t.find_centre && !has_ra) throw core::ConfigError("target.centre: a given centre needs ra_deg and dec_deg");
  if (t.search_radius && !has_ra)
    throw core::ConfigError("target.centre.search_radius: needs the guess ra_deg and dec_deg");
  const auto& q = s.statistics;
  if (q.realisations < 0) throw core::ConfigError("realisations.number: expected >= 0");
  if (q.source != "observed" && q.source != "expected")
    throw core::ConfigError("realisations.source: expected observed or expected, got '" + q.source + "'");
  if (q.source == "expected" && !i.expected.given())
    throw core::ConfigError("realisations.source: expected needs the mock's expected image (inputs.expected, --expected)");
  if (q.source == "expected" && q.realisations == 0)
    throw core::ConfigError("realisations.source: expected needs realisations.number > 0");
  if (q.w_bias != "quadrature" && q.w_bias != "linear" && q.w_bias != "none")
    throw core::ConfigError("realisations.w_bias: expected quadrature, linear or none, got '" + q.w_bias + "'");
  for (const auto& p : q.presets) (void)morphology::classification_preset(p);  // throws naming the valid ones
  const auto& a = s.apertures;
  if (a.w_apertures < 3) throw core::ConfigError("apertures.w_apertures: expected >= 3");
  if (!(a.w_min_fraction > 0.0 && a.w_min_fraction < 1.0))
    throw core::ConfigError("apertures.w_min_fraction: expected in (0, 1)");
  const auto& o = s.output;
  if (!o.json.empty() && o.json == o.csv) throw core::ConfigError("output: json and csv name the same file");
}

const char* measure_example_yaml() {
  return R"(# icmscope measure: morphology indicators of one counts image (simulated or real).
# The images named here are the products of
#   icmscope observe config/examples/observe_cool_core_vasta.yaml
# Units are in the key names; apertures carry their unit in the value. Relative paths resolve against this
# file's folder. Every key except inputs.counts is optional.

inputs:
  counts: out/Maren-7_Vasta-LA_counts.fits[COUNTS]  # FITS image of counts per pixel: FILE, FILE[EXTNAME] or FILE[HDU number]
  exposure: out/Maren-7_Vasta-LA_exposure.fits[EXPOSURE]  # exposure map on the same grid [s or cm**2 s]; zero = chip gap
  # background: out/Maren-7_Vasta-LA_background.fits[BACKGROUND]  # expected background counts per pixel (same grid) ...
  # background_level_counts_per_pixel: 0.01 # ... or a flat level [count/pixel at full exposure] ...
  background_annulus: "720/820 arcsec"  # ... or the mean level in an annulus about the centre
  # mask: mask.fits                 # > 0.5 = good, else masked (same grid)
  mask_circles:                     # point sources etc. in sky coordinates (masked, then refilled)
    - {ra_deg: 148.650, dec_deg: 21.350, radius_arcsec: 15}
  # mask_circles_csv: sources.csv   # a CSV with columns ra_deg, dec_deg, radius_arcsec
  # observation: out/Maren-7_Vasta-LA  # instead of the lines above: the products of `icmscope observe` with this
  #                                 # directory/prefix (PREFIX_counts.fits, _exposure, _background, _model)
  # expected: out/Maren-7_Vasta-LA_model.fits[MODEL]  # mocks: noise-free expected counts (realisations.source: expected)
  check_units: true                 # BUNIT must be counts (counts, background, expected) and s / cm**2 s (exposure)
  exposure_reference: 0             # relative exposure = map / this [map unit]; 0 = the map's maximum
  min_relative_exposure: 0.0        # pixels with relative exposure <= this are gaps
  # band_keV: [0.5, 2.0]            # default: the header's E_MIN / E_MAX (recorded either way)

target:
  name: Maren-7                     # default: the OBJECT keyword, else the file name
  redshift: 0.08                    # default: the header's REDSHIFT; without any, apertures in arcsec or px only
  header_redshift: true             # false: ignore the REDSHIFT keyword
  m500_msun: 5.5e14                 # R500 from M500 and the cosmology ... (or r500_kpc: 1200)
  centre: find                      # find (peak of the smoothed image) | {ra_deg: .., dec_deg: ..}
  # centre: {ra_deg: 148.62, dec_deg: 21.37, search_radius: "50 kpc"}  # guess + search for the peak

cosmology:
  H0_km_s_Mpc: 70.0
  Omega_m: 0.3
  Omega_lambda: 0.7

apertures:                          # defaults: the published conventions (README, Morphology)
  concentration: ["40/400 kpc", "100/500 kpc", "0.1/1 R500"]
  centroid_shift: ["500 kpc", "R500"]   # R_max of each w
  w_apertures: 20                   # apertures from R_max down to w_min_fraction R_max
  w_min_fraction: 0.05
  w_core_exclusion: "30 kpc"
  power_ratios: ["500 kpc", "R500"]
  ln_unit: auto                     # unit of R inside ln R of P0: auto (kpc) | kpc | mpc | arcsec | pixel
  asymmetry: R500                   # or off
  asymmetry_normalisation: sum_abs  # sum_abs (Conselice et al. 2000) | twice_sum_abs
  asymmetry_background: model       # model | none
  photon_asymmetry: true            # needs R500
  gini_m20: R500
  smoothness: R500
  ellipticity: R500
  centroid: R500                    # aperture of the reported centroid
  peak_smoothing: "10 kpc"          # Gaussian sigma of the peak search

realisations:
  number: 100                       # re-Poissonised realisations (bias, percentiles, class probabilities)
  seed: 1
  source: observed                  # observed (the data) | expected (the mock's expected image)
  w_bias: quadrature                # quadrature | linear (Weissmann et al. 2013) | none
  threads: 0                        # 0 = OMP_NUM_THREADS or all cores

classification:
  presets: [cassano2010, w_two_class, w_three_class, p3_two_class, p3_three_class, santos2008]

flags:
  low_counts_net: 1000              # flag fewer net counts in the largest aperture
  large_mask_fraction: 0.1          # flag a larger masked fraction of the largest aperture
  min_pixel_sn: 3                   # flag a lower mean S/N per pixel for Gini / M20

output:
  json: out/Maren-7_measure.json         # machine-readable, every number at full precision
  csv: out/Maren-7_measure.csv
  quicklook: out/Maren-7_measure.png     # the image with the centre and the apertures
  stretch: asinh                    # asinh | log | linear
  table: true                       # the readable table on stdout
)";
}

}  // namespace icmscope::config
