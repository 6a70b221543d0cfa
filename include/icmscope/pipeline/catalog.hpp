#pragma once
// Catalog rows, per-target record files and the catalog writers (CSV and FITS
// binary table) of `survey`.
//
// A row is an ordered list of named cells (text, integer or real, each with a
// unit). A record file holds one target's row (or its failure) with the
// configuration hash it was made with; it is written atomically, so a record
// either exists complete or not at all. The catalog is assembled from the rows
// in target order: its columns are the union of the rows' columns in order of
// first appearance (a real column missing from a row is NaN, a text column is
// empty, an integer column missing anywhere becomes real). Without rows the
// catalog has the columns target_index and target_id.
#include <functional>
#include <limits>
#include <map>
#include <optional>
#include <string>
#include <vector>

#include "icmscope/io/fits_keywords.hpp"

namespace icmscope::pipeline {

enum class CellType { text, integer, real };

struct CatalogCell {
  std::string column;
  std::string unit;  // FITS convention ("deg", "kpc", "count", "keV"); "" = none
  CellType type = CellType::real;
  std::string text;
  long long integer = 0;
  double real = std::numeric_limits<double>::quiet_NaN();
};

class CatalogRow {
 public:
  // Set (or replace) a cell; the first set fixes the column's position.
  void text(const std::string& column, const std::string& value, const std::string& unit = "");
  void integer(const std::string& column, long long value, const std::string& unit = "");
  void real(const std::string& column, double value, const std::string& unit = "");
  const std::vector<CatalogCell>& cells() const { return cells_; }
  const CatalogCell* find(const std::string& column) const;
  // A real or integer cell as double (NaN if absent or text).
  double number(const std::string& column) const;
  // A text cell (or the formatted number), "" if absent.
  std::string str(const std::string& column) const;

 private:
  void put(CatalogCell c);
  std::vector<CatalogCell> cells_;
  std::map<std::string, std::size_t> index_;
};

// One target's outcome as stored in <target folder>/record.txt.
struct TargetRecord {
  std::string target_id;
  std::string config_hash;
  bool ok = false;
  std::string reason;  // failures: the one-line error
  CatalogRow row;      // ok: the catalog row
};

std::string format_record(const TargetRecord& r);
// nullopt when the text is not a complete record (wrong header, no end line).
std::optional<TargetRecord> parse_record(const std::string& text);
// nullopt when the file is missing or not a complete record.
std::optional<TargetRecord> read_record(const std::string& path);
// Atomic (temporary name, then rename).
void write_record(const std::string& path, const TargetRecord& r);

struct CatalogColumn {
  std::string name;
  std::string unit;
  CellType type = CellType::real;
};

struct Catalog {
  std::vector<CatalogColumn> columns;
  std::vector<CatalogRow> rows;
};

Catalog assemble_catalog(const std::vector<CatalogRow>& rows);

// CSV: a header row of column names, then one line per row; reals at 17
// significant digits, NaN and missing values empty, text quoted when needed.
std::string catalog_csv(const Catalog& c);
void write_catalog_csv(const std::string& path, const Catalog& c);
// FITS: an empty primary HDU (with `keywords`) and one BINTABLE `extname`
// (reals 1D, integers 1K, text nA), written atomically with checksums.
void write_catalog_fits(const std::string& path, const Catalog& c, const std::vector<io::FitsKeyword>& keywords,
                        const std::string& extname = "CATALOG");
// The column list as CSV: name, type, unit, description (description(name) may return "").
std::string catalog_columns_csv(const Catalog& c, const std::function<std::string(const std::string&)>& description);

// A CSV field: quoted when it holds a comma, a quote, a newline or leading/trailing blanks.
std::string csv_field(const std::string& s);

}  // namespace icmscope::pipeline
