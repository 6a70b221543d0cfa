#pragma once
// `rate`: an isothermal plasma through an instrument's on-axis effective area.
//
// For the photon spectrum per observed energy of a plasma at redshift z behind
// a Galactic column N_H (emission::BandTable conventions, physics.md sections
// 1-5), over the observed band [e1, e2]:
//   K_ph  = (1+z)^2 Int eps_N((1+z)E) A(E) T(E) dE   [counts s^-1 per EM/(4 pi D_L^2) = 1 cm^-5]
//   K_abs = (1+z)^2 Int E eps_N((1+z)E) T(E) dE      [erg s^-1 cm^-2 per unit EM/(4 pi D_L^2)]
//   K_un  = the same with T = 1 (unabsorbed)
// so that count rate per unit absorbed band flux = K_ph / K_abs (counts s^-1 per
// erg cm^-2 s^-1), per unabsorbed band flux = K_ph / K_un; the band-averaged
// area is K_ph / K_ph(A = 1 cm^2). Only ratios of the spectrum enter these, except
// K_ph itself (the absolute normalisation).
#include <cmath>
#include <limits>
#include <string>

namespace icmscope::pipeline {

struct RateRequest {
  double kT_keV = 5.0;
  double Z_solar = 0.3;
  double redshift = 0.0;
  double nH_cm2 = 3e20;
  double band_min_keV = 0.5;
  double band_max_keV = 2.0;
  std::string instrument = "flat";   // "flat" (1 cm^2 at all energies) or an instrument YAML file
  std::string abundances = "anders_grevesse_1989";
  bool recombination = true;
  double flux_erg_cm2_s = std::numeric_limits<double>::quiet_NaN();  // optional: band flux of the source
  bool flux_unabsorbed = false;      // the flux given is unabsorbed (default: absorbed, as observed)
  double exposure_ks = std::numeric_limits<double>::quiet_NaN();    // optional
};

struct RateResult {
  std::string instrument_name;
  double band_area_cm2 = 0.0;             // spectrum-weighted on-axis area in the band
  double photon_coefficient = 0.0;        // K_ph [counts s^-1 cm^5]
  double energy_coefficient_abs = 0.0;    // K_abs [erg s^-1 cm^3]: absorbed band energy flux per unit EM/(4 pi D_L^2)
  double energy_coefficient_unabs = 0.0;  // K_un
  double rate_per_flux_abs = 0.0;         // counts s^-1 per erg cm^-2 s^-1 (absorbed band flux)
  double rate_per_flux_unabs = 0.0;       // ... (unabsorbed band flux)
  double flux_per_rate_abs = 0.0;         // erg cm^-2 s^-1 per count s^-1
  double flux_per_rate_unabs = 0.0;
  double mean_energy_keV = 0.0;           // mean energy of the detected counts
  // With a flux: the count rate, the other flux, and (with an exposure) the counts.
  double count_rate = std::numeric_limits<double>::quiet_NaN();
  double flux_abs = std::numeric_limits<double>::quiet_NaN();
  double flux_unabs = std::numeric_limits<double>::quiet_NaN();
  double counts = std::numeric_limits<double>::quiet_NaN();
  double counts_per_ks_per_flux = 0.0;    // counts per ks per erg cm^-2 s^-1 (absorbed)
};

// ConfigError for out-of-range inputs (naming the option).
RateResult compute_rate(const RateRequest& q);
// A readable table and a JSON object (keys with units) of the same figures.
std::string rate_table_text(const RateRequest& q, const RateResult& r);
std::string rate_json(const RateRequest& q, const RateResult& r);

}  // namespace icmscope::pipeline
