#!/usr/bin/env python3
"""Cross-check `icmscope plan` outputs with astropy (Debian's /usr/bin/python3).

Runs the shipped examples config/examples/plan_scaled_vasta.yaml (forward
question, analytic cluster from M500) and plan_reverse_vasta.yaml (reverse
question) and reads their CSV tables with astropy.io.ascii and the JSON with
json:
- the caution text is in every file (CSV comment, JSON field, text report,
  resolved configuration) and on the terminal;
- the scaled target names its relations and its numbers match them:
  R500 = (3 M500 / (4 pi 500 rho_crit(z)))^(1/3) with astropy's
  FlatLambdaCDM(70, 0.3) critical density; kT from the Vikhlinin et al. 2009
  (ApJ 692, 1033) M500-T relation M500 = 3.02e14 h^-1 Msun (T/5 keV)^1.53 / E(z),
  inverted (physics.md sec. 9, from memory, unverified), with astropy's E(z);
  the model's L(0.5-2 keV, < R500) equals the L-M relation's median (the
  normalisation the plan asked for);
- counts are linear in exposure, S/N = S/sqrt(S+B), B/(S+B) as tabulated, S/N
  grows as sqrt(t); class probabilities sum to 1; CSV and JSON agree;
- each reached goal's answer lies inside the exposure grid and inside its own
  bootstrap 16-84% range; the all-goals answer is the largest goal answer;
- reverse: `determined` = fraction >= confidence; the reported lowest mass per
  redshift and highest redshift per mass follow from the grid.
"""
import json
import math
import os
import subprocess
import sys
import tempfile

import numpy as np
from astropy import units as u
from astropy.cosmology import FlatLambdaCDM
from astropy.io import ascii

BIN = os.environ["ICMSCOPE_BIN"]
SRC = os.environ["ICMSCOPE_SOURCE_DIR"]
CAUTION = "Exposure requests must be confirmed with the observatory's own calibration and tools."
failures = []
n_checks = [0]


def check(cond, what):
    n_checks[0] += 1
    if not cond:
        failures.append(what)
        print("FAIL:", what)


def rel(a, b):
    return abs(a - b) / max(abs(b), 1e-300)


def run(example, out):
    p = subprocess.run([BIN, "plan", "-q", os.path.join(SRC, "config", "examples", example), "--output-dir", out],
                       capture_output=True, text=True)
    check(p.returncode == 0, f"{example}: exit {p.returncode}: {p.stderr}")
    check(CAUTION in p.stdout.replace("\n!! ", " "), f"{example}: caution on the terminal")
    return p


def caution_in(path):
    with open(path) as f:
        text = f.read()
    return CAUTION in text.replace("\n!! ", " ")


with tempfile.TemporaryDirectory() as tmp:
    # ---- forward question, scaled target ----
    out = os.path.join(tmp, "fwd")
    os.makedirs(out)
    run("plan_scaled_vasta.yaml", out)
    base = os.path.join(out, "Scaled-4e14_vasta")
    for suffix in ("_plan.csv", "_goals.csv", "_plan.json", "_plan.txt", "_config.yaml"):
        check(os.path.exists(base + suffix) and caution_in(base + suffix), f"caution in {suffix}")
    with open(base + "_plan.png", "rb") as f:
        check(f.read(8) == b"\x89PNG\r\n\x1a\n", "plot is a PNG file")
    with open(base + "_plan.json") as f:
        js = json.load(f)
    check(CAUTION in js["caution"], "JSON caution")
    tg = js["target"]
    sc = tg["scaling"]
    check(sc["mt_relation"] == "vikhlinin2009", "M-T relation named")
    check("Vikhlinin et al. 2009" in sc["mt_reference"] and "ApJ 692, 1033" in sc["mt_reference"], "M-T reference")
    check(sc["lm_relation"] == "vikhlinin2009" and "Vikhlinin et al. 2009" in sc["lm_reference"], "L-M named")
    M, z = tg["m500_msun"], tg["redshift"]
    cosmo = FlatLambdaCDM(H0=70, Om0=0.3, Tcmb0=0)
    rho_c = cosmo.critical_density(z).to(u.Msun / u.kpc ** 3).value
    r500 = (3 * M / (4 * math.pi * 500 * rho_c)) ** (1 / 3)
    print(f"R500: plan {sc['r500_kpc']:.3f} kpc, astropy {r500:.3f} kpc")
    check(rel(sc["r500_kpc"], r500) < 1e-4, f"R500 {sc['r500_kpc']} vs astropy {r500}")
    check(rel(tg["r500_kpc"], sc["r500_kpc"]) < 1e-12, "target R500 = scaling R500")
    h, Ez = 0.7, cosmo.efunc(z)
    kT = 5.0 * (M * Ez * h / 3.02e14) ** (1 / 1.53)  # Vikhlinin et al. 2009, inverted [M]
    print(f"kT: plan {sc['kT_keV']:.4f} keV, Vikhlinin et al. 2009 M-T inverted {kT:.4f} keV")
    check(rel(sc["kT_keV"], kT) < 1e-3, f"kT {sc['kT_keV']} vs {kT}")
    check(rel(sc["l_soft_erg_s"], sc["l_soft_relation_erg_s"]) < 0.01, "L(0.5-2) normalised to the L-M median")

    t = ascii.read(base + "_plan.csv", format="csv", comment="#")
    ex = np.array(t["exposure_ks"], dtype=float)
    S = np.array(t["source_counts_r500"], dtype=float)
    B = np.array(t["background_counts_r500"], dtype=float)
    sn = np.array(t["sn_r500"], dtype=float)
    check(len(t) == len(js["exposures"]) == 5, "5 exposures")
    check(np.all(np.diff(ex) > 0), "exposures increasing")
    check(np.max(np.abs(S / ex / (S[-1] / ex[-1]) - 1)) < 1e-6, "S linear in exposure")
    check(np.max(np.abs(B / ex / (B[-1] / ex[-1]) - 1)) < 1e-6, "B linear in exposure")
    check(np.max(np.abs(sn / (S / np.sqrt(S + B)) - 1)) < 1e-6, "S/N = S/sqrt(S+B)")
    check(np.max(np.abs(sn / np.sqrt(ex) / (sn[-1] / np.sqrt(ex[-1])) - 1)) < 1e-6, "S/N ~ sqrt(t)")
    check(np.max(np.abs(np.array(t["background_fraction_r500"]) - B / (S + B))) < 1e-6, "B/(S+B)")
    for scheme, classes in (("w_two_class", ("relaxed", "disturbed")), ("p3_two_class", ("relaxed", "disturbed")),
                            ("cassano2010", ("relaxed", "intermediate", "disturbed"))):
        tot = sum(np.array(t[f"P_{scheme}_{c}"], dtype=float) for c in classes)
        check(np.max(np.abs(tot - 1)) < 1e-9, f"{scheme} probabilities sum to 1")
    for i, e in enumerate(js["exposures"]):
        check(rel(e["source_counts_r500"], S[i]) < 1e-5, "CSV and JSON counts agree")
        w = [x for x in e["indicators"] if x["name"] == "w" and x["aperture"] == "R500"][0]
        check(rel(w["sigma"], float(t["w_R500_sigma"][i])) < 1e-5, "CSV and JSON sigma(w) agree")
        check(w["p16"] <= w["median"] <= w["p84"], "p16 <= median <= p84")

    g = ascii.read(base + "_goals.csv", format="csv", comment="#")
    check(len(g) == len(js["goals"]) + 1, "one row per goal plus all goals")
    answers = []
    for row, jg in zip(g[:-1], js["goals"]):
        check(row["status"] == jg["status"], "goal status CSV = JSON")
        if row["status"] == "reached":
            a = float(row["exposure_ks"])
            answers.append(a)
            check(ex[0] < a <= ex[-1], f"{row['goal']}: answer {a} inside the grid")
            check(float(row["p16_ks"]) <= a * (1 + 1e-6) and a <= float(row["p84_ks"]) * (1 + 1e-6),
                  f"{row['goal']}: answer inside its bootstrap range")
        elif row["status"] == "below_grid":
            answers.append(float(row["exposure_ks"]))
            check(float(row["exposure_ks"]) == ex[0], "below_grid answer = the shortest exposure")
    allrow = g[-1]
    if allrow["status"] in ("reached", "below_grid") and answers:
        check(rel(float(allrow["exposure_ks"]), max(answers)) < 1e-6, "all goals = the largest answer")

    # ---- reverse question ----
    out = os.path.join(tmp, "rev")
    os.makedirs(out)
    run("plan_reverse_vasta.yaml", out)
    base = os.path.join(out, "Scaled-grid_reverse")
    check(caution_in(base + "_reverse.csv"), "caution in the reverse CSV")
    with open(base + "_reverse.png", "rb") as f:
        check(f.read(8) == b"\x89PNG\r\n\x1a\n", "reverse plot is a PNG file")
    with open(base + "_plan.json") as f:
        rv = json.load(f)["reverse"]
    check(rv["mt_relation"] == "arnaud2005_all" and "Arnaud" in rv["mt_reference"], "reverse M-T named")
    r = ascii.read(base + "_reverse.csv", format="csv", comment="#")
    Ms, zs = rv["m500_msun"], rv["redshift"]
    check(len(r) == len(Ms) * len(zs), "one row per grid point")
    det = {}
    for row in r:
        d = bool(int(row["determined"]))
        check(d == (float(row["fraction"]) >= rv["confidence"]), "determined = fraction >= confidence")
        det[(float(row["redshift"]), float(row["m500_msun"]))] = d
    for iz, zz in enumerate(zs):
        lowest = None
        for M in reversed(Ms):
            if not det[(zz, M)]:
                break
            lowest = M
        got = rv["min_m500_msun_at_redshift"][iz]
        check((lowest is None and got is None) or (got is not None and rel(got, lowest) < 1e-9),
              f"lowest mass at z = {zz}")
    # Between grid points: the fraction is interpolated linearly in log M500 between the last undetermined and the
    # first determined mass (common practice: linear interpolation of a monotonic metric); recomputed here.
    frac = {(float(row["redshift"]), float(row["m500_msun"])): float(row["fraction"]) for row in r}
    for iz, zz in enumerate(zs):
        lowest = rv["min_m500_msun_at_redshift"][iz]
        got = rv["min_m500_msun_at_redshift_interpolated"][iz]
        if lowest is None:
            check(got is None, f"no interpolated mass at z = {zz} when none is determined")
            continue
        k = Ms.index(lowest)
        if k == 0:
            check(rv["min_m500_at_grid_edge"][iz] and rel(got, lowest) < 1e-12, f"grid edge at z = {zz}")
            continue
        f0, f1 = frac[(zz, Ms[k - 1])], frac[(zz, Ms[k])]
        t = min(max((rv["confidence"] - f0) / (f1 - f0), 0.0), 1.0) if f1 != f0 else 1.0
        want = math.exp(math.log(Ms[k - 1]) + t * (math.log(Ms[k]) - math.log(Ms[k - 1])))
        check(rel(got, want) < 1e-6 and Ms[k - 1] <= got * (1 + 1e-9) and got <= Ms[k] * (1 + 1e-9),  # 9-digit files
              f"interpolated lowest mass at z = {zz}: {got:.4g} vs {want:.4g}")
    check(len(rv["max_redshift_at_m500_interpolated"]) == len(Ms), "one interpolated redshift per mass")
    # The scaled clusters of the grid: R500 from astropy, as above.
    for row in r:
        rc = cosmo.critical_density(float(row["redshift"])).to(u.Msun / u.kpc ** 3).value
        r5 = (3 * float(row["m500_msun"]) / (4 * math.pi * 500 * rc)) ** (1 / 3)
        check(rel(float(row["r500_kpc"]), r5) < 1e-4, "reverse grid R500 vs astropy")

print(f"{n_checks[0] - len(failures)} passed, {len(failures)} failed")
sys.exit(1 if failures else 0)
