// Detector masks on a sky grid: field of view, chip gaps, bad pixels, roll,
// dither kernels; TAN pixel <-> sky against astropy.
#include <catch2/catch.hpp>

#include <cmath>
#include <fstream>
#include <sstream>

#include "icmscope/core/errors.hpp"
#include "icmscope/instrument/detector.hpp"
#include "icmscope/instrument/pointing.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::instrument;

namespace {
core::ImageD grid(int n, double pix, double ra = 150.0, double dec = 30.0) {
  core::ImageD g(n, n, 0.0);
  core::SkyAnchor a;
  a.ra_deg = ra;
  a.dec_deg = dec;
  a.crpix1 = a.crpix2 = 0.5 * (n + 1);
  a.pixel_arcsec = pix;
  g.set_anchor(a);
  return g;
}
double area_arcsec2(const core::ImageD& m) { return m.sum() * m.pixel_arcsec() * m.pixel_arcsec(); }
}  // namespace

TEST_CASE("field-of-view area: square and circle, any roll", "[instrument][detector]") {
  const core::ImageD g = grid(200, 6.0);  // 20 arcmin
  DetectorSettings s;
  s.fov_arcmin = 10.0;
  const Detector sq(s);
  const Pointing p = pointing_at_anchor(g.anchor());
  // Aligned square, pixel edges on the FoV edges: exact.
  CHECK(area_arcsec2(sq.mask(g, p, 4)) == Approx(600.0 * 600.0).epsilon(1e-12));
  for (double roll : {17.0, 45.0, 123.0}) {
    INFO("roll " << roll);
    CHECK(area_arcsec2(sq.mask(g, pointing_at_anchor(g.anchor(), roll), 8)) == Approx(360000.0).epsilon(3e-3));
  }
  s.fov_shape = FovShape::Circle;
  const Detector ci(s);
  CHECK(area_arcsec2(ci.mask(g, p, 8)) == Approx(3.14159265358979 * 300.0 * 300.0).epsilon(3e-3));
}

TEST_CASE("chip gaps remove the crossing strips", "[instrument][detector]") {
  const core::ImageD g = grid(240, 5.0);
  DetectorSettings s;
  s.fov_arcmin = 16.0;
  s.chips_u = s.chips_v = 2;
  s.chip_gap_arcsec = 10.0;  // two pixels wide, on pixel edges
  const Detector d(s);
  const double L = 960.0, w = 10.0;
  CHECK(area_arcsec2(d.mask(g, pointing_at_anchor(g.anchor()), 4)) == Approx(L * L - 2 * w * L + w * w).epsilon(1e-12));
  // 3 x 1 chips and an extra gap line along v at +100 arcsec of 20 arcsec.
  s.chips_u = 3;
  s.chips_v = 1;
  s.extra_gaps = {{'v', 100.0, 20.0}};
  const Detector d3(s);
  const double expect = L * L - 2 * w * L - 20.0 * (L - 2 * w);
  CHECK(area_arcsec2(d3.mask(g, pointing_at_anchor(g.anchor()), 8)) == Approx(expect).epsilon(2e-3));
  s.extra_gaps = {{'x', 0.0, 1.0}};
  CHECK_THROWS_WITH(Detector(s), Catch::Contains("extra_gaps[0].axis"));
}

TEST_CASE("bad-pixel mask and aim offset", "[instrument][detector]") {
  const core::ImageD g = grid(100, 2.0);
  DetectorSettings s;
  s.fov_arcmin = 2.0;  // 120 arcsec
  s.pixel_arcsec = 1.0;
  core::ImageD bad(120, 120, 0.0);  // detector pixels, crpix at the centre (60.5)
  for (int j = 10; j < 20; ++j)
    for (int i = 30; i < 50; ++i) bad(i, j) = 1.0;  // 20 x 10 bad pixels
  const Detector d(s, bad);
  const Pointing p = pointing_at_anchor(g.anchor());
  CHECK(area_arcsec2(d.mask(g, p, 8)) == Approx(120.0 * 120.0 - 200.0).epsilon(1e-3));
  // The aim offset moves the FoV about the axis, keeps its area.
  s.aim_u_arcsec = 20.0;
  const core::ImageD m = Detector(s).mask(g, p, 4);
  CHECK(area_arcsec2(m) == Approx(14400.0).epsilon(1e-9));
  // Roll 0: +u along +x, so a FoV centre at u = -20 arcsec lies 10 pixels left.
  double cx = 0;
  for (int j = 0; j < 100; ++j)
    for (int i = 0; i < 100; ++i) cx += (i + 1) * m(i, j);
  CHECK(cx / m.sum() == Approx(50.5 - 10.0).margin(1e-9));
}

TEST_CASE("dither offsets and kernel", "[instrument][detector]") {
  DitherSettings d;
  d.pattern = DitherPattern::Lissajous;
  d.amplitude_arcsec = 16.0;
  d.n_samples = 1000;
  const auto o = dither_offsets(d);
  REQUIRE(o.size() == 1000);
  for (const auto& x : o) {
    CHECK(std::fabs(x.u_arcsec) <= 16.0);
    CHECK(std::fabs(x.v_arcsec) <= 16.0);
  }
  const core::ImageD k = dither_kernel(o, 30.0, 4.0);
  CHECK(k.sum() == Approx(1.0).epsilon(1e-12));
  CHECK(k.nx() % 2 == 1);
  d.pattern = DitherPattern::Random;
  const auto r1 = dither_offsets(d), r2 = dither_offsets(d);
  CHECK(r1[17].u_arcsec == r2[17].u_arcsec);  // seeded
  d.n_samples = 0;
  CHECK_THROWS_WITH(dither_offsets(d), Catch::Contains("n_samples"));
}

TEST_CASE("TAN pixel <-> sky agrees with astropy WCS", "[instrument][detector][python]") {
  const auto dir = testing::scratch_dir("tan_wcs");
  core::SkyAnchor a;
  a.ra_deg = 210.5;
  a.dec_deg = -62.0;
  a.crpix1 = 256.5;
  a.crpix2 = 240.0;
  a.pixel_arcsec = 4.0;
  std::ofstream(dir / "tan.py") << "from astropy.wcs import WCS\n"
                                   "w = WCS(naxis=2)\n"
                                   "w.wcs.ctype = ['RA---TAN', 'DEC--TAN']\n"
                                   "w.wcs.crval = [210.5, -62.0]\n"
                                   "w.wcs.crpix = [256.5, 240.0]\n"
                                   "w.wcs.cdelt = [-4.0/3600, 4.0/3600]\n"
                                   "for x, y in [(1, 1), (512, 480), (100.25, 400.75), (256.5, 240)]:\n"
                                   "    r, d = w.wcs_pix2world([[x, y]], 1)[0]\n"
                                   "    print(x, y, '%.12f %.12f' % (r, d))\n";
  int st = 0;
  const std::string out = testing::run_capture(testing::python() + " " + (dir / "tan.py").string(), &st);
  REQUIRE(st == 0);
  std::istringstream in(out);
  double x, y, ra, dec;
  int n = 0;
  while (in >> x >> y >> ra >> dec) {
    ++n;
    const SkyPoint s = pixel_to_sky(a, x, y);
    CHECK(s.ra_deg == Approx(ra).margin(1e-9));
    CHECK(s.dec_deg == Approx(dec).margin(1e-9));
    const PixelPoint p = sky_to_pixel(a, ra, dec);
    CHECK(p.x == Approx(x).margin(1e-6));
    CHECK(p.y == Approx(y).margin(1e-6));
  }
  CHECK(n == 4);
}
