#include "icmscope/io/fits_header.hpp"

#include <fitsio.h>

#include <cstdlib>
#include <filesystem>

#include "icmscope/core/errors.hpp"
#include "io/detail/fits_util.hpp"
#include "io/detail/fits_write.hpp"

namespace icmscope::io {

namespace {
std::string trim(std::string s) {
  while (!s.empty() && (s.back() == ' ')) s.pop_back();
  std::size_t i = 0;
  while (i < s.size() && s[i] == ' ') ++i;
  return s.substr(i);
}
std::string where(const FitsHeader& h) { return h.file + ", HDU " + std::to_string(h.hdu_index); }
}  // namespace

bool FitsHeader::has(const std::string& key) const { return values.count(detail::fits_upper(key)) > 0; }

std::string FitsHeader::text(const std::string& key) const {
  const auto it = values.find(detail::fits_upper(key));
  if (it == values.end()) throw core::InputError(where(*this) + ": keyword " + detail::fits_upper(key) + " missing");
  return it->second;
}

std::optional<double> FitsHeader::maybe_number(const std::string& key) const {
  const auto it = values.find(detail::fits_upper(key));
  if (it == values.end()) return std::nullopt;
  std::string t = it->second;
  for (char& c : t)
    if (c == 'D' || c == 'd') c = 'E';  // FITS allows D exponents
  char* end = nullptr;
  const double v = std::strtod(t.c_str(), &end);
  if (end == t.c_str() || trim(end).size() > 0)
    throw core::InputError(where(*this) + ": keyword " + detail::fits_upper(key) + " = '" + it->second +
                           "', expected a number");
  return v;
}

double FitsHeader::number(const std::string& key) const {
  const auto v = maybe_number(key);
  if (!v) throw core::InputError(where(*this) + ": keyword " + detail::fits_upper(key) + " missing");
  return *v;
}

FitsHeader read_fits_header(const std::string& path, int hdu_index) {
  std::error_code ec;
  if (!std::filesystem::exists(path, ec)) throw core::InputError(path + ": no such file");
  detail::FitsHandle f;
  int st = 0;
  if (fits_open_file(f.out(), path.c_str(), READONLY, &st)) detail::throw_fits(st, path, "", "cannot open", false);
  int nhdu = 0;
  if (fits_get_num_hdus(f.get(), &nhdu, &st)) detail::throw_fits(st, path, "", "counting HDUs", false);
  if (hdu_index < 0 || hdu_index >= nhdu)
    throw core::InputError(path + ": HDU " + std::to_string(hdu_index) + " requested, the file has " +
                           std::to_string(nhdu));
  int type = 0;
  if (fits_movabs_hdu(f.get(), hdu_index + 1, &type, &st))
    detail::throw_fits(st, path, std::to_string(hdu_index), "cannot move", false);
  FitsHeader h;
  h.file = path;
  h.hdu_index = hdu_index;
  int nkeys = 0, more = 0;
  if (fits_get_hdrspace(f.get(), &nkeys, &more, &st))
    detail::throw_fits(st, path, std::to_string(hdu_index), "reading the header", false);
  for (int k = 1; k <= nkeys; ++k) {
    char name[FLEN_KEYWORD] = {0}, value[FLEN_VALUE] = {0}, comment[FLEN_COMMENT] = {0};
    if (fits_read_keyn(f.get(), k, name, value, comment, &st))
      detail::throw_fits(st, path, std::to_string(hdu_index), "reading keyword " + std::to_string(k), false);
    const std::string key = trim(name);
    if (key.empty() || key == "COMMENT" || key == "HISTORY" || key == "CONTINUE") continue;
    std::string v = trim(value);
    if (!v.empty() && v.front() == '\'') {
      // Strings: read through CFITSIO's long-string reader (joins CONTINUE, unquotes).
      char* longstr = nullptr;
      int s2 = 0;
      if (fits_read_key_longstr(f.get(), key.c_str(), &longstr, nullptr, &s2) == 0 && longstr) {
        v = trim(longstr);
        fits_free_memory(longstr, &s2);
      } else {
        fits_clear_errmsg();
        v = trim(v.substr(1, v.size() >= 2 ? v.size() - 2 : 0));
      }
    }
    h.values[key] = v;
  }
  return h;
}

}  // namespace icmscope::io
