// Concentration c_SB on noiseless beta-model images (morphology.md sec. 1, 9).
#include <catch2/catch.hpp>

#include "icmscope/morphology/concentration.hpp"
#include "morph_test_models.hpp"
#include "test_support.hpp"

using namespace icmscope;
using namespace icmscope::morphology;

namespace {
struct Row {
  double beta, rc_kpc, c40_400, c100_500, c01_1;
};
// morphology.md sec. 9 table [D] (beta model of Cavaliere & Fusco-Femiano 1976;
// R500 = 1 Mpc for the scaled convention).
const Row kTable[] = {{0.5, 100, 0.05239, 0.21275, 0.15019},
                      {2.0 / 3.0, 50, 0.25016, 0.61387, 0.58184},
                      {2.0 / 3.0, 100, 0.09442, 0.36435, 0.32526},
                      {2.0 / 3.0, 200, 0.03513, 0.16795, 0.13133},
                      {0.8, 100, 0.13563, 0.49023, 0.47152}};
}  // namespace

TEST_CASE("beta-model concentration: closed form reproduces the table", "[morphology][concentration]") {
  // morphology.md sec. 9 [D]: c = [1 - (1 + r1^2/rc^2)^(3/2 - 3b)] / [1 - (1 + r2^2/rc^2)^(3/2 - 3b)].
  for (const Row& r : kTable) {
    CHECK(beta_model_concentration(r.beta, r.rc_kpc, 40, 400) == Approx(r.c40_400).margin(6e-6));
    CHECK(beta_model_concentration(r.beta, r.rc_kpc, 100, 500) == Approx(r.c100_500).margin(6e-6));
    CHECK(beta_model_concentration(r.beta, r.rc_kpc, 100, 1000) == Approx(r.c01_1).margin(6e-6));
  }
  // beta = 1/2 limit: ln(1 + r1^2/rc^2) / ln(1 + r2^2/rc^2).
  CHECK(beta_model_concentration(0.5, 100, 40, 400) == Approx(std::log(1.16) / std::log(17.0)).epsilon(1e-12));
  CHECK(beta_model_concentration(0.5 + 1e-9, 100, 40, 400) == Approx(std::log(1.16) / std::log(17.0)).epsilon(1e-7));
}

TEST_CASE("beta-model concentration measured on pixel images to 1e-3", "[morphology][concentration]") {
  // Images: pixel integrals of S(R) (4 x 4 Gauss-Legendre per pixel), centre at
  // a sub-pixel position; apertures from the conventions in kpc.
  const double cx = 405.37, cy = 404.81;
  for (const Row& r : kTable) {
    {  // Santos et al. 2008, 40/400 kpc, at 1 kpc/pixel
      const double kpp = 1.0;
      const core::ImageD img = testing::beta_image(811, 811, cx, cy, r.rc_kpc / kpp, r.beta);
      const ConcentrationResult c = concentration(img, {cx, cy}, 40 / kpp, 400 / kpp);
      INFO("beta " << r.beta << " rc " << r.rc_kpc << " 40/400");
      CHECK(c.inside_image);
      CHECK(c.c == Approx(beta_model_concentration(r.beta, r.rc_kpc, 40, 400)).epsilon(1e-3));
      CHECK(c.c == Approx(r.c40_400).epsilon(1e-3));
    }
    {  // Cassano et al. 2010 100/500 kpc and 0.1/1 R500 (R500 = 1 Mpc), at 2.5 kpc/pixel
      const double kpp = 2.5;
      const core::ImageD img = testing::beta_image(811, 811, cx, cy, r.rc_kpc / kpp, r.beta);
      const ConcentrationResult c1 = concentration(img, {cx, cy}, 100 / kpp, 500 / kpp);
      const ConcentrationResult c2 = concentration(img, {cx, cy}, 100 / kpp, 1000 / kpp);
      INFO("beta " << r.beta << " rc " << r.rc_kpc << " 100/500 and 0.1/1 R500");
      CHECK(c1.c == Approx(r.c100_500).epsilon(1e-3));
      CHECK(c2.c == Approx(r.c01_1).epsilon(1e-3));
      CHECK(c1.c == Approx(beta_model_concentration(r.beta, r.rc_kpc, 100, 500)).epsilon(1e-3));
    }
  }
}

TEST_CASE("concentration: enclosed flux matches the analytic F(<R)", "[morphology][concentration]") {
  // F(<R) = pi rc^2 S0 [1 - (1 + R^2/rc^2)^(3/2 - 3b)] / (3b - 3/2)  (morphology.md sec. 9).
  const double rc = 30.0, beta = 2.0 / 3.0, cx = 200.5, cy = 200.0;
  const core::ImageD img = testing::beta_image(401, 401, cx, cy, rc, beta);
  const ConcentrationResult c = concentration(img, {cx, cy}, 40.0, 150.0);
  const auto F = [&](double R) { return M_PI * rc * rc * (1 - std::pow(1 + R * R / (rc * rc), 1.5 - 3 * beta)) / (3 * beta - 1.5); };
  CHECK(c.f1 == Approx(F(40.0)).epsilon(5e-4));
  CHECK(c.f2 == Approx(F(150.0)).epsilon(2e-4));
}

TEST_CASE("concentration: aperture beyond the image is reported", "[morphology][concentration]") {
  const core::ImageD img = testing::beta_image(101, 101, 50, 50, 10, 0.7);
  CHECK(concentration(img, {50, 50}, 10, 49).inside_image);
  CHECK_FALSE(concentration(img, {50, 50}, 10, 60).inside_image);
  CHECK_THROWS_AS(concentration(img, {50, 50}, 20, 10), core::DomainError);
}
