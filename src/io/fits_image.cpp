#include "icmscope/io/fits_image.hpp"

#include <cmath>
#include <cstring>
#include <filesystem>
#include <limits>
#include <set>
#include <string>
#include <vector>

#include "icmscope/core/errors.hpp"
#include "io/detail/fits_util.hpp"
#include "io/detail/fits_write.hpp"
#include "io/detail/temp_output.hpp"

namespace icmscope::io {

namespace {

using detail::HduContext;

[[noreturn]] void fail_out(int st, const HduContext& ctx, const std::string& what) {
  detail::throw_fits(st, ctx.file, ctx.hdu, what, true);
}

void check_anchor(const core::SkyAnchor& a, const std::string& where) {
  if (!(a.pixel_arcsec > 0.0) || !std::isfinite(a.pixel_arcsec) || !std::isfinite(a.ra_deg) ||
      !std::isfinite(a.dec_deg) || std::fabs(a.dec_deg) > 90.0 || !std::isfinite(a.crpix1) ||
      !std::isfinite(a.crpix2))
    throw core::DomainError(where + ": sky anchor is not a valid TAN reference (need pixel_arcsec > 0, finite "
                                    "RA/CRPIX, |Dec| <= 90)");
}

void write_wcs(fitsfile* f, const core::SkyAnchor& a, const HduContext& ctx) {
  int st = 0;
  const double cd = a.pixel_arcsec / 3600.0;
  fits_update_key(f, TSTRING, "CTYPE1", const_cast<char*>("RA---TAN"), "gnomonic projection", &st);
  fits_update_key(f, TSTRING, "CTYPE2", const_cast<char*>("DEC--TAN"), "gnomonic projection", &st);
  fits_update_key_dbl(f, "CRVAL1", a.ra_deg, -15, "RA at the reference pixel [deg]", &st);
  fits_update_key_dbl(f, "CRVAL2", a.dec_deg, -15, "Dec at the reference pixel [deg]", &st);
  fits_update_key_dbl(f, "CRPIX1", a.crpix1, -15, "reference pixel (1-based)", &st);
  fits_update_key_dbl(f, "CRPIX2", a.crpix2, -15, "reference pixel (1-based)", &st);
  fits_update_key_dbl(f, "CDELT1", -cd, -15, "[deg/pixel] RA grows to the left", &st);
  fits_update_key_dbl(f, "CDELT2", cd, -15, "[deg/pixel]", &st);
  fits_update_key(f, TSTRING, "CUNIT1", const_cast<char*>("deg"), nullptr, &st);
  fits_update_key(f, TSTRING, "CUNIT2", const_cast<char*>("deg"), nullptr, &st);
  fits_update_key(f, TSTRING, "RADESYS", const_cast<char*>("ICRS"), "reference frame", &st);
  if (st) fail_out(st, ctx, "writing the WCS keywords");
}

template <typename T>
void write_image_hdu(fitsfile* f, const NamedImage& ni, const core::Image<T>& img, const HduContext& ctx) {
  constexpr bool is_double = std::is_same<T, double>::value;
  int st = 0;
  long naxes[2] = {img.nx(), img.ny()};
  if (fits_create_img(f, is_double ? DOUBLE_IMG : FLOAT_IMG, 2, naxes, &st)) fail_out(st, ctx, "creating the image HDU");
  fits_update_key(f, TSTRING, "EXTNAME", const_cast<char*>(ni.extname.c_str()), "map name", &st);
  if (!img.unit().empty())
    fits_update_key(f, TSTRING, "BUNIT", const_cast<char*>(img.unit().c_str()), "pixel unit", &st);
  if (st) fail_out(st, ctx, "writing EXTNAME/BUNIT");
  write_wcs(f, img.anchor(), ctx);
  detail::write_standard_keys(f, ctx);
  detail::write_keywords(f, ni.keywords, ctx);
  detail::write_history(f, ni.history, ctx);
  if (fits_write_img(f, is_double ? TDOUBLE : TFLOAT, 1, static_cast<LONGLONG>(img.size()),
                     const_cast<T*>(img.data()), &st))
    fail_out(st, ctx, "writing the pixels");
  detail::write_checksum(f, ctx);
}

std::string trim(std::string s) {
  while (!s.empty() && s.back() == ' ') s.pop_back();
  std::size_t b = 0;
  while (b < s.size() && s[b] == ' ') ++b;
  return s.substr(b);
}

}  // namespace

void write_fits_images(const std::string& path, const std::vector<NamedImage>& images,
                       const std::vector<FitsKeyword>& primary_keywords,
                       const std::vector<std::string>& primary_history) {
  if (images.empty()) throw core::DomainError(path + ": write_fits_images needs at least one image");
  std::set<std::string> names;
  detail::check_keywords(primary_keywords, path + ", HDU PRIMARY", false);
  for (const auto& ni : images) {
    const std::string where = path + ", HDU " + ni.extname;
    if (ni.extname.empty() || ni.extname.size() > 68)
      throw core::DomainError(path + ": every image needs an EXTNAME of 1-68 characters");
    if (!names.insert(detail::fits_upper(ni.extname)).second)
      throw core::DomainError(path + ": EXTNAME '" + ni.extname + "' used twice");
    std::visit(
        [&](const auto& img) {
          if (img.empty()) throw core::DomainError(where + ": image is empty");
          check_anchor(img.anchor(), where);
        },
        ni.image);
    detail::check_keywords(ni.keywords, where, true);
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
    detail::write_keywords(f.get(), primary_keywords, ctx);
    detail::write_history(f.get(), primary_history, ctx);
    detail::write_checksum(f.get(), ctx);
    for (const auto& ni : images) {
      ctx.hdu = ni.extname;
      std::visit([&](const auto& img) { write_image_hdu(f.get(), ni, img, ctx); }, ni.image);
    }
    ctx.hdu.clear();
    if (const int cst = f.close()) fail_out(cst, ctx, "closing the file");
  }
  tmp.commit();
}

// ---- reading ----

std::string FitsImage::keyword(const std::string& key) const {
  const std::string k = detail::fits_upper(key);
  for (std::size_t pos = 0; pos + 80 <= header.size(); pos += 80) {
    const std::string cardkey = trim(header.substr(pos, 8));
    if (cardkey != k || header.compare(pos + 8, 2, "= ") != 0) continue;
    char value[FLEN_VALUE] = {0}, comment[FLEN_COMMENT] = {0};
    int st = 0;
    std::string card = header.substr(pos, 80);
    fits_parse_value(card.data(), value, comment, &st);
    if (st) {
      fits_clear_errmsg();
      return "";
    }
    std::string v = trim(value);
    if (v.size() >= 2 && v.front() == '\'') {
      std::string out;
      for (std::size_t i = 1; i + 1 < v.size(); ++i) {
        out += v[i];
        if (v[i] == '\'' && v[i + 1] == '\'') ++i;
      }
      return trim(out);
    }
    return v;
  }
  return "";
}

bool FitsImage::has_keyword(const std::string& key) const {
  const std::string k = detail::fits_upper(key);
  for (std::size_t pos = 0; pos + 80 <= header.size(); pos += 80)
    if (trim(header.substr(pos, 8)) == k) return true;
  return false;
}

namespace {

FitsImage read_current(fitsfile* f, const std::string& path, int hdu_index) {
  FitsImage out;
  out.hdu_index = hdu_index;
  int st = 0;
  {
    char name[FLEN_VALUE] = {0};
    if (fits_read_key(f, TSTRING, "EXTNAME", name, nullptr, &st) == 0) out.extname = name;
    st = 0;
    fits_clear_errmsg();
  }
  const std::string hdu = out.extname.empty() ? std::to_string(hdu_index) : out.extname;
  int naxis = 0;
  long long naxes[9] = {0};
  if (fits_get_img_dim(f, &naxis, &st)) detail::throw_fits(st, path, hdu, "reading NAXIS", false);
  if (naxis < 2 || naxis > 9) throw core::InputError(path + ", HDU " + hdu + ": NAXIS = " + std::to_string(naxis) + ", expected a 2-D image");
  if (fits_get_img_sizell(f, naxis, naxes, &st)) detail::throw_fits(st, path, hdu, "reading NAXISn", false);
  for (int i = 2; i < naxis; ++i)
    if (naxes[i] != 1)
      throw core::InputError(path + ", HDU " + hdu + ": NAXIS" + std::to_string(i + 1) + " = " +
                             std::to_string(naxes[i]) + ", expected a 2-D image");
  if (naxes[0] < 1 || naxes[1] < 1 || naxes[0] > (1LL << 30) || naxes[1] > (1LL << 30))
    throw core::InputError(path + ", HDU " + hdu + ": image size " + std::to_string(naxes[0]) + " x " +
                           std::to_string(naxes[1]) + " not usable");
  detail::require_data_in_file(f, path, hdu);
  out.image = core::ImageD(static_cast<int>(naxes[0]), static_cast<int>(naxes[1]));
  double nul = std::numeric_limits<double>::quiet_NaN();
  int anynul = 0;
  if (fits_read_img(f, TDOUBLE, 1, static_cast<LONGLONG>(out.image.size()), &nul, out.image.data(), &anynul, &st))
    detail::throw_fits(st, path, hdu, "reading the pixels", false);
  char* hdr = nullptr;
  int nkeys = 0;
  if (fits_hdr2str(f, 0, nullptr, 0, &hdr, &nkeys, &st)) detail::throw_fits(st, path, hdu, "reading the header", false);
  out.header.assign(hdr, static_cast<std::size_t>(nkeys) * 80);
  fits_free_memory(hdr, &st);
  st = 0;
  out.image.set_unit(out.keyword("BUNIT"));
  if (out.has_keyword("CTYPE1") || out.has_keyword("CTYPE2")) {
    out.wcs = Wcs::from_header(out.header, path + ", HDU " + hdu);
    out.image.set_anchor(out.wcs.anchor());
  }
  return out;
}

void open_read(detail::FitsHandle& f, const std::string& path) {
  std::error_code ec;
  if (!std::filesystem::exists(path, ec)) throw core::InputError(path + ": no such file");
  detail::check_fits_cards(path);
  int st = 0;
  if (fits_open_file(f.out(), path.c_str(), READONLY, &st)) detail::throw_fits(st, path, "", "cannot open", false);
}

}  // namespace

FitsImage read_fits_image(const std::string& path, const std::string& extname) {
  detail::FitsHandle f;
  open_read(f, path);
  int st = 0;
  if (fits_movnam_hdu(f.get(), IMAGE_HDU, const_cast<char*>(extname.c_str()), 0, &st))
    detail::throw_fits(st, path, extname, "no image extension with this EXTNAME", false);
  int num = 0;
  fits_get_hdu_num(f.get(), &num);
  return read_current(f.get(), path, num - 1);
}

FitsImage read_fits_image(const std::string& path, int hdu_index) {
  detail::FitsHandle f;
  open_read(f, path);
  int st = 0, nhdu = 0;
  if (fits_get_num_hdus(f.get(), &nhdu, &st)) detail::throw_fits(st, path, "", "counting HDUs", false);
  if (hdu_index >= 0) {
    if (hdu_index >= nhdu)
      throw core::InputError(path + ": HDU " + std::to_string(hdu_index) + " requested, the file has " +
                             std::to_string(nhdu));
    int type = 0;
    if (fits_movabs_hdu(f.get(), hdu_index + 1, &type, &st))
      detail::throw_fits(st, path, std::to_string(hdu_index), "cannot move", false);
    if (type != IMAGE_HDU) throw core::InputError(path + ", HDU " + std::to_string(hdu_index) + ": not an image");
    return read_current(f.get(), path, hdu_index);
  }
  for (int i = 1; i <= nhdu; ++i) {
    int type = 0;
    if (fits_movabs_hdu(f.get(), i, &type, &st)) detail::throw_fits(st, path, std::to_string(i - 1), "cannot move", false);
    if (type != IMAGE_HDU) continue;
    int naxis = 0;
    fits_get_img_dim(f.get(), &naxis, &st);
    if (st == 0 && naxis >= 2) return read_current(f.get(), path, i - 1);
    st = 0;
  }
  throw core::InputError(path + ": no 2-D image in the file");
}

}  // namespace icmscope::io
