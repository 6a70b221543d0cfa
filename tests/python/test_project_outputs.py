#!/usr/bin/env python3
"""Cross-check `icmscope project` outputs with astropy (Debian's /usr/bin/python3).

- every map HDU's WCS read by astropy: the reference pixel at the target RA/Dec
  within 0.01 arcsec, pixel scale within 1e-6 relative (FITS WCS Paper II,
  Calabretta & Greisen 2002, TAN projection);
- checksums valid (astropy checksum=True);
- BUNIT strings parse as astropy units (OGIP/93-001 style, FITS standard 3.0);
- a user emissivity table written by astropy in icmscope's documented layout is
  read by `project` and gives the count-rate map expected from the table
  (photon flux = sum_bins EM * eps_bin / (4 pi D_L^2) for z -> rest band, no absorption).
"""
import os
import subprocess
import sys
import tempfile
import warnings

import numpy as np
from astropy.io import fits
from astropy.wcs import WCS
from astropy import units as u
from astropy.cosmology import FlatLambdaCDM

BIN = os.environ["ICMSCOPE_BIN"]
SRC = os.environ["ICMSCOPE_SOURCE_DIR"]
failures = []


def check(cond, msg):
    if not cond:
        failures.append(msg)
        print("FAIL:", msg)


def run(args, cwd):
    r = subprocess.run([BIN] + args, cwd=cwd, capture_output=True, text=True)
    if r.returncode != 0:
        print(r.stdout, r.stderr)
        raise SystemExit("icmscope failed: %s" % " ".join(args))
    return r


def write_yaml(path, text):
    with open(path, "w") as f:
        f.write(text)


with tempfile.TemporaryDirectory() as tmp:
    model = os.path.join(tmp, "beta.yaml")
    write_yaml(model, """
name: wcs-check
seed: 7
n_particles: 20000
components:
  - name: main
    r_max_kpc: 1500
    density: {profile: beta, r_c_kpc: 120, beta: 0.66, n_e0_cm3: 5.0e-3}
    temperature: {profile: isothermal, kT_keV: 4.0}
    metallicity: {profile: constant, Z_solar: 0.3}
""")
    for ra, dec in [(150.25, 2.4), (359.99, -45.0), (12.0, 84.5)]:
        run_yaml = os.path.join(tmp, "run.yaml")
        write_yaml(run_yaml, f"""
target: {{name: wcs-check, redshift: 0.2, ra_deg: {ra}, dec_deg: {dec}}}
cells: {{model: beta.yaml}}
map: {{pixels: 64, pixels_y: 48, pixel_arcsec: 5.0}}
output: {{directory: out, quicklook: false}}
""")
        run(["project", "-q", run_yaml], tmp)
        path = os.path.join(tmp, "out", "wcs-check_maps.fits")
        with warnings.catch_warnings():
            warnings.simplefilter("error")  # a checksum warning becomes an error
            hdul = fits.open(path, checksum=True)
        names = [h.name for h in hdul[1:]]
        check(names == ["RATE", "SB_ENERGY", "EM", "T_EW", "T_SL", "T_MW", "GAS_MASS"], "HDU names %s" % names)
        check(any("CONFIG" in str(c) for c in hdul[0].header.get("HISTORY", [])), "resolved config in HISTORY")
        for h in hdul[1:]:
            w = WCS(h.header)
            ny, nx = h.data.shape
            check((nx, ny) == (64, 48), "shape %s" % (h.data.shape,))
            # reference pixel: FITS (crpix1, crpix2) is 0-based (crpix - 1) in astropy.
            c = w.pixel_to_world(h.header["CRPIX1"] - 1, h.header["CRPIX2"] - 1)
            from astropy.coordinates import SkyCoord
            sep = c.separation(SkyCoord(ra * u.deg, dec * u.deg, frame="icrs")).arcsec
            check(sep < 0.01, "%s: reference pixel %.3g arcsec from the target" % (h.name, sep))
            check(abs(h.header["CRPIX1"] - 32.5) < 1e-12 and abs(h.header["CRPIX2"] - 24.5) < 1e-12,
                  "reference pixel is the image centre")
            scales = w.proj_plane_pixel_scales()
            for s in scales:
                check(abs(s.to(u.arcsec).value / 5.0 - 1) < 1e-6, "%s: pixel scale %r" % (h.name, s))
            try:
                u.Unit(h.header["BUNIT"], format="fits")
            except ValueError:
                check(False, "BUNIT %r does not parse" % h.header["BUNIT"])
        hdul.close()

    # --- user emissivity table in icmscope's layout, written by astropy ---
    kT = np.array([1.0, 2.0, 4.0, 8.0])
    Z = np.array([0.0, 1.0])
    E_lo = np.linspace(0.2, 11.8, 59)
    E_hi = E_lo + 0.2
    # A smooth invented emissivity: (1 + Z) T^-1/2 exp(-E/T) per keV, integrated over each bin.
    def eps(T, Zs):
        return (1 + Zs) * 1e-15 * T ** -0.5 * T * (np.exp(-E_lo / T) - np.exp(-E_hi / T))
    cube = np.array([[eps(T, z) for z in Z] for T in kT])  # [iT][iZ][iE]
    prim = fits.PrimaryHDU()
    hk = fits.BinTableHDU.from_columns([fits.Column(name="KT_KEV", format="D", array=kT, unit="keV")], name="KT_GRID")
    hz = fits.BinTableHDU.from_columns([fits.Column(name="Z_SOLAR", format="D", array=Z)], name="Z_GRID")
    he = fits.BinTableHDU.from_columns([fits.Column(name="E_LO_KEV", format="D", array=E_lo, unit="keV"),
                                        fits.Column(name="E_HI_KEV", format="D", array=E_hi, unit="keV")],
                                       name="ENERGY_BINS")
    himg = fits.ImageHDU(cube, name="EMISSIVITY")
    himg.header["BUNIT"] = "photon cm3 / s"
    tab = os.path.join(tmp, "emis.fits")
    fits.HDUList([prim, hk, hz, he, himg]).writeto(tab, overwrite=True)
    write_yaml(os.path.join(tmp, "iso.yaml"), """
name: table-check
seed: 3
n_particles: 5000
components:
  - name: main
    r_max_kpc: 1000
    density: {profile: beta, r_c_kpc: 100, beta: 0.7, n_e0_cm3: 4.0e-3}
    temperature: {profile: isothermal, kT_keV: 4.0}
    metallicity: {profile: constant, Z_solar: 1.0}
""")
    z = 0.25
    write_yaml(os.path.join(tmp, "tab.yaml"), f"""
target: {{name: table-check, redshift: {z}}}
cells: {{model: iso.yaml}}
emission: {{model: table, table_file: emis.fits, band_keV: [{1.0/(1+z)}, {6.0/(1+z)}], nH_cm2: 0}}
map: {{pixels: 256, pixel_arcsec: 30.0, kernel: point}}
output: {{directory: out_tab, quicklook: false}}
""")
    run(["project", "-q", "tab.yaml"], tmp)
    with fits.open(os.path.join(tmp, "out_tab", "table-check_maps.fits")) as h:
        rate = h["RATE"].data.sum()
        em = h["EM"].data.sum()
    # Rest band 1-6 keV = bins 4..28 exactly (0.2-keV bins from 0.2 keV), T = 4 keV node, Z = 1 node.
    sel = (E_lo >= 1.0 - 1e-9) & (E_hi <= 6.0 + 1e-9)
    band_eps = cube[2, 1, sel].sum()
    dl = FlatLambdaCDM(H0=70, Om0=0.3, Tcmb0=0).luminosity_distance(z).to(u.cm).value
    # Photon flux from the rest band: F = (1+z) * EM * eps_band / (4 pi D_L^2) (physics.md section 5:
    # (1+z)^2 / (4 pi D_L^2) times eps per observed energy, dE_rest = (1+z) dE_obs).
    expect = (1 + z) * em * band_eps / (4 * np.pi * dl ** 2)
    check(abs(rate / expect - 1) < 2e-3, "table rate %.6g vs expected %.6g" % (rate, expect))

if failures:
    print("%d failure(s)" % len(failures))
    sys.exit(1)
print("all project-output cross-checks passed")
