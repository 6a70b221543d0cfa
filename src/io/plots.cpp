// Summary plots (scatter, error bars, histograms, threshold lines) with PLplot (pngcairo device).
#include "icmscope/io/plots.hpp"

#include <plplot/plstream.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <fstream>
#include <mutex>
#include <string>
#include <vector>

#include "icmscope/core/errors.hpp"
#include "io/detail/temp_output.hpp"

namespace icmscope::io {

namespace {

std::mutex& plot_mutex() {
  static std::mutex m;
  return m;
}

bool finite(double v) { return std::isfinite(v); }

// Axis transform: log10 on logarithmic axes (non-positive -> NaN).
double tx(double v, bool log) {
  if (!finite(v)) return NAN;
  if (!log) return v;
  return v > 0.0 ? std::log10(v) : NAN;
}

struct Range {
  double lo = INFINITY, hi = -INFINITY;
  void add(double v) {
    if (!finite(v)) return;
    lo = std::min(lo, v);
    hi = std::max(hi, v);
  }
  bool ok() const { return lo <= hi; }
};

// Range with a margin; a degenerate range gets a unit (or 10%) width.
void widen(Range& r, double frac) {
  if (!r.ok()) {
    r.lo = 0.0;
    r.hi = 1.0;
    return;
  }
  double w = r.hi - r.lo;
  if (!(w > 0.0)) w = std::max(1e-12, std::fabs(r.lo) * 0.2 + (r.lo == 0.0 ? 1.0 : 0.0));
  r.lo -= frac * w;
  r.hi += frac * w;
}

// Unicode symbols (the cairo driver renders them with the system font).
const char* glyph(int symbol) {
  switch (symbol) {
    case 1: return "\u25A0";  // filled square
    case 2: return "\u25B2";  // filled triangle
    case 3: return "\u25C6";  // filled diamond
    case 4: return "\u2715";  // cross
    default: return "\u25CF"; // filled circle
  }
}
const char* kFloorGlyph = "\u25BC";  // downward triangle: at or below zero on a logarithmic axis

std::string tick_label(double v) {
  // v is a linear value; powers of ten far from 1 as 10^k, others with %g (mantissa x 10^k).
  if (!(v > 0.0)) return "0";
  const double e = std::floor(std::log10(v) + 1e-9);
  const double m = v / std::pow(10.0, e);
  char b[64];
  if (e >= -3 && e <= 4) {
    std::snprintf(b, sizeof b, "%g", v);
    return b;
  }
  if (std::fabs(m - 1.0) < 1e-6) std::snprintf(b, sizeof b, "10#u%d#d", static_cast<int>(e));
  else std::snprintf(b, sizeof b, "%.3ge%d", m, static_cast<int>(e));
  return b;
}

// Major and minor tick positions (log10 values) of a logarithmic axis over [a, b].
void log_ticks(double a, double b, std::vector<double>& major, std::vector<double>& minor) {
  major.clear();
  minor.clear();
  const double span = b - a;
  const int k0 = static_cast<int>(std::floor(a)) - 1, k1 = static_cast<int>(std::ceil(b)) + 1;
  std::vector<double> mant;
  if (span >= 3.0) mant = {1.0};
  else if (span >= 0.7) mant = {1.0, 2.0, 5.0};
  else if (span >= 0.35) mant = {1.0, 2.0, 3.0, 5.0};
  else mant = {1, 2, 3, 4, 5, 6, 7, 8, 9};
  const int dstep = span > 8.0 ? 2 : 1;
  for (int k = k0; k <= k1; ++k) {
    for (int m = 1; m <= 9; ++m) {
      const double t = std::log10(m * std::pow(10.0, k));
      if (t < a - 1e-9 || t > b + 1e-9) continue;
      const bool is_major = std::find(mant.begin(), mant.end(), double(m)) != mant.end() && (m != 1 || k % dstep == 0);
      (is_major ? major : minor).push_back(t);
    }
  }
  if (major.size() < 2) {
    // A narrow range: evenly spaced values in linear units.
    const double lo = std::pow(10.0, a), hi = std::pow(10.0, b);
    const double raw = (hi - lo) / 4.0;
    const double p = std::pow(10.0, std::floor(std::log10(raw)));
    const double step = raw / p >= 5 ? 5 * p : raw / p >= 2 ? 2 * p : p;
    major.clear();
    for (double v = std::ceil(lo / step) * step; v <= hi * (1 + 1e-12); v += step)
      if (v > 0) major.push_back(std::log10(v));
  }
}

// Draws tick marks and labels of a logarithmic axis (x: bottom/top, y: left/right).
void draw_log_axis(plstream& pls, bool x_axis, double xlo, double xhi, double ylo, double yhi) {
  const double a = x_axis ? xlo : ylo, b = x_axis ? xhi : yhi;
  std::vector<double> major, minor;
  log_ticks(a, b, major, minor);
  const double len_major = 0.02, len_minor = 0.01;
  auto tick = [&](double t, double len) {
    if (x_axis) {
      const double d = len * (yhi - ylo);
      pls.join(t, ylo, t, ylo + d);
      pls.join(t, yhi, t, yhi - d);
    } else {
      const double d = len * (xhi - xlo);
      pls.join(xlo, t, xlo + d, t);
      pls.join(xhi, t, xhi - d, t);
    }
  };
  for (double t : minor) tick(t, len_minor);
  for (double t : major) {
    tick(t, len_major);
    const double pos = (t - a) / (b - a);
    const std::string lab = tick_label(std::pow(10.0, t));
    if (x_axis) pls.mtex("b", 1.5, pos, 0.5, lab.c_str());
    else pls.mtex("lv", 0.6, pos, 1.0, lab.c_str());
  }
}

struct Histo {
  std::vector<double> edges;
  std::vector<std::vector<double>> counts;  // per histogram
};

Histo bin(const PlotPanel& p, double lo, double hi) {
  Histo h;
  const int nb = std::max(1, p.bins);
  for (int k = 0; k <= nb; ++k) h.edges.push_back(lo + (hi - lo) * k / nb);
  for (const auto& hs : p.histograms) {
    std::vector<double> c(static_cast<std::size_t>(nb), 0.0);
    for (double v : hs.values) {
      const double t = tx(v, p.log_x);
      if (!finite(t)) continue;
      int k = static_cast<int>(std::floor((t - lo) / (hi - lo) * nb));
      k = std::max(0, std::min(nb - 1, k));
      c[static_cast<std::size_t>(k)] += 1.0;
    }
    h.counts.push_back(std::move(c));
  }
  return h;
}

void draw_panel(plstream& pls, const PlotPanel& p) {
  pls.vpor(p.log_y ? 0.17 : 0.15, p.legend_outside ? 0.72 : 0.95, 0.13, p.note.empty() ? 0.88 : 0.84);
  // World ranges (transformed).
  Range xr, yr;
  Range data_y;
  for (const auto& s : p.series) {
    for (std::size_t i = 0; i < s.x.size(); ++i) {
      xr.add(tx(s.x[i], p.log_x));
      if (i < s.x_lo.size()) xr.add(tx(s.x_lo[i], p.log_x));
      if (i < s.x_hi.size()) xr.add(tx(s.x_hi[i], p.log_x));
    }
    for (std::size_t i = 0; i < s.y.size(); ++i) {
      yr.add(tx(s.y[i], p.log_y));
      if (i < s.y_lo.size()) yr.add(tx(s.y_lo[i], p.log_y));
      if (i < s.y_hi.size()) yr.add(tx(s.y_hi[i], p.log_y));
    }
  }
  for (const auto& h : p.histograms)
    for (double v : h.values) xr.add(tx(v, p.log_x));
  for (const auto& l : p.lines) (l.vertical ? xr : yr).add(tx(l.value, l.vertical ? p.log_x : p.log_y));
  if (!p.x_categories.empty()) {
    xr.lo = -0.5;
    xr.hi = static_cast<double>(p.x_categories.size()) - 0.5;
  } else {
    widen(xr, 0.06);
    if (p.log_x && xr.hi - xr.lo < 1.0) {
      const double mid = 0.5 * (xr.lo + xr.hi);
      xr.lo = mid - 0.5;
      xr.hi = mid + 0.5;
    }
  }
  if (finite(p.x_min)) xr.lo = tx(p.x_min, p.log_x);
  if (finite(p.x_max)) xr.hi = tx(p.x_max, p.log_x);
  Histo hist;
  if (!p.histograms.empty()) {
    hist = bin(p, xr.lo, xr.hi);
    double m = 1.0;
    for (const auto& c : hist.counts)
      for (double v : c) m = std::max(m, v);
    yr.lo = 0.0;
    yr.hi = m * 1.25;
  } else {
    widen(yr, 0.08);
    if (p.log_y && yr.hi - yr.lo < 1.0) {  // at least a decade on a logarithmic axis
      const double mid = 0.5 * (yr.lo + yr.hi);
      yr.lo = mid - 0.5;
      yr.hi = mid + 0.5;
    }
  }
  if (finite(p.y_min)) yr.lo = tx(p.y_min, p.log_y);
  if (finite(p.y_max)) yr.hi = tx(p.y_max, p.log_y);
  if (!(xr.hi > xr.lo)) xr.hi = xr.lo + 1.0;
  if (!(yr.hi > yr.lo)) yr.hi = yr.lo + 1.0;
  pls.wind(xr.lo, xr.hi, yr.lo, yr.hi);
  pls.col0(1);
  pls.schr(0.0, 0.8);
  const bool cat = !p.x_categories.empty();
  const std::string xo = cat || p.log_x ? "bc" : "bcnst";
  const std::string yo = p.log_y ? "bc" : "bcnstv";
  double ytick = 0.0;
  int ysub = 0;
  if (!p.histograms.empty()) {  // counts: integer ticks
    const double raw = (yr.hi - yr.lo) / 5.0;
    ytick = std::max(1.0, std::ceil(raw));
    ysub = ytick > 1.0 ? static_cast<int>(ytick) : 1;
  }
  pls.box(xo.c_str(), 0.0, 0, yo.c_str(), ytick, ysub);
  if (p.log_x && !cat) draw_log_axis(pls, true, xr.lo, xr.hi, yr.lo, yr.hi);
  if (p.log_y) draw_log_axis(pls, false, xr.lo, xr.hi, yr.lo, yr.hi);
  pls.lab("", "", p.title.c_str());
  pls.mtex("b", cat ? 3.0 : 3.2, 0.5, 0.5, p.x_label.c_str());
  pls.mtex("l", p.log_y ? 4.6 : 4.0, 0.5, 0.5, p.y_label.c_str());
  if (!p.note.empty()) {
    pls.schr(0.0, 0.6);
    pls.mtex("t", 0.6, 0.5, 0.5, p.note.c_str());
    pls.schr(0.0, 0.8);
  }
  if (!p.x_categories.empty()) {
    pls.schr(0.0, 0.7);
    for (std::size_t k = 0; k < p.x_categories.size(); ++k) {
      const double pos = (static_cast<double>(k) - xr.lo) / (xr.hi - xr.lo);
      pls.mtex("b", 1.4, pos, 0.5, p.x_categories[k].c_str());
    }
    pls.schr(0.0, 0.8);
  }
  int colour_index = 2;
  auto set_colour = [&](const Rgb& c) {
    pls.scol0(colour_index, c[0], c[1], c[2]);
    pls.col0(colour_index);
    colour_index = colour_index < 14 ? colour_index + 1 : 2;
  };
  // Threshold lines (dashed) with their labels.
  for (const auto& l : p.lines) {
    const double v = tx(l.value, l.vertical ? p.log_x : p.log_y);
    if (!finite(v)) continue;
    set_colour(l.colour);
    pls.lsty(2);
    if (l.vertical) pls.join(v, yr.lo, v, yr.hi);
    else pls.join(xr.lo, v, xr.hi, v);
    pls.lsty(1);
    pls.schr(0.0, 0.6);
    if (!l.label.empty()) {
      if (l.vertical) pls.ptex(v + 0.01 * (xr.hi - xr.lo), yr.hi - 0.04 * (yr.hi - yr.lo), 0.0, 1.0, 1.0, l.label.c_str());
      else pls.ptex(xr.hi - 0.01 * (xr.hi - xr.lo), v + 0.015 * (yr.hi - yr.lo), 1.0, 0.0, 1.0, l.label.c_str());
    }
    pls.schr(0.0, 0.8);
  }
  // Histograms (step outlines).
  for (std::size_t h = 0; h < p.histograms.size(); ++h) {
    set_colour(p.histograms[h].colour);
    pls.width(2.0);
    const auto& c = hist.counts[h];
    std::vector<PLFLT> xs, ys;
    xs.push_back(hist.edges.front());
    ys.push_back(0.0);
    for (std::size_t k = 0; k < c.size(); ++k) {
      xs.push_back(hist.edges[k]);
      ys.push_back(c[k]);
      xs.push_back(hist.edges[k + 1]);
      ys.push_back(c[k]);
    }
    xs.push_back(hist.edges.back());
    ys.push_back(0.0);
    pls.line(static_cast<PLINT>(xs.size()), xs.data(), ys.data());
    pls.width(1.0);
  }
  // Series: error bars, then symbols (values at or below zero on a log axis sit on the floor).
  for (const auto& s : p.series) {
    set_colour(s.colour);
    std::vector<PLFLT> xs, ys, fx, fy;
    for (std::size_t i = 0; i < s.x.size() && i < s.y.size(); ++i) {
      double x = tx(s.x[i], p.log_x), y = tx(s.y[i], p.log_y);
      bool floor = false;
      if (p.log_x && finite(s.x[i]) && s.x[i] <= 0.0) { x = xr.lo + 0.015 * (xr.hi - xr.lo); floor = true; }
      if (p.log_y && finite(s.y[i]) && s.y[i] <= 0.0) { y = yr.lo + 0.02 * (yr.hi - yr.lo); floor = true; }
      if (!finite(x) || !finite(y)) continue;
      auto clip_lo = [](double v, double lo) { return finite(v) ? v : lo; };
      if (i < s.x_lo.size() && i < s.x_hi.size() && (finite(s.x_lo[i]) || finite(s.x_hi[i]))) {
        const double a = clip_lo(tx(s.x_lo[i], p.log_x), xr.lo), b = clip_lo(tx(s.x_hi[i], p.log_x), x);
        pls.join(a, y, b, y);
      }
      if (i < s.y_lo.size() && i < s.y_hi.size() && (finite(s.y_lo[i]) || finite(s.y_hi[i]))) {
        const double a = clip_lo(tx(s.y_lo[i], p.log_y), yr.lo), b = clip_lo(tx(s.y_hi[i], p.log_y), y);
        pls.join(x, a, x, b);
      }
      (floor ? fx : xs).push_back(x);
      (floor ? fy : ys).push_back(y);
    }
    if (s.connect && xs.size() > 1) pls.line(static_cast<PLINT>(xs.size()), xs.data(), ys.data());
    pls.schr(0.0, 0.9);
    if (!xs.empty()) pls.string(static_cast<PLINT>(xs.size()), xs.data(), ys.data(), glyph(s.symbol));
    if (!fx.empty()) pls.string(static_cast<PLINT>(fx.size()), fx.data(), fy.data(), kFloorGlyph);
    pls.schr(0.0, 0.8);
  }
  // Legend: right of the frame (legend_outside), else top left inside it.
  colour_index = 2;
  for (std::size_t k = 0; k < p.lines.size(); ++k) colour_index = colour_index < 14 ? colour_index + 1 : 2;
  if (p.legend_outside) {
    double pos = 0.97;
    pls.schr(0.0, 0.7);
    for (const auto& h : p.histograms) {
      set_colour(h.colour);
      if (h.label.empty()) continue;
      pls.mtex("rv", 1.0, pos, 0.0, "\u2014");
      pls.mtex("rv", 2.6, pos, 0.0, h.label.c_str());
      pos -= 0.06;
    }
    for (const auto& se : p.series) {
      set_colour(se.colour);
      if (se.label.empty()) continue;
      pls.mtex("rv", 1.0, pos, 0.0, glyph(se.symbol));
      pls.mtex("rv", 2.6, pos, 0.0, se.label.c_str());
      pos -= 0.06;
    }
    pls.schr(0.0, 0.8);
    pls.col0(1);
    return;
  }
  double ly = yr.hi - 0.06 * (yr.hi - yr.lo);
  const double lx = xr.lo + 0.04 * (xr.hi - xr.lo);
  pls.schr(0.0, 0.65);
  for (const auto& h : p.histograms) {
    set_colour(h.colour);
    if (h.label.empty()) continue;
    pls.width(2.0);
    pls.join(lx - 0.02 * (xr.hi - xr.lo), ly, lx + 0.01 * (xr.hi - xr.lo), ly);
    pls.width(1.0);
    pls.ptex(lx + 0.02 * (xr.hi - xr.lo), ly, 1.0, 0.0, 0.0, h.label.c_str());
    ly -= 0.06 * (yr.hi - yr.lo);
  }
  for (const auto& s : p.series) {
    set_colour(s.colour);
    if (s.label.empty()) continue;
    PLFLT x = lx, y = ly;
    pls.string(1, &x, &y, glyph(s.symbol));
    pls.ptex(lx + 0.02 * (xr.hi - xr.lo), ly, 1.0, 0.0, 0.0, s.label.c_str());
    ly -= 0.06 * (yr.hi - yr.lo);
  }
  pls.schr(0.0, 0.8);
  pls.col0(1);
}

}  // namespace

void write_plot_png(const std::string& path, const std::vector<PlotPanel>& panels, int columns, int width_px,
                    int height_px) {
  if (panels.empty()) throw core::DomainError("write_plot_png: no panels for " + path);
  if (columns < 1 || width_px < 100 || height_px < 100 || width_px > 10000 || height_px > 10000)
    throw core::DomainError("write_plot_png: bad layout or size for " + path);
  for (const auto& p : panels)
    for (const auto& s : p.series)
      if (s.x.size() != s.y.size())
        throw core::DomainError("write_plot_png: series '" + s.label + "' has " + std::to_string(s.x.size()) +
                                " x and " + std::to_string(s.y.size()) + " y values (" + path + ")");
  const int cols = std::min<int>(columns, static_cast<int>(panels.size()));
  const int rows = static_cast<int>((panels.size() + static_cast<std::size_t>(cols) - 1) / static_cast<std::size_t>(cols));
  detail::TempOutput tmp(path);
  {
    std::lock_guard<std::mutex> lock(plot_mutex());
    plstream pls;
    pls.sdev("pngcairo");
    pls.sfnam(tmp.temp_path().c_str());
    pls.spage(0.0, 0.0, width_px, height_px, 0, 0);
    pls.scolbg(255, 255, 255);
    pls.ssub(cols, rows);
    pls.init();
    pls.scol0(1, 0, 0, 0);
    for (std::size_t k = 0; k < panels.size(); ++k) {
      pls.adv(static_cast<PLINT>(k + 1));
      draw_panel(pls, panels[k]);
    }
  }
  {
    std::ifstream check(tmp.temp_path(), std::ios::binary | std::ios::ate);
    if (!check || check.tellg() <= 8) throw core::OutputError(path + ": PLplot wrote no picture");
  }
  tmp.commit();
}

}  // namespace icmscope::io
