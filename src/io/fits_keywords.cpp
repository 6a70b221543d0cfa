// Checked FITS keyword writing shared by the image and table writers.
#include <cctype>
#include <cmath>
#include <set>
#include <string>
#include <vector>

#include "icmscope/core/errors.hpp"
#include "icmscope/core/version.hpp"
#include "io/detail/fits_util.hpp"
#include "io/detail/fits_write.hpp"

namespace icmscope::io::detail {

namespace {

bool is_indexed(const std::string& k, const std::string& stem) {
  if (k.size() <= stem.size() || k.compare(0, stem.size(), stem) != 0) return false;
  for (std::size_t i = stem.size(); i < k.size(); ++i)
    if (!std::isdigit(static_cast<unsigned char>(k[i]))) return false;
  return true;
}

bool is_matrix(const std::string& k, const std::string& stem) {  // CD1_2, PC2_1
  if (k.size() < stem.size() + 3 || k.compare(0, stem.size(), stem) != 0) return false;
  const auto us = k.find('_', stem.size());
  if (us == std::string::npos || us == stem.size() || us + 1 >= k.size()) return false;
  for (std::size_t i = stem.size(); i < k.size(); ++i)
    if (i != us && !std::isdigit(static_cast<unsigned char>(k[i]))) return false;
  return true;
}

bool reserved(const std::string& k, bool image_hdu) {
  static const std::set<std::string> fixed = {"SIMPLE", "BITPIX",  "NAXIS",   "EXTEND",   "XTENSION", "PCOUNT",
                                              "GCOUNT", "EXTNAME", "TFIELDS", "CHECKSUM", "DATASUM",  "END",
                                              "BSCALE", "BZERO",   "BLANK",   "HISTORY",  "COMMENT",  "CONTINUE"};
  if (fixed.count(k)) return true;
  if (is_indexed(k, "NAXIS")) return true;
  for (const char* s : {"TTYPE", "TFORM", "TUNIT", "TSCAL", "TZERO", "TNULL", "TDIM"})
    if (is_indexed(k, s)) return true;
  if (image_hdu) {
    static const std::set<std::string> wcs = {"RADESYS", "RADECSYS", "EQUINOX", "EPOCH", "LONPOLE", "LATPOLE", "BUNIT"};
    if (wcs.count(k)) return true;
    for (const char* s : {"CTYPE", "CRVAL", "CRPIX", "CDELT", "CUNIT", "CROTA"})
      if (is_indexed(k, s)) return true;
    if (is_matrix(k, "CD") || is_matrix(k, "PC") || is_matrix(k, "PV")) return true;
  }
  return false;
}

[[noreturn]] void fail(int st, const HduContext& ctx, const std::string& what) {
  throw_fits(st, ctx.file, ctx.hdu, what, true);
}

}  // namespace

std::string fits_upper(const std::string& s) {
  std::string u = s;
  for (char& c : u) c = static_cast<char>(std::toupper(static_cast<unsigned char>(c)));
  return u;
}

void check_keywords(const std::vector<FitsKeyword>& keys, const std::string& where, bool image_hdu) {
  std::set<std::string> seen;
  for (const auto& kw : keys) {
    const std::string k = fits_upper(kw.key);
    bool ok = !k.empty() && k.size() <= 8;
    for (char c : k)
      if (!(std::isupper(static_cast<unsigned char>(c)) || std::isdigit(static_cast<unsigned char>(c)) || c == '-' ||
            c == '_'))
        ok = false;
    if (!ok)
      throw core::DomainError(where + ": FITS keyword '" + kw.key + "' is not 1-8 characters of A-Z 0-9 - _");
    if (reserved(k, image_hdu))
      throw core::DomainError(where + ": FITS keyword " + k + " is written by the FITS writer itself");
    if (!seen.insert(k).second) throw core::DomainError(where + ": FITS keyword " + k + " given twice");
    if (const double* d = std::get_if<double>(&kw.value); d && !std::isfinite(*d))
      throw core::DomainError(where + ": FITS keyword " + k + " has a non-finite value");
  }
}

void write_standard_keys(fitsfile* f, const HduContext& ctx) {
  int st = 0;
  const std::string date = fits_date_now();
  fits_update_key(f, TSTRING, "DATE", const_cast<char*>(date.c_str()), "file creation date (UTC)", &st);
  const std::string creator = std::string(core::kProgram) + " " + core::kVersion;
  fits_update_key(f, TSTRING, "CREATOR", const_cast<char*>(creator.c_str()), "program that wrote this file", &st);
  if (st) fail(st, ctx, "writing DATE/CREATOR");
}

void write_keywords(fitsfile* f, const std::vector<FitsKeyword>& keys, const HduContext& ctx) {
  bool longwarn = false;
  for (const auto& kw : keys) {
    const std::string k = fits_upper(kw.key);
    char* com = kw.comment.empty() ? nullptr : const_cast<char*>(kw.comment.c_str());
    int st = 0;
    if (const bool* b = std::get_if<bool>(&kw.value)) {
      int v = *b ? 1 : 0;
      fits_update_key(f, TLOGICAL, k.c_str(), &v, com, &st);
    } else if (const long long* i = std::get_if<long long>(&kw.value)) {
      LONGLONG v = *i;
      fits_update_key(f, TLONGLONG, k.c_str(), &v, com, &st);
    } else if (const double* d = std::get_if<double>(&kw.value)) {
      fits_update_key_dbl(f, k.c_str(), *d, -15, com, &st);
    } else {
      const std::string& s = std::get<std::string>(kw.value);
      if (s.size() > 68) {
        if (!longwarn) fits_write_key_longwarn(f, &st);
        longwarn = true;
        fits_update_key_longstr(f, k.c_str(), s.c_str(), com, &st);
      } else {
        fits_update_key(f, TSTRING, k.c_str(), const_cast<char*>(s.c_str()), com, &st);
      }
    }
    if (st) fail(st, ctx, "writing keyword " + k);
  }
}

void write_history(fitsfile* f, const std::vector<std::string>& lines, const HduContext& ctx) {
  for (const auto& line : lines) {
    int st = 0;
    if (fits_write_history(f, line.c_str(), &st)) fail(st, ctx, "writing HISTORY");
  }
}

void write_checksum(fitsfile* f, const HduContext& ctx) {
  int st = 0;
  if (fits_write_chksum(f, &st)) fail(st, ctx, "writing CHECKSUM/DATASUM");
}

}  // namespace icmscope::io::detail
