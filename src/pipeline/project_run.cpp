#include "icmscope/pipeline/project_run.hpp"

#include <unistd.h>

#include <cmath>
#include <cstdio>
#include <filesystem>
#include <fstream>
#include <sstream>

#include "icmscope/core/errors.hpp"
#include "icmscope/core/version.hpp"
#include "icmscope/io/cells_reader.hpp"
#include "icmscope/io/fits_image.hpp"
#include "icmscope/io/quicklook.hpp"
#include "icmscope/config/synth_settings.hpp"
#include "icmscope/pipeline/analytic_maps.hpp"
#include "icmscope/pipeline/synth_run.hpp"

namespace icmscope::pipeline {

namespace fs = std::filesystem;

static std::string fmtg(double v, const char* f = "%.6g") {
  char b[64];
  std::snprintf(b, sizeof b, f, v);
  return b;
}

void ensure_directory(const std::string& dir) {
  std::error_code ec;
  fs::create_directories(dir, ec);
  if (ec || !fs::is_directory(dir))
    throw core::OutputError(dir + ": cannot create the output directory (" + (ec ? ec.message() : "not a directory") +
                            ")");
  if (::access(dir.c_str(), W_OK) != 0)
    throw core::OutputError(dir + ": the output directory is not writable");
}

OutputDirectory::OutputDirectory(const std::string& dir) {
  std::error_code ec;
  for (fs::path p = fs::path(dir).lexically_normal(); !p.empty() && !fs::exists(p, ec); p = p.parent_path()) {
    created_.push_back(p.string());
    if (p == p.parent_path()) break;
  }
  try {
    ensure_directory(dir);
  } catch (...) {
    remove_empty();
    throw;
  }
}

OutputDirectory::~OutputDirectory() { remove_empty(); }

void OutputDirectory::remove_empty() const {
  std::error_code ec;
  for (const auto& d : created_)
    if (fs::is_directory(d, ec) && fs::is_empty(d, ec)) fs::remove(d, ec);
}

void write_text_file(const std::string& path, const std::string& text) {
  const std::string tmp = path + ".tmp-" + std::to_string(::getpid());
  {
    std::ofstream out(tmp);
    if (!out) throw core::OutputError(path + ": cannot write (check the folder exists and is writable)");
    out << text;
    out.close();
    if (!out) {
      std::remove(tmp.c_str());
      throw core::OutputError(path + ": write failed (disk full?)");
    }
  }
  std::error_code ec;
  fs::rename(tmp, path, ec);
  if (ec) {
    std::remove(tmp.c_str());
    throw core::OutputError(path + ": cannot rename the finished file: " + ec.message());
  }
}

cells::GasCells load_cells(const config::CellSourceSettings& src, Log& log) {
  if (!src.model_file.empty()) return synthesise_model_file(src.model_file, src.model_particles, log);
  io::CellsReadInfo info;
  auto cells = io::read_cells(src.cells_file, src.fields, src.bad_cells, &info);
  log.info("cells: read " + std::to_string(info.rows_read) + " rows from " + src.cells_file);
  if (info.cells_dropped > 0)
    log.warn(src.cells_file + ": dropped " + std::to_string(info.cells_dropped) +
             " unusable cells (bad_cells: drop): " + info.validation.summary());
  return cells;
}

std::vector<io::FitsKeyword> run_keywords(const config::MapRunSettings& s, const PhysicalMaps& maps) {
  using io::fits_key;
  std::vector<io::FitsKeyword> k;
  k.push_back(fits_key("OBJECT", s.target.name, "target name"));
  k.push_back(fits_key("RA_OBJ", s.target.ra_deg, "[deg] target RA"));
  k.push_back(fits_key("DEC_OBJ", s.target.dec_deg, "[deg] target Dec"));
  k.push_back(fits_key("REDSHIFT", s.target.redshift, "target redshift"));
  k.push_back(fits_key("H0", s.cosmology.H0_km_s_Mpc, "[km/s/Mpc] Hubble constant"));
  k.push_back(fits_key("OMEGA_M", s.cosmology.Omega_m, "matter density parameter"));
  k.push_back(fits_key("OMEGA_L", s.cosmology.Omega_lambda, "cosmological constant parameter"));
  k.push_back(fits_key("DL_MPC", maps.luminosity_distance_cm / 3.0856775814913673e24, "[Mpc] luminosity distance"));
  k.push_back(fits_key("KPCPERAS", maps.kpc_per_arcsec, "[kpc/arcsec] physical scale"));
  k.push_back(fits_key("PIXKPC", maps.pixel_kpc, "[kpc] pixel size"));
  k.push_back(fits_key("E_MIN", s.emission.band_min_keV, "[keV] observed band lower edge"));
  k.push_back(fits_key("E_MAX", s.emission.band_max_keV, "[keV] observed band upper edge"));
  k.push_back(fits_key("NH", s.emission.nH_cm2, "[cm-2] Galactic column"));
  k.push_back(fits_key("EMODEL", s.emission.model, "emission model"));
  k.push_back(fits_key("ABUNDSET", s.emission.abundances, "abundance set"));
  k.push_back(fits_key("AREA", s.emission.effective_area, "effective area (flat = 1 cm2)"));
  std::string los = s.view.axis;
  if (s.view.axis == "angles") los += " " + fmtg(s.view.theta_deg) + " " + fmtg(s.view.phi_deg);
  if (s.view.axis == "vector")
    los += " " + fmtg(s.view.vector[0]) + " " + fmtg(s.view.vector[1]) + " " + fmtg(s.view.vector[2]);
  k.push_back(fits_key("LOS", los, "line of sight"));
  k.push_back(fits_key("DEPTHKPC", std::isfinite(s.view.depth_kpc) ? s.view.depth_kpc : -1.0,
                       "[kpc] slab thickness (-1 = all)"));
  k.push_back(fits_key("KERNEL", s.view.kernel, "projection kernel"));
  k.push_back(fits_key("CONFHASH", s.config_hash, "hash of the resolved configuration"));
  k.push_back(fits_key("ORIGIN", "icmscope", "simulated data"));
  k.push_back(fits_key("CREATOR", std::string(core::kProgram) + " " + core::kVersion, "program"));
  return k;
}

std::vector<std::string> config_history(const std::string& resolved_yaml) {
  std::vector<std::string> h;
  std::istringstream in(resolved_yaml);
  std::string line;
  while (std::getline(in, line)) h.push_back("CONFIG " + line);
  return h;
}

void write_physical_maps(const std::string& path, const PhysicalMaps& maps, const config::MapRunSettings& s) {
  std::vector<io::NamedImage> hdus;
  auto add = [&](const char* name, const core::ImageD& im, const char* what) {
    io::NamedImage n;
    n.extname = name;
    n.image = im;
    n.keywords.push_back(io::fits_key("CONTENT", what, "map content"));
    n.keywords.push_back(io::fits_key("OBJECT", s.target.name));
    hdus.push_back(std::move(n));
  };
  add("RATE", maps.rate, "band count rate per pixel");
  add("SB_ENERGY", maps.sb_energy, "absorbed band energy surface brightness");
  add("EM", maps.em, "emission measure per pixel");
  add("T_EW", maps.t_ew, "emission-weighted temperature");
  add("T_SL", maps.t_sl, "spectroscopic-like temperature");
  add("T_MW", maps.t_mw, "mass-weighted temperature");
  add("GAS_MASS", maps.gas_mass, "projected gas mass per pixel");
  io::write_fits_images(path, hdus, run_keywords(s, maps), config_history(s.resolved_yaml));
}

ProjectResult run_project(const config::MapRunSettings& s, Log& log) {
  const OutputDirectory output_directory(s.output.directory);
  const auto cosmo = make_cosmology(s.cosmology);
  const auto model = make_spectral_model(s.emission);
  const auto table = make_band_table(*model, s.emission, s.target.redshift);
  ProjectResult r;
  PhysicalMaps maps;
  if (!s.cells.model_file.empty() && s.cells.model_projection == "analytic") {
    const auto cm = config::load_cluster_model(s.cells.model_file);
    AnalyticMapOptions ao;
    ao.subsamples = s.cells.analytic_subsamples;
    maps = make_analytic_maps(cm, s, cosmo, table, log, ao, &r.stats);
  } else {
    maps = cell_source_maps(s, cosmo, table, log, &r.stats);
  }
  const std::string base = (fs::path(s.output.directory) / s.output.prefix).string();
  r.maps_file = base + "_maps.fits";
  r.config_file = base + "_config.yaml";
  write_physical_maps(r.maps_file, maps, s);
  write_text_file(r.config_file, s.resolved_yaml);
  if (s.output.quicklook) {
    r.quicklook_file = base + "_maps.png";
    io::QuicklookOptions q;
    q.stretch = s.output.stretch == "log" ? io::Stretch::Log
                : s.output.stretch == "linear" ? io::Stretch::Linear
                                               : io::Stretch::Asinh;
    q.title = s.target.name + "  z = " + fmtg(s.target.redshift, "%.3g") + "  " +
              fmtg(s.emission.band_min_keV, "%.3g") + "-" + fmtg(s.emission.band_max_keV, "%.3g") + " keV";
    q.colorbar_label = "erg s^-1 cm^-2 arcmin^-2";
    q.kpc_per_arcsec = maps.kpc_per_arcsec;
    io::write_quicklook_png(r.quicklook_file, maps.sb_energy, q);
  }
  log.info("project: " + s.target.name + ": " + std::to_string(r.stats.cells_selected) + " of " +
           std::to_string(r.stats.cells_read) + " cells selected, " + std::to_string(r.stats.cells_in_field) +
           " in the field; band rate " + fmtg(r.stats.map_rate, "%.4g") + " (" + maps.rate.unit() + ") in the map");
  return r;
}

}  // namespace icmscope::pipeline
