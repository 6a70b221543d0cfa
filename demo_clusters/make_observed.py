#!/usr/bin/python3
"""Make the invented "observed" catalog of the demo sample.

Usage: make_observed.py OUTDIR [ICMSCOPE_BINARY]

Four mock observations are written by `icmscope observe` from the demo models
(placed at other redshifts and positions, under other invented names) and then
re-labelled with astropy as if they came from an external archive: counts in
the primary HDU, exposure map in its own file, icmscope's own keywords and
configuration history removed. One has its WCS rewritten as a rotated CD
matrix, one carries point sources and a point-source mask image, and one is
deliberately broken (its exposure map is on a different grid), so that the
survey lists it as a failure while the others complete. Finally
OUTDIR/observed_catalog.csv lists them in the survey's CSV schema.

The files are regenerated deterministically (fixed seeds); nothing here is
committed to the repository.
"""
import csv
import math
import os
import shutil
import subprocess
import sys

import numpy as np
from astropy.io import fits
from astropy.wcs import WCS

HERE = os.path.dirname(os.path.abspath(__file__))
ROOT = os.path.dirname(HERE)
OUT = os.path.abspath(sys.argv[1] if len(sys.argv) > 1 else os.path.join(HERE, "observed"))
BIN = sys.argv[2] if len(sys.argv) > 2 else os.path.join(ROOT, "build", "icmscope")
INSTR = os.path.join(ROOT, "config", "instruments", "vasta_la.yaml")
MODELS = os.path.join(HERE, "models")

# name, model, redshift, RA, Dec, M500 [Msun], exposure [ks], seed, point sources, special
OBS = [
    ("Varn-1", "maren7_cool_core.yaml", 0.11, 201.37, -8.42, 5.5e14, 30, 8101, False, "plain"),
    ("Pellis-4", "kessra13_major_merger.yaml", 0.19, 88.05, 12.77, 6.5e14, 40, 8102, False, "cd_matrix"),
    ("Orrin-2", "tolva2_non_cool_core.yaml", 0.16, 310.62, 44.10, 3.6e14, 40, 8103, True, "point_mask"),
    ("Brakk-6", "ilvany4_minor_merger.yaml", 0.27, 15.30, -30.15, 7.0e14, 20, 8104, False, "broken"),
]

KEEP = {"OBJECT", "TELESCOP", "INSTRUME", "EXPOSURE", "ONTIME", "DATE-OBS", "MJD-OBS", "RA_PNT", "DEC_PNT",
        "PA_PNT", "E_MIN", "E_MAX", "BUNIT", "CTYPE1", "CTYPE2", "CRVAL1", "CRVAL2", "CRPIX1", "CRPIX2",
        "CDELT1", "CDELT2", "CUNIT1", "CUNIT2", "RADESYS", "EQUINOX"}


def observe(name, model, z, ra, dec, exp, seed, points, work):
    run = os.path.join(work, name + ".yaml")
    ps = "{enabled: true, flux_min_erg_cm2_s: 3.0e-15}" if points else "false"
    with open(run, "w") as f:
        f.write(f"""# written by make_observed.py
target: {{name: {name}, redshift: {z}, ra_deg: {ra}, dec_deg: {dec}}}
cells: {{model: {os.path.join(MODELS, model)}, model_particles: 100000}}
emission: {{band_keV: [0.5, 2.0], nH_cm2: 3.0e20}}
map: {{pixels: 384, pixel_arcsec: 4.0}}
observation:
  instrument: {INSTR}
  exposure_ks: {exp}
  seed: {seed}
  events: false
  point_sources: {ps}
output: {{directory: {work}, prefix: {name}, quicklook: false}}
""")
    r = subprocess.run([BIN, "observe", "-q", run], capture_output=True, text=True)
    if r.returncode != 0:
        sys.exit("make_observed: icmscope observe failed for %s:\n%s%s" % (name, r.stdout, r.stderr))
    return os.path.join(work, name)


def external_header(h, name):
    """Keep the keywords an archive image would carry; drop icmscope's own."""
    out = fits.Header()
    for k in h:
        if k in KEEP:
            out[k] = h[k]
    out["OBJECT"] = name
    out["ORIGIN"] = "Invented demo archive"
    out["COMMENT"] = "Invented demo data (mock observation re-labelled as an external file)."
    return out


def to_cd(h, rot_deg):
    """Rewrite CDELT as a rotated CD matrix (Calabretta & Greisen 2002, eqs. 188-189)."""
    c1, c2 = h.pop("CDELT1"), h.pop("CDELT2")
    r = math.radians(rot_deg)
    h["CD1_1"] = c1 * math.cos(r)
    h["CD1_2"] = -c2 * math.sin(r)
    h["CD2_1"] = c1 * math.sin(r)
    h["CD2_2"] = c2 * math.cos(r)


def main():
    if os.path.isdir(OUT):
        shutil.rmtree(OUT)
    work = os.path.join(OUT, "work")
    os.makedirs(work)
    rows = []
    for name, model, z, ra, dec, m500, exp, seed, points, special in OBS:
        base = observe(name, model, z, ra, dec, exp, seed, points, work)
        with fits.open(base + "_counts.fits") as f:
            counts = f["COUNTS"].data.astype(np.int32)
            ch = external_header(f["COUNTS"].header, name)
        with fits.open(base + "_exposure.fits") as f:
            expo = f["EXPOSURE"].data.astype(np.float32)
            eh = external_header(f["EXPOSURE"].header, name)
        with fits.open(base + "_background.fits") as f:
            bkg = f["BACKGROUND"].data.astype(np.float64)
        ch["BUNIT"] = "count"
        eh["BUNIT"] = "s"
        row = {"name": name, "counts": name + "_img.fits", "exposure": name + "_exp.fits", "redshift": z,
               "m500_msun": m500}
        if special == "cd_matrix":
            to_cd(ch, 30.0)
            to_cd(eh, 30.0)
            w = WCS(ch)
            # the given centre: the cluster position, searched within 150 kpc
            row.update({"centre_ra_deg": ra, "centre_dec_deg": dec, "centre_search_radius": "150 kpc"})
            assert abs(w.wcs_pix2world([[ch["CRPIX1"], ch["CRPIX2"]]], 1)[0][0] - ra) < 1e-9
        if special == "broken":
            expo = expo[8:-8, 8:-8]  # the exposure map no longer matches the counts grid
            eh["CRPIX1"] -= 8
            eh["CRPIX2"] -= 8
        fits.PrimaryHDU(counts, ch).writeto(os.path.join(OUT, row["counts"]), checksum=True)
        fits.PrimaryHDU(expo, eh).writeto(os.path.join(OUT, row["exposure"]), checksum=True)
        if special == "point_mask":
            # mask every drawn point source with more than 15 expected counts: 4 x the PSF half-energy radius
            with fits.open(base + "_sources.fits") as f:
                src = f["SOURCES"].data
            w = WCS(ch)
            yy, xx = np.mgrid[0:counts.shape[0], 0:counts.shape[1]]
            mask = np.ones(counts.shape, dtype=np.int16)
            pix = 4.0
            n = 0
            for s in src:
                if s["EXPECTED_COUNTS"] < 15:
                    continue
                x, y = w.wcs_world2pix([[s["RA"], s["DEC"]]], 0)[0]
                mask[(xx - x) ** 2 + (yy - y) ** 2 <= (28.0 / pix) ** 2] = 0
                n += 1
            mh = fits.Header()
            for k in ("CTYPE1", "CTYPE2", "CRVAL1", "CRVAL2", "CRPIX1", "CRPIX2", "CDELT1", "CDELT2", "CUNIT1",
                      "CUNIT2", "RADESYS"):
                if k in ch:
                    mh[k] = ch[k]
            mh["OBJECT"] = name
            mh["COMMENT"] = "1 = good, 0 = point source (%d sources masked)" % n
            fits.PrimaryHDU(mask, mh).writeto(os.path.join(OUT, name + "_mask.fits"), checksum=True)
            row["mask"] = name + "_mask.fits"
            row["background_level_counts_per_pixel"] = float(np.median(bkg[expo > 0.9 * expo.max()]))
        elif special == "plain":
            bh = fits.Header()
            for k in ("CTYPE1", "CTYPE2", "CRVAL1", "CRVAL2", "CRPIX1", "CRPIX2", "CDELT1", "CDELT2", "CUNIT1",
                      "CUNIT2", "RADESYS"):
                bh[k] = ch[k]
            bh["BUNIT"] = "count"
            bh["OBJECT"] = name
            fits.PrimaryHDU(bkg.astype(np.float32), bh).writeto(os.path.join(OUT, name + "_bkg.fits"), checksum=True)
            row["background"] = name + "_bkg.fits"
        else:
            row["background_level_counts_per_pixel"] = float(np.median(bkg[expo > 0.9 * expo.max()])) if special != "broken" else 0.01
        rows.append(row)
    shutil.rmtree(work)
    cols = ["name", "counts", "exposure", "background", "background_level_counts_per_pixel", "mask", "redshift",
            "m500_msun", "centre_ra_deg", "centre_dec_deg", "centre_search_radius"]
    with open(os.path.join(OUT, "observed_catalog.csv"), "w", newline="") as f:
        f.write("# Invented demo observations (mock observations re-labelled as external files), made by\n")
        f.write("# demo_clusters/make_observed.py. Brakk-6 is broken on purpose: its exposure map is on another grid.\n")
        wr = csv.DictWriter(f, fieldnames=cols)
        wr.writeheader()
        for r in rows:
            wr.writerow({k: r.get(k, "") for k in cols})
    print("make_observed: %d observations in %s" % (len(rows), OUT))


if __name__ == "__main__":
    main()
