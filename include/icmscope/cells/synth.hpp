#pragma once
// Gas particles drawn from an analytic cluster model (analytic_model.hpp):
// the `synth` verb's physics. Pure: the output depends only on the model
// (its seed included), not on the thread count.
//
// Sampling. Each component receives a number of particles proportional to
// its gas mass inside r_max (largest-remainder rounding, so the counts add up
// to n_particles exactly). Its particles all carry the mass M_c / N_c, so the
// particle number density follows rho_c: the particle masses of different
// components agree to within the rounding of N_c (< 0.5 / N_c relative), and
// the total particle mass equals the model gas mass inside the truncation
// radii. Radii are drawn by inverting the tabulated M(<r) / M(<r_max), the
// directions isotropically (cos theta and phi uniform).
//
// Per-particle fields:
//  - density: the TOTAL model gas density at the particle's position, the sum
//    over all components (each zero beyond its r_max), so that where
//    components overlap the emission scales as rho_total^2 (not as the sum of
//    the separate rho_c^2);
//  - kT and metallicity: those of the particle's own component at its radius.
//    Where components overlap, the gas is therefore a multi-phase mixture:
//    each phase carries the total density and its own temperature, in
//    proportion to the components' densities there (no pressure balance is
//    imposed);
//  - velocity: the component's bulk velocity plus, if sigma_km_s > 0, an
//    isotropic Gaussian of 1-D dispersion sigma_km_s;
//  - support: distance to the k-th nearest particle (neighbour_support.hpp).
//
// Random numbers: core::RandomStream(seed, stream) with one stream per
// block of 8192 particles of one component (stream = component << 32 | block),
// the blocks filled in parallel.
#include <cstddef>
#include <string>
#include <vector>

#include "icmscope/cells/analytic_model.hpp"
#include "icmscope/cells/gas_cells.hpp"

namespace icmscope::cells {

inline constexpr std::size_t kSynthBlock = 8192;  // particles per random stream

struct SynthComponentSummary {
  std::string name;
  std::size_t first = 0;            // index of its first particle (components are contiguous, in model order)
  std::size_t count = 0;            // number of particles
  double gas_mass_msun = 0.0;       // M_gas(< r_max) [Msun]
  double particle_mass_msun = 0.0;  // gas_mass_msun / count [Msun]
  double amplitude_scale = 1.0;     // factor applied to the given amplitudes (gas-mass normalisation)
  // Resolved density amplitude [cm^-3]: beta n_e0, or V06 n0 (sqrt(n_p n_e) amplitude).
  double amplitude_cm3 = 0.0;
};

struct SynthSummary {
  std::vector<SynthComponentSummary> components;
  double total_gas_mass_msun = 0.0;
};

// Particles per component for masses m_c and n particles in total: largest
// remainder of n m_c / sum(m), ties to the lower index. DomainError when a
// component would receive fewer than min_per_component particles.
std::vector<std::size_t> particles_per_component(const std::vector<double>& masses, std::size_t n,
                                                 std::size_t min_per_component = 1);

// Draw the particles of a model (validate_model first: DomainError naming the
// component and field). threads <= 0: the OpenMP default. summary, if given,
// receives the per-component counts and masses.
GasCells synthesise(const ClusterModel& model, int threads = 0, SynthSummary* summary = nullptr);

}  // namespace icmscope::cells
