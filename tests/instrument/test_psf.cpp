// PSF models: normalisation, EEF closed forms (physics.md section 8), rasterised
// kernels against independent integrals, scattering draws, broadening law.
#include <catch2/catch.hpp>

#include <cmath>
#include <fstream>
#include <sstream>
#include <vector>

#include "icmscope/core/errors.hpp"
#include "icmscope/core/random.hpp"
#include "icmscope/instrument/psf.hpp"
#include "test_support.hpp"

using namespace icmscope;
using instrument::Psf;

namespace {
constexpr double kPi = 3.14159265358979323846;

// Int_0^R 2 pi r P(r) dr by Simpson's rule (n even).
double radial_integral(const Psf& p, double R, int n = 20000) {
  const double h = R / n;
  double s = 0;
  for (int k = 0; k <= n; ++k) {
    const double r = k * h;
    const double w = (k == 0 || k == n) ? 1 : (k % 2 ? 4 : 2);
    s += w * 2 * kPi * r * p.density(r, 0.0);
  }
  return s * h / 3;
}

double fraction_within(const Psf& p, double r, int n, std::uint64_t seed) {
  core::RandomStream rng(seed, 3);
  int in = 0;
  for (int k = 0; k < n; ++k) {
    double dx, dy;
    p.draw_offset(rng, dx, dy);
    in += (dx * dx + dy * dy <= r * r);
  }
  return static_cast<double>(in) / n;
}
}  // namespace

TEST_CASE("Gaussian PSF: EEF closed form, density normalisation, kernel moments", "[instrument][psf]") {
  const Psf g = Psf::gaussian(5.0);
  const double sig = 5.0 / 2.3548200450309493;
  // physics.md section 8: sigma = FWHM / 2.3548, EEF = 1 - exp(-r^2 / 2 sigma^2).
  for (double r : {1.0, 3.0, 6.0, 12.0}) {
    CHECK(g.eef(r) == Approx(1 - std::exp(-r * r / (2 * sig * sig))).epsilon(1e-12));
    CHECK(radial_integral(g, r) == Approx(g.eef(r)).epsilon(1e-8));
  }
  CHECK(g.eef_radius(0.5) == Approx(sig * std::sqrt(2 * std::log(2.0))).epsilon(1e-12));
  // Kernel: sum 1, centroid at the middle, per-axis variance sigma^2 + pix^2 / 12
  // (Sheppard 1898, Proc. London Math. Soc. 29, 353: grouping correction).
  const double pix = 1.0;
  const core::ImageD k = g.kernel(pix, {0.999999, 64, 2, 8});
  CHECK(k.sum() == Approx(1.0).epsilon(1e-12));
  const int h = k.nx() / 2;
  double mx = 0, vx = 0;
  for (int j = 0; j < k.ny(); ++j)
    for (int i = 0; i < k.nx(); ++i) {
      mx += (i - h) * k(i, j);
      vx += (i - h) * (i - h) * k(i, j);
    }
  CHECK(mx == Approx(0.0).margin(1e-12));
  CHECK(vx == Approx(sig * sig + pix * pix / 12).epsilon(1e-5));
  // A shifted kernel moves its centroid by the shift.
  const core::ImageD ks = g.kernel(pix, {0.999999, 64, 2, 8}, 0.3, -0.2);
  const int hs = ks.nx() / 2;
  double sx = 0, sy = 0;
  for (int j = 0; j < ks.ny(); ++j)
    for (int i = 0; i < ks.nx(); ++i) {
      sx += (i - hs) * ks(i, j);
      sy += (j - hs) * ks(i, j);
    }
  CHECK(sx == Approx(0.3).margin(1e-6));
  CHECK(sy == Approx(-0.2).margin(1e-6));
}

TEST_CASE("King PSF: EEF and half-energy radius closed forms", "[instrument][psf]") {
  const double rc = 2.0, beta = 1.5;
  const Psf p = Psf::king(rc, beta);
  // physics.md section 8: EEF = 1 - [1 + (r/rc)^2]^(1 - beta);
  // half-energy radius rc sqrt(2^(1/(beta-1)) - 1).
  for (double r : {0.5, 2.0, 10.0, 50.0}) {
    CHECK(p.eef(r) == Approx(1 - std::pow(1 + r * r / (rc * rc), 1 - beta)).epsilon(1e-12));
    CHECK(radial_integral(p, r, 200000) == Approx(p.eef(r)).epsilon(1e-7));
  }
  CHECK(p.half_energy_radius_arcsec() == Approx(rc * std::sqrt(std::pow(2.0, 1 / (beta - 1)) - 1)).epsilon(1e-12));
  CHECK(p.eef(p.eef_radius(0.9)) == Approx(0.9).epsilon(1e-12));
  CHECK_THROWS_AS(Psf::king(1.0, 1.0), core::DomainError);
}

TEST_CASE("King kernel pixels match scipy dblquad pixel integrals", "[instrument][psf][python]") {
  const auto dir = testing::scratch_dir("psf_king");
  const double rc = 2.0, beta = 1.5, pix = 1.0;
  const int hh = 12;
  // Independent reference: scipy integrates the King density over the pixels
  // and over the whole (2h+1)^2 box; kernel = pixel integral / box integral.
  std::ofstream(dir / "king.py") << "import numpy as np\nfrom scipy import integrate\n"
                                    "rc, b, pix, h = 2.0, 1.5, 1.0, 12\n"
                                    "P = lambda y, x: (b-1)/(np.pi*rc**2)*(1+(x*x+y*y)/rc**2)**(-b)\n"
                                    "q = lambda x0, x1, y0, y1: integrate.dblquad(P, x0, x1, y0, y1, epsabs=1e-14, epsrel=1e-12)[0]\n"
                                    "box = 4*q(0, (h+0.5)*pix, 0, (h+0.5)*pix)\n"
                                    "for (i, j) in [(0, 0), (1, 0), (2, 1), (5, 3), (12, 12)]:\n"
                                    "    print(q((i-0.5)*pix, (i+0.5)*pix, (j-0.5)*pix, (j+0.5)*pix) / box)\n";
  int st = 0;
  const std::string out = testing::run_capture(testing::python() + " " + (dir / "king.py").string(), &st);
  REQUIRE(st == 0);
  std::istringstream in(out);
  std::vector<double> ref;
  double v;
  while (in >> v) ref.push_back(v);
  REQUIRE(ref.size() == 5);
  const Psf p = Psf::king(rc, beta);
  instrument::KernelSettings ks;
  ks.eef_target = 0.999999;
  ks.max_half_size = hh;
  const core::ImageD k = p.kernel(pix, ks);
  REQUIRE(k.nx() == 2 * hh + 1);
  const int pts[5][2] = {{0, 0}, {1, 0}, {2, 1}, {5, 3}, {12, 12}};
  for (int t = 0; t < 5; ++t) {
    INFO("pixel offset (" << pts[t][0] << ", " << pts[t][1] << ")");
    CHECK(k(hh + pts[t][0], hh + pts[t][1]) == Approx(ref[t]).epsilon(2e-5));
  }
}

TEST_CASE("drawn scattering offsets follow the EEF", "[instrument][psf]") {
  const int n = 200000;
  const double tol = 4 * std::sqrt(0.25 / n);  // binomial, 4 sigma
  const Psf g = Psf::gaussian(4.0);
  CHECK(fraction_within(g, g.eef_radius(0.5), n, 1) == Approx(0.5).margin(tol));
  const Psf k = Psf::king(3.0, 1.6);
  CHECK(fraction_within(k, k.eef_radius(0.5), n, 2) == Approx(0.5).margin(tol));
  CHECK(fraction_within(k, k.eef_radius(0.9), n, 3) == Approx(0.9).margin(tol));
}

TEST_CASE("image PSF: normalised, EEF and draws close to the Gaussian it samples", "[instrument][psf]") {
  const Psf g = Psf::gaussian(3.0);
  core::ImageD img = g.kernel(0.1, {0.99999, 200, 2, 8});
  img.pixels()[0] = 0.0;
  const Psf p = Psf::image(img);
  const double r50 = g.eef_radius(0.5);
  // Sampling at 0.1" adds (0.1^2 / 12) to the variance: well below 1% on r50.
  CHECK(p.eef(r50) == Approx(0.5).margin(0.005));
  CHECK(p.eef_radius(0.5) == Approx(r50).epsilon(0.01));
  CHECK(p.fwhm_arcsec() == Approx(3.0).epsilon(0.02));
  CHECK(fraction_within(p, r50, 100000, 4) == Approx(0.5).margin(4 * std::sqrt(0.25 / 100000) + 0.003));
  const core::ImageD kp = p.kernel(1.0), kg = g.kernel(1.0);
  CHECK(kp.sum() == Approx(1.0).epsilon(1e-12));
  const int hp = kp.nx() / 2, hg = kg.nx() / 2;
  CHECK(kp(hp, hp) == Approx(kg(hg, hg)).epsilon(0.02));
  core::ImageD neg(3, 3, 1.0);
  neg(1, 1) = -1.0;
  CHECK_THROWS_WITH(Psf::image(neg), Catch::Contains("pixel 4"));
}

TEST_CASE("broadening law: sqrt(1 + (theta/theta_s)^2) (E/E0)^eta", "[instrument][psf]") {
  instrument::PsfScaling s{10.0, 1.5, 0.5};
  const Psf g = Psf::gaussian(4.0, s);
  CHECK(g.at(0.0, 1.5).fwhm_arcsec() == Approx(4.0));
  CHECK(g.at(10.0, 1.5).fwhm_arcsec() == Approx(4.0 * std::sqrt(2.0)));
  CHECK(g.at(0.0, 6.0).fwhm_arcsec() == Approx(8.0));
  const Psf k = Psf::king(2.0, 1.5, s).at(10.0, 1.5);
  CHECK(k.r_c_arcsec() == Approx(2.0 * std::sqrt(2.0)));
  // King FWHM: density halves at r = rc sqrt(2^(1/beta) - 1).
  const Psf k0 = Psf::king(2.0, 1.5);
  const double rh = 0.5 * k0.fwhm_arcsec();
  CHECK(k0.density(rh, 0) == Approx(0.5 * k0.density(0, 0)).epsilon(1e-12));
}
