// read_cells: field-map resolution, chunked unit conversion into GasCells,
// validation. The format-specific column sources live in cells_*_source.cpp.
#include "icmscope/io/cells_reader.hpp"

#include <algorithm>
#include <cctype>
#include <cmath>
#include <cstdint>
#include <cstdio>
#include <memory>
#include <string>
#include <vector>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "io/detail/cells_source.hpp"

namespace icmscope::io {

namespace {

namespace k = core::constants;
using cells::CellKind;
using cells::FieldMap;
using cells::FieldSpec;
using cells::GasCells;
using cells::VectorFieldSpec;
using core::ConfigError;
using core::InputError;

std::string lower(std::string s) {
  for (char& c : s) c = static_cast<char>(std::tolower(static_cast<unsigned char>(c)));
  return s;
}

std::string fmt(double v) {
  char b[32];
  std::snprintf(b, sizeof b, "%g", v);
  return b;
}

// Request indices into the column list; -1 = not requested or absent.
struct Plan {
  int pos = -1, pos_xyz[3] = {-1, -1, -1};
  int vel = -1, vel_xyz[3] = {-1, -1, -1};
  int mass = -1, dens = -1, vol = -1;
  int temp = -1, u = -1, xe = -1;
  int metal = -1, smooth = -1;
  int sfr = -1, cold = -1, flags = -1;
};

class Requests {
 public:
  int add(const std::string& name, int width, bool optional, const std::string& field) {
    list.push_back({name, width, optional, field});
    return static_cast<int>(list.size()) - 1;
  }
  int add(const FieldSpec& f, const std::string& field) {
    return f.named() ? add(f.source, 1, f.optional, field) : -1;
  }
  std::vector<detail::ColumnRequest> list;
};

void add_vector(Requests& r, const VectorFieldSpec& v, const std::string& field, int* single, int* xyz) {
  if (v.single()) {
    *single = r.add(v.source, 3, v.optional, field);
  } else if (v.split()) {
    static const char* axis[3] = {"x", "y", "z"};
    for (int c = 0; c < 3; ++c) xyz[c] = r.add(v.components[c], 1, v.optional, field + " " + axis[c]);
  }
}

inline void drop_absent(int& idx, const std::vector<bool>& present) {
  if (idx >= 0 && !present[static_cast<std::size_t>(idx)]) idx = -1;
}

// A field-map inconsistency found before reading.
[[noreturn]] void map_error(const std::string& path, const std::string& what) {
  throw ConfigError("field map for " + path + ": " + what);
}

void check_map(const std::string& path, const FieldMap& m) {
  if (!m.position.named()) map_error(path, "position has no source (name one (N,3) source or three x/y/z sources)");
  for (const VectorFieldSpec* v : {&m.position, &m.velocity})
    if (!v->single() && (!v->components[0].empty() || !v->components[1].empty() || !v->components[2].empty()) &&
        (v->components[0].empty() || v->components[1].empty() || v->components[2].empty()))
      map_error(path, std::string(v == &m.position ? "position" : "velocity") +
                          " names only some of its x/y/z components");
  const int n_md = int(m.mass.named()) + int(m.density.named()) + int(m.volume.named());
  if (n_md < 2) map_error(path, "name two of mass, density, volume (got " + std::to_string(n_md) + ")");
  if (m.temperature.named() == m.internal_energy.named())
    map_error(path, m.temperature.named() ? "name temperature or internal_energy, not both"
                                          : "name temperature or internal_energy");
  if (m.electron_abundance.named() && !m.internal_energy.named())
    map_error(path, "electron_abundance is only used with internal_energy");
  if (!(m.hydrogen_mass_fraction > 0.0 && m.hydrogen_mass_fraction <= 1.0))
    map_error(path, "hydrogen_mass_fraction = " + fmt(m.hydrogen_mass_fraction) + " (expected 0 < X <= 1)");
  if (!(m.adiabatic_index > 1.0)) map_error(path, "adiabatic_index = " + fmt(m.adiabatic_index) + " (expected > 1)");
  if (!m.metallicity.named() && !(m.metallicity_fallback_solar >= 0.0))
    map_error(path, "metallicity has no source and no metallicity_fallback_solar");
  if (m.metallicity.named() && m.metallicity_convention == cells::MetallicityConvention::MassFraction &&
      !(m.solar_metal_mass_fraction > 0.0))
    map_error(path, "metallicity is a mass fraction but solar_metal_mass_fraction is not set");
  if (m.kind == CellKind::Particles && !m.smoothing_length.named() && m.kind_attribute.empty())
    map_error(path, "particles need a smoothing_length source");
  if (!(m.mesh_support_factor > 0.0))
    map_error(path, "mesh_support_factor = " + fmt(m.mesh_support_factor) + " (expected > 0)");
  if (m.chunk_rows == 0) map_error(path, "chunk_rows must be positive");
}

// Resolves a (or h) from the map value or a file attribute, when needed.
double resolve_cosmo(const std::string& path, detail::ColumnSource& src, double value, const std::string& attr,
                     bool needed, const std::string& what, const std::string& first_user) {
  if (!needed) return 1.0;
  if (value > 0.0) return value;
  if (!attr.empty()) {
    double v = 0.0;
    if (!src.read_number(attr, &v)) throw InputError(path + ": attribute '" + attr + "' (" + what + ") not found");
    if (!(std::isfinite(v) && v > 0.0))
      throw InputError(path + ": attribute '" + attr + "' (" + what + ") = " + fmt(v) + " (expected > 0)");
    return v;
  }
  map_error(path, first_user + " needs " + what + " but it is not set (give it, or name its attribute)");
}

}  // namespace

double mean_molecular_weight(double X, double x_e) { return 4.0 / (1.0 + 3.0 * X + 4.0 * X * x_e); }

double mean_molecular_weight_ionised(double X) { return 4.0 / (3.0 + 5.0 * X); }

double kT_keV_from_internal_energy(double u_km2_s2, double mu, double gamma) {
  // u [(km/s)^2] -> [cm^2/s^2] = 1e10; kT = (gamma - 1) mu m_p u, in erg -> keV.
  return (gamma - 1.0) * mu * k::m_p_g * u_km2_s2 * 1e10 / k::keV_erg;
}

CellsFormat cells_format_from_path(const std::string& path) {
  const auto dot = path.find_last_of('.');
  const auto slash = path.find_last_of('/');
  const std::string ext = (dot == std::string::npos || (slash != std::string::npos && dot < slash))
                              ? ""
                              : lower(path.substr(dot + 1));
  if (ext == "h5" || ext == "hdf5") return CellsFormat::Hdf5;
  if (ext == "fits" || ext == "fit" || ext == "fts") return CellsFormat::Fits;
  if (ext == "csv") return CellsFormat::Csv;
  throw InputError(path + ": unknown cells file type '." + ext + "' (expected .h5, .hdf5, .fits, .fit, .fts or .csv)");
}

cells::FieldMap own_layout_field_map() {
  FieldMap m;
  m.kind = CellKind::Particles;
  m.kind_attribute = "cells/kind";
  m.position.source = "cells/position";
  m.velocity.source = "cells/velocity";
  m.velocity.optional = true;
  m.mass.source = "cells/mass_msun";
  m.density.source = "cells/density_msun_kpc3";
  m.temperature.source = "cells/kT_keV";
  m.metallicity.source = "cells/metallicity_solar";
  m.metallicity_convention = cells::MetallicityConvention::Solar;
  m.smoothing_length.source = "cells/support_kpc";
  m.smoothing_convention = cells::SmoothingConvention::Support;
  m.flags.source = "cells/flags";
  m.flags.optional = true;
  return m;
}

namespace {

// The resolved field map of one open file: which columns feed which field,
// the unit factors, and the conversion of one source chunk into GasCells.
struct Converter {
  std::unique_ptr<detail::ColumnSource> src;
  CellsFormat format = CellsFormat::Hdf5;
  Plan p;
  bool have_vel = false, any_flags = false;
  CellKind kind = CellKind::Particles;
  double a = 1.0, h = 1.0;
  double s_pos = 1, s_vel = 1, s_m = 1, s_d = 1, s_v = 1, s_t = 1, s_u = 1, s_xe = 1, s_z = 1, s_h = 1;
  double X = 0.76, mu_ionised = 1.0, u_to_keV = 1.0, mesh_f = 2.0, z_fallback = 0.0;
  std::vector<std::vector<double>> buf;

  Converter(const std::string& path, const FieldMap& map);
  // Sizes the per-cell arrays of `cells` to n (velocities and flags as the file has them).
  void size_cells(GasCells& cells, std::size_t n) const {
    cells.kind = kind;
    cells.resize(n);
    if (have_vel) {
      cells.vx.resize(n);
      cells.vy.resize(n);
      cells.vz.resize(n);
    }
    if (any_flags) cells.flags.resize(n, 0);
  }
  // Reads the next source chunk (at most max_rows rows) and converts it into
  // cells[off, off + n), growing `cells` when needed; returns n (0 at the end).
  std::size_t next(std::size_t max_rows, GasCells& cells, std::size_t off) {
    const std::size_t n = src->next(max_rows, buf);
    if (n == 0) return 0;
    if (off + n > cells.size()) size_cells(cells, off + n);
    convert(n, cells, off);
    return n;
  }
  void convert(std::size_t n, GasCells& cells, std::size_t off) const;
};

Converter::Converter(const std::string& path, const FieldMap& map) {
  Converter& c = *this;
  format = cells_format_from_path(path);
  check_map(path, map);
  switch (format) {
    case CellsFormat::Hdf5: src = detail::open_hdf5_cells(path); break;
    case CellsFormat::Fits: src = detail::open_fits_cells(path, map.fits_extension); break;
    case CellsFormat::Csv: src = detail::open_csv_cells(path); break;
  }

  Plan& p = c.p;
  // ---- requests ----
  Requests rq;
  add_vector(rq, map.position, "position", &p.pos, p.pos_xyz);
  add_vector(rq, map.velocity, "velocity", &p.vel, p.vel_xyz);
  p.mass = rq.add(map.mass, "mass");
  p.dens = rq.add(map.density, "density");
  p.vol = rq.add(map.volume, "volume");
  p.temp = rq.add(map.temperature, "temperature");
  p.u = rq.add(map.internal_energy, "internal_energy");
  p.xe = rq.add(map.electron_abundance, "electron_abundance");
  p.metal = rq.add(map.metallicity, "metallicity");
  p.smooth = rq.add(map.smoothing_length, "smoothing_length");
  p.sfr = rq.add(map.star_formation_rate, "star_formation_rate");
  p.cold = rq.add(map.cold, "cold");
  p.flags = rq.add(map.flags, "flags");

  const std::vector<bool> present = c.src->open(rq.list);
  for (int* idx : {&p.pos, &p.vel, &p.mass, &p.dens, &p.vol, &p.temp, &p.u, &p.xe, &p.metal, &p.smooth, &p.sfr,
                   &p.cold, &p.flags})
    drop_absent(*idx, present);
  for (int c = 0; c < 3; ++c) {
    drop_absent(p.pos_xyz[c], present);
    drop_absent(p.vel_xyz[c], present);
  }
  // A split vector is present only if all three components are.
  if (p.vel_xyz[0] < 0 || p.vel_xyz[1] < 0 || p.vel_xyz[2] < 0) p.vel_xyz[0] = p.vel_xyz[1] = p.vel_xyz[2] = -1;
  const bool have_pos = p.pos >= 0 || (p.pos_xyz[0] >= 0 && p.pos_xyz[1] >= 0 && p.pos_xyz[2] >= 0);
  if (!have_pos) throw InputError(path + ": position not found");
  c.have_vel = p.vel >= 0 || p.vel_xyz[0] >= 0;

  // ---- kind ----
  c.kind = map.kind;
  if (!map.kind_attribute.empty()) {
    std::string s;
    if (format != CellsFormat::Csv && c.src->read_text(map.kind_attribute, &s)) {
      s = lower(s);
      if (s == "particles") c.kind = CellKind::Particles;
      else if (s == "mesh") c.kind = CellKind::Mesh;
      else throw InputError(path + ": attribute '" + map.kind_attribute + "' = '" + s + "' (expected particles or mesh)");
    }
  }

  // ---- combinations that depend on what the file holds ----
  const bool hm = p.mass >= 0, hd = p.dens >= 0, hv = p.vol >= 0;
  if (int(hm) + int(hd) + int(hv) < 2)
    throw InputError(path + ": need two of mass, density, volume; found " +
                     std::string(hm ? "mass" : hd ? "density" : hv ? "volume" : "none of them"));
  if (p.temp < 0 && p.u < 0) throw InputError(path + ": no temperature / internal energy");
  if (p.smooth < 0 && c.kind == CellKind::Particles)
    throw InputError(path + ": particles need a smoothing length" +
                     (map.smoothing_length.named() ? " ('" + map.smoothing_length.source + "' absent)"
                                                   : std::string(" (none named in the field map)")));

  // ---- snapshot a and h (only if some present field needs them) ----
  bool need_a = false, need_h = false;
  std::string a_user, h_user;
  auto note = [&](double a_exp, double h_exp, bool used, const char* name) {
    if (!used) return;
    if (a_exp != 0.0 && !need_a) need_a = true, a_user = std::string(name) + " (a_exp " + fmt(a_exp) + ")";
    if (h_exp != 0.0 && !need_h) need_h = true, h_user = std::string(name) + " (h_exp " + fmt(h_exp) + ")";
  };
  note(map.position.a_exp, map.position.h_exp, true, "position");
  note(map.velocity.a_exp, map.velocity.h_exp, c.have_vel, "velocity");
  note(map.mass.a_exp, map.mass.h_exp, hm, "mass");
  note(map.density.a_exp, map.density.h_exp, hd, "density");
  note(map.volume.a_exp, map.volume.h_exp, hv, "volume");
  note(map.temperature.a_exp, map.temperature.h_exp, p.temp >= 0, "temperature");
  note(map.internal_energy.a_exp, map.internal_energy.h_exp, p.u >= 0, "internal_energy");
  note(map.electron_abundance.a_exp, map.electron_abundance.h_exp, p.xe >= 0, "electron_abundance");
  note(map.metallicity.a_exp, map.metallicity.h_exp, p.metal >= 0, "metallicity");
  note(map.smoothing_length.a_exp, map.smoothing_length.h_exp, p.smooth >= 0, "smoothing_length");
  c.a = resolve_cosmo(path, *c.src, map.scale_factor, map.scale_factor_attribute, need_a,
                                 "the scale factor a", a_user);
  c.h = resolve_cosmo(path, *c.src, map.hubble_h, map.hubble_h_attribute, need_h, "little h", h_user);
  auto scale = [&](double factor, double a_exp, double h_exp) {
    return factor * std::pow(c.a, a_exp) * std::pow(c.h, h_exp);
  };
  c.s_pos = scale(map.position.factor, map.position.a_exp, map.position.h_exp);
  c.s_vel = scale(map.velocity.factor, map.velocity.a_exp, map.velocity.h_exp);
  c.s_m = scale(map.mass.factor, map.mass.a_exp, map.mass.h_exp);
  c.s_d = scale(map.density.factor, map.density.a_exp, map.density.h_exp);
  c.s_v = scale(map.volume.factor, map.volume.a_exp, map.volume.h_exp);
  c.s_t = scale(map.temperature.factor, map.temperature.a_exp, map.temperature.h_exp);
  c.s_u = scale(map.internal_energy.factor, map.internal_energy.a_exp, map.internal_energy.h_exp);
  c.s_xe = scale(map.electron_abundance.factor, map.electron_abundance.a_exp, map.electron_abundance.h_exp);
  c.s_z = scale(map.metallicity.factor, map.metallicity.a_exp, map.metallicity.h_exp);
  if (map.metallicity_convention == cells::MetallicityConvention::MassFraction) c.s_z /= map.solar_metal_mass_fraction;
  c.s_h = scale(map.smoothing_length.factor, map.smoothing_length.a_exp, map.smoothing_length.h_exp);
  if (map.smoothing_convention == cells::SmoothingConvention::CubicSplineH) c.s_h *= 2.0;
  c.X = map.hydrogen_mass_fraction;
  c.mu_ionised = mean_molecular_weight_ionised(c.X);
  c.u_to_keV = kT_keV_from_internal_energy(1.0, 1.0, map.adiabatic_index);  // per unit mu and u
  c.mesh_f = map.mesh_support_factor;
  c.z_fallback = map.metallicity_fallback_solar;
  c.any_flags = p.sfr >= 0 || p.cold >= 0 || p.flags >= 0;
}

void Converter::convert(std::size_t n, GasCells& cells, std::size_t off) const {
    auto col = [&](int idx) -> const double* { return idx >= 0 ? buf[static_cast<std::size_t>(idx)].data() : nullptr; };
    // positions / velocities
    {
      float* out[3] = {cells.x.data() + off, cells.y.data() + off, cells.z.data() + off};
      if (p.pos >= 0) {
        const double* b = col(p.pos);
        for (std::size_t i = 0; i < n; ++i)
          for (int c = 0; c < 3; ++c) out[c][i] = static_cast<float>(b[3 * i + c] * s_pos);
      } else {
        for (int c = 0; c < 3; ++c) {
          const double* b = col(p.pos_xyz[c]);
          for (std::size_t i = 0; i < n; ++i) out[c][i] = static_cast<float>(b[i] * s_pos);
        }
      }
    }
    if (have_vel) {
      float* out[3] = {cells.vx.data() + off, cells.vy.data() + off, cells.vz.data() + off};
      if (p.vel >= 0) {
        const double* b = col(p.vel);
        for (std::size_t i = 0; i < n; ++i)
          for (int c = 0; c < 3; ++c) out[c][i] = static_cast<float>(b[3 * i + c] * s_vel);
      } else {
        for (int c = 0; c < 3; ++c) {
          const double* b = col(p.vel_xyz[c]);
          for (std::size_t i = 0; i < n; ++i) out[c][i] = static_cast<float>(b[i] * s_vel);
        }
      }
    }
    const double* bm = col(p.mass);
    const double* bd = col(p.dens);
    const double* bv = col(p.vol);
    const double* bt = col(p.temp);
    const double* bu = col(p.u);
    const double* bx = col(p.xe);
    const double* bz = col(p.metal);
    const double* bh = col(p.smooth);
    float* om = cells.mass.data() + off;
    float* od = cells.density.data() + off;
    float* ot = cells.kT.data() + off;
    float* oz = cells.metallicity.data() + off;
    float* os = cells.support.data() + off;
    for (std::size_t i = 0; i < n; ++i) {
      const double V = bv ? bv[i] * s_v : 0.0;
      const double m = bm ? bm[i] * s_m : bd[i] * s_d * V;
      const double rho = bd ? bd[i] * s_d : m / V;
      om[i] = static_cast<float>(m);
      od[i] = static_cast<float>(rho);
      if (bt) {
        ot[i] = static_cast<float>(bt[i] * s_t);
      } else {
        const double mu = bx ? mean_molecular_weight(X, bx[i] * s_xe) : mu_ionised;
        ot[i] = static_cast<float>(u_to_keV * mu * bu[i] * s_u);
      }
      oz[i] = static_cast<float>(bz ? bz[i] * s_z : z_fallback);
      if (bh) {
        os[i] = static_cast<float>(bh[i] * s_h);
      } else {
        const double vol = bv ? V : m / rho;
        os[i] = static_cast<float>(mesh_f * std::cbrt(3.0 * vol / (4.0 * k::kPi)));
      }
    }
    if (any_flags) {
      std::uint8_t* of = cells.flags.data() + off;
      const double* bs = col(p.sfr);
      const double* bc = col(p.cold);
      const double* bf = col(p.flags);
      for (std::size_t i = 0; i < n; ++i) {
        std::uint8_t f = 0;
        if (bf && std::isfinite(bf[i]) && bf[i] >= 0.0 && bf[i] < 256.0) f = static_cast<std::uint8_t>(bf[i]);
        if (bs && bs[i] > 0.0) f |= cells::kFlagStarForming;
        if (bc && bc[i] != 0.0 && !std::isnan(bc[i])) f |= cells::kFlagCold;
        of[i] = f;
      }
    }
}

// Adds a chunk's report (cells numbered from `offset` in the file) to a running one.
void merge_report(cells::ValidationReport& total, const cells::ValidationReport& r, std::size_t offset) {
  if (r.n_bad > 0 && total.n_bad == 0) {
    total.first_index = offset + r.first_index;
    total.first_field = r.first_field;
    total.first_value = r.first_value;
  }
  total.n_cells += r.n_cells;
  total.n_bad += r.n_bad;
  for (std::size_t k = 0; k < cells::kCellFieldCount; ++k) total.per_field[k] += r.per_field[k];
}

}  // namespace

cells::GasCells read_cells(const std::string& path, const cells::FieldMap& map, cells::BadCellPolicy policy,
                           CellsReadInfo* info) {
  Converter cv(path, map);
  GasCells cells;
  cells.kind = cv.kind;
  const std::size_t hint = cv.src->rows_hint();
  if (hint > 0) cv.size_cells(cells, hint);
  std::size_t off = 0;
  for (std::size_t n; (n = cv.next(map.chunk_rows, cells, off)) > 0;) off += n;
  if (off != cells.size()) cv.size_cells(cells, off);
  if (off == 0) throw InputError(path + ": no cells (0 rows)");

  // ---- validation ----
  const cells::ValidationReport report = cells::validate_cells(cells);
  const std::size_t dropped = cells::apply_bad_cell_policy(cells, report, policy, path);
  if (cells.size() == 0) throw InputError(path + ": no usable cells: " + report.summary());
  if (info) {
    info->format = cv.format;
    info->rows_read = off;
    info->cells_dropped = dropped;
    info->validation = report;
    info->scale_factor = cv.a;
    info->hubble_h = cv.h;
    info->kind = cv.kind;
  }
  return cells;
}

// ---- CellsChunkReader ----

struct CellsChunkReader::Impl {
  Impl(const std::string& path_, const FieldMap& map, cells::BadCellPolicy policy_)
      : path(path_), policy(policy_), cv(path_, map) {
    info.format = cv.format;
    info.scale_factor = cv.a;
    info.hubble_h = cv.h;
    info.kind = cv.kind;
  }
  std::string path;
  cells::BadCellPolicy policy;
  Converter cv;
  CellsReadInfo info;
  std::size_t kept = 0;
  bool done = false;
};

CellsChunkReader::CellsChunkReader(const std::string& path, const cells::FieldMap& map, cells::BadCellPolicy policy)
    : impl_(std::make_unique<Impl>(path, map, policy)) {}
CellsChunkReader::~CellsChunkReader() = default;
CellsChunkReader::CellsChunkReader(CellsChunkReader&&) noexcept = default;
CellsChunkReader& CellsChunkReader::operator=(CellsChunkReader&&) noexcept = default;

std::size_t CellsChunkReader::rows_hint() const { return impl_->cv.src->rows_hint(); }
const CellsReadInfo& CellsChunkReader::info() const { return impl_->info; }
CellKind CellsChunkReader::kind() const { return impl_->cv.kind; }

bool CellsChunkReader::next(std::size_t max_rows, cells::GasCells& out) {
  Impl& m = *impl_;
  if (max_rows == 0) throw core::DomainError("CellsChunkReader::next: max_rows must be positive");
  out.kind = m.cv.kind;
  if (m.done) {
    m.cv.size_cells(out, 0);
    return false;
  }
  // A chunk may lose all its cells to BadCellPolicy::Drop: read on until
  // some survive or the file ends.
  while (true) {
    const std::size_t n = m.cv.next(max_rows, out, 0);
    if (n == 0) {
      m.done = true;
      m.cv.size_cells(out, 0);
      if (m.info.rows_read == 0) throw InputError(m.path + ": no cells (0 rows)");
      if (m.kept == 0) throw InputError(m.path + ": no usable cells: " + m.info.validation.summary());
      return false;
    }
    if (n != out.size()) m.cv.size_cells(out, n);
    const std::size_t offset = m.info.rows_read;
    m.info.rows_read += n;
    cells::ValidationReport r = cells::validate_cells(out);
    if (!r.ok() && m.policy == cells::BadCellPolicy::Error) {
      r.first_index += offset;  // name the cell by its row in the file
      throw InputError(m.path + ": " + r.summary());
    }
    merge_report(m.info.validation, r, offset);
    const std::size_t dropped = cells::apply_bad_cell_policy(out, r, m.policy, m.path);
    m.info.cells_dropped += dropped;
    m.kept += out.size();
    if (out.size() > 0) return true;
  }
}

}  // namespace icmscope::io
