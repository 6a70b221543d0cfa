// FFT convolution: agreement with direct summation, flux conservation, no
// wrap-around; off-axis PSF zones.
#include <catch2/catch.hpp>

#include <cmath>

#include "icmscope/core/errors.hpp"
#include "icmscope/core/random.hpp"
#include "icmscope/instrument/convolve.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::instrument;

namespace {
core::ImageD random_image(int nx, int ny, std::uint64_t seed) {
  core::ImageD im(nx, ny, 0.0);
  core::RandomStream r(seed, 0);
  for (double& v : im.pixels()) v = r.uniform();
  return im;
}
}  // namespace

TEST_CASE("FFT convolution equals direct summation on a small image", "[instrument][convolve]") {
  const core::ImageD im = random_image(37, 29, 1);
  const core::ImageD k = random_image(9, 7, 2);  // non-square, non-symmetric
  const core::ImageD a = convolve_fft(im, k), b = convolve_direct(im, k);
  double mx = 0, md = 0;
  for (std::size_t i = 0; i < a.size(); ++i) {
    mx = std::max(mx, std::fabs(b.data()[i]));
    md = std::max(md, std::fabs(a.data()[i] - b.data()[i]));
  }
  CHECK(md < 1e-12 * mx);
  // Direct summation itself against the definition at one pixel:
  // out(x, y) = sum_{i,j} im(x - (i - 4), y - (j - 3)) k(i, j).
  double ref = 0;
  for (int j = 0; j < 7; ++j)
    for (int i = 0; i < 9; ++i) {
      const int sx = 2 - (i - 4), sy = 27 - (j - 3);
      if (sx >= 0 && sx < 37 && sy >= 0 && sy < 29) ref += im(sx, sy) * k(i, j);
    }
  CHECK(b(2, 27) == Approx(ref).epsilon(1e-14));
}

TEST_CASE("FFT convolution conserves flux and does not wrap around", "[instrument][convolve]") {
  core::ImageD im(128, 96, 0.0);
  im(64, 48) = 1000.0;
  im(40, 30) = 10.0;
  const core::ImageD k = Psf::gaussian(6.0).kernel(1.0);
  REQUIRE(k.sum() == Approx(1.0).epsilon(1e-14));
  const core::ImageD c = convolve_fft(im, k);
  CHECK(c.sum() == Approx(1010.0).epsilon(1e-12));
  // A source on the left edge: half its flux leaves the image, none reappears on the right.
  core::ImageD e(64, 64, 0.0);
  e(0, 32) = 1.0;
  const core::ImageD ce = convolve_fft(e, k);
  double right = 0;
  for (int j = 0; j < 64; ++j)
    for (int i = 32; i < 64; ++i) right += std::fabs(ce(i, j));
  CHECK(right < 1e-14);
  // Kept fraction of a symmetric kernel: the central column c0 plus half the rest.
  double c0 = 0;
  for (int j = 0; j < k.ny(); ++j) c0 += k(k.nx() / 2, j);
  CHECK(ce.sum() == Approx(0.5 + 0.5 * c0).epsilon(1e-10));
}

TEST_CASE("fft_good_size returns the smallest 7-smooth length", "[instrument][convolve]") {
  auto smooth = [](int n) {
    for (int p : {2, 3, 5, 7})
      while (n % p == 0) n /= p;
    return n == 1;
  };
  for (int n : {1, 17, 127, 1031, 2049, 2113}) {
    const int g = fft_good_size(n);
    CHECK(g >= n);
    CHECK(smooth(g));
    for (int m = n; m < g; ++m) CHECK_FALSE(smooth(m));
  }
  CHECK(fft_good_size(1031) == 1050);
  const FftConvolver fc(2048, 2048, core::ImageD(65, 65, 1.0));
  CHECK(fc.padded_nx() == fft_good_size(2048 + 32));
}

TEST_CASE("PSF zones: partition of unity, one-PSF limit, flux conservation", "[instrument][convolve]") {
  ZoneSettings z;
  z.edges_arcmin = {0.0, 2.0, 4.0, 6.0};
  z.blend_arcmin = 0.5;
  for (double t = 0; t < 10; t += 0.01) {
    double s = 0;
    for (std::size_t k = 0; k < 4; ++k) {
      const double w = zone_weight(z, k, t);
      CHECK(w >= 0.0);
      s += w;
    }
    CHECK(s == Approx(1.0).margin(1e-15));
  }
  CHECK(zone_weight(z, 0, 1.0) == 1.0);
  CHECK(zone_weight(z, 1, 2.0) == Approx(0.5));
  core::ImageD im = random_image(160, 160, 3);
  core::SkyAnchor a;
  a.pixel_arcsec = 2.0;
  a.crpix1 = a.crpix2 = 80.5;
  im.set_anchor(a);
  // A PSF without broadening: the zones reduce to one convolution.
  const Psf flat = Psf::gaussian(5.0);
  const core::ImageD one = convolve_fft(im, flat.kernel(2.0, z.kernel));
  const core::ImageD zz = convolve_zones(im, 80.5, 80.5, flat, z);
  double md = 0;
  for (std::size_t i = 0; i < one.size(); ++i) md = std::max(md, std::fabs(one.data()[i] - zz.data()[i]));
  CHECK(md < 1e-12);
  // With broadening, sources far from the edges keep their flux, and the
  // off-axis one is wider than the on-axis one.
  core::ImageD pts(160, 160, 0.0);
  pts.set_anchor(a);
  pts(80, 80) = 1.0;   // on axis
  pts(80, 150) = 1.0;  // 70 pixels = 2.33 arcmin off axis
  const Psf br = Psf::gaussian(4.0, {1.0, 1.0, 0.0});
  const core::ImageD c = convolve_zones(pts, 80.5, 80.5, br, z);
  CHECK(c.sum() == Approx(2.0).epsilon(1e-10));
  CHECK(c(80, 80) > 2.0 * c(80, 150));
}
