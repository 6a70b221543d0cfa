#!/usr/bin/env python3
"""`icmscope rate` against an independent evaluation of the published formulas.

The count rate of an absorbed, redshifted thermal bremsstrahlung spectrum
(hydrogen + helium, no metals, no recombination) through a flat 1 cm^2 area:

    K_ph = (1+z)^2 Int_{e1}^{e2} eps_N((1+z)E) exp(-sigma(E) N_H) dE        [counts s^-1 per EM/(4 pi D_L^2)]
    eps_N(E) = C_N (kT)^-1/2 sum_i Z_i^2 (n_i/n_H) gbar(E/kT, Z_i^2 Ry/kT) exp(-E/kT) / E

- C_N = C_nu / (h sqrt(keV/k_B)), C_nu = 2^5 pi e^6 / (3 m_e c^3) sqrt(2 pi / (3 k_B m_e))
  (Rybicki & Lightman 1979, eq. 5.14; physics.md section 1), from CODATA
  constants (scipy.constants, converted to CGS here);
- gbar: the Born x Elwert thermally averaged Gaunt factor of physics.md 2(b)
  (Elwert 1939; Chluba, Ravenni & Bolliet 2020, MNRAS 492, 177), integrated
  here with scipy.integrate.quad, and the Born closed form
  (sqrt(3)/pi) exp(u/2) K0(u/2) (R&L section 5.3) with scipy.special.k0;
- sigma(E): Morrison & McCammon 1983 (ApJ 270, 119) Table 2 (physics.md section 4);
- He/H = 9.77e-2 by number (Anders & Grevesse 1989, physics.md section 3; from
  memory, unverified, but the same value enters both sides).

Checks: icmscope's rate per unit emission measure and its absorbed energy flux
agree with the Born x Elwert quadrature to 0.3%; its count rate per unit flux
to 0.1%; and against the Born Gaunt factor the ratio lies within the range of
the exact / Born ratio of van Hoof et al. 2014 (MNRAS 444, 420) Table
(physics.md 2(c)) for the gamma^2 of H and He here (1e-3 .. 6e-2) and
u = 0.1 .. 1.5: between 1.02 (g2 = 1e-3, u = 0.1) and ~1.25 (g2 = 6e-2, u = 1;
1.15 at g2 = 1e-2 and 1.39 at g2 = 1e-1).
"""
import json
import math
import os
import subprocess
import sys

import numpy as np
from scipy import constants as sc
from scipy import integrate, special

BIN = os.environ["ICMSCOPE_BIN"]
failures = []


def check(cond, msg):
    print(("ok   " if cond else "FAIL ") + msg)
    if not cond:
        failures.append(msg)


# CGS constants from CODATA (scipy.constants is SI).
e_esu = sc.e * sc.c * 10.0  # statcoulomb: e [C] * c [m/s] * 10
m_e = sc.m_e * 1e3
c = sc.c * 1e2
k_B = sc.k * 1e7
h = sc.h * 1e7
keV_erg = sc.e * 1e3 * 1e7
keV_K = keV_erg / k_B
Ry_keV = sc.physical_constants["Rydberg constant times hc in eV"][0] * 1e-3

C_nu = 2**5 * math.pi * e_esu**6 / (3 * m_e * c**3) * math.sqrt(2 * math.pi / (3 * k_B * m_e))
C_N = C_nu / (h * math.sqrt(keV_K))
check(abs(C_nu / 6.8416e-38 - 1) < 1e-4, "C_nu = %.5e (physics.md: 6.8416e-38)" % C_nu)
check(abs(C_N / 3.031e-15 - 1) < 1e-3, "C_N = %.5e (physics.md: 3.031e-15)" % C_N)

IONS = [(1, 1.0), (2, 9.77e-2)]  # (Z, n_i / n_H)

MM83 = [  # E range keV, c0, c1, c2 (Morrison & McCammon 1983, Table 2)
    (0.030, 0.100, 17.3, 608.1, -2150.0), (0.100, 0.284, 34.6, 267.9, -476.1),
    (0.284, 0.400, 78.1, 18.8, 4.3), (0.400, 0.532, 71.4, 66.8, -51.4),
    (0.532, 0.707, 95.5, 145.8, -61.1), (0.707, 0.867, 308.9, -380.6, 294.0),
    (0.867, 1.303, 120.6, 169.3, -47.7), (1.303, 1.840, 141.3, 146.8, -31.5),
    (1.840, 2.471, 202.7, 104.7, -17.0), (2.471, 3.210, 342.7, 18.7, 0.0),
    (3.210, 4.038, 352.2, 18.7, 0.0), (4.038, 7.111, 433.9, -2.4, 0.75),
    (7.111, 8.331, 629.0, 30.9, 0.0), (8.331, 10.000, 701.2, 25.2, 0.0)]
EDGES = [r[0] for r in MM83[1:]]


def sigma_mm83(E):
    for lo, hi, c0, c1, c2 in MM83:
        if lo <= E < hi or (hi == 10.0 and E >= lo):
            return (c0 + c1 * E + c2 * E * E) / E**3 * 1e-24
    raise ValueError(E)


check(abs(sigma_mm83(1.0) / 2.42e-22 - 1) < 0.01, "MM83 sigma(1 keV) = %.3e (physics.md: 2.42e-22)" % sigma_mm83(1.0))


def gaunt_born(u):
    return math.sqrt(3) / math.pi * math.exp(u / 2) * special.k0(u / 2)


def gaunt_born_elwert(u, g2):
    # x = t^2 removes the x^-1/2 behaviour of f_E at x -> 0.
    def f(t):
        x = t * t
        if x == 0.0:
            return 0.0
        fe_num = -math.expm1(-2 * math.pi * math.sqrt(g2 / (x + u)))
        fe_den = -math.expm1(-2 * math.pi * math.sqrt(g2 / x))
        ln = math.log((math.sqrt(x + u) + t) ** 2 / u)
        return math.exp(-x) * math.sqrt(3) / math.pi * ln * 2.0 * math.sqrt(x + u) * fe_num / fe_den
    v, _ = integrate.quad(f, 0.0, 12.0, limit=200, epsabs=0, epsrel=1e-10)
    return v


check(abs(gaunt_born(1.0) / 0.8416 - 1) < 2e-3, "Born gbar(u=1) = %.4f (van Hoof 2014: 0.8416)" % gaunt_born(1.0))
check(abs(gaunt_born_elwert(1.0, 1e-3) / 0.8816 - 1) < 5e-3,
      "Born x Elwert gbar(u=1, g2=1e-3) = %.4f (van Hoof 2014: 0.8816, <= 0.5%%)" % gaunt_born_elwert(1.0, 1e-3))


def eps_N(E_rest, kT, gaunt):
    s = 0.0
    for Z, n in IONS:
        s += Z * Z * n * gaunt(E_rest / kT, Z * Z * Ry_keV / kT)
    return C_N / math.sqrt(kT) * s * math.exp(-E_rest / kT) / E_rest


def coefficients(kT, z, nH, e1, e2, gaunt):
    def integrand(E, weight):
        t = math.exp(-sigma_mm83(E) * nH) if nH > 0 else 1.0
        return (1 + z) ** 2 * eps_N((1 + z) * E, kT, gaunt) * t * weight(E)
    pts = [x for x in EDGES if e1 < x < e2]
    kph, _ = integrate.quad(integrand, e1, e2, args=(lambda E: 1.0,), points=pts or None, limit=200, epsrel=1e-8)
    ke, _ = integrate.quad(integrand, e1, e2, args=(lambda E: E * keV_erg,), points=pts or None, limit=200,
                           epsrel=1e-8)
    return kph, ke


born = lambda u, g2: gaunt_born(u)
cases = [(5.0, 0.0, 0.0, 0.5, 2.0), (5.0, 0.1, 3e20, 0.5, 2.0), (2.0, 0.3, 1e21, 0.5, 2.0),
         (8.0, 0.05, 5e20, 2.0, 7.0), (1.0, 0.0, 2e20, 0.3, 1.5)]
for kT, z, nH, e1, e2 in cases:
    r = subprocess.run([BIN, "rate", "--kT-keV", str(kT), "--Z-solar", "0", "--redshift", str(z), "--nH-cm2", str(nH),
                        "--band-keV", "%g,%g" % (e1, e2), "--instrument", "flat", "--no-recombination", "--json"],
                       capture_output=True, text=True)
    if r.returncode != 0:
        print(r.stdout, r.stderr)
        failures.append("rate failed")
        continue
    j = json.loads(r.stdout)
    kph, ke = coefficients(kT, z, nH, e1, e2, gaunt_born_elwert)
    kph_b, ke_b = coefficients(kT, z, nH, e1, e2, born)
    tag = "kT %g z %g N_H %g band %g-%g" % (kT, z, nH, e1, e2)
    got = j["rate_per_em_over_4pi_dl2_counts_s_cm5"]
    check(abs(got / kph - 1) < 3e-3, "%s: rate per EM %.6e vs quad %.6e (%.2e)" % (tag, got, kph, got / kph - 1))
    got_e = j["energy_flux_absorbed_per_em_over_4pi_dl2_erg_s_cm3"]
    check(abs(got_e / ke - 1) < 3e-3, "%s: energy flux per EM %.6e vs quad %.6e" % (tag, got_e, ke))
    rpf = j["rate_per_flux_absorbed_counts_s_per_erg_cm2_s"]
    check(abs(rpf / (kph / ke) - 1) < 1e-3, "%s: rate per flux %.6e vs quad %.6e" % (tag, rpf, kph / ke))
    check(abs(j["band_area_cm2"] - 1.0) < 1e-9, "%s: flat area is 1 cm^2" % tag)
    ratio = got / kph_b
    check(1.01 < ratio < 1.25, "%s: Born x Elwert / Born = %.4f within the van Hoof 2014 range" % (tag, ratio))

# Given a flux and an exposure: counts = flux * rate_per_flux * exposure.
r = subprocess.run([BIN, "rate", "--kT-keV", "5", "--flux-erg-cm2-s", "1e-13", "--exposure-ks", "20", "--json"],
                   capture_output=True, text=True)
j = json.loads(r.stdout)
check(abs(j["counts"] / (1e-13 * j["rate_per_flux_absorbed_counts_s_per_erg_cm2_s"] * 2e4) - 1) < 1e-9,
      "counts = flux x rate per flux x exposure")
check(abs(j["flux_unabsorbed_erg_cm2_s"] * j["rate_per_flux_unabsorbed_counts_s_per_erg_cm2_s"] /
          j["count_rate_counts_s"] - 1) < 1e-9, "unabsorbed flux gives the same count rate")
t = subprocess.run([BIN, "rate", "--kT-keV", "5", "--flux-erg-cm2-s", "1e-13", "--exposure-ks", "20"],
                   capture_output=True, text=True).stdout
check("expected counts in 20 ks" in t and "count rate per absorbed flux" in t, "readable table")

if failures:
    print("%d failure(s)" % len(failures))
    sys.exit(1)
print("all rate checks passed")
