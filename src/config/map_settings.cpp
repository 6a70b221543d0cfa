// YAML -> MapRunSettings (the `project` verb and the map stage of later verbs).
#include "icmscope/config/map_settings.hpp"

#include <cmath>

#include "icmscope/core/errors.hpp"
#include "icmscope/io/cells_reader.hpp"

namespace icmscope::config {

TargetSettings read_target(const Section& s) {
  TargetSettings t;
  t.name = s.text("name");
  if (t.name.empty()) s.fail("name", "expected a non-empty name");
  t.redshift = s.number("redshift", std::nullopt, Range{0.0, 20.0, true, false});
  t.ra_deg = s.number("ra_deg", 0.0, Range{0.0, 360.0, false, true});
  t.dec_deg = s.number("dec_deg", 0.0, Range::closed(-90.0, 90.0));
  const auto c = s.numbers("centre_kpc", std::vector<double>{0, 0, 0}, Range::any(), 3, 3);
  t.centre_kpc = {c[0], c[1], c[2]};
  t.r500_kpc = s.number("r500_kpc", 0.0, Range::non_negative());
  return t;
}

CosmologySettings read_cosmology(const std::optional<Section>& s) {
  CosmologySettings c;
  if (!s) {
    // Record the defaults so the echo shows them.
    return c;
  }
  c.H0_km_s_Mpc = s->number("H0_km_s_Mpc", 70.0, Range{10.0, 200.0, false, false});
  c.Omega_m = s->number("Omega_m", 0.3, Range{0.0, 2.0, true, false});
  c.Omega_lambda = s->number("Omega_lambda", 0.7, Range::closed(-1.0, 2.0));
  return c;
}

static cells::FieldSpec read_field_spec(const Section& s, const std::string& key, bool optional_field) {
  cells::FieldSpec f;
  f.optional = optional_field;
  if (!s.has(key)) return f;
  if (s.is_scalar(key)) {
    f.source = s.text(key);
    return f;
  }
  const Section c = s.child(key);
  f.source = c.text("source");
  f.factor = c.number("factor", 1.0, Range{0.0, INFINITY, true, false});
  f.a_exp = c.number("a_exp", 0.0);
  f.h_exp = c.number("h_exp", 0.0);
  f.optional = c.flag("optional", optional_field);
  return f;
}

static cells::VectorFieldSpec read_vector_spec(const Section& s, const std::string& key, bool optional_field) {
  cells::VectorFieldSpec v;
  v.optional = optional_field;
  if (!s.has(key)) return v;
  if (s.is_scalar(key)) {
    v.source = s.text(key);
    return v;
  }
  const Section c = s.child(key);
  if (c.has("components")) {
    const auto comp = c.texts("components");
    if (comp.size() != 3) c.fail("components", "expected three column names [x, y, z]");
    v.components = {comp[0], comp[1], comp[2]};
    if (c.has("source")) c.fail("source", "give either 'source' (one 3-vector) or 'components', not both");
  } else {
    v.source = c.text("source");
  }
  v.factor = c.number("factor", 1.0, Range{0.0, INFINITY, true, false});
  v.a_exp = c.number("a_exp", 0.0);
  v.h_exp = c.number("h_exp", 0.0);
  v.optional = c.flag("optional", optional_field);
  return v;
}

cells::FieldMap read_field_map(const Section& s) {
  cells::FieldMap m;
  m.kind = s.choice("kind", {"particles", "mesh"}, std::string("particles")) == "mesh" ? cells::CellKind::Mesh
                                                                                      : cells::CellKind::Particles;
  m.position = read_vector_spec(s, "position", false);
  if (!m.position.named()) s.fail("position", "missing required field (expected a dataset/column name)");
  m.velocity = read_vector_spec(s, "velocity", true);
  m.mass = read_field_spec(s, "mass", false);
  m.density = read_field_spec(s, "density", false);
  m.volume = read_field_spec(s, "volume", false);
  const int given = int(m.mass.named()) + int(m.density.named()) + int(m.volume.named());
  if (given < 2) s.fail("mass", "give two of mass, density, volume");
  m.temperature = read_field_spec(s, "temperature", false);
  m.internal_energy = read_field_spec(s, "internal_energy", false);
  if (m.temperature.named() == m.internal_energy.named())
    s.fail("temperature", "give exactly one of temperature or internal_energy");
  m.electron_abundance = read_field_spec(s, "electron_abundance", true);
  m.hydrogen_mass_fraction = s.number("hydrogen_mass_fraction", 0.76, Range{0.0, 1.0, true, false});
  m.adiabatic_index = s.number("adiabatic_index", 5.0 / 3.0, Range{1.0, 3.0, true, false});
  m.metallicity = read_field_spec(s, "metallicity", false);
  m.metallicity_convention = s.choice("metallicity_units", {"mass_fraction", "solar"}, std::string("mass_fraction")) ==
                                     "solar"
                                 ? cells::MetallicityConvention::Solar
                                 : cells::MetallicityConvention::MassFraction;
  m.solar_metal_mass_fraction = s.number("solar_metal_mass_fraction", cells::kSolarZAndersGrevesse1989,
                                         Range{0.0, 1.0, true, false});
  m.metallicity_fallback_solar = s.number("metallicity_fallback_solar", -1.0, Range::at_least(-1.0));
  if (!m.metallicity.named() && m.metallicity_fallback_solar < 0)
    s.fail("metallicity", "give a metallicity field or metallicity_fallback_solar >= 0");
  m.smoothing_length = read_field_spec(s, "smoothing_length", false);
  m.smoothing_convention =
      s.choice("smoothing_convention", {"support", "cubic_spline_h"}, std::string("support")) == "cubic_spline_h"
          ? cells::SmoothingConvention::CubicSplineH
          : cells::SmoothingConvention::Support;
  m.mesh_support_factor = s.number("mesh_support_factor", 2.0, Range{0.5, 5.0, false, false});
  if (m.kind == cells::CellKind::Particles && !m.smoothing_length.named())
    s.fail("smoothing_length", "particles need a smoothing_length field");
  m.star_formation_rate = read_field_spec(s, "star_formation_rate", true);
  m.cold = read_field_spec(s, "cold", true);
  m.flags = read_field_spec(s, "flags", true);
  m.scale_factor = s.number("scale_factor", 0.0, Range::closed(0.0, 1.0));
  m.hubble_h = s.number("hubble_h", 0.0, Range::closed(0.0, 2.0));
  m.scale_factor_attribute = s.text("scale_factor_attribute", std::string());
  m.hubble_h_attribute = s.text("hubble_h_attribute", std::string());
  m.chunk_rows = static_cast<std::size_t>(s.integer("chunk_rows", 1 << 18, Range::closed(1, 1e9)));
  m.fits_extension = s.text("fits_extension", std::string());
  return m;
}

CellSourceSettings read_cell_source(const Section& s) {
  CellSourceSettings c;
  const bool has_file = s.has("file"), has_model = s.has("model");
  if (has_file == has_model) s.fail("file", "give exactly one of 'file' (a cells file) or 'model' (an analytic model)");
  if (has_file) c.cells_file = s.path_value("file");
  if (has_model) {
    c.model_file = s.path_value("model");
    c.model_particles = s.integer("model_particles", 0, Range::non_negative());
    c.model_projection = s.choice("model_projection", {"particles", "analytic"}, std::string("particles"));
    if (c.model_projection == "analytic")
      c.analytic_subsamples = static_cast<int>(s.integer("analytic_subsamples", 2, Range::closed(1, 16)));
  }
  c.bad_cells = s.choice("bad_cells", {"error", "drop"}, std::string("error")) == "drop" ? cells::BadCellPolicy::Drop
                                                                                         : cells::BadCellPolicy::Error;
  if (has_model && s.has("chunk_cells"))
    s.fail("chunk_cells", "applies to a cells file only (a model is synthesised in memory: its k-NN smoothing "
                          "lengths need all particles at once)");
  if (has_file)
    c.chunk_cells = static_cast<std::size_t>(s.integer("chunk_cells", 1 << 20, Range::closed(0, 1e9)));
  if (auto f = s.maybe_child("fields")) {
    if (!has_file) s.fail("fields", "a field map applies to a cells file only");
    c.fields = read_field_map(*f);
  } else {
    c.fields = io::own_layout_field_map();
  }
  return c;
}

SelectionSettings read_selection(const std::optional<Section>& s) {
  SelectionSettings x;
  if (!s) return x;
  x.min_kT_keV = s->number("min_kT_keV", 0.0, Range::non_negative());
  x.exclude_star_forming = s->flag("exclude_star_forming", true);
  x.exclude_cold_flag = s->flag("exclude_cold_flag", true);
  x.max_radius_kpc = s->number("max_radius_kpc", INFINITY, Range::positive_or_unlimited());
  return x;
}

EmissionSettings read_emission(const std::optional<Section>& s) {
  EmissionSettings e;
  if (!s) return e;
  e.model = s->choice("model", {"continuum", "table"}, std::string("continuum"));
  if (e.model == "table") e.table_file = s->path_value("table_file");
  e.abundances = s->choice("abundances", {"anders_grevesse_1989", "asplund_2009"}, std::string(e.abundances));
  e.recombination = s->flag("recombination", true);
  const auto band = s->numbers("band_keV", std::vector<double>{0.5, 2.0}, Range{0.01, 100.0, false, false}, 2, 2);
  if (!(band[1] > band[0])) s->fail("band_keV", "expected [min, max] with max > min");
  e.band_min_keV = band[0];
  e.band_max_keV = band[1];
  e.nH_cm2 = s->number("nH_cm2", 3.0e20, Range::closed(0.0, 1e24));
  if (s->has("effective_area") && s->text("effective_area") != "flat")
    e.effective_area = s->path_value("effective_area");
  else
    e.effective_area = s->text("effective_area", std::string("flat"));
  e.table_kT_min_keV = s->number("table_kT_min_keV", 0.05, Range::positive());
  e.table_kT_max_keV = s->number("table_kT_max_keV", 64.0, Range::positive());
  if (!(e.table_kT_max_keV > e.table_kT_min_keV)) s->fail("table_kT_max_keV", "expected > table_kT_min_keV");
  e.table_kT_points = static_cast<int>(s->integer("table_kT_points", 256, Range::closed(8, 100000)));
  e.table_Z_max_solar = s->number("table_Z_max_solar", 3.0, Range::positive());
  e.table_Z_points = static_cast<int>(s->integer("table_Z_points", 7, Range::closed(2, 1000)));
  e.warn_kT_keV = s->number("warn_kT_keV", 2.0, Range::non_negative());
  e.warn_fraction = s->number("warn_fraction", 0.3, Range::closed(0.0, 1.0));
  return e;
}

ViewSettings read_view(const std::optional<Section>& s) {
  ViewSettings v;
  if (!s) return v;
  v.axis = s->choice("line_of_sight", {"x", "y", "z", "angles", "vector"}, std::string("z"));
  if (v.axis == "angles") {
    const auto a = s->numbers("angles_deg", std::nullopt, Range::any(), 2, 2);
    v.theta_deg = a[0];
    v.phi_deg = a[1];
    if (a[0] < 0 || a[0] > 180) s->fail("angles_deg", "theta must be in [0, 180] degrees");
  } else if (v.axis == "vector") {
    const auto a = s->numbers("vector", std::nullopt, Range::any(), 3, 3);
    if (std::sqrt(a[0] * a[0] + a[1] * a[1] + a[2] * a[2]) == 0) s->fail("vector", "expected a non-zero vector");
    v.vector = {a[0], a[1], a[2]};
  }
  v.depth_kpc = s->number("depth_kpc", INFINITY, Range::positive_or_unlimited());
  v.nx = static_cast<int>(s->integer("pixels", 512, Range::closed(1, 16384)));
  v.ny = static_cast<int>(s->integer("pixels_y", v.nx, Range::closed(1, 16384)));
  const bool has_width = s->has("width_arcmin");
  if (has_width && s->has("pixel_arcsec")) s->fail("width_arcmin", "give either width_arcmin or pixel_arcsec, not both");
  if (has_width) v.pixel_arcsec = s->number("width_arcmin", std::nullopt, Range::positive()) * 60.0 / v.nx;
  else v.pixel_arcsec = s->number("pixel_arcsec", 4.0, Range::positive());
  v.kernel = s->choice("kernel", {"cubic_spline", "wendland_c2", "point"}, std::string("cubic_spline"));
  return v;
}

OutputSettings read_output(const std::optional<Section>& s, const std::string& default_prefix) {
  OutputSettings o;
  o.prefix = default_prefix;
  if (!s) return o;
  o.directory = s->path_value("directory", std::string("icmscope_out"));
  o.prefix = s->text("prefix", default_prefix);
  o.quicklook = s->flag("quicklook", true);
  o.stretch = s->choice("stretch", {"asinh", "log", "linear"}, std::string("asinh"));
  return o;
}

MapRunSettings load_map_run(const std::string& path) {
  auto file = SettingsFile::load(path);
  const Section r = file.root();
  MapRunSettings m;
  m.source_file = path;
  m.target = read_target(r.child("target"));
  m.cosmology = read_cosmology(r.maybe_child("cosmology"));
  m.cells = read_cell_source(r.child("cells"));
  m.selection = read_selection(r.maybe_child("selection"));
  m.emission = read_emission(r.maybe_child("emission"));
  m.view = read_view(r.maybe_child("map"));
  m.output = read_output(r.maybe_child("output"), m.target.name);
  file.finish();
  m.resolved_yaml = file.resolved_yaml();
  m.config_hash = file.resolved_hash();
  return m;
}

const char* map_run_example_yaml() {
  return R"(# icmscope project: gas cells -> physical X-ray maps (one line of sight).
# Units are in the key names. Relative paths resolve against this file's folder.

target:
  name: Maren-7                # used for output names and the OBJECT keyword
  redshift: 0.12               # > 0 (required)
  ra_deg: 150.25               # [0, 360), default 0
  dec_deg: 2.40                # [-90, 90], default 0
  centre_kpc: [0, 0, 0]        # cluster centre in the cells' frame, physical kpc
  r500_kpc: 0                  # optional, 0 = unknown

cosmology:                     # LambdaCDM; curved when Omega_m + Omega_lambda != 1
  H0_km_s_Mpc: 70.0
  Omega_m: 0.3
  Omega_lambda: 0.7

cells:
  model: ../../demo_clusters/models/maren7_cool_core.yaml  # an analytic model, synthesised on the fly
  model_particles: 100000      # override the model's particle count (0 = keep)
  model_projection: particles  # particles (synthesise, then project) | analytic (line-of-sight integrals)
  # analytic_subsamples: 2     # model_projection: analytic -> Gauss-Legendre points per pixel axis
  # file: cells.h5             # ... or a cells file (HDF5, FITS table, CSV); give file OR model
  bad_cells: error             # error | drop: what to do with NaN / non-physical cells
  # chunk_cells: 1048576       # file: cells read and projected at a time (bounded memory; 0 = read all
                               # at once). The maps do not depend on it: bitwise identical for any value
  # fields:                    # field map for files not in icmscope's own layout:
  #   kind: particles          # particles | mesh
  #   position: {source: PartType0/Coordinates, factor: 1.0, a_exp: 1, h_exp: -1}   # -> kpc
  #   velocity: {source: PartType0/Velocities, factor: 1.0, a_exp: 0.5}             # -> km/s
  #   mass: {source: PartType0/Masses, factor: 1.0e10, h_exp: -1}                   # -> Msun
  #   density: {source: PartType0/Density, factor: 1.0e10, a_exp: -3, h_exp: 2}    # -> Msun/kpc^3
  #   volume: ...                                      # -> kpc^3 (two of mass, density, volume)
  #   internal_energy: PartType0/InternalEnergy        # (km/s)^2; or temperature: {source, factor} -> keV
  #   electron_abundance: PartType0/ElectronAbundance  # n_e/n_H per cell (optional)
  #   hydrogen_mass_fraction: 0.76
  #   adiabatic_index: 1.6666667
  #   metallicity: PartType0/GFM_Metallicity           # or metallicity_fallback_solar: 0.3
  #   metallicity_units: mass_fraction                 # mass_fraction | solar
  #   solar_metal_mass_fraction: 0.0194                # match the abundance set (A&G 1989: 0.0194)
  #   smoothing_length: {source: PartType0/SmoothingLength, a_exp: 1, h_exp: -1}
  #   smoothing_convention: support                    # support (kernel radius H) | cubic_spline_h (H = 2h)
  #   mesh_support_factor: 2.0                         # mesh: support = factor * (3V/4pi)^(1/3)
  #   star_formation_rate: PartType0/StarFormationRate # > 0 flags star-forming gas
  #   scale_factor_attribute: Header/Time              # or scale_factor: 0.9
  #   hubble_h_attribute: Header/HubbleParam           # or hubble_h: 0.7
  #   chunk_rows: 262144                               # rows converted at a time when chunk_cells: 0

selection:
  min_kT_keV: 0.0              # drop gas colder than this (0 = keep all)
  exclude_star_forming: true   # drop star-forming cells (when flagged)
  exclude_cold_flag: true      # drop cells flagged cold
  max_radius_kpc: .inf         # keep cells within this 3-D distance of the centre

emission:
  model: continuum             # continuum (free-free + recombination) | table (user emissivity table)
  # table_file: emissivity.fits   # model: table, layout in the README
  abundances: anders_grevesse_1989   # anders_grevesse_1989 | asplund_2009
  recombination: true          # add the Kramers recombination continuum
  band_keV: [0.5, 2.0]         # observed-frame band
  nH_cm2: 3.0e20               # Galactic column (Morrison & McCammon 1983 absorption)
  effective_area: flat         # flat (1 cm^2: maps in photon units) | path to an OGIP SPECRESP file
  table_kT_min_keV: 0.05       # band-table grid (per-cell coefficients are interpolated)
  table_kT_max_keV: 64.0
  table_kT_points: 256
  table_Z_max_solar: 3.0
  table_Z_points: 7
  warn_kT_keV: 2.0             # warn when more than warn_fraction of the band emission
  warn_fraction: 0.3           # comes from gas below warn_kT_keV

map:
  line_of_sight: z             # x | y | z | angles | vector
  # angles_deg: [30, 45]       # line_of_sight: angles -> viewing direction theta, phi
  # vector: [1, 1, 0]          # line_of_sight: vector
  depth_kpc: .inf              # slab thickness along the line of sight
  pixels: 256                  # image width in pixels (pixels_y: height, default = pixels)
  pixel_arcsec: 8.0            # pixel size; or width_arcmin: the full width
  kernel: cubic_spline         # cubic_spline | wendland_c2 | point

output:
  directory: out               # created if missing
  prefix: Maren-7              # default: target name
  quicklook: true              # PNG picture of the surface brightness
  stretch: asinh               # asinh | log | linear
)";
}

}  // namespace icmscope::config
