// Quick-look PNG pictures with PLplot (pngcairo device).
#include "icmscope/io/quicklook.hpp"

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

// PLplot keeps process-wide state (streams, label callbacks): one picture at a time.
std::mutex& plplot_mutex() {
  static std::mutex m;
  return m;
}

struct StretchMap {
  Stretch kind = Stretch::Linear;
  double vmin = 0.0, vmax = 1.0, soft = 1.0;

  double forward(double v) const {  // data -> [0, 1]
    if (!std::isfinite(v)) return 0.0;
    double t = 0.0;
    switch (kind) {
      case Stretch::Linear: t = (v - vmin) / (vmax - vmin); break;
      case Stretch::Log:
        t = v <= vmin ? 0.0 : (std::log10(v) - std::log10(vmin)) / (std::log10(vmax) - std::log10(vmin));
        break;
      case Stretch::Asinh: t = std::asinh((v - vmin) / soft) / std::asinh((vmax - vmin) / soft); break;
    }
    return std::clamp(t, 0.0, 1.0);
  }
  double inverse(double t) const {  // [0, 1] -> data
    switch (kind) {
      case Stretch::Linear: return vmin + t * (vmax - vmin);
      case Stretch::Log: return std::pow(10.0, std::log10(vmin) + t * (std::log10(vmax) - std::log10(vmin)));
      case Stretch::Asinh: return vmin + soft * std::sinh(t * std::asinh((vmax - vmin) / soft));
    }
    return t;
  }
};

double percentile(std::vector<double>& v, double q) {
  if (v.empty()) return 0.0;
  const std::size_t k = static_cast<std::size_t>(std::clamp(q, 0.0, 1.0) * static_cast<double>(v.size() - 1));
  std::nth_element(v.begin(), v.begin() + static_cast<std::ptrdiff_t>(k), v.end());
  return v[k];
}

// Round length (1, 2 or 5 x 10^k) not above x.
double nice_floor(double x) {
  if (!(x > 0.0)) return 0.0;
  const double p = std::pow(10.0, std::floor(std::log10(x)));
  const double m = x / p;
  return (m >= 5.0 ? 5.0 : m >= 2.0 ? 2.0 : 1.0) * p;
}

std::string fmt_g(double v, int digits = 3) {
  char b[48];
  std::snprintf(b, sizeof b, "%.*g", digits, v);
  return b;
}

void colorbar_label(PLINT axis, PLFLT value, char* label, PLINT length, PLPointer data) {
  const auto* map = static_cast<const StretchMap*>(data);
  if (axis == PL_Z_AXIS || axis == PL_Y_AXIS || axis == PL_X_AXIS) {
    const double v = map->inverse(std::clamp(static_cast<double>(value), 0.0, 1.0));
    std::snprintf(label, static_cast<std::size_t>(length), "%.3g", v);
  }
}

// Array index (0-based) -> world coordinates (arcmin offsets) for contours.
struct GridTransform {
  double x0 = 0.0, y0 = 0.0, step = 1.0;  // world coordinate of the first pixel's lower edge, pixel size
};
void grid_transform(PLFLT x, PLFLT y, PLFLT* tx, PLFLT* ty, PLPointer data) {
  const auto* g = static_cast<const GridTransform*>(data);
  *tx = g->x0 + (x + 0.5) * g->step;
  *ty = g->y0 + (y + 0.5) * g->step;
}

StretchMap make_stretch(const core::ImageD& img, const QuicklookOptions& o) {
  std::vector<double> finite;
  finite.reserve(img.size());
  for (double v : img.pixels())
    if (std::isfinite(v)) finite.push_back(v);
  StretchMap s;
  s.kind = o.stretch;
  double vmax = o.vmax, vmin = o.vmin;
  if (std::isnan(vmax)) vmax = finite.empty() ? 1.0 : percentile(finite, 0.995);
  if (std::isnan(vmin)) {
    if (o.stretch == Stretch::Log) {
      double minpos = HUGE_VAL;
      for (double v : finite)
        if (v > 0.0) minpos = std::min(minpos, v);
      vmin = std::max(minpos, 1e-4 * vmax);
    } else {
      vmin = finite.empty() ? 0.0 : percentile(finite, 0.005);
    }
  }
  if (o.stretch == Stretch::Log) {
    if (!(vmax > 0.0)) vmax = 1.0;  // nothing positive to show
    if (!(vmin > 0.0) || !std::isfinite(vmin)) vmin = 1e-4 * vmax;
  }
  if (!(vmax > vmin)) vmax = vmin + (vmin != 0.0 ? std::fabs(vmin) : 1.0);  // flat image
  s.vmin = vmin;
  s.vmax = vmax;
  s.soft = std::isnan(o.asinh_softening) ? 0.05 * (vmax - vmin) : o.asinh_softening;
  if (!(s.soft > 0.0)) throw core::DomainError("quicklook: asinh_softening must be > 0");
  return s;
}

}  // namespace

void write_quicklook_png(const std::string& path, const core::ImageD& img, const QuicklookOptions& o) {
  if (img.empty()) throw core::DomainError(path + ": quicklook of an empty image");
  if (o.width_px < 64 || o.height_px < 64 || o.width_px > 10000 || o.height_px > 10000)
    throw core::DomainError(path + ": quicklook size must be 64-10000 pixels a side");
  if (!(img.pixel_arcsec() > 0.0)) throw core::DomainError(path + ": quicklook needs pixel_arcsec > 0");
  if (o.stretch == Stretch::Log && !std::isnan(o.vmin) && !(o.vmin > 0.0))
    throw core::DomainError(path + ": log stretch needs vmin > 0");
  if (!o.overlay.empty() && !o.overlay.same_grid(img))
    throw core::DomainError(path + ": quicklook overlay differs in shape from the image");
  const StretchMap sm = make_stretch(img, o);

  detail::TempOutput tmp(path);
  {  // PLplot exits the process when it cannot open its file: make sure it can.
    std::ofstream probe(tmp.temp_path(), std::ios::binary);
    if (!probe) throw core::OutputError(path + ": cannot create a file in the target directory");
  }

  const int nx = img.nx(), ny = img.ny();
  std::vector<PLFLT> store(static_cast<std::size_t>(nx) * static_cast<std::size_t>(ny));
  std::vector<const PLFLT*> rows(static_cast<std::size_t>(nx));
  for (int ix = 0; ix < nx; ++ix) {  // PLplot wants data[ix][iy]
    PLFLT* r = store.data() + static_cast<std::size_t>(ix) * static_cast<std::size_t>(ny);
    rows[static_cast<std::size_t>(ix)] = r;
    for (int iy = 0; iy < ny; ++iy) r[iy] = sm.forward(img(ix, iy));
  }
  const double pa = img.pixel_arcsec() / 60.0;  // arcmin per pixel
  const auto& an = img.anchor();
  const double x0 = (0.5 - an.crpix1) * pa, x1 = (nx + 0.5 - an.crpix1) * pa;
  const double y0 = (0.5 - an.crpix2) * pa, y1 = (ny + 0.5 - an.crpix2) * pa;

  {
    std::lock_guard<std::mutex> lock(plplot_mutex());
    plstream pls;
    pls.sdev("pngcairo");
    pls.sfnam(tmp.temp_path().c_str());
    pls.spage(0.0, 0.0, o.width_px, o.height_px, 0, 0);
    pls.scolbg(255, 255, 255);
    pls.init();
    pls.scol0(1, 0, 0, 0);        // axes and text
    pls.scol0(2, 255, 255, 255);  // scale bar
    // cmap1: dark violet -> red -> orange -> pale yellow (monotonic lightness).
    const PLFLT pos[5] = {0.0, 0.25, 0.5, 0.75, 1.0};
    const PLFLT r[5] = {0.0 / 255, 87.0 / 255, 188.0 / 255, 249.0 / 255, 252.0 / 255};
    const PLFLT g[5] = {0.0 / 255, 16.0 / 255, 55.0 / 255, 142.0 / 255, 255.0 / 255};
    const PLFLT b[5] = {4.0 / 255, 110.0 / 255, 84.0 / 255, 9.0 / 255, 164.0 / 255};
    pls.scmap1n(256);
    pls.scmap1l(true, 5, pos, r, g, b, nullptr);

    pls.adv(0);
    pls.col0(1);
    pls.schr(0.0, 0.9);
    // Keep square pixels: fit the map's aspect into the plotting area.
    const double aspect = (y1 - y0) / (x1 - x0);
    pls.vpas(0.10, 0.80, 0.10, 0.90, aspect);
    pls.wind(x0, x1, y0, y1);
    pls.image(rows.data(), nx, ny, x0, x1, y0, y1, 0.0, 1.0, x0, x1, y0, y1);
    if (!o.overlay.empty() && !o.overlay_levels.empty() && nx > 1 && ny > 1) {
      std::vector<PLFLT> ostore(static_cast<std::size_t>(nx) * static_cast<std::size_t>(ny));
      std::vector<const PLFLT*> orows(static_cast<std::size_t>(nx));
      for (int ix = 0; ix < nx; ++ix) {
        PLFLT* r = ostore.data() + static_cast<std::size_t>(ix) * static_cast<std::size_t>(ny);
        orows[static_cast<std::size_t>(ix)] = r;
        for (int iy = 0; iy < ny; ++iy) r[iy] = std::isfinite(o.overlay(ix, iy)) ? o.overlay(ix, iy) : 0.0;
      }
      GridTransform gt{x0, y0, pa};
      pls.scol0(3, o.overlay_rgb[0], o.overlay_rgb[1], o.overlay_rgb[2]);
      pls.col0(3);
      pls.width(1.5);
      pls.cont(orows.data(), nx, ny, 1, nx, 1, ny, o.overlay_levels.data(),
               static_cast<PLINT>(o.overlay_levels.size()), grid_transform, &gt);
      pls.width(1.0);
      pls.col0(1);
    }
    pls.box("bcnst", 0.0, 0, "bcnstv", 0.0, 0);
    pls.lab("x offset [arcmin]", "y offset [arcmin]", o.title.c_str());

    if (o.show_scale_bar) {
      double len_am = 0.0;
      std::string text;
      const double width_am = x1 - x0;
      if (o.kpc_per_arcsec > 0.0) {
        const double kpa = o.kpc_per_arcsec * 60.0;  // kpc per arcmin
        const double L = o.scale_bar_kpc > 0.0 ? o.scale_bar_kpc : nice_floor(0.25 * width_am * kpa);
        len_am = L / kpa;
        text = fmt_g(L, 4) + " kpc = " + fmt_g(len_am, 3) + "'";
      } else {
        len_am = nice_floor(0.25 * width_am);
        text = fmt_g(len_am, 3) + "'";
      }
      if (len_am > 0.0 && len_am < width_am) {
        const double bx = x0 + 0.05 * width_am, by = y0 + 0.07 * (y1 - y0);
        pls.col0(2);
        pls.width(3.0);
        pls.join(bx, by, bx + len_am, by);
        pls.width(1.0);
        pls.ptex(bx, by + 0.025 * (y1 - y0), 1.0, 0.0, 0.0, text.c_str());  // left-justified: never clipped
        pls.col0(1);
      }
    }

    // Overlays (pixel -> world: 1-based pixel minus CRPIX, in arcmin).
    if (!o.circles.empty() || !o.markers.empty()) {
      pls.scol0(3, 120, 230, 255);  // circles
      pls.scol0(4, 90, 255, 120);   // markers
      const auto wx = [&](double x) { return (x + 1.0 - an.crpix1) * pa; };
      const auto wy = [&](double y) { return (y + 1.0 - an.crpix2) * pa; };
      pls.width(1.5);
      pls.schr(0.0, 0.6);
      pls.col0(3);
      for (const auto& c : o.circles) {
        if (!(c.radius_px > 0.0) || !std::isfinite(c.x) || !std::isfinite(c.y)) continue;
        const double r = c.radius_px * pa;
        pls.arc(wx(c.x), wy(c.y), r, r, 0.0, 360.0, 0.0, false);
        const double ly = wy(c.y) + r + 0.01 * (y1 - y0);
        if (!c.label.empty() && ly < y1) pls.ptex(wx(c.x), ly, 1.0, 0.0, 0.5, c.label.c_str());
      }
      pls.col0(4);
      pls.ssym(0.0, 1.6);
      for (const auto& m : o.markers) {
        if (!std::isfinite(m.x) || !std::isfinite(m.y)) continue;
        PLFLT px = wx(m.x), py = wy(m.y);
        pls.poin(1, &px, &py, m.cross ? 5 : 2);
        if (!m.label.empty()) {
          const double dx = (m.label_left ? -0.015 : 0.015) * (x1 - x0);
          pls.ptex(px + dx, py, 1.0, 0.0, m.label_left ? 1.0 : 0.0, m.label.c_str());
        }
      }
      pls.ssym(0.0, 1.0);
      pls.schr(0.0, 0.9);
      pls.width(1.0);
      pls.col0(1);
    }

    // Colour bar in stretched units, labelled with data values.
    pls.slabelfunc(colorbar_label, const_cast<StretchMap*>(&sm));
    PLFLT cb_w = 0.0, cb_h = 0.0;
    PLINT label_opts[1] = {PL_COLORBAR_LABEL_RIGHT};
    const char* labels[1] = {o.colorbar_label.c_str()};
    const char* axis_opts[1] = {"bcvtmo"};
    PLFLT ticks[1] = {0.0};
    PLINT sub_ticks[1] = {0};
    const int nv = 128;
    std::vector<PLFLT> vals(nv);
    for (int i = 0; i < nv; ++i) vals[static_cast<std::size_t>(i)] = static_cast<double>(i) / (nv - 1);
    const PLFLT* values[1] = {vals.data()};
    PLINT n_values[1] = {nv};
    pls.colorbar(&cb_w, &cb_h, PL_COLORBAR_IMAGE, PL_POSITION_RIGHT | PL_POSITION_VIEWPORT, 0.03, 0.0, 0.04,
                 1.0, 0, 1, 1, 0.0, 0.0, 0, 0.0, o.colorbar_label.empty() ? 0 : 1, label_opts, labels, 1, axis_opts,
                 ticks, sub_ticks, n_values, values);
    pls.slabelfunc(nullptr, nullptr);
  }  // ~plstream ends the stream and closes the file

  {
    std::ifstream check(tmp.temp_path(), std::ios::binary | std::ios::ate);
    if (!check || check.tellg() <= 8) throw core::OutputError(path + ": PLplot wrote no picture");
  }
  tmp.commit();
}

}  // namespace icmscope::io
