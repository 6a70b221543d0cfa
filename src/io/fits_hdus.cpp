#include "icmscope/io/fits_hdus.hpp"

#include <fitsio.h>

#include <cctype>
#include <filesystem>

#include "icmscope/core/errors.hpp"
#include "io/detail/fits_util.hpp"

namespace icmscope::io {

namespace {

void open(detail::FitsHandle& f, const std::string& path) {
  std::error_code ec;
  if (!std::filesystem::exists(path, ec)) throw core::InputError(path + ": no such file");
  int st = 0;
  if (fits_open_file(f.out(), path.c_str(), READONLY, &st)) detail::throw_fits(st, path, "", "cannot open", false);
}

std::string upper(std::string s) {
  for (char& c : s) c = static_cast<char>(std::toupper(static_cast<unsigned char>(c)));
  return s;
}

}  // namespace

std::vector<FitsHduSummary> list_fits_hdus(const std::string& path) {
  detail::FitsHandle f;
  open(f, path);
  int st = 0, n = 0;
  if (fits_get_num_hdus(f.get(), &n, &st)) detail::throw_fits(st, path, "", "counting HDUs", false);
  std::vector<FitsHduSummary> out;
  for (int i = 1; i <= n; ++i) {
    int type = 0;
    if (fits_movabs_hdu(f.get(), i, &type, &st)) detail::throw_fits(st, path, std::to_string(i - 1), "cannot move", false);
    FitsHduSummary h;
    h.index = i - 1;
    char name[FLEN_VALUE] = {0};
    if (fits_read_key(f.get(), TSTRING, "EXTNAME", name, nullptr, &st) == 0) h.extname = name;
    st = 0;
    fits_clear_errmsg();
    h.is_image = type == IMAGE_HDU;
    if (h.is_image) {
      long long ax[9] = {0};
      if (fits_get_img_dim(f.get(), &h.naxis, &st) == 0 && h.naxis >= 2 && h.naxis <= 9 &&
          fits_get_img_sizell(f.get(), h.naxis, ax, &st) == 0) {
        h.nx = ax[0];
        h.ny = ax[1];
      }
      st = 0;
      fits_clear_errmsg();
    }
    out.push_back(h);
  }
  return out;
}

int find_hdu(const std::vector<FitsHduSummary>& hdus, const std::string& name) {
  const std::string u = upper(name);
  for (const auto& h : hdus)
    if (upper(h.extname) == u) return h.index;
  return -1;
}

}  // namespace icmscope::io
