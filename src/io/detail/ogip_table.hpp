#pragma once
// Reading OGIP binary tables with CFITSIO (private to the io library): moving
// to an extension by name, columns by name (case-insensitive), scalar columns
// in bulk, per-row fixed or variable-length vectors, TLMIN keywords. Every
// failure is a core::InputError "<file>, extension <EXT>[, column <COL>]: ...".
#include <fitsio.h>

#include <string>
#include <vector>

#include "io/detail/fits_util.hpp"
#include "icmscope/core/errors.hpp"

namespace icmscope::io::detail {

class OgipTable {
 public:
  // Opens `path` read-only (InputError when it cannot).
  explicit OgipTable(std::string path);
  // Moves to the first binary table whose EXTNAME is one of `names`
  // (case-insensitive, trimmed) and, when extver > 0, whose EXTVER equals it.
  // Returns false when there is none.
  bool move_to(const std::vector<std::string>& names, int extver = 0);
  const std::string& path() const { return path_; }
  const std::string& extname() const { return ext_; }
  long rows() const { return rows_; }

  // Column number, 0 when absent (required: InputError naming the column).
  int column(const std::string& name, bool required = true);
  // Repeat count (>= 1) and whether the column is variable-length.
  void column_shape(int col, long& repeat, bool& variable);
  // All rows of a scalar (repeat 1, fixed) column as doubles / longs.
  std::vector<double> scalar_doubles(int col);
  std::vector<long> scalar_longs(int col);
  // The vector of one row (1-based) as doubles / longs: the full repeat of a
  // fixed column, the stored length of a variable-length one.
  void row_doubles(int col, long row, std::vector<double>& out);
  void row_longs(int col, long row, std::vector<long>& out);
  // Keyword values of the current HDU; false when absent.
  bool key_long(const std::string& key, long& v);
  bool key_string(const std::string& key, std::string& v);

  std::string colname(int col) const;
  // "<file>, extension <EXT>, column <COL>: <what>"
  [[noreturn]] void fail(int col, const std::string& what) const;
  [[noreturn]] void fail(const std::string& what) const;

 private:
  void check(int status, const std::string& what, int col = 0) const;
  std::string path_;
  std::string ext_;
  long rows_ = 0;
  FitsHandle f_;
};

// Energies in keV: TUNIT absent or "keV" (case-insensitive); otherwise InputError.
void require_kev(OgipTable& t, int col);
// %.9g
std::string fmt(double v);
// ENERG_LO / ENERG_HI: finite, >= 0, lo < hi, increasing and contiguous (InputError naming the column and row).
void check_energy_grid(const OgipTable& t, int clo, int chi, const std::vector<double>& lo, const std::vector<double>& hi);

// Trimmed, upper-cased copy.
std::string upper_trim(std::string s);

}  // namespace icmscope::io::detail
