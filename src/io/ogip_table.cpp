#include "io/detail/ogip_table.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdio>

namespace icmscope::io::detail {

std::string upper_trim(std::string s) {
  while (!s.empty() && std::isspace(static_cast<unsigned char>(s.back()))) s.pop_back();
  std::size_t i = 0;
  while (i < s.size() && std::isspace(static_cast<unsigned char>(s[i]))) ++i;
  s.erase(0, i);
  for (char& c : s) c = static_cast<char>(std::toupper(static_cast<unsigned char>(c)));
  return s;
}

OgipTable::OgipTable(std::string path) : path_(std::move(path)) {
  check_fits_cards(path_);
  int st = 0;
  if (fits_open_file(f_.out(), path_.c_str(), READONLY, &st)) {
    const std::string m = fits_message(st);
    throw core::InputError(path_ + ": cannot open as FITS: " + m);
  }
}

void OgipTable::check(int st, const std::string& what, int col) const {
  if (!st) return;
  std::string m = path_;
  if (!ext_.empty()) m += ", extension " + ext_;
  if (col > 0) m += ", column " + colname(col);
  m += ": " + what + ": " + fits_message(st);
  throw core::InputError(m);
}

void OgipTable::fail(int col, const std::string& what) const {
  std::string m = path_;
  if (!ext_.empty()) m += ", extension " + ext_;
  if (col > 0) m += ", column " + colname(col);
  throw core::InputError(m + ": " + what);
}

void OgipTable::fail(const std::string& what) const { fail(0, what); }

bool OgipTable::move_to(const std::vector<std::string>& names, int extver) {
  int st = 0, nhdu = 0;
  check(fits_get_num_hdus(f_.get(), &nhdu, &st), "counting HDUs");
  for (int h = 2; h <= nhdu; ++h) {
    int type = 0;
    st = 0;
    check(fits_movabs_hdu(f_.get(), h, &type, &st), "moving to HDU " + std::to_string(h));
    if (type != BINARY_TBL) continue;
    char val[FLEN_VALUE] = {0};
    st = 0;
    if (fits_read_key(f_.get(), TSTRING, "EXTNAME", val, nullptr, &st)) {
      fits_clear_errmsg();
      continue;
    }
    const std::string en = upper_trim(val);
    bool match = false;
    for (const auto& n : names) match = match || en == upper_trim(n);
    if (!match) continue;
    if (extver > 0) {
      long ev = 1;
      st = 0;
      if (fits_read_key(f_.get(), TLONG, "EXTVER", &ev, nullptr, &st)) {
        fits_clear_errmsg();
        ev = 1;
      }
      if (ev != extver) continue;
    }
    ext_ = en;
    st = 0;
    check(fits_get_num_rows(f_.get(), &rows_, &st), "reading the number of rows");
    require_data_in_file(f_.get(), path_, en);
    return true;
  }
  return false;
}

std::string OgipTable::colname(int col) const {
  char key[FLEN_KEYWORD], val[FLEN_VALUE] = {0};
  int st = 0;
  fits_make_keyn("TTYPE", col, key, &st);
  if (!st) fits_read_key(f_.get(), TSTRING, key, val, nullptr, &st);
  if (st) {
    fits_clear_errmsg();
    return "#" + std::to_string(col);
  }
  return upper_trim(val);
}

int OgipTable::column(const std::string& name, bool required) {
  int col = 0, st = 0;
  std::string tmpl = name;
  if (fits_get_colnum(f_.get(), CASEINSEN, tmpl.data(), &col, &st)) {
    fits_clear_errmsg();
    if (required) throw core::InputError(path_ + ", extension " + ext_ + ": column " + name + " is missing");
    return 0;
  }
  return col;
}

void OgipTable::column_shape(int col, long& repeat, bool& variable) {
  int type = 0, st = 0;
  long width = 0;
  check(fits_get_coltype(f_.get(), col, &type, &repeat, &width, &st), "reading the column type", col);
  variable = type < 0;
  if (repeat < 1 && !variable) repeat = 0;
}

std::vector<double> OgipTable::scalar_doubles(int col) {
  long rep = 0;
  bool var = false;
  column_shape(col, rep, var);
  if (var || rep != 1) fail(col, "expected a scalar column, found " + std::string(var ? "a variable-length" : "a vector") + " column");
  std::vector<double> v(static_cast<std::size_t>(rows_));
  int st = 0, any = 0;
  if (rows_ > 0) check(fits_read_col(f_.get(), TDOUBLE, col, 1, 1, rows_, nullptr, v.data(), &any, &st), "reading values", col);
  return v;
}

std::vector<long> OgipTable::scalar_longs(int col) {
  long rep = 0;
  bool var = false;
  column_shape(col, rep, var);
  if (var || rep != 1) fail(col, "expected a scalar column, found " + std::string(var ? "a variable-length" : "a vector") + " column");
  std::vector<long> v(static_cast<std::size_t>(rows_));
  int st = 0, any = 0;
  if (rows_ > 0) check(fits_read_col(f_.get(), TLONG, col, 1, 1, rows_, nullptr, v.data(), &any, &st), "reading values", col);
  return v;
}

namespace {
template <typename T>
void read_row(fitsfile* f, int dtype, int col, long row, std::vector<T>& out, const OgipTable& t) {
  int type = 0, st = 0;
  long repeat = 0, width = 0;
  if (fits_get_coltype(f, col, &type, &repeat, &width, &st)) t.fail(col, "reading the column type: " + fits_message(st));
  long n = repeat;
  if (type < 0) {
    long off = 0;
    st = 0;
    if (fits_read_descript(f, col, row, &n, &off, &st))
      t.fail(col, "row " + std::to_string(row) + ": reading the variable-length descriptor: " + fits_message(st));
    // The heap holds at least one bit per element: a damaged descriptor must
    // not size the buffer.
    LONGLONG head = 0, start = 0, end = 0;
    st = 0;
    fits_get_hduaddrll(f, &head, &start, &end, &st);
    if (n < 0 || static_cast<LONGLONG>(n) > 8 * (end - start))
      t.fail(col, "row " + std::to_string(row) + ": variable-length descriptor of " + std::to_string(n) +
                      " elements, more than the extension holds");
  }
  out.resize(static_cast<std::size_t>(n));
  if (n == 0) return;
  int any = 0;
  st = 0;
  if (fits_read_col(f, dtype, col, row, 1, n, nullptr, out.data(), &any, &st))
    t.fail(col, "row " + std::to_string(row) + ": reading values: " + fits_message(st));
}
}  // namespace

void OgipTable::row_doubles(int col, long row, std::vector<double>& out) { read_row(f_.get(), TDOUBLE, col, row, out, *this); }
void OgipTable::row_longs(int col, long row, std::vector<long>& out) { read_row(f_.get(), TLONG, col, row, out, *this); }

bool OgipTable::key_long(const std::string& key, long& v) {
  int st = 0;
  if (fits_read_key(f_.get(), TLONG, key.c_str(), &v, nullptr, &st)) {
    fits_clear_errmsg();
    return false;
  }
  return true;
}

bool OgipTable::key_string(const std::string& key, std::string& v) {
  char val[FLEN_VALUE] = {0};
  int st = 0;
  if (fits_read_key(f_.get(), TSTRING, key.c_str(), val, nullptr, &st)) {
    fits_clear_errmsg();
    return false;
  }
  v = val;
  return true;
}


// Energies in keV: TUNIT absent or "keV" (case-insensitive); anything else is refused.
void require_kev(OgipTable& t, int col) {
  std::string u;
  if (t.key_string("TUNIT" + std::to_string(col), u) && !upper_trim(u).empty() && upper_trim(u) != "KEV")
    t.fail(col, "unit '" + u + "', expected keV");
}

std::string fmt(double v) {
  char b[64];
  std::snprintf(b, sizeof b, "%.9g", v);
  return b;
}

// ENERG_LO / ENERG_HI: finite, >= 0, lo < hi, increasing and contiguous.
void check_energy_grid(const OgipTable& t, int clo, int chi, const std::vector<double>& lo, const std::vector<double>& hi) {
  // First pass: each row valid and ENERG_LO increasing; second pass: contiguity.
  for (std::size_t i = 0; i < lo.size(); ++i) {
    const std::string row = "row " + std::to_string(i + 1);
    if (!std::isfinite(lo[i]) || lo[i] < 0) t.fail(clo, row + ": " + fmt(lo[i]) + " keV, expected a finite energy >= 0");
    if (!std::isfinite(hi[i]) || !(hi[i] > lo[i]))
      t.fail(chi, row + ": " + fmt(hi[i]) + " keV not above ENERG_LO = " + fmt(lo[i]) + " keV");
    if (i > 0 && !(lo[i] > lo[i - 1]))
      t.fail(clo, row + ": " + fmt(lo[i]) + " keV not above the previous row's " + fmt(lo[i - 1]) +
                      " keV; expected monotonically increasing energies");
  }
  for (std::size_t i = 1; i < lo.size(); ++i)
    if (std::fabs(lo[i] - hi[i - 1]) > 1e-6 * std::max(1.0, hi[i - 1]))
      t.fail(clo, "row " + std::to_string(i + 1) + ": " + fmt(lo[i]) + " keV but the previous ENERG_HI is " +
                      fmt(hi[i - 1]) + " keV; expected contiguous energy bins");
}

}  // namespace icmscope::io::detail
