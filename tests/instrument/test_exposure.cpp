// Exposure maps: totals against closed forms (exposure x area x field), with
// vignetting, gaps and dither.
#include <catch2/catch.hpp>

#include <cmath>

#include "icmscope/core/errors.hpp"
#include "icmscope/instrument/exposure.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::instrument;

namespace {
constexpr double kPi = 3.14159265358979323846;
core::ImageD grid(int n, double pix) {
  core::ImageD g(n, n, 0.0);
  core::SkyAnchor a;
  a.ra_deg = 40.0;
  a.dec_deg = -5.0;
  a.crpix1 = a.crpix2 = 0.5 * (n + 1);
  a.pixel_arcsec = pix;
  g.set_anchor(a);
  return g;
}
// Sum of map * pixel area (arcsec^2).
double integral(const core::ImageD& m) { return m.sum() * m.pixel_arcsec() * m.pixel_arcsec(); }
const EffectiveArea kFlat = EffectiveArea::from_bins({0.1, 12.0}, {400.0});
}  // namespace

TEST_CASE("exposure map total = live time x area x field (no vignetting)", "[instrument][exposure]") {
  const core::ImageD g = grid(256, 4.0);
  DetectorSettings ds;
  ds.fov_arcmin = 12.0;  // 720 arcsec = 180 pixels, edges on pixel edges
  const Detector det(ds);
  ExposureSettings es;
  es.exposure_s = 2.0e4;
  es.dead_fraction = 0.05;
  const ExposureMaps m = make_exposure_maps(g, det, pointing_at_anchor(g.anchor()), kFlat, Vignetting::none(), es);
  const double live = 2.0e4 * 0.95, field = 720.0 * 720.0;
  CHECK(m.live_time_s == Approx(live));
  CHECK(m.band_area_cm2 == Approx(400.0));
  CHECK(integral(m.exposure_s) == Approx(live * field).epsilon(1e-12));
  CHECK(integral(m.exposure_cm2_s) == Approx(live * 400.0 * field).epsilon(1e-12));
  CHECK(m.exposure_s(128, 128) == Approx(live));
  CHECK(m.exposure_s(5, 5) == 0.0);
  CHECK(m.exposure_cm2_s.unit() == "cm**2 s");

  // Dither conserves the total (footprint inside the grid) and smooths the edge.
  es.dither.pattern = DitherPattern::Lissajous;
  es.dither.amplitude_arcsec = 16.0;
  const ExposureMaps md = make_exposure_maps(g, det, pointing_at_anchor(g.anchor(), 25.0), kFlat, Vignetting::none(), es);
  CHECK(integral(md.exposure_cm2_s) == Approx(live * 400.0 * field).epsilon(3e-3));  // roll 25: sub-pixel sampling
  const ExposureMaps md0 = make_exposure_maps(g, det, pointing_at_anchor(g.anchor()), kFlat, Vignetting::none(), es);
  CHECK(integral(md0.exposure_cm2_s) == Approx(live * 400.0 * field).epsilon(1e-9));
  double edge_min = 1e300;
  for (int i = 0; i < 256; ++i) edge_min = std::min(edge_min, md0.exposure_s(i, 128) > 0 ? md0.exposure_s(i, 128) : 1e300);
  CHECK(edge_min < 0.9 * live);  // partially exposed pixels at the dithered edge
}

TEST_CASE("vignetted exposure integrates to the closed form over a circular field", "[instrument][exposure]") {
  // V = 1 / (1 + (theta/theta_v)^2), p = 1, no energy dependence:
  // Int_0^R 2 pi theta V dtheta = pi theta_v^2 ln(1 + R^2 / theta_v^2).
  const core::ImageD g = grid(300, 4.0);
  DetectorSettings ds;
  ds.fov_shape = FovShape::Circle;
  ds.fov_arcmin = 18.0;
  const Detector det(ds);
  ExposureSettings es;
  es.exposure_s = 1.0e4;
  const Vignetting v = Vignetting::analytic({8.0, 1.5, 0.0, 1.0});
  const ExposureMaps m = make_exposure_maps(g, det, pointing_at_anchor(g.anchor()), kFlat, v, es);
  const double tv = 8.0 * 60, R = 9.0 * 60;
  const double expect = 1.0e4 * 400.0 * kPi * tv * tv * std::log(1 + R * R / (tv * tv));
  CHECK(integral(m.exposure_cm2_s) == Approx(expect).epsilon(2e-3));
  // The on-axis pixel has V ~ 1, and the off-axis angle map is consistent.
  const core::ImageD th = off_axis_map(g, pointing_at_anchor(g.anchor()));
  CHECK(th(149, 149) == Approx(std::sqrt(0.5 * 0.5 * 2) * 4.0 / 60).margin(1e-12));
  CHECK(m.exposure_cm2_s(149, 149) == Approx(1.0e4 * 400.0 / (1 + std::pow(th(149, 149) / 8.0, 2))).epsilon(1e-3));
}

TEST_CASE("band area and vignetting weighted by the spectrum", "[instrument][exposure]") {
  const EffectiveArea a = EffectiveArea::from_points({0.5, 2.0}, {100.0, 400.0});
  const core::ImageD g = grid(64, 8.0);
  DetectorSettings ds;
  ds.fov_arcmin = 8.0;
  ExposureSettings es;
  es.e_min_keV = 0.5;
  es.e_max_keV = 2.0;
  const ExposureMaps m =
      make_exposure_maps(g, Detector(ds), pointing_at_anchor(g.anchor()), a, Vignetting::none(), es,
                         [](double E) { return 1.0 / E; });
  // A = 200 E - 0 ... linear: A(E) = 100 + 200 (E - 0.5); weight 1/E:
  // Int (200 E) / E dE / Int 1/E dE over [0.5, 2] = 200 * 1.5 / ln 4.
  CHECK(m.band_area_cm2 == Approx(200.0 * 1.5 / std::log(4.0)).epsilon(1e-4));
  es.exposure_s = -1;
  CHECK_THROWS_WITH(make_exposure_maps(g, Detector(ds), pointing_at_anchor(g.anchor()), a, Vignetting::none(), es),
                    Catch::Contains("exposure_s"));
}
