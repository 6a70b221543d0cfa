#include "icmscope/pipeline/instrument_model.hpp"

#include <algorithm>
#include <cmath>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/emission/absorption.hpp"
#include "icmscope/emission/abundances.hpp"
#include "icmscope/emission/band_table.hpp"
#include "icmscope/emission/spectral_model.hpp"
#include "icmscope/io/fits_image.hpp"
#include "icmscope/io/ogip.hpp"

namespace icmscope::pipeline {

namespace K = core::constants;

namespace {

// Runs f; a DomainError of the instrument library becomes a ConfigError naming
// the instrument file and the section.
template <typename F>
auto in_section(const std::string& file, const std::string& section, F&& f) -> decltype(f()) {
  try {
    return f();
  } catch (const core::DomainError& e) {
    throw core::ConfigError(file + ": " + section + ": " + e.what());
  }
}

}  // namespace

int InstrumentModel::first_channel() const { return rmf ? rmf->first_channel() : resolution.first_channel; }

int InstrumentModel::last_channel() const {
  return rmf ? rmf->first_channel() + rmf->n_channels() - 1 : resolution.first_channel + resolution.n_channels - 1;
}

int InstrumentModel::nominal_channel(double E) const {
  if (rmf) {
    int c = rmf->channel_for_energy(E);
    if (c < 0) {  // outside EBOUNDS (or none): clamp to the nearest end
      const auto& lo = rmf->chan_e_min_keV();
      c = (!lo.empty() && E < lo.front()) || lo.empty() ? first_channel() : last_channel();
    }
    return c;
  }
  return resolution.channel_for_energy(E);
}

int InstrumentModel::draw_channel(double E, core::RandomStream& rng) const {
  if (rmf) {
    const int c = rmf->draw_channel(E, rng);
    return c >= 0 ? c : nominal_channel(E);  // energy the matrix cannot place
  }
  return resolution.draw_channel(E, rng);
}

instrument::EffectiveArea make_effective_area(const config::AreaCurveSettings& a, const std::string& file) {
  instrument::EffectiveArea area;
  if (a.kind == "ogip") {
    area = io::read_arf(a.file);
  } else {
    area = in_section(file, "effective_area", [&] {
      return a.kind == "table" ? instrument::EffectiveArea::from_points(a.energy_keV, a.area_cm2, file)
                               : instrument::EffectiveArea::analytic(a.analytic);
    });
  }
  if (a.scale != 1.0) area = area.scaled(a.scale);
  if (!(area.max_cm2() > 0))
    throw core::ConfigError(file + ": effective_area: the curve is zero everywhere (" + area.origin() + ")");
  return area;
}

InstrumentModel build_instrument(const config::InstrumentSettings& s, double nH_cm2,
                                 std::shared_ptr<const emission::GauntTable> gaunt) {
  const std::string& file = s.source_file.empty() ? s.name : s.source_file;
  InstrumentModel m;
  m.settings = s;
  m.area = make_effective_area(s.area, file);

  if (s.response.kind == "ogip") {
    m.rmf = io::read_rmf(s.response.file, s.response.extver);
    if (m.rmf->chan_e_min_keV().empty())
      throw core::InputError(s.response.file + ": no EBOUNDS extension (needed for the PI channels of events)");
  } else {
    m.resolution = s.response.gaussian;
    in_section(file, "response", [&] { m.resolution.validate(); });
  }

  std::optional<core::ImageD> bad;
  if (!s.detector.bad_pixel_file.empty()) {
    auto img = io::read_fits_image(s.detector.bad_pixel_file);
    core::SkyAnchor an = img.image.anchor();
    an.pixel_arcsec = s.detector.layout.pixel_arcsec;  // detector pixels, whatever the file says
    img.image.set_anchor(an);
    bad = std::move(img.image);
  }
  m.detector = in_section(file, "detector", [&] { return instrument::Detector(s.detector.layout, bad); });
  m.dead_fraction = s.detector.dead_fraction;

  const auto& p = s.psf;
  m.psf = in_section(file, "psf", [&] {
    if (p.kind == "gaussian") return instrument::Psf::gaussian(p.fwhm_arcsec, p.scaling);
    if (p.kind == "king") return instrument::Psf::king(p.core_radius_arcsec, p.beta, p.scaling);
    auto img = p.image_extension.empty() ? io::read_fits_image(p.image_file)
                                         : io::read_fits_image(p.image_file, p.image_extension);
    core::SkyAnchor an = img.image.anchor();
    if (p.image_pixel_arcsec > 0) {
      an.pixel_arcsec = p.image_pixel_arcsec;
    } else if (!img.wcs.valid()) {
      throw core::ConfigError(file + ": psf: " + p.image_file +
                              " has no WCS; give psf.pixel_arcsec (the PSF image's pixel size)");
    }
    if (!img.wcs.valid()) {
      an.crpix1 = 0.5 * (img.image.nx() + 1);
      an.crpix2 = 0.5 * (img.image.ny() + 1);
    }
    img.image.set_anchor(an);
    return instrument::Psf::image(img.image, p.scaling);
  });
  m.zones.edges_arcmin = p.zones_arcmin;
  m.zones.blend_arcmin = p.zone_blend_arcmin;
  m.kernel.eef_target = p.kernel_eef;
  m.kernel.max_half_size = p.kernel_max_half_size;
  m.zones.kernel = m.kernel;

  const auto& v = s.vignetting;
  m.vignetting = in_section(file, "vignetting", [&] {
    if (v.kind == "analytic") return instrument::Vignetting::analytic(v.analytic);
    if (v.kind == "table") return instrument::Vignetting::table(v.theta_arcmin, v.energy_keV, v.values, file);
    return instrument::Vignetting::none();
  });

  m.particle = in_section(file, "particle_background", [&] { return instrument::ParticleBackground(s.particle); });

  // Sky background: CXB power law + thermal foreground components.
  std::vector<instrument::ForegroundComponent> fg;
  if (!s.sky.foreground.empty()) {
    if (!gaunt) gaunt = std::make_shared<const emission::GauntTable>();
    auto model = std::make_shared<const emission::ContinuumModel>(emission::anders_grevesse_1989(), gaunt);
    for (const auto& f : s.sky.foreground) {
      emission::BandSpec band{f.flux_band_min_keV, f.flux_band_max_keV};
      emission::FoldingSpec fold;  // z = 0, no absorption: the unabsorbed intensity
      const double e_coef = emission::band_energy_coefficient_direct(*model, band, fold, f.kT_keV, f.Z_solar);
      if (!(e_coef > 0))
        throw core::ConfigError(file + ": sky_background.foreground '" + f.name + "': no emission in flux_band_keV");
      const double norm = f.flux_erg_cm2_s_deg2 / 3600.0 / e_coef;  // per arcmin^2
      const double Z = f.Z_solar;
      fg.push_back(in_section(file, "sky_background.foreground", [&] {
        return instrument::thermal_foreground(
            f.name, f.kT_keV, norm, f.absorbed,
            [model, Z](double E, double kT) { return E > 0 ? model->photon_emissivity(E, kT, Z) : 0.0; });
      }));
    }
  }
  instrument::CxbSettings cxb = s.sky.cxb;
  if (!s.sky.cxb_enabled) cxb.norm_photons_cm2_s_sr_keV = 0.0;
  std::function<double(double)> trans;
  if (nH_cm2 > 0) trans = [nH_cm2](double E) { return emission::mm83_transmission(E, nH_cm2); };
  m.sky = in_section(file, "sky_background", [&] { return instrument::SkyBackground(cxb, trans, fg); });

  m.dither = s.dither;
  return m;
}

void area_folding_curve(const InstrumentModel& m, std::vector<double>& E, std::vector<double>& A) {
  // EffectiveArea::at() is linear between its nodes and constant from the end
  // nodes to the outer edges. The nodes are the table's points, the OGIP bin
  // centres or the analytic curve's geometric bin centres; with the two outer
  // edges added, linear interpolation of these points is exactly at().
  E.clear();
  A.clear();
  const auto& a = m.area;
  const auto& ed = a.edges_keV();
  const std::string& kind = m.settings.area.kind;
  std::vector<double> pts;
  if (!ed.empty()) pts = {std::max(ed.front(), 1e-6), ed.back()};  // a zero first edge: start just above it
  if (kind == "table") {
    pts.insert(pts.end(), m.settings.area.energy_keV.begin(), m.settings.area.energy_keV.end());
  } else {
    for (std::size_t i = 0; i + 1 < ed.size(); ++i)
      pts.push_back(kind == "analytic" ? std::sqrt(ed[i] * ed[i + 1]) : 0.5 * (ed[i] + ed[i + 1]));
  }
  std::sort(pts.begin(), pts.end());
  for (double e : pts)
    if (e > 0 && (E.empty() || e > E.back() * (1 + 1e-12))) {
      E.push_back(e);
      A.push_back(a.at(e));
    }
}

}  // namespace icmscope::pipeline
