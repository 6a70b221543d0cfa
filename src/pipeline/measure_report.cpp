#include "icmscope/pipeline/measure_report.hpp"

#include <cmath>
#include <cstdio>
#include <sstream>

#include "icmscope/core/version.hpp"

namespace icmscope::pipeline {

namespace {

std::string g6(double v) {
  if (!std::isfinite(v)) return std::isnan(v) ? "-" : (v > 0 ? "inf" : "-inf");
  char b[40];
  std::snprintf(b, sizeof b, "%.6g", v);
  return b;
}

std::string full(double v) {
  char b[40];
  std::snprintf(b, sizeof b, "%.17g", v);
  return b;
}

std::string pad(const std::string& s, std::size_t w, bool right = false) {
  if (s.size() >= w) return s;
  return right ? std::string(w - s.size(), ' ') + s : s + std::string(w - s.size(), ' ');
}

// ---- JSON ------------------------------------------------------------------

std::string jstr(const std::string& s) {
  std::string o = "\"";
  for (unsigned char c : s) {
    switch (c) {
      case '"': o += "\\\""; break;
      case '\\': o += "\\\\"; break;
      case '\n': o += "\\n"; break;
      case '\t': o += "\\t"; break;
      case '\r': o += "\\r"; break;
      default:
        if (c < 0x20) {
          char b[8];
          std::snprintf(b, sizeof b, "\\u%04x", c);
          o += b;
        } else {
          o += static_cast<char>(c);
        }
    }
  }
  return o + "\"";
}

std::string jnum(double v) { return std::isfinite(v) ? full(v) : "null"; }

// A tiny writer: objects and arrays with commas placed automatically.
class Json {
 public:
  void open(char c) {
    comma();
    o_ << c;
    first_.push_back(true);
  }
  void close(char c) {
    first_.pop_back();
    o_ << c;
  }
  void key(const std::string& k) {
    comma();
    o_ << jstr(k) << ":";
    pending_key_ = true;
  }
  void raw(const std::string& v) {
    comma();
    o_ << v;
  }
  void num(const std::string& k, double v) { key(k), raw(jnum(v)); }
  void str(const std::string& k, const std::string& v) { key(k), raw(jstr(v)); }
  void boolean(const std::string& k, bool v) { key(k), raw(v ? "true" : "false"); }
  void integer(const std::string& k, long long v) { key(k), raw(std::to_string(v)); }
  void obj(const std::string& k) { key(k), open('{'); }
  void arr(const std::string& k) { key(k), open('['); }
  std::string text() const { return o_.str() + "\n"; }

 private:
  void comma() {
    if (pending_key_) {
      pending_key_ = false;
      return;
    }
    if (!first_.empty()) {
      if (!first_.back()) o_ << ",";
      first_.back() = false;
    }
  }
  std::ostringstream o_;
  std::vector<bool> first_;
  bool pending_key_ = false;
};

double nan_if_zero(double v) { return v > 0.0 ? v : std::nan(""); }

struct Lengths {
  double px, arcsec, kpc, r500;
};
Lengths lengths(const MeasureReport& r, double px) {
  Lengths l{px, px * r.pixel_arcsec, std::nan(""), std::nan("")};
  if (r.kpc_per_pixel > 0.0 && std::isfinite(px)) l.kpc = px * r.kpc_per_pixel;
  if (r.r500_kpc > 0.0 && std::isfinite(l.kpc)) l.r500 = l.kpc / r.r500_kpc;
  return l;
}

void jlengths(Json& j, const std::string& k, const MeasureReport& r, double px) {
  const Lengths l = lengths(r, px);
  j.obj(k);
  j.num("px", l.px);
  j.num("arcsec", l.arcsec);
  j.num("kpc", l.kpc);
  j.num("r500", l.r500);
  j.close('}');
}

void jpoint(Json& j, const std::string& k, const SkyPoint& p) {
  j.obj(k);
  j.num("x_pix", p.x);
  j.num("y_pix", p.y);
  j.num("ra_deg", p.ra_deg);
  j.num("dec_deg", p.dec_deg);
  j.close('}');
}

const morphology::ClassificationScheme* scheme_of(const MeasureReport& r, const std::string& name) {
  for (const auto& s : r.schemes)
    if (s.name == name) return &s;
  return nullptr;
}

std::vector<std::pair<std::string, bool>> flag_list(const morphology::MeasureFlags& f) {
  return {{"low_counts", f.low_counts},
          {"aperture_beyond_image", f.aperture_beyond_image},
          {"large_masked_fraction", f.large_masked_fraction},
          {"centre_near_edge", f.centre_near_edge},
          {"unfilled_pixels", f.unfilled_pixels},
          {"asymmetry_pairs_outside", f.asymmetry_pairs_outside},
          {"low_pixel_sn", f.low_pixel_sn}};
}

}  // namespace

std::string measure_json(const MeasureReport& r) {
  const auto& ind = r.indicators;
  Json j;
  j.open('{');
  j.str("program", std::string(core::kProgram) + " " + core::kVersion);
  j.str("verb", "measure");
  j.str("target", r.target);
  j.obj("inputs");
  j.str("counts", r.counts);
  j.str("counts_bunit", r.counts_bunit);
  j.integer("nx", r.nx);
  j.integer("ny", r.ny);
  j.str("exposure", r.exposure);
  j.num("exposure_reference", nan_if_zero(r.exposure_reference));
  j.integer("gap_pixels", static_cast<long long>(r.gap_pixels));
  j.str("background", r.background);
  j.str("background_mode", r.background_mode);
  j.num("background_level_count_per_pixel", r.background_mode == "level" || r.background_mode == "annulus"
                                                 ? r.background_level
                                                 : std::nan(""));
  j.integer("background_annulus_pixels", static_cast<long long>(r.background_pixels));
  j.str("mask", r.mask);
  j.integer("mask_circles", r.mask_circles);
  j.integer("masked_pixels", static_cast<long long>(r.masked_pixels));
  j.str("expected", r.expected);
  j.close('}');
  j.obj("band");
  j.boolean("known", r.band_known);
  j.num("e_min_keV", r.band_known ? r.band_min_keV : std::nan(""));
  j.num("e_max_keV", r.band_known ? r.band_max_keV : std::nan(""));
  j.str("source", r.band_source);
  j.close('}');
  j.obj("scale");
  j.num("pixel_arcsec", r.pixel_arcsec);
  j.num("redshift", nan_if_zero(r.redshift));
  j.str("redshift_source", r.redshift_source);
  j.num("kpc_per_arcsec", nan_if_zero(r.kpc_per_arcsec));
  j.num("kpc_per_pixel", nan_if_zero(r.kpc_per_pixel));
  j.num("r500_kpc", nan_if_zero(r.r500_kpc));
  j.num("r500_arcsec", r.r500_kpc > 0 && r.kpc_per_arcsec > 0 ? r.r500_kpc / r.kpc_per_arcsec : std::nan(""));
  j.num("r500_px", r.r500_kpc > 0 && r.kpc_per_pixel > 0 ? r.r500_kpc / r.kpc_per_pixel : std::nan(""));
  j.str("r500_source", r.r500_source);
  j.num("m500_msun", nan_if_zero(r.m500_msun));
  j.obj("cosmology");
  j.num("H0_km_s_Mpc", r.cosmology.H0_km_s_Mpc);
  j.num("Omega_m", r.cosmology.Omega_m);
  j.num("Omega_lambda", r.cosmology.Omega_lambda);
  j.close('}');
  j.close('}');
  j.obj("centre");
  j.str("mode", r.centre_mode);
  j.str("pixel_convention", "FITS 1-based (the first pixel is centred on 1, 1)");
  if (r.given_centre) jpoint(j, "given", *r.given_centre);
  jpoint(j, "peak", r.peak);
  jpoint(j, "centroid", r.centroid);
  j.close('}');
  j.arr("apertures");
  for (const auto& a : r.apertures) {
    j.open('{');
    j.str("indicator", a.indicator);
    j.str("label", a.label);
    if (a.pair) jlengths(j, "inner", r, a.inner_px);
    jlengths(j, "outer", r, a.outer_px);
    j.str("note", a.note);
    j.close('}');
  }
  j.close(']');
  j.obj("realisations");
  j.integer("number", r.realisations);
  j.integer("seed", static_cast<long long>(r.seed));
  j.str("source", r.source);
  j.str("w_bias", r.w_bias);
  j.close('}');
  j.arr("indicators");
  for (const auto& v : ind.values) {
    const auto& e = v.value;
    j.open('{');
    j.str("name", v.name);
    j.str("aperture", v.aperture);
    j.str("convention", v.convention);
    j.str("bias_mode", morphology::to_string(e.mode));
    j.num("raw", e.raw);
    j.num("reference", e.reference);
    j.num("mean", e.mean);
    j.num("bias", e.bias);
    j.num("corrected", e.corrected);
    j.num("p16", e.p16);
    j.num("p84", e.p84);
    j.num("sigma", e.sigma);
    j.num("significance", e.significance);
    j.integer("n_realisations", e.n_realisations);
    j.close('}');
  }
  j.close(']');
  j.obj("flags");
  for (const auto& [name, on] : flag_list(ind.flags)) j.boolean(name, on);
  j.arr("notes");
  for (const auto& n : ind.flags.notes) j.raw(jstr(n));
  j.close(']');
  j.close('}');
  j.obj("summary");
  j.num("net_counts", ind.net_counts);
  j.num("masked_fraction", ind.masked_fraction);
  j.num("mean_pixel_sn", ind.mean_pixel_sn);
  j.num("ellipticity_theta_pix_deg", ind.ellipticity.theta_deg);
  j.close('}');
  j.arr("classes");
  for (const auto& c : ind.classes) {
    const auto* sch = scheme_of(r, c.scheme);
    j.open('{');
    j.str("scheme", c.scheme);
    j.str("source", sch ? sch->source : "");
    j.boolean("verified", c.verified);
    j.str("note", sch ? sch->note : "");
    j.boolean("available", c.available);
    j.str("reason", c.reason);
    j.str("label", c.label);
    j.arr("classes");
    for (const auto& n : c.classes) j.raw(jstr(n));
    j.close(']');
    j.obj("probability");
    for (std::size_t k = 0; k < c.probability.size() && k < c.classes.size(); ++k) j.num(c.classes[k], c.probability[k]);
    j.close('}');
    j.close('}');
  }
  j.close(']');
  j.arr("notes");
  for (const auto& n : r.notes) j.raw(jstr(n));
  j.close(']');
  j.str("config_hash", r.config_hash);
  j.str("configuration", r.configuration);
  j.num("seconds", r.seconds);
  j.close('}');
  return j.text();
}

// ---- CSV -------------------------------------------------------------------

namespace {

std::string cq(const std::string& s) {
  if (s.find_first_of(",\"\n") == std::string::npos) return s;
  std::string o = "\"";
  for (char c : s) {
    if (c == '"') o += '"';
    o += c;
  }
  return o + "\"";
}

std::string cnum(double v) { return std::isfinite(v) ? full(v) : ""; }

}  // namespace

std::string measure_csv(const MeasureReport& r) {
  std::ostringstream o;
  o << "kind,name,aperture,convention,bias_mode,raw,reference,mean,bias,corrected,p16,p84,sigma,significance,"
       "n_realisations,inner_px,outer_px,outer_arcsec,outer_kpc,outer_r500,label\n";
  const auto row = [&](const std::string& kind, const std::string& name, const std::string& ap, const std::string& conv,
                       const std::string& mode, const std::vector<double>& nums, const std::string& n_real,
                       const std::vector<double>& geom, const std::string& label) {
    o << kind << ',' << cq(name) << ',' << cq(ap) << ',' << cq(conv) << ',' << mode;
    for (std::size_t k = 0; k < 9; ++k) o << ',' << (k < nums.size() ? cnum(nums[k]) : "");
    o << ',' << n_real;
    for (std::size_t k = 0; k < 5; ++k) o << ',' << (k < geom.size() ? cnum(geom[k]) : "");
    o << ',' << cq(label) << '\n';
  };
  const auto meta = [&](const std::string& name, double v, const std::string& text = "") {
    row("meta", name, "", "", "", {v}, "", {}, text);
  };
  meta("target", std::nan(""), r.target);
  meta("counts", std::nan(""), r.counts);
  meta("exposure", std::nan(""), r.exposure);
  meta("background", r.background_mode == "level" || r.background_mode == "annulus" ? r.background_level : std::nan(""),
       r.background_mode + (r.background.empty() ? "" : " " + r.background));
  meta("mask", static_cast<double>(r.masked_pixels), r.mask);
  meta("expected", std::nan(""), r.expected);
  meta("band_min_keV", r.band_known ? r.band_min_keV : std::nan(""), r.band_source);
  meta("band_max_keV", r.band_known ? r.band_max_keV : std::nan(""), r.band_source);
  meta("pixel_arcsec", r.pixel_arcsec);
  meta("redshift", nan_if_zero(r.redshift), r.redshift_source);
  meta("kpc_per_pixel", nan_if_zero(r.kpc_per_pixel));
  meta("r500_kpc", nan_if_zero(r.r500_kpc), r.r500_source);
  meta("m500_msun", nan_if_zero(r.m500_msun));
  meta("realisations", r.realisations, r.source);
  meta("seed", static_cast<double>(r.seed));
  meta("w_bias", std::nan(""), r.w_bias);
  meta("net_counts", r.indicators.net_counts);
  meta("masked_fraction", r.indicators.masked_fraction);
  meta("mean_pixel_sn", r.indicators.mean_pixel_sn);
  for (const auto& a : r.apertures) {
    const Lengths l = lengths(r, a.outer_px);
    row("aperture", a.indicator, a.label, a.note, "", {}, "", {a.pair ? a.inner_px : std::nan(""), l.px, l.arcsec, l.kpc, l.r500}, "");
  }
  const auto centre = [&](const std::string& name, const SkyPoint& p) {
    row("centre", name + "_x_pix", "", "FITS 1-based", "", {p.x}, "", {}, r.centre_mode);
    row("centre", name + "_y_pix", "", "FITS 1-based", "", {p.y}, "", {}, r.centre_mode);
    row("centre", name + "_ra_deg", "", "", "", {p.ra_deg}, "", {}, r.centre_mode);
    row("centre", name + "_dec_deg", "", "", "", {p.dec_deg}, "", {}, r.centre_mode);
  };
  if (r.given_centre) centre("given", *r.given_centre);
  centre("peak", r.peak);
  centre("centroid", r.centroid);
  for (const auto& v : r.indicators.values) {
    const auto& e = v.value;
    row("indicator", v.name, v.aperture, v.convention, morphology::to_string(e.mode),
        {e.raw, e.reference, e.mean, e.bias, e.corrected, e.p16, e.p84, e.sigma, e.significance},
        std::to_string(e.n_realisations), {}, "");
  }
  for (const auto& [name, on] : flag_list(r.indicators.flags)) row("flag", name, "", "", "", {on ? 1.0 : 0.0}, "", {}, "");
  for (const auto& n : r.indicators.flags.notes) row("flag_note", "", "", "", "", {}, "", {}, n);
  for (const auto& c : r.indicators.classes) {
    double p = std::nan("");
    for (std::size_t k = 0; k < c.classes.size() && k < c.probability.size(); ++k)
      if (c.classes[k] == c.label) p = c.probability[k];
    const auto* sch = scheme_of(r, c.scheme);
    row("class", c.scheme, "", sch ? sch->source : "", c.verified ? "verified" : "unverified", {p}, "", {},
        c.available ? c.label : "not available: " + c.reason);
    for (std::size_t k = 0; k < c.classes.size() && k < c.probability.size(); ++k)
      row("class_probability", c.scheme, "", "", "", {c.probability[k]}, "", {}, c.classes[k]);
  }
  for (const auto& n : r.notes) row("note", "", "", "", "", {}, "", {}, n);
  return o.str();
}

// ---- table -----------------------------------------------------------------

std::string measure_table(const MeasureReport& r) {
  std::ostringstream o;
  const auto& ind = r.indicators;
  o << "icmscope measure: " << r.target << "\n";
  o << "  counts        " << r.counts << "  (" << r.nx << " x " << r.ny << " pixels, " << g6(r.pixel_arcsec)
    << " arcsec/pixel" << (r.counts_bunit.empty() ? "" : ", BUNIT " + r.counts_bunit) << ")\n";
  if (!r.exposure.empty())
    o << "  exposure      " << r.exposure << "  (relative exposure 1 = " << g6(r.exposure_reference) << "; "
      << r.gap_pixels << " gap pixels)\n";
  o << "  background    " << r.background_mode;
  if (r.background_mode == "image") o << "  " << r.background;
  if (r.background_mode == "level" || r.background_mode == "annulus")
    o << "  " << g6(r.background_level) << " count/pixel at full exposure"
      << (r.background_mode == "annulus" ? " (" + std::to_string(r.background_pixels) + " annulus pixels)" : "");
  o << "\n";
  if (!r.mask.empty() || r.mask_circles > 0)
    o << "  mask          " << (r.mask.empty() ? "-" : r.mask) << ", " << r.mask_circles << " sky circles: "
      << r.masked_pixels << " pixels masked (refilled from the local annulus)\n";
  if (!r.expected.empty()) o << "  expected      " << r.expected << "\n";
  o << "  band          "
    << (r.band_known ? g6(r.band_min_keV) + "-" + g6(r.band_max_keV) + " keV (" + r.band_source + ")" : r.band_source)
    << "\n";
  if (r.redshift > 0.0)
    o << "  redshift      " << g6(r.redshift) << " (" << r.redshift_source << "): " << g6(r.kpc_per_arcsec)
      << " kpc/arcsec, " << g6(r.kpc_per_pixel) << " kpc/pixel (H0 " << g6(r.cosmology.H0_km_s_Mpc) << ", Omega_m "
      << g6(r.cosmology.Omega_m) << ", Omega_lambda " << g6(r.cosmology.Omega_lambda) << ")\n";
  else
    o << "  redshift      unknown: apertures in arcsec / pixels only\n";
  if (r.r500_kpc > 0.0) {
    const Lengths l = lengths(r, r.r500_kpc / (r.kpc_per_pixel > 0 ? r.kpc_per_pixel : 1.0));
    o << "  R500          " << g6(r.r500_kpc) << " kpc = " << g6(l.arcsec) << " arcsec = " << g6(l.px) << " px ("
      << r.r500_source << (r.m500_msun > 0 ? ", M500 " + g6(r.m500_msun) + " Msun" : "") << ")\n";
  } else {
    o << "  R500          unknown\n";
  }
  const auto pt = [&](const SkyPoint& p) {
    char b[160];
    std::snprintf(b, sizeof b, "(%.2f, %.2f) = RA %.6f, Dec %.6f", p.x, p.y, p.ra_deg, p.dec_deg);
    return std::string(b);
  };
  o << "  centre        " << r.centre_mode << (r.given_centre ? ", given " + pt(*r.given_centre) : "") << "\n";
  o << "    peak        " << pt(r.peak) << "\n";
  o << "    centroid    " << pt(r.centroid) << "\n";
  o << "  realisations  " << r.realisations << " of the " << r.source << (r.source == "expected" ? " image" : " counts")
    << " (seed " << r.seed << "); w bias correction " << r.w_bias << "; net counts " << g6(ind.net_counts)
    << ", masked fraction " << g6(ind.masked_fraction) << "\n";
  o << "\napertures (pixel / arcsec / kpc / R500)\n";
  o << "  " << pad("indicator", 20) << pad("label", 14) << pad("inner_px", 10, true) << pad("outer_px", 10, true)
    << pad("arcsec", 10, true) << pad("kpc", 10, true) << pad("R500", 9, true) << "  note\n";
  for (const auto& a : r.apertures) {
    const Lengths l = lengths(r, a.outer_px);
    o << "  " << pad(a.indicator, 20) << pad(a.label, 14) << pad(a.pair ? g6(a.inner_px) : "", 10, true)
      << pad(g6(l.px), 10, true) << pad(g6(l.arcsec), 10, true) << pad(g6(l.kpc), 10, true)
      << pad(g6(l.r500), 9, true) << "  " << a.note << "\n";
  }
  o << "\nindicators (raw; corrected = raw - bias from the realisations; p16 / p84 of the realisations)\n";
  o << "  " << pad("name", 27) << pad("aperture", 14) << pad("raw", 14, true) << pad("corrected", 14, true)
    << pad("bias", 13, true) << pad("p16", 13, true) << pad("p84", 13, true) << pad("sigma", 12, true)
    << pad("signif", 10, true) << "  bias mode\n";
  for (const auto& v : ind.values) {
    const auto& e = v.value;
    o << "  " << pad(v.name, 26) << " " << pad(v.aperture.empty() ? "-" : v.aperture, 13) << " " << pad(g6(e.raw), 14, true)
      << pad(g6(e.corrected), 14, true) << pad(g6(e.bias), 13, true) << pad(g6(e.p16), 13, true)
      << pad(g6(e.p84), 13, true) << pad(g6(e.sigma), 12, true) << pad(g6(e.significance), 10, true) << "  "
      << morphology::to_string(e.mode) << "\n";
  }
  o << "\nconventions\n";
  for (const auto& v : ind.values)
    if (!v.convention.empty()) o << "  " << pad(v.name + (v.aperture.empty() ? "" : " (" + v.aperture + ")"), 38) << v.convention << "\n";
  o << "\nflags\n";
  bool anyflag = false;
  for (const auto& [name, on] : flag_list(ind.flags))
    if (on) anyflag = true;
  if (!anyflag) o << "  none raised\n";
  for (const auto& n : ind.flags.notes) o << "  " << n << "\n";
  o << "\nclasses (a cut is a labelling convention; probabilities from the realisations)\n";
  for (const auto& c : ind.classes) {
    const auto* sch = scheme_of(r, c.scheme);
    o << "  " << pad(c.scheme, 16);
    if (!c.available) {
      o << "not available: " << c.reason << "\n";
      continue;
    }
    o << pad(c.label, 20);
    if (!c.probability.empty()) {
      o << "P(";
      for (std::size_t k = 0; k < c.classes.size() && k < c.probability.size(); ++k)
        o << (k ? ", " : "") << c.classes[k] << " " << g6(c.probability[k]);
      o << ")";
    }
    const std::string note = sch ? sch->note : "";
    o << "\n" << pad("", 18) << (sch ? sch->source : "")
      << (c.verified || note.find("unverified") != std::string::npos ? "" : "; from memory, unverified")
      << (note.empty() ? "" : "; " + note) << "\n";
  }
  if (!r.notes.empty()) {
    o << "\nnotes\n";
    for (const auto& n : r.notes) o << "  " << n << "\n";
  }
  return o.str();
}

}  // namespace icmscope::pipeline
