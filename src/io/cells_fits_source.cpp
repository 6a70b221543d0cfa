// FITS binary-table column source for read_cells: columns by name
// (case-insensitive), scalar or vector (repeat 3), read in row chunks.
#include <algorithm>
#include <cmath>
#include <filesystem>
#include <limits>
#include <string>
#include <vector>

#include "icmscope/core/errors.hpp"
#include "io/detail/cells_source.hpp"
#include "io/detail/fits_util.hpp"

namespace icmscope::io::detail {

namespace {

using core::InputError;

class FitsSource final : public ColumnSource {
 public:
  FitsSource(const std::string& path, const std::string& extname) : path_(path) {
    std::error_code ec;
    if (!std::filesystem::exists(path, ec)) throw InputError(path + ": no such file");
    int st = 0;
    if (fits_open_file(f_.out(), path.c_str(), READONLY, &st)) throw_fits(st, path, "", "cannot open", false);
    if (!extname.empty()) {
      hdu_ = extname;
      if (fits_movnam_hdu(f_.get(), ANY_HDU, const_cast<char*>(extname.c_str()), 0, &st))
        throw_fits(st, path, extname, "no such extension", false);
      int type = 0;
      fits_get_hdu_type(f_.get(), &type, &st);
      if (st || (type != BINARY_TBL && type != ASCII_TBL))
        throw InputError(path + ", HDU " + extname + ": not a table");
    } else {
      int nhdu = 0;
      fits_get_num_hdus(f_.get(), &nhdu, &st);
      int found = 0;
      for (int i = 2; i <= nhdu && !found; ++i) {
        int type = 0;
        if (fits_movabs_hdu(f_.get(), i, &type, &st)) throw_fits(st, path, std::to_string(i - 1), "cannot move", false);
        if (type == BINARY_TBL || type == ASCII_TBL) found = i;
      }
      if (!found) throw InputError(path + ": no table extension in the file");
      char name[FLEN_VALUE] = {0};
      int kst = 0;
      if (fits_read_key(f_.get(), TSTRING, "EXTNAME", name, nullptr, &kst) == 0)
        hdu_ = name;
      else
        hdu_ = std::to_string(found - 1);
      fits_clear_errmsg();
    }
    LONGLONG nrows = 0;
    if (fits_get_num_rowsll(f_.get(), &nrows, &st)) throw_fits(st, path_, hdu_, "cannot read NAXIS2", false);
    rows_ = static_cast<std::size_t>(nrows);
  }

  std::vector<bool> open(const std::vector<ColumnRequest>& req) override {
    std::vector<bool> present(req.size(), false);
    cols_.assign(req.size(), Col{});
    for (std::size_t k = 0; k < req.size(); ++k) {
      const ColumnRequest& r = req[k];
      const std::string where = path_ + ", HDU " + hdu_ + ": column '" + r.name + "' (" + r.field + ")";
      int st = 0, colnum = 0;
      fits_get_colnum(f_.get(), CASEINSEN, const_cast<char*>(r.name.c_str()), &colnum, &st);
      if (st == COL_NOT_UNIQUE) {
        fits_clear_errmsg();
        throw InputError(where + " matches several columns");
      }
      if (st) {
        fits_clear_errmsg();
        if (r.optional) continue;
        throw InputError(where + " not found");
      }
      int type = 0;
      long repeat = 0, width = 0;
      if (fits_get_eqcoltype(f_.get(), colnum, &type, &repeat, &width, &st))
        throw_fits(st, path_, hdu_, "column '" + r.name + "'", false);
      if (type < 0) throw InputError(where + " is variable-length, expected a fixed " + std::to_string(r.width) + "-element column");
      if (type == TSTRING || type == TLOGICAL || type == TBIT || type == TCOMPLEX || type == TDBLCOMPLEX)
        throw InputError(where + " is not a real numeric column");
      if (repeat != r.width)
        throw InputError(where + " has " + std::to_string(repeat) + " elements per row, expected " +
                         std::to_string(r.width));
      cols_[k].colnum = colnum;
      cols_[k].width = r.width;
      cols_[k].name = r.name;
      present[k] = true;
    }
    next_row_ = 0;
    return present;
  }

  std::size_t rows_hint() const override { return rows_; }

  std::size_t next(std::size_t max_rows, std::vector<std::vector<double>>& out) override {
    if (next_row_ >= rows_) return 0;
    const std::size_t n = std::min(max_rows, rows_ - next_row_);
    out.resize(cols_.size());
    const double nulval = std::numeric_limits<double>::quiet_NaN();  // TNULL cells become NaN -> validation
    for (std::size_t k = 0; k < cols_.size(); ++k) {
      const Col& c = cols_[k];
      if (c.colnum == 0) {
        out[k].clear();
        continue;
      }
      out[k].resize(n * static_cast<std::size_t>(c.width));
      int st = 0, anynul = 0;
      double nv = nulval;
      if (fits_read_col(f_.get(), TDOUBLE, c.colnum, static_cast<LONGLONG>(next_row_ + 1), 1,
                        static_cast<LONGLONG>(n * c.width), &nv, out[k].data(), &anynul, &st))
        throw_fits(st, path_, hdu_,
                   "column '" + c.name + "' rows " + std::to_string(next_row_ + 1) + "-" +
                       std::to_string(next_row_ + n),
                   false);
    }
    next_row_ += n;
    return n;
  }

  bool read_number(const std::string& spec, double* value) override {
    int st = 0;
    double v = 0.0;
    fits_read_key(f_.get(), TDOUBLE, spec.c_str(), &v, nullptr, &st);
    if (st == KEY_NO_EXIST) {
      fits_clear_errmsg();
      return false;
    }
    if (st) throw_fits(st, path_, hdu_, "keyword " + spec + " (expected a number)", false);
    *value = v;
    return true;
  }

  bool read_text(const std::string& spec, std::string* value) override {
    int st = 0;
    char v[FLEN_VALUE] = {0};
    fits_read_key(f_.get(), TSTRING, spec.c_str(), v, nullptr, &st);
    if (st == KEY_NO_EXIST) {
      fits_clear_errmsg();
      return false;
    }
    if (st) throw_fits(st, path_, hdu_, "keyword " + spec, false);
    *value = v;
    return true;
  }

 private:
  struct Col {
    int colnum = 0;
    int width = 1;
    std::string name;
  };
  std::string path_;
  std::string hdu_;
  FitsHandle f_;
  std::vector<Col> cols_;
  std::size_t rows_ = 0;
  std::size_t next_row_ = 0;
};

}  // namespace

std::unique_ptr<ColumnSource> open_fits_cells(const std::string& path, const std::string& extname) {
  return std::make_unique<FitsSource>(path, extname);
}

}  // namespace icmscope::io::detail
