// Analytic cluster synthesis: see include/icmscope/cells/synth.hpp.
#include "icmscope/cells/synth.hpp"

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <numeric>

#include "icmscope/cells/neighbour_support.hpp"
#include "icmscope/core/blocked.hpp"
#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/core/random.hpp"

namespace icmscope::cells {

namespace {

// Uniform in the open interval (0, 1): never 0, so that radii and logarithms stay finite.
inline double open_uniform(core::RandomStream& rs) {
  return (static_cast<double>(rs() >> 11) + 0.5) * 0x1.0p-53;
}

constexpr std::size_t kMinParticlesPerComponent = 10;

}  // namespace

std::vector<std::size_t> particles_per_component(const std::vector<double>& masses, std::size_t n,
                                                 std::size_t min_per_component) {
  const double total = std::accumulate(masses.begin(), masses.end(), 0.0);
  if (masses.empty() || !(total > 0.0)) throw core::DomainError("particles_per_component: no positive mass");
  std::vector<std::size_t> count(masses.size());
  std::vector<double> rem(masses.size());
  std::size_t used = 0;
  for (std::size_t c = 0; c < masses.size(); ++c) {
    const double share = static_cast<double>(n) * masses[c] / total;
    count[c] = static_cast<std::size_t>(std::floor(share));
    rem[c] = share - static_cast<double>(count[c]);
    used += count[c];
  }
  std::vector<std::size_t> order(masses.size());
  std::iota(order.begin(), order.end(), std::size_t{0});
  std::stable_sort(order.begin(), order.end(), [&](std::size_t a, std::size_t b) { return rem[a] > rem[b]; });
  for (std::size_t j = 0; used < n; ++j, ++used) ++count[order[j % order.size()]];
  for (std::size_t c = 0; c < masses.size(); ++c)
    if (count[c] < min_per_component)
      throw core::DomainError("component " + std::to_string(c) + " would receive " + std::to_string(count[c]) +
                              " particles (fewer than " + std::to_string(min_per_component) +
                              "): raise n_particles or drop the component");
  return count;
}

GasCells synthesise(const ClusterModel& model, int threads, SynthSummary* summary) {
  validate_model(model);
  if (threads <= 0) threads = core::max_threads();
  const GasComposition composition(emission::abundance_set(model.abundance_set));
  const std::size_t nc = model.components.size();

  std::vector<ComponentProfile> prof;
  prof.reserve(nc);
  std::vector<double> masses(nc);
  for (std::size_t c = 0; c < nc; ++c) {
    try {
      prof.emplace_back(model.components[c], composition);
    } catch (const core::DomainError& e) {
      throw core::DomainError("model '" + model.name + "': " + e.what());
    }
    masses[c] = prof[c].total_gas_mass_msun();
  }
  std::vector<std::size_t> count;
  try {
    count = particles_per_component(masses, model.n_particles, kMinParticlesPerComponent);
  } catch (const core::DomainError& e) {
    throw core::DomainError("model '" + model.name + "': " + e.what());
  }

  const std::size_t n = model.n_particles;
  GasCells cells;
  cells.kind = CellKind::Particles;
  cells.resize(n);
  cells.vx.resize(n);
  cells.vy.resize(n);
  cells.vz.resize(n);
  std::vector<double> r_own(n);
  std::vector<std::uint32_t> owner(n);

  // Blocks: (component, block index, first particle, count).
  struct Task {
    std::size_t comp, block, first, count;
  };
  std::vector<Task> tasks;
  std::vector<std::size_t> first(nc);
  std::size_t offset = 0;
  for (std::size_t c = 0; c < nc; ++c) {
    first[c] = offset;
    for (std::size_t b = 0; b * kSynthBlock < count[c]; ++b)
      tasks.push_back({c, b, offset + b * kSynthBlock, std::min(kSynthBlock, count[c] - b * kSynthBlock)});
    offset += count[c];
  }

  const std::ptrdiff_t ntasks = static_cast<std::ptrdiff_t>(tasks.size());
#pragma omp parallel for num_threads(threads) schedule(dynamic, 1)
  for (std::ptrdiff_t t = 0; t < ntasks; ++t) {
    const Task& task = tasks[static_cast<std::size_t>(t)];
    const ComponentProfile& p = prof[task.comp];
    const ClusterComponent& c = p.component();
    const double sigma = c.sigma_km_s;
    const float m = static_cast<float>(masses[task.comp] / static_cast<double>(count[task.comp]));
    core::RandomStream rs(model.seed, (static_cast<std::uint64_t>(task.comp) << 32) | task.block);
    for (std::size_t i = task.first; i < task.first + task.count; ++i) {
      const double u = open_uniform(rs);
      const double q = model.stratified_radii
                           ? (static_cast<double>(i - first[task.comp]) + u) / static_cast<double>(count[task.comp])
                           : u;
      const double r = p.radius_at_mass_fraction(std::min(q, 1.0));
      const double mu = 2.0 * open_uniform(rs) - 1.0;
      const double phi = 2.0 * core::constants::kPi * open_uniform(rs);
      const double s = std::sqrt(std::max(0.0, 1.0 - mu * mu));
      cells.x[i] = static_cast<float>(c.offset_kpc[0] + r * s * std::cos(phi));
      cells.y[i] = static_cast<float>(c.offset_kpc[1] + r * s * std::sin(phi));
      cells.z[i] = static_cast<float>(c.offset_kpc[2] + r * mu);
      double g[4] = {0.0, 0.0, 0.0, 0.0};
      if (sigma > 0.0) {
        // Box-Muller, two pairs (the fourth normal is unused).
        for (int j = 0; j < 4; j += 2) {
          const double a = std::sqrt(-2.0 * std::log(open_uniform(rs)));
          const double b = 2.0 * core::constants::kPi * open_uniform(rs);
          g[j] = a * std::cos(b);
          g[j + 1] = a * std::sin(b);
        }
      }
      cells.vx[i] = static_cast<float>(c.velocity_km_s[0] + sigma * g[0]);
      cells.vy[i] = static_cast<float>(c.velocity_km_s[1] + sigma * g[1]);
      cells.vz[i] = static_cast<float>(c.velocity_km_s[2] + sigma * g[2]);
      cells.mass[i] = m;
      cells.kT[i] = static_cast<float>(p.kT_keV(r));
      cells.metallicity[i] = static_cast<float>(p.metallicity_solar(r));
      r_own[i] = r;
      owner[i] = static_cast<std::uint32_t>(task.comp);
    }
  }

  // Total model density at each particle (its own component at its drawn
  // radius, which lies inside r_max by construction).
  const std::ptrdiff_t nn = static_cast<std::ptrdiff_t>(n);
#pragma omp parallel for num_threads(threads) schedule(static)
  for (std::ptrdiff_t ii = 0; ii < nn; ++ii) {
    const std::size_t i = static_cast<std::size_t>(ii);
    double rho = 0.0;
    for (std::size_t c = 0; c < nc; ++c) {
      double r;
      if (c == owner[i]) {
        r = r_own[i];
      } else {
        const auto& o = model.components[c].offset_kpc;
        const double dx = cells.x[i] - o[0], dy = cells.y[i] - o[1], dz = cells.z[i] - o[2];
        r = std::sqrt(dx * dx + dy * dy + dz * dz);
      }
      rho += prof[c].rho_msun_kpc3(r);
    }
    cells.density[i] = static_cast<float>(rho);
  }
  std::vector<double>().swap(r_own);
  std::vector<std::uint32_t>().swap(owner);

  cells.support = neighbour_support_kpc(cells.x, cells.y, cells.z, model.k_neighbours, threads);

  if (summary) {
    summary->components.clear();
    summary->total_gas_mass_msun = 0.0;
    for (std::size_t c = 0; c < nc; ++c) {
      SynthComponentSummary s;
      s.name = model.components[c].name;
      s.first = first[c];
      s.count = count[c];
      s.gas_mass_msun = masses[c];
      s.particle_mass_msun = masses[c] / static_cast<double>(count[c]);
      s.amplitude_scale = prof[c].amplitude_scale();
      const DensityProfile& d = prof[c].component().density;
      s.amplitude_cm3 = d.kind == DensityKind::Beta ? d.beta.n_e0_cm3 : d.v06.n0_cm3;
      summary->components.push_back(s);
      summary->total_gas_mass_msun += masses[c];
    }
  }
  return cells;
}

}  // namespace icmscope::cells
