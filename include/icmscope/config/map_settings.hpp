#pragma once
// Plain settings structs for turning gas cells into physical X-ray maps
// (the `project` verb, and the first stage of `observe` and `survey`), filled
// from YAML by the readers below. Units are in the field names.
#include <array>
#include <limits>
#include <optional>
#include <string>
#include <vector>

#include "icmscope/cells/field_map.hpp"
#include "icmscope/config/settings_reader.hpp"

namespace icmscope::config {

struct TargetSettings {
  std::string name = "target";
  double redshift = 0.1;
  double ra_deg = 0.0;
  double dec_deg = 0.0;
  // Cluster centre in the cells' frame (kpc, physical). The field of view is
  // centred on its projection.
  std::array<double, 3> centre_kpc{0.0, 0.0, 0.0};
  // R500 (kpc) if known: used to state apertures and warnings; 0 = unknown.
  double r500_kpc = 0.0;
};

struct CosmologySettings {
  double H0_km_s_Mpc = 70.0;
  double Omega_m = 0.3;
  double Omega_lambda = 0.7;
};

// Where the cells come from: a file (with a field map) or an analytic model
// synthesised on the fly.
struct CellSourceSettings {
  std::string cells_file;   // HDF5 / FITS table / CSV; empty when model_file is set
  std::string model_file;   // analytic model YAML (see `icmscope synth --example`)
  std::int64_t model_particles = 0;  // override of the model's particle count (0 = keep)
  // particles: synthesise and project particles; analytic: integrate the
  // model along the line of sight directly (noise-free reference).
  std::string model_projection = "particles";
  int analytic_subsamples = 2;       // Gauss-Legendre points per pixel axis (analytic)
  cells::FieldMap fields;   // default: the project's own HDF5 layout
  cells::BadCellPolicy bad_cells = cells::BadCellPolicy::Error;
  // Cells file: rows read, converted and deposited at a time (bounded
  // memory, pipeline::stream_physical_maps); 0 = read the whole file into
  // memory first. The maps are identical either way. Default: one deposit
  // block (pipeline::kMapBlockCells).
  std::size_t chunk_cells = std::size_t{1} << 20;
};

struct SelectionSettings {
  double min_kT_keV = 0.0;            // drop colder gas (0 = keep all)
  bool exclude_star_forming = true;   // drop cells flagged star-forming
  bool exclude_cold_flag = true;      // drop cells flagged cold
  double max_radius_kpc = std::numeric_limits<double>::infinity();  // 3-D distance from the centre
};

struct EmissionSettings {
  std::string model = "continuum";      // continuum | table
  std::string table_file;               // FITS emissivity table (model: table)
  std::string abundances = "anders_grevesse_1989";  // or asplund_2009
  bool recombination = true;            // add the Kramers recombination continuum
  double band_min_keV = 0.5;            // observed-frame band
  double band_max_keV = 2.0;
  double nH_cm2 = 3.0e20;               // Galactic column density
  std::string effective_area = "flat";  // flat (1 cm^2) | path to an OGIP SPECRESP file
  // Band table grid.
  double table_kT_min_keV = 0.05;
  double table_kT_max_keV = 64.0;
  int table_kT_points = 256;
  double table_Z_max_solar = 3.0;
  int table_Z_points = 7;
  // Warn when more than this fraction of the band emission comes from gas
  // below warn_kT_keV (continuum-only accuracy degrades there).
  double warn_kT_keV = 2.0;
  double warn_fraction = 0.3;
};

struct ViewSettings {
  std::string axis = "z";              // x | y | z | angles | vector
  double theta_deg = 0.0, phi_deg = 0.0;  // axis: angles (viewing direction, spherical polar)
  std::array<double, 3> vector{0, 0, 1};  // axis: vector
  double depth_kpc = std::numeric_limits<double>::infinity();  // slab thickness along the line of sight
  int nx = 512, ny = 512;
  double pixel_arcsec = 4.0;
  std::string kernel = "cubic_spline";  // cubic_spline | wendland_c2 | point
};

struct OutputSettings {
  std::string directory = "icmscope_out";
  std::string prefix;                   // default: the target name
  bool quicklook = true;
  std::string stretch = "asinh";        // asinh | log | linear
};

struct MapRunSettings {
  TargetSettings target;
  CosmologySettings cosmology;
  CellSourceSettings cells;
  SelectionSettings selection;
  EmissionSettings emission;
  ViewSettings view;
  OutputSettings output;
  std::string source_file;     // the YAML file read
  std::string resolved_yaml;   // resolved configuration, defaults marked
  std::string config_hash;     // hash of the resolved configuration
};

// Section readers (usable from any verb's YAML).
TargetSettings read_target(const Section& s);
CosmologySettings read_cosmology(const std::optional<Section>& s);
CellSourceSettings read_cell_source(const Section& s);
cells::FieldMap read_field_map(const Section& s);
SelectionSettings read_selection(const std::optional<Section>& s);
EmissionSettings read_emission(const std::optional<Section>& s);
ViewSettings read_view(const std::optional<Section>& s);
OutputSettings read_output(const std::optional<Section>& s, const std::string& default_prefix);

// The whole file of the `project` verb.
MapRunSettings load_map_run(const std::string& path);
// A complete, commented example of that file.
const char* map_run_example_yaml();

}  // namespace icmscope::config
