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

cosmo::Cosmology make_cosmology(const config::CosmologySettings& c);

// The line of sight of the view settings.
projection::LineOfSight line_of_sight_of(const config::ViewSettings& v);

// Project cells into the physical maps. Cells must already be validated.
PhysicalMaps make_physical_maps(const cells::GasCells& cells, const config::MapRunSettings& s,
                                const cosmo::Cosmology& cosmo, const emission::BandTable& table, Log& log,
                                MapStats* stats = nullptr);

}  // namespace icmscope::pipeline
