#include "icmscope/pipeline/synth_run.hpp"

#include <chrono>
#include <cstdio>

#include "icmscope/cells/synth.hpp"
#include "icmscope/config/synth_settings.hpp"
#include "icmscope/core/version.hpp"
#include "icmscope/io/cells_writer.hpp"

namespace icmscope::pipeline {

static std::string fmt(const char* f, double v) {
  char b[64];
  std::snprintf(b, sizeof b, f, v);
  return b;
}

cells::GasCells synthesise_model_file(const std::string& model_file, std::int64_t particles, Log& log) {
  cells::ClusterModel model = config::load_cluster_model(model_file);
  if (particles > 0) model.n_particles = static_cast<std::size_t>(particles);
  cells::SynthSummary summary;
  auto cells = cells::synthesise(model, 0, &summary);
  log.info("synth: " + model.name + ": " + std::to_string(cells.size()) + " particles, gas mass " +
           fmt("%.4g", summary.total_gas_mass_msun) + " Msun, seed " + std::to_string(model.seed));
  return cells;
}

SynthResult run_synth(const SynthRequest& req, Log& log) {
  const auto t0 = std::chrono::steady_clock::now();
  cells::ClusterModel model = config::load_cluster_model(req.model_file);
  if (req.particles > 0) model.n_particles = static_cast<std::size_t>(req.particles);
  if (req.seed >= 0) model.seed = static_cast<std::uint64_t>(req.seed);
  cells::SynthSummary summary;
  const auto cells = cells::synthesise(model, 0, &summary);
  io::write_cells_hdf5(req.output_file, cells,
                       {{"program", std::string(core::kProgram) + " " + core::kVersion},
                        {"model_name", model.name},
                        {"model_file", req.model_file},
                        {"seed", std::to_string(model.seed)},
                        {"n_particles", std::to_string(cells.size())}});
  SynthResult r;
  r.n_cells = cells.size();
  r.total_gas_mass_msun = summary.total_gas_mass_msun;
  r.seconds = std::chrono::duration<double>(std::chrono::steady_clock::now() - t0).count();
  for (const auto& c : summary.components)
    log.info("  component " + c.name + ": " + std::to_string(c.count) + " particles, gas mass " +
             fmt("%.4g", c.gas_mass_msun) + " Msun");
  log.info("synth: wrote " + std::to_string(r.n_cells) + " particles to " + req.output_file + " (" +
           fmt("%.2f", r.seconds) + " s)");
  return r;
}

}  // namespace icmscope::pipeline
