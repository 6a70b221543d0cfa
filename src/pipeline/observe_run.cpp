#include "icmscope/pipeline/observe_run.hpp"

#include <algorithm>
#include <chrono>
#include <ctime>
#include <cmath>
#include <cstdio>
#include <filesystem>
#include <map>
#include <tuple>

#include "icmscope/config/synth_settings.hpp"
#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/core/random.hpp"
#include "icmscope/core/text_format.hpp"
#include "icmscope/emission/absorption.hpp"
#include "icmscope/emission/band_table.hpp"
#include "icmscope/instrument/convolve.hpp"
#include "icmscope/instrument/exposure.hpp"
#include "icmscope/io/event_file.hpp"
#include "icmscope/io/fits_header.hpp"
#include "icmscope/io/fits_image.hpp"
#include "icmscope/io/fits_table.hpp"
#include "icmscope/io/quicklook.hpp"
#include "icmscope/pipeline/analytic_maps.hpp"
#include "icmscope/pipeline/maps_file.hpp"
#include "icmscope/pipeline/project_run.hpp"
#include "icmscope/pipeline/stage_clock.hpp"

namespace icmscope::pipeline {

using core::format_number;

namespace fs = std::filesystem;
namespace K = core::constants;

namespace {

const char* component_name(int c) {
  static const char* names[kNComp] = {"cluster", "point sources", "sky background", "particle background"};
  return names[c];
}

// Photon spectrum per observed energy of a plasma at redshift z behind N_H
// (arbitrary normalisation): eps((1+z) E, kT, Z) exp(-sigma(E) N_H).
struct PlasmaSpectrum {
  const emission::SpectralModel* model;
  double z, nH, kT, Z;
  double operator()(double E) const {
    if (!(E > 0)) return 0.0;
    const double t = nH > 0 ? emission::mm83_transmission(E, nH) : 1.0;
    return model->photon_emissivity((1.0 + z) * E, kT, Z) * t;
  }
};

// Gregorian calendar date of a modified Julian date (Fliegel & Van Flandern 1968 algorithm).
std::string mjd_to_iso(double mjd) {
  const double jd = mjd + 2400000.5;
  const long long J = static_cast<long long>(std::floor(jd + 0.5));
  double frac = jd + 0.5 - std::floor(jd + 0.5);
  long long l = J + 68569;
  const long long n = 4 * l / 146097;
  l = l - (146097 * n + 3) / 4;
  const long long i = 4000 * (l + 1) / 1461001;
  l = l - 1461 * i / 4 + 31;
  const long long j = 80 * l / 2447;
  const long long day = l - 2447 * j / 80;
  l = j / 11;
  const long long month = j + 2 - 12 * l;
  const long long year = 100 * (n - 49) + i + l;
  long long secs = static_cast<long long>(std::llround(frac * 86400.0));
  if (secs >= 86400) secs = 86399;
  char b[128];
  std::snprintf(b, sizeof b, "%04lld-%02lld-%02lldT%02lld:%02lld:%02lld", year, month, day, secs / 3600,
                (secs / 60) % 60, secs % 60);
  return b;
}

core::ImageD like(const core::ImageD& grid, const std::string& unit) {
  core::ImageD im(grid.nx(), grid.ny(), 0.0);
  im.set_anchor(grid.anchor());
  im.set_unit(unit);
  return im;
}

// Point sources through the PSF, times the exposure map of every receiving
// pixel. Like the cluster image, each source gets the PSF of its off-axis zone
// (zone mode: the zone's representative angle, as convolve_zones uses; on-axis
// mode: the on-axis PSF); its sub-pixel position is kept to half a pixel
// (2 x 2 kernel shifts of +-1/4 pixel). Kernels are built once per (zone,
// shift) and reused.
void deposit_point_sources(core::ImageD& out, std::vector<instrument::PointSource>& src, const core::ImageD& exposure,
                           double photons_per_erg, const InstrumentModel& inst, bool zones, double axis_x,
                           double axis_y, double energy_keV, const instrument::KernelSettings& ks) {
  const double pix = out.pixel_arcsec();
  const auto& e = inst.zones.edges_arcmin;
  double tmax = 0.0;
  for (double cx : {0.5, out.nx() + 0.5})
    for (double cy : {0.5, out.ny() + 0.5}) tmax = std::max(tmax, std::hypot(cx - axis_x, cy - axis_y) * pix / 60.0);
  auto zone_of = [&](double theta) {
    std::size_t k = 0;
    while (k + 1 < e.size() && theta >= e[k + 1]) ++k;
    return k;
  };
  auto rep_angle = [&](std::size_t k) {
    const double lo = e[k];
    const double hi = std::min(k + 1 < e.size() ? e[k + 1] : tmax, tmax);
    return 0.5 * (lo + std::max(lo, hi));
  };
  std::map<std::tuple<std::size_t, int, int>, core::ImageD> cache;
  for (auto& s : src) {
    const double theta = std::hypot(s.x - axis_x, s.y - axis_y) * pix / 60.0;
    const std::size_t k = zones ? zone_of(theta) : 0;
    const double cx = s.x - 1.0, cy = s.y - 1.0;  // 0-based centre
    const int icx = static_cast<int>(std::lround(cx)), icy = static_cast<int>(std::lround(cy));
    const int bx = cx >= icx ? 1 : 0, by = cy >= icy ? 1 : 0;
    auto key = std::make_tuple(k, bx, by);
    auto it = cache.find(key);
    if (it == cache.end()) {
      const double angle = zones ? rep_angle(k) : 0.0;
      it = cache.emplace(key, inst.psf.at(angle, energy_keV).kernel(pix, ks, -0.25 + 0.5 * bx, -0.25 + 0.5 * by))
               .first;
    }
    const core::ImageD& ker = it->second;
    const int h = ker.nx() / 2;
    const double photons = s.flux_cgs * photons_per_erg;  // photons cm^-2 s^-1
    double tot = 0.0;
    for (int j = 0; j < ker.ny(); ++j) {
      const int iy = icy + j - h;
      if (iy < 0 || iy >= out.ny()) continue;
      for (int i = 0; i < ker.nx(); ++i) {
        const int ix = icx + i - h;
        if (ix < 0 || ix >= out.nx()) continue;
        const double c = photons * ker(i, j) * exposure(ix, iy);
        out(ix, iy) += c;
        tot += c;
      }
    }
    s.expected_counts = tot;
  }
}

}  // namespace

std::uint64_t component_seed(std::uint64_t seed, int component) {
  std::uint64_t s = seed ^ (0x6a09e667f3bcc909ULL * static_cast<std::uint64_t>(component + 1));
  return core::splitmix64(s);
}

// ---------------------------------------------------------------------------
ExpectedObservation expect_observation(const PhysicalMaps& maps, const config::ObservationSettings& obs,
                                       const InstrumentModel& inst, const emission::SpectralModel& model,
                                       double redshift, double nH_cm2, double e_lo, double e_hi, Log& log) {
  ExpectedObservation x;
  x.band_min_keV = e_lo;
  x.band_max_keV = e_hi;
  x.rate_onaxis = maps.rate;
  x.t_ew = maps.t_ew;
  const core::ImageD& grid = x.rate_onaxis;
  const double pix = grid.pixel_arcsec();
  const double Z = obs.spectrum_metallicity_solar;

  // Pointing: the optical axis at the target plus the offset.
  const auto& an = grid.anchor();
  x.axis_x = an.crpix1 + obs.offset_x_arcmin * 60.0 / pix;
  x.axis_y = an.crpix2 + obs.offset_y_arcmin * 60.0 / pix;
  const auto sky = instrument::pixel_to_sky(an, x.axis_x, x.axis_y);
  x.pointing = {sky.ra_deg, sky.dec_deg, obs.roll_deg};
  const instrument::DetectorFrame frame = instrument::detector_frame(an, x.pointing);
  x.axis_x = frame.axis_x;  // as the exposure code sees it
  x.axis_y = frame.axis_y;

  // Emission-weighted mean temperature of the field.
  double sr = 0.0, srt = 0.0;
  for (std::size_t i = 0; i < grid.size(); ++i) {
    const double r = x.rate_onaxis.data()[i];
    if (r > 0 && x.t_ew.data()[i] > 0) {
      sr += r;
      srt += r * x.t_ew.data()[i];
    }
  }
  x.mean_kT_keV = sr > 0 ? srt / sr : 5.0;
  const PlasmaSpectrum mean_spec{&model, redshift, nH_cm2, x.mean_kT_keV, Z};
  const auto& area = inst.area;
  {
    double num = 0.0, den = 0.0;
    const int n = 512;
    for (int k = 0; k < n; ++k) {
      const double E = e_lo + (e_hi - e_lo) * (k + 0.5) / n;
      const double w = mean_spec(E) * area.at(E);
      num += w * E;
      den += w;
    }
    x.psf_energy_keV = den > 0 ? num / den : 0.5 * (e_lo + e_hi);
  }

  // Exposure maps: cluster-, sky- and power-law-weighted.
  auto t0 = clock_type::now();
  instrument::ExposureSettings es;
  es.exposure_s = obs.exposure_ks * 1e3;
  es.dead_fraction = inst.dead_fraction;
  es.e_min_keV = e_lo;
  es.e_max_keV = e_hi;
  es.dither = inst.dither;
  es.dither.duration_s = es.exposure_s;
  es.dither.seed = obs.seed;
  const instrument::SpectrumFn src_fn = [&](double E) { return mean_spec(E); };
  const instrument::SpectrumFn sky_fn = [&](double E) { return inst.sky.photon_spectrum(E); };
  const double gamma = obs.point_sources.photon_index;
  const instrument::SpectrumFn pl_fn = [&](double E) {
    return std::pow(E, -gamma) * (nH_cm2 > 0 ? emission::mm83_transmission(E, nH_cm2) : 1.0);
  };
  auto em_src = instrument::make_exposure_maps(grid, inst.detector, x.pointing, area, inst.vignetting, es, src_fn);
  x.exposure_s = em_src.exposure_s;
  x.exposure_cm2_s = em_src.exposure_cm2_s;
  x.band_area_cm2 = em_src.band_area_cm2;
  x.live_time_s = em_src.live_time_s;
  const double sky_flux = inst.sky.band_photon_flux(e_lo, e_hi);
  x.sky_photon_flux_cm2_s_arcmin2 = sky_flux;
  if (sky_flux > 0) {
    x.exposure_cm2_s_sky =
        instrument::make_exposure_maps(grid, inst.detector, x.pointing, area, inst.vignetting, es, sky_fn).exposure_cm2_s;
  } else {
    x.exposure_cm2_s_sky = like(grid, "cm**2 s");
  }
  x.seconds_exposure = seconds_since(t0);

  x.expected.assign(kNComp, core::ImageD());
  // Cluster: PSF, then the relative exposure.
  t0 = clock_type::now();
  core::ImageD blurred;
  if (obs.psf_mode == "zones") {
    instrument::ZoneSettings zs = inst.zones;
    zs.energy_keV = x.psf_energy_keV;
    blurred = instrument::convolve_zones(x.rate_onaxis, x.axis_x, x.axis_y, inst.psf, zs);
  } else {
    blurred = instrument::convolve(x.rate_onaxis, inst.psf.at(0.0, x.psf_energy_keV).kernel(pix, inst.kernel));
  }
  x.seconds_psf = seconds_since(t0);
  {
    core::ImageD& s = x.expected[kCompCluster];
    s = like(grid, "count");
    const double inv_a = x.band_area_cm2 > 0 ? 1.0 / x.band_area_cm2 : 0.0;
    for (std::size_t i = 0; i < s.size(); ++i)
      s.data()[i] = std::max(0.0, blurred.data()[i]) * x.exposure_cm2_s.data()[i] * inv_a;
  }

  // Point sources.
  x.expected[kCompPoints] = like(grid, "count");
  if (obs.point_sources.enabled) {
    const auto& ps = obs.point_sources;
    const auto lns = ps.logn_logs == "moretti2003_hard" ? instrument::LogNLogS::moretti2003_hard()
                                                        : instrument::LogNLogS::moretti2003_soft();
    x.sources = instrument::draw_point_sources(grid, lns, ps.flux_min_erg_cm2_s, ps.flux_max_erg_cm2_s, obs.seed);
    if (!x.sources.empty()) {
      const core::ImageD exp_pl =
          instrument::make_exposure_maps(grid, inst.detector, x.pointing, area, inst.vignetting, es, pl_fn).exposure_cm2_s;
      // Unabsorbed photons per erg of the logN-logS band, times the absorbed fraction in the counting band.
      const double ppe = instrument::powerlaw_photons_per_erg(gamma, lns.band_lo_keV, lns.band_hi_keV, e_lo, e_hi);
      double num = 0.0, den = 0.0;
      const int n = 512;
      for (int k = 0; k < n; ++k) {
        const double E = std::exp(std::log(e_lo) + (std::log(e_hi) - std::log(e_lo)) * (k + 0.5) / n);
        const double p = std::pow(E, -gamma) * E;  // d ln E weight
        num += p * (nH_cm2 > 0 ? emission::mm83_transmission(E, nH_cm2) : 1.0);
        den += p;
      }
      instrument::KernelSettings ks = inst.kernel;
      ks.eef_target = std::min(ks.eef_target, 0.99);
      ks.oversample = 4;
      ks.max_half_size = std::min(ks.max_half_size, 128);
      deposit_point_sources(x.expected[kCompPoints], x.sources, exp_pl, ppe * num / den, inst,
                            obs.psf_mode == "zones", x.axis_x, x.axis_y, x.psf_energy_keV, ks);
    }
  }

  // Backgrounds.
  x.particle_rate_counts_s_arcmin2 = inst.particle.band_rate(e_lo, e_hi);
  x.expected[kCompParticle] = like(grid, "count");
  if (x.particle_rate_counts_s_arcmin2 > 0)
    x.expected[kCompParticle] =
        instrument::background_counts(x.exposure_s, core::ImageD(), x.particle_rate_counts_s_arcmin2, 0.0);
  x.expected[kCompSky] = like(grid, "count");
  if (sky_flux > 0) x.expected[kCompSky] = instrument::background_counts(core::ImageD(), x.exposure_cm2_s_sky, 0.0, sky_flux);

  x.model = like(grid, "count");
  for (int c = 0; c < kNComp; ++c)
    for (std::size_t i = 0; i < x.model.size(); ++i) x.model.data()[i] += x.expected[c].data()[i];

  // Event energy models.
  const auto edges = instrument::SpectrumSampler::log_edges(e_lo, e_hi, obs.spectrum_bins);
  auto folded = [&](const std::function<double(double)>& f) {
    return instrument::SpectrumSampler::from_density(edges, [&](double E) { return f(E) * area.at(E); });
  };
  auto has_area = [&] {
    for (std::size_t k = 0; k + 1 < edges.size(); ++k)
      if (area.at(0.5 * (edges[k] + edges[k + 1])) > 0) return true;
    return false;
  }();
  if (!has_area)
    throw core::ConfigError(inst.settings.source_file + ": effective_area: zero everywhere in the band " + format_number(e_lo) +
                            "-" + format_number(e_hi) + " keV");
  if (x.expected[kCompCluster].sum() > 0) {
    double tmin = HUGE_VAL, tmax = 0.0;
    for (std::size_t i = 0; i < grid.size(); ++i)
      if (x.t_ew.data()[i] > 0 && x.rate_onaxis.data()[i] > 0) {
        tmin = std::min(tmin, x.t_ew.data()[i]);
        tmax = std::max(tmax, x.t_ew.data()[i]);
      }
    x.cluster_global = folded(mean_spec);
    x.spectrum_index = core::Image<std::int32_t>(grid.nx(), grid.ny(), -1);
    if (tmax > 0) {
      const int nb = tmax > tmin * 1.0001 ? obs.temperature_bins : 1;
      const double l0 = std::log(tmin), dl = nb > 1 ? (std::log(tmax) - l0) / nb : 1.0;
      for (int b = 0; b < nb; ++b) {
        const double kT = nb > 1 ? std::exp(l0 + (b + 0.5) * dl) : tmin;
        x.cluster_bin_kT.push_back(kT);
        x.cluster_spectra.push_back(folded(PlasmaSpectrum{&model, redshift, nH_cm2, kT, Z}));
      }
      for (std::size_t i = 0; i < grid.size(); ++i) {
        const double t = x.t_ew.data()[i];
        if (!(t > 0)) continue;
        const int b = nb > 1 ? std::clamp(static_cast<int>((std::log(t) - l0) / dl), 0, nb - 1) : 0;
        x.spectrum_index.data()[i] = b;
      }
    }
  }
  if (x.expected[kCompPoints].sum() > 0) x.points_spectrum = folded(pl_fn);
  if (x.expected[kCompSky].sum() > 0) x.sky_spectrum = folded(sky_fn);
  if (x.expected[kCompParticle].sum() > 0)
    x.particle_spectrum =
        instrument::SpectrumSampler::from_density(edges, [&](double E) { return inst.particle.spectrum(E); });

  log.info("observe: expected counts: cluster " + format_number(x.expected[kCompCluster].sum()) + ", point sources " +
           format_number(x.expected[kCompPoints].sum()) + " (" + std::to_string(x.sources.size()) + " sources), sky " +
           format_number(x.expected[kCompSky].sum()) + ", particle " + format_number(x.expected[kCompParticle].sum()) +
           "; on-axis band area " + format_number(x.band_area_cm2) + " cm^2, live time " + format_number(x.live_time_s) + " s");
  return x;
}

// ---------------------------------------------------------------------------
Realisation realise_observation(const ExpectedObservation& x, const InstrumentModel& inst, std::uint64_t seed,
                                bool events, double exposure_s) {
  Realisation r;
  const core::ImageD& grid = x.model;
  r.total = instrument::CountsImage(grid.nx(), grid.ny(), 0);
  r.total.set_anchor(grid.anchor());
  r.total.set_unit("count");
  r.counts.resize(kNComp);
  instrument::EventSettings es;
  es.gti = {{0.0, exposure_s}};
  es.sort_by_time = false;
  instrument::ChannelModel chm;
  chm.rmf = inst.rmf ? &*inst.rmf : nullptr;
  chm.resolution = inst.resolution;
  r.events.nx = grid.nx();
  r.events.ny = grid.ny();
  r.events.anchor = grid.anchor();
  for (int c = 0; c < kNComp; ++c) {
    const std::uint64_t sc = component_seed(seed, c);
    const core::ImageD& e = x.expected[static_cast<std::size_t>(c)];
    if (e.sum() > 0) {
      r.counts[c] = instrument::poisson_counts(e, sc);
    } else {
      r.counts[c] = instrument::CountsImage(grid.nx(), grid.ny(), 0);
      r.counts[c].set_anchor(grid.anchor());
      r.counts[c].set_unit("count");
    }
    for (std::size_t i = 0; i < r.total.size(); ++i) r.total.data()[i] += r.counts[c].data()[i];
    if (!events) continue;
    long long n = 0;
    for (std::int32_t v : r.counts[c].pixels()) n += v;
    if (n == 0) continue;
    instrument::EnergyModel em;
    if (c == kCompCluster) {
      em.global = &x.cluster_global;
      if (!x.cluster_spectra.empty()) {
        em.spectra = &x.cluster_spectra;
        em.spectrum_index = &x.spectrum_index;
      }
    } else {
      em.global = c == kCompPoints ? &x.points_spectrum : c == kCompSky ? &x.sky_spectrum : &x.particle_spectrum;
    }
    es.component = static_cast<std::uint8_t>(c);
    instrument::EventList ev = instrument::events_from_counts(r.counts[c], em, chm, es, sc);
    const std::ptrdiff_t ne = static_cast<std::ptrdiff_t>(ev.size());
#pragma omp parallel for schedule(static)
    for (std::ptrdiff_t i = 0; i < ne; ++i) {
      // The particle background is already in detected energy: nominal channel.
      if (c == kCompParticle || ev.pi[i] < 0) ev.pi[i] = inst.nominal_channel(ev.energy_keV[i]);
    }
    r.events.append(ev);
  }
  if (events) r.events.sort_by_time();
  return r;
}

// ---------------------------------------------------------------------------
namespace {

io::NamedImage named(const char* ext, const core::ImageD& im, const char* what,
                     const std::vector<io::FitsKeyword>& keys) {
  io::NamedImage n;
  n.extname = ext;
  n.image = im;
  n.keywords = keys;
  n.keywords.push_back(io::fits_key("CONTENT", what, "image content"));
  return n;
}

core::ImageD to_double(const instrument::CountsImage& c) {
  core::ImageD d(c.nx(), c.ny(), 0.0);
  d.set_anchor(c.anchor());
  d.set_unit("count");
  for (std::size_t i = 0; i < c.size(); ++i) d.data()[i] = c.data()[i];
  return d;
}

core::ImageF to_float(const instrument::CountsImage& c) {
  core::ImageF d(c.nx(), c.ny(), 0.0f);
  d.set_anchor(c.anchor());
  d.set_unit("count");
  for (std::size_t i = 0; i < c.size(); ++i) d.data()[i] = static_cast<float>(c.data()[i]);
  return d;
}

}  // namespace

ObserveResult run_observe(const config::ObserveRunSettings& settings, Log& log) {
  config::ObserveRunSettings s = settings;
  auto& ms = s.map;
  const auto& obs = s.observation;
  ObserveResult res;
  const OutputDirectory output_directory(ms.output.directory);
  auto t0 = clock_type::now();
  const std::clock_t cpu0 = std::clock();
  double cpu_maps = 0.0;

  const auto model = make_spectral_model(ms.emission);
  std::shared_ptr<const emission::GauntTable> gaunt;
  if (const auto* cm = dynamic_cast<const emission::ContinuumModel*>(model.get())) gaunt = cm->emissivity().gaunt_ptr();

  // The instrument needs N_H (sky background); in maps mode N_H comes from the file.
  double nH = ms.emission.nH_cm2;
  if (s.from_maps_file) nH = io::read_fits_header(s.maps.file, 0).number("NH");
  const InstrumentModel inst = build_instrument(s.instrument, nH, gaunt);

  PhysicalMaps maps;
  MapStats stats;
  if (s.from_maps_file) {
    maps = read_project_maps(s.maps.file, ms, s.source_file, inst, *model, obs.spectrum_metallicity_solar, "observe",
                             log);
    if (ms.output.prefix.empty()) ms.output.prefix = ms.target.name;
  } else {
    const auto cosmo = make_cosmology(ms.cosmology);
    const auto table = instrument_band_table(*model, ms.emission, ms.target.redshift, &inst);
    ms.emission.effective_area = "instrument " + inst.name();  // rate in count/s, AREA keyword
    if (!ms.cells.model_file.empty() && ms.cells.model_projection == "analytic") {
      const auto cm = config::load_cluster_model(ms.cells.model_file);
      AnalyticMapOptions ao;
      ao.subsamples = ms.cells.analytic_subsamples;
      maps = make_analytic_maps(cm, ms, cosmo, table, log, ao, &stats);
    } else {
      maps = cell_source_maps(ms, cosmo, table, log, &stats);
    }
    log.info("observe: " + ms.target.name + ": " + std::to_string(stats.cells_in_field) +
             " cells in the field, on-axis band rate " + format_number(maps.rate.sum()) + " counts/s");
  }
  res.seconds_maps = seconds_since(t0);
  cpu_maps = static_cast<double>(std::clock() - cpu0) / CLOCKS_PER_SEC;
  const double e_lo = ms.emission.band_min_keV, e_hi = ms.emission.band_max_keV;

  t0 = clock_type::now();
  const ExpectedObservation x =
      expect_observation(maps, obs, inst, *model, ms.target.redshift, ms.emission.nH_cm2, e_lo, e_hi, log);
  res.seconds_expected = seconds_since(t0);
  t0 = clock_type::now();
  const double ontime = obs.exposure_ks * 1e3;
  const Realisation r = realise_observation(x, inst, obs.seed, obs.events, ontime);
  res.seconds_realise = seconds_since(t0);
  for (int c = 0; c < kNComp; ++c) {
    res.expected[c] = x.expected[c].sum();
    long long n = 0;
    for (std::int32_t v : r.counts[c].pixels()) n += v;
    res.counts[c] = n;
  }
  res.n_events = r.events.size();
  res.n_sources = x.sources.size();

  // ---- outputs ----
  t0 = clock_type::now();
  using io::fits_key;
  std::vector<io::FitsKeyword> keys = run_keywords(ms, maps);
  if (s.from_maps_file) {
    keys.erase(std::remove_if(keys.begin(), keys.end(),
                              [](const io::FitsKeyword& k) {
                                return k.key == "LOS" || k.key == "DEPTHKPC" || k.key == "KERNEL";
                              }),
               keys.end());
    keys.push_back(fits_key("MAPSFILE", s.maps.file, "input maps (project output)"));
  }
  std::vector<io::FitsKeyword> obs_keys;
  obs_keys.push_back(fits_key("TELESCOP", inst.settings.telescope, "simulated telescope (illustrative)"));
  obs_keys.push_back(fits_key("INSTRUME", inst.name(), "simulated instrument (illustrative)"));
  obs_keys.push_back(fits_key("INSTFILE", inst.settings.source_file, "instrument description"));
  obs_keys.push_back(fits_key("EXPOSURE", x.live_time_s, "[s] live time on axis"));
  obs_keys.push_back(fits_key("ONTIME", ontime, "[s] on-time"));
  obs_keys.push_back(fits_key("RA_PNT", x.pointing.ra_deg, "[deg] optical axis RA"));
  obs_keys.push_back(fits_key("DEC_PNT", x.pointing.dec_deg, "[deg] optical axis Dec"));
  obs_keys.push_back(fits_key("PA_PNT", x.pointing.roll_deg, "[deg] roll: position angle of detector +v"));
  obs_keys.push_back(fits_key("SEED", static_cast<long long>(obs.seed), "random seed of the observation"));
  obs_keys.push_back(fits_key("DATE-OBS", mjd_to_iso(obs.mjd_start), "start of the observation (TT)"));
  obs_keys.push_back(fits_key("MJD-OBS", obs.mjd_start, "[d] MJD of the start (TT)"));
  obs_keys.push_back(fits_key("BANDAREA", x.band_area_cm2, "[cm2] on-axis band area, cluster spectrum"));
  obs_keys.push_back(fits_key("MEANKT", x.mean_kT_keV, "[keV] emission-weighted kT of the field"));
  for (const auto& k : obs_keys) keys.push_back(k);
  std::vector<std::string> history = config_history(s.resolved_yaml);
  {
    const auto ih = config_history(inst.settings.resolved_yaml);
    for (const auto& h : ih) history.push_back("INSTRUMENT " + h.substr(7));
  }
  std::vector<io::FitsKeyword> hdu_keys{fits_key("OBJECT", ms.target.name)};
  for (const auto& k : obs_keys) hdu_keys.push_back(k);
  hdu_keys.push_back(fits_key("E_MIN", e_lo, "[keV] band lower edge (true photon energy)"));
  hdu_keys.push_back(fits_key("E_MAX", e_hi, "[keV] band upper edge"));

  const std::string base = (fs::path(ms.output.directory) / ms.output.prefix).string();
  res.counts_file = base + "_counts.fits";
  {
    std::vector<io::NamedImage> v(1);
    v[0].extname = "COUNTS";
    v[0].image = to_float(r.total);
    v[0].keywords = hdu_keys;
    v[0].keywords.push_back(fits_key("CONTENT", "Poisson counts (all components)", "image content"));
    io::write_fits_images(res.counts_file, v, keys, history);
  }

  res.exposure_file = base + "_exposure.fits";
  io::write_fits_images(res.exposure_file,
                        {named("EXPOSURE", x.exposure_s, "exposure map: live time x sensitive fraction (dithered)",
                               hdu_keys),
                         named("EXPOSURE_AREA", x.exposure_cm2_s,
                               "exposure map x band area x vignetting, cluster-spectrum weighted", hdu_keys),
                         named("EXPOSURE_AREA_SKY", x.exposure_cm2_s_sky, "exposure map, sky-spectrum weighted",
                               hdu_keys)},
                        keys, history);

  res.background_file = base + "_background.fits";
  core::ImageD bkg = like(x.model, "count");
  for (std::size_t i = 0; i < bkg.size(); ++i)
    bkg.data()[i] = x.expected[kCompParticle].data()[i] + x.expected[kCompSky].data()[i];
  {
    auto bk = hdu_keys;
    bk.push_back(fits_key("PARTRATE", x.particle_rate_counts_s_arcmin2, "[count/s/arcmin2] particle rate in band"));
    bk.push_back(fits_key("SKYFLUX", x.sky_photon_flux_cm2_s_arcmin2, "[photon/cm2/s/arcmin2] sky flux in band"));
    io::write_fits_images(res.background_file,
                          {named("BACKGROUND", bkg, "expected background counts (particle + sky)", bk),
                           named("PARTICLE", x.expected[kCompParticle], "expected particle background counts", bk),
                           named("SKY", x.expected[kCompSky], "expected sky background counts (CXB + foreground)", bk)},
                          keys, history);
  }

  res.model_file = base + "_model.fits";
  {
    core::ImageD idx = like(x.model, "");
    for (std::size_t i = 0; i < idx.size(); ++i)
      idx.data()[i] = x.spectrum_index.empty() ? -1.0 : x.spectrum_index.data()[i];
    auto mk = hdu_keys;
    mk.push_back(fits_key("PSFENERG", x.psf_energy_keV, "[keV] energy of the PSF"));
    io::write_fits_images(res.model_file,
                          {named("MODEL", x.model, "expected counts, all components", mk),
                           named("CLUSTER", x.expected[kCompCluster], "expected cluster counts (PSF, exposure)", mk),
                           named("POINTS", x.expected[kCompPoints], "expected point-source counts", mk),
                           named("RATE_ONAXIS", x.rate_onaxis, "cluster count rate before PSF, on-axis area", mk),
                           named("T_EW", x.t_ew, "emission-weighted temperature", mk),
                           named("SPECTRUM_INDEX", idx, "temperature bin of the event spectra (-1 = global)", mk)},
                          keys, history);
  }

  if (obs.events) {
    res.events_file = base + "_events.fits";
    io::EventFileSpec es;
    es.gti = {{0.0, ontime}};
    es.pi_min = inst.first_channel();
    es.pi_max = inst.last_channel();
    es.exposure_s = x.live_time_s;
    es.mjdref = obs.mjd_start;
    es.keywords = keys;
    es.keywords.erase(std::remove_if(es.keywords.begin(), es.keywords.end(),
                                     [](const io::FitsKeyword& k) {
                                       return k.key == "EXPOSURE" || k.key == "ONTIME";
                                     }),
                      es.keywords.end());
    es.history = history;
    io::write_event_file(res.events_file, r.events, es);
  }

  if (obs.point_sources.enabled) {
    res.sources_file = base + "_sources.fits";
    io::FitsTable t;
    t.extname = "SOURCES";
    std::vector<long long> id;
    std::vector<double> ra, dec, px, py, flux, cts;
    for (const auto& p : x.sources) {
      id.push_back(p.id);
      ra.push_back(p.ra_deg);
      dec.push_back(p.dec_deg);
      px.push_back(p.x);
      py.push_back(p.y);
      flux.push_back(p.flux_cgs);
      cts.push_back(p.expected_counts);
    }
    t.columns = {{"ID", "", id},          {"RA", "deg", ra},     {"DEC", "deg", dec},
                 {"X", "pixel", px},      {"Y", "pixel", py},    {"FLUX", "erg/(cm2 s)", flux},
                 {"EXPECTED_COUNTS", "count", cts}};
    const auto lns = obs.point_sources.logn_logs == "moretti2003_hard" ? instrument::LogNLogS::moretti2003_hard()
                                                                       : instrument::LogNLogS::moretti2003_soft();
    t.keywords = {fits_key("LOGNLOGS", obs.point_sources.logn_logs, "Moretti et al. 2003 (ApJ 588, 696)"),
                  fits_key("FLUX_LO", lns.band_lo_keV, "[keV] flux band lower edge"),
                  fits_key("FLUX_HI", lns.band_hi_keV, "[keV] flux band upper edge"),
                  fits_key("SMIN", obs.point_sources.flux_min_erg_cm2_s, "[erg/cm2/s] flux limit"),
                  fits_key("SMAX", obs.point_sources.flux_max_erg_cm2_s, "[erg/cm2/s] brightest allowed"),
                  fits_key("PHINDEX", obs.point_sources.photon_index, "power-law photon index"),
                  fits_key("OBJECT", ms.target.name)};
    io::write_fits_tables(res.sources_file, {t}, keys);
  }

  res.config_file = base + "_config.yaml";
  write_text_file(res.config_file, s.resolved_yaml);
  res.instrument_config_file = base + "_instrument.yaml";
  write_text_file(res.instrument_config_file, inst.settings.resolved_yaml);

  if (ms.output.quicklook) {
    res.quicklook_file = base + "_counts.png";
    io::QuicklookOptions q;
    q.stretch = ms.output.stretch == "log" ? io::Stretch::Log
                : ms.output.stretch == "linear" ? io::Stretch::Linear
                                               : io::Stretch::Asinh;
    q.title = ms.target.name + "  " + inst.name() + "  " + format_number(obs.exposure_ks, "%.4g") + " ks  " +
              format_number(e_lo, "%.3g") + "-" + format_number(e_hi, "%.3g") + " keV";
    q.colorbar_label = "counts per pixel";
    q.kpc_per_arcsec = maps.kpc_per_arcsec;
    double emax = 0.0;
    for (double v : x.exposure_s.pixels()) emax = std::max(emax, v);
    if (emax > 0) {
      q.overlay = x.exposure_s;
      q.overlay_levels = {0.9 * emax};  // the field edge and the (dithered) gaps
    }
    q.asinh_softening = 1.0;  // counts: linear near 1, compressed above
    io::write_quicklook_png(res.quicklook_file, to_double(r.total), q);
  }
  res.seconds_write = seconds_since(t0);

  std::string line = "observe: " + ms.target.name + " with " + inst.name() + ", " + format_number(obs.exposure_ks) + " ks:";
  for (int c = 0; c < kNComp; ++c)
    line += std::string(c ? "," : "") + " " + component_name(c) + " " + std::to_string(res.counts[c]);
  line += " counts";
  line += "; times: maps " + format_number(res.seconds_maps, "%.2f") + " s, expected " + format_number(res.seconds_expected, "%.2f") +
          " s (PSF " + format_number(x.seconds_psf, "%.2f") + " s, exposure " + format_number(x.seconds_exposure, "%.2f") +
          " s), counts/events " + format_number(res.seconds_realise, "%.2f") + " s, writing " + format_number(res.seconds_write, "%.2f") +
          " s (CPU: maps " + format_number(cpu_maps, "%.2f") + " s, instrument stages " +
          format_number(static_cast<double>(std::clock() - cpu0) / CLOCKS_PER_SEC - cpu_maps, "%.2f") + " s)";
  if (obs.events) line += "; " + std::to_string(res.n_events) + " events";
  log.info(line);
  return res;
}

}  // namespace icmscope::pipeline
