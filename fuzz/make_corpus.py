#!/usr/bin/python3
"""Writes the small seed corpora of the fuzz targets into fuzz/corpus/<target>/.

Run with Debian's interpreter (/usr/bin/python3: numpy, astropy). The
files are committed; rerun only when a reader learns a new layout. Every file
is a valid input (or a near-valid one) so that the mutations start inside the
parsers. The YAML seeds come from the shipped configuration examples with the
loader selector byte in front (fuzz/fuzz_entries.hpp).
"""
import io
import os
import re
import sys

import numpy as np
from astropy.io import fits

here = os.path.dirname(os.path.abspath(__file__))
src = os.path.dirname(here)
out = os.path.join(here, "corpus")


def put(target, name, data):
    d = os.path.join(out, target)
    os.makedirs(d, exist_ok=True)
    with open(os.path.join(d, name), "wb") as f:
        f.write(data)


def fits_bytes(hdul):
    b = io.BytesIO()
    hdul.writeto(b, output_verify="silentfix")
    return b.getvalue()


# ---- FITS images + WCS (Greisen & Calabretta 2002 keywords) -----------------
def tan_header(h, cd=False, proj="TAN"):
    h["CTYPE1"] = "RA---" + proj
    h["CTYPE2"] = "DEC--" + proj
    h["CRVAL1"] = 150.25
    h["CRVAL2"] = -12.5
    h["CRPIX1"] = 4.5
    h["CRPIX2"] = 3.5
    if cd:
        h["CD1_1"] = -1.2e-3
        h["CD1_2"] = 3.0e-4
        h["CD2_1"] = 3.0e-4
        h["CD2_2"] = 1.2e-3
    else:
        h["CDELT1"] = -1.0 / 720
        h["CDELT2"] = 1.0 / 720
    h["CUNIT1"] = "deg"
    h["CUNIT2"] = "deg"
    h["RADESYS"] = "ICRS"


img = np.arange(48, dtype=np.float64).reshape(6, 8)
p = fits.PrimaryHDU(img)
tan_header(p.header)
p.header["BUNIT"] = "count"
put("fits_image", "primary_tan.fits", fits_bytes(fits.HDUList([p])))

e = fits.ImageHDU(img.astype(np.float32), name="RATE")
tan_header(e.header, cd=True)
e.header["EXPOSURE"] = 1.0e4
put("fits_image", "ext_cd_matrix.fits", fits_bytes(fits.HDUList([fits.PrimaryHDU(), e])))

i16 = fits.PrimaryHDU((np.arange(30, dtype=np.int16).reshape(1, 5, 6)))
i16.header["BSCALE"] = 0.5
i16.header["BZERO"] = 100.0
i16.header["BLANK"] = 7
tan_header(i16.header, proj="SIN")
i16.header["CTYPE3"] = "FREQ"
i16.header["CRVAL3"] = 1.0
put("fits_image", "int16_scaled_blank_3d.fits", fits_bytes(fits.HDUList([i16])))

g = fits.PrimaryHDU(np.ones((4, 4), dtype=np.uint8))
g.header["CTYPE1"] = "GLAT-CAR"
g.header["CTYPE2"] = "GLON-CAR"
g.header["CRVAL1"] = 10.0
g.header["CRVAL2"] = 20.0
g.header["CDELT1"] = 0.01
g.header["CDELT2"] = 0.01
g.header["CROTA2"] = 30.0
put("fits_image", "uint8_swapped_axes_crota.fits", fits_bytes(fits.HDUList([g])))

# ---- OGIP responses (HEASARC CAL/GEN/92-002, 92-002a) -------------------------
elo = np.linspace(0.3, 2.8, 6)
ehi = elo + 0.5
arf = fits.BinTableHDU.from_columns([
    fits.Column("ENERG_LO", "E", "keV", array=elo),
    fits.Column("ENERG_HI", "E", "keV", array=ehi),
    fits.Column("SPECRESP", "E", "cm**2", array=np.linspace(100, 400, 6))], name="SPECRESP")
for k, v in (("HDUCLASS", "OGIP"), ("HDUCLAS1", "RESPONSE"), ("HDUCLAS2", "SPECRESP")):
    arf.header[k] = v
put("ogip_response", "arf.fits", fits_bytes(fits.HDUList([fits.PrimaryHDU(), arf])))

nch = 4
ebounds = fits.BinTableHDU.from_columns([
    fits.Column("CHANNEL", "J", array=np.arange(1, nch + 1)),
    fits.Column("E_MIN", "E", "keV", array=np.linspace(0.3, 2.55, nch)),
    fits.Column("E_MAX", "E", "keV", array=np.linspace(0.3, 2.55, nch) + 0.75)], name="EBOUNDS")
ebounds.header["DETCHANS"] = nch
# Variable-length groups (two groups in row 2, none in row 5).
fch = np.array([[1], [1, 3], [2], [3], np.zeros(0), [4]], dtype=object)
ncha = np.array([[2], [1, 2], [2], [2], np.zeros(0), [1]], dtype=object)
mat = np.array([[0.6, 0.4], [0.5, 0.3, 0.2], [0.7, 0.3], [0.9, 0.1], np.zeros(0), [1.0]], dtype=object)
rmf = fits.BinTableHDU.from_columns([
    fits.Column("ENERG_LO", "E", "keV", array=elo),
    fits.Column("ENERG_HI", "E", "keV", array=ehi),
    fits.Column("N_GRP", "J", array=np.array([1, 2, 1, 1, 0, 1])),
    fits.Column("F_CHAN", "PJ()", array=fch),
    fits.Column("N_CHAN", "PJ()", array=ncha),
    fits.Column("MATRIX", "PE()", array=mat)], name="MATRIX")
rmf.header["DETCHANS"] = nch
rmf.header["TLMIN4"] = 1
rmf.header["TLMAX4"] = nch
rmf.header["HDUCLAS1"] = "RESPONSE"
rmf.header["HDUCLAS2"] = "RSP_MATRIX"
put("ogip_response", "rmf_variable.fits", fits_bytes(fits.HDUList([fits.PrimaryHDU(), rmf, ebounds])))

# Fixed vectors, SPECRESP MATRIX name, EXTVER 2, with an ARF in the same file.
rmf2 = fits.BinTableHDU.from_columns([
    fits.Column("ENERG_LO", "E", "keV", array=elo[:3]),
    fits.Column("ENERG_HI", "E", "keV", array=ehi[:3]),
    fits.Column("N_GRP", "I", array=np.array([1, 1, 1])),
    fits.Column("F_CHAN", "I", array=np.array([0, 1, 2])),
    fits.Column("N_CHAN", "I", array=np.array([2, 2, 2])),
    fits.Column("MATRIX", "4E", array=np.array([[0.5, 0.5, 0, 0], [0.4, 0.6, 0, 0], [0.9, 0.1, 0, 0]]))],
    name="SPECRESP MATRIX")
rmf2.header["EXTVER"] = 2
rmf2.header["TLMIN4"] = 0
rmf2.header["DETCHANS"] = nch
eb0 = ebounds.copy()
eb0.data["CHANNEL"] = np.arange(nch)
put("ogip_response", "rsp_fixed_extver2_with_arf.fits",
    fits_bytes(fits.HDUList([fits.PrimaryHDU(), rmf2, eb0, arf.copy()])))

# ---- CSV gas cells (columns of both field maps in fuzz_entries.hpp) ----------
put("cells_csv", "internal.csv", b"""# gas cells, internal units
x,y,z,vx,vy,vz,mass,density,kT,Z,h,flags
0,0,0,10,0,-5,1e8,1e5,3.0,0.3,20,0
1.5,-2,3,0,0,0,2e8,2e5,4.5,0.25,15,1

-10,4.25,0.5,1,2,3,5e7,3e4,1.2,0.4,30,0
""")
put("cells_csv", "foreign_mesh.csv", b"""x,y,z,mass,volume,u,ne,Z,sfr,cold
0.01,0.02,0.03,1e-2,1e3,4.0e5,1.16,0.004,0,0
0.011,0.021,0.031,2e-2,2e3,6.0e5,1.17,0.002,0.5,0
0.02,0.00,-0.01,1.5e-2,1.5e3,3.0e5,1.15,0.003,0,1
0.02,0.00,-0.01,1.5e-2,1.5e3,-3.0e5,1.15,0.003,0,0
""")
put("cells_csv", "both_quoted_crlf.csv",
    b"x,y,z,mass,density,kT,Z,h,volume,u\r\n1,2,3,1e8,1e5,2,0.3,10,1e3,1e5\r\n\"4\",5,6,1e8,nan,2,0.3,10,1e3,1e5\r\n")

# ---- HDF5 gas cells: descriptions for the structured builder -------------------
# (fuzz_entries.hpp, hdf5_build): head byte, per dataset a control byte and one
# table index per element, then the attribute control bytes.
F32, F64 = 1, 9          # present, expected shape, float32 / float64
ABSENT = 0
def ds(ctrl, idx, count):
    return bytes([ctrl]) + bytes([idx]) * count if ctrl % 8 not in (0, 7) else bytes([ctrl])

rows = 4
own = bytes([rows << 1])
own += ds(F64, 1, 3 * rows)            # position: 1 kpc (table index 1)
own += ds(ABSENT, 0, 0)                # velocity (optional)
own += ds(F64, 7, rows)                # mass 1e8 Msun
own += ds(F64, 6, rows)                # density 1e5 Msun/kpc^3
own += ds(F32, 4, rows)                # kT 3 keV
own += ds(F32, 3, rows)                # metallicity 0.3 solar
own += ds(F32, 5, rows)                # support 20 kpc
own += ds(ABSENT, 0, 0)                # flags (optional)
own += bytes([2, 9]) + b"particles"    # cells/kind = "particles"
put("cells_hdf5", "own_layout.bin", own)

mesh = bytes([(3 << 1) | 0x80])        # 3 rows, BadCellPolicy::Drop
mesh += ds(F32, 0, 9) + ds(F64, 2, 9) + ds(F64, 7, 3) + bytes([F64, 6, 12, 6]) + ds(F64, 4, 3)  # density 1e5, NaN, 1e5
mesh += ds(F64, 3, 3) + ds(F64, 5, 3) + ds(17, 15, 3)   # flags as int32 255
mesh += bytes([2, 4]) + b"mesh"
put("cells_hdf5", "own_layout_mesh_nan_density.bin", mesh)

rows = 5
snap = bytes([(rows << 1) | 1])
snap += ds(F32, 5, 3 * rows)           # Coordinates 20 ckpc/h
snap += ds(F32, 0, 3 * rows)           # Velocities 0
snap += ds(F64, 19, rows)              # Masses 1e-3 x 1e10 Msun/h
snap += ds(F32, 19, rows)              # Density
snap += ds(F32, 6, rows)               # InternalEnergy 1e5 (km/s)^2
snap += ds(F32, 1, rows)               # ElectronAbundance 1
snap += ds(F32, 5, rows)               # SmoothingLength 20
snap += ds(F32, 0, rows)               # StarFormationRate 0
snap += bytes([1, 18, 0, 1, 18, 0])    # Header/Time = 0.5, Header/HubbleParam = 0.5
put("cells_hdf5", "snapshot.bin", snap)

# ---- YAML settings (selector byte: 0 project, 1 observe, 2 measure, 3 synth,
# 4 survey, 5 instrument) ---------------------------------------------------------
def yaml_text(rel):
    with open(os.path.join(src, rel), "rb") as f:
        return f.read()


inst = yaml_text("config/instruments/vasta_la.yaml")
seeds = [
    ("project_analytic_beta", 0, "config/examples/project_analytic_beta.yaml"),
    ("project_csv_cells", 0, "config/examples/project_csv_cells.yaml"),
    ("observe_cool_core", 1, "config/examples/observe_cool_core_vasta.yaml"),
    ("measure_real_image", 2, "config/examples/measure_real_image.yaml"),
    ("synth_beta_model", 3, "config/examples/beta_model.yaml"),
    ("survey_sample", 4, "config/examples/survey_sample.yaml"),
    ("instrument_vasta", 5, "config/instruments/vasta_la.yaml"),
]
for name, sel, rel in seeds:
    text = yaml_text(rel)
    # Point instrument files at the instrument.yaml written beside run.yaml.
    text = re.sub(rb"(instrument_file|instrument):( *)\S.*", rb"\1:\2instrument.yaml", text)
    text = re.sub(rb"instruments:( *)\[.*", rb"instruments:\1[instrument.yaml]", text)
    if sel in (1, 4):
        text = text.rstrip(b"\n") + b"\n#%%\n" + inst
    put("yaml_config", name + ".yaml", bytes([sel]) + text)

# Dictionary of the YAML target: every key of the shipped examples, and a few
# value tokens the loaders branch on.
keys = set()
for d in ("config/examples", "config/instruments", "demo_clusters", "demo_clusters/models"):
    for fn in sorted(os.listdir(os.path.join(src, d))):
        if fn.endswith(".yaml"):
            keys.update(re.findall(rb"^\s*-?\s*([A-Za-z_][A-Za-z0-9_]*):", yaml_text(os.path.join(d, fn)), re.M))
tokens = [k + b": " for k in sorted(keys)] + [b".inf", b"-.inf", b".nan", b"~", b"[]", b"{}", b"- ", b"&a ", b"*a",
                                              b"!!str", b"1e308", b"-1", b"0x7fffffffffffffff", b"\n  "]
with open(os.path.join(here, "yaml_config.dict"), "wb") as f:
    for t in tokens:
        f.write(b'"' + t.replace(b"\\", b"\\\\").replace(b'"', b'\\"').replace(b"\n", b"\\x0A") + b'"\n')

total = sum(os.path.getsize(os.path.join(dp, f)) for dp, _, fs in os.walk(out) for f in fs)
print("corpus: %d bytes" % total)
sys.exit(0 if total < 1 << 20 else 1)
