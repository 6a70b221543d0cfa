#pragma once
// Reading gas cells from HDF5, FITS binary tables or CSV into GasCells, with
// the unit conversions of a FieldMap, in bounded memory: rows are read in
// chunks of FieldMap::chunk_rows and each chunk is converted straight into
// the float arrays (no full-length double copies).
//
// Format by extension (case-insensitive): .h5 / .hdf5 -> HDF5 (datasets named
// by the field map, paths from the root; a position source may be an (N,3)
// dataset), .fits / .fit / .fts -> FITS binary table (columns by name,
// case-insensitive; a position / velocity source may be a vector column of
// repeat 3), .csv -> CSV (a header row of column names, '#' comment lines,
// comma separated, blank lines ignored).
//
// After conversion the cells are validated (cells/validate.hpp) and the
// BadCellPolicy applied. Errors are core::InputError (file problems, bad data)
// or core::ConfigError (an inconsistent field map), one line naming the file
// and the dataset / column / line.
#include <cstddef>
#include <memory>
#include <string>

#include "icmscope/cells/field_map.hpp"
#include "icmscope/cells/gas_cells.hpp"
#include "icmscope/cells/validate.hpp"

namespace icmscope::io {

enum class CellsFormat { Hdf5, Fits, Csv };

// Format from the file extension; InputError for an unknown extension.
CellsFormat cells_format_from_path(const std::string& path);

// What read_cells did, for the caller's log.
struct CellsReadInfo {
  CellsFormat format = CellsFormat::Hdf5;
  std::size_t rows_read = 0;      // rows in the file
  std::size_t cells_dropped = 0;  // removed by BadCellPolicy::Drop
  cells::ValidationReport validation;  // of the cells as read, before dropping
  double scale_factor = 1.0;      // a used for the conversions (1 when no field needed it)
  double hubble_h = 1.0;          // h used (1 when no field needed it)
  cells::CellKind kind = cells::CellKind::Particles;
};

// Reads, converts and validates the cells of `path`.
cells::GasCells read_cells(const std::string& path, const cells::FieldMap& map,
                           cells::BadCellPolicy policy = cells::BadCellPolicy::Error,
                           CellsReadInfo* info = nullptr);

// Chunked reading for inputs larger than memory: the file is opened and the
// field map resolved once (all the checks of read_cells), then each next()
// hands out the following rows (HDF5 hyperslabs, FITS table row ranges, CSV
// line blocks), converted and validated. Bad cells: BadCellPolicy::Error ->
// InputError naming the cell by its row in the file (0-based, as read_cells);
// Drop -> removed, counted in info(). The cells of all chunks, in order, are
// exactly those read_cells returns. Memory: about max_rows * (8 bytes per
// file column + 48 bytes) whatever the file size.
class CellsChunkReader {
 public:
  CellsChunkReader(const std::string& path, const cells::FieldMap& map,
                   cells::BadCellPolicy policy = cells::BadCellPolicy::Error);
  ~CellsChunkReader();
  CellsChunkReader(CellsChunkReader&&) noexcept;
  CellsChunkReader& operator=(CellsChunkReader&&) noexcept;

  // Replaces `out` with the next cells (from at most max_rows > 0 file rows;
  // a chunk whose cells were all dropped is skipped). Returns false, with
  // `out` empty, at the end of the file; InputError then if the file held no
  // rows or no usable cell.
  bool next(std::size_t max_rows, cells::GasCells& out);
  std::size_t rows_hint() const;       // rows in the file when known (HDF5, FITS), 0 for CSV
  cells::CellKind kind() const;
  const CellsReadInfo& info() const;   // totals so far; complete once next() returned false

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

// The field map of the project's own HDF5 layout (cells_writer.hpp): internal
// units, velocity and flags optional, kind from the /cells "kind" attribute.
cells::FieldMap own_layout_field_map();

// Temperature from specific internal energy, physics.md section 10:
// kT = (gamma - 1) mu m_p u, u in (km/s)^2, result in keV.
double kT_keV_from_internal_energy(double u_km2_s2, double mu, double gamma = 5.0 / 3.0);
// Mean molecular weight: mu = 4 / (1 + 3X + 4 X x_e), x_e = n_e / n_H.
double mean_molecular_weight(double hydrogen_mass_fraction, double electron_abundance);
// Fully ionised H + He: mu = 4 / (3 + 5X).
double mean_molecular_weight_ionised(double hydrogen_mass_fraction);

}  // namespace icmscope::io
