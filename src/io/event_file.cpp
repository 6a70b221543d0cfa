// FITS event lists: see include/icmscope/io/event_file.hpp.
#include "icmscope/io/event_file.hpp"

#include <fitsio.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include "icmscope/core/errors.hpp"
#include "icmscope/instrument/pointing.hpp"
#include "io/detail/fits_util.hpp"
#include "io/detail/fits_write.hpp"
#include "io/detail/ogip_table.hpp"
#include "io/detail/temp_output.hpp"

namespace icmscope::io {

namespace {

using detail::HduContext;

[[noreturn]] void fail_out(int st, const HduContext& ctx, const std::string& what) {
  detail::throw_fits(st, ctx.file, ctx.hdu, what, true);
}

void key_str(fitsfile* f, const char* k, const std::string& v, const char* com, const HduContext& ctx) {
  int st = 0;
  if (fits_update_key(f, TSTRING, k, const_cast<char*>(v.c_str()), const_cast<char*>(com), &st))
    fail_out(st, ctx, std::string("writing keyword ") + k);
}
void key_dbl(fitsfile* f, const char* k, double v, const char* com, const HduContext& ctx) {
  int st = 0;
  if (fits_update_key_dbl(f, k, v, -15, com, &st)) fail_out(st, ctx, std::string("writing keyword ") + k);
}
void key_lng(fitsfile* f, const char* k, long long v, const char* com, const HduContext& ctx) {
  int st = 0;
  LONGLONG x = v;
  if (fits_update_key(f, TLONGLONG, k, &x, const_cast<char*>(com), &st))
    fail_out(st, ctx, std::string("writing keyword ") + k);
}

void time_keys(fitsfile* f, const EventFileSpec& s, double ontime, const HduContext& ctx) {
  key_dbl(f, "TSTART", s.gti.front().start_s, "[s] start of the observation", ctx);
  key_dbl(f, "TSTOP", s.gti.back().stop_s, "[s] end of the observation", ctx);
  key_dbl(f, "EXPOSURE", s.exposure_s, "[s] live time", ctx);
  key_dbl(f, "ONTIME", ontime, "[s] sum of the good time intervals", ctx);
  key_dbl(f, "LIVETIME", s.exposure_s, "[s] on-time minus dead time", ctx);
  key_dbl(f, "MJDREF", s.mjdref, "[d] MJD of TIME = 0", ctx);
  key_str(f, "TIMESYS", s.timesys, "time system", ctx);
  key_str(f, "TIMEUNIT", "s", "unit of TIME, TSTART, TSTOP, START, STOP", ctx);
  key_str(f, "TIMEREF", "LOCAL", "no barycentric correction", ctx);
}

void create_table(fitsfile* f, const char* extname, const std::vector<const char*>& names,
                  const std::vector<const char*>& forms, const std::vector<const char*>& units, const HduContext& ctx) {
  int st = 0;
  if (fits_create_tbl(f, BINARY_TBL, 0, static_cast<int>(names.size()), const_cast<char**>(names.data()),
                      const_cast<char**>(forms.data()), const_cast<char**>(units.data()), extname, &st))
    fail_out(st, ctx, "creating the table");
}

}  // namespace

void write_event_file(const std::string& path, const instrument::EventList& ev, const EventFileSpec& s) {
  const std::size_t n = ev.size();
  if (ev.y.size() != n || ev.energy_keV.size() != n || ev.pi.size() != n || ev.time_s.size() != n ||
      ev.component.size() != n)
    throw core::DomainError(path + ": event columns of different lengths");
  if (ev.nx <= 0 || ev.ny <= 0) throw core::DomainError(path + ": the event list has no sky grid (nx, ny)");
  if (!(ev.anchor.pixel_arcsec > 0)) throw core::DomainError(path + ": the event grid has no pixel scale");
  const double ontime = instrument::gti_total_s(s.gti);
  if (s.pi_max < s.pi_min) throw core::DomainError(path + ": pi_max < pi_min");
  detail::check_keywords(s.keywords, path + ", HDU PRIMARY", false);

  // Sky coordinates of every event (TAN of the grid anchor).
  std::vector<double> ra(n), dec(n);
  const std::ptrdiff_t ns = static_cast<std::ptrdiff_t>(n);
#pragma omp parallel for schedule(static)
  for (std::ptrdiff_t i = 0; i < ns; ++i) {
    const auto p = instrument::pixel_to_sky(ev.anchor, ev.x[i], ev.y[i]);
    ra[i] = p.ra_deg;
    dec[i] = p.dec_deg;
  }

  detail::TempOutput tmp(path);
  {
    detail::FitsHandle f;
    int st = 0;
    HduContext ctx{path, "PRIMARY"};
    const std::string target = "!" + tmp.temp_path();
    if (fits_create_file(f.out(), target.c_str(), &st)) fail_out(st, ctx, "cannot create the file");
    if (fits_create_img(f.get(), BYTE_IMG, 0, nullptr, &st)) fail_out(st, ctx, "creating the primary HDU");
    detail::write_standard_keys(f.get(), ctx);
    detail::write_keywords(f.get(), s.keywords, ctx);
    time_keys(f.get(), s, ontime, ctx);
    detail::write_history(f.get(), s.history, ctx);
    detail::write_checksum(f.get(), ctx);

    // EVENTS
    ctx.hdu = "EVENTS";
    create_table(f.get(), "EVENTS", {"TIME", "X", "Y", "RA", "DEC", "ENERGY", "PI", "COMPONENT"},
                 {"1D", "1D", "1D", "1D", "1D", "1E", "1J", "1B"}, {"s", "pixel", "pixel", "deg", "deg", "keV", "chan", ""},
                 ctx);
    detail::write_standard_keys(f.get(), ctx);
    key_str(f.get(), "HDUCLASS", "OGIP", "format conforms to OGIP standard", ctx);
    key_str(f.get(), "HDUCLAS1", "EVENTS", "photon event list", ctx);
    key_str(f.get(), "HDUCLAS2", "ALL", "all events (simulated)", ctx);
    // DATE-OBS / MJD-OBS are image-header keywords; in a table they would read as
    // column WCS keywords of the wrong form: primary header only.
    std::vector<FitsKeyword> table_keys;
    for (const auto& k : s.keywords) {
      const std::string u = detail::fits_upper(k.key);
      if (u != "DATE-OBS" && u != "MJD-OBS") table_keys.push_back(k);
    }
    detail::write_keywords(f.get(), table_keys, ctx);
    time_keys(f.get(), s, ontime, ctx);
    const auto& a = ev.anchor;
    // RADESYS in its pixel-list form RADEna (Greisen & Calabretta 2002, Table 2).
    key_str(f.get(), "RADE2", "ICRS", "celestial reference frame of X/Y", ctx);
    key_str(f.get(), "RADE3", "ICRS", "celestial reference frame of X/Y", ctx);
    key_str(f.get(), "TCTYP2", "RA---TAN", "sky X: gnomonic RA", ctx);
    key_str(f.get(), "TCUNI2", "deg", "", ctx);
    key_dbl(f.get(), "TCRVL2", a.ra_deg, "[deg] RA at the reference pixel", ctx);
    key_dbl(f.get(), "TCRPX2", a.crpix1, "reference pixel (1-based)", ctx);
    key_dbl(f.get(), "TCDLT2", -a.pixel_arcsec / 3600.0, "[deg] pixel size (RA grows to the left)", ctx);
    key_dbl(f.get(), "TLMIN2", 0.5, "first pixel's lower edge", ctx);
    key_dbl(f.get(), "TLMAX2", ev.nx + 0.5, "last pixel's upper edge", ctx);
    key_str(f.get(), "TCTYP3", "DEC--TAN", "sky Y: gnomonic Dec", ctx);
    key_str(f.get(), "TCUNI3", "deg", "", ctx);
    key_dbl(f.get(), "TCRVL3", a.dec_deg, "[deg] Dec at the reference pixel", ctx);
    key_dbl(f.get(), "TCRPX3", a.crpix2, "reference pixel (1-based)", ctx);
    key_dbl(f.get(), "TCDLT3", a.pixel_arcsec / 3600.0, "[deg] pixel size", ctx);
    key_dbl(f.get(), "TLMIN3", 0.5, "first pixel's lower edge", ctx);
    key_dbl(f.get(), "TLMAX3", ev.ny + 0.5, "last pixel's upper edge", ctx);
    key_lng(f.get(), "TLMIN7", s.pi_min, "first PI channel", ctx);
    key_lng(f.get(), "TLMAX7", s.pi_max, "last PI channel", ctx);
    key_lng(f.get(), "TLMIN8", 0, "component: 0 cluster, 1 point sources, 2 sky, 3 particle", ctx);
    key_lng(f.get(), "TLMAX8", 3, "", ctx);
    detail::write_history(f.get(), s.history, ctx);
    if (n > 0) {
      const LONGLONG rows = static_cast<LONGLONG>(n);
      // Row chunks keep CFITSIO's buffering efficient and memory bounded.
      const LONGLONG chunk = 1 << 16;
      std::vector<int> pi(ev.pi.begin(), ev.pi.end());
      for (LONGLONG r0 = 0; r0 < rows; r0 += chunk) {
        const LONGLONG m = std::min(chunk, rows - r0);
        const std::size_t o = static_cast<std::size_t>(r0);
        fits_write_col(f.get(), TDOUBLE, 1, r0 + 1, 1, m, const_cast<double*>(ev.time_s.data() + o), &st);
        fits_write_col(f.get(), TDOUBLE, 2, r0 + 1, 1, m, const_cast<double*>(ev.x.data() + o), &st);
        fits_write_col(f.get(), TDOUBLE, 3, r0 + 1, 1, m, const_cast<double*>(ev.y.data() + o), &st);
        fits_write_col(f.get(), TDOUBLE, 4, r0 + 1, 1, m, ra.data() + o, &st);
        fits_write_col(f.get(), TDOUBLE, 5, r0 + 1, 1, m, dec.data() + o, &st);
        fits_write_col(f.get(), TFLOAT, 6, r0 + 1, 1, m, const_cast<float*>(ev.energy_keV.data() + o), &st);
        fits_write_col(f.get(), TINT, 7, r0 + 1, 1, m, pi.data() + o, &st);
        fits_write_col(f.get(), TBYTE, 8, r0 + 1, 1, m, const_cast<unsigned char*>(ev.component.data() + o), &st);
        if (st) fail_out(st, ctx, "writing rows " + std::to_string(r0 + 1) + "-" + std::to_string(r0 + m));
      }
    }
    detail::write_checksum(f.get(), ctx);

    // GTI
    ctx.hdu = "GTI";
    create_table(f.get(), "GTI", {"START", "STOP"}, {"1D", "1D"}, {"s", "s"}, ctx);
    detail::write_standard_keys(f.get(), ctx);
    key_str(f.get(), "HDUCLASS", "OGIP", "format conforms to OGIP standard", ctx);
    key_str(f.get(), "HDUCLAS1", "GTI", "good time intervals", ctx);
    key_str(f.get(), "HDUCLAS2", "STANDARD", "", ctx);
    detail::write_keywords(f.get(), table_keys, ctx);
    time_keys(f.get(), s, ontime, ctx);
    std::vector<double> start, stop;
    for (const auto& g : s.gti) {
      start.push_back(g.start_s);
      stop.push_back(g.stop_s);
    }
    fits_write_col(f.get(), TDOUBLE, 1, 1, 1, static_cast<LONGLONG>(start.size()), start.data(), &st);
    fits_write_col(f.get(), TDOUBLE, 2, 1, 1, static_cast<LONGLONG>(stop.size()), stop.data(), &st);
    if (st) fail_out(st, ctx, "writing the intervals");
    detail::write_checksum(f.get(), ctx);
    ctx.hdu.clear();
    if (const int cst = f.close()) fail_out(cst, ctx, "closing the file");
  }
  tmp.commit();
}

EventFile read_event_file(const std::string& path) {
  EventFile out;
  detail::OgipTable t(path);
  if (!t.move_to({"EVENTS"})) t.fail("no EVENTS extension (expected an event list)");
  const int ct = t.column("TIME"), cx = t.column("X"), cy = t.column("Y"), cp = t.column("PI");
  const int ce = t.column("ENERGY", false), cc = t.column("COMPONENT", false);
  auto& ev = out.events;
  ev.time_s = t.scalar_doubles(ct);
  ev.x = t.scalar_doubles(cx);
  ev.y = t.scalar_doubles(cy);
  const auto pi = t.scalar_longs(cp);
  ev.pi.assign(pi.begin(), pi.end());
  const std::size_t n = ev.x.size();
  if (ce) {
    const auto e = t.scalar_doubles(ce);
    ev.energy_keV.assign(e.begin(), e.end());
  } else {
    ev.energy_keV.assign(n, 0.0f);
  }
  if (cc) {
    const auto c = t.scalar_longs(cc);
    ev.component.assign(c.begin(), c.end());
  } else {
    ev.component.assign(n, 0);
  }
  auto key_double = [&](const std::string& k, bool required, double def) {
    std::string v;
    if (!t.key_string(k, v)) {
      if (required) t.fail("keyword " + k + " missing");
      return def;
    }
    char* end = nullptr;
    const double d = std::strtod(v.c_str(), &end);
    if (end == v.c_str()) t.fail("keyword " + k + " = '" + v + "', expected a number");
    return d;
  };
  const std::string sx = std::to_string(cx), sy = std::to_string(cy);
  const double xmax = key_double("TLMAX" + sx, true, 0), ymax = key_double("TLMAX" + sy, true, 0);
  ev.nx = static_cast<int>(std::lround(xmax - 0.5));
  ev.ny = static_cast<int>(std::lround(ymax - 0.5));
  if (ev.nx <= 0 || ev.ny <= 0) t.fail("TLMAX of X / Y give no usable grid");
  ev.anchor.ra_deg = key_double("TCRVL" + sx, false, 0.0);
  ev.anchor.dec_deg = key_double("TCRVL" + sy, false, 0.0);
  ev.anchor.crpix1 = key_double("TCRPX" + sx, false, 0.5 * (ev.nx + 1));
  ev.anchor.crpix2 = key_double("TCRPX" + sy, false, 0.5 * (ev.ny + 1));
  ev.anchor.pixel_arcsec = std::fabs(key_double("TCDLT" + sy, false, 1.0 / 3600.0)) * 3600.0;
  out.exposure_s = key_double("EXPOSURE", false, 0.0);
  out.tstart_s = key_double("TSTART", false, 0.0);
  out.tstop_s = key_double("TSTOP", false, 0.0);
  out.mjdref = key_double("MJDREF", false, 0.0);
  out.pi_min = static_cast<int>(key_double("TLMIN" + std::to_string(cp), false, 0));
  out.pi_max = static_cast<int>(key_double("TLMAX" + std::to_string(cp), false, 0));
  if (t.move_to({"GTI"})) {
    const auto a = t.scalar_doubles(t.column("START")), b = t.scalar_doubles(t.column("STOP"));
    for (std::size_t i = 0; i < a.size(); ++i) out.gti.push_back({a[i], b[i]});
  }
  return out;
}

}  // namespace icmscope::io
