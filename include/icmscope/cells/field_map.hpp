#pragma once
// FieldMap: how the columns / datasets of a gas-cells file map onto the
// GasCells fields, and how their raw units convert to the internal ones.
// A plain struct (physics layer, no I/O); the config layer fills it from YAML,
// io::read_cells consumes it.
//
// Every numeric field converts as
//     value_internal = raw * factor * a^a_exp * h^h_exp
// with a the snapshot scale factor and h = H0 / (100 km/s/Mpc). Examples
// (common practice for Gadget-style outputs):
//   positions in ckpc/h                 factor 1,     a_exp  1, h_exp -1
//   masses in 1e10 Msun/h               factor 1e10,  a_exp  0, h_exp -1
//   densities in 1e10 (Msun/h)/(ckpc/h)^3  factor 1e10, a_exp -3, h_exp  2
//   velocities sqrt(a) km/s ("peculiar / sqrt(a)")  factor 1, a_exp 0.5, h_exp 0
//   internal energy (km/s)^2 per unit mass           factor 1, a_exp 0, h_exp 0
//   smoothing length in ckpc/h          factor 1,     a_exp  1, h_exp -1
// The internal units are those of gas_cells.hpp: kpc (physical), km/s, Msun,
// Msun/kpc^3, keV, solar metallicity, kpc.
#include <array>
#include <cstddef>
#include <string>

#include "icmscope/cells/gas_cells.hpp"

namespace icmscope::cells {

// What to do with cells that fail validation (validate.hpp).
enum class BadCellPolicy {
  Error,  // throw core::InputError naming the file, first index and field
  Drop,   // remove them; the reader reports how many (the caller logs it)
};

// One scalar input field.
struct FieldSpec {
  // HDF5: dataset path from the root ("PartType0/Masses"); FITS / CSV: column
  // name (FITS matching is case-insensitive). Empty: the field is not read.
  std::string source;
  double factor = 1.0;  // raw unit -> internal unit
  double a_exp = 0.0;   // exponent of the scale factor a
  double h_exp = 0.0;   // exponent of little h
  // When true, a source named here but missing from the file leaves the field
  // absent instead of raising an error.
  bool optional = false;

  bool named() const { return !source.empty(); }
  bool scaled() const { return a_exp != 0.0 || h_exp != 0.0; }
};

// A 3-vector field (positions, velocities): either one source with three
// components (an (N,3) HDF5 dataset, a FITS vector column of repeat 3) or three
// scalar sources named in `components` (x, y, z). The unit conversion is
// shared by the three components.
struct VectorFieldSpec {
  std::string source;                     // one (N,3) source, or empty
  std::array<std::string, 3> components;  // x, y, z sources when `source` is empty
  double factor = 1.0;
  double a_exp = 0.0;
  double h_exp = 0.0;
  bool optional = false;

  bool single() const { return !source.empty(); }
  bool split() const { return source.empty() && !components[0].empty(); }
  bool named() const { return single() || split(); }
  bool scaled() const { return a_exp != 0.0 || h_exp != 0.0; }
};

// How the smoothing-length column is to be read.
enum class SmoothingConvention {
  // The column is the compact-support radius H of the kernel (W = 0 for r > H),
  // e.g. Gadget-2/3 "SmoothingLength" and Wendland-kernel codes.
  Support,
  // The column is the cubic-spline h of Monaghan & Lattanzio (1985), whose
  // kernel vanishes at r = 2h: the support is H = 2h.
  CubicSplineH,
};

// How the metallicity column is to be read.
enum class MetallicityConvention {
  MassFraction,  // Z (metal mass fraction); divided by FieldMap::solar_metal_mass_fraction
  Solar,         // already in solar units of the abundance set (after `factor`)
};

// Solar metal mass fractions of two common abundance sets, for
// FieldMap::solar_metal_mass_fraction. It must match the abundance set of the
// emission model.
inline constexpr double kSolarZAndersGrevesse1989 = 0.0194;  // Anders & Grevesse 1989, GCA 53, 197
inline constexpr double kSolarZAsplund2009 = 0.0134;         // Asplund et al. 2009, ARA&A 47, 481

struct FieldMap {
  CellKind kind = CellKind::Particles;

  // ---- geometry and kinematics ----
  VectorFieldSpec position;  // -> kpc (physical); required
  VectorFieldSpec velocity;  // -> km/s; optional (leave unnamed)

  // ---- mass and density: give two of {mass, density, volume} ----
  // mass + density: both read; mass + volume: density = mass / volume;
  // density + volume: mass = density * volume.
  FieldSpec mass;     // -> Msun
  FieldSpec density;  // -> Msun/kpc^3 (gas mass density)
  FieldSpec volume;   // -> kpc^3 (mesh cells)

  // ---- thermal state: temperature OR specific internal energy ----
  FieldSpec temperature;      // -> keV (a column in K needs factor 1/core::constants::keV_K)
  FieldSpec internal_energy;  // -> (km/s)^2; T = (gamma-1) mu m_p u / k_B (physics.md section 10)
  // Electron abundance x_e = n_e / n_H per cell (dimensionless, after factor);
  // gives mu = 4 / (1 + 3X + 4 X x_e). Without it the gas is taken as fully
  // ionised H + He: mu = 4 / (3 + 5X) (0.588 for X = 0.76). Only used with
  // internal_energy.
  FieldSpec electron_abundance;
  double hydrogen_mass_fraction = 0.76;  // X, primordial (common practice)
  double adiabatic_index = 5.0 / 3.0;    // gamma of a monatomic ideal gas

  // ---- metallicity ----
  FieldSpec metallicity;
  MetallicityConvention metallicity_convention = MetallicityConvention::MassFraction;
  // Z_sun for MassFraction inputs; 0 = not set (an error when needed). See the
  // kSolarZ* constants above.
  double solar_metal_mass_fraction = 0.0;
  // Used for every cell when `metallicity` is not named (solar units);
  // negative = metallicity is required.
  double metallicity_fallback_solar = -1.0;

  // ---- kernel support ----
  // Particles: the smoothing length is required. Mesh: the smoothing length
  // is used when named; otherwise support = mesh_support_factor * (3V/4pi)^(1/3)
  // with V the volume column or mass / density (physics.md section 7: a
  // convention of ~2-2.5, not a published constant).
  FieldSpec smoothing_length;  // -> kpc, in the convention below
  SmoothingConvention smoothing_convention = SmoothingConvention::Support;
  double mesh_support_factor = 2.0;

  // ---- flags ----
  FieldSpec star_formation_rate;  // cells with a value > 0 get kFlagStarForming
  FieldSpec cold;                 // cells with a non-zero value get kFlagCold
  FieldSpec flags;                // raw kFlag* bit field (the project's own layout)

  // ---- snapshot cosmology ----
  // Scale factor a = 1/(1+z) and little h of the snapshot. 0 = not set: an
  // error if any named field has a non-zero a_exp / h_exp, unless the
  // corresponding HDF5 attribute below is named (e.g. "Header/Time",
  // "Header/HubbleParam": the last path component is the attribute name,
  // the rest the group or dataset carrying it).
  double scale_factor = 0.0;
  double hubble_h = 0.0;
  std::string scale_factor_attribute;
  std::string hubble_h_attribute;
  // HDF5 string attribute "particles" / "mesh" that overrides `kind` when
  // present in the file (the project's own layout sets it).
  std::string kind_attribute;

  // ---- reading ----
  std::size_t chunk_rows = std::size_t{1} << 18;  // rows converted per chunk (bounded memory)
  std::string fits_extension;  // FITS: EXTNAME of the table; empty = the first binary table
};

}  // namespace icmscope::cells
