#include "icmscope/pipeline/count_rate.hpp"

#include <cstdio>
#include <sstream>

#include "icmscope/config/instrument_settings.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/emission/abundances.hpp"
#include "icmscope/emission/band_table.hpp"
#include "icmscope/emission/spectral_model.hpp"
#include "icmscope/pipeline/instrument_model.hpp"

namespace icmscope::pipeline {

namespace {

std::string g(double v, int digits = 6) {
  char b[64];
  std::snprintf(b, sizeof b, "%.*g", digits, v);
  return b;
}

void check(bool ok, const std::string& option, const std::string& expected, double v) {
  if (!ok) throw core::ConfigError("--" + option + " = " + g(v) + ", expected " + expected);
}

std::string json_number(double v) {
  if (!std::isfinite(v)) return "null";
  char b[64];
  std::snprintf(b, sizeof b, "%.10g", v);
  return b;
}

std::string json_string(const std::string& s) {
  std::string o = "\"";
  for (char c : s) {
    if (c == '"' || c == '\\') o += '\\';
    if (static_cast<unsigned char>(c) < 0x20) {
      char b[8];
      std::snprintf(b, sizeof b, "\\u%04x", c);
      o += b;
      continue;
    }
    o += c;
  }
  return o + "\"";
}

}  // namespace

RateResult compute_rate(const RateRequest& q) {
  check(q.kT_keV > 0 && q.kT_keV <= 100, "kT-keV", "in (0, 100]", q.kT_keV);
  check(q.Z_solar >= 0 && q.Z_solar <= 10, "Z-solar", "in [0, 10]", q.Z_solar);
  check(q.redshift >= 0 && q.redshift <= 20, "redshift", "in [0, 20]", q.redshift);
  check(q.nH_cm2 >= 0 && q.nH_cm2 <= 1e24, "nH-cm2", "in [0, 1e24]", q.nH_cm2);
  check(q.band_min_keV > 0, "band-keV", "a lower edge > 0", q.band_min_keV);
  check(q.band_max_keV > q.band_min_keV, "band-keV", "an upper edge above the lower one", q.band_max_keV);
  if (!std::isnan(q.flux_erg_cm2_s)) check(q.flux_erg_cm2_s > 0, "flux-erg-cm2-s", "> 0", q.flux_erg_cm2_s);
  if (!std::isnan(q.exposure_ks)) check(q.exposure_ks > 0, "exposure-ks", "> 0", q.exposure_ks);

  emission::ContinuumSettings cs;
  cs.recombination = q.recombination;
  const emission::ContinuumModel model(emission::abundance_set(q.abundances), nullptr, cs);

  RateResult r;
  emission::FoldingSpec fold;
  fold.redshift = q.redshift;
  fold.nH_cm2 = q.nH_cm2;
  emission::FoldingSpec flat = fold;
  if (q.instrument == "flat") {
    r.instrument_name = "flat (1 cm^2)";
  } else {
    const auto s = config::load_instrument(q.instrument);
    InstrumentModel m;
    m.settings = s;
    m.area = make_effective_area(s.area, s.source_file);
    area_folding_curve(m, fold.area_E_keV, fold.area_cm2);
    r.instrument_name = s.name;
  }
  const emission::BandSpec band{q.band_min_keV, q.band_max_keV};
  r.photon_coefficient = emission::band_photon_coefficient_direct(model, band, fold, q.kT_keV, q.Z_solar);
  const double k_flat = emission::band_photon_coefficient_direct(model, band, flat, q.kT_keV, q.Z_solar);
  r.energy_coefficient_abs = emission::band_energy_coefficient_direct(model, band, flat, q.kT_keV, q.Z_solar);
  emission::FoldingSpec unabs = flat;
  unabs.nH_cm2 = 0.0;
  r.energy_coefficient_unabs = emission::band_energy_coefficient_direct(model, band, unabs, q.kT_keV, q.Z_solar);
  if (!(r.energy_coefficient_abs > 0) || !(k_flat > 0))
    throw core::ConfigError("--band-keV: no emission in " + g(q.band_min_keV) + "-" + g(q.band_max_keV) +
                            " keV for kT = " + g(q.kT_keV) + " keV at this redshift and N_H");
  r.band_area_cm2 = r.photon_coefficient / k_flat;
  r.rate_per_flux_abs = r.photon_coefficient / r.energy_coefficient_abs;
  r.rate_per_flux_unabs = r.photon_coefficient / r.energy_coefficient_unabs;
  r.flux_per_rate_abs = r.rate_per_flux_abs > 0 ? 1.0 / r.rate_per_flux_abs : INFINITY;
  r.flux_per_rate_unabs = r.rate_per_flux_unabs > 0 ? 1.0 / r.rate_per_flux_unabs : INFINITY;
  r.counts_per_ks_per_flux = 1e3 * r.rate_per_flux_abs;
  {  // mean detected energy: quadrature of the same band integrals
    const auto quad = emission::make_band_quadrature(model, band, fold);
    std::vector<double> eps(quad.E_rest_keV.size());
    double n = 0, e = 0;
    for (std::size_t k = 0; k < quad.E_rest_keV.size(); ++k) {
      const double v = model.photon_emissivity(quad.E_rest_keV[k], q.kT_keV, q.Z_solar) * quad.w_photon[k];
      n += v;
      e += v * quad.E_obs_keV[k];
    }
    r.mean_energy_keV = n > 0 ? e / n : 0.0;
  }
  if (!std::isnan(q.flux_erg_cm2_s)) {
    const double ratio = r.energy_coefficient_abs / r.energy_coefficient_unabs;  // absorbed / unabsorbed flux
    r.flux_abs = q.flux_unabsorbed ? q.flux_erg_cm2_s * ratio : q.flux_erg_cm2_s;
    r.flux_unabs = q.flux_unabsorbed ? q.flux_erg_cm2_s : q.flux_erg_cm2_s / ratio;
    r.count_rate = r.flux_abs * r.rate_per_flux_abs;
    if (!std::isnan(q.exposure_ks)) r.counts = r.count_rate * q.exposure_ks * 1e3;
  }
  return r;
}

std::string rate_table_text(const RateRequest& q, const RateResult& r) {
  std::ostringstream o;
  auto row = [&](const std::string& k, const std::string& v) {
    char b[512];
    std::snprintf(b, sizeof b, "  %-36s %s\n", k.c_str(), v.c_str());
    o << b;
  };
  o << "icmscope rate: isothermal plasma through the on-axis effective area\n";
  row("instrument", r.instrument_name + (q.instrument == "flat" ? "" : " (" + q.instrument + ")"));
  row("plasma", "kT = " + g(q.kT_keV) + " keV, Z = " + g(q.Z_solar) + " solar (" + q.abundances + "), " +
                    (q.recombination ? "free-free + recombination continuum" : "free-free only"));
  row("redshift, Galactic N_H", "z = " + g(q.redshift) + ", N_H = " + g(q.nH_cm2) + " cm^-2");
  row("band (observed)", g(q.band_min_keV) + " - " + g(q.band_max_keV) + " keV");
  row("band-averaged area", g(r.band_area_cm2) + " cm^2  (mean detected energy " + g(r.mean_energy_keV, 4) + " keV)");
  row("count rate per absorbed flux", g(r.rate_per_flux_abs) + " counts/s per erg/cm^2/s");
  row("count rate per unabsorbed flux", g(r.rate_per_flux_unabs) + " counts/s per erg/cm^2/s");
  row("absorbed flux per count rate", g(r.flux_per_rate_abs) + " erg/cm^2/s per count/s");
  row("unabsorbed flux per count rate", g(r.flux_per_rate_unabs) + " erg/cm^2/s per count/s");
  row("counts per ks per 1e-14 erg/cm^2/s", g(r.counts_per_ks_per_flux * 1e-14) + " (absorbed flux)");
  row("rate per unit EM/(4 pi D_L^2)", g(r.photon_coefficient) + " counts/s per cm^-5");
  if (std::isfinite(r.count_rate)) {
    row("flux (absorbed / unabsorbed)", g(r.flux_abs) + " / " + g(r.flux_unabs) + " erg/cm^2/s");
    row("count rate", g(r.count_rate) + " counts/s");
    if (std::isfinite(r.counts)) row("expected counts in " + g(q.exposure_ks) + " ks", g(r.counts));
  }
  o << "  (continuum only: no emission lines; on-axis area, no vignetting, PSF losses or background)\n";
  return o.str();
}

std::string rate_json(const RateRequest& q, const RateResult& r) {
  std::ostringstream o;
  o << "{\n";
  auto kv = [&](const char* k, const std::string& v, bool last = false) {
    o << "  " << json_string(k) << ": " << v << (last ? "\n" : ",\n");
  };
  kv("instrument", json_string(r.instrument_name));
  kv("instrument_file", q.instrument == "flat" ? "null" : json_string(q.instrument));
  kv("kT_keV", json_number(q.kT_keV));
  kv("Z_solar", json_number(q.Z_solar));
  kv("abundances", json_string(q.abundances));
  kv("recombination", q.recombination ? "true" : "false");
  kv("redshift", json_number(q.redshift));
  kv("nH_cm2", json_number(q.nH_cm2));
  kv("band_keV", "[" + json_number(q.band_min_keV) + ", " + json_number(q.band_max_keV) + "]");
  kv("band_area_cm2", json_number(r.band_area_cm2));
  kv("mean_energy_keV", json_number(r.mean_energy_keV));
  kv("rate_per_flux_absorbed_counts_s_per_erg_cm2_s", json_number(r.rate_per_flux_abs));
  kv("rate_per_flux_unabsorbed_counts_s_per_erg_cm2_s", json_number(r.rate_per_flux_unabs));
  kv("flux_absorbed_per_rate_erg_cm2_s_per_count_s", json_number(r.flux_per_rate_abs));
  kv("flux_unabsorbed_per_rate_erg_cm2_s_per_count_s", json_number(r.flux_per_rate_unabs));
  kv("rate_per_em_over_4pi_dl2_counts_s_cm5", json_number(r.photon_coefficient));
  kv("energy_flux_absorbed_per_em_over_4pi_dl2_erg_s_cm3", json_number(r.energy_coefficient_abs));
  kv("energy_flux_unabsorbed_per_em_over_4pi_dl2_erg_s_cm3", json_number(r.energy_coefficient_unabs));
  kv("flux_absorbed_erg_cm2_s", json_number(r.flux_abs));
  kv("flux_unabsorbed_erg_cm2_s", json_number(r.flux_unabs));
  kv("count_rate_counts_s", json_number(r.count_rate));
  kv("exposure_ks", json_number(q.exposure_ks));
  kv("counts", json_number(r.counts), true);
  o << "}\n";
  return o.str();
}

}  // namespace icmscope::pipeline
