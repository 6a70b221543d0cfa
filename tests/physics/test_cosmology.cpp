// Cosmology: Hogg 1999 distances, critical density, R500 <-> M500, checked
// against the physics.md table and against astropy (FlatLambdaCDM / LambdaCDM,
// Tcmb0 = 0) run from /usr/bin/python3.
#include <catch2/catch.hpp>

#include <cmath>
#include <fstream>
#include <functional>
#include <sstream>
#include <string>
#include <vector>

#include "icmscope/core/constants.hpp"
#include "icmscope/core/errors.hpp"
#include "icmscope/cosmo/cosmology.hpp"
#include "python_reference.hpp"
#include "test_support.hpp"

using icmscope::core::DomainError;
using icmscope::cosmo::Cosmology;
using icmscope::cosmo::CosmologyParams;
namespace ts = icmscope::testing;
using icmscope::testing::python_rows;
namespace k = icmscope::core::constants;

namespace {

double rel(double a, double b) { return std::abs(a / b - 1.0); }

std::string error_of(const std::function<void()>& f) {
  try {
    f();
  } catch (const DomainError& e) {
    return e.what();
  }
  return "";
}


}  // namespace

TEST_CASE("cosmology reproduces the physics.md check table", "[physics][cosmology]") {
  // physics.md section 5 (H0 = 70, Om = 0.3, OL = 0.7, no radiation) [C, agrees with astropy].
  const Cosmology c;
  CHECK(c.Omega_k() == 0.0);
  CHECK(c.E(0.1) == Approx(1.0485).margin(5e-5));
  CHECK(c.comoving_distance_Mpc(0.1) == Approx(418.45449).epsilon(2e-8));
  CHECK(c.luminosity_distance_Mpc(0.1) == Approx(460.29994).epsilon(2e-8));
  CHECK(c.angular_diameter_distance_Mpc(0.1) == Approx(380.41317).epsilon(2e-8));
  CHECK(c.kpc_per_arcsec(0.1) == Approx(1.844).margin(5e-4));
  CHECK(c.E(0.5) == Approx(1.3086252).epsilon(1e-7));
  CHECK(c.comoving_distance_Mpc(0.5) == Approx(1888.6).margin(0.05));
  CHECK(c.luminosity_distance_Mpc(0.5) == Approx(2832.9).margin(0.05));
  CHECK(c.angular_diameter_distance_Mpc(0.5) == Approx(1259.1).margin(0.05));
  CHECK(c.kpc_per_arcsec(0.5) == Approx(6.104).margin(5e-4));
  CHECK(c.E(1.0) == Approx(1.7607).margin(5e-5));
  CHECK(c.comoving_distance_Mpc(1.0) == Approx(3303.8).margin(0.05));
  CHECK(c.luminosity_distance_Mpc(1.0) == Approx(6607.7).margin(0.05));
  CHECK(c.angular_diameter_distance_Mpc(1.0) == Approx(1651.9).margin(0.05));
  CHECK(c.kpc_per_arcsec(1.0) == Approx(8.009).margin(5e-4));
  // standards.md: astropy FlatLambdaCDM(70, 0.3, Tcmb0=0): 110.65771 kpc/arcmin at z = 0.1, age(0) = 13.466984 Gyr [L].
  CHECK(60.0 * c.kpc_per_arcsec(0.1) == Approx(110.65771).epsilon(1e-7));
  CHECK(c.age_Gyr(0.0) == Approx(13.466984).epsilon(1e-7));
}

TEST_CASE("critical density and R500 match physics.md", "[physics][cosmology]") {
  const Cosmology c;
  const double h2 = 0.49;
  // physics.md section 5 [C]: rho_c0 = 1.8785e-29 h^2 g cm^-3 = 2.775e11 h^2 Msun Mpc^-3.
  CHECK(c.rho_crit_g_cm3(0.0) == Approx(1.8785e-29 * h2).epsilon(1e-4));
  CHECK(c.rho_crit_Msun_kpc3(0.0) * 1e9 == Approx(2.775e11 * h2).epsilon(5e-4));
  // rho_c scales as E(z)^2.
  CHECK(c.rho_crit_g_cm3(0.5) == Approx(c.rho_crit_g_cm3(0.0) * std::pow(c.E(0.5), 2)).epsilon(1e-13));
  // R500 for M500 = 1e14 / 3e14 / 1e15 Msun [C, 3 significant figures]: 705 / 1017 / 1520 kpc at z = 0,
  // 590 / 850 / 1270 kpc at z = 0.5.
  CHECK(c.r500_kpc_from_m500(1e14, 0.0) == Approx(705).margin(0.5));
  CHECK(c.r500_kpc_from_m500(3e14, 0.0) == Approx(1017).margin(0.5));
  CHECK(c.r500_kpc_from_m500(1e15, 0.0) == Approx(1520).margin(1.0));
  CHECK(c.r500_kpc_from_m500(1e14, 0.5) == Approx(590).margin(1.0));
  CHECK(c.r500_kpc_from_m500(3e14, 0.5) == Approx(850).margin(1.0));
  CHECK(c.r500_kpc_from_m500(1e15, 0.5) == Approx(1270).margin(1.0));
  // Round trip M -> R -> M.
  for (double z : {0.0, 0.3, 1.2})
    for (double m : {3e13, 6.6e14})
      CHECK(c.m500_from_r500(c.r500_kpc_from_m500(m, z), z) == Approx(m).epsilon(1e-13));
}

TEST_CASE("distance identities hold in flat and curved models", "[physics][cosmology]") {
  for (double ode : {0.7, 0.6, 0.8}) {
    CosmologyParams p;
    p.Omega_lambda = ode;
    const Cosmology c(p);
    for (double z : {0.05, 0.7, 2.5}) {
      const double dm = c.transverse_comoving_distance_Mpc(z);
      // Hogg 1999: D_L = (1+z) D_M = (1+z)^2 D_A (Etherington reciprocity).
      CHECK(c.luminosity_distance_Mpc(z) == Approx((1 + z) * (1 + z) * c.angular_diameter_distance_Mpc(z)).epsilon(1e-14));
      if (ode == 0.7) CHECK(dm == c.comoving_distance_Mpc(z));
      if (ode < 0.7) CHECK(dm > c.comoving_distance_Mpc(z));  // open: sinh > argument
      if (ode > 0.7) CHECK(dm < c.comoving_distance_Mpc(z));  // closed: sin < argument
    }
  }
  // Small z: D_C -> c z / H0 (Hubble law).
  const Cosmology c;
  CHECK(c.comoving_distance_Mpc(1e-5) == Approx(k::c_km_s * 1e-5 / 70.0).epsilon(1e-5));
  CHECK(c.comoving_distance_Mpc(0.0) == 0.0);
  CHECK(c.lookback_time_Gyr(0.0) == 0.0);
  CHECK(c.lookback_time_Gyr(0.8) == Approx(c.age_Gyr(0.0) - c.age_Gyr(0.8)).epsilon(1e-9));
}

TEST_CASE("cosmology agrees with astropy to 1e-6 (flat, open, closed)", "[physics][cosmology][python]") {
  // Reference: astropy 5.2 FlatLambdaCDM / LambdaCDM with Tcmb0 = 0 (no radiation).
  const std::string script = R"PY(
import astropy.units as u
from astropy.cosmology import FlatLambdaCDM, LambdaCDM
from astropy.constants import M_sun
import numpy as np
models = [FlatLambdaCDM(H0=70, Om0=0.3, Tcmb0=0),
          LambdaCDM(H0=70, Om0=0.3, Ode0=0.6, Tcmb0=0),
          LambdaCDM(H0=68, Om0=0.35, Ode0=0.75, Tcmb0=0)]
for im, m in enumerate(models):
    for z in [0.01, 0.1, 0.5, 1.0, 2.0, 4.0]:
        rc = m.critical_density(z).to(u.Msun / u.kpc**3).value
        r500 = (3 * 3e14 / (4 * np.pi * 500 * rc)) ** (1.0 / 3.0)
        print(im, z, m.efunc(z), m.comoving_distance(z).to(u.Mpc).value,
              m.comoving_transverse_distance(z).to(u.Mpc).value,
              m.angular_diameter_distance(z).to(u.Mpc).value, m.luminosity_distance(z).to(u.Mpc).value,
              m.kpc_proper_per_arcmin(z).value / 60.0, m.critical_density(z).to(u.g / u.cm**3).value,
              r500, m.age(z).to(u.Gyr).value, m.lookback_time(z).to(u.Gyr).value)
)PY";
  const auto rows = python_rows("cosmology_astropy", script);
  REQUIRE(rows.size() == 18);
  const CosmologyParams params[3] = {{70, 0.3, 0.7, "flat"}, {70, 0.3, 0.6, "open"}, {68, 0.35, 0.75, "closed"}};
  for (const auto& r : rows) {
    REQUIRE(r.size() == 12);
    const Cosmology c(params[static_cast<int>(r[0])]);
    const double z = r[1];
    INFO("model " << params[static_cast<int>(r[0])].name << " z = " << z);
    CHECK(rel(c.E(z), r[2]) < 1e-6);
    CHECK(rel(c.comoving_distance_Mpc(z), r[3]) < 1e-6);
    CHECK(rel(c.transverse_comoving_distance_Mpc(z), r[4]) < 1e-6);
    CHECK(rel(c.angular_diameter_distance_Mpc(z), r[5]) < 1e-6);
    CHECK(rel(c.luminosity_distance_Mpc(z), r[6]) < 1e-6);
    CHECK(rel(c.kpc_per_arcsec(z), r[7]) < 1e-6);
    CHECK(rel(c.rho_crit_g_cm3(z), r[8]) < 1e-6);
    CHECK(rel(c.r500_kpc_from_m500(3e14, z), r[9]) < 1e-6);
    CHECK(rel(c.age_Gyr(z), r[10]) < 1e-6);
    CHECK(rel(c.lookback_time_Gyr(z), r[11]) < 1e-6);
  }
}

TEST_CASE("cosmology rejects bad arguments naming them", "[physics][cosmology]") {
  const Cosmology c;
  CHECK(error_of([&] { c.comoving_distance_Mpc(-0.1); }).find("redshift z") != std::string::npos);
  CHECK(error_of([&] { c.E(std::nan("")); }).find("redshift z") != std::string::npos);
  CHECK(error_of([&] { c.r500_kpc_from_m500(-1.0, 0.1); }).find("M_Msun") != std::string::npos);
  CHECK(error_of([&] { c.m500_from_r500(0.0, 0.1); }).find("R_kpc") != std::string::npos);
  CosmologyParams p;
  p.H0_km_s_Mpc = 0.0;
  CHECK(error_of([&] { Cosmology bad(p); }).find("H0_km_s_Mpc") != std::string::npos);
  p = CosmologyParams{};
  p.Omega_m = -0.1;
  CHECK(error_of([&] { Cosmology bad(p); }).find("Omega_m") != std::string::npos);
  // A bouncing model (E^2 < 0 at z ~ 1.4): Om = 0.3, OL = 1.8.
  p = CosmologyParams{};
  p.Omega_lambda = 1.8;
  CHECK(error_of([&] { Cosmology bad(p); }).find("no big bang") != std::string::npos);
}
