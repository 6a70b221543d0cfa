#!/usr/bin/env python3
"""Cross-check `icmscope observe` outputs with astropy (Debian's /usr/bin/python3).

For every demo model through every instrument preset (small runs):
- every image HDU (COUNTS, EXPOSURE*, BACKGROUND, PARTICLE, SKY, MODEL, CLUSTER,
  POINTS, RATE_ONAXIS, T_EW, SPECTRUM_INDEX) opens with valid checksums, BUNIT
  parses as an astropy unit, and all carry the same TAN WCS (FITS WCS Paper II,
  Calabretta & Greisen 2002);
- the EVENTS table's column WCS (TCTYP/TCRVL/TCRPX/TCDLT/TCUNI on X/Y, the
  pixel-list convention of Greisen & Calabretta 2002) read by astropy maps X/Y
  to the RA/DEC columns within 1e-6 arcsec, and equals the image WCS;
- X/Y carry TLMIN = 0.5, TLMAX = N + 0.5; the image binned from the event list
  with those limits equals the COUNTS image exactly; PI lies in TLMIN..TLMAX;
  TIME lies in the GTI; TSTART/TSTOP/EXPOSURE/MJDREF/TIMESYS present
  (OGIP/94-003 event-list conventions);
- the point-source truth list's RA/DEC and X/Y agree through the image WCS.
Then an instrument given by OGIP files written here with astropy (a SPECRESP
ARF, CAL/GEN/92-002, and a diagonal MATRIX RMF with EBOUNDS):
- `rate` through the ARF equals `rate` through the same curve given as an
  inline table (the ARF's bin centres), to 1e-6;
- the events' PI channels are the EBOUNDS channels of their energies (a
  diagonal matrix redistributes nothing).
"""
import glob
import os
import re
import subprocess
import sys
import tempfile
import warnings

import numpy as np
from astropy import units as u
from astropy.io import fits
from astropy.wcs import WCS

BIN = os.environ["ICMSCOPE_BIN"]
SRC = os.environ["ICMSCOPE_SOURCE_DIR"]
failures = []
n_checks = [0]


def check(cond, msg):
    n_checks[0] += 1
    if not cond:
        failures.append(msg)
        print("FAIL:", msg)


def run(args, cwd):
    r = subprocess.run([BIN] + args, cwd=cwd, capture_output=True, text=True)
    if r.returncode != 0:
        print(r.stdout, r.stderr)
        raise SystemExit("icmscope failed: %s" % " ".join(args))
    return r


def top_key(text, key):
    m = re.search(r"(?m)^%s:\s*([^#\n]+)" % key, text)
    return m.group(1).strip() if m else None


def fov_arcmin(preset):
    with open(preset) as f:
        return float(re.search(r"(?m)^\s+fov_arcmin:\s*([0-9.]+)", f.read()).group(1))


def open_checked(path):
    with warnings.catch_warnings():
        warnings.simplefilter("error")  # checksum or WCS-fix warnings become errors
        return fits.open(path, checksum=True)


def same_wcs(h1, h2, what):
    for k in ("CTYPE1", "CTYPE2", "CRPIX1", "CRPIX2", "CRVAL1", "CRVAL2", "CDELT1", "CDELT2"):
        check(h1[k] == h2[k], "%s: %s %r != %r" % (what, k, h1[k], h2[k]))


def check_observation(base, n):
    imgs = {}
    for suffix, hdus in [("counts", ["COUNTS"]), ("exposure", ["EXPOSURE", "EXPOSURE_AREA", "EXPOSURE_AREA_SKY"]),
                         ("background", ["BACKGROUND", "PARTICLE", "SKY"]),
                         ("model", ["MODEL", "CLUSTER", "POINTS", "RATE_ONAXIS", "T_EW", "SPECTRUM_INDEX"])]:
        with open_checked("%s_%s.fits" % (base, suffix)) as hd:
            hist = [str(c) for c in hd[0].header.get("HISTORY", [])]
            check(any(h.startswith("CONFIG") for h in hist), "%s_%s: CONFIG history" % (base, suffix))
            check(any(h.startswith("INSTRUMENT") for h in hist), "%s_%s: INSTRUMENT history" % (base, suffix))
            for name in hdus:
                h = hd[name]
                imgs[name] = (h.header.copy(), h.data.astype(float))
                check(h.data.shape == (n, n), "%s %s shape %s" % (base, name, h.data.shape))
                bunit = h.header.get("BUNIT", "")
                if bunit:
                    u.Unit(bunit, format="fits")
    ref = imgs["COUNTS"][0]
    for name, (hdr, _) in imgs.items():
        same_wcs(ref, hdr, "%s %s vs COUNTS" % (base, name))
    counts = imgs["COUNTS"][1]
    model = imgs["MODEL"][1]
    bkg = imgs["BACKGROUND"][1]
    check(np.allclose(bkg, imgs["PARTICLE"][1] + imgs["SKY"][1], rtol=1e-12, atol=0), base + ": BACKGROUND = PARTICLE + SKY")
    check(np.allclose(model, imgs["CLUSTER"][1] + imgs["POINTS"][1] + bkg, rtol=1e-9, atol=1e-12),
          base + ": MODEL = CLUSTER + POINTS + BACKGROUND")
    # Totals: Poisson within 5 sigma.
    check(abs(counts.sum() - model.sum()) < 5 * np.sqrt(model.sum()) + 5, base + ": counts total vs model")
    # Nothing outside the field: exposure zero -> no counts.
    expo = imgs["EXPOSURE"][1]
    check(np.all(counts[expo == 0] == 0), base + ": counts where the exposure is zero")

    with open_checked(base + "_events.fits") as ev:
        h = ev["EVENTS"].header
        d = ev["EVENTS"].data
        cols = [c.upper() for c in ev["EVENTS"].columns.names]
        ix, iy = cols.index("X") + 1, cols.index("Y") + 1
        check(h["TLMIN%d" % ix] == 0.5 and h["TLMAX%d" % ix] == n + 0.5, base + ": TLMIN/TLMAX of X")
        check(h["TLMIN%d" % iy] == 0.5 and h["TLMAX%d" % iy] == n + 0.5, base + ": TLMIN/TLMAX of Y")
        for k in ("TSTART", "TSTOP", "EXPOSURE", "MJDREF", "TIMESYS", "TELESCOP", "INSTRUME"):
            check(k in h, base + ": EVENTS keyword " + k)
        check(ev["EVENTS"].columns["TIME"].format == "D", base + ": TIME is 1D")
        check(ev["EVENTS"].columns["PI"].format == "J", base + ": PI is 1J")
        w = WCS(h, keysel=["pixel"], colsel=[ix, iy])
        check(w.wcs.ctype[0] == "RA---TAN" and w.wcs.ctype[1] == "DEC--TAN", base + ": column WCS types")
        if len(d):
            ra, dec = w.wcs_pix2world(d["X"], d["Y"], 1)
            dra = (ra - d["RA"] + 180.0) % 360.0 - 180.0
            check(np.max(np.abs(dra * np.cos(np.radians(dec)))) * 3600 < 1e-6, base + ": RA of X/Y via column WCS")
            check(np.max(np.abs(dec - d["DEC"])) * 3600 < 1e-6, base + ": DEC of X/Y via column WCS")
            # Column WCS == image WCS: the same pixel maps to the same sky position.
            wi = WCS(ref)
            ra2, dec2 = wi.wcs_pix2world(d["X"][:1000], d["Y"][:1000], 1)
            check(np.max(np.abs(ra2 - ra[:1000])) * 3600 < 1e-6 and np.max(np.abs(dec2 - dec[:1000])) * 3600 < 1e-6,
                  base + ": event WCS equals image WCS")
            ip = cols.index("PI") + 1
            check(d["PI"].min() >= h["TLMIN%d" % ip] and d["PI"].max() <= h["TLMAX%d" % ip], base + ": PI in range")
            gti = ev["GTI"].data
            check(np.all(d["TIME"] >= gti["START"][0]) and np.all(d["TIME"] <= gti["STOP"][-1]), base + ": TIME in GTI")
            check(np.all(np.diff(d["TIME"]) >= 0), base + ": events sorted by time")
            check(h["EXPOSURE"] <= h["ONTIME"] + 1e-9 and abs(h["TSTOP"] - gti["STOP"][-1]) < 1e-9, base + ": exposure")
        H, _, _ = np.histogram2d(d["Y"], d["X"], bins=[n, n],
                                 range=[[h["TLMIN%d" % iy], h["TLMAX%d" % iy]], [h["TLMIN%d" % ix], h["TLMAX%d" % ix]]])
        check(np.array_equal(H, counts), base + ": binned events == COUNTS")

    if os.path.exists(base + "_sources.fits"):
        with open_checked(base + "_sources.fits") as s:
            t = s["SOURCES"].data
            if len(t):
                wi = WCS(ref)
                ra, dec = wi.wcs_pix2world(t["X"], t["Y"], 1)
                check(np.max(np.abs(((ra - t["RA"] + 180) % 360) - 180)) * 3600 < 1e-6 and
                      np.max(np.abs(dec - t["DEC"])) * 3600 < 1e-6, base + ": source positions")
                check(np.all(t["FLUX"] >= s["SOURCES"].header["SMIN"]), base + ": source fluxes above the limit")


with tempfile.TemporaryDirectory() as tmp:
    models = sorted(glob.glob(os.path.join(SRC, "demo_clusters", "models", "*.yaml")))
    presets = sorted(glob.glob(os.path.join(SRC, "config", "instruments", "*.yaml")))
    check(len(models) >= 5 and len(presets) >= 3, "models and presets found")
    n = 48
    for m in models:
        text = open(m).read()
        z, ra, dec = top_key(text, "redshift"), top_key(text, "ra_deg") or "0", top_key(text, "dec_deg") or "0"
        for p in presets:
            name = os.path.basename(m)[:-5] + "_" + os.path.basename(p)[:-5]
            pix = fov_arcmin(p) * 60 * 1.2 / n
            with open(os.path.join(tmp, name + ".yaml"), "w") as f:
                f.write(f"""
target: {{name: {name}, redshift: {z}, ra_deg: {ra}, dec_deg: {dec}}}
cells: {{model: '{m}', model_particles: 6000}}
emission: {{table_kT_points: 32, table_Z_points: 2}}
map: {{pixels: {n}, pixel_arcsec: {pix}}}
observation: {{instrument: '{p}', exposure_ks: 3, seed: 5, roll_deg: 20,
               point_sources: {{enabled: true, flux_min_erg_cm2_s: 5.0e-15}}}}
output: {{directory: out, quicklook: false}}
""")
            run(["observe", "-q", name + ".yaml"], tmp)
            check_observation(os.path.join(tmp, "out", name), n)

    # ---- an instrument from OGIP files written by astropy ----
    lo = np.linspace(0.1, 11.99, 400)
    hi = np.append(lo[1:], 12.0)
    mid = 0.5 * (lo + hi)
    area = 300.0 * np.exp(-0.5 * (np.log10(mid / 1.4) / 0.3) ** 2)
    arf = fits.BinTableHDU.from_columns([fits.Column("ENERG_LO", "E", "keV", array=lo),
                                         fits.Column("ENERG_HI", "E", "keV", array=hi),
                                         fits.Column("SPECRESP", "E", "cm**2", array=area)], name="SPECRESP")
    arf.header["HDUCLASS"] = "OGIP"
    arf.header["HDUCLAS1"] = "RESPONSE"
    arf.header["HDUCLAS2"] = "SPECRESP"
    fits.HDUList([fits.PrimaryHDU(), arf]).writeto(os.path.join(tmp, "test.arf"))
    # Diagonal RMF: 1190 channels of 10 eV from 0.1 keV, one energy bin per channel.
    ne = 1190
    elo = 0.1 + 0.01 * np.arange(ne)
    ehi = elo + 0.01
    mat = fits.BinTableHDU.from_columns([
        fits.Column("ENERG_LO", "E", "keV", array=elo), fits.Column("ENERG_HI", "E", "keV", array=ehi),
        fits.Column("N_GRP", "J", array=np.ones(ne, dtype=np.int32)),
        fits.Column("F_CHAN", "J", array=np.arange(ne, dtype=np.int32) + 1),
        fits.Column("N_CHAN", "J", array=np.ones(ne, dtype=np.int32)),
        fits.Column("MATRIX", "E", array=np.ones(ne, dtype=np.float32))], name="MATRIX")
    mat.header["TLMIN4"] = 1
    mat.header["DETCHANS"] = ne
    mat.header["CHANTYPE"] = "PI"
    eb = fits.BinTableHDU.from_columns([fits.Column("CHANNEL", "J", array=np.arange(ne, dtype=np.int32) + 1),
                                        fits.Column("E_MIN", "E", "keV", array=elo),
                                        fits.Column("E_MAX", "E", "keV", array=ehi)], name="EBOUNDS")
    fits.HDUList([fits.PrimaryHDU(), mat, eb]).writeto(os.path.join(tmp, "test.rmf"))
    common = """detector: {fov_shape: square, fov_arcmin: 10, pixel_arcsec: 1, chips: [2, 1], chip_gap_arcsec: 15}
psf: {kind: gaussian, fwhm_arcsec: 5}
particle_background: {level_counts_s_keV_arcmin2: 1.0e-3}
sky_background: {cxb: {enabled: true}}
"""
    with open(os.path.join(tmp, "ogip.yaml"), "w") as f:
        f.write("instrument: {name: OGIP-Test}\neffective_area: {kind: ogip, file: test.arf}\n"
                "response: {kind: ogip, file: test.rmf}\n" + common)
    with open(os.path.join(tmp, "table.yaml"), "w") as f:
        f.write("instrument: {name: Table-Test}\neffective_area:\n  kind: table\n  energy_keV: [%s]\n  area_cm2: [%s]\n"
                % (", ".join("%.9g" % np.float32(x) for x in (lo.astype(np.float32) + hi.astype(np.float32)) / 2),
                   ", ".join("%.9g" % x for x in area.astype(np.float32))) + common)
    import json
    rates = []
    for inst in ("ogip.yaml", "table.yaml"):
        r = run(["rate", "--kT-keV", "4", "--redshift", "0.1", "--instrument", inst, "--json"], tmp)
        rates.append(json.loads(r.stdout)["rate_per_flux_absorbed_counts_s_per_erg_cm2_s"])
    check(abs(rates[0] / rates[1] - 1) < 1e-6, "ARF vs inline table rate: %r" % rates)
    with open(os.path.join(tmp, "ogip_run.yaml"), "w") as f:
        f.write(f"""
target: {{name: ogip, redshift: 0.1, ra_deg: 200, dec_deg: 30}}
cells: {{model: '{models[0]}', model_particles: 6000}}
emission: {{band_keV: [0.5, 7.0], table_kT_points: 32, table_Z_points: 2}}
map: {{pixels: 64, pixel_arcsec: 12}}
observation: {{instrument: ogip.yaml, exposure_ks: 10, seed: 9}}
output: {{directory: out, prefix: ogip, quicklook: false}}
""")
    run(["observe", "-q", "ogip_run.yaml"], tmp)
    check_observation(os.path.join(tmp, "out", "ogip"), 64)
    with fits.open(os.path.join(tmp, "out", "ogip_events.fits")) as ev:
        d = ev["EVENTS"].data
        ip = [c.upper() for c in ev["EVENTS"].columns.names].index("PI") + 1
        check(ev["EVENTS"].header["TLMIN%d" % ip] == 1 and ev["EVENTS"].header["TLMAX%d" % ip] == ne,
              "PI TLMIN/TLMAX = RMF channel range")
        photons = d["COMPONENT"] != 3
        expect = np.floor((d["ENERGY"][photons].astype(float) - 0.1) / 0.01 + 1e-9).astype(int) + 1
        agree = np.mean(expect == d["PI"][photons])
        check(agree > 0.999, "diagonal RMF: PI = EBOUNDS channel of the energy (%.5f agree)" % agree)
        print("diagonal RMF: %d photon events, PI agrees for a fraction %.6f; ARF / table rate - 1 = %.2e"
              % (photons.sum(), agree, rates[0] / rates[1] - 1))

if failures:
    print("%d failure(s)" % len(failures))
    sys.exit(1)
print("all %d observe output checks passed" % n_checks[0])
