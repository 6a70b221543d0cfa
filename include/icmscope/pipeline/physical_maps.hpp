#pragma once
// Gas cells -> physical X-ray maps along one line of sight: the foundation
// every later stage (instrument, morphology, samples, plans) consumes.
//
// Per cell (internal units in, CGS out):
//   EM_i   = (n_e/n_H)(Z) rho_i M_i / m_H(Z)^2                    [cm^-3]
//            (m_H(Z) = gas mass per hydrogen nucleus of the abundance set)
//   rate_i = EM_i K_ph(T_i, Z_i) / (4 pi D_L^2)                   [counts s^-1]
//   flux_i = EM_i K_E (T_i, Z_i) / (4 pi D_L^2)                   [erg s^-1 cm^-2]
// with K_ph, K_E the band coefficients of emission::BandTable (observed band,
// Galactic absorption, effective area for K_ph; (1+z) factors of physics.md
// section 5 included). Temperature weightings (physics.md section 6):
// emission-weighted w = rate_i, spectroscopic-like w = rho_i M_i T_i^-3/4
// (Mazzotta et al. 2004, MNRAS 354, 10), mass-weighted w = M_i.
#include <memory>
#include <string>
#include <vector>

#include "icmscope/cells/gas_cells.hpp"
#include "icmscope/config/map_settings.hpp"
#include "icmscope/core/image.hpp"
#include "icmscope/cosmo/cosmology.hpp"
#include "icmscope/emission/band_table.hpp"
#include "icmscope/emission/spectral_model.hpp"
#include "icmscope/pipeline/log.hpp"
#include "icmscope/projection/line_of_sight.hpp"
#include "icmscope/projection/projector.hpp"

namespace icmscope::pipeline {

struct PhysicalMaps {
  core::ImageD rate;         // band count rate per pixel [counts s^-1] (flat area: photons cm^-2 s^-1)
  core::ImageD sb_energy;    // absorbed band energy surface brightness [erg s^-1 cm^-2 arcmin^-2]
  core::ImageD em;           // emission measure per pixel, sum n_e n_H V [cm^-3]
  core::ImageD t_ew;         // emission-weighted temperature [keV] (0 where no emission)
  core::ImageD t_sl;         // spectroscopic-like temperature [keV]
  core::ImageD t_mw;         // mass-weighted temperature [keV]
  core::ImageD gas_mass;     // projected gas mass per pixel [Msun]
  double pixel_kpc = 0.0;
  double kpc_per_arcsec = 0.0;
  double luminosity_distance_cm = 0.0;
};

struct MapStats {
  std::size_t cells_read = 0;
  std::size_t cells_selected = 0;    // after the selection and the depth slab
  std::size_t cells_in_field = 0;    // footprint touching the field
  double total_rate = 0.0;           // sum over selected cells [counts/s] (all, not only in field)
  double map_rate = 0.0;             // sum of the rate map
  double cold_fraction = 0.0;        // fraction of total_rate from gas below warn_kT_keV
  double luminosity_band_erg_s = 0.0;  // rest-frame band luminosity of the selected cells (unabsorbed)
  double seconds_emission = 0.0, seconds_projection = 0.0;
  projection::ProjectionStats projection;
};

// The spectral model of the settings (continuum, or a user table read from FITS).
std::shared_ptr<const emission::SpectralModel> make_spectral_model(const config::EmissionSettings& e);

// The band table of the settings at a redshift (effective area from a file when given).
emission::BandTable make_band_table(const emission::SpectralModel& model, const config::EmissionSettings& e,
                                    double redshift);

// The same with an explicit on-axis area curve (nodes [keV], area [cm^2];
// empty: a flat 1 cm^2), ignoring e.effective_area.
emission::BandTable make_band_table(const emission::SpectralModel& model, const config::EmissionSettings& e,
                                    double redshift, std::vector<double> area_E_keV, std::vector<double> area_cm2);

cosmo::Cosmology make_cosmology(const config::CosmologySettings& c);

// The line of sight of the view settings.
projection::LineOfSight line_of_sight_of(const config::ViewSettings& v);

// Cells are deposited in fixed blocks of this many consecutive cells (the
// k-th block holds cells [kB, (k+1)B) of the input, after dropped cells are
// removed), each block by one projection::project_add call. The maps depend
// on this cut (rounding order), never on how the cells arrive or on the thread
// count: all-in-memory and chunked runs give bitwise identical maps.
inline constexpr std::size_t kMapBlockCells = std::size_t{1} << 20;

struct MapOptions {
  std::size_t block_cells = kMapBlockCells;  // deposit block (cells); tests use small ones
  int threads = 0;                           // 0 = all OpenMP threads (results do not depend on it)
};

// Physical maps built from cells that arrive in pieces of any size: add()
// buffers them into the fixed deposit blocks (MapOptions::block_cells) and
// deposits each full block; finish() deposits the last partial block and
// turns the accumulated channels into PhysicalMaps. Working memory: the maps
// (15 x nx x ny doubles) plus about 90 bytes per block cell plus the
// projector's chunk budget, independent of the number of cells.
class MapAccumulator {
 public:
  MapAccumulator(const config::MapRunSettings& s, const cosmo::Cosmology& cosmo, const emission::BandTable& table,
                 const MapOptions& opt = {});
  ~MapAccumulator();
  MapAccumulator(const MapAccumulator&) = delete;
  MapAccumulator& operator=(const MapAccumulator&) = delete;

  // Adds validated cells (velocities are not used).
  void add(const cells::GasCells& cells);
  std::size_t cells_added() const;
  // Deposits the buffered cells and returns the maps; call once.
  PhysicalMaps finish(Log& log, MapStats* stats = nullptr);

 private:
  struct Impl;
  std::unique_ptr<Impl> impl_;
};

// Project cells into the physical maps. Cells must already be validated.
PhysicalMaps make_physical_maps(const cells::GasCells& cells, const config::MapRunSettings& s,
                                const cosmo::Cosmology& cosmo, const emission::BandTable& table, Log& log,
                                MapStats* stats = nullptr, const MapOptions& opt = {});

// The maps of a cells file read in chunks of `chunk_cells` rows
// (io::CellsChunkReader), each chunk converted, validated and deposited
// before the next is read: memory stays bounded for any file size. Equal,
// bitwise, to make_physical_maps of the whole file read at once.
PhysicalMaps stream_physical_maps(const config::CellSourceSettings& src, std::size_t chunk_cells,
                                  const config::MapRunSettings& s, const cosmo::Cosmology& cosmo,
                                  const emission::BandTable& table, Log& log, MapStats* stats = nullptr,
                                  const MapOptions& opt = {});

// The maps of the settings' cell source (not model_projection: analytic):
// an analytic model is synthesised in memory; a cells file is streamed in
// chunks of s.cells.chunk_cells rows, or read whole when chunk_cells is 0.
PhysicalMaps cell_source_maps(const config::MapRunSettings& s, const cosmo::Cosmology& cosmo,
                              const emission::BandTable& table, Log& log, MapStats* stats = nullptr);

}  // namespace icmscope::pipeline
