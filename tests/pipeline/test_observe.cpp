// `observe`: expected images, Poisson counts and event lists.
//  - map mode and event mode agree: the mean of K event-mode realisations
//    matches the expected image (Pearson chi-square over pixel groups, common
//    practice; quantiles by Wilson & Hilferty 1931, PNAS 17, 684), and every
//    event list bins back to its counts image exactly;
//  - the background in a source-free region equals the configured particle
//    rate x solid angle x live time plus the CXB power law (De Luca & Molendi
//    2004, A&A 419, 837 normalisation; closed-form band integral) x area x
//    live time, within Poisson errors;
//  - every demo model through every preset runs from the command line, and the
//    event file read back bins to the counts image written;
//  - a maps file written by `project` gives the same cluster counts as the cells.
#include <catch2/catch.hpp>

#include <cmath>
#include <filesystem>
#include <fstream>
#include <regex>

#ifdef _OPENMP
#include <omp.h>
#endif

#include "../instrument/instrument_stats.hpp"
#include "icmscope/config/instrument_settings.hpp"
#include "icmscope/config/observe_settings.hpp"
#include "icmscope/config/settings_reader.hpp"
#include "icmscope/core/constants.hpp"
#include "icmscope/emission/abundances.hpp"
#include "icmscope/emission/spectral_model.hpp"
#include "icmscope/io/event_file.hpp"
#include "icmscope/io/fits_image.hpp"
#include "icmscope/pipeline/instrument_model.hpp"
#include "icmscope/pipeline/observe_run.hpp"
#include "test_support.hpp"

using namespace icmscope;
namespace fs = std::filesystem;
namespace K = core::constants;
using icmscope::testing::binary_dir;
using icmscope::testing::run_capture;
using icmscope::testing::scratch_dir;
using icmscope::testing::source_dir;

namespace {

config::InstrumentSettings instrument_from_text(const std::string& text, const fs::path& dir) {
  const auto p = dir / "instrument.yaml";
  { std::ofstream(p) << text; }
  return config::load_instrument(p.string());
}

// A beta-like cluster rate map [counts/s per pixel] with a temperature gradient.
pipeline::PhysicalMaps synthetic_maps(int n, double pixel_arcsec, double total_rate, double rc_pix) {
  pipeline::PhysicalMaps m;
  core::SkyAnchor a;
  a.ra_deg = 150.1;
  a.dec_deg = 2.2;
  a.crpix1 = a.crpix2 = 0.5 * (n + 1);
  a.pixel_arcsec = pixel_arcsec;
  m.rate = core::ImageD(n, n, 0.0);
  m.t_ew = core::ImageD(n, n, 0.0);
  m.rate.set_anchor(a);
  m.t_ew.set_anchor(a);
  m.rate.set_unit("count/s");
  m.t_ew.set_unit("keV");
  double s = 0.0;
  for (int j = 0; j < n; ++j)
    for (int i = 0; i < n; ++i) {
      const double r2 = (std::pow(i - 0.5 * (n - 1), 2) + std::pow(j - 0.5 * (n - 1), 2)) / (rc_pix * rc_pix);
      m.rate(i, j) = std::pow(1.0 + r2, -2.0);
      m.t_ew(i, j) = 3.0 + 4.0 * std::sqrt(r2) / (1.0 + std::sqrt(r2));
      s += m.rate(i, j);
    }
  for (double& v : m.rate.pixels()) v *= total_rate / s;
  m.kpc_per_arcsec = 1.8;
  return m;
}

const char* kFullInstrument = R"(instrument: {name: Test-Full}
effective_area: {kind: analytic, peak_area_cm2: 600, peak_energy_keV: 1.5, bins: 200}
response: {kind: gaussian, channels: 1024, first_channel: 1}
detector:
  fov_shape: square
  fov_arcmin: 12
  pixel_arcsec: 1.0
  chips: [2, 2]
  chip_gap_arcsec: 12
  aim_offset_arcsec: [40, 40]
  dead_fraction: 0.03
psf: {kind: king, core_radius_arcsec: 3, beta: 1.6, off_axis_scale_arcmin: 6, zones_arcmin: [0, 2, 4, 6, 8], zone_blend_arcmin: 0.5}
vignetting: {kind: analytic, theta_v0_arcmin: 10}
particle_background:
  level_counts_s_keV_arcmin2: 2.0e-3
  lines: [{energy_keV: 1.49, sigma_keV: 0.05, rate_counts_s_arcmin2: 3.0e-4}]
sky_background:
  cxb: {enabled: true}
  foreground: [{name: halo, kT_keV: 0.2, absorbed: true, flux_erg_cm2_s_deg2: 1.0e-12, flux_band_keV: [0.1, 2.0]}]
dither: {pattern: lissajous, amplitude_arcsec: 10, samples: 256}
)";

emission::ContinuumModel& continuum() {
  static emission::ContinuumModel m(emission::anders_grevesse_1989());
  return m;
}

}  // namespace

TEST_CASE("observe: mean of event-mode realisations matches the expected image", "[observe]") {
  const auto dir = scratch_dir("observe_events");
  const auto inst = pipeline::build_instrument(instrument_from_text(kFullInstrument, dir), 3e20);
  const auto maps = synthetic_maps(96, 8.0, 1.5, 6.0);
  config::ObservationSettings obs;
  obs.exposure_ks = 10.0;
  obs.seed = 77;
  obs.point_sources.enabled = true;
  obs.point_sources.flux_min_erg_cm2_s = 1e-14;
  obs.temperature_bins = 6;
  pipeline::Log log(true);
  const auto x = pipeline::expect_observation(maps, obs, inst, continuum(), 0.1, 3e20, 0.5, 2.0, log);
  REQUIRE(x.expected.size() == pipeline::kNComp);
  for (int c = 0; c < pipeline::kNComp; ++c) CHECK(x.expected[c].sum() > 0);
  REQUIRE(!x.sources.empty());
  REQUIRE(x.cluster_spectra.size() == 6);

  const int n = x.model.nx(), K_real = 16, g = 4;
  std::vector<double> sum(x.model.size(), 0.0);
  for (int k = 0; k < K_real; ++k) {
    const auto r = pipeline::realise_observation(x, inst, 1000 + k, true, 1e4);
    // Event mode reproduces map mode exactly: one event per count.
    const auto binned = instrument::bin_events(r.events);
    REQUIRE(binned.pixels() == r.total.pixels());
    long long tot = 0;
    for (const auto& c : r.counts)
      for (std::int32_t v : c.pixels()) tot += v;
    CHECK(static_cast<long long>(r.events.size()) == tot);
    for (std::size_t i = 0; i < r.events.size(); ++i) {
      const bool ok = r.events.energy_keV[i] >= 0.5f && r.events.energy_keV[i] <= 2.0f &&
                      r.events.pi[i] >= inst.first_channel() && r.events.pi[i] <= inst.last_channel() &&
                      r.events.time_s[i] >= 0.0 && r.events.time_s[i] <= 1e4;
      if (!ok) FAIL("event " << i << " out of range: E " << r.events.energy_keV[i] << " PI " << r.events.pi[i]);
    }
    for (std::size_t i = 0; i < sum.size(); ++i) sum[i] += binned.data()[i];
  }
  // Pearson chi-square over g x g pixel groups of the summed realisations.
  double chi2 = 0.0;
  int dof = 0;
  for (int gy = 0; gy < n / g; ++gy)
    for (int gx = 0; gx < n / g; ++gx) {
      double o = 0.0, e = 0.0;
      for (int j = 0; j < g; ++j)
        for (int i = 0; i < g; ++i) {
          o += sum[x.model.index(gx * g + i, gy * g + j)];
          e += K_real * x.model(gx * g + i, gy * g + j);
        }
      if (e < 10.0) continue;
      chi2 += (o - e) * (o - e) / e;
      ++dof;
    }
  INFO("chi2 " << chi2 << " for " << dof << " groups");
  REQUIRE(dof > 300);
  CHECK(chi2 < testing::chi2_quantile(dof, 3.719));
  CHECK(chi2 > testing::chi2_quantile(dof, -3.719));
}

TEST_CASE("observe: realisations are identical for any thread count", "[observe]") {
  const auto dir = scratch_dir("observe_threads");
  const auto inst = pipeline::build_instrument(instrument_from_text(kFullInstrument, dir), 3e20);
  const auto maps = synthetic_maps(64, 8.0, 2.0, 5.0);
  config::ObservationSettings obs;
  obs.exposure_ks = 5.0;
  obs.point_sources.enabled = true;
  pipeline::Log log(true);
#ifdef _OPENMP
  const int t0 = omp_get_max_threads();
  omp_set_num_threads(1);
#endif
  const auto x1 = pipeline::expect_observation(maps, obs, inst, continuum(), 0.1, 3e20, 0.5, 2.0, log);
  const auto r1 = pipeline::realise_observation(x1, inst, 5, true, 5e3);
#ifdef _OPENMP
  omp_set_num_threads(std::max(2, t0));
#endif
  const auto x2 = pipeline::expect_observation(maps, obs, inst, continuum(), 0.1, 3e20, 0.5, 2.0, log);
  const auto r2 = pipeline::realise_observation(x2, inst, 5, true, 5e3);
#ifdef _OPENMP
  omp_set_num_threads(t0);
#endif
  CHECK(x1.model.pixels() == x2.model.pixels());
  CHECK(r1.total.pixels() == r2.total.pixels());
  CHECK(r1.events.time_s == r2.events.time_s);
  CHECK(r1.events.x == r2.events.x);
  CHECK(r1.events.energy_keV == r2.events.energy_keV);
  CHECK(r1.events.pi == r2.events.pi);
  // A different seed gives a different realisation of the same expectation.
  const auto r3 = pipeline::realise_observation(x2, inst, 6, false, 5e3);
  CHECK(r3.total.pixels() != r1.total.pixels());
}

TEST_CASE("observe: background in a source-free region equals rate x area x time", "[observe]") {
  const auto dir = scratch_dir("observe_background");
  // Flat 500 cm^2, no vignetting, no gaps, no dither, a field larger than the map,
  // no Galactic absorption (nH = 0): the expected background has closed forms.
  const double A = 500.0, L = 2.0e-3, gamma = 1.41, norm = 11.6, dead = 0.05;
  const auto inst = pipeline::build_instrument(instrument_from_text(R"(instrument: {name: Test-Flat}
effective_area: {kind: table, energy_keV: [0.1, 20.0], area_cm2: [500, 500]}
detector: {fov_shape: square, fov_arcmin: 60, pixel_arcsec: 2.0, dead_fraction: 0.05}
psf: {kind: gaussian, fwhm_arcsec: 4}
particle_background: {level_counts_s_keV_arcmin2: 2.0e-3, slope: 0}
sky_background: {cxb: {norm_photons_cm2_s_sr_keV: 11.6, photon_index: 1.41, absorbed: true}}
)",
                                                                    dir),
                                               0.0);
  auto maps = synthetic_maps(120, 10.0, 0.0, 3.0);
  for (double& v : maps.rate.pixels()) v = 0.0;
  maps.rate(60, 60) = 0.05;  // a compact source in the middle (PSF 4": stays within a few pixels)
  config::ObservationSettings obs;
  obs.exposure_ks = 100.0;
  obs.seed = 2024;
  pipeline::Log log(true);
  const double e1 = 0.5, e2 = 2.0;
  const auto x = pipeline::expect_observation(maps, obs, inst, continuum(), 0.1, 0.0, e1, e2, log);
  const auto r = pipeline::realise_observation(x, inst, obs.seed, false, 1e5);
  // Source-free region: farther than 20 pixels (200") from the source.
  double expected = 0.0, observed = 0.0, pixels = 0.0;
  for (int j = 0; j < 120; ++j)
    for (int i = 0; i < 120; ++i) {
      if (std::hypot(i - 60.0, j - 60.0) < 20.0) continue;
      expected += x.model(i, j);
      observed += r.total(i, j);
      pixels += 1.0;
    }
  // Closed forms: particle L (e2 - e1) [counts s^-1 arcmin^-2]; CXB
  // Int norm E^-Gamma dE = norm (e2^(1-Gamma) - e1^(1-Gamma)) / (1 - Gamma) [photons cm^-2 s^-1 sr^-1].
  const double live = 1e5 * (1.0 - dead);
  const double omega = pixels * std::pow(10.0 / 60.0, 2);  // arcmin^2
  const double particle = L * (e2 - e1) * omega * live;
  const double cxb = norm * (std::pow(e2, 1 - gamma) - std::pow(e1, 1 - gamma)) / (1 - gamma) * K::arcmin2_sr * A *
                     omega * live;
  INFO("particle " << particle << " cxb " << cxb << " expected " << expected << " observed " << observed);
  CHECK(x.expected[pipeline::kCompCluster].sum() > 0);
  CHECK(expected == Approx(particle + cxb).epsilon(1e-4));
  CHECK(std::fabs(observed - (particle + cxb)) < 4.0 * std::sqrt(particle + cxb));
  // The background image alone, per component.
  double p_img = 0.0, s_img = 0.0;
  for (int j = 0; j < 120; ++j)
    for (int i = 0; i < 120; ++i)
      if (std::hypot(i - 60.0, j - 60.0) >= 20.0) {
        p_img += x.expected[pipeline::kCompParticle](i, j);
        s_img += x.expected[pipeline::kCompSky](i, j);
      }
  CHECK(p_img == Approx(particle).epsilon(1e-9));
  CHECK(s_img == Approx(cxb).epsilon(1e-4));
}

namespace {

std::string exe() { return (binary_dir() / "icmscope").string(); }

std::string model_key(const std::string& text, const std::string& key) {
  std::smatch m;
  const std::regex re("(^|\\n)" + key + ":\\s*([^#\\n]+)");
  if (!std::regex_search(text, m, re)) return "";
  std::string v = m[2];
  while (!v.empty() && v.back() == ' ') v.pop_back();
  return v;
}

}  // namespace

TEST_CASE("observe: every demo model through every preset", "[observe][examples]") {
  std::vector<fs::path> models, presets;
  for (const auto& e : fs::directory_iterator(source_dir() / "demo_clusters" / "models"))
    if (e.path().extension() == ".yaml") models.push_back(e.path());
  for (const auto& e : fs::directory_iterator(source_dir() / "config" / "instruments"))
    if (e.path().extension() == ".yaml") presets.push_back(e.path());
  std::sort(models.begin(), models.end());
  std::sort(presets.begin(), presets.end());
  REQUIRE(models.size() >= 5);
  REQUIRE(presets.size() >= 3);
  const auto dir = scratch_dir("observe_all");
  for (const auto& m : models) {
    std::ifstream in(m);
    const std::string text((std::istreambuf_iterator<char>(in)), std::istreambuf_iterator<char>());
    const std::string z = model_key(text, "redshift"), ra = model_key(text, "ra_deg"), dec = model_key(text, "dec_deg");
    REQUIRE(!z.empty());
    for (const auto& p : presets) {
      const auto inst = config::load_instrument(p.string());
      // Grid a little wider than the field, 64 pixels across.
      const double pix = inst.detector.layout.fov_arcmin * 60.0 * 1.15 / 64;
      const std::string name = m.stem().string() + "_" + p.stem().string();
      const auto run = dir / (name + ".yaml");
      std::ofstream(run) << "target: {name: " << name << ", redshift: " << z << ", ra_deg: " << (ra.empty() ? "0" : ra)
                         << ", dec_deg: " << (dec.empty() ? "0" : dec) << "}\n"
                         << "cells: {model: '" << m.string() << "', model_particles: 8000}\n"
                         << "emission: {table_kT_points: 48, table_Z_points: 3}\n"
                         << "map: {pixels: 64, pixel_arcsec: " << pix << "}\n"
                         << "observation: {instrument: '" << p.string()
                         << "', exposure_ks: 4, seed: 11, point_sources: {enabled: true, flux_min_erg_cm2_s: 1.0e-14}}\n"
                         << "output: {directory: '" << (dir / "out").string() << "', quicklook: false}\n";
      int st = 0;
      const std::string out = run_capture(exe() + " observe -q '" + run.string() + "' 2>&1", &st);
      INFO(name << "\n" << out);
      REQUIRE(st == 0);
      const std::string base = (dir / "out" / name).string();
      const auto counts = io::read_fits_image(base + "_counts.fits", "COUNTS");
      const auto ev = io::read_event_file(base + "_events.fits");
      const auto binned = instrument::bin_events(ev.events);
      REQUIRE(binned.size() == counts.image.size());
      bool same = true;
      for (std::size_t i = 0; i < binned.size(); ++i) same = same && binned.data()[i] == counts.image.data()[i];
      CHECK(same);
      CHECK(counts.image.sum() > 0);
      // Every product on the same WCS.
      for (const auto& [file, hdu] : std::vector<std::pair<std::string, std::string>>{
               {"_exposure.fits", "EXPOSURE"}, {"_background.fits", "BACKGROUND"}, {"_model.fits", "MODEL"}}) {
        const auto im = io::read_fits_image(base + file, hdu);
        CHECK(im.image.anchor().crpix1 == counts.image.anchor().crpix1);
        CHECK(im.image.anchor().ra_deg == Approx(counts.image.anchor().ra_deg).epsilon(1e-12));
        CHECK(im.image.anchor().dec_deg == Approx(counts.image.anchor().dec_deg).epsilon(1e-12));
        CHECK(im.image.anchor().pixel_arcsec == Approx(counts.image.anchor().pixel_arcsec).epsilon(1e-12));
      }
      CHECK(ev.events.anchor.crpix1 == counts.image.anchor().crpix1);
      CHECK(ev.events.anchor.ra_deg == Approx(counts.image.anchor().ra_deg).epsilon(1e-12));
      CHECK(ev.events.anchor.pixel_arcsec == Approx(counts.image.anchor().pixel_arcsec).epsilon(1e-12));
    }
  }
}

TEST_CASE("observe: a maps file from project gives the cells' cluster counts", "[observe]") {
  const auto dir = scratch_dir("observe_maps_file");
  const auto model = (source_dir() / "demo_clusters" / "models" / "tolva2_non_cool_core.yaml").string();
  const auto inst = (source_dir() / "config" / "instruments" / "vasta_la.yaml").string();
  const std::string common = "emission: {band_keV: [0.5, 2.0], nH_cm2: 4.0e20}\n";
  std::ofstream(dir / "project.yaml") << "target: {name: T2, redshift: 0.15, ra_deg: 30, dec_deg: -10}\n"
                                      << "cells: {model: '" << model << "', model_particles: 30000}\n" << common
                                      << "map: {pixels: 96, pixel_arcsec: 12}\n"
                                      << "output: {directory: out, prefix: T2, quicklook: false}\n";
  const std::string obs = "observation: {instrument: '" + inst + "', exposure_ks: 10, seed: 3, events: false}\n";
  std::ofstream(dir / "cells.yaml") << "target: {name: T2, redshift: 0.15, ra_deg: 30, dec_deg: -10}\n"
                                    << "cells: {model: '" << model << "', model_particles: 30000}\n" << common
                                    << "map: {pixels: 96, pixel_arcsec: 12}\n" << obs
                                    << "output: {directory: out, prefix: C, quicklook: false}\n";
  std::ofstream(dir / "maps.yaml") << "maps: {file: out/T2_maps.fits}\n" << obs
                                   << "output: {directory: out, prefix: M, quicklook: false}\n";
  int st = 0;
  for (const char* verb_file : {"project -q project.yaml", "observe -q cells.yaml", "observe -q maps.yaml"}) {
    const std::string t = run_capture("cd '" + dir.string() + "' && " + exe() + " " + verb_file + " 2>&1", &st);
    INFO(verb_file << "\n" << t);
    REQUIRE(st == 0);
  }
  const auto c = io::read_fits_image((dir / "out" / "C_model.fits").string(), "CLUSTER");
  const auto m = io::read_fits_image((dir / "out" / "M_model.fits").string(), "CLUSTER");
  REQUIRE(c.image.same_grid(m.image));
  // The maps-file path treats each pixel as isothermal at its T_EW: for this
  // ~5 keV cluster the band-averaged area changes by well under 1% across the
  // temperatures present (documented approximation).
  CHECK(m.image.sum() == Approx(c.image.sum()).epsilon(0.01));
  double worst = 0.0;
  for (std::size_t i = 0; i < c.image.size(); ++i)
    if (c.image.data()[i] > 1.0) worst = std::max(worst, std::fabs(m.image.data()[i] / c.image.data()[i] - 1.0));
  CHECK(worst < 0.02);
  // Same WCS.
  CHECK(c.image.anchor().ra_deg == Approx(m.image.anchor().ra_deg).epsilon(1e-12));
  CHECK(c.image.anchor().crpix1 == m.image.anchor().crpix1);
}

TEST_CASE("observe: PSF image and bad-pixel mask from FITS files", "[observe]") {
  const auto dir = scratch_dir("observe_psf_image");
  // A sampled Gaussian PSF (FWHM 3", 0.5" pixels): its half-energy radius is
  // FWHM / 2 (physics.md section 8: EEF = 1 - exp(-r^2 / 2 sigma^2)).
  core::ImageD psf(65, 65, 0.0);
  core::SkyAnchor pa;
  pa.crpix1 = pa.crpix2 = 33.0;
  pa.pixel_arcsec = 0.5;
  psf.set_anchor(pa);
  const double sig = 3.0 / 2.3548200450309493 / 0.5;
  for (int j = 0; j < 65; ++j)
    for (int i = 0; i < 65; ++i) psf(i, j) = std::exp(-0.5 * ((i - 32.0) * (i - 32.0) + (j - 32.0) * (j - 32.0)) / (sig * sig));
  io::NamedImage n;
  n.extname = "PSF";
  n.image = psf;
  io::write_fits_images((dir / "psf.fits").string(), {n});
  // Bad pixels: a 60" x 60" block 100-160" along +u, 0-60" along +v of the field centre (1" detector pixels).
  core::ImageD bad(600, 600, 0.0);
  core::SkyAnchor ba;
  ba.crpix1 = ba.crpix2 = 300.5;
  ba.pixel_arcsec = 1.0;
  bad.set_anchor(ba);
  for (int j = 300; j < 360; ++j)
    for (int i = 400; i < 460; ++i) bad(i, j) = 1.0;
  io::NamedImage b;
  b.extname = "BADPIX";
  b.image = bad;
  io::write_fits_images((dir / "bad.fits").string(), {b});
  const auto inst = pipeline::build_instrument(instrument_from_text(R"(instrument: {name: Test-Files}
effective_area: {kind: analytic, peak_area_cm2: 400, peak_energy_keV: 1.5}
detector: {fov_shape: square, fov_arcmin: 10, pixel_arcsec: 1.0, bad_pixels: bad.fits}
psf: {kind: image, file: psf.fits, extension: PSF}
particle_background: {level_counts_s_keV_arcmin2: 1.0e-3}
)",
                                                                    dir),
                                               0.0);
  CHECK(inst.psf.kind() == instrument::PsfKind::Image);
  CHECK(inst.psf.half_energy_radius_arcsec() == Approx(1.5).epsilon(0.03));
  const auto maps = synthetic_maps(80, 10.0, 1.0, 4.0);  // 800" across, 10" pixels, axis at the centre
  config::ObservationSettings obs;
  obs.exposure_ks = 10;
  pipeline::Log log(true);
  const auto x = pipeline::expect_observation(maps, obs, inst, continuum(), 0.1, 0.0, 0.5, 2.0, log);
  // Sky pixel centres (1-based) at axis + (u, v) / 10": the block covers u 100..160, v 0..60.
  const double ax = x.axis_x, ay = x.axis_y;
  auto expo = [&](double u, double v) {
    return x.exposure_s(static_cast<int>(std::lround(ax + u / 10.0)) - 1, static_cast<int>(std::lround(ay + v / 10.0)) - 1);
  };
  CHECK(expo(130, 30) == 0.0);
  CHECK(expo(-130, 30) == Approx(x.live_time_s).epsilon(1e-9));
  CHECK(expo(130, -30) == Approx(x.live_time_s).epsilon(1e-9));
  CHECK(x.expected[pipeline::kCompParticle].sum() > 0);
  // The cluster image keeps its flux where the field is sensitive: total within
  // the map of the blurred rate x live time, less the bad block's share.
  CHECK(x.expected[pipeline::kCompCluster].sum() < maps.rate.sum() * x.live_time_s);
  CHECK(x.expected[pipeline::kCompCluster].sum() > 0.9 * maps.rate.sum() * x.live_time_s);
}
