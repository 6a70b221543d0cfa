#include "icmscope/pipeline/survey_summary.hpp"

#include <cmath>
#include <cstdio>
#include <map>
#include <set>
#include <sstream>

#include "icmscope/io/plots.hpp"

namespace icmscope::pipeline {

namespace {

// Catalog column names of the plotted indicators (see indicator_column).
const char* kC = "c_100_500kpc";
const char* kW = "w_500kpc";
const char* kP3 = "P3_P0_500kpc";
// Cassano et al. 2010 (ApJL 721, L82) cuts, morphology.md sec. 8: from memory, unverified.
constexpr double kCutC = 0.2, kCutW = 0.012, kCutP3 = 1.2e-7;

std::string fmt(double v, const char* f = "%.3g") {
  if (!std::isfinite(v)) return "-";
  char b[64];
  std::snprintf(b, sizeof b, f, v);
  return b;
}

io::Rgb class_colour(const std::string& cls) {
  if (cls == "relaxed") return {40, 90, 200};
  if (cls == "intermediate") return {230, 150, 20};
  if (cls == "disturbed") return {200, 40, 40};
  return {130, 130, 130};
}

// The bias-corrected value with a bar of +-sigma, sigma = (p84 - p16) / 2 of the realisations
// (the percentiles themselves describe the realisations, which scatter about the
// uncorrected mean).
void add_point(std::vector<double>& v, std::vector<double>& lo, std::vector<double>& hi, const CatalogRow& r,
               const std::string& col) {
  const double x = r.number(col);
  const double sig = 0.5 * (r.number(col + "_p84") - r.number(col + "_p16"));
  v.push_back(x);
  lo.push_back(std::isfinite(sig) ? x - sig : NAN);
  hi.push_back(std::isfinite(sig) ? x + sig : NAN);
}

bool has_column(const Catalog& c, const std::string& name) {
  for (const auto& col : c.columns)
    if (col.name == name) return true;
  return false;
}

// c against another indicator, one series per (class, kind).
io::PlotPanel plane(const Catalog& c, const std::string& xcol, const std::string& xlabel, double xcut,
                    const std::string& xcut_label) {
  io::PlotPanel p;
  p.title = "c(100/500 kpc) vs " + xlabel;
  p.x_label = xlabel;
  p.y_label = "c (100/500 kpc)";
  p.log_x = p.log_y = true;
  p.note = "bias-corrected; bars \u00B1(p84 - p16)/2; \u25BC: \u2264 0; cuts: Cassano et al. 2010 (from memory, unverified)";
  p.legend_outside = true;
  std::map<std::string, io::PlotSeries> series;
  std::vector<std::string> order;
  for (const auto& r : c.rows) {
    const std::string cls = r.str("class_cassano2010").empty() ? "n/a" : r.str("class_cassano2010");
    const bool sim = r.str("kind") == "simulated";
    const std::string key = cls + (sim ? " (simulated)" : " (observed)");
    if (!series.count(key)) {
      io::PlotSeries s;
      s.label = key;
      s.colour = class_colour(cls);
      s.symbol = sim ? 0 : 1;
      series[key] = s;
      order.push_back(key);
    }
    auto& s = series[key];
    add_point(s.x, s.x_lo, s.x_hi, r, xcol);
    add_point(s.y, s.y_lo, s.y_hi, r, kC);
  }
  for (const auto& k : order) p.series.push_back(series[k]);
  p.lines.push_back({true, xcut, xcut_label, {90, 90, 90}});
  p.lines.push_back({false, kCutC, "c = 0.2", {90, 90, 90}});
  return p;
}

io::PlotPanel histogram(const Catalog& c, const std::string& col, const std::string& label, bool log, double cut,
                        const std::string& cut_label) {
  io::PlotPanel p;
  p.title = label;
  p.x_label = log ? label + " (log scale)" : label;
  p.y_label = "targets";
  p.log_x = log;
  p.bins = 10;
  io::PlotHistogram sim{"simulated", {}, {40, 90, 200}}, obs{"observed", {}, {200, 40, 40}};
  for (const auto& r : c.rows) (r.str("kind") == "simulated" ? sim : obs).values.push_back(r.number(col));
  if (!sim.values.empty()) p.histograms.push_back(sim);
  if (!obs.values.empty()) p.histograms.push_back(obs);
  p.lines.push_back({true, cut, cut_label, {90, 90, 90}});
  return p;
}

}  // namespace

std::vector<std::string> write_survey_plots(const Catalog& c, const std::string& prefix) {
  std::vector<std::string> out;
  const bool have_c = has_column(c, kC), have_w = has_column(c, kW), have_p3 = has_column(c, kP3);
  if (have_c && have_w) {
    const std::string p = prefix + "_c_w.png";
    io::write_plot_png(p, {plane(c, kW, "w (500 kpc)", kCutW, "w = 0.012")}, 1, 900, 720);
    out.push_back(p);
  }
  if (have_c && have_p3) {
    const std::string p = prefix + "_c_p3.png";
    io::write_plot_png(p, {plane(c, kP3, "P3/P0 (500 kpc)", kCutP3, "P3/P0 = 1.2e-7")}, 1, 900, 720);
    out.push_back(p);
  }
  std::vector<io::PlotPanel> h;
  if (have_c) h.push_back(histogram(c, kC, "c (100/500 kpc)", false, kCutC, "0.2"));
  if (have_w) h.push_back(histogram(c, kW, "w (500 kpc)", true, kCutW, "0.012"));
  if (have_p3) h.push_back(histogram(c, kP3, "P3/P0 (500 kpc)", true, kCutP3, "1.2e-7"));
  if (!h.empty()) {
    const std::string p = prefix + "_histograms.png";
    io::write_plot_png(p, h, static_cast<int>(h.size()), 1350, 480);
    out.push_back(p);
  }
  // The cluster seen along the most lines of sight (then the most rows; first in target order on ties).
  std::map<std::string, std::vector<const CatalogRow*>> by_cluster;
  std::vector<std::string> order;
  for (const auto& r : c.rows) {
    if (r.str("kind") != "simulated") continue;
    const std::string k = r.str("cluster");
    if (!by_cluster.count(k)) order.push_back(k);
    by_cluster[k].push_back(&r);
  }
  std::string best;
  std::size_t best_los = 0, best_rows = 1;
  for (const auto& k : order) {
    std::set<std::string> los;
    for (const auto* r : by_cluster[k]) los.insert(r->str("line_of_sight"));
    const std::size_t nr = by_cluster[k].size();
    if (nr > 1 && (los.size() > best_los || (los.size() == best_los && nr > best_rows))) {
      best = k;
      best_los = los.size();
      best_rows = nr;
    }
  }
  if (!best.empty() && (have_c || have_w || have_p3)) {
    const auto& rows = by_cluster[best];
    bool inst_vary = false, exp_vary = false;
    for (const auto* q : rows) {
      inst_vary = inst_vary || q->str("instrument") != rows.front()->str("instrument");
      exp_vary = exp_vary || q->number("exposure_ks") != rows.front()->number("exposure_ks");
    }
    // Short labels: the line of sight, plus the instrument and exposure when they vary.
    std::vector<std::string> cats;
    for (const auto* r : rows) {
      std::string lab = r->str("line_of_sight");
      if (inst_vary) lab += " " + r->str("instrument");
      if (exp_vary) lab += " " + fmt(r->number("exposure_ks"), "%g") + "ks";
      cats.push_back(lab);
    }
    std::vector<io::PlotPanel> panels;
    auto panel = [&](const char* col, const std::string& label, double cut, const std::string& cut_label, bool log) {
      io::PlotPanel p;
      p.title = best + ": " + label;
      p.x_label = "line of sight";
      p.y_label = label;
      p.log_y = log;
      p.x_categories = cats;
      io::PlotSeries s;
      s.colour = {40, 90, 200};
      for (std::size_t k = 0; k < rows.size(); ++k) {
        s.x.push_back(static_cast<double>(k));
        add_point(s.y, s.y_lo, s.y_hi, *rows[k], col);
      }
      p.series.push_back(s);
      p.lines.push_back({false, cut, cut_label, {200, 40, 40}});
      panels.push_back(p);
    };
    if (have_c) panel(kC, "c (100/500 kpc)", kCutC, "0.2", false);
    if (have_w) panel(kW, "w (500 kpc)", kCutW, "0.012", true);
    // Within R500: Pratt et al. 2009 / Boehringer et al. 2010 (w < 0.01) and Weissmann et al. 2013 (P3/P0 < 1e-7).
    if (has_column(c, "w_R500")) panel("w_R500", "w (R500)", 0.01, "0.01", true);
    if (has_column(c, "P3_P0_R500")) panel("P3_P0_R500", "P3/P0 (R500)", 1e-7, "1e-7", true);
    else if (have_p3) panel(kP3, "P3/P0 (500 kpc)", kCutP3, "1.2e-7", true);
    const std::string p = prefix + "_los.png";
    const int cols = panels.size() > 3 ? 2 : static_cast<int>(panels.size());
    io::write_plot_png(p, panels, cols, cols == 2 ? 1100 : 1350, panels.size() > 3 ? 900 : 480);
    out.push_back(p);
  }
  return out;
}

std::string survey_summary_text(const std::string& name, const Catalog& c, const SurveyRunResult& r) {
  std::ostringstream o;
  char line[512];
  o << "survey " << name << ": " << r.targets << " targets, " << c.rows.size() << " in the catalog (" << r.ran
    << " run now, " << r.resumed << " finished before), " << r.failures.size() << " failed; " << fmt(r.seconds, "%.1f")
    << " s\n";
  std::snprintf(line, sizeof line, "  %-3s %-34s %-4s %9s %7s %8s %9s %9s  %-12s %-12s %s\n", "#", "target", "kind",
                "net cts", "S/N", "c", "w", "P3/P0", "cassano2010", "w_two_class", "flags");
  o << line;
  std::snprintf(line, sizeof line, "  %-3s %-34s %-4s %9s %7s %8s %9s %9s  %-12s %-12s\n", "", "", "", "", "",
                "100/500", "500 kpc", "500 kpc", "", "(R500)");
  o << line;
  for (const auto& row : c.rows) {
    std::string id = row.str("target_id");
    if (id.size() > 34) id = id.substr(0, 33) + "~";
    std::string flags = row.str("flags");
    for (char& ch : flags)
      if (ch == ';') ch = ',';
    std::snprintf(line, sizeof line, "  %-3s %-34s %-4s %9s %7s %8s %9s %9s  %-12s %-12s %s\n",
                  row.str("target_index").c_str(), id.c_str(), row.str("kind") == "simulated" ? "sim" : "obs",
                  fmt(row.number("net_counts"), "%.4g").c_str(), fmt(row.number("snr"), "%.1f").c_str(),
                  fmt(row.number(kC), "%.3f").c_str(), fmt(row.number(kW), "%.2e").c_str(),
                  fmt(row.number(kP3), "%.2e").c_str(),
                  (row.str("class_cassano2010").empty() ? "-" : row.str("class_cassano2010")).c_str(),
                  (row.str("class_w_two_class").empty() ? "-" : row.str("class_w_two_class")).c_str(), flags.c_str());
    o << line;
  }
  if (!r.failures.empty()) {
    o << "failed targets (the catalog holds the others):\n";
    for (const auto& f : r.failures) o << "  " << f.index + 1 << " " << f.target_id << ": " << f.reason << "\n";
  }
  o << "catalog:  " << r.catalog_csv << "\n          " << r.catalog_fits << "\n";
  o << "columns:  " << r.columns_csv << "\n";
  o << "failures: " << r.failures_csv << "\n";
  for (std::size_t k = 0; k < r.plots.size(); ++k) o << (k ? "          " : "plots:    ") << r.plots[k] << "\n";
  o << "targets:  " << r.output_directory << "/targets/<id>/ (FITS, quick-look PNG, JSON, log, record)\n";
  o << "log:      " << r.log_file << "\n";
  return o.str();
}

}  // namespace icmscope::pipeline
