#include "icmscope/pipeline/maps_file.hpp"

#include <algorithm>
#include <cmath>
#include <cstddef>
#include <cstdio>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/core/text_format.hpp"
#include "icmscope/io/fits_header.hpp"
#include "icmscope/io/fits_image.hpp"

namespace icmscope::pipeline {

using core::format_number;

emission::BandTable instrument_band_table(const emission::SpectralModel& model, const config::EmissionSettings& e,
                                          double redshift, const InstrumentModel* inst) {
  std::vector<double> E_keV, A_cm2;
  if (inst) area_folding_curve(*inst, E_keV, A_cm2);
  return make_band_table(model, e, redshift, std::move(E_keV), std::move(A_cm2));
}

PhysicalMaps read_project_maps(const std::string& path, config::MapRunSettings& m, const std::string& settings_file,
                               const InstrumentModel& inst, const emission::SpectralModel& model, double Z,
                               const std::string& verb, Log& log) {
  const auto hdr = io::read_fits_header(path, 0);
  auto rate = io::read_fits_image(path, "RATE");
  auto tew = io::read_fits_image(path, "T_EW");
  if (!rate.wcs.valid()) throw core::InputError(path + ", HDU RATE: no WCS (maps.file)");
  if (rate.image.unit() != "photon/(cm2 s)")
    throw core::InputError(path + ", HDU RATE: BUNIT '" + rate.image.unit() +
                           "', expected 'photon/(cm2 s)' (maps made with effective_area: flat) (maps.file)");
  if (!tew.image.same_grid(rate.image)) throw core::InputError(path + ": T_EW and RATE differ in shape (maps.file)");
  const double file_z = hdr.number("REDSHIFT");
  if (m.target.name.empty()) {
    m.target.name = hdr.has("OBJECT") ? hdr.text("OBJECT") : "target";
    m.target.redshift = file_z;
  }
  if (std::fabs(file_z - m.target.redshift) > 1e-6 * std::max(1.0, file_z))
    throw core::ConfigError(settings_file + ": target.redshift " + format_number(m.target.redshift, "%.6g") + " differs from " +
                            path + " REDSHIFT = " + format_number(file_z, "%.6g"));
  const auto a = rate.image.anchor();
  m.target.ra_deg = a.ra_deg;
  m.target.dec_deg = a.dec_deg;
  m.emission.band_min_keV = hdr.number("E_MIN");
  m.emission.band_max_keV = hdr.number("E_MAX");
  m.emission.nH_cm2 = hdr.number("NH");
  m.view.nx = rate.image.nx();
  m.view.ny = rate.image.ny();
  m.view.pixel_arcsec = a.pixel_arcsec;
  const auto flat = instrument_band_table(model, m.emission, m.target.redshift, nullptr);
  const auto withA = instrument_band_table(model, m.emission, m.target.redshift, &inst);
  // Mean kT for pixels with a rate but no temperature (should not occur).
  double sr = 0, srt = 0;
  for (std::size_t i = 0; i < rate.image.size(); ++i)
    if (rate.image.data()[i] > 0 && tew.image.data()[i] > 0) {
      sr += rate.image.data()[i];
      srt += rate.image.data()[i] * tew.image.data()[i];
    }
  const double tmean = sr > 0 ? srt / sr : 5.0;
  PhysicalMaps out;
  out.rate = rate.image;
  out.rate.set_unit("count/s");
  out.t_ew = tew.image;
  out.t_ew.set_anchor(a);
  out.t_ew.set_unit("keV");
  const std::ptrdiff_t n = static_cast<std::ptrdiff_t>(out.rate.size());
#pragma omp parallel for schedule(static)
  for (std::ptrdiff_t i = 0; i < n; ++i) {
    const double r = rate.image.data()[i];
    if (!(r > 0) || !std::isfinite(r)) {
      out.rate.data()[i] = 0.0;
      continue;
    }
    const double t = tew.image.data()[i] > 0 ? tew.image.data()[i] : tmean;
    const double kf = flat.photon_coefficient(t, Z);
    out.rate.data()[i] = kf > 0 ? r * withA.photon_coefficient(t, Z) / kf : 0.0;
  }
  out.kpc_per_arcsec = hdr.maybe_number("KPCPERAS").value_or(0.0);
  out.pixel_kpc = hdr.maybe_number("PIXKPC").value_or(0.0);
  out.luminosity_distance_cm = hdr.maybe_number("DL_MPC").value_or(0.0) * core::constants::Mpc_cm;
  log.info(verb + ": maps from " + path + " (" + std::to_string(out.rate.nx()) + " x " +
           std::to_string(out.rate.ny()) + ", " + format_number(m.emission.band_min_keV) + "-" +
           format_number(m.emission.band_max_keV) + " keV); on-axis rate " + format_number(out.rate.sum()) + " counts/s");
  return out;
}

}  // namespace icmscope::pipeline
