// Backgrounds: CXB band intensities against the published values, particle
// band rates, expected and realised background counts.
#include <catch2/catch.hpp>

#include <cmath>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/emission/absorption.hpp"
#include "icmscope/instrument/background.hpp"
#include "icmscope/instrument/exposure.hpp"
#include "icmscope/instrument/realise.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::instrument;

TEST_CASE("CXB power law reproduces the published band intensities", "[instrument][background]") {
  // Hickox & Markevitch 2006 (ApJ 645, 95): 10.9 photons cm^-2 s^-1 sr^-1 keV^-1
  // at 1 keV, Gamma = 1.4, total 1-2 keV intensity 4.6e-12 erg cm^-2 s^-1 deg^-2.
  CHECK(powerlaw_band_intensity_erg_deg2(10.9, 1.4, 1.0, 2.0) == Approx(4.6e-12).epsilon(0.01));
  const SkyBackground hm({10.9, 1.4, false});
  const double per_deg2 = hm.band_energy_flux(1.0, 2.0) * 3600.0;  // arcmin^-2 -> deg^-2
  CHECK(per_deg2 == Approx(4.6e-12).epsilon(0.01));
  // De Luca & Molendi 2004 (A&A 419, 837): 11.6 at 1 keV, Gamma 1.41; their
  // 2-10 keV intensity 2.24e-11 erg cm^-2 s^-1 deg^-2 (from memory, unverified).
  const SkyBackground dl({11.6, 1.41, false});
  CHECK(dl.band_energy_flux(2.0, 10.0) * 3600.0 == Approx(2.24e-11).epsilon(0.05));
  CHECK(powerlaw_band_intensity_erg_deg2(11.6, 1.41, 2.0, 10.0) ==
        Approx(dl.band_energy_flux(2.0, 10.0) * 3600.0).epsilon(1e-6));
  // Photon flux in closed form: norm Int E^-Gamma dE times arcmin^2 in sr.
  const double closed = 11.6 * (std::pow(2.0, -0.41) - std::pow(10.0, -0.41)) / 0.41 * core::constants::arcmin2_sr;
  CHECK(dl.band_photon_flux(2.0, 10.0) == Approx(closed).epsilon(1e-7));
}

TEST_CASE("absorption and foreground components enter the sky spectrum", "[instrument][background]") {
  // A transmission callback: exp(-N_H sigma(E)) with the Morrison & McCammon
  // 1983 (ApJ 270, 119) 0.867-1.303 keV coefficients at N_H = 3e20 cm^-2.
  auto trans = [](double E) {
    const double sigma = (120.6 + 169.3 * E - 47.7 * E * E) * std::pow(E, -3) * 1e-24;
    return std::exp(-3e20 * sigma);
  };
  const SkyBackground absd({11.6, 1.41, true}, trans);
  const SkyBackground free({11.6, 1.41, true});
  // physics.md section 4: transmission 0.93 at 1 keV for N_H = 3e20 [C].
  CHECK(absd.photon_spectrum(1.0) / free.photon_spectrum(1.0) == Approx(0.93).margin(0.01));
  // A foreground through a two-argument model callback: f(E, kT) = exp(-E/kT)/kT.
  auto model = [](double E, double kT) { return std::exp(-E / kT) / kT; };
  const ForegroundComponent lhb = thermal_foreground("lhb", 0.1, 2e-3, false, model);
  const SkyBackground fg({0.0, 1.41, true}, trans, {lhb});
  // Int_{0.2}^{1} norm exp(-E/kT)/kT dE = norm (exp(-2) - exp(-10)).
  CHECK(fg.band_photon_flux(0.2, 1.0, 4096) == Approx(2e-3 * (std::exp(-2.0) - std::exp(-10.0))).epsilon(1e-6));
  CHECK_THROWS_AS(thermal_foreground("x", -1.0, 1.0, false, model), core::DomainError);
}

TEST_CASE("CXB absorbed through the emission module's Morrison & McCammon transmission", "[instrument][background]") {
  const double nh = 3e20;
  const SkyBackground absd({11.6, 1.41, true}, [nh](double E) { return emission::mm83_transmission(E, nh); });
  const SkyBackground free({11.6, 1.41, true});
  // physics.md section 4 [C]: transmission at N_H = 3e20: 0.39, 0.80, 0.93, 0.99, 1.00
  // at 0.3, 0.5, 1, 2, 5 keV (Morrison & McCammon 1983, ApJ 270, 119).
  const double E[5] = {0.3, 0.5, 1.0, 2.0, 5.0}, T[5] = {0.39, 0.80, 0.93, 0.99, 1.00};
  for (int i = 0; i < 5; ++i) CHECK(absd.photon_spectrum(E[i]) / free.photon_spectrum(E[i]) == Approx(T[i]).margin(0.01));
  // The hard band is nearly unabsorbed, the soft band is not.
  CHECK(absd.band_photon_flux(2.0, 10.0) / free.band_photon_flux(2.0, 10.0) > 0.98);
  CHECK(absd.band_photon_flux(0.3, 0.5) / free.band_photon_flux(0.3, 0.5) < 0.8);
}

TEST_CASE("particle background band rate matches the integral of its spectrum", "[instrument][background]") {
  ParticleBackgroundSettings s;
  s.level_counts_s_keV_arcmin2 = 1e-3;
  s.slope = 0.3;
  s.lines = default_fluorescence_lines(2e-4, 0.04);
  const ParticleBackground pb(s);
  // Simpson integral of the spectrum.
  const double lo = 0.5, hi = 10.0;
  const int n = 200000;
  const double h = (hi - lo) / n;
  double sum = 0;
  for (int k = 0; k <= n; ++k) sum += (k == 0 || k == n ? 1 : (k % 2 ? 4 : 2)) * pb.spectrum(lo + k * h);
  CHECK(pb.band_rate(lo, hi) == Approx(sum * h / 3).epsilon(1e-8));
  // All five lines lie inside [0.5, 10]: each contributes its full rate.
  const double cont = 1e-3 * (std::pow(10.0, 0.7) - std::pow(0.5, 0.7)) / 0.7;
  CHECK(pb.band_rate(lo, hi) == Approx(cont + 5 * 2e-4).epsilon(1e-9));
  ParticleBackgroundSettings bad;
  bad.lines = {{1.0, -0.1, 1e-4}};
  CHECK_THROWS_WITH(ParticleBackground(bad), Catch::Contains("lines[0].sigma_keV"));
}

TEST_CASE("background counts in a source-free region = rate x area x time within Poisson errors",
          "[instrument][background]") {
  core::ImageD g(200, 200, 0.0);
  core::SkyAnchor a;
  a.ra_deg = 10;
  a.dec_deg = 20;
  a.crpix1 = a.crpix2 = 100.5;
  a.pixel_arcsec = 3.0;
  g.set_anchor(a);
  DetectorSettings ds;
  ds.fov_arcmin = 8.0;  // 480 arcsec = 160 pixels, inside the grid
  ExposureSettings es;
  es.exposure_s = 5.0e4;
  const EffectiveArea area = EffectiveArea::from_bins({0.1, 12.0}, {300.0});
  const Pointing p = pointing_at_anchor(a);
  const ExposureMaps m = make_exposure_maps(g, Detector(ds), p, area, Vignetting::analytic({}), es);
  const ParticleBackground pb({2e-3, 1.0, 0.0, {}});
  const double rate = pb.band_rate(0.5, 2.0);  // 3e-3 counts s^-1 arcmin^-2
  const core::ImageD bg = background_counts(m.exposure_s, core::ImageD(), rate, 0.0);
  const CountsImage c = poisson_counts(bg, 99);
  long n = 0;
  for (int j = 0; j < 200; ++j)
    for (int i = 0; i < 200; ++i) n += c(i, j);
  // Particle background is not vignetted: expected = rate x FoV area x live time.
  const double expect = rate * 64.0 * 5.0e4;  // 8 x 8 arcmin^2
  INFO("counts " << n << " expected " << expect);
  CHECK(std::fabs(n - expect) < 4 * std::sqrt(expect));
  CHECK(bg.sum() == Approx(expect).epsilon(1e-12));
  // Sky background through the vignetted map gives fewer counts than on-axis x area.
  const SkyBackground sky({11.6, 1.41, false});
  const double flux = sky.band_photon_flux(0.5, 2.0);
  const core::ImageD sb = background_counts(core::ImageD(), m.exposure_cm2_s, 0.0, flux);
  CHECK(sb.sum() < flux * 300.0 * 64.0 * 5.0e4);
  CHECK(sb.sum() > 0.5 * flux * 300.0 * 64.0 * 5.0e4);
  CHECK(sky.count_rate(0.5, 2.0, area) == Approx(flux * 300.0).epsilon(1e-9));
}
