#!/usr/bin/env python3
"""The demo sample through `icmscope survey`, checked from the outside.

In a scratch copy of the tree: demo_clusters/make_observed.py writes the
invented observed images (one with a rotated CD-matrix WCS rewritten by
astropy, one with a point-source mask, one broken on purpose), then the demo
sample runs on two concurrent targets. Checks:

- exit status 7 and the broken observation (Brakk-6) alone in the failures
  file, with a reason naming the grid check;
- the FITS catalog read by astropy (checksums verified) holds the same
  columns and values as the CSV catalog read by Python's csv module
  (FITS Standard 4.0 binary tables; RFC 4180 CSV);
- every observed row equals, number for number, what `icmscope measure`
  reports for the same image with the same settings and seed (the survey adds
  no processing of its own);
- the peak position of the CD-matrix image: astropy's WCS (Calabretta &
  Greisen 2002) maps the catalog's peak pixel to the catalog's peak RA/Dec;
- the demo classes are the intended ones (demo_clusters/demo_sample.yaml
  header; the same intentions as tests/pipeline/test_demo_classification.cpp).
  Thresholds: w_two_class 0.01 (Pratt et al. 2009; Boehringer et al. 2010);
  Cassano et al. 2010 cuts from memory, unverified; Santos et al. 2008 limits
  from memory, unverified.
"""
import csv
import json
import math
import os
import shutil
import subprocess
import sys
import tempfile
import warnings

import numpy as np
from astropy.io import fits
from astropy.wcs import WCS

BIN = os.environ["ICMSCOPE_BIN"]
SRC = os.environ["ICMSCOPE_SOURCE_DIR"]
failures = []


def check(cond, msg):
    if not cond:
        failures.append(msg)
        print("FAIL:", msg)


def token(s):
    out = ""
    for c in s:
        if c.isalnum() or c == "_":
            out += c
        elif c == "/":
            out += "_"
        elif c == ".":
            out += "p"
        elif c == "-":
            out += "m"
        elif c == "+":
            out += "plus"
        elif c == " ":
            continue
        else:
            out += "_"
    return out


def column(name, aperture):
    centre = name in ("peak_x", "peak_y", "centroid_x", "centroid_y") or name.startswith("peak_centroid_offset")
    a = "" if centre else token(aperture)
    return token(name) + ("_" + a if a else "")


def same(a, b):
    """Exact equality of two numbers (NaN equals NaN)."""
    if a is None or b is None:
        return (a is None or (isinstance(a, float) and math.isnan(a))) and (
            b is None or (isinstance(b, float) and math.isnan(b)))
    a, b = float(a), float(b)
    return (math.isnan(a) and math.isnan(b)) or a == b


def num(text):
    return float(text) if text != "" else float("nan")


with tempfile.TemporaryDirectory() as tmp:
    tree = os.path.join(tmp, "tree")
    shutil.copytree(os.path.join(SRC, "config", "instruments"), os.path.join(tree, "config", "instruments"))
    shutil.copytree(os.path.join(SRC, "demo_clusters", "models"), os.path.join(tree, "demo_clusters", "models"))
    sample = os.path.join(tree, "demo_clusters", "demo_sample.yaml")
    shutil.copy(os.path.join(SRC, "demo_clusters", "demo_sample.yaml"), sample)
    obsdir = os.path.join(tree, "demo_out", "observed")
    r = subprocess.run(["/usr/bin/python3", os.path.join(SRC, "demo_clusters", "make_observed.py"), obsdir, BIN],
                       capture_output=True, text=True)
    if r.returncode != 0:
        print(r.stdout, r.stderr)
        sys.exit("make_observed.py failed")
    out = os.path.join(tmp, "survey")
    r = subprocess.run([BIN, "survey", sample, "--output-dir", out, "--threads", "2", "--progress", "none"],
                       capture_output=True, text=True)
    print(r.stdout[-3000:])
    check(r.returncode == 7, "exit status %d, expected 7 (one target fails on purpose)" % r.returncode)

    # Failures: Brakk-6 only, for its grid.
    with open(os.path.join(out, "demo_failures.csv"), newline="") as f:
        fails = list(csv.DictReader(f))
    check([x["target_id"] for x in fails] == ["Brakk-6"], "failures %s, expected Brakk-6 only" % fails)
    check(fails and "counts grid" in fails[0]["reason"] and "Brakk-6_exp.fits" in fails[0]["reason"],
          "Brakk-6's reason names the exposure map and the grid: %s" % (fails[0]["reason"] if fails else ""))

    # CSV (csv module) against FITS (astropy).
    with open(os.path.join(out, "demo_catalog.csv"), newline="") as f:
        reader = csv.DictReader(f)
        names = reader.fieldnames
        rows = list(reader)
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # a bad checksum is a warning in astropy
        with fits.open(os.path.join(out, "demo_catalog.fits"), checksum=True) as h:
            tab = h["CATALOG"].data
            cols = h["CATALOG"].columns
            nrows_key = h[0].header["NROWS"]
    check(len(rows) == 14 and len(tab) == 14 and nrows_key == 14,
          "rows: csv %d, fits %d, NROWS %d, expected 14 (15 targets, one broken)" % (len(rows), len(tab), nrows_key))
    check(list(cols.names) == names, "FITS and CSV column names differ")
    mismatch = 0
    for i, row in enumerate(rows):
        for c in cols:
            v = tab[c.name][i]
            if c.format.endswith("A"):
                ok = str(v).rstrip() == row[c.name].rstrip()
            elif c.format == "1K":
                ok = int(v) == int(row[c.name])
            else:
                ok = same(float(v), num(row[c.name]))
            if not ok:
                mismatch += 1
                if mismatch < 5:
                    print("mismatch", i, c.name, v, row[c.name])
    check(mismatch == 0, "%d FITS/CSV cell mismatches" % mismatch)
    byid = {r["target_id"]: r for r in rows}
    check([r["target_index"] for r in rows] == [str(k) for k in range(1, 15)], "rows in target order")

    # Observed rows against `icmscope measure` on the same images.
    cat_rows = {}
    with open(os.path.join(obsdir, "observed_catalog.csv"), newline="") as f:
        for r in csv.DictReader(row for row in f if not row.startswith("#")):
            cat_rows[r["name"]] = r
    for name in ("Varn-1", "Pellis-4", "Orrin-2"):
        c = cat_rows[name]
        row = byid[name]
        args = [BIN, "measure", "-q", "--no-table", "--counts", os.path.join(obsdir, c["counts"]),
                "--exposure", os.path.join(obsdir, c["exposure"]), "--redshift", c["redshift"],
                "--m500-msun", c["m500_msun"], "--seed", row["measure_seed"], "--realisations", row["realisations"],
                "--name", name, "--json", os.path.join(tmp, name + ".json")]
        if c["background"]:
            args += ["--background", os.path.join(obsdir, c["background"])]
        if c["background_level_counts_per_pixel"]:
            args += ["--background-level", c["background_level_counts_per_pixel"]]
        if c["mask"]:
            args += ["--mask", os.path.join(obsdir, c["mask"])]
        if c["centre_ra_deg"]:
            args += ["--centre-ra-deg", c["centre_ra_deg"], "--centre-dec-deg", c["centre_dec_deg"]]
        if c["centre_search_radius"]:
            args += ["--centre-search", c["centre_search_radius"]]
        m = subprocess.run(args, capture_output=True, text=True)
        check(m.returncode == 0, "measure %s failed: %s" % (name, m.stderr))
        if m.returncode != 0:
            continue
        with open(os.path.join(tmp, name + ".json")) as f:
            d = json.load(f)
        n = 0
        for ind in d["indicators"]:
            col = column(ind["name"], ind["aperture"])
            for key, suffix in (("corrected", ""), ("raw", "_raw"), ("p16", "_p16"), ("p84", "_p84"),
                                ("significance", "_signif")):
                n += 1
                check(same(ind[key], num(row[col + suffix])),
                      "%s %s: measure %r, survey %r" % (name, col + suffix, ind[key], row[col + suffix]))
        check(n > 100, "%s: only %d indicator values compared" % (name, n))
        for cl in d["classes"]:
            check((cl["label"] if cl["available"] else "") == row["class_" + cl["scheme"]],
                  "%s class %s: measure %s, survey %s" % (name, cl["scheme"], cl["label"], row["class_" + cl["scheme"]]))
            for k, p in cl["probability"].items():
                colp = "p_%s_%s" % (cl["scheme"], "_".join("".join(ch if ch.isalnum() else " " for ch in k.lower()).split()))
                check(same(p, num(row[colp])), "%s %s: measure %r, survey %r" % (name, colp, p, row[colp]))
        check(same(d["centre"]["peak"]["ra_deg"], num(row["peak_ra_deg"])), name + ": peak RA")
        check(same(d["centre"]["peak"]["dec_deg"], num(row["peak_dec_deg"])), name + ": peak Dec")
        check(row["centre_mode"] == d["centre"]["mode"], name + ": centre mode")

    # The rotated CD-matrix image: astropy maps the catalog's peak pixel (FITS 1-based) to its RA/Dec.
    p = byid["Pellis-4"]
    w = WCS(fits.getheader(os.path.join(obsdir, "Pellis-4_img.fits")))
    check("CD1_1" in fits.getheader(os.path.join(obsdir, "Pellis-4_img.fits")), "Pellis-4 carries a CD matrix")
    ra, dec = w.wcs_pix2world([[num(p["peak_x_raw"]), num(p["peak_y_raw"])]], 1)[0]
    check(abs(ra - num(p["peak_ra_deg"])) * math.cos(math.radians(dec)) * 3600 < 1e-6 and
          abs(dec - num(p["peak_dec_deg"])) * 3600 < 1e-6,
          "Pellis-4 peak: astropy (%.8f, %.8f), catalog (%s, %s)" % (ra, dec, p["peak_ra_deg"], p["peak_dec_deg"]))
    check(p["centre_mode"] == "found near the given guess", "Pellis-4 centre searched near the given position")
    check(num(p["peak_offset_arcsec"]) < 150.0 / (num(p["kpc_per_pixel"]) / num(p["pixel_arcsec"])) + 1e-9,
          "Pellis-4 peak within the 150 kpc search radius of the given centre")

    # Intended classes (demo_clusters/demo_sample.yaml).
    def cls(tid, scheme):
        return byid[tid]["class_" + scheme]

    for tid in ("Maren-7_z_Vasta-LA_30ks", "Varn-1"):
        for scheme in ("cassano2010", "w_two_class", "p3_two_class"):
            check(cls(tid, scheme) == "relaxed", "%s %s: %s, intended relaxed" % (tid, scheme, cls(tid, scheme)))
        check(cls(tid, "santos2008") in ("strong cool core", "moderate cool core"),
              "%s santos2008: %s, intended a cool core" % (tid, cls(tid, "santos2008")))
    check(cls("Quellin-31_z_Vasta-LA_30ks", "w_two_class") == "relaxed", "Quellin-31 relaxed by w")
    for tid in ("Kessra-13_y_Vasta-LA_30ks", "Kessra-13_z_Vasta-LA_30ks", "Pellis-4"):
        check(cls(tid, "w_two_class") == "disturbed", "%s w_two_class: %s, intended disturbed" % (tid, cls(tid, "w_two_class")))
    check(cls("Kessra-13_x_Vasta-LA_30ks", "w_two_class") == "relaxed",
          "Kessra-13 along the merger axis: the subclusters overlap, w_two_class relaxed")
    for tid in ("Ilvany-4_z_Vasta-LA_30ks", "Ilvany-4_z_Sweep-WF_30ks"):
        check(cls(tid, "cassano2010") == "disturbed", "%s cassano2010: %s, intended disturbed" % (tid, cls(tid, "cassano2010")))
    for tid in [t for t in byid if t.startswith("Tolva-2")] + ["Orrin-2"]:
        check(cls(tid, "santos2008") == "non-cool-core", "%s santos2008: %s, intended non-cool-core" % (tid, cls(tid, "santos2008")))

    # Plots and per-target products.
    for suffix in ("_c_w.png", "_c_p3.png", "_histograms.png", "_los.png"):
        pth = os.path.join(out, "demo" + suffix)
        check(os.path.getsize(pth) > 1000 if os.path.exists(pth) else False, "plot " + pth)
    for tid in byid:
        for suffix in ("_measure.png", "_measure.json"):
            check(os.path.exists(os.path.join(out, "targets", tid, tid + suffix)), tid + suffix)

if failures:
    print("%d failure(s)" % len(failures))
    sys.exit(1)
print("survey demo: all checks passed")
