#include "icmscope/pipeline/plan_report.hpp"

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <sstream>

#include "icmscope/core/errors.hpp"
#include "icmscope/core/version.hpp"
#include "icmscope/io/plots.hpp"
#include "icmscope/pipeline/project_run.hpp"
#include "icmscope/pipeline/survey_target.hpp"

namespace icmscope::pipeline {

namespace fs = std::filesystem;

namespace {

const char* kUncertainty =
    "indicator ranges: 16th-84th percentiles of the noise-bias-corrected realisations, sigma = (p84 - p16) / 2; "
    "shortest exposures: interpolated in log exposure between grid points; their uncertainty: 16th-84th percentiles "
    "of the answers from bootstrap resamples of the realisations of every exposure";

std::string num(double v, const char* f = "%.9g") {
  if (!std::isfinite(v)) return "nan";
  char b[64];
  std::snprintf(b, sizeof b, f, v);
  return b;
}

std::string jnum(double v) {
  if (!std::isfinite(v)) return "null";
  char b[64];
  std::snprintf(b, sizeof b, "%.9g", v);
  return b;
}

std::string jstr(const std::string& s) {
  std::string o = "\"";
  for (char c : s) {
    if (c == '"' || c == '\\') {
      o += '\\';
      o += c;
    } else if (c == '\n') {
      o += "\\n";
    } else if (static_cast<unsigned char>(c) < 0x20) {
      o += ' ';
    } else {
      o += c;
    }
  }
  return o + "\"";
}

std::string jarr(const std::vector<double>& v) {
  std::string o = "[";
  for (std::size_t i = 0; i < v.size(); ++i) o += (i ? ", " : "") + jnum(v[i]);
  return o + "]";
}

std::string jflags(const std::vector<char>& v) {
  std::string o = "[";
  for (std::size_t i = 0; i < v.size(); ++i) o += std::string(i ? ", " : "") + (v[i] ? "true" : "false");
  return o + "]";
}

std::string col(const config::IndicatorRef& r) { return indicator_column(r.name, r.aperture); }

std::string caution_box() {
  const std::string c = config::plan_caution_text();
  std::string bar(78, '!');
  // Wrap at ~74 columns.
  std::string out = bar + "\n";
  std::istringstream in(c);
  std::string word, line;
  while (in >> word) {
    if (line.size() + word.size() + 1 > 74) {
      out += "!! " + line + "\n";
      line.clear();
    }
    line += (line.empty() ? "" : " ") + word;
  }
  if (!line.empty()) out += "!! " + line + "\n";
  return out + bar + "\n";
}

std::string answer_text(const GoalAnswer& a) {
  if (a.status == "reached" || a.status == "below_grid") {
    std::string s = (a.status == "below_grid" ? "<= " : "") + num(a.exposure_ks, "%.3g") + " ks";
    if (a.status == "reached" && std::isfinite(a.sigma_ks))
      s += " (bootstrap 16-84%: " + num(a.p16_ks, "%.3g") + "-" + num(a.p84_ks, "%.3g") + " ks)";
    else if (a.status == "reached" && std::isfinite(a.reached_fraction))
      s += " (reached in " + num(100.0 * a.reached_fraction, "%.0f") + "% of bootstrap resamples)";
    if (a.status == "below_grid") s += "; met at the shortest exposure of the grid";
    if (a.status == "below_grid" && std::isfinite(a.extrapolated_ks))
      s += ", extrapolated " + num(a.extrapolated_ks, "%.3g") + " ks";
    return s;
  }
  if (a.status == "not_reached") {
    std::string s = "not reached within the grid";
    if (std::isfinite(a.extrapolated_ks)) s += " (extrapolated: ~" + num(a.extrapolated_ks, "%.3g") + " ks)";
    return s;
  }
  return "unavailable (indicator not measured)";
}

void remove_all(const std::vector<std::string>& files) {
  for (const auto& f : files) std::remove(f.c_str());
}

io::Rgb palette(std::size_t i) {
  static const io::Rgb p[] = {{40, 90, 200}, {200, 40, 40}, {40, 150, 60}, {230, 150, 20},
                              {130, 60, 170}, {20, 150, 160}, {120, 120, 120}, {0, 0, 0}};
  return p[i % 8];
}

std::string csv_table(const PlanResult& r, const config::PlanRunSettings& s) {
  std::ostringstream o;
  o << "# " << config::plan_caution_text() << "\n";
  o << "# icmscope plan " << core::kVersion << ": target " << r.target.name << ", instrument " << s.instrument.name
    << ", " << s.realisations << " realisations per exposure, seed " << s.seed << "\n";
  o << "exposure_ks,realisations,source_counts_r500,source_counts_core,background_counts_r500,"
       "background_counts_core,background_fraction_r500,sn_r500,sn_core";
  for (const auto& i : s.indicators) {
    const std::string c = col(i);
    o << "," << c << "_median," << c << "_p16," << c << "_p84," << c << "_sigma," << c << "_reference," << c
      << "_bias";
  }
  if (!r.exposures.empty())
    for (const auto& pc : r.exposures.front().classes)
      for (const auto& cl : pc.classes) o << ",P_" << pc.scheme << "_" << cl;
  o << "\n";
  for (const auto& e : r.exposures) {
    o << num(e.exposure_ks) << "," << e.realisations << "," << num(e.source_r500) << ","
      << num(e.source_core) << "," << num(e.background_r500) << "," << num(e.background_core) << ","
      << num(e.background_fraction_r500) << "," << num(e.sn_r500) << "," << num(e.sn_core);
    for (const auto& pi : e.indicators) {
      if (!pi.available) {
        o << ",nan,nan,nan,nan," << num(pi.reference) << "," << num(pi.bias);
        continue;
      }
      o << "," << num(pi.median) << "," << num(pi.p16) << "," << num(pi.p84) << "," << num(pi.sigma) << ","
        << num(pi.reference) << "," << num(pi.bias);
    }
    for (const auto& pc : e.classes)
      for (double p : pc.probability) o << "," << num(p);
    o << "\n";
  }
  return o.str();
}

std::string goals_csv(const PlanResult& r) {
  std::ostringstream o;
  o << "# " << config::plan_caution_text() << "\n";
  o << "# " << kUncertainty << "\n";
  o << "goal,status,exposure_ks,sigma_ks,p16_ks,p84_ks,extrapolated_ks,bootstrap_reached_fraction,threshold\n";
  auto row = [&](const GoalAnswer& a) {
    o << "\"" << a.text << "\"," << a.status << "," << num(a.exposure_ks) << "," << num(a.sigma_ks) << ","
      << num(a.p16_ks) << "," << num(a.p84_ks) << "," << num(a.extrapolated_ks) << "," << num(a.reached_fraction)
      << "," << num(a.threshold) << "\n";
  };
  for (const auto& a : r.goals) row(a);
  row(r.all_goals);
  return o.str();
}

std::string reverse_csv(const PlanResult& r) {
  const auto& v = r.reverse;
  std::ostringstream o;
  o << "# " << config::plan_caution_text() << "\n";
  o << "# reverse question: " << v.exposure_ks << " ks, scheme " << v.scheme << ", class "
    << (v.class_label.empty() ? "dominant" : v.class_label) << " in >= " << v.confidence * 100 << "% of "
    << v.realisations << " realisations; M-T " << v.mt_reference << "; L-M " << v.lm_reference << "\n";
  o << "m500_msun,redshift,r500_kpc,kT_keV,l_soft_erg_s,source_counts_r500,sn_r500,dominant_class,fraction,"
       "determined\n";
  for (const auto& p : v.grid)
    o << num(p.m500_msun) << "," << num(p.redshift) << "," << num(p.r500_kpc) << "," << num(p.kT_keV) << ","
      << num(p.l_soft_erg_s) << "," << num(p.source_r500) << "," << num(p.sn_r500) << ","
      << (p.dominant.empty() ? "none" : p.dominant) << "," << num(p.fraction) << "," << (p.determined ? 1 : 0)
      << "\n";
  return o.str();
}

std::string goal_json(const GoalAnswer& a) {
  return "{\"goal\": " + jstr(a.text) + ", \"status\": " + jstr(a.status) + ", \"exposure_ks\": " +
         jnum(a.exposure_ks) + ", \"sigma_ks\": " + jnum(a.sigma_ks) + ", \"p16_ks\": " + jnum(a.p16_ks) +
         ", \"p84_ks\": " + jnum(a.p84_ks) + ", \"extrapolated_ks\": " + jnum(a.extrapolated_ks) +
         ", \"bootstrap_reached_fraction\": " + jnum(a.reached_fraction) + ", \"threshold\": " + jnum(a.threshold) +
         ", \"metric\": " + jarr(a.metric) + "}";
}

std::string json_report(const PlanResult& r, const config::PlanRunSettings& s) {
  const auto& t = r.target;
  std::ostringstream o;
  o << "{\n  \"caution\": " << jstr(config::plan_caution_text()) << ",\n";
  o << "  \"program\": " << jstr(std::string("icmscope plan ") + core::kVersion) << ",\n";
  o << "  \"config_hash\": " << jstr(s.config_hash) << ",\n";
  o << "  \"target\": {\"name\": " << jstr(t.name) << ", \"kind\": " << jstr(t.kind) << ", \"redshift\": "
    << jnum(t.redshift) << ", \"m500_msun\": " << jnum(t.m500_msun > 0 ? t.m500_msun : NAN)
    << ", \"r500_kpc\": " << jnum(t.r500_kpc) << ", \"r500_source\": " << jstr(t.r500_source)
    << ", \"kpc_per_pixel\": " << jnum(t.kpc_per_pixel) << ", \"pixel_arcsec\": " << jnum(t.pixel_arcsec)
    << ", \"nH_cm2\": " << jnum(t.nH_cm2) << ", \"band_keV\": [" << jnum(t.band_min_keV) << ", "
    << jnum(t.band_max_keV) << "], \"core_radius_r500\": " << jnum(s.core_radius_r500);
  if (t.scaled) {
    const auto& c = t.scaling;
    o << ",\n    \"scaling\": {\"mt_relation\": " << jstr(t.mt_relation) << ", \"mt_reference\": "
      << jstr(c.mt_reference) << ", \"lm_relation\": " << jstr(t.lm_relation) << ", \"lm_reference\": "
      << jstr(c.lm_reference) << ", \"r500_kpc\": " << jnum(c.r500_kpc) << ", \"kT_keV\": " << jnum(c.kT_keV)
      << ", \"l_soft_erg_s\": " << jnum(c.l_soft_erg_s) << ", \"l_soft_relation_erg_s\": "
      << jnum(c.l_soft_relation_erg_s) << ", \"gas_mass_r500_msun\": " << jnum(c.gas_mass_r500_msun)
      << ", \"ne0_cm3\": " << jnum(c.ne0_cm3) << "}";
  }
  o << "},\n";
  o << "  \"instrument\": {\"name\": " << jstr(s.instrument.name) << ", \"file\": " << jstr(s.instrument_file)
    << ", \"psf_mode\": " << jstr(s.psf_mode) << ", \"point_sources\": " << (s.point_sources ? "true" : "false")
    << "},\n";
  o << "  \"realisations\": " << s.realisations << ", \"seed\": " << s.seed << ", \"bootstrap\": " << s.bootstrap
    << ",\n  \"reference_exposure_ks\": " << jnum(t.reference_exposure_ks) << ",\n";
  o << "  \"uncertainties\": " << jstr(kUncertainty) << ",\n";
  o << "  \"exposures\": [\n";
  for (std::size_t i = 0; i < r.exposures.size(); ++i) {
    const auto& e = r.exposures[i];
    o << "    {\"exposure_ks\": " << jnum(e.exposure_ks) << ", \"seed\": " << e.seed << ", \"realisations\": "
      << e.realisations << ", \"source_counts_r500\": " << jnum(e.source_r500) << ", \"source_counts_core\": "
      << jnum(e.source_core) << ", \"background_counts_r500\": " << jnum(e.background_r500)
      << ", \"background_counts_core\": " << jnum(e.background_core) << ", \"background_fraction_r500\": "
      << jnum(e.background_fraction_r500) << ", \"sn_r500\": " << jnum(e.sn_r500) << ", \"sn_core\": "
      << jnum(e.sn_core) << ",\n     \"indicators\": [";
    for (std::size_t j = 0; j < e.indicators.size(); ++j) {
      const auto& pi = e.indicators[j];
      const double nan = NAN;
      o << (j ? ", " : "") << "{\"name\": " << jstr(pi.ref.name) << ", \"aperture\": " << jstr(pi.ref.aperture)
        << ", \"median\": " << jnum(pi.available ? pi.median : nan) << ", \"p16\": "
        << jnum(pi.available ? pi.p16 : nan) << ", \"p84\": " << jnum(pi.available ? pi.p84 : nan)
        << ", \"sigma\": " << jnum(pi.available ? pi.sigma : nan) << ", \"reference\": " << jnum(pi.reference)
        << ", \"bias\": " << jnum(pi.bias) << "}";
    }
    o << "],\n     \"classes\": [";
    for (std::size_t j = 0; j < e.classes.size(); ++j) {
      const auto& pc = e.classes[j];
      o << (j ? ", " : "") << "{\"scheme\": " << jstr(pc.scheme) << ", \"verified\": "
        << (pc.verified ? "true" : "false") << ", \"dominant\": "
        << (pc.dominant >= 0 ? jstr(pc.classes[static_cast<std::size_t>(pc.dominant)]) : "null")
        << ", \"probability\": {";
      for (std::size_t k = 0; k < pc.classes.size(); ++k)
        o << (k ? ", " : "") << jstr(pc.classes[k]) << ": " << jnum(pc.probability[k]);
      o << "}}";
    }
    o << "]}" << (i + 1 < r.exposures.size() ? "," : "") << "\n";
  }
  o << "  ],\n  \"goals\": [";
  for (std::size_t g = 0; g < r.goals.size(); ++g) o << (g ? ",\n    " : "\n    ") << goal_json(r.goals[g]);
  o << "\n  ],\n  \"all_goals\": " << goal_json(r.all_goals);
  if (r.has_reverse) {
    const auto& v = r.reverse;
    o << ",\n  \"reverse\": {\"exposure_ks\": " << jnum(v.exposure_ks) << ", \"scheme\": " << jstr(v.scheme)
      << ", \"class\": " << jstr(v.class_label.empty() ? "dominant" : v.class_label) << ", \"confidence\": "
      << jnum(v.confidence) << ", \"realisations\": " << v.realisations << ", \"mt_relation\": "
      << jstr(v.mt_relation) << ", \"mt_reference\": " << jstr(v.mt_reference) << ", \"lm_relation\": "
      << jstr(v.lm_relation) << ", \"lm_reference\": " << jstr(v.lm_reference) << ",\n    \"m500_msun\": "
      << jarr(v.m500_msun) << ", \"redshift\": " << jarr(v.redshift) << ",\n    \"min_m500_msun_at_redshift\": "
      << jarr(v.min_mass_at_z) << ", \"max_redshift_at_m500\": " << jarr(v.max_redshift_at_mass)
      << ",\n    \"min_m500_msun_at_redshift_interpolated\": " << jarr(v.min_mass_interp_at_z)
      << ", \"min_m500_at_grid_edge\": " << jflags(v.min_mass_at_edge)
      << ",\n    \"max_redshift_at_m500_interpolated\": " << jarr(v.max_redshift_interp_at_mass)
      << ", \"max_redshift_at_grid_edge\": " << jflags(v.max_redshift_at_edge) << ",\n    \"grid\": [";
    for (std::size_t i = 0; i < v.grid.size(); ++i) {
      const auto& p = v.grid[i];
      o << (i ? ",\n      " : "\n      ") << "{\"m500_msun\": " << jnum(p.m500_msun) << ", \"redshift\": "
        << jnum(p.redshift) << ", \"r500_kpc\": " << jnum(p.r500_kpc) << ", \"kT_keV\": " << jnum(p.kT_keV)
        << ", \"l_soft_erg_s\": " << jnum(p.l_soft_erg_s) << ", \"source_counts_r500\": " << jnum(p.source_r500)
        << ", \"sn_r500\": " << jnum(p.sn_r500) << ", \"dominant\": "
        << (p.dominant.empty() ? "null" : jstr(p.dominant)) << ", \"fraction\": " << jnum(p.fraction)
        << ", \"determined\": " << (p.determined ? "true" : "false") << "}";
    }
    o << "\n    ]}";
  }
  o << ",\n  \"seconds\": " << jnum(r.seconds) << "\n}\n";
  return o.str();
}

std::vector<io::PlotPanel> forward_panels(const PlanResult& r, const config::PlanRunSettings& s) {
  std::vector<io::PlotPanel> panels;
  std::vector<double> t;
  for (const auto& e : r.exposures) t.push_back(e.exposure_ks);
  const std::string note = "SIMULATION: confirm exposure requests with the observatory's own calibration and tools";
  for (std::size_t i = 0; i < s.indicators.size(); ++i) {
    const auto& ref = s.indicators[i];
    bool relative = false;
    for (const auto& g : s.goals)
      if (g.kind == config::GoalKind::precision && g.indicator.name == ref.name &&
          g.indicator.aperture == ref.aperture && std::isfinite(g.relative_sigma_max))
        relative = true;
    io::PlotPanel p;
    p.title = "precision of " + ref.label();
    p.x_label = "exposure [ks]";
    p.y_label = relative ? "sigma / |median|" : "sigma (p84 - p16)/2";
    p.log_x = p.log_y = true;
    io::PlotSeries sr;
    sr.connect = true;
    sr.colour = palette(i);
    for (const auto& e : r.exposures) {
      const auto& pi = e.indicators[i];
      if (!pi.available) continue;
      const double y = relative ? (pi.median != 0 ? pi.sigma / std::fabs(pi.median) : NAN) : pi.sigma;
      if (!(y > 0)) continue;
      sr.x.push_back(e.exposure_ks);
      sr.y.push_back(y);
    }
    p.series.push_back(sr);
    for (std::size_t g = 0; g < s.goals.size(); ++g) {
      const auto& goal = s.goals[g];
      if (goal.kind != config::GoalKind::precision || goal.indicator.name != ref.name ||
          goal.indicator.aperture != ref.aperture)
        continue;
      p.lines.push_back({false, r.goals[g].threshold, "goal", {120, 120, 120}});
      if (std::isfinite(r.goals[g].exposure_ks))
        p.lines.push_back({true, r.goals[g].exposure_ks, num(r.goals[g].exposure_ks, "%.3g") + " ks", {200, 40, 40}});
    }
    if (panels.empty()) p.note = note;
    if (!sr.x.empty()) panels.push_back(p);
  }
  {
    io::PlotPanel p;
    p.title = "class confidence";
    p.x_label = "exposure [ks]";
    p.y_label = "fraction in the dominant class";
    p.log_x = true;
    p.y_min = 0.0;
    p.y_max = 1.05;
    p.legend_outside = true;
    if (!r.exposures.empty())
      for (std::size_t j = 0; j < r.exposures.front().classes.size(); ++j) {
        io::PlotSeries sr;
        sr.label = r.exposures.front().classes[j].scheme;
        sr.connect = true;
        sr.colour = palette(j);
        sr.symbol = static_cast<int>(j % 5);
        for (const auto& e : r.exposures) {
          const auto& pc = e.classes[j];
          if (pc.dominant < 0) continue;
          sr.x.push_back(e.exposure_ks);
          sr.y.push_back(pc.probability[static_cast<std::size_t>(pc.dominant)]);
        }
        p.series.push_back(sr);
      }
    for (std::size_t g = 0; g < s.goals.size(); ++g)
      if (s.goals[g].kind == config::GoalKind::classes) {
        p.lines.push_back({false, s.goals[g].confidence, s.goals[g].scheme, {120, 120, 120}});
        if (std::isfinite(r.goals[g].exposure_ks))
          p.lines.push_back({true, r.goals[g].exposure_ks, num(r.goals[g].exposure_ks, "%.3g") + " ks", {200, 40, 40}});
      }
    if (panels.empty()) p.note = note;
    panels.push_back(p);
  }
  {
    io::PlotPanel p;
    p.title = "expected counts within R500";
    p.x_label = "exposure [ks]";
    p.y_label = "counts";
    p.log_x = p.log_y = true;
    io::PlotSeries a, b;
    a.label = "net cluster S";
    b.label = "background B";
    a.connect = b.connect = true;
    a.colour = {40, 90, 200};
    b.colour = {120, 120, 120};
    b.symbol = 1;
    for (const auto& e : r.exposures) {
      a.x.push_back(e.exposure_ks);
      a.y.push_back(e.source_r500);
      if (e.background_r500 > 0) {
        b.x.push_back(e.exposure_ks);
        b.y.push_back(e.background_r500);
      }
    }
    p.series = {a, b};
    for (std::size_t g = 0; g < s.goals.size(); ++g)
      if (s.goals[g].kind == config::GoalKind::counts) p.lines.push_back({false, s.goals[g].net_counts_min, "goal"});
    p.note = "S/N = S / sqrt(S + B); at the longest exposure " + num(r.exposures.back().sn_r500, "%.3g");
    panels.push_back(p);
  }
  return panels;
}

std::vector<io::PlotPanel> reverse_panels(const PlanResult& r) {
  const auto& v = r.reverse;
  const std::size_t nM = v.m500_msun.size();
  io::PlotPanel a;
  a.title = "class confidence at " + num(v.exposure_ks, "%.3g") + " ks (" + v.scheme + ")";
  a.note = "SIMULATION: confirm with the observatory's own calibration and tools";
  a.x_label = "M500 [Msun]";
  a.y_label = v.class_label.empty() ? "fraction in the dominant class" : "fraction " + v.class_label;
  a.log_x = true;
  a.y_min = 0.0;
  a.y_max = 1.05;
  for (std::size_t iz = 0; iz < v.redshift.size(); ++iz) {
    io::PlotSeries sr;
    sr.label = "z = " + num(v.redshift[iz], "%.3g");
    sr.connect = true;
    sr.colour = palette(iz);
    sr.symbol = static_cast<int>(iz % 5);
    for (std::size_t iM = 0; iM < nM; ++iM) {
      sr.x.push_back(v.m500_msun[iM]);
      sr.y.push_back(v.grid[iz * nM + iM].fraction);
    }
    a.series.push_back(sr);
  }
  a.lines.push_back({false, v.confidence, "confidence"});
  io::PlotPanel b;
  b.title = "class determined on the M500 x z grid";
  b.x_label = "redshift";
  b.y_label = "M500 [Msun]";
  b.log_y = true;
  io::PlotSeries yes, no, edge;
  yes.label = "determined";
  yes.colour = {40, 150, 60};
  no.label = "not determined";
  no.colour = {200, 40, 40};
  no.symbol = 4;
  edge.label = "lowest M500";
  edge.connect = true;
  edge.colour = {0, 0, 0};
  edge.symbol = 1;
  for (const auto& p : v.grid) {
    auto& s = p.determined ? yes : no;
    s.x.push_back(p.redshift);
    s.y.push_back(p.m500_msun);
  }
  for (std::size_t iz = 0; iz < v.redshift.size(); ++iz)
    if (std::isfinite(v.min_mass_at_z[iz])) {
      edge.x.push_back(v.redshift[iz]);
      edge.y.push_back(v.min_mass_at_z[iz]);
    }
  for (auto* s : {&yes, &no, &edge})
    if (!s->x.empty()) b.series.push_back(*s);
  b.legend_outside = true;
  return {a, b};
}

}  // namespace

std::string plan_text_report(const PlanResult& r, const config::PlanRunSettings& s) {
  std::ostringstream o;
  const auto& t = r.target;
  o << caution_box();
  o << "plan: " << t.name << " (" << t.kind << "), z = " << num(t.redshift, "%.4g") << ", R500 = "
    << num(t.r500_kpc, "%.4g") << " kpc (" << t.r500_source << "), " << s.instrument.name << ", "
    << num(t.band_min_keV, "%.3g") << "-" << num(t.band_max_keV, "%.3g") << " keV, N_H = " << num(t.nH_cm2, "%.3g")
    << " cm^-2\n";
  if (t.scaled)
    o << "  scaling relations: kT = " << num(t.scaling.kT_keV, "%.3g") << " keV from M500-T " << t.mt_relation
      << " (" << t.scaling.mt_reference << "); L(0.5-2 keV, <R500) = " << num(t.scaling.l_soft_erg_s, "%.3g")
      << " erg/s (relation median " << num(t.scaling.l_soft_relation_erg_s, "%.3g") << ") from L-M "
      << t.lm_relation << " (" << t.scaling.lm_reference << ")\n";
  o << "  " << s.realisations << " realisations per exposure, seed " << s.seed << "; core = "
    << num(s.core_radius_r500, "%.3g") << " R500\n\n";
  char b[256];
  std::snprintf(b, sizeof b, "%9s %10s %9s %6s %7s", "t [ks]", "S(R500)", "S(core)", "B/S+B", "S/N");
  o << b;
  for (const auto& i : s.indicators) {
    std::snprintf(b, sizeof b, " %26s", i.label().c_str());
    o << b;
  }
  if (!r.exposures.empty())
    for (const auto& pc : r.exposures.front().classes) {
      std::snprintf(b, sizeof b, " %22s", ("P(" + pc.scheme + ")").c_str());
      o << b;
    }
  o << "\n";
  for (const auto& e : r.exposures) {
    std::snprintf(b, sizeof b, "%9.4g %10.0f %9.0f %6.3f %7.1f", e.exposure_ks, e.source_r500, e.source_core,
                  e.background_fraction_r500, e.sn_r500);
    o << b;
    for (const auto& pi : e.indicators) {
      const std::string v = pi.available ? num(pi.median, "%.3g") + " [" + num(pi.p16, "%.2g") + "," +
                                               num(pi.p84, "%.2g") + "]"
                                         : "-";
      std::snprintf(b, sizeof b, " %26s", v.c_str());
      o << b;
    }
    for (const auto& pc : e.classes) {
      std::string v = "-";
      if (pc.dominant >= 0)
        v = pc.classes[static_cast<std::size_t>(pc.dominant)] + " " +
            num(pc.probability[static_cast<std::size_t>(pc.dominant)], "%.2f");
      std::snprintf(b, sizeof b, " %22s", v.c_str());
      o << b;
    }
    o << "\n";
  }
  o << "  (indicator: median [16th, 84th percentile] of the noise-bias-corrected realisations; P: the dominant "
       "class and its probability)\n\n";
  if (!r.goals.empty()) {
    o << "shortest exposure meeting each goal:\n";
    for (const auto& a : r.goals) o << "  " << a.text << ": " << answer_text(a) << "\n";
    o << "  ALL GOALS: " << answer_text(r.all_goals) << "\n\n";
  }
  if (r.has_reverse) {
    const auto& v = r.reverse;
    o << "reverse question at " << num(v.exposure_ks, "%.4g") << " ks: " << v.scheme << " class "
      << (v.class_label.empty() ? "(dominant)" : v.class_label) << " in >= " << num(100 * v.confidence, "%.0f")
      << "% of " << v.realisations << " realisations; clusters scaled with M-T " << v.mt_relation << ", L-M "
      << v.lm_relation << "\n";
    o << "  faintest cluster per redshift (grid point; between grid points, fraction linear in log M500):\n";
    for (std::size_t iz = 0; iz < v.redshift.size(); ++iz) {
      o << "    z = " << num(v.redshift[iz], "%.3g") << ": M500 >= ";
      if (!std::isfinite(v.min_mass_at_z[iz]))
        o << "none of the grid";
      else if (v.min_mass_at_edge[iz])
        o << num(v.min_mass_at_z[iz], "%.3g") << " Msun (lowest mass of the grid: an upper bound)";
      else
        o << num(v.min_mass_at_z[iz], "%.3g") << " Msun (interpolated " << num(v.min_mass_interp_at_z[iz], "%.3g")
          << ")";
      o << "\n";
    }
    o << "  most distant cluster per mass (grid point; between grid points, fraction linear in z):\n";
    for (std::size_t iM = 0; iM < v.m500_msun.size(); ++iM) {
      o << "    M500 = " << num(v.m500_msun[iM], "%.3g") << " Msun: z <= ";
      if (!std::isfinite(v.max_redshift_at_mass[iM]))
        o << "none of the grid";
      else if (v.max_redshift_at_edge[iM])
        o << num(v.max_redshift_at_mass[iM], "%.3g") << " (highest redshift of the grid: a lower bound)";
      else
        o << num(v.max_redshift_at_mass[iM], "%.3g") << " (interpolated "
          << num(v.max_redshift_interp_at_mass[iM], "%.3g") << ")";
      o << "\n";
    }
    o << "\n";
  }
  o << caution_box();
  return o.str();
}

std::vector<std::string> write_plan_outputs(const PlanResult& r, const config::PlanRunSettings& s, Log& log) {
  const std::string base = (fs::path(s.map.output.directory) / s.map.output.prefix).string();
  std::vector<std::string> written;
  auto text = [&](const std::string& suffix, const std::string& body) {
    const std::string p = base + suffix;
    write_text_file(p, body);
    written.push_back(p);
  };
  try {
    text("_plan.csv", csv_table(r, s));
    text("_goals.csv", goals_csv(r));
    text("_plan.json", json_report(r, s));
    text("_plan.txt", plan_text_report(r, s));
    text("_config.yaml", "# " + std::string(config::plan_caution_text()) + "\n" + s.resolved_yaml);
    if (r.has_reverse) text("_reverse.csv", reverse_csv(r));
    if (s.plots) {
      const auto fp = forward_panels(r, s);
      const std::string p = base + "_plan.png";
      io::write_plot_png(p, fp, 2, 1100, 420 * static_cast<int>((fp.size() + 1) / 2));
      written.push_back(p);
      if (r.has_reverse) {
        const std::string q = base + "_reverse.png";
        io::write_plot_png(q, reverse_panels(r), 2, 1200, 480);
        written.push_back(q);
      }
    }
  } catch (...) {
    remove_all(written);
    throw;
  }
  for (const auto& w : written) log.info("plan: wrote " + w);
  return written;
}

}  // namespace icmscope::pipeline
