#pragma once
// Validation of gas cells: every cell must be finite and physical before it
// reaches emission and projection. Unusable cells are never used silently:
// the policy either raises an error naming the first offender or drops them
// and returns the count for the caller to log.
#include <array>
#include <cstddef>
#include <string>

#include "icmscope/cells/field_map.hpp"
#include "icmscope/cells/gas_cells.hpp"

namespace icmscope::cells {

// Checked fields, in the order they are tested for each cell.
enum class CellField { Position, Velocity, Mass, Density, Temperature, Metallicity, Support, kCount };
inline constexpr std::size_t kCellFieldCount = static_cast<std::size_t>(CellField::kCount);

// "position", "velocity", "mass", "density", "temperature", "metallicity", "support".
const char* cell_field_name(CellField f);
// "finite", "finite", "finite > 0", "finite > 0", "finite > 0", "finite >= 0", "finite > 0".
const char* cell_field_expectation(CellField f);

struct ValidationReport {
  std::size_t n_cells = 0;  // cells checked
  std::size_t n_bad = 0;    // cells failing at least one check
  // Per field: cells failing that field (a cell may fail several).
  std::array<std::size_t, kCellFieldCount> per_field{};
  // The first bad cell (lowest index) and the first field it fails.
  std::size_t first_index = 0;
  CellField first_field = CellField::Position;
  double first_value = 0.0;  // the offending value (the first bad component for vectors)

  bool ok() const { return n_bad == 0; }
  std::size_t count(CellField f) const { return per_field[static_cast<std::size_t>(f)]; }
  // "3 cells unusable; first: index 17, field temperature = nan (expected finite > 0)"
  std::string summary() const;
  // "temperature 2, density 1" (fields with non-zero counts).
  std::string field_counts() const;
};

// Checks every cell: finite positions (and velocities when present),
// mass > 0, density > 0, kT > 0, metallicity >= 0, support > 0, all finite.
// Also requires all per-cell arrays to have the same length (DomainError
// otherwise: that is a programming error, not bad data).
ValidationReport validate_cells(const GasCells& cells);

// Removes the cells that fail validate_cells, keeping the order of the
// others; returns the number removed.
std::size_t drop_bad_cells(GasCells& cells);

// Applies the policy. Error: throws core::InputError
// "<source>: <report.summary()>" when any cell is bad. Drop: removes the bad
// cells and returns their number (0 when all are good). `source` names the
// file (or model) the cells came from.
std::size_t apply_bad_cell_policy(GasCells& cells, const ValidationReport& report, BadCellPolicy policy,
                                  const std::string& source);

}  // namespace icmscope::cells
