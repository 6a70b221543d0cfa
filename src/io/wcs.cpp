#include "icmscope/io/wcs.hpp"

#include <wcslib/wcs.h>
#include <wcslib/wcserr.h>
#include <wcslib/wcsfix.h>
#include <wcslib/wcshdr.h>

#include <algorithm>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <limits>
#include <vector>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"

namespace icmscope::io {

namespace {

constexpr double kNaN = std::numeric_limits<double>::quiet_NaN();

// wcspih (a flex scanner) and the error-enable switch are process-wide: parse under one lock.
std::mutex& parse_mutex() {
  static std::mutex m;
  return m;
}

std::string wcs_error_text(const ::wcsprm* w, int status) {
  std::string s = "WCSLIB status " + std::to_string(status);
  if (status > 0 && status < 14 && wcs_errmsg[status]) s += std::string(" (") + wcs_errmsg[status] + ")";
  if (w && w->err && w->err->msg && w->err->msg[0]) s += ": " + std::string(w->err->msg);
  return s;
}

::wcsprm* alloc_wcsprm() {
  auto* w = static_cast<::wcsprm*>(std::calloc(1, sizeof(::wcsprm)));
  if (!w) throw std::bad_alloc();
  w->flag = -1;
  return w;
}

void free_wcsprm(::wcsprm* w) {
  if (!w) return;
  wcsfree(w);
  std::free(w);
}

// Deep copy of the first `naxis` axes of src (all when naxis == 0), set up.
::wcsprm* copy_setup(const ::wcsprm* src, int naxis, const std::string& context) {
  ::wcsprm* dst = alloc_wcsprm();
  int nsub = naxis;
  int axes[2] = {1, 2};
  int st = naxis ? wcssub(1, src, &nsub, axes, dst) : wcssub(1, src, nullptr, nullptr, dst);
  if (st == 0) st = wcsset(dst);
  if (st != 0) {
    const std::string msg = wcs_error_text(dst, st);
    free_wcsprm(dst);
    throw core::InputError(context + ": invalid WCS: " + msg);
  }
  return dst;
}

std::string card(const char* key, const std::string& value, const char* comment = "") {
  char buf[96];
  std::snprintf(buf, sizeof buf, "%-8.8s= %20s / %s", key, value.c_str(), comment);
  std::string s(buf);
  s.resize(80, ' ');
  return s;
}

std::string num(double v) {
  char b[40];
  std::snprintf(b, sizeof b, "%.17G", v);
  return b;
}

std::string str(const char* s) {
  std::string v = std::string("'") + s;
  while (v.size() < 9) v += ' ';
  return v + "'";
}

}  // namespace

Wcs::Wcs() : mu_(std::make_unique<std::mutex>()) {}

Wcs::~Wcs() { free_wcsprm(w_); }

Wcs::Wcs(const Wcs& o) : mu_(std::make_unique<std::mutex>()) {
  if (o.w_) {
    std::lock_guard<std::mutex> lock(*o.mu_);
    w_ = copy_setup(o.w_, 0, "Wcs copy");
  }
}

Wcs& Wcs::operator=(const Wcs& o) {
  if (this != &o) {
    Wcs tmp(o);
    *this = std::move(tmp);
  }
  return *this;
}

Wcs::Wcs(Wcs&& o) noexcept : w_(o.w_), mu_(std::move(o.mu_)) {
  o.w_ = nullptr;
  o.mu_ = std::make_unique<std::mutex>();
}

Wcs& Wcs::operator=(Wcs&& o) noexcept {
  if (this != &o) {
    free_wcsprm(w_);
    w_ = o.w_;
    o.w_ = nullptr;
    std::swap(mu_, o.mu_);
  }
  return *this;
}

Wcs Wcs::from_header(const std::string& header, const std::string& context) {
  std::lock_guard<std::mutex> lock(parse_mutex());
  wcserr_enable(1);
  std::vector<char> hdr(header.begin(), header.end());
  // Damaged cards are blanked before WCSLIB sees them: FITS cards hold printable
  // ASCII only (FITS 4.0, section 4.1.1), and a string value without its closing
  // quote makes WCSLIB 7.12's wcspih read on into the next card and overflow a
  // buffer (found by fuzz/fuzz_fits_image; tests/data/fuzz_regressions).
  for (char& c : hdr)
    if (static_cast<unsigned char>(c) < 0x20 || static_cast<unsigned char>(c) > 0x7e) c = ' ';
  for (std::size_t card = 0; card + 80 <= hdr.size(); card += 80) {
    char* k = hdr.data() + card;
    if (k[8] != '=' || k[9] != ' ') continue;
    std::size_t i = 10;
    while (i < 80 && k[i] == ' ') ++i;
    if (i == 80 || k[i] != '\'') continue;
    bool closed = false;
    for (++i; i < 80; ++i) {
      if (k[i] != '\'') continue;
      if (i + 1 < 80 && k[i + 1] == '\'') {
        ++i;  // '' is a quote inside the string
        continue;
      }
      closed = true;
      break;
    }
    if (!closed) std::fill(k, k + 80, ' ');
  }
  hdr.push_back('\0');
  const int nkeys = static_cast<int>(header.size() / 80);
  int nreject = 0, nwcs = 0;
  ::wcsprm* all = nullptr;
  const int st = wcspih(hdr.data(), nkeys, WCSHDR_all, 0, &nreject, &nwcs, &all);
  if (st != 0) throw core::InputError(context + ": WCS header parse failed (WCSLIB wcspih status " + std::to_string(st) + ")");
  struct Guard {
    int* n;
    ::wcsprm** w;
    ~Guard() { wcsvfree(n, w); }
  } guard{&nwcs, &all};
  if (nwcs < 1 || all[0].naxis < 2)
    throw core::InputError(context + ": no world coordinate system in the header (need two celestial axes)");
  // Repair common non-standard forms (units, dates, CDi_j defaults) in place.
  int fixstat[NWCSFIX];
  wcsfix(0, nullptr, &all[0], fixstat);
  Wcs out;
  out.w_ = copy_setup(&all[0], 2, context);
  if (out.w_->lng < 0 || out.w_->lat < 0) {
    const std::string c1 = out.w_->ctype[0], c2 = out.w_->ctype[1];
    throw core::InputError(context + ": axes 1-2 are not celestial (CTYPE1 = '" + c1 + "', CTYPE2 = '" + c2 + "')");
  }
  return out;
}

std::string wcs_header_cards(const core::SkyAnchor& a) {
  const double cd = a.pixel_arcsec / 3600.0;
  std::string h;
  h += card("CTYPE1", str("RA---TAN"), "gnomonic projection");
  h += card("CTYPE2", str("DEC--TAN"), "gnomonic projection");
  h += card("CUNIT1", str("deg"));
  h += card("CUNIT2", str("deg"));
  h += card("CRVAL1", num(a.ra_deg), "RA at the reference pixel [deg]");
  h += card("CRVAL2", num(a.dec_deg), "Dec at the reference pixel [deg]");
  h += card("CRPIX1", num(a.crpix1), "reference pixel, 1-based");
  h += card("CRPIX2", num(a.crpix2), "reference pixel, 1-based");
  h += card("CDELT1", num(-cd), "[deg/pixel], RA grows to the left");
  h += card("CDELT2", num(cd), "[deg/pixel]");
  h += card("RADESYS", str("ICRS"));
  h += card("LONPOLE", num(180.0));
  return h;
}

Wcs Wcs::from_anchor(const core::SkyAnchor& anchor) {
  if (!(anchor.pixel_arcsec > 0.0) || !std::isfinite(anchor.ra_deg) || !std::isfinite(anchor.dec_deg) ||
      std::fabs(anchor.dec_deg) > 90.0)
    throw core::DomainError("Wcs::from_anchor: need pixel_arcsec > 0 and finite RA, |Dec| <= 90 (got pixel " +
                            num(anchor.pixel_arcsec) + ", Dec " + num(anchor.dec_deg) + ")");
  return from_header(wcs_header_cards(anchor), "sky anchor");
}

void Wcs::require() const {
  if (!w_) throw core::DomainError("Wcs: no coordinate system (default-constructed)");
}

void Wcs::pixel_to_sky(const double* x, const double* y, std::size_t n, double* ra, double* dec) const {
  require();
  if (n == 0) return;
  std::vector<double> pix(2 * n), img(2 * n), world(2 * n), phi(n), theta(n);
  std::vector<int> stat(n);
  for (std::size_t i = 0; i < n; ++i) {
    pix[2 * i] = x[i];
    pix[2 * i + 1] = y[i];
  }
  std::lock_guard<std::mutex> lock(*mu_);
  const int st = wcsp2s(w_, static_cast<int>(n), 2, pix.data(), img.data(), phi.data(), theta.data(), world.data(),
                        stat.data());
  if (st != 0 && st != 8) throw core::DomainError("Wcs::pixel_to_sky: " + wcs_error_text(w_, st));
  const int lng = w_->lng, lat = w_->lat;
  for (std::size_t i = 0; i < n; ++i) {
    const bool bad = st == 8 && stat[i] != 0;
    ra[i] = bad ? kNaN : world[2 * i + lng];
    dec[i] = bad ? kNaN : world[2 * i + lat];
  }
}

void Wcs::sky_to_pixel(const double* ra, const double* dec, std::size_t n, double* x, double* y) const {
  require();
  if (n == 0) return;
  std::vector<double> pix(2 * n), img(2 * n), world(2 * n), phi(n), theta(n);
  std::vector<int> stat(n);
  const int lng = w_->lng, lat = w_->lat;
  for (std::size_t i = 0; i < n; ++i) {
    world[2 * i + lng] = ra[i];
    world[2 * i + lat] = dec[i];
  }
  std::lock_guard<std::mutex> lock(*mu_);
  const int st = wcss2p(w_, static_cast<int>(n), 2, world.data(), phi.data(), theta.data(), img.data(), pix.data(),
                        stat.data());
  if (st != 0 && st != 9) throw core::DomainError("Wcs::sky_to_pixel: " + wcs_error_text(w_, st));
  for (std::size_t i = 0; i < n; ++i) {
    const bool bad = st == 9 && stat[i] != 0;
    x[i] = bad ? kNaN : pix[2 * i];
    y[i] = bad ? kNaN : pix[2 * i + 1];
  }
}

SkyPosition Wcs::pixel_to_sky(double x, double y) const {
  SkyPosition s;
  pixel_to_sky(&x, &y, 1, &s.ra_deg, &s.dec_deg);
  return s;
}

PixelPosition Wcs::sky_to_pixel(double ra, double dec) const {
  PixelPosition p;
  sky_to_pixel(&ra, &dec, 1, &p.x, &p.y);
  return p;
}

std::array<double, 4> Wcs::cd_matrix() const {
  require();
  // After wcsset, CDi_j and CROTAi forms are translated into PC and CDELT; linprm::piximg
  // is not formed when PC is unity, so build M = CDELT * PC here. Row i = world axis i,
  // column j = pixel axis j.
  const double* pc = w_->lin.pc;
  const double* cdelt = w_->lin.cdelt;
  const int lng = w_->lng, lat = w_->lat;
  return {cdelt[lng] * pc[2 * lng], cdelt[lng] * pc[2 * lng + 1], cdelt[lat] * pc[2 * lat],
          cdelt[lat] * pc[2 * lat + 1]};
}

double Wcs::pixel_scale_arcsec() const {
  const auto m = cd_matrix();
  return std::sqrt(std::fabs(m[0] * m[3] - m[1] * m[2])) * 3600.0;
}

double Wcs::pixel_scale_x_arcsec() const {
  const auto m = cd_matrix();
  return std::hypot(m[0], m[2]) * 3600.0;
}

double Wcs::pixel_scale_y_arcsec() const {
  const auto m = cd_matrix();
  return std::hypot(m[1], m[3]) * 3600.0;
}

double Wcs::rotation_deg() const {
  const auto m = cd_matrix();
  return std::atan2(-m[1], m[3]) / core::constants::deg_rad;
}

bool Wcs::east_left() const {
  const auto m = cd_matrix();
  return m[0] * m[3] - m[1] * m[2] < 0.0;
}

std::array<double, 2> Wcs::crpix() const {
  require();
  return {w_->crpix[0], w_->crpix[1]};
}

std::array<double, 2> Wcs::crval() const {
  require();
  return {w_->crval[w_->lng], w_->crval[w_->lat]};
}

std::string Wcs::ctype(int axis) const {
  require();
  if (axis < 0 || axis > 1) throw core::DomainError("Wcs::ctype: axis must be 0 or 1");
  return w_->ctype[axis];
}

std::string Wcs::radesys() const {
  require();
  return w_->radesys;
}

core::SkyAnchor Wcs::anchor() const {
  core::SkyAnchor a;
  const auto cv = crval();
  const auto cp = crpix();
  a.ra_deg = cv[0];
  a.dec_deg = cv[1];
  a.crpix1 = cp[0];
  a.crpix2 = cp[1];
  a.pixel_arcsec = pixel_scale_arcsec();
  return a;
}

}  // namespace icmscope::io
