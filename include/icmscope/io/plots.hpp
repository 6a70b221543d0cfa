#pragma once
// Summary plots as PNG files, drawn with PLplot's cairo PNG device (no
// display needed): panels of scatter points with error bars, histograms and
// threshold lines, on linear or logarithmic axes. Written under a temporary
// name and renamed when complete.
//
// PLplot keeps process-wide state: draw plots from one thread at a time (the
// survey draws its plots after every target has finished).
#include <array>
#include <limits>
#include <string>
#include <vector>

namespace icmscope::io {

using Rgb = std::array<int, 3>;

// Points (x, y) with optional asymmetric error bars (absolute lower / upper
// ends; empty vectors or NaN entries = no bar). On a logarithmic axis,
// non-positive values are drawn at the axis floor with a downward arrow-like
// open symbol (upper limits).
struct PlotSeries {
  std::string label;           // legend entry ("" = none)
  std::vector<double> x, y;
  std::vector<double> x_lo, x_hi, y_lo, y_hi;
  Rgb colour{0, 0, 0};
  int symbol = 0;              // 0 circle, 1 square, 2 triangle, 3 diamond, 4 cross
  bool connect = false;        // join the points with a line
};

// Values binned into a histogram (outline), on the x axis of the panel.
struct PlotHistogram {
  std::string label;
  std::vector<double> values;
  Rgb colour{0, 0, 0};
};

// A vertical (x = value) or horizontal (y = value) line, dashed, labelled.
struct PlotLine {
  bool vertical = true;
  double value = 0.0;
  std::string label;
  Rgb colour{120, 120, 120};
};

struct PlotPanel {
  std::string title, x_label, y_label;
  bool log_x = false, log_y = false;
  // Axis ranges; NaN = automatic (data and lines, with a margin).
  double x_min = std::numeric_limits<double>::quiet_NaN(), x_max = std::numeric_limits<double>::quiet_NaN();
  double y_min = std::numeric_limits<double>::quiet_NaN(), y_max = std::numeric_limits<double>::quiet_NaN();
  std::vector<PlotSeries> series;
  std::vector<PlotHistogram> histograms;  // the y axis counts entries per bin
  int bins = 12;
  std::vector<PlotLine> lines;
  // Categorical x axis: labels at x = 0, 1, 2 ... (replaces the numeric labels).
  std::vector<std::string> x_categories;
  std::string note;  // a line of small text under the title ("" = none)
  bool legend_outside = false;  // legend right of the frame (else top left inside it)
};

// Draws the panels on a grid of `columns` columns (rows as needed).
// Throws core::DomainError for no panels / a bad size and core::OutputError
// naming the file when it cannot be written.
void write_plot_png(const std::string& path, const std::vector<PlotPanel>& panels, int columns = 1,
                    int width_px = 900, int height_px = 700);

}  // namespace icmscope::io
