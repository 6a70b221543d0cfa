#include "icmscope/pipeline/measure_run.hpp"

#include <algorithm>
#include <array>
#include <chrono>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <limits>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/cosmo/cosmology.hpp"
#include "icmscope/io/fits_hdus.hpp"
#include "icmscope/io/quicklook.hpp"
#include "icmscope/morphology/filters.hpp"
#include "icmscope/pipeline/measure_report.hpp"
#include "icmscope/pipeline/physical_maps.hpp"
#include "icmscope/pipeline/project_run.hpp"

namespace icmscope::pipeline {

namespace fs = std::filesystem;
using config::ApertureText;
using config::ApertureUnit;

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

std::string fmt(double v, const char* f = "%.6g") {
  char b[64];
  std::snprintf(b, sizeof b, f, v);
  return b;
}

bool all_digits(const std::string& s) {
  return !s.empty() && std::all_of(s.begin(), s.end(), [](char c) { return std::isdigit(static_cast<unsigned char>(c)); });
}

// ---- reading -------------------------------------------------------------

MeasureImage read_image(const config::ImageRef& ref, const std::string& field, const std::vector<std::string>& auto_names) {
  MeasureImage m;
  m.field = field;
  try {
    if (!ref.hdu.empty()) {
      m.fits = all_digits(ref.hdu) ? io::read_fits_image(ref.file, std::stoi(ref.hdu)) : io::read_fits_image(ref.file, ref.hdu);
    } else {
      int idx = -1;
      if (!auto_names.empty()) {
        const auto hdus = io::list_fits_hdus(ref.file);
        for (const auto& n : auto_names)
          if ((idx = io::find_hdu(hdus, n)) >= 0) break;
      }
      m.fits = io::read_fits_image(ref.file, idx);
    }
  } catch (const core::InputError& e) {
    throw core::InputError(std::string(e.what()) + " (" + field + ")");
  }
  m.name = ref.file + "[" + (m.fits.extname.empty() ? std::to_string(m.fits.hdu_index) : m.fits.extname) + "]";
  if (m.fits.image.empty())
    throw core::InputError(m.name + ": the image has no pixels (" + field + ")");
  return m;
}

std::string norm_unit(std::string u) {
  std::string o;
  for (char c : u)
    if (!std::isspace(static_cast<unsigned char>(c)) && c != '*' && c != '^' && c != '.' && c != '(' && c != ')')
      o += static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return o;
}

void check_counts_unit(const MeasureImage& m) {
  const std::string u = norm_unit(m.fits.image.unit());
  static const std::vector<std::string> ok = {"", "count", "counts", "ct", "cts", "photon", "photons", "event", "events"};
  if (std::find(ok.begin(), ok.end(), u) == ok.end())
    throw core::InputError(m.name + ": BUNIT '" + m.fits.image.unit() + "' is not a counts unit (" + m.field +
                           " expects count per pixel; inputs.check_units: false or --no-unit-check skips the check)");
}

void check_exposure_unit(const MeasureImage& m) {
  const std::string u = norm_unit(m.fits.image.unit());
  static const std::vector<std::string> ok = {"", "s", "sec", "second", "seconds", "cm2s", "scm2", "ks"};
  if (std::find(ok.begin(), ok.end(), u) == ok.end())
    throw core::InputError(m.name + ": BUNIT '" + m.fits.image.unit() + "' is not an exposure unit (" + m.field +
                           " expects s or cm**2 s; inputs.check_units: false or --no-unit-check skips the check)");
}

// Same grid as the counts image: shape, and (both with a WCS) the same sky
// position of the corner pixels to 0.01 pixel.
void check_same_grid(const MeasureImage& c, const MeasureImage& o, std::vector<std::string>& notes) {
  const auto& a = c.fits.image;
  const auto& b = o.fits.image;
  if (!a.same_grid(b))
    throw core::InputError(o.name + ": " + std::to_string(b.nx()) + " x " + std::to_string(b.ny()) +
                           " pixels, the counts image " + c.name + " has " + std::to_string(a.nx()) + " x " +
                           std::to_string(a.ny()) + " (" + o.field + " must be on the counts grid)");
  if (!o.fits.wcs.valid()) {
    notes.push_back(o.name + ": no WCS; assumed on the counts grid (shape matches)");
    return;
  }
  const double xs[4] = {1.0, static_cast<double>(a.nx()), 1.0, static_cast<double>(a.nx())};
  const double ys[4] = {1.0, 1.0, static_cast<double>(a.ny()), static_cast<double>(a.ny())};
  for (int k = 0; k < 4; ++k) {
    const io::SkyPosition sp = o.fits.wcs.pixel_to_sky(xs[k], ys[k]);
    const io::PixelPosition pp = c.fits.wcs.sky_to_pixel(sp.ra_deg, sp.dec_deg);
    const double d = std::hypot(pp.x - xs[k], pp.y - ys[k]);
    if (!(d < 0.01))
      throw core::InputError(o.name + ": its WCS differs from the counts image " + c.name + " by " + fmt(d, "%.3g") +
                             " pixels at pixel (" + fmt(xs[k]) + ", " + fmt(ys[k]) + ") (" + o.field +
                             " must be on the counts grid)");
  }
}

std::string keyword(const MeasureImages& im, const std::string& key) {
  const std::string v = im.counts.fits.keyword(key);
  if (!v.empty()) return v;
  return im.primary.has(key) ? im.primary.text(key) : std::string();
}

std::optional<double> keyword_number(const MeasureImages& im, const std::string& key, std::string* where) {
  std::string v = im.counts.fits.keyword(key);
  std::string src = im.counts.name;
  if (v.empty() && im.primary.has(key)) {
    v = im.primary.text(key);
    src = im.primary.file + "[0]";
  }
  if (v.empty()) return std::nullopt;
  for (char& ch : v)
    if (ch == 'D' || ch == 'd') ch = 'E';
  char* end = nullptr;
  const double d = std::strtod(v.c_str(), &end);
  if (end == v.c_str() || !std::isfinite(d)) return std::nullopt;
  if (where) *where = src;
  return d;
}

// ---- apertures -----------------------------------------------------------

struct Scale {
  double kpc_per_px = 0.0;  // 0 = unknown
  double r500_kpc = 0.0;    // 0 = unknown
  double arcsec_per_px = 0.0;
};

double to_px(double v, const ApertureText& a, const Scale& sc) {
  switch (a.unit) {
    case ApertureUnit::kpc:
      if (!(sc.kpc_per_px > 0.0))
        throw core::ConfigError(a.where + ": '" + a.text +
                                "' is in kpc and needs the redshift (target.redshift, --redshift, or a REDSHIFT keyword)");
      return v / sc.kpc_per_px;
    case ApertureUnit::r500:
      if (!(sc.r500_kpc > 0.0))
        throw core::ConfigError(a.where + ": '" + a.text +
                                "' is in units of R500 and needs R500 (target.r500_kpc / m500_msun, --r500-kpc / --m500-msun)");
      if (!(sc.kpc_per_px > 0.0))
        throw core::ConfigError(a.where + ": '" + a.text + "' is in units of R500 and needs the redshift (target.redshift)");
      return v * sc.r500_kpc / sc.kpc_per_px;
    case ApertureUnit::arcsec: return v / sc.arcsec_per_px;
    case ApertureUnit::pixel: return v;
  }
  return v;
}

double outer_px(const ApertureText& a, const Scale& sc) {
  const double r = to_px(a.outer, a, sc);
  if (!(r > 0.0)) throw core::ConfigError(a.where + ": '" + a.text + "': the radius must be > 0");
  return r;
}

ApertureText def(const std::string& text, bool pair, const std::string& key) {
  return config::parse_aperture(text, pair, key + " (default)");
}

morphology::ConcentrationConvention convention_of(const std::string& label) {
  using C = morphology::ConcentrationConvention;
  if (label == "40/400 kpc") return C::santos2008_40_400kpc;
  if (label == "100/500 kpc") return C::cassano2010_100_500kpc;
  if (label == "0.1/1 R500") return C::scaled_0p1_1_r500;
  return C::custom;
}

morphology::LengthUnit ln_unit_of(const std::string& u, bool has_kpc) {
  if (u == "kpc" || (u == "auto" && has_kpc)) return morphology::LengthUnit::kpc;
  if (u == "mpc") return morphology::LengthUnit::mpc;
  if (u == "pixel") return morphology::LengthUnit::pixel;
  return morphology::LengthUnit::arcsec;
}

// Builds the morphology settings (pixels) and the aperture records.
morphology::MeasureSettings build_settings(const config::MeasureRunSettings& s, const Scale& sc,
                                           std::vector<ApertureRecord>& recs, std::vector<std::string>& notes) {
  namespace m = morphology;
  const auto& a = s.apertures;
  const bool has_kpc = sc.kpc_per_px > 0.0;
  const bool has_r500 = has_kpc && sc.r500_kpc > 0.0;
  m::MeasureSettings ms;
  // Peak smoothing: 10 kpc (at least one pixel) [common practice], 2 px without a physical scale.
  if (a.peak_smoothing) {
    ms.peak.smooth_sigma_px = to_px(a.peak_smoothing->outer, *a.peak_smoothing, sc);
    recs.push_back({"peak smoothing", a.peak_smoothing->label(), kNaN, ms.peak.smooth_sigma_px, false, "Gaussian sigma"});
  } else if (has_kpc) {
    ms.peak.smooth_sigma_px = std::max(1.0, 10.0 / sc.kpc_per_px);
    recs.push_back({"peak smoothing", "10 kpc", kNaN, ms.peak.smooth_sigma_px, false, "Gaussian sigma (>= 1 px)"});
  } else {
    ms.peak.smooth_sigma_px = 2.0;
    recs.push_back({"peak smoothing", "2 px", kNaN, 2.0, false, "Gaussian sigma"});
  }
  const std::string off_note = " off: its published apertures are in kpc or R500; give the redshift (and R500) or "
                               "apertures in arcsec";
  // Concentration.
  std::vector<ApertureText> conc;
  if (a.concentration) conc = *a.concentration;
  else if (has_kpc) {
    conc = {def("40/400 kpc", true, "apertures.concentration"), def("100/500 kpc", true, "apertures.concentration")};
    if (has_r500) conc.push_back(def("0.1/1 R500", true, "apertures.concentration"));
  } else notes.push_back("concentration" + off_note);
  for (const auto& c : conc) {
    m::ConcentrationSettings cs;
    cs.r1_px = to_px(c.inner, c, sc);
    cs.r2_px = outer_px(c, sc);
    if (!(cs.r1_px > 0.0)) throw core::ConfigError(c.where + ": '" + c.text + "': the inner radius must be > 0");
    cs.label = c.label();
    cs.convention = convention_of(cs.label);
    cs.centre = m::CentreChoice::peak;
    ms.concentration.push_back(cs);
    recs.push_back({"c", cs.label, cs.r1_px, cs.r2_px, true, "F(<inner)/F(<outer) about the peak"});
  }
  // Core exclusion of the centroid shift: 30 kpc [M] (none without a physical scale).
  double core_px = 0.0;
  std::string core_label = "0 px";
  if (a.w_core_exclusion) {
    core_px = to_px(a.w_core_exclusion->outer, *a.w_core_exclusion, sc);
    core_label = a.w_core_exclusion->label();
  } else if (has_kpc) {
    core_px = 30.0 / sc.kpc_per_px;
    core_label = "30 kpc";
  }
  std::vector<ApertureText> ws;
  if (a.centroid_shift) ws = *a.centroid_shift;
  else if (has_kpc) {
    ws = {def("500 kpc", false, "apertures.centroid_shift")};
    if (has_r500) ws.push_back(def("R500", false, "apertures.centroid_shift"));
  } else notes.push_back("centroid shift" + off_note);
  for (const auto& w : ws) {
    m::CentroidShiftSettings cs;
    cs.r_max_px = outer_px(w, sc);
    cs.n_apertures = a.w_apertures;
    cs.min_fraction = a.w_min_fraction;
    cs.core_exclusion_px = core_px;
    cs.label = w.label();
    ms.centroid_shift.push_back(cs);
    recs.push_back({"w", cs.label, kNaN, cs.r_max_px, false,
                    std::to_string(cs.n_apertures) + " apertures from R_max down to " + fmt(cs.min_fraction) +
                        " R_max about the peak, core " + core_label + " (" + fmt(core_px) + " px) excluded"});
  }
  if (!ws.empty()) recs.push_back({"w core exclusion", core_label, kNaN, core_px, false, "excluded from every centroid"});
  // Power ratios.
  const m::LengthUnit lnu = ln_unit_of(a.ln_unit, has_kpc);
  if ((lnu == m::LengthUnit::kpc || lnu == m::LengthUnit::mpc) && !has_kpc)
    throw core::ConfigError("apertures.ln_unit: " + a.ln_unit + " needs the redshift (target.redshift)");
  std::vector<ApertureText> ps;
  if (a.power_ratios) ps = *a.power_ratios;
  else if (has_kpc) {
    ps = {def("500 kpc", false, "apertures.power_ratios")};
    if (has_r500) ps.push_back(def("R500", false, "apertures.power_ratios"));
  } else notes.push_back("power ratios" + off_note);
  for (const auto& p : ps) {
    m::PowerRatioSettings pr;
    pr.radius_px = outer_px(p, sc);
    pr.label = p.label();
    pr.origin = m::CentreChoice::centroid;
    pr.ln_unit = lnu;
    ms.power_ratios.push_back(pr);
    recs.push_back({"P_m", pr.label, kNaN, pr.radius_px, false,
                    std::string("about the iterated centroid, ln R in ") + m::to_string(lnu)});
  }
  // Single-aperture indicators: R500, else 500 kpc, else off.
  const auto single = [&](const std::optional<ApertureText>& given, bool off, const std::string& key,
                          const std::string& what) -> std::optional<ApertureText> {
    if (off) return std::nullopt;
    if (given) return given;
    if (has_r500) return def("R500", false, key);
    if (has_kpc) return def("500 kpc", false, key);
    notes.push_back(what + off_note);
    return std::nullopt;
  };
  if (const auto ap = single(a.asymmetry, a.asymmetry_off, "apertures.asymmetry", "asymmetry")) {
    ms.asymmetry.radius_px = outer_px(*ap, sc);
    ms.asymmetry.label = ap->label();
    ms.asymmetry.normalisation = a.asymmetry_normalisation == "twice_sum_abs" ? m::AsymmetryNormalisation::twice_sum_abs
                                                                             : m::AsymmetryNormalisation::sum_abs;
    ms.asymmetry.background = a.asymmetry_background == "none" ? m::AsymmetryBackground::none : m::AsymmetryBackground::model;
    recs.push_back({"A", ms.asymmetry.label, kNaN, ms.asymmetry.radius_px, false,
                    "180-degree rotation about the minimising centre"});
  }
  if (a.photon_asymmetry && has_r500) {
    ms.photon_asymmetry.r500_px = sc.r500_kpc / sc.kpc_per_px;
    const auto& e = ms.photon_asymmetry.edges_r500;
    recs.push_back({"A_phot", "R500", e.front() * ms.photon_asymmetry.r500_px, e.back() * ms.photon_asymmetry.r500_px,
                    true, "annuli 0.05-0.12-0.2-0.3-1 R500 about the centroid"});
  } else if (a.photon_asymmetry) {
    notes.push_back("photon asymmetry off: its annuli are in units of R500; give R500 or M500 and the redshift");
  }
  if (const auto ap = single(a.gini_m20, a.gini_m20_off, "apertures.gini_m20", "Gini/M20")) {
    ms.gini_m20.radius_px = outer_px(*ap, sc);
    ms.gini_m20.label = ap->label();
    recs.push_back({"gini/M20", ms.gini_m20.label, kNaN, ms.gini_m20.radius_px, false, "about the aperture centroid"});
  }
  if (const auto ap = single(a.smoothness, a.smoothness_off, "apertures.smoothness", "smoothness")) {
    ms.smoothness.radius_px = outer_px(*ap, sc);
    ms.smoothness.label = ap->label();
    recs.push_back({"S", ms.smoothness.label, kNaN, ms.smoothness.radius_px, false, "about the aperture centroid"});
  }
  if (const auto ap = single(a.ellipticity, a.ellipticity_off, "apertures.ellipticity", "ellipticity")) {
    ms.ellipticity.radius_px = outer_px(*ap, sc);
    ms.ellipticity.label = ap->label();
    recs.push_back({"ellipticity", ms.ellipticity.label, kNaN, ms.ellipticity.radius_px, false,
                    "second moments about the aperture centroid"});
  }
  if (ms.concentration.empty() && ms.centroid_shift.empty() && ms.power_ratios.empty() && ms.asymmetry.radius_px <= 0.0 &&
      ms.photon_asymmetry.r500_px <= 0.0 && ms.gini_m20.radius_px <= 0.0 && ms.smoothness.radius_px <= 0.0 &&
      ms.ellipticity.radius_px <= 0.0)
    throw core::ConfigError(
        "apertures: no indicator to measure; without the redshift the published apertures (kpc, R500) are unknown: "
        "give target.redshift (--redshift) or apertures in arcsec (apertures.*)");
  if (a.centroid) {
    ms.centroid_radius_px = outer_px(*a.centroid, sc);
    recs.push_back({"centroid", a.centroid->label(), kNaN, ms.centroid_radius_px, false, "iterated centroid aperture"});
  } else if (has_r500 || has_kpc) {
    const ApertureText ap = def(has_r500 ? "R500" : "500 kpc", false, "apertures.centroid");
    ms.centroid_radius_px = outer_px(ap, sc);
    recs.push_back({"centroid", ap.label(), kNaN, ms.centroid_radius_px, false, "iterated centroid aperture"});
  }
  // Statistics and flags.
  const auto& q = s.statistics;
  ms.realisations = q.realisations;
  ms.seed = q.seed;
  ms.source = q.source == "expected" ? m::RealisationSource::expected : m::RealisationSource::observed;
  ms.w_bias = q.w_bias == "linear" ? m::BiasMode::linear : q.w_bias == "none" ? m::BiasMode::none : m::BiasMode::quadrature;
  ms.threads = q.threads;
  ms.r500_px = has_r500 ? sc.r500_kpc / sc.kpc_per_px : 0.0;
  ms.low_counts_net = q.low_counts_net;
  ms.large_mask_fraction = q.large_mask_fraction;
  ms.min_pixel_sn = q.min_pixel_sn;
  ms.presets = q.presets.empty() ? m::preset_names() : q.presets;
  return ms;
}

// Position angle east of north on the sky of a pixel-frame direction given as
// the library's north-up PA (theta = pa + 90 deg from +x towards +y), through
// the linear part M of the WCS at the reference pixel: (east, north) = M (cos, sin).
double sky_pa(double pa_pix, const std::array<double, 4>& M) {
  if (!std::isfinite(pa_pix)) return pa_pix;
  const double th = (pa_pix + 90.0) * core::constants::kPi / 180.0;
  const double east = M[0] * std::cos(th) + M[1] * std::sin(th);
  const double north = M[2] * std::cos(th) + M[3] * std::sin(th);
  double pa = std::atan2(east, north) * 180.0 / core::constants::kPi;
  pa = std::fmod(pa, 180.0);
  if (pa < 0.0) pa += 180.0;
  return pa;
}

SkyPoint sky_point(const io::Wcs& w, double x0, double y0) {
  SkyPoint p;
  p.x = x0 + 1.0;
  p.y = y0 + 1.0;
  const io::SkyPosition sp = w.pixel_to_sky(p.x, p.y);
  p.ra_deg = sp.ra_deg;
  p.dec_deg = sp.dec_deg;
  return p;
}

}  // namespace

// ---- loading ---------------------------------------------------------------

MeasureImages load_measure_images(const config::MeasureRunSettings& s) {
  config::check_measure_run(s);
  const auto& in = s.inputs;
  MeasureImages im;
  std::vector<std::string> notes;
  im.counts = read_image(in.counts, "inputs.counts", {"COUNTS"});
  if (!im.counts.fits.wcs.valid())
    throw core::InputError(im.counts.name +
                           ": no celestial WCS (CTYPE1/CTYPE2 absent); measure needs the pixel scale and sky positions "
                           "(inputs.counts)");
  {
    const auto& w = im.counts.fits.wcs;
    const double sx = w.pixel_scale_x_arcsec(), sy = w.pixel_scale_y_arcsec();
    if (!(sx > 0.0) || !(sy > 0.0) || std::fabs(sx - sy) > 1e-3 * std::max(sx, sy))
      throw core::InputError(im.counts.name + ": pixels are not square (" + fmt(sx) + " x " + fmt(sy) +
                             " arcsec); resample the image first (inputs.counts)");
  }
  if (in.check_units) check_counts_unit(im.counts);
  im.primary = io::read_fits_header(in.counts.file, 0);
  if (in.exposure.given()) {
    im.exposure = read_image(in.exposure, "inputs.exposure", {"EXPOSURE"});
    check_same_grid(im.counts, *im.exposure, notes);
    if (in.check_units) check_exposure_unit(*im.exposure);
    double emax = 0.0;
    for (double e : im.exposure->fits.image.pixels())
      if (std::isfinite(e)) emax = std::max(emax, e);
    if (!(emax > 0.0))
      throw core::InputError(im.exposure->name + ": the exposure map has no positive value (inputs.exposure)");
  }
  if (in.background.given()) {
    im.background = read_image(in.background, "inputs.background", {"BACKGROUND"});
    check_same_grid(im.counts, *im.background, notes);
    if (in.check_units) check_counts_unit(*im.background);
  }
  if (in.mask.given()) {
    im.mask = read_image(in.mask, "inputs.mask", {"MASK"});
    check_same_grid(im.counts, *im.mask, notes);
  }
  if (in.expected.given()) {
    im.expected = read_image(in.expected, "inputs.expected", {"EXPECTED", "MODEL"});
    check_same_grid(im.counts, *im.expected, notes);
    if (in.check_units) check_counts_unit(*im.expected);
  }
  return im;
}

// ---- measuring -------------------------------------------------------------

MeasureReport measure_images(const MeasureImages& im, const config::MeasureRunSettings& s, Log& log,
                             const core::ImageD* counts_override) {
  const auto t0 = std::chrono::steady_clock::now();
  namespace m = morphology;
  MeasureReport r;
  const auto& cimg = im.counts.fits.image;
  const io::Wcs& wcs = im.counts.fits.wcs;
  const int NX = cimg.nx(), NY = cimg.ny();
  r.counts = im.counts.name;
  r.counts_bunit = cimg.unit();
  r.exposure = im.exposure ? im.exposure->name : "";
  r.background = im.background ? im.background->name : "";
  r.mask = im.mask ? im.mask->name : "";
  r.expected = im.expected ? im.expected->name : "";
  r.nx = NX;
  r.ny = NY;
  r.pixel_arcsec = wcs.pixel_scale_arcsec();
  r.config_hash = s.config_hash;
  r.configuration = s.resolved_yaml;
  // Target name.
  r.target = s.target.name;
  if (r.target.empty()) r.target = keyword(im, "OBJECT");
  if (r.target.empty()) r.target = fs::path(s.inputs.counts.file).stem().string();
  // Redshift, scale, R500.
  r.cosmology = s.cosmology;
  const cosmo::Cosmology cosmo = make_cosmology(s.cosmology);
  if (s.target.redshift > 0.0) {
    r.redshift = s.target.redshift;
    r.redshift_source = "target.redshift";
  } else if (s.target.header_redshift) {
    std::string where;
    const auto z = keyword_number(im, "REDSHIFT", &where);
    if (z && *z > 0.0) {
      r.redshift = *z;
      r.redshift_source = "header REDSHIFT of " + where;
      log.info("measure: redshift " + fmt(*z) + " from the REDSHIFT keyword of " + where);
    } else {
      r.redshift_source = "unknown";
    }
  } else {
    r.redshift_source = "unknown (header REDSHIFT ignored)";
  }
  if (r.redshift > 0.0) {
    r.kpc_per_arcsec = cosmo.kpc_per_arcsec(r.redshift);
    r.kpc_per_pixel = r.kpc_per_arcsec * r.pixel_arcsec;
  }
  if (s.target.r500_kpc > 0.0) {
    r.r500_kpc = s.target.r500_kpc;
    r.r500_source = "target.r500_kpc";
    if (r.redshift > 0.0) r.m500_msun = cosmo.m500_from_r500(r.r500_kpc, r.redshift);
  } else if (s.target.m500_msun > 0.0) {
    if (!(r.redshift > 0.0))
      throw core::ConfigError("target.m500_msun: R500 from M500 needs the redshift (target.redshift, --redshift)");
    r.m500_msun = s.target.m500_msun;
    r.r500_kpc = cosmo.r500_kpc_from_m500(r.m500_msun, r.redshift);
    r.r500_source = "M500 via the cosmology (500 rho_crit(z))";
  } else {
    r.r500_source = "unknown";
  }
  // Band.
  if (s.inputs.band_keV) {
    r.band_known = true;
    r.band_min_keV = (*s.inputs.band_keV)[0];
    r.band_max_keV = (*s.inputs.band_keV)[1];
    r.band_source = "inputs.band_keV";
  } else {
    std::string w1, w2;
    const auto e1 = keyword_number(im, "E_MIN", &w1), e2 = keyword_number(im, "E_MAX", &w2);
    if (e1 && e2) {
      r.band_known = true;
      r.band_min_keV = *e1;
      r.band_max_keV = *e2;
      r.band_source = "header E_MIN/E_MAX of " + w1;
    } else {
      r.band_source = "unknown (no E_MIN/E_MAX keywords)";
    }
  }
  // Settings in pixels.
  Scale sc;
  sc.kpc_per_px = r.kpc_per_pixel;
  sc.r500_kpc = r.r500_kpc;
  sc.arcsec_per_px = r.pixel_arcsec;
  m::MeasureSettings ms = build_settings(s, sc, r.apertures, r.notes);
  for (const auto& p : ms.presets) r.schemes.push_back(m::classification_preset(p));
  r.realisations = ms.realisations;
  r.seed = ms.seed;
  r.source = s.statistics.source;
  r.w_bias = m::to_string(ms.w_bias);

  // Input.
  m::MeasureInput in;
  in.counts = counts_override ? *counts_override : cimg;
  if (!in.counts.same_grid(cimg)) throw core::DomainError("measure_images: counts_override must be on the counts grid");
  in.counts.set_anchor(cimg.anchor());
  in.kpc_per_pixel = r.kpc_per_pixel;
  const std::size_t N = cimg.size();
  std::vector<double> erel(N, 1.0);
  if (im.exposure) {
    const auto& e = im.exposure->fits.image;
    double eref = s.inputs.exposure_reference;
    if (!(eref > 0.0)) {
      eref = 0.0;
      for (double v : e.pixels())
        if (std::isfinite(v)) eref = std::max(eref, v);
    }
    r.exposure_reference = eref;
    in.exposure = e;
    in.exposure_reference = eref;
    in.min_relative_exposure = s.inputs.min_relative_exposure;
    for (std::size_t i = 0; i < N; ++i) {
      const double v = e.pixels()[i] / eref;
      erel[i] = std::isfinite(v) ? v : 0.0;
      if (!(erel[i] > s.inputs.min_relative_exposure) || !(erel[i] > 0.0)) ++r.gap_pixels;
    }
  }
  // Mask: image and sky circles.
  std::vector<std::uint8_t> good(N, 1);
  bool any_mask = false;
  if (im.mask) {
    const auto mk = m::mask_from_image(im.mask->fits.image, 0.5);
    for (std::size_t i = 0; i < N; ++i) good[i] = mk[i];
    any_mask = true;
  }
  std::vector<config::SkyCircle> circles = s.inputs.mask_circles;
  for (const auto& f : s.inputs.mask_circle_files) {
    const auto more = config::read_sky_circles_csv(f);
    circles.insert(circles.end(), more.begin(), more.end());
  }
  r.mask_circles = static_cast<int>(circles.size());
  for (std::size_t k = 0; k < circles.size(); ++k) {
    const auto& c = circles[k];
    const io::PixelPosition p = wcs.sky_to_pixel(c.ra_deg, c.dec_deg);
    const double R = c.radius_arcsec / r.pixel_arcsec;
    const double cx = p.x - 1.0, cy = p.y - 1.0;
    if (!std::isfinite(cx) || !std::isfinite(cy) || cx + R < -0.5 || cy + R < -0.5 || cx - R > NX - 0.5 ||
        cy - R > NY - 0.5) {
      r.notes.push_back("mask circle " + std::to_string(k + 1) + " (RA " + fmt(c.ra_deg, "%.5f") + ", Dec " +
                        fmt(c.dec_deg, "%.5f") + ") lies outside the image");
      continue;
    }
    const int x0 = std::max(0, static_cast<int>(std::floor(cx - R))), x1 = std::min(NX - 1, static_cast<int>(std::ceil(cx + R)));
    const int y0 = std::max(0, static_cast<int>(std::floor(cy - R))), y1 = std::min(NY - 1, static_cast<int>(std::ceil(cy + R)));
    for (int iy = y0; iy <= y1; ++iy)
      for (int ix = x0; ix <= x1; ++ix)
        if ((ix - cx) * (ix - cx) + (iy - cy) * (iy - cy) <= R * R) good[cimg.index(ix, iy)] = 0;
    any_mask = true;
  }
  if (any_mask) {
    for (std::uint8_t g : good) r.masked_pixels += g ? 0 : 1;
    in.mask = good;
  }
  // Nothing to measure when every pixel is non-finite, masked or unexposed.
  std::size_t usable = 0;
  for (std::size_t i = 0; i < N; ++i)
    if (good[i] && erel[i] > 0.0 && erel[i] > s.inputs.min_relative_exposure && std::isfinite(in.counts.pixels()[i]))
      ++usable;
  if (usable == 0)
    throw core::InputError(r.counts + ": no usable pixel: every pixel is non-finite, masked or at zero exposure "
                                      "(expected finite counts >= 0 where exposed; inputs.counts)");
  // Centre.
  if (!s.target.find_centre || s.target.search_radius) {
    const io::PixelPosition p = wcs.sky_to_pixel(s.target.centre_ra_deg, s.target.centre_dec_deg);
    const double cx = p.x - 1.0, cy = p.y - 1.0;
    if (!std::isfinite(cx) || !std::isfinite(cy) || cx < -0.5 || cy < -0.5 || cx > NX - 0.5 || cy > NY - 0.5)
      throw core::InputError("target.centre (RA " + fmt(s.target.centre_ra_deg, "%.6f") + ", Dec " +
                             fmt(s.target.centre_dec_deg, "%.6f") + ") falls outside " + r.counts + " (" +
                             (std::isfinite(p.x) && std::isfinite(p.y)
                                  ? "pixel " + fmt(p.x, "%.2f") + ", " + fmt(p.y, "%.2f")
                                  : std::string("not on the image's side of the sky")) +
                             "; the image spans 0.5.." +
                             fmt(NX + 0.5) + " x 0.5.." + fmt(NY + 0.5) + ")");
    r.given_centre = SkyPoint{p.x, p.y, s.target.centre_ra_deg, s.target.centre_dec_deg};
    in.centre = {cx, cy};
    in.find_centre = s.target.find_centre;
    if (s.target.search_radius) {
      ms.peak.search_radius_px = outer_px(*s.target.search_radius, sc);
      r.apertures.push_back({"centre search", s.target.search_radius->label(), kNaN, ms.peak.search_radius_px, false,
                             "peak searched within this distance of the given position"});
      r.centre_mode = "found near the given guess";
    } else {
      r.centre_mode = "given";
    }
  } else {
    in.find_centre = true;
    r.centre_mode = "found";
  }
  // Background.
  if (im.background) {
    in.background = im.background->fits.image;
    r.background_mode = "image";
  } else if (!std::isnan(s.inputs.background_level) || s.inputs.background_annulus) {
    double level = s.inputs.background_level;
    r.background_mode = "level";
    if (s.inputs.background_annulus) {
      r.background_mode = "annulus";
      const auto& an = *s.inputs.background_annulus;
      const double ri = to_px(an.inner, an, sc), ro = outer_px(an, sc);
      // Centre of the annulus: the given centre, or the peak of the smoothed
      // exposure-corrected image (the same search the measurement makes).
      m::PixelPoint c = in.centre;
      if (in.find_centre) {
        core::ImageD flux(NX, NY, 0.0);
        for (std::size_t i = 0; i < N; ++i) {
          const double v = in.counts.pixels()[i];
          const bool ok = good[i] && erel[i] > s.inputs.min_relative_exposure && erel[i] > 0.0 && std::isfinite(v);
          flux.pixels()[i] = ok ? v / erel[i] : 0.0;
        }
        m::PeakSettings pk = ms.peak;
        const m::PeakResult p = m::find_peak(flux, pk, in.centre);
        if (!p.found) throw core::InputError(r.counts + ": no peak found for the background annulus (image empty?)");
        c = p.refined;
      }
      double sum_n = 0.0, sum_e = 0.0;
      std::size_t used = 0;
      const int x0 = std::max(0, static_cast<int>(std::floor(c.x - ro))), x1 = std::min(NX - 1, static_cast<int>(std::ceil(c.x + ro)));
      const int y0 = std::max(0, static_cast<int>(std::floor(c.y - ro))), y1 = std::min(NY - 1, static_cast<int>(std::ceil(c.y + ro)));
      for (int iy = y0; iy <= y1; ++iy)
        for (int ix = x0; ix <= x1; ++ix) {
          const double d2 = (ix - c.x) * (ix - c.x) + (iy - c.y) * (iy - c.y);
          if (d2 < ri * ri || d2 > ro * ro) continue;
          const std::size_t i = cimg.index(ix, iy);
          const double v = in.counts.pixels()[i];
          if (!good[i] || !(erel[i] > s.inputs.min_relative_exposure) || !(erel[i] > 0.0) || !std::isfinite(v)) continue;
          sum_n += v;
          sum_e += erel[i];
          ++used;
        }
      if (used < 10)
        throw core::InputError(an.where + ": the background annulus '" + an.text + "' (" + fmt(ri) + "-" + fmt(ro) +
                               " px) holds " + std::to_string(used) + " usable pixels of " + r.counts +
                               " (needs >= 10; is it outside the image?)");
      level = sum_n / sum_e;
      r.background_pixels = used;
      const double full = core::constants::kPi * (ro * ro - ri * ri);
      if (used < 0.5 * full)
        r.notes.push_back("background annulus: only " + fmt(100.0 * used / full, "%.0f") +
                          "% of its area is usable (image edge, masks, gaps)");
      r.apertures.push_back({"background annulus", an.label(), ri, ro, true, "mean counts / relative exposure"});
      log.info("measure: background " + fmt(level) + " count/pixel (full exposure) from " + std::to_string(used) +
               " pixels of the annulus " + an.label());
    }
    r.background_level = level;
    if (im.exposure) {
      core::ImageD b(NX, NY, 0.0);
      for (std::size_t i = 0; i < N; ++i) b.pixels()[i] = level * erel[i];
      in.background = std::move(b);
    } else {
      in.background_level = level;
    }
  } else {
    r.background_mode = "none";
    r.notes.push_back("no background given: indicators include any background (inputs.background*)");
  }
  if (im.expected) in.expected = im.expected->fits.image;

  // Measure.
  try {
    r.indicators = m::measure(in, ms);
  } catch (const core::InputError& e) {
    throw core::InputError(r.counts + ": " + e.what());
  } catch (const core::DomainError& e) {
    throw core::InputError(r.counts + ": " + e.what());
  }
  auto& ind = r.indicators;

  // Coordinates to FITS 1-based pixels; position angles to the sky.
  const std::array<double, 4> M = wcs.cd_matrix();
  for (auto& v : ind.values) {
    auto& e = v.value;
    if (v.name == "peak_x" || v.name == "peak_y" || v.name == "centroid_x" || v.name == "centroid_y") {
      for (double* p : {&e.raw, &e.reference, &e.mean, &e.corrected, &e.p16, &e.p84}) *p += 1.0;
      for (double& x : e.samples) x += 1.0;
      v.convention += (v.convention.empty() ? "" : "; ") + std::string("FITS 1-based pixel");
    } else if (v.name == "pa_deg") {
      std::vector<double> smp = e.samples;
      for (double& x : smp) x = sky_pa(x, M);
      const double ref = sky_pa(e.reference, M);
      e = m::summarise(sky_pa(e.raw, M), smp, m::BiasMode::none, ref, 180.0);
      v.convention = "deg east of north, via the WCS linear part at the reference pixel";
    }
  }
  ind.ellipticity.pa_deg = sky_pa(ind.ellipticity.pa_deg, M);
  // The library labels the centroid aperture in pixels; use the settings' label.
  for (const auto& a : r.apertures)
    if (a.indicator == "centroid") {
      const std::string px_label = fmt(ms.centroid_radius_px) + " px";
      for (auto& v : ind.values)
        if (v.aperture == px_label && (v.name.rfind("centroid_", 0) == 0 || v.name.rfind("peak_centroid", 0) == 0))
          v.aperture = a.label;
    }
  r.peak = sky_point(wcs, ind.peak.refined.x, ind.peak.refined.y);
  r.centroid = sky_point(wcs, ind.centroid.centre.x, ind.centroid.centre.y);
  r.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  return r;
}

// ---- outputs ---------------------------------------------------------------

void check_measure_outputs(const config::MeasureRunSettings& s) {
  const auto check = [](const std::string& p, const char* field) {
    if (p.empty()) return;
    const fs::path path(p);
    fs::path dir = path.parent_path();
    if (dir.empty()) dir = ".";
    std::error_code ec;
    if (!fs::is_directory(dir, ec))
      throw core::OutputError(p + ": directory '" + dir.string() + "' does not exist (" + field + ")");
    if (fs::is_directory(path, ec)) throw core::OutputError(p + ": is a directory (" + field + ")");
  };
  check(s.output.json, "output.json");
  check(s.output.csv, "output.csv");
  check(s.output.quicklook, "output.quicklook");
}

namespace {

void write_quicklook(const std::string& path, const MeasureReport& r, const MeasureImages& im,
                     const config::MeasureRunSettings& s) {
  const auto& c = im.counts.fits.image;
  core::ImageD img(c.nx(), c.ny(), 0.0);
  img.set_anchor(c.anchor());
  std::vector<double> e(c.size(), 1.0);
  if (im.exposure) {
    for (std::size_t i = 0; i < c.size(); ++i) e[i] = im.exposure->fits.image.pixels()[i] / r.exposure_reference;
  }
  for (std::size_t i = 0; i < c.size(); ++i) img.pixels()[i] = e[i] > 0.0 && std::isfinite(c.pixels()[i]) ? c.pixels()[i] / e[i] : 0.0;
  double sigma = 1.0;
  for (const auto& a : r.apertures)
    if (a.indicator == "peak smoothing") sigma = std::max(1.5, a.outer_px);  // display: at least 1.5 px
  std::vector<double> tmp;
  core::ImageD sm(c.nx(), c.ny(), 0.0);
  sm.set_anchor(c.anchor());
  morphology::gaussian_smooth_window(img.data(), c.nx(), c.ny(), sigma, 0, c.nx() - 1, 0, c.ny() - 1, sm.data(), tmp);
  for (std::size_t i = 0; i < c.size(); ++i)
    if (!(e[i] > 0.0)) sm.pixels()[i] = std::nan("");
  io::QuicklookOptions o;
  o.stretch = s.output.stretch == "log" ? io::Stretch::Log : s.output.stretch == "linear" ? io::Stretch::Linear : io::Stretch::Asinh;
  o.title = r.target + ": counts / relative exposure, smoothed (sigma " + fmt(sigma, "%.3g") + " px)";
  o.colorbar_label = "count/pixel";
  o.kpc_per_arcsec = r.kpc_per_arcsec;
  const double px = r.peak.x - 1.0, py = r.peak.y - 1.0;
  std::vector<std::pair<double, std::string>> radii;
  for (const auto& a : r.apertures) {
    if (a.indicator == "peak smoothing" || a.indicator == "w core exclusion" || a.indicator == "centre search") continue;
    std::string lab = a.label;
    if (a.pair && a.indicator == "c") {
      const auto slash = lab.find('/'), sp = lab.rfind(' ');
      radii.push_back({a.inner_px, lab.substr(0, slash) + lab.substr(sp)});
      std::string outer = lab.substr(slash + 1);
      if (outer == "1 R500") outer = "R500";
      radii.push_back({a.outer_px, outer});
      continue;
    }
    if (a.indicator == "background annulus") {
      radii.push_back({a.inner_px, "bkg"});
      radii.push_back({a.outer_px, "bkg"});
      continue;
    }
    if (a.pair) radii.push_back({a.inner_px, ""});
    radii.push_back({a.outer_px, lab});
  }
  std::sort(radii.begin(), radii.end());
  const double small = 0.04 * std::max(c.nx(), c.ny());  // unlabelled: labels of small circles would overlap
  for (std::size_t k = 0; k < radii.size(); ++k) {
    if (k > 0 && std::fabs(radii[k].first - radii[k - 1].first) < 0.5) continue;
    o.circles.push_back({px, py, radii[k].first, radii[k].first < small ? std::string() : radii[k].second});
  }
  o.markers.push_back({px, py, "peak", false, true});
  o.markers.push_back({r.centroid.x - 1.0, r.centroid.y - 1.0, "centroid", true, false});
  io::write_quicklook_png(path, sm, o);
}

}  // namespace

std::vector<std::string> write_measure_outputs(const MeasureReport& r, const MeasureImages& im,
                                               const config::MeasureRunSettings& s, Log& log) {
  std::vector<std::string> done;
  try {
    if (!s.output.json.empty()) {
      write_text_file(s.output.json, measure_json(r));
      done.push_back(s.output.json);
    }
    if (!s.output.csv.empty()) {
      write_text_file(s.output.csv, measure_csv(r));
      done.push_back(s.output.csv);
    }
    if (!s.output.quicklook.empty()) {
      write_quicklook(s.output.quicklook, r, im, s);
      done.push_back(s.output.quicklook);
    }
  } catch (...) {
    for (const auto& p : done) {
      std::error_code ec;
      fs::remove(p, ec);
    }
    throw;
  }
  for (const auto& p : done) log.info("measure: wrote " + p);
  return done;
}

MeasureRunResult run_measure(const config::MeasureRunSettings& s, Log& log) {
  check_measure_outputs(s);
  const MeasureImages im = load_measure_images(s);
  MeasureRunResult out;
  out.report = measure_images(im, s, log);
  out.written = write_measure_outputs(out.report, im, s, log);
  return out;
}

}  // namespace icmscope::pipeline
