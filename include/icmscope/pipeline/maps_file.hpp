#pragma once
// A maps file written by `project` (HDUs RATE in photon/(cm2 s) with a flat
// 1 cm^2 area, and T_EW in keV) read back as on-axis count-rate maps of an
// instrument, for `observe` and `plan`.
//
// Per pixel i with rate r_i and emission-weighted temperature T_i:
//   rate_i [count/s] = r_i K_ph(T_i, Z; A_instrument) / K_ph(T_i, Z; 1 cm^2)
// with K_ph the band photon coefficients of emission::BandTable at the file's
// redshift, band and N_H: the band-averaged area of an isothermal spectrum at
// the pixel's T_EW (exact for isothermal lines of sight, an approximation for
// multiphase ones). Pixels with a rate but no T_EW take the rate-weighted mean.
#include <string>

#include "icmscope/config/map_settings.hpp"
#include "icmscope/emission/band_table.hpp"
#include "icmscope/emission/spectral_model.hpp"
#include "icmscope/pipeline/instrument_model.hpp"
#include "icmscope/pipeline/log.hpp"
#include "icmscope/pipeline/physical_maps.hpp"

namespace icmscope::pipeline {

// The band table of the emission settings at a redshift with the instrument's
// on-axis area folded in (inst null: a flat 1 cm^2 area).
emission::BandTable instrument_band_table(const emission::SpectralModel& model, const config::EmissionSettings& e,
                                          double redshift, const InstrumentModel* inst);

// Reads `path` and converts it. The map settings `m` take the file's band,
// N_H, grid and pointing (RA/Dec of the reference pixel); when m.target.name
// is empty they also take OBJECT and REDSHIFT, otherwise m.target.redshift must
// match REDSHIFT (settings_file names the YAML in that error). Z: metallicity
// [solar] of the isothermal conversion spectrum. verb: the log prefix.
// Errors: core::InputError naming the file, HDU and key `maps.file`;
// core::ConfigError naming settings_file on a redshift mismatch.
PhysicalMaps read_project_maps(const std::string& path, config::MapRunSettings& m, const std::string& settings_file,
                               const InstrumentModel& inst, const emission::SpectralModel& model, double Z,
                               const std::string& verb, Log& log);

}  // namespace icmscope::pipeline
