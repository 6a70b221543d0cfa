#include "icmscope/cells/validate.hpp"

#include <cmath>
#include <cstdio>
#include <vector>

#include "icmscope/core/errors.hpp"

namespace icmscope::cells {

namespace {

constexpr const char* kNames[kCellFieldCount] = {"position",    "velocity",    "mass",   "density",
                                                 "temperature", "metallicity", "support"};
constexpr const char* kExpect[kCellFieldCount] = {"finite",     "finite",      "finite > 0", "finite > 0",
                                                  "finite > 0", "finite >= 0", "finite > 0"};

inline bool pos_ok(float v) { return std::isfinite(v) && v > 0.0f; }

void check_lengths(const GasCells& c) {
  const std::size_t n = c.size();
  auto bad = [&](const std::vector<float>& v, const char* what) {
    if (v.size() != n)
      throw core::DomainError(std::string("GasCells: array ") + what + " has " + std::to_string(v.size()) +
                              " entries, expected " + std::to_string(n));
  };
  bad(c.y, "y");
  bad(c.z, "z");
  bad(c.mass, "mass");
  bad(c.density, "density");
  bad(c.kT, "kT");
  bad(c.metallicity, "metallicity");
  bad(c.support, "support");
  if (c.has_velocity()) {
    bad(c.vx, "vx");
    bad(c.vy, "vy");
    bad(c.vz, "vz");
  }
  if (c.has_flags() && c.flags.size() != n)
    throw core::DomainError("GasCells: array flags has " + std::to_string(c.flags.size()) +
                            " entries, expected " + std::to_string(n));
}

// Bit mask of failed fields for cell i; *value receives the first offending value.
inline unsigned cell_failures(const GasCells& c, std::size_t i, bool vel, double* value) {
  unsigned m = 0;
  double v0 = 0.0;
  auto fail = [&](CellField f, double v) {
    if (m == 0) v0 = v;
    m |= 1u << static_cast<unsigned>(f);
  };
  if (!std::isfinite(c.x[i])) fail(CellField::Position, c.x[i]);
  else if (!std::isfinite(c.y[i])) fail(CellField::Position, c.y[i]);
  else if (!std::isfinite(c.z[i])) fail(CellField::Position, c.z[i]);
  if (vel) {
    if (!std::isfinite(c.vx[i])) fail(CellField::Velocity, c.vx[i]);
    else if (!std::isfinite(c.vy[i])) fail(CellField::Velocity, c.vy[i]);
    else if (!std::isfinite(c.vz[i])) fail(CellField::Velocity, c.vz[i]);
  }
  if (!pos_ok(c.mass[i])) fail(CellField::Mass, c.mass[i]);
  if (!pos_ok(c.density[i])) fail(CellField::Density, c.density[i]);
  if (!pos_ok(c.kT[i])) fail(CellField::Temperature, c.kT[i]);
  if (!(std::isfinite(c.metallicity[i]) && c.metallicity[i] >= 0.0f))
    fail(CellField::Metallicity, c.metallicity[i]);
  if (!pos_ok(c.support[i])) fail(CellField::Support, c.support[i]);
  if (m != 0) *value = v0;
  return m;
}

std::string format_value(double v) {
  if (std::isnan(v)) return "nan";
  if (std::isinf(v)) return v > 0 ? "inf" : "-inf";
  char buf[32];
  std::snprintf(buf, sizeof buf, "%.6g", v);
  return buf;
}

}  // namespace

const char* cell_field_name(CellField f) {
  const auto k = static_cast<std::size_t>(f);
  return k < kCellFieldCount ? kNames[k] : "?";
}

const char* cell_field_expectation(CellField f) {
  const auto k = static_cast<std::size_t>(f);
  return k < kCellFieldCount ? kExpect[k] : "?";
}

std::string ValidationReport::summary() const {
  if (n_bad == 0) return "all " + std::to_string(n_cells) + " cells usable";
  return std::to_string(n_bad) + (n_bad == 1 ? " cell" : " cells") + " unusable; first: index " +
         std::to_string(first_index) + ", field " + cell_field_name(first_field) + " = " +
         format_value(first_value) + " (expected " + cell_field_expectation(first_field) + ")";
}

std::string ValidationReport::field_counts() const {
  std::string s;
  for (std::size_t k = 0; k < kCellFieldCount; ++k) {
    if (per_field[k] == 0) continue;
    if (!s.empty()) s += ", ";
    s += std::string(kNames[k]) + " " + std::to_string(per_field[k]);
  }
  return s;
}

ValidationReport validate_cells(const GasCells& cells) {
  check_lengths(cells);
  ValidationReport r;
  r.n_cells = cells.size();
  const bool vel = cells.has_velocity();
  for (std::size_t i = 0; i < cells.size(); ++i) {
    double v = 0.0;
    const unsigned m = cell_failures(cells, i, vel, &v);
    if (m == 0) continue;
    if (r.n_bad == 0) {
      r.first_index = i;
      r.first_value = v;
      for (std::size_t k = 0; k < kCellFieldCount; ++k)
        if (m & (1u << k)) {
          r.first_field = static_cast<CellField>(k);
          break;
        }
    }
    ++r.n_bad;
    for (std::size_t k = 0; k < kCellFieldCount; ++k)
      if (m & (1u << k)) ++r.per_field[k];
  }
  return r;
}

std::size_t drop_bad_cells(GasCells& cells) {
  check_lengths(cells);
  const bool vel = cells.has_velocity();
  const bool flg = cells.has_flags();
  const std::size_t n = cells.size();
  std::size_t w = 0;
  for (std::size_t i = 0; i < n; ++i) {
    double v = 0.0;
    if (cell_failures(cells, i, vel, &v) != 0) continue;
    if (w != i) {
      for (auto* a : {&cells.x, &cells.y, &cells.z, &cells.mass, &cells.density, &cells.kT,
                      &cells.metallicity, &cells.support})
        (*a)[w] = (*a)[i];
      if (vel) {
        cells.vx[w] = cells.vx[i];
        cells.vy[w] = cells.vy[i];
        cells.vz[w] = cells.vz[i];
      }
      if (flg) cells.flags[w] = cells.flags[i];
    }
    ++w;
  }
  cells.resize(w);
  if (vel) {
    cells.vx.resize(w);
    cells.vy.resize(w);
    cells.vz.resize(w);
  }
  if (flg) cells.flags.resize(w);
  return n - w;
}

std::size_t apply_bad_cell_policy(GasCells& cells, const ValidationReport& report, BadCellPolicy policy,
                                  const std::string& source) {
  if (report.ok()) return 0;
  if (policy == BadCellPolicy::Error) throw core::InputError(source + ": " + report.summary());
  return drop_bad_cells(cells);
}

}  // namespace icmscope::cells
