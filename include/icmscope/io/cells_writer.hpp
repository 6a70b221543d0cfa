#pragma once
// Writing gas cells in the project's own HDF5 layout ("icmscope cells",
// layout version 1), readable back with read_cells(path, own_layout_field_map()).
//
// Layout (all values in internal units, float32 unless noted):
//   /                       attributes: units (string), layout_version (int32 = 1),
//                           program and version (strings; "icmscope" and the
//                           build version unless the caller gives its own),
//                           plus the caller's string attributes
//   /cells                  group; attributes: kind ("particles" | "mesh"),
//                           count (uint64, number of cells)
//   /cells/position         (N,3)  kpc, physical
//   /cells/velocity         (N,3)  km/s            [only when the cells have velocities]
//   /cells/mass_msun        (N)    Msun
//   /cells/density_msun_kpc3 (N)   gas mass density, Msun/kpc^3
//   /cells/kT_keV           (N)    keV
//   /cells/metallicity_solar (N)   solar units of the abundance set
//   /cells/support_kpc      (N)    kernel support radius H (W = 0 beyond), kpc
//   /cells/flags            (N)    uint8 kFlag* bits  [only when the cells have flags]
// Every dataset carries a "units" string attribute. The file is written under
// a temporary name in the same directory and renamed when complete.
#include <string>
#include <utility>
#include <vector>

#include "icmscope/cells/gas_cells.hpp"

namespace icmscope::io {

// Root string attributes (name, value), e.g. {"config_hash", "..."}, {"seed", "42"}.
// Names must be unique; "units" and "layout_version" are reserved.
using Hdf5Attributes = std::vector<std::pair<std::string, std::string>>;

// Throws core::OutputError naming the file on any failure (nothing is left
// under `path` then); core::DomainError when the cell arrays have unequal lengths.
void write_cells_hdf5(const std::string& path, const cells::GasCells& cells, const Hdf5Attributes& attributes = {});

}  // namespace icmscope::io
