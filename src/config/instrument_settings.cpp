// YAML -> InstrumentSettings: see include/icmscope/config/instrument_settings.hpp.
#include "icmscope/config/instrument_settings.hpp"

#include <cmath>
#include <cstdio>
#include <limits>

#include "icmscope/core/errors.hpp"

namespace icmscope::config {

namespace {

std::string num(double v) {
  char b[40];
  std::snprintf(b, sizeof b, "%.9g", v);
  return b;
}

// Strictly increasing list; the message names the first offending element.
void require_increasing(const Section& s, const std::string& key, const std::vector<double>& v) {
  for (std::size_t i = 1; i < v.size(); ++i)
    if (!(v[i] > v[i - 1]))
      s.fail(key, "element " + std::to_string(i) + " = " + num(v[i]) + " keeps it from increasing (element " +
                      std::to_string(i - 1) + " = " + num(v[i - 1]) + "); expected strictly increasing values");
}

AreaCurveSettings read_area(const Section& s) {
  AreaCurveSettings a;
  a.kind = s.choice("kind", {"analytic", "table", "ogip"});
  if (a.kind == "analytic") {
    auto& p = a.analytic;
    p.peak_area_cm2 = s.number("peak_area_cm2", std::nullopt, Range::positive());
    p.peak_energy_keV = s.number("peak_energy_keV", std::nullopt, Range::positive());
    p.low_rolloff_dex = s.number("low_rolloff_dex", 0.25, Range::positive());
    p.high_rolloff_dex = s.number("high_rolloff_dex", 0.35, Range::positive());
    p.e_min_keV = s.number("e_min_keV", 0.1, Range::positive());
    p.e_max_keV = s.number("e_max_keV", 12.0, Range::positive());
    if (!(p.e_max_keV > p.e_min_keV)) s.fail("e_max_keV", "expected > e_min_keV = " + num(p.e_min_keV));
    if (!(p.peak_energy_keV > p.e_min_keV && p.peak_energy_keV < p.e_max_keV))
      s.fail("peak_energy_keV", "expected inside [e_min_keV, e_max_keV] = [" + num(p.e_min_keV) + ", " +
                                    num(p.e_max_keV) + "]");
    p.n_bins = static_cast<int>(s.integer("bins", 600, Range::closed(8, 100000)));
  } else if (a.kind == "table") {
    a.energy_keV = s.numbers("energy_keV", std::nullopt, Range::positive(), 2);
    require_increasing(s, "energy_keV", a.energy_keV);
    a.area_cm2 = s.numbers("area_cm2", std::nullopt, Range::any());
    for (std::size_t i = 0; i < a.area_cm2.size(); ++i)
      if (!(a.area_cm2[i] >= 0))
        s.fail("area_cm2", "element " + std::to_string(i) + " = " + num(a.area_cm2[i]) +
                               ", expected an effective area >= 0 cm^2");
    if (a.area_cm2.size() != a.energy_keV.size())
      s.fail("area_cm2", std::to_string(a.area_cm2.size()) + " values for " + std::to_string(a.energy_keV.size()) +
                             " energies; expected one area per energy_keV point");
  } else {
    a.file = s.path_value("file");
  }
  a.scale = s.number("scale", 1.0, Range::positive());
  return a;
}

ResponseSettings read_response(const std::optional<Section>& s) {
  ResponseSettings r;
  if (!s) return r;
  r.kind = s->choice("kind", {"gaussian", "ogip"}, std::string("gaussian"));
  if (r.kind == "ogip") {
    r.file = s->path_value("file");
    r.extver = static_cast<int>(s->integer("extver", 0, Range::closed(0, 9999)));
  } else {
    auto& g = r.gaussian;
    g.pair_energy_keV = s->number("pair_energy_keV", 3.65e-3, Range::positive());
    g.fano = s->number("fano", 0.12, Range::closed(0.0, 1.0));
    g.read_noise_electrons = s->number("read_noise_electrons", 3.0, Range::non_negative());
    g.channel_width_keV = s->number("channel_width_keV", 0.0146, Range::positive());
    g.n_channels = static_cast<int>(s->integer("channels", 1024, Range::closed(2, 1 << 20)));
    g.first_channel = static_cast<int>(s->integer("first_channel", 1, Range::closed(0, 1)));
  }
  return r;
}

DetectorLayoutSettings read_detector(const Section& s) {
  DetectorLayoutSettings d;
  auto& L = d.layout;
  L.fov_shape = s.choice("fov_shape", {"square", "circle"}) == "circle" ? instrument::FovShape::Circle
                                                                        : instrument::FovShape::Square;
  L.fov_arcmin = s.number("fov_arcmin", std::nullopt, Range::positive());
  L.pixel_arcsec = s.number("pixel_arcsec", std::nullopt, Range::positive());
  const auto chips = s.numbers("chips", std::vector<double>{1, 1}, Range::closed(1, 64), 2, 2);
  for (int k = 0; k < 2; ++k)
    if (chips[k] != std::floor(chips[k])) s.fail("chips", "expected two whole numbers [along u, along v]");
  L.chips_u = static_cast<int>(chips[0]);
  L.chips_v = static_cast<int>(chips[1]);
  L.chip_gap_arcsec = s.number("chip_gap_arcsec", 0.0, Range::non_negative());
  if (L.chip_gap_arcsec >= 60.0 * L.fov_arcmin / std::max(L.chips_u, L.chips_v))
    s.fail("chip_gap_arcsec", "a gap as wide as a chip leaves nothing to observe");
  const auto aim = s.numbers("aim_offset_arcsec", std::vector<double>{0, 0}, Range::any(), 2, 2);
  L.aim_u_arcsec = aim[0];
  L.aim_v_arcsec = aim[1];
  for (const Section& g : s.children("gaps", true)) {
    instrument::GapLine line;
    line.axis = g.choice("axis", {"u", "v"})[0];
    line.position_arcsec = g.number("position_arcsec", std::nullopt, Range::any());
    line.width_arcsec = g.number("width_arcsec", std::nullopt, Range::positive());
    L.extra_gaps.push_back(line);
  }
  if (s.has("bad_pixels")) d.bad_pixel_file = s.path_value("bad_pixels");
  d.dead_fraction = s.number("dead_fraction", 0.0, Range{0.0, 1.0, false, true});
  return d;
}

PsfSettings read_psf(const Section& s) {
  PsfSettings p;
  p.kind = s.choice("kind", {"gaussian", "king", "image"});
  if (p.kind == "gaussian") {
    p.fwhm_arcsec = s.number("fwhm_arcsec", std::nullopt, Range::positive());
  } else if (p.kind == "king") {
    p.core_radius_arcsec = s.number("core_radius_arcsec", std::nullopt, Range::positive());
    p.beta = s.number("beta", std::nullopt, Range{1.0, 20.0, true, false});
  } else {
    p.image_file = s.path_value("file");
    p.image_extension = s.text("extension", std::string());
    p.image_pixel_arcsec = s.number("pixel_arcsec", 0.0, Range::non_negative());
  }
  p.scaling.theta_s_arcmin = s.number("off_axis_scale_arcmin", 0.0, Range::non_negative());
  p.scaling.e0_keV = s.number("energy_ref_keV", 1.5, Range::positive());
  p.scaling.eta = s.number("energy_index", 0.0, Range::closed(-2.0, 2.0));
  p.zones_arcmin = s.numbers("zones_arcmin", std::vector<double>{0.0, 3.0, 6.0, 9.0, 12.0}, Range::non_negative(), 1,
                             64);
  if (p.zones_arcmin.front() != 0.0) s.fail("zones_arcmin", "expected the first zone edge at 0 arcmin");
  require_increasing(s, "zones_arcmin", p.zones_arcmin);
  p.zone_blend_arcmin = s.number("zone_blend_arcmin", 1.0, Range::non_negative());
  for (std::size_t k = 1; k < p.zones_arcmin.size(); ++k)
    if (p.zones_arcmin[k] - p.zones_arcmin[k - 1] < p.zone_blend_arcmin)
      s.fail("zone_blend_arcmin", "expected no wider than the narrowest zone (" +
                                      num(p.zones_arcmin[k] - p.zones_arcmin[k - 1]) + " arcmin)");
  p.kernel_eef = s.number("kernel_eef", 0.995, Range{0.5, 1.0, false, true});
  p.kernel_max_half_size = static_cast<int>(s.integer("kernel_max_half_size", 256, Range::closed(2, 4096)));
  return p;
}

VignettingSettings read_vignetting(const std::optional<Section>& s) {
  VignettingSettings v;
  if (!s) {
    v.kind = "none";
    return v;
  }
  v.kind = s->choice("kind", {"none", "analytic", "table"});
  if (v.kind == "analytic") {
    auto& a = v.analytic;
    a.theta_v0_arcmin = s->number("theta_v0_arcmin", std::nullopt, Range::positive());
    a.e0_keV = s->number("energy_ref_keV", 1.5, Range::positive());
    a.energy_slope = s->number("energy_slope", 0.3, Range::closed(-3.0, 3.0));
    a.p = s->number("index", 1.0, Range{0.0, 10.0, true, false});
  } else if (v.kind == "table") {
    v.theta_arcmin = s->numbers("theta_arcmin", std::nullopt, Range::non_negative(), 2);
    if (v.theta_arcmin.front() != 0.0) s->fail("theta_arcmin", "expected the first angle at 0 arcmin (on axis)");
    require_increasing(*s, "theta_arcmin", v.theta_arcmin);
    const auto rows = s->children("rows");
    if (rows.empty()) s->fail("rows", "expected at least one row {energy_keV, values}");
    for (std::size_t r = 0; r < rows.size(); ++r) {
      const Section& row = rows[r];
      const double e = row.number("energy_keV", std::nullopt, Range::positive());
      if (!v.energy_keV.empty() && !(e > v.energy_keV.back()))
        row.fail("energy_keV", num(e) + " keV, expected rows in strictly increasing energy (previous row " +
                                   num(v.energy_keV.back()) + " keV)");
      v.energy_keV.push_back(e);
      const auto vals = row.numbers("values", std::nullopt, Range::closed(0.0, 1.0));
      if (vals.size() != v.theta_arcmin.size())
        row.fail("values", std::to_string(vals.size()) + " values, expected one per theta_arcmin (" +
                               std::to_string(v.theta_arcmin.size()) + ")");
      if (std::fabs(vals.front() - 1.0) > 1e-6) row.fail("values", "expected 1 on axis (theta = 0), got " + num(vals.front()));
      v.values.insert(v.values.end(), vals.begin(), vals.end());
    }
  }
  return v;
}

instrument::ParticleBackgroundSettings read_particle(const std::optional<Section>& s) {
  instrument::ParticleBackgroundSettings p;
  if (!s) {
    p.level_counts_s_keV_arcmin2 = 0.0;
    return p;
  }
  p.level_counts_s_keV_arcmin2 = s->number("level_counts_s_keV_arcmin2", std::nullopt, Range::non_negative());
  p.e_ref_keV = s->number("energy_ref_keV", 1.0, Range::positive());
  p.slope = s->number("slope", 0.0, Range::closed(-5.0, 5.0));
  for (const Section& l : s->children("lines", true)) {
    instrument::FluorescenceLine f;
    f.energy_keV = l.number("energy_keV", std::nullopt, Range::positive());
    f.sigma_keV = l.number("sigma_keV", 0.05, Range::positive());
    f.rate_counts_s_arcmin2 = l.number("rate_counts_s_arcmin2", std::nullopt, Range::non_negative());
    p.lines.push_back(f);
  }
  return p;
}

SkyBackgroundSettings read_sky(const std::optional<Section>& s) {
  SkyBackgroundSettings k;
  if (!s) {
    k.cxb_enabled = false;
    return k;
  }
  if (auto c = s->maybe_child("cxb")) {
    k.cxb_enabled = c->flag("enabled", true);
    k.cxb.norm_photons_cm2_s_sr_keV = c->number("norm_photons_cm2_s_sr_keV", 11.6, Range::non_negative());
    k.cxb.photon_index = c->number("photon_index", 1.41, Range::closed(0.0, 4.0));
    k.cxb.absorbed = c->flag("absorbed", true);
  } else {
    k.cxb_enabled = false;
  }
  for (const Section& f : s->children("foreground", true)) {
    ForegroundSettings g;
    g.name = f.text("name");
    g.kT_keV = f.number("kT_keV", std::nullopt, Range{0.01, 10.0, false, false});
    g.Z_solar = f.number("Z_solar", 1.0, Range::closed(0.0, 5.0));
    g.absorbed = f.flag("absorbed");
    g.flux_erg_cm2_s_deg2 = f.number("flux_erg_cm2_s_deg2", std::nullopt, Range::non_negative());
    const auto band = f.numbers("flux_band_keV", std::vector<double>{0.5, 2.0}, Range::positive(), 2, 2);
    if (!(band[1] > band[0])) f.fail("flux_band_keV", "expected [min, max] with max > min");
    g.flux_band_min_keV = band[0];
    g.flux_band_max_keV = band[1];
    k.foreground.push_back(g);
  }
  return k;
}

instrument::DitherSettings read_dither(const std::optional<Section>& s) {
  instrument::DitherSettings d;
  if (!s) return d;  // pattern none
  const std::string p = s->choice("pattern", {"none", "lissajous", "random"});
  d.pattern = p == "lissajous" ? instrument::DitherPattern::Lissajous
              : p == "random"  ? instrument::DitherPattern::Random
                               : instrument::DitherPattern::None;
  if (d.pattern == instrument::DitherPattern::None) return d;
  d.amplitude_arcsec = s->number("amplitude_arcsec", std::nullopt, Range::positive());
  if (d.pattern == instrument::DitherPattern::Lissajous) {
    d.period_u_s = s->number("period_u_s", 1000.0, Range::positive());
    d.period_v_s = s->number("period_v_s", 707.0, Range::positive());
  }
  d.n_samples = static_cast<int>(s->integer("samples", 512, Range::closed(1, 1 << 20)));
  return d;
}

}  // namespace

InstrumentSettings read_instrument(const Section& r) {
  InstrumentSettings in;
  const Section id = r.child("instrument");
  in.name = id.text("name");
  if (in.name.empty()) id.fail("name", "expected a non-empty name");
  in.telescope = id.text("telescope", in.name);
  in.description = id.text("description", std::string());
  in.area = read_area(r.child("effective_area"));
  in.response = read_response(r.maybe_child("response"));
  in.detector = read_detector(r.child("detector"));
  in.psf = read_psf(r.child("psf"));
  in.vignetting = read_vignetting(r.maybe_child("vignetting"));
  in.particle = read_particle(r.maybe_child("particle_background"));
  in.sky = read_sky(r.maybe_child("sky_background"));
  in.dither = read_dither(r.maybe_child("dither"));
  return in;
}

InstrumentSettings load_instrument(const std::string& path) {
  auto file = SettingsFile::load(path);
  InstrumentSettings in = read_instrument(file.root());
  file.finish();
  in.source_file = path;
  in.resolved_yaml = file.resolved_yaml();
  in.config_hash = file.resolved_hash();
  return in;
}

const char* instrument_example_yaml() {
  return R"(# An icmscope instrument description (schema in the README, section "Instruments").
# ILLUSTRATIVE: an invented instrument with plausible, uncalibrated parameters.
# Real calibration comes in through OGIP files (effective_area: {kind: ogip},
# response: {kind: ogip}). Units are in the key names; relative paths resolve
# against this file's folder.

instrument:
  name: Example-CCD            # INSTRUME keyword of the outputs
  telescope: Example           # TELESCOP keyword (default: name)
  description: generic CCD imager behind a grazing-incidence mirror (illustrative)

effective_area:                # on-axis effective area A(E)
  kind: analytic               # analytic | table | ogip
  peak_area_cm2: 500           # analytic: split log-normal in energy, A(peak) = peak_area_cm2
  peak_energy_keV: 1.5
  low_rolloff_dex: 0.25        # log10 width below the peak
  high_rolloff_dex: 0.35       # log10 width above the peak
  e_min_keV: 0.1               # tabulated range
  e_max_keV: 12.0
  bins: 600                    # logarithmic bins
  # kind: table -> energy_keV: [0.3, 1, 2, 5, 8], area_cm2: [100, 450, 380, 120, 30]
  #               (linear between points, strictly increasing energies, areas >= 0)
  # kind: ogip  -> file: my.arf (SPECRESP extension, ENERG_LO/ENERG_HI/SPECRESP)
  scale: 1.0                   # multiplies the curve

response:                      # how photon energies become PI channels in event lists
  kind: gaussian               # gaussian | ogip
  pair_energy_keV: 3.65e-3     # gaussian: FWHM = 2.3548 w sqrt(F E / w + read_noise^2)
  fano: 0.12
  read_noise_electrons: 3.0
  channel_width_keV: 0.0146    # PI channel width
  channels: 1024
  first_channel: 1             # 0 or 1
  # kind: ogip -> file: my.rmf, extver: 0   (MATRIX or SPECRESP MATRIX, with EBOUNDS)

detector:
  fov_shape: square            # square | circle
  fov_arcmin: 16               # side (square) or diameter (circle)
  pixel_arcsec: 1.0            # detector pixel (bad-pixel mask pixels)
  chips: [2, 2]                # chip grid over the field's bounding square [along u, along v]
  chip_gap_arcsec: 10          # full width of the gaps between chips
  aim_offset_arcsec: [0, 0]    # optical axis relative to the field centre
  gaps:                        # extra insensitive strips about the optical axis (optional)
    - {axis: u, position_arcsec: 240, width_arcsec: 4}
  # bad_pixels: badpix.fits    # FITS image in detector pixels, nonzero = bad, CRPIX on the field centre
  dead_fraction: 0.02          # live time = exposure (1 - dead_fraction)

psf:
  kind: king                   # gaussian (fwhm_arcsec) | king (core_radius_arcsec, beta) | image (file)
  core_radius_arcsec: 2.0      # King P(r) ~ [1 + (r/r_c)^2]^-beta
  beta: 1.6
  # kind: image -> file: psf.fits, extension: PSF, pixel_arcsec: 0.5 (0 = from the WCS)
  off_axis_scale_arcmin: 8     # every PSF scale x sqrt(1 + (theta/off_axis_scale)^2) (0 = none)
  energy_ref_keV: 1.5          # ... x (E / energy_ref_keV)^energy_index
  energy_index: 0.1
  zones_arcmin: [0, 2, 4, 6, 8, 10]  # off-axis zones of the spatially varying PSF (first 0)
  zone_blend_arcmin: 0.5       # linear blend across each zone edge
  kernel_eef: 0.995            # kernel reaches the radius enclosing this fraction
  kernel_max_half_size: 256    # pixels

vignetting:
  kind: analytic               # none | analytic | table
  theta_v0_arcmin: 12          # V = [1 + (theta/theta_v(E))^2]^-index, theta_v = theta_v0 (E/E0)^-energy_slope
  energy_ref_keV: 1.5
  energy_slope: 0.3
  index: 1.0
  # kind: table -> theta_arcmin: [0, 5, 10, 15]
  #                rows: [{energy_keV: 1.0, values: [1, 0.9, 0.7, 0.5]}, {energy_keV: 6.0, values: [1, 0.8, 0.5, 0.3]}]

particle_background:           # detected counts, NOT vignetted
  level_counts_s_keV_arcmin2: 1.0e-3   # continuum at energy_ref_keV
  energy_ref_keV: 1.0
  slope: 0.0                   # B ~ E^-slope
  lines:                       # Gaussian fluorescence lines (optional)
    - {energy_keV: 1.49, sigma_keV: 0.05, rate_counts_s_arcmin2: 2.0e-4}   # Al K
    - {energy_keV: 1.74, sigma_keV: 0.05, rate_counts_s_arcmin2: 1.0e-4}   # Si K

sky_background:                # photons through the mirror (vignetted)
  cxb:
    enabled: true
    norm_photons_cm2_s_sr_keV: 11.6    # at 1 keV (De Luca & Molendi 2004)
    photon_index: 1.41
    absorbed: true             # by the run's Galactic N_H
  foreground:                  # thermal continuum components (icmscope's continuum model shape)
    - {name: local_hot_bubble, kT_keV: 0.1, absorbed: false, flux_erg_cm2_s_deg2: 1.5e-12, flux_band_keV: [0.1, 2.0]}
    - {name: galactic_halo, kT_keV: 0.2, absorbed: true, flux_erg_cm2_s_deg2: 1.5e-12, flux_band_keV: [0.1, 2.0]}

dither:
  pattern: lissajous           # none | lissajous | random
  amplitude_arcsec: 8
  period_u_s: 1000
  period_v_s: 707
  samples: 512                 # offsets sampled over the exposure
)";
}

}  // namespace icmscope::config
