#pragma once
// GasCells: simulation gas elements (SPH particles or mesh cells) as a
// structure of arrays, in internal units, ready for emission and projection.
// Float storage; every consumer accumulates in double.
//
// Internal units (DESIGN.md): positions kpc (physical, not comoving, relative
// to nothing in particular: the projection chooses the centre), velocities
// km/s, masses Msun, gas mass density Msun/kpc^3, temperature keV,
// metallicity in solar units of the run's abundance set, kernel support
// radius kpc.
#include <cstddef>
#include <cstdint>
#include <vector>

namespace icmscope::cells {

enum class CellKind { Particles, Mesh };

// Per-cell flag bits.
inline constexpr std::uint8_t kFlagStarForming = 1u << 0;
inline constexpr std::uint8_t kFlagCold = 1u << 1;

struct GasCells {
  CellKind kind = CellKind::Particles;
  std::vector<float> x, y, z;        // kpc
  std::vector<float> vx, vy, vz;     // km/s; empty when the input has none
  std::vector<float> mass;           // Msun
  std::vector<float> density;        // gas mass density, Msun/kpc^3
  std::vector<float> kT;             // keV
  std::vector<float> metallicity;    // solar units (of the abundance set)
  // Radius beyond which the cell's kernel vanishes (compact support), kpc.
  // SPH inputs convert their smoothing-length convention to this in the
  // reader; mesh cells use support_factor * (3 V / 4 pi)^(1/3).
  std::vector<float> support;
  std::vector<std::uint8_t> flags;   // kFlag* bits; empty when the input has none

  std::size_t size() const { return x.size(); }
  bool has_velocity() const { return !vx.empty(); }
  bool has_flags() const { return !flags.empty(); }

  void reserve(std::size_t n) {
    for (auto* v : {&x, &y, &z, &mass, &density, &kT, &metallicity, &support}) v->reserve(n);
  }
  void resize(std::size_t n) {
    for (auto* v : {&x, &y, &z, &mass, &density, &kT, &metallicity, &support}) v->resize(n);
  }
  // Bytes held by the per-cell arrays (for memory reports).
  std::size_t bytes() const {
    std::size_t b = 0;
    for (const auto* v : {&x, &y, &z, &vx, &vy, &vz, &mass, &density, &kT, &metallicity, &support})
      b += v->size() * sizeof(float);
    return b + flags.size();
  }
};

}  // namespace icmscope::cells
