#include "icmscope/pipeline/survey_target.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <map>
#include <set>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/core/text_hash.hpp"
#include "icmscope/core/version.hpp"
#include "icmscope/cosmo/cosmology.hpp"
#include "icmscope/morphology/input.hpp"
#include "icmscope/pipeline/measure_run.hpp"
#include "icmscope/pipeline/observe_run.hpp"
#include "icmscope/pipeline/physical_maps.hpp"
#include "icmscope/pipeline/project_run.hpp"

namespace icmscope::pipeline {

namespace fs = std::filesystem;

namespace {

using core::fnv1a;
using core::hex16;

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

std::string fmtg(double v, const char* f = "%.6g") {
  char b[64];
  std::snprintf(b, sizeof b, f, v);
  return b;
}

std::string full(double v) { return fmtg(v, "%.17g"); }

// Content hash of a file (size and modification time above 64 MB); "missing" when unreadable.
std::string file_hash(const std::string& path) {
  std::error_code ec;
  const auto size = fs::file_size(path, ec);
  if (ec) return "missing";
  if (size > (64u << 20)) {
    const auto t = fs::last_write_time(path, ec).time_since_epoch().count();
    return "size " + std::to_string(size) + " time " + std::to_string(static_cast<long long>(t));
  }
  std::ifstream in(path, std::ios::binary);
  if (!in) return "unreadable";
  std::uint64_t h = core::kFnvOffset;
  std::string buf(1 << 16, '\0');
  while (in) {
    in.read(buf.data(), static_cast<std::streamsize>(buf.size()));
    const std::streamsize n = in.gcount();
    h = fnv1a(buf.substr(0, static_cast<std::size_t>(n)), h);
  }
  return hex16(h) + " (" + std::to_string(size) + " bytes)";
}

bool starts_with(const std::string& s, const std::string& p) { return s.compare(0, p.size(), p) == 0; }

// Sanitised token for column names.
std::string token(const std::string& s) {
  std::string o;
  for (char c : s) {
    if (std::isalnum(static_cast<unsigned char>(c)) || c == '_') o += c;
    else if (c == '/') o += '_';
    else if (c == '.') o += 'p';
    else if (c == '-') o += 'm';
    else if (c == '+') o += "plus";
    else if (c == ' ') continue;
    else o += '_';
  }
  return o;
}

std::string label_token(const std::string& s) {
  std::string o;
  bool sep = false;
  for (char c : s) {
    if (std::isalnum(static_cast<unsigned char>(c))) {
      if (sep && !o.empty()) o += '_';
      o += static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
      sep = false;
    } else {
      sep = true;
    }
  }
  return o;
}

bool centre_value(const std::string& name) {
  return name == "peak_x" || name == "peak_y" || name == "centroid_x" || name == "centroid_y" ||
         starts_with(name, "peak_centroid_offset");
}

std::string indicator_unit(const std::string& name) {
  if (name == "peak_x" || name == "peak_y" || name == "centroid_x" || name == "centroid_y" ||
      name == "peak_centroid_offset")
    return "pixel";
  if (name == "peak_centroid_offset_kpc") return "kpc";
  if (name == "pa_deg") return "deg";
  return "";
}

// The viewing direction of an axis line of sight as spherical angles.
void los_angles(const config::LineOfSight& l, double& theta, double& phi) {
  if (l.axis == "x") { theta = 90.0; phi = 0.0; }
  else if (l.axis == "y") { theta = 90.0; phi = 90.0; }
  else if (l.axis == "z") { theta = 0.0; phi = 0.0; }
  else { theta = l.theta_deg; phi = l.phi_deg; }
}

std::string keyword_of(const MeasureImages& im, const std::string& key) {
  const std::string v = im.counts.fits.keyword(key);
  if (!v.empty()) return v;
  return im.primary.has(key) ? im.primary.text(key) : std::string();
}

// Sums over the largest aperture about the peak (good, exposed pixels) and the
// unexposed fraction of its area (beyond the image or at/below the minimum
// relative exposure).
struct ApertureSums {
  double radius_px = 0.0;
  std::string label;
  double counts = 0.0, background = 0.0;
  double unexposed_fraction = kNaN;
};

ApertureSums aperture_sums(const MeasureReport& rep, const MeasureImages& im, const config::MeasureRunSettings& ms) {
  ApertureSums a;
  for (const auto& ap : rep.apertures) {
    if (ap.indicator == "peak smoothing" || ap.indicator == "w core exclusion" || ap.indicator == "centre search" ||
        ap.indicator == "background annulus")
      continue;
    if (ap.outer_px > a.radius_px) {
      a.radius_px = ap.outer_px;
      a.label = ap.indicator + " " + ap.label;
    }
  }
  const auto& c = im.counts.fits.image;
  const int NX = c.nx(), NY = c.ny();
  const std::size_t N = c.size();
  if (!(a.radius_px > 0.0) || !std::isfinite(rep.peak.x)) return a;
  std::vector<double> erel(N, 1.0);
  if (im.exposure) {
    const auto& e = im.exposure->fits.image;
    for (std::size_t i = 0; i < N; ++i) {
      const double v = e.pixels()[i] / rep.exposure_reference;
      erel[i] = std::isfinite(v) ? v : 0.0;
    }
  }
  // Mask: image and sky circles, as the measurement applies them.
  std::vector<std::uint8_t> good(N, 1);
  if (im.mask) good = morphology::mask_from_image(im.mask->fits.image, 0.5);
  std::vector<config::SkyCircle> circles = ms.inputs.mask_circles;
  for (const auto& f : ms.inputs.mask_circle_files) {
    const auto more = config::read_sky_circles_csv(f);
    circles.insert(circles.end(), more.begin(), more.end());
  }
  const io::Wcs& wcs = im.counts.fits.wcs;
  for (const auto& cc : circles) {
    const io::PixelPosition p = wcs.sky_to_pixel(cc.ra_deg, cc.dec_deg);
    const double R = cc.radius_arcsec / rep.pixel_arcsec, cx = p.x - 1.0, cy = p.y - 1.0;
    if (!std::isfinite(cx) || !std::isfinite(cy)) continue;
    const int x0 = std::max(0, static_cast<int>(std::floor(cx - R))), x1 = std::min(NX - 1, static_cast<int>(std::ceil(cx + R)));
    const int y0 = std::max(0, static_cast<int>(std::floor(cy - R))), y1 = std::min(NY - 1, static_cast<int>(std::ceil(cy + R)));
    for (int iy = y0; iy <= y1; ++iy)
      for (int ix = x0; ix <= x1; ++ix)
        if ((ix - cx) * (ix - cx) + (iy - cy) * (iy - cy) <= R * R) good[c.index(ix, iy)] = 0;
  }
  const double cx = rep.peak.x - 1.0, cy = rep.peak.y - 1.0, R = a.radius_px;
  const double minrel = ms.inputs.min_relative_exposure;
  std::size_t total = 0, unexposed = 0;
  for (int iy = static_cast<int>(std::floor(cy - R)); iy <= static_cast<int>(std::ceil(cy + R)); ++iy)
    for (int ix = static_cast<int>(std::floor(cx - R)); ix <= static_cast<int>(std::ceil(cx + R)); ++ix) {
      if ((ix - cx) * (ix - cx) + (iy - cy) * (iy - cy) > R * R) continue;
      ++total;
      if (ix < 0 || iy < 0 || ix >= NX || iy >= NY) {
        ++unexposed;
        continue;
      }
      const std::size_t i = c.index(ix, iy);
      if (!(erel[i] > minrel) || !(erel[i] > 0.0)) {
        ++unexposed;
        continue;
      }
      if (!good[i] || !std::isfinite(c.pixels()[i])) continue;
      a.counts += c.pixels()[i];
      if (im.background) a.background += im.background->fits.image.pixels()[i];
      else if (rep.background_mode == "level" || rep.background_mode == "annulus") a.background += rep.background_level * erel[i];
    }
  a.unexposed_fraction = total ? static_cast<double>(unexposed) / static_cast<double>(total) : kNaN;
  return a;
}

CatalogRow build_row(const SurveyTarget& t, const config::SurveyEntry& e, const MeasureReport& rep,
                     const MeasureImages& im, const config::MeasureRunSettings& ms, const ObserveResult* obs) {
  CatalogRow r;
  // Identifiers.
  r.integer("target_index", static_cast<long long>(t.index + 1));
  r.text("target_id", t.id);
  r.text("cluster", e.name);
  r.text("kind", e.simulated ? "simulated" : "observed");
  r.text("line_of_sight", e.simulated ? t.los.label : "");
  double th = kNaN, ph = kNaN;
  if (e.simulated) los_angles(t.los, th, ph);
  r.real("los_theta_deg", th, "deg");
  r.real("los_phi_deg", ph, "deg");
  std::string instrument = t.instrument_name;
  double exposure_ks = t.exposure_ks;
  if (!e.simulated) {
    instrument = keyword_of(im, "INSTRUME");
    const std::string ex = keyword_of(im, "EXPOSURE");
    char* end = nullptr;
    const double v = ex.empty() ? kNaN : std::strtod(ex.c_str(), &end);
    exposure_ks = (end && end != ex.c_str() && std::isfinite(v)) ? v / 1000.0 : kNaN;
  }
  r.text("instrument", instrument);
  r.real("exposure_ks", exposure_ks, "ks");
  r.integer("seed", static_cast<long long>(t.seed));
  r.integer("measure_seed", static_cast<long long>(t.measure_seed));
  // Inputs: given or estimated.
  // Products of a mock are named relative to the output folder (the catalog does not depend on where it is).
  auto product = [&](std::string p) {
    if (!e.simulated) return p;
    const std::string dir = t.directory + "/", rel = "targets/" + t.id + "/";
    for (std::size_t k = p.find(dir); k != std::string::npos; k = p.find(dir, k + rel.size())) p.replace(k, dir.size(), rel);
    return p;
  };
  r.text("counts_file", product(rep.counts));
  r.text("exposure_file", product(rep.exposure));
  r.text("background_file", product(rep.background));
  r.real("redshift", rep.redshift > 0 ? rep.redshift : kNaN);
  r.text("redshift_source", product(rep.redshift_source));
  r.real("r500_kpc", rep.r500_kpc > 0 ? rep.r500_kpc : kNaN, "kpc");
  r.real("m500_msun", rep.m500_msun > 0 ? rep.m500_msun : kNaN, "solMass");
  r.text("r500_source", product(rep.r500_source));
  double ra = kNaN, dec = kNaN;
  if (e.simulated) {
    ra = e.target.ra_deg;
    dec = e.target.dec_deg;
  } else if (rep.given_centre) {
    ra = rep.given_centre->ra_deg;
    dec = rep.given_centre->dec_deg;
  }
  r.real("ra_deg", ra, "deg");
  r.real("dec_deg", dec, "deg");
  r.text("centre_mode", rep.centre_mode);
  r.real("band_min_keV", rep.band_known ? rep.band_min_keV : kNaN, "keV");
  r.real("band_max_keV", rep.band_known ? rep.band_max_keV : kNaN, "keV");
  r.text("band_source", product(rep.band_source));
  r.text("background_mode", rep.background_mode);
  r.real("background_level", rep.background_mode == "level" || rep.background_mode == "annulus" ? rep.background_level : kNaN,
         "count/pixel");
  r.real("pixel_arcsec", rep.pixel_arcsec, "arcsec");
  r.real("kpc_per_pixel", rep.kpc_per_pixel > 0 ? rep.kpc_per_pixel : kNaN, "kpc");
  r.integer("nx", rep.nx, "pixel");
  r.integer("ny", rep.ny, "pixel");
  // Estimated centre.
  r.real("peak_ra_deg", rep.peak.ra_deg, "deg");
  r.real("peak_dec_deg", rep.peak.dec_deg, "deg");
  r.real("centroid_ra_deg", rep.centroid.ra_deg, "deg");
  r.real("centroid_dec_deg", rep.centroid.dec_deg, "deg");
  double off = kNaN;
  if (std::isfinite(ra) && std::isfinite(dec)) {
    const double d2r = core::constants::kPi / 180.0;
    const double a1 = ra * d2r, d1 = dec * d2r, a2 = rep.peak.ra_deg * d2r, d2 = rep.peak.dec_deg * d2r;
    const double h = std::sin((d2 - d1) / 2) * std::sin((d2 - d1) / 2) +
                     std::cos(d1) * std::cos(d2) * std::sin((a2 - a1) / 2) * std::sin((a2 - a1) / 2);
    off = 2.0 * std::asin(std::min(1.0, std::sqrt(h))) / d2r * 3600.0;
  }
  r.real("peak_offset_arcsec", off, "arcsec");
  // Counts.
  const ApertureSums a = aperture_sums(rep, im, ms);
  double total = 0.0;
  for (double v : im.counts.fits.image.pixels())
    if (std::isfinite(v)) total += v;
  r.real("counts_total", total, "count");
  r.text("aperture", a.label);
  r.real("aperture_radius_px", a.radius_px, "pixel");
  r.real("counts_aperture", a.counts, "count");
  r.real("background_aperture", a.background, "count");
  const double net = a.counts - a.background;
  r.real("net_counts", net, "count");
  r.real("snr", a.counts > 0 ? net / std::sqrt(a.counts) : kNaN);
  r.real("flux_sum_aperture", rep.indicators.net_counts, "count");
  r.real("masked_fraction", rep.indicators.masked_fraction);
  r.real("unexposed_fraction", a.unexposed_fraction);
  r.real("mean_pixel_sn", rep.indicators.mean_pixel_sn);
  r.integer("masked_pixels", static_cast<long long>(rep.masked_pixels), "pixel");
  r.integer("gap_pixels", static_cast<long long>(rep.gap_pixels), "pixel");
  // Truth of the mocks (realised and expected counts per component).
  static const char* comp[kNComp] = {"cluster", "points", "sky", "particle"};
  for (int k = 0; k < kNComp; ++k) {
    r.real(std::string("true_counts_") + comp[k], obs ? static_cast<double>(obs->counts[k]) : kNaN, "count");
    r.real(std::string("expected_counts_") + comp[k], obs ? obs->expected[k] : kNaN, "count");
  }
  // Indicators: corrected value, raw, 16th / 84th percentiles, significance.
  for (const auto& v : rep.indicators.values) {
    const std::string col = indicator_column(v.name, centre_value(v.name) ? "" : v.aperture);
    const std::string u = indicator_unit(v.name);
    r.real(col, v.value.corrected, u);
    r.real(col + "_raw", v.value.raw, u);
    r.real(col + "_p16", v.value.p16, u);
    r.real(col + "_p84", v.value.p84, u);
    r.real(col + "_signif", v.value.significance);
  }
  // Flags.
  const auto& f = rep.indicators.flags;
  const bool unexposed = std::isfinite(a.unexposed_fraction) && a.unexposed_fraction > ms.statistics.large_mask_fraction;
  const std::vector<std::pair<const char*, bool>> flags = {
      {"low_counts", f.low_counts},
      {"aperture_beyond_image", f.aperture_beyond_image},
      {"large_masked_fraction", f.large_masked_fraction},
      {"centre_near_edge", f.centre_near_edge},
      {"unfilled_pixels", f.unfilled_pixels},
      {"asymmetry_pairs_outside", f.asymmetry_pairs_outside},
      {"low_pixel_sn", f.low_pixel_sn},
      {"aperture_unexposed", unexposed}};
  std::string raised;
  for (const auto& [name, on] : flags) {
    r.integer(std::string("flag_") + name, on ? 1 : 0);
    if (on) raised += (raised.empty() ? "" : ";") + std::string(name);
  }
  r.text("flags", raised);
  std::string notes;
  for (const auto& n : f.notes) notes += (notes.empty() ? "" : " | ") + n;
  for (const auto& n : rep.notes) notes += (notes.empty() ? "" : " | ") + n;
  if (unexposed)
    notes += (notes.empty() ? "" : " | ") + std::string("unexposed fraction ") + fmtg(a.unexposed_fraction, "%.3g") +
             " of the largest aperture (" + a.label + ")";
  r.text("notes", product(notes));
  // Classes.
  for (const auto& c : rep.indicators.classes) {
    r.text("class_" + c.scheme, c.available ? c.label : "");
    for (std::size_t k = 0; k < c.classes.size(); ++k)
      r.real("p_" + c.scheme + "_" + label_token(c.classes[k]),
             c.available && k < c.probability.size() ? c.probability[k] : kNaN);
  }
  // Provenance.
  r.integer("realisations", rep.realisations);
  r.text("realisation_source", rep.source);
  r.text("w_bias", rep.w_bias);
  r.text("config_hash", t.config_hash);
  r.text("program_version", std::string(core::kProgram) + " " + core::kVersion);
  return r;
}

}  // namespace

std::string safe_name(const std::string& s) {
  std::string o;
  for (char c : s) o += (std::isalnum(static_cast<unsigned char>(c)) || c == '.' || c == '-' || c == '_') ? c : '-';
  if (o.empty() || o == "." || o == "..") o = "target";
  return o;
}

std::string indicator_column(const std::string& name, const std::string& aperture) {
  const std::string n = token(name), a = token(aperture);
  return a.empty() ? n : n + "_" + a;
}

// The files an instrument description refers to (resolved paths).
static std::vector<std::string> instrument_files(const config::InstrumentSettings& in) {
  std::vector<std::string> f;
  if (in.area.kind == "ogip" && !in.area.file.empty()) f.push_back(in.area.file);
  if (in.response.kind == "ogip" && !in.response.file.empty()) f.push_back(in.response.file);
  if (!in.detector.bad_pixel_file.empty()) f.push_back(in.detector.bad_pixel_file);
  if (in.psf.kind == "image" && !in.psf.image_file.empty()) f.push_back(in.psf.image_file);
  return f;
}

std::vector<SurveyTarget> plan_survey(const config::SurveySettings& s, const std::string& output_directory) {
  std::vector<SurveyTarget> out;
  std::map<std::string, std::string> hashes;
  auto fh = [&](const std::string& p) {
    auto it = hashes.find(p);
    if (it == hashes.end()) it = hashes.emplace(p, file_hash(p)).first;
    return it->second;
  };
  const std::string program = std::string(core::kProgram) + " " + core::kVersion;
  for (std::size_t ei = 0; ei < s.entries.size(); ++ei) {
    const auto& e = s.entries[ei];
    std::string common = "program=" + program + "\nsurvey.seed=" + std::to_string(s.seed) + "\n";
    for (const auto& r : s.resolved) {
      const bool def = starts_with(r.path, "defaults.");
      const bool shared = starts_with(r.path, "defaults.measure.") || starts_with(r.path, "defaults.cosmology.");
      const bool mine = !e.echo_prefix.empty() && starts_with(r.path, e.echo_prefix + ".");
      if ((def && (e.simulated || shared)) || mine) common += r.path + "=" + r.value + "\n";
    }
    common += e.csv_echo;
    if (!e.load_error.empty()) common += "entry.load_error=" + e.load_error + "\n";
    auto finish = [&](SurveyTarget t, std::string echo) {
      t.index = out.size();
      t.entry_index = ei;
      t.seed = config::derive_seed(s.seed, t.id);
      t.measure_seed = config::derive_seed(t.seed, "measure");
      t.directory = (fs::path(output_directory) / "targets" / t.id).string();
      echo += "target.id=" + t.id + "\ntarget.seed=" + std::to_string(t.seed) +
              "\ntarget.measure_seed=" + std::to_string(t.measure_seed) + "\n";
      t.echo = echo;
      t.config_hash = hex16(fnv1a(echo));
      out.push_back(std::move(t));
    };
    if (e.simulated) {
      std::string files = e.cells.model_file.empty() ? "file.cells=" + fh(e.cells.cells_file) + "\n"
                                                     : "file.model=" + e.model_hash + "\n";
      for (const auto& los : e.lines_of_sight)
        for (const auto& inst : e.observation.instruments)
          for (double exp : e.observation.exposures_ks) {
            SurveyTarget t;
            t.los = los;
            t.instrument_file = inst;
            const auto it = s.instruments.find(inst);
            t.instrument_name = it != s.instruments.end() ? it->second.name : fs::path(inst).stem().string();
            std::string ihash = it != s.instruments.end() ? it->second.config_hash
                                                          : "error " + s.instrument_errors.at(inst);
            // The files an instrument names (OGIP responses, PSF image, bad
            // pixels) are part of it: a changed response reruns the target.
            if (it != s.instruments.end())
              for (const auto& f : instrument_files(it->second)) ihash += " " + f + ":" + fh(f);
            t.exposure_ks = exp;
            t.id = safe_name(e.name) + "_" + safe_name(los.label) + "_" + safe_name(t.instrument_name) + "_" +
                   safe_name(fmtg(exp, "%.6g")) + "ks";
            double th = 0, ph = 0;
            los_angles(los, th, ph);
            std::string echo = common + files + "target.line_of_sight=" + los.label + " " + los.axis + " " + full(th) +
                               " " + full(ph) + "\ntarget.instrument=" + inst + "\nfile.instrument=" + ihash +
                               "\ntarget.exposure_ks=" + full(exp) + "\n";
            finish(std::move(t), std::move(echo));
          }
    } else {
      std::string files;
      const auto& i = e.inputs;
      for (const auto* ref : {&i.counts, &i.exposure, &i.background, &i.mask, &i.expected})
        if (ref->given()) files += "file." + ref->describe() + "=" + fh(ref->file) + "\n";
      for (const auto& f : i.mask_circle_files) files += "file." + f + "=" + fh(f) + "\n";
      SurveyTarget t;
      t.id = safe_name(e.name);
      finish(std::move(t), common + files);
    }
  }
  std::map<std::string, std::size_t> seen;
  for (const auto& t : out) {
    std::string k = t.id;
    for (char& c : k) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
    const auto [it, fresh] = seen.emplace(k, t.index);
    if (!fresh)
      throw core::ConfigError(s.source_file + ": targets " + std::to_string(it->second + 1) + " and " +
                              std::to_string(t.index + 1) + " get the same id '" + t.id +
                              "' (rename an entry, or give distinct instruments / exposures / lines of sight)");
  }
  return out;
}

CatalogRow run_survey_target(const SurveyTarget& t, const config::SurveySettings& s, Log& log) {
  const auto& e = s.entries.at(t.entry_index);
  if (!e.load_error.empty()) throw core::InputError(e.load_error);
  ensure_directory(t.directory);
  const std::string base = (fs::path(t.directory) / t.id).string();
  write_text_file(base + "_target.txt", t.echo);

  config::MeasureRunSettings ms;
  ObserveResult obs;
  const cosmo::Cosmology cosmo = make_cosmology(e.cosmology);
  if (e.simulated) {
    const auto err = s.instrument_errors.find(t.instrument_file);
    if (err != s.instrument_errors.end()) throw core::ConfigError(err->second);
    config::ObserveRunSettings o;
    auto& m = o.map;
    m.target = e.target;
    if (!(m.target.r500_kpc > 0.0) && e.m500_msun > 0.0)
      m.target.r500_kpc = cosmo.r500_kpc_from_m500(e.m500_msun, e.target.redshift);
    m.cosmology = e.cosmology;
    m.cells = e.cells;
    m.selection = e.selection;
    m.emission = e.emission;
    m.view = e.view;
    m.view.axis = t.los.axis == "angles" ? "angles" : t.los.axis;
    m.view.theta_deg = t.los.theta_deg;
    m.view.phi_deg = t.los.phi_deg;
    m.output.directory = t.directory;
    m.output.prefix = t.id;
    m.output.quicklook = false;  // the measurement's picture (centre and apertures) is the target's quick-look
    m.source_file = s.source_file;
    m.resolved_yaml = t.echo;
    m.config_hash = t.config_hash;
    o.observation = e.observation.base;
    o.observation.instrument_file = t.instrument_file;
    o.observation.exposure_ks = t.exposure_ks;
    o.observation.seed = t.seed;
    o.instrument = s.instruments.at(t.instrument_file);
    o.source_file = s.source_file;
    o.resolved_yaml = t.echo;
    o.config_hash = t.config_hash;
    obs = run_observe(o, log);
    auto& in = ms.inputs;
    in.counts = {obs.counts_file, "COUNTS"};
    in.exposure = {obs.exposure_file, "EXPOSURE"};
    if (e.measure.background == "image") in.background = {obs.background_file, "BACKGROUND"};
    else if (e.measure.background == "annulus") in.background_annulus = e.measure.background_annulus;
    if (e.measure.statistics.source == "expected") in.expected = {obs.model_file, "MODEL"};
    in.min_relative_exposure = e.measure.min_relative_exposure;
    auto& g = ms.target;
    g.name = e.name;
    g.redshift = e.target.redshift;
    if (e.target.r500_kpc > 0.0) g.r500_kpc = e.target.r500_kpc;
    else g.m500_msun = e.m500_msun;
    if (e.measure.centre == "given") {
      g.find_centre = false;
      g.centre_ra_deg = e.target.ra_deg;
      g.centre_dec_deg = e.target.dec_deg;
      if (e.measure.centre_search_radius) {
        g.search_radius = e.measure.centre_search_radius;
        g.find_centre = true;
      }
    }
  } else {
    ms.inputs = e.inputs;
    ms.target = e.observed_target;
  }
  ms.cosmology = e.cosmology;
  ms.apertures = e.measure.apertures;
  ms.statistics = e.measure.statistics;
  ms.statistics.seed = t.measure_seed;
  ms.statistics.threads = 0;
  ms.output.json = e.measure.json ? base + "_measure.json" : "";
  ms.output.quicklook = e.measure.quicklook ? base + "_measure.png" : "";
  ms.output.stretch = e.measure.stretch;
  ms.output.table = false;
  ms.source_file = s.source_file;
  ms.resolved_yaml = t.echo;
  ms.config_hash = t.config_hash;
  config::check_measure_run(ms);

  const MeasureImages im = load_measure_images(ms);
  const MeasureReport rep = measure_images(im, ms, log);
  write_measure_outputs(rep, im, ms, log);
  return build_row(t, e, rep, im, ms, e.simulated ? &obs : nullptr);
}

std::string survey_column_description(const std::string& c) {
  static const std::map<std::string, std::string> d = {
      {"target_index", "position of the target in the sample plan (1-based; entries in order, then lines of sight, instruments, exposures)"},
      {"target_id", "target identifier (also its folder under targets/)"},
      {"cluster", "entry name"},
      {"kind", "simulated (mock observed through an instrument) or observed (an external counts image)"},
      {"line_of_sight", "line of sight label (x, y, z, t<theta>_p<phi>, iso<k>); empty for observed"},
      {"los_theta_deg", "viewing direction, polar angle from the cells' +z axis"},
      {"los_phi_deg", "viewing direction, azimuth from +x towards +y"},
      {"instrument", "instrument name (observed: the INSTRUME keyword)"},
      {"exposure_ks", "on-time (observed: the EXPOSURE keyword)"},
      {"seed", "seed of the observation, derived from the sample seed and the target id"},
      {"measure_seed", "seed of the measurement realisations"},
      {"counts_file", "counts image measured, FILE[HDU]"},
      {"exposure_file", "exposure map, FILE[HDU]"},
      {"background_file", "background image, FILE[HDU]"},
      {"redshift", "redshift used"},
      {"redshift_source", "where the redshift came from (given or header)"},
      {"r500_kpc", "R500 used"},
      {"m500_msun", "M500 (given, or from R500 and the cosmology)"},
      {"r500_source", "where R500 came from"},
      {"ra_deg", "given position (simulated: the cluster's; observed: the given centre)"},
      {"dec_deg", "given position"},
      {"centre_mode", "found, given, or found near the given guess"},
      {"band_min_keV", "band lower edge"},
      {"band_max_keV", "band upper edge"},
      {"band_source", "where the band came from"},
      {"background_mode", "image, level, annulus or none"},
      {"background_level", "flat background at full exposure (level and annulus modes)"},
      {"pixel_arcsec", "pixel size"},
      {"kpc_per_pixel", "physical pixel size at the redshift"},
      {"nx", "image width"},
      {"ny", "image height"},
      {"peak_ra_deg", "estimated centre: peak of the smoothed image"},
      {"peak_dec_deg", "estimated centre: peak of the smoothed image"},
      {"centroid_ra_deg", "estimated iterated centroid"},
      {"centroid_dec_deg", "estimated iterated centroid"},
      {"peak_offset_arcsec", "distance of the estimated peak from the given position"},
      {"counts_total", "sum of the counts image"},
      {"aperture", "largest aperture (indicator and label)"},
      {"aperture_radius_px", "radius of the largest aperture about the peak"},
      {"counts_aperture", "counts in the largest aperture (good, exposed pixels)"},
      {"background_aperture", "expected background counts in the largest aperture"},
      {"net_counts", "counts_aperture - background_aperture"},
      {"snr", "net_counts / sqrt(counts_aperture)"},
      {"flux_sum_aperture", "sum of the exposure-corrected, background-subtracted image in the largest aperture"},
      {"masked_fraction", "masked (and refilled) fraction of the largest aperture"},
      {"unexposed_fraction", "fraction of the largest aperture beyond the image or at zero exposure"},
      {"mean_pixel_sn", "mean S/N per pixel in the Gini/M20 aperture"},
      {"masked_pixels", "pixels masked by the mask image and circles"},
      {"gap_pixels", "pixels at or below the minimum relative exposure"},
      {"flags", "raised flags, ';'-separated"},
      {"notes", "remarks of the measurement, ' | '-separated"},
      {"realisations", "number of re-Poissonised realisations"},
      {"realisation_source", "observed (re-Poissonised data) or expected (the mock's expected image)"},
      {"w_bias", "bias correction of w"},
      {"config_hash", "hash of every setting and input the row depends on (resume key)"},
      {"program_version", "program and version that made the row"}};
  const auto it = d.find(c);
  if (it != d.end()) return it->second;
  auto ends = [&](const std::string& s) { return c.size() > s.size() && c.compare(c.size() - s.size(), s.size(), s) == 0; };
  if (starts_with(c, "true_counts_")) return "realised (Poisson) counts of the mock's " + c.substr(12) + " component";
  if (starts_with(c, "expected_counts_")) return "expected counts of the mock's " + c.substr(16) + " component";
  if (starts_with(c, "flag_")) return "1 when the flag " + c.substr(5) + " is raised";
  if (starts_with(c, "class_")) return "class of the preset " + c.substr(6) + " (corrected values; empty = not available)";
  if (starts_with(c, "p_")) return "probability of the class from the realisations";
  if (ends("_raw")) return "raw value (before the noise-bias correction)";
  if (ends("_p16")) return "16th percentile of the realisations";
  if (ends("_p84")) return "84th percentile of the realisations";
  if (ends("_signif")) return "significance: corrected / ((p84 - p16) / 2)";
  return "indicator value, bias-corrected (name_aperture)";
}

}  // namespace icmscope::pipeline
