#pragma once
// Column sources for io::read_cells: one per file format. A source opens the
// requested columns (checking names, types, shapes and lengths) and then hands
// out consecutive row chunks as doubles, so that the reader converts a chunk
// at a time into the float GasCells arrays.
#include <cstddef>
#include <memory>
#include <string>
#include <vector>

namespace icmscope::io::detail {

struct ColumnRequest {
  std::string name;       // dataset path / column name
  int width = 1;          // 1 (scalar) or 3 (vector)
  bool optional = false;  // absent -> not an error
  std::string field;      // the field-map field, for messages ("position", "mass")
};

class ColumnSource {
 public:
  virtual ~ColumnSource() = default;
  // Opens the requested columns. Returns, per request, whether it is present
  // (only optional requests may be absent); throws core::InputError for a
  // missing required column, a wrong type or shape, or mismatched lengths.
  virtual std::vector<bool> open(const std::vector<ColumnRequest>& requests) = 0;
  // Number of rows when known in advance (HDF5, FITS), 0 when not (CSV).
  virtual std::size_t rows_hint() const = 0;
  // Reads the next rows, at most max_rows, of every present column:
  // out[k] receives rows * width doubles (row-major) for request k (absent
  // requests are left empty). Returns the number of rows, 0 at the end.
  virtual std::size_t next(std::size_t max_rows, std::vector<std::vector<double>>& out) = 0;
  // A numeric / string metadata item: HDF5 attribute "group/attr" or FITS
  // header keyword of the table. Returns false when absent; throws
  // core::InputError when the format has none (CSV) or the type is wrong.
  virtual bool read_number(const std::string& spec, double* value) = 0;
  virtual bool read_text(const std::string& spec, std::string* value) = 0;
};

std::unique_ptr<ColumnSource> open_hdf5_cells(const std::string& path);
std::unique_ptr<ColumnSource> open_fits_cells(const std::string& path, const std::string& extname);
std::unique_ptr<ColumnSource> open_csv_cells(const std::string& path);

}  // namespace icmscope::io::detail
