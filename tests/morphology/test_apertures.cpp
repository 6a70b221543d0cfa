// Exact pixel-circle overlap areas (apertures.hpp).
#include <catch2/catch.hpp>

#include <cmath>
#include <vector>

#include "icmscope/morphology/apertures.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::morphology;

TEST_CASE("overlap: closed-form cases", "[morphology][apertures]") {
  // [D] A circle centred on a pixel corner with R = 1 covers a quarter disc of that pixel.
  CHECK(pixel_fraction_in_circle(0.5, 0.5, 1.0) == Approx(M_PI / 4).epsilon(1e-14));
  // [D] R = 0.5 about the pixel centre: inscribed disc, area pi/4.
  CHECK(pixel_fraction_in_circle(0.0, 0.0, 0.5) == Approx(M_PI / 4).epsilon(1e-14));
  // [D] R = sqrt(2)/2: circumscribed circle covers the whole pixel.
  CHECK(pixel_fraction_in_circle(0.0, 0.0, std::sqrt(0.5)) == Approx(1.0).epsilon(1e-14));
  // [D] Half plane limit: pixel centred at distance R from a huge circle's centre
  // along x is cut by an almost straight chord through its centre: fraction -> 1/2.
  CHECK(pixel_fraction_in_circle(1e5, 0.0, 1e5) == Approx(0.5).margin(1e-5));
  // [D] Circle segment: circle centre at distance 0 from the pixel's left edge
  // mid-point, R = 0.5: half disc of area pi/8 inside the pixel.
  CHECK(pixel_fraction_in_circle(0.5, 0.0, 0.5) == Approx(M_PI / 8).epsilon(1e-13));
}

TEST_CASE("overlap: fractions over the grid sum to the circle area", "[morphology][apertures]") {
  // [D] sum of exact overlaps = pi R^2 for a circle inside the grid, any sub-pixel centre.
  for (double R : {0.3, 1.0, 2.7, 10.0, 37.25, 120.5}) {
    for (auto c : std::vector<std::pair<double, double>>{{150.0, 150.0}, {150.5, 150.5}, {150.31, 149.77}}) {
      double sum = 0.0;
      for_each_in_circle(301, 301, c.first, c.second, R,
                         [&](int, int, std::size_t, double, double, double w) { sum += w; });
      CHECK(sum == Approx(M_PI * R * R).epsilon(1e-11));
    }
  }
}

TEST_CASE("overlap: agrees with a fine Monte-Carlo-free midpoint count", "[morphology][apertures]") {
  // Independent check: 2000 x 2000 midpoint sub-sampling of single pixels.
  const double R = 3.3;
  for (auto d : std::vector<std::pair<double, double>>{{3.1, 0.4}, {2.2, 2.3}, {0.0, 3.2}}) {
    const int n = 2000;
    long inside = 0;
    for (int a = 0; a < n; ++a)
      for (int b = 0; b < n; ++b) {
        const double x = d.first - 0.5 + (a + 0.5) / n, y = d.second - 0.5 + (b + 0.5) / n;
        inside += (x * x + y * y <= R * R) ? 1 : 0;
      }
    CHECK(pixel_fraction_in_circle(d.first, d.second, R) == Approx(double(inside) / (double(n) * n)).margin(2e-5));
  }
}

TEST_CASE("nested sums equal separate circle sums", "[morphology][apertures]") {
  std::vector<double> img(97 * 89);
  for (std::size_t i = 0; i < img.size(); ++i) img[i] = 1.0 + std::sin(0.37 * i) * 0.5;
  const std::vector<double> radii = {0.8, 3.0, 3.4, 11.2, 30.0, 40.5};
  std::vector<CircleSums> nested;
  nested_circle_sums(img.data(), 97, 89, 48.3, 44.6, radii, nested);
  for (std::size_t k = 0; k < radii.size(); ++k) {
    const CircleSums s = circle_sums(img.data(), 97, 89, 48.3, 44.6, radii[k]);
    CHECK(nested[k].f == Approx(s.f).epsilon(1e-12));
    CHECK(nested[k].fx == Approx(s.fx).epsilon(1e-10).margin(1e-9));
    CHECK(nested[k].fy == Approx(s.fy).epsilon(1e-10).margin(1e-9));
    CHECK(nested[k].area == Approx(s.area).epsilon(1e-12));
  }
}
