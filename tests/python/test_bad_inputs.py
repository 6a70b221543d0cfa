#!/usr/bin/env python3
"""Bad-input catalog: every verb refuses broken input cleanly.

Runs the real binary (env ICMSCOPE_BIN, ICMSCOPE_SOURCE_DIR, ICMSCOPE_BINARY_DIR) on a table of bad
inputs crafted here with astropy / numpy / h5py (Debian's /usr/bin/python3) in a scratch folder under
ICMSCOPE_BINARY_DIR. For each case (project policy, README "Usage" and core/errors.hpp):
- the exit status is the documented one: ConfigError 2 (a YAML or command-line setting), InputError 3
  (an input file unreadable, malformed or holding unusable data), OutputError 4 (an output cannot be
  written), DomainError 5; a survey whose every target fails exits 7 (README, "Resume and failures");
  A settings file (a YAML file, a CSV listing of a sample) that cannot be opened is a configuration error
  (2), as the sample's unreadable listing is in the README; data files (FITS, HDF5, cells CSV) give 3. A
  centre given on the sky that the image does not cover is a property of the input image (3);
- stderr is exactly one line, `icmscope <verb>: error: ...`: no stack trace, no multi-line dump. The verbs
  run with -q where they have it (synth, project, observe, measure, survey), because their progress lines
  (`measure: redshift 0.08 from ...`) go to stderr too; `rate` has no -q and prints nothing else;
- the line names the file, key or field (regular expressions below) and what was expected;
- the case folder holds no new file or folder afterwards: no partial output, no temporary file.
  Exception, by design: the survey whose every target fails writes its output folder (records, logs,
  the failures file naming each target and its reason, summary, empty catalog); that case checks the
  failures file instead and that no temporary file is left there.

Unwritable outputs: the tests run as root, so chmod cannot make a folder unwritable. Two tricks that
hold for root too: a path whose parent is a regular file (mkdir/open fail with ENOTDIR), and a path
under /proc (the kernel refuses to create files there).
"""
import os
import re
import shutil
import subprocess
import sys
import time

import h5py
import numpy as np
from astropy.io import fits

BIN = os.environ["ICMSCOPE_BIN"]
SRC = os.environ["ICMSCOPE_SOURCE_DIR"]
SCRATCH = os.path.join(os.environ.get("ICMSCOPE_BINARY_DIR", "/tmp"), "test_scratch", "bad_inputs")
MODELS = os.path.join(SRC, "demo_clusters", "models")
VASTA = os.path.join(SRC, "config", "instruments", "vasta_la.yaml")
TINY_CSV = os.path.join(SRC, "config", "examples", "data", "tiny_cells.csv")
BASE = os.path.join(SCRATCH, "base")
ENV = dict(os.environ, OMP_NUM_THREADS="2")
failures = []


def run(args, cwd, check=True):
    r = subprocess.run([BIN] + args, cwd=cwd, capture_output=True, text=True, env=ENV, timeout=300)
    if check and r.returncode != 0:
        print(r.stdout, r.stderr)
        sys.exit("setup failed: icmscope %s" % " ".join(args))
    return r


def write(path, text):
    with open(path, "w") as f:
        f.write(text)


# ---------------------------------------------------------------------------------------------------
# Good base products (read-only inputs of the cases): one small observation, one small model cells
# file, one small map file of `project`.
# ---------------------------------------------------------------------------------------------------
def make_base():
    shutil.rmtree(SCRATCH, ignore_errors=True)
    os.makedirs(BASE)
    write(os.path.join(BASE, "obs.yaml"), f"""target: {{name: Maren-7, redshift: 0.08, ra_deg: 148.62, dec_deg: 21.37}}
cells: {{model: {MODELS}/maren7_cool_core.yaml, model_particles: 20000}}
emission: {{band_keV: [0.5, 2.0], nH_cm2: 2.5e20}}
map: {{pixels: 96, pixel_arcsec: 16.0}}
observation: {{instrument: {VASTA}, exposure_ks: 10, seed: 7, events: false}}
output: {{directory: ., prefix: M7, quicklook: false}}
""")
    run(["observe", "obs.yaml", "-q"], BASE)
    run(["synth", os.path.join(MODELS, "tolva2_non_cool_core.yaml"), "-o", "cells.h5", "-n", "3000", "-q"], BASE)
    write(os.path.join(BASE, "maps.yaml"), f"""target: {{name: Tolva-2, redshift: 0.15, ra_deg: 10.0, dec_deg: -5.0}}
cells: {{model: {MODELS}/tolva2_non_cool_core.yaml, model_projection: analytic}}
map: {{pixels: 48, pixel_arcsec: 20.0}}
output: {{directory: ., prefix: T2, quicklook: false}}
""")
    run(["project", "maps.yaml", "-q"], BASE)


def counts_fits():
    return os.path.join(BASE, "M7_counts.fits")


def exposure_fits():
    return os.path.join(BASE, "M7_exposure.fits")


def variant(src, dst, extname, fn):
    """Copy FITS file src to dst with fn(hdu) applied to the HDU named extname."""
    with fits.open(src) as hl:
        hl[extname].data  # load before the file closes
        fn(hl[extname])
        hl.writeto(dst, overwrite=True, output_verify="silentfix")


def strip_wcs(h):
    for k in list(h.header.keys()):
        if re.match(r"^(CTYPE|CRVAL|CRPIX|CDELT|CUNIT|CD\d_\d|PC\d_\d|CROTA|LONPOLE|LATPOLE|RADESYS|EQUINOX|WCSAXES)", k):
            del h.header[k]


def set_keys(**kv):
    def fn(h):
        for k, v in kv.items():
            h.header[k] = v
    return fn


def scale_data(factor):
    def fn(h):
        h.data = (h.data * factor).astype(h.data.dtype)
    return fn


def set_pixels(value, n=5):
    def fn(h):
        d = h.data.astype(np.float64)
        d.flat[:n] = value
        h.data = d
    return fn


def all_pixels(value):
    def fn(h):
        h.data = np.full_like(h.data, value, dtype=np.float64)
    return fn


def truncated(src, dst, keep_fraction=0.5):
    data = open(src, "rb").read()
    with open(dst, "wb") as f:
        f.write(data[: int(len(data) * keep_fraction)])


def zero_size_image(dst):
    """A COUNTS image HDU whose axes have length 0 (NAXIS1 = NAXIS2 = 0), WCS otherwise intact."""
    with fits.open(counts_fits()) as hl:
        hdr = hl["COUNTS"].header.copy()
    hdu = fits.ImageHDU(header=hdr, name="COUNTS")
    hdu.data = None
    hdu.header["NAXIS"] = 2
    hdu.header["NAXIS1"] = 0
    hdu.header["NAXIS2"] = 0
    hdu.header["BITPIX"] = -32
    fits.HDUList([fits.PrimaryHDU(), hdu]).writeto(dst, overwrite=True, output_verify="silentfix")


def other_grid(dst):
    with fits.open(exposure_fits()) as hl:
        h = hl["EXPOSURE"]
        hdr = h.header.copy()
        d = h.data[:64, :80].copy()
    hdr["CRPIX1"] = 40.5
    hdr["CRPIX2"] = 32.5
    fits.HDUList([fits.PrimaryHDU(), fits.ImageHDU(d, hdr, name="EXPOSURE")]).writeto(dst, overwrite=True)


def csv_variant(dst, row=None, column=None, value=None, drop_column=None, only_header=False):
    lines = open(TINY_CSV).read().splitlines()
    hdr_i = next(i for i, l in enumerate(lines) if not l.startswith("#"))
    cols = lines[hdr_i].split(",")
    out = lines[: hdr_i + 1]
    for k, l in enumerate(lines[hdr_i + 1:]):
        v = l.split(",")
        if row is not None and k == row:
            v[cols.index(column)] = value
        out.append(",".join(v))
    if drop_column is not None:
        j = cols.index(drop_column)
        out = [l if l.startswith("#") else ",".join(x for i, x in enumerate(l.split(",")) if i != j) for l in out]
    if only_header:
        out = out[: hdr_i + 1]
    write(dst, "\n".join(out) + "\n")


CSV_FIELDS = """  fields:
    kind: particles
    position: {components: [x_mpc, y_mpc, z_mpc], factor: 1000.0}
    mass: {source: mass_1e10msun, factor: 1.0e10}
    density: {source: rho_g_cm3, factor: 1.4775e31}
    temperature: {source: temp_k, factor: 8.617333e-8}
    metallicity: z_metal
    metallicity_units: mass_fraction
    solar_metal_mass_fraction: 0.0194
    smoothing_length: {source: hsml_mpc, factor: 1000.0}
    smoothing_convention: support
"""


def project_yaml(w, cells="cells.csv", target="{name: csv-demo, redshift: 0.12, ra_deg: 30.0, dec_deg: -20.0}",
                 map_="  pixels: 32\n  pixel_arcsec: 30.0\n", out="out", fields=CSV_FIELDS):
    write(os.path.join(w, "run.yaml"), f"""target: {target}
cells:
  file: {cells}
  bad_cells: error
{fields}map:
{map_}output:
  directory: {out}
  quicklook: false
""")


def model_yaml(w, name="model.yaml", extra="", density="{profile: beta, r_c_kpc: 150, beta: 0.667, n_e0_cm3: 5.0e-3}",
               top="n_particles: 2000"):
    write(os.path.join(w, name), f"""name: bad-model
seed: 1
{top}
redshift: 0.1
ra_deg: 150.0
dec_deg: 2.0
{extra}components:
  - name: cluster
    r_max_kpc: 2000
    density: {density}
    temperature: {{profile: isothermal, kT_keV: 5.0}}
    metallicity: {{profile: constant, Z_solar: 0.3}}
""")


def observe_yaml(w, observation=f"{{instrument: {VASTA}, exposure_ks: 10, seed: 1}}", source=None, out="out"):
    source = source or (f"cells: {{model: {MODELS}/tolva2_non_cool_core.yaml, model_particles: 2000}}\n"
                        "map: {pixels: 32, pixel_arcsec: 30.0}")
    write(os.path.join(w, "run.yaml"), f"""target: {{name: Tolva-2, redshift: 0.15, ra_deg: 10.0, dec_deg: -5.0}}
{source}
observation: {observation}
output: {{directory: {out}, prefix: T2, quicklook: false}}
""")


def bad_instrument(w):
    text = open(VASTA).read()
    text2 = re.sub(r"(?m)^(\s+)fwhm_arcsec:|^(\s+)core_radius_arcsec:", lambda m: m.group(0).replace("radius", "radus"), text, count=1)
    assert text2 != text
    write(os.path.join(w, "instr.yaml"), text2)


def sample_yaml(w, clusters, defaults_extra="", survey_extra=""):
    write(os.path.join(w, "sample.yaml"), f"""survey: {{name: bad, seed: 3{survey_extra}}}
defaults:
  map: {{pixels: 48, pixel_arcsec: 16}}
  model_particles: 3000
  lines_of_sight: [z]
  observation: {{instruments: [{VASTA}], exposures_ks: [5]}}
  measure: {{realisations: {{number: 4}}, quicklook: false}}
{defaults_extra}clusters:
{clusters}""")


MEASURE_OUT = ["--json", "m.json", "--csv", "m.csv", "--png", "m.png", "--realisations", "4", "--no-table"]


def measure(counts, *extra):
    return ["measure", "--counts", counts] + list(extra) + MEASURE_OUT


def blocker(w):
    write(os.path.join(w, "blocker"), "a regular file standing where a folder is expected\n")


# ---------------------------------------------------------------------------------------------------
# The cases: (name, argv after the binary (run in the case folder), make(w) -> files, exit status,
# regular expressions the error line must match (the thing named, and what was expected)).
# ---------------------------------------------------------------------------------------------------
C = counts_fits
CASES = [
    # ---- measure: FITS images
    ("measure_truncated_fits", lambda: measure("trunc.fits[COUNTS]", "--m500-msun", "5e14"),
     lambda w: truncated(C(), os.path.join(w, "trunc.fits")), 3, [r"trunc\.fits"]),
    ("measure_missing_wcs", lambda: measure("nowcs.fits[COUNTS]", "--m500-msun", "5e14"),
     lambda w: variant(C(), os.path.join(w, "nowcs.fits"), "COUNTS", strip_wcs), 3,
     [r"nowcs\.fits", r"(?i)WCS|CTYPE"]),
    ("measure_nonsense_wcs_projection", lambda: measure("badproj.fits[COUNTS]", "--m500-msun", "5e14"),
     lambda w: variant(C(), os.path.join(w, "badproj.fits"), "COUNTS", set_keys(CTYPE1="RA---QQQ", CTYPE2="DEC--QQQ")), 3,
     [r"badproj\.fits", r"(?i)WCS|CTYPE|projection"]),
    ("measure_singular_wcs_cdelt0", lambda: measure("cdelt0.fits[COUNTS]", "--m500-msun", "5e14"),
     lambda w: variant(C(), os.path.join(w, "cdelt0.fits"), "COUNTS", set_keys(CDELT1=0.0, CDELT2=0.0)), 3,
     [r"cdelt0\.fits", r"(?i)CDELT|singular|pixel scale|WCS"]),
    ("measure_non_square_pixels", lambda: measure("rect.fits[COUNTS]", "--m500-msun", "5e14"),
     lambda w: variant(C(), os.path.join(w, "rect.fits"), "COUNTS", lambda h: h.header.set("CDELT2", 3 * abs(h.header["CDELT1"]))), 3,
     [r"rect\.fits", r"(?i)square"]),
    ("measure_wrong_bunit", lambda: measure("bunit.fits[COUNTS]", "--m500-msun", "5e14"),
     lambda w: variant(C(), os.path.join(w, "bunit.fits"), "COUNTS", set_keys(BUNIT="erg/(s cm2)")), 3,
     [r"bunit\.fits", r"BUNIT", r"(?i)count"]),
    ("measure_exposure_wrong_bunit",
     lambda: measure(C() + "[COUNTS]", "--exposure", "exp.fits[EXPOSURE]", "--m500-msun", "5e14"),
     lambda w: variant(exposure_fits(), os.path.join(w, "exp.fits"), "EXPOSURE", set_keys(BUNIT="count")), 3,
     [r"exp\.fits", r"BUNIT", r"(?i)\bs\b|seconds|cm\*\*2 s"]),
    ("measure_zero_size_image", lambda: measure("empty.fits[COUNTS]", "--m500-msun", "5e14"),
     lambda w: zero_size_image(os.path.join(w, "empty.fits")), 3, [r"empty\.fits", r"(?i)empty|size|NAXIS|2-D|pixels"]),
    ("measure_negative_counts", lambda: measure("neg.fits[COUNTS]", "--m500-msun", "5e14"),
     lambda w: variant(C(), os.path.join(w, "neg.fits"), "COUNTS", set_pixels(-3.0)), 3,
     [r"neg\.fits", r"(?i)negative|>= ?0|non-negative"]),
    ("measure_all_nan_counts", lambda: measure("nan.fits[COUNTS]", "--m500-msun", "5e14"),
     lambda w: variant(C(), os.path.join(w, "nan.fits"), "COUNTS", all_pixels(np.nan)), 3,
     [r"nan\.fits", r"(?i)finite|NaN|no (usable|valid|good)"]),
    ("measure_all_zero_exposure",
     lambda: measure(C() + "[COUNTS]", "--exposure", "zexp.fits[EXPOSURE]", "--m500-msun", "5e14"),
     lambda w: variant(exposure_fits(), os.path.join(w, "zexp.fits"), "EXPOSURE", scale_data(0.0)), 3,
     [r"zexp\.fits", r"(?i)zero|positive|> ?0"]),
    ("measure_exposure_other_grid",
     lambda: measure(C() + "[COUNTS]", "--exposure", "grid.fits[EXPOSURE]", "--m500-msun", "5e14"),
     lambda w: other_grid(os.path.join(w, "grid.fits")), 3, [r"grid\.fits", r"(?i)grid|shape|96"]),
    ("measure_centre_outside_image",
     lambda: measure(C() + "[COUNTS]", "--m500-msun", "5e14", "--centre-ra-deg", "20.0", "--centre-dec-deg", "-40.0"),
     lambda w: None, 3, [r"(?i)centre", r"(?i)outside|inside|image"]),
    ("measure_missing_hdu", lambda: measure(C() + "[NOPE]", "--m500-msun", "5e14"),
     lambda w: None, 3, [r"M7_counts\.fits", r"NOPE"]),
    ("measure_unreadable_path", lambda: measure("no_such_dir/counts.fits", "--m500-msun", "5e14"),
     lambda w: None, 3, [r"no_such_dir/counts\.fits", r"(?i)cannot|no such|not found|open"]),
    ("measure_negative_redshift", lambda: measure(C() + "[COUNTS]", "--redshift", "-0.2"),
     lambda w: None, 2, [r"redshift", r"(?i)>= ?0|non-negative|negative|range"]),
    ("measure_bad_aperture_unit", lambda: ["measure", "m.yaml"] + MEASURE_OUT,
     lambda w: write(os.path.join(w, "m.yaml"), f"inputs: {{counts: '{C()}[COUNTS]'}}\ntarget: {{m500_msun: 5.0e14}}\n"
                     "apertures: {concentration: ['40/400 parsec']}\n"), 2,
     [r"m\.yaml", r"concentration", r"(?i)kpc|arcsec|R500|px|unit"]),
    ("measure_yaml_typo_key", lambda: ["measure", "m.yaml"] + MEASURE_OUT,
     lambda w: write(os.path.join(w, "m.yaml"), f"inputs: {{counts: '{C()}[COUNTS]'}}\ntarget: {{m500_msun: 5.0e14}}\n"
                     "realisation: {number: 4}\n"), 2, [r"m\.yaml:3", r"realisation", r"realisations"]),
    ("measure_json_unwritable", lambda: ["measure", "--counts", C() + "[COUNTS]", "--m500-msun", "5e14", "--json", "blocker/m.json",
                                         "--csv", "m.csv", "--png", "m.png", "--realisations", "4", "--no-table"],
     blocker, 4, [r"blocker/m\.json"]),
    # ---- project: cells and RUN files
    ("project_nan_temperature", lambda: ["project", "run.yaml"],
     lambda w: (csv_variant(os.path.join(w, "cells.csv"), row=17, column="temp_k", value="nan"), project_yaml(w)), 3,
     [r"cells\.csv", r"(?i)temperature|temp_k", r"17"]),
    ("project_negative_mass", lambda: ["project", "run.yaml"],
     lambda w: (csv_variant(os.path.join(w, "cells.csv"), row=5, column="mass_1e10msun", value="-1.0"), project_yaml(w)), 3,
     [r"cells\.csv", r"(?i)mass", r"\b5\b"]),
    ("project_nan_density_nested_output", lambda: ["project", "run.yaml"],
     lambda w: (csv_variant(os.path.join(w, "cells.csv"), row=2999, column="rho_g_cm3", value="inf"),
                project_yaml(w, out="new/deeper/out")), 3,
     [r"cells\.csv", r"(?i)density", r"2999"]),
    ("project_missing_column", lambda: ["project", "run.yaml"],
     lambda w: (csv_variant(os.path.join(w, "cells.csv"), drop_column="hsml_mpc"), project_yaml(w)), 3,
     [r"cells\.csv", r"hsml_mpc"]),
    ("project_empty_cells", lambda: ["project", "run.yaml"],
     lambda w: (csv_variant(os.path.join(w, "cells.csv"), only_header=True), project_yaml(w)), 3,
     [r"cells\.csv", r"(?i)no cells|empty|no rows"]),
    ("project_truncated_hdf5", lambda: ["project", "run.yaml"],
     lambda w: (truncated(os.path.join(BASE, "cells.h5"), os.path.join(w, "trunc.h5"), 0.4),
                project_yaml(w, cells="trunc.h5", fields="")), 3, [r"trunc\.h5"]),
    ("project_yaml_typo_key", lambda: ["project", "run.yaml"],
     lambda w: (shutil.copy(TINY_CSV, os.path.join(w, "cells.csv")),
                project_yaml(w, map_="  pixels: 32\n  pixel_arcsecs: 30.0\n")), 2,
     [r"run\.yaml:\d+", r"pixel_arcsecs", r"pixel_arcsec\b"]),
    ("project_duplicate_key", lambda: ["project", "run.yaml"],
     lambda w: (shutil.copy(TINY_CSV, os.path.join(w, "cells.csv")),
                project_yaml(w, map_="  pixels: 32\n  pixels: 64\n  pixel_arcsec: 30.0\n")), 2,
     [r"run\.yaml:\d+", r"pixels", r"(?i)duplicate"]),
    ("project_zero_pixels", lambda: ["project", "run.yaml"],
     lambda w: (shutil.copy(TINY_CSV, os.path.join(w, "cells.csv")),
                project_yaml(w, map_="  pixels: 0\n  pixel_arcsec: 30.0\n")), 2,
     [r"run\.yaml", r"pixels", r"(?i)>= ?1|positive|range|at least"]),
    ("project_negative_redshift", lambda: ["project", "run.yaml"],
     lambda w: (shutil.copy(TINY_CSV, os.path.join(w, "cells.csv")),
                project_yaml(w, target="{name: csv-demo, redshift: -0.12, ra_deg: 30.0, dec_deg: -20.0}")), 2,
     [r"run\.yaml", r"redshift", r"(?i)> ?0|positive|range|negative"]),
    ("project_output_dir_unwritable", lambda: ["project", "run.yaml"],
     lambda w: (shutil.copy(TINY_CSV, os.path.join(w, "cells.csv")), blocker(w), project_yaml(w, out="blocker/out")), 4,
     [r"blocker/out"]),
    # ---- synth
    ("synth_duplicate_key", lambda: ["synth", "model.yaml", "-o", "cells.h5"],
     lambda w: model_yaml(w, top="n_particles: 2000\nn_particles: 3000"), 2,
     [r"model\.yaml:\d+", r"n_particles", r"(?i)duplicate"]),
    ("synth_typo_key", lambda: ["synth", "model.yaml", "-o", "cells.h5"],
     lambda w: model_yaml(w, density="{profile: beta, r_core_kpc: 150, beta: 0.667, n_e0_cm3: 5.0e-3}"), 2,
     [r"model\.yaml:\d+", r"r_core_kpc", r"r_c_kpc"]),
    ("synth_negative_core_radius", lambda: ["synth", "model.yaml", "-o", "cells.h5"],
     lambda w: model_yaml(w, density="{profile: beta, r_c_kpc: -150, beta: 0.667, n_e0_cm3: 5.0e-3}"), 2,
     [r"model\.yaml", r"r_c_kpc", r"(?i)> ?0|positive|range"]),
    ("synth_missing_model", lambda: ["synth", "nothere.yaml", "-o", "cells.h5"],
     lambda w: None, 2, [r"nothere\.yaml", r"(?i)cannot|no such|not found|open|read"]),
    ("synth_output_in_proc", lambda: ["synth", "model.yaml", "-o", "/proc/icmscope_bad_input/cells.h5"],
     lambda w: model_yaml(w), 4, [r"/proc/icmscope_bad_input/cells\.h5"]),
    # ---- observe
    ("observe_negative_exposure", lambda: ["observe", "run.yaml"],
     lambda w: observe_yaml(w, observation=f"{{instrument: {VASTA}, exposure_ks: -10, seed: 1}}"), 2,
     [r"run\.yaml", r"exposure_ks", r"(?i)> ?0|positive|range"]),
    ("observe_instrument_typo", lambda: ["observe", "run.yaml"],
     lambda w: (bad_instrument(w), observe_yaml(w, observation="{instrument: instr.yaml, exposure_ks: 10, seed: 1}")), 2,
     [r"instr\.yaml:\d+", r"core_radus_arcsec", r"core_radius_arcsec"]),
    ("observe_missing_instrument", lambda: ["observe", "run.yaml"],
     lambda w: observe_yaml(w, observation="{instrument: gone.yaml, exposure_ks: 10, seed: 1}"), 2,
     [r"gone\.yaml", r"(?i)cannot|no such|not found|open|read"]),
    ("observe_maps_wrong_bunit", lambda: ["observe", "run.yaml"],
     lambda w: (variant(os.path.join(BASE, "T2_maps.fits"), os.path.join(w, "maps.fits"), "RATE", set_keys(BUNIT="count/s")),
                observe_yaml(w, source="maps: {file: maps.fits}")), 3,
     [r"maps\.fits", r"RATE|BUNIT", r"photon/\(cm2 s\)"]),
    ("observe_output_dir_unwritable", lambda: ["observe", "run.yaml"],
     lambda w: (blocker(w), observe_yaml(w, out="blocker/out")), 4, [r"blocker/out"]),
    # ---- rate
    ("rate_negative_temperature", lambda: ["rate", "--kT-keV", "-1"], lambda w: None, 2,
     [r"kT-keV", r"(?i)> ?0|positive|range|in \(0,"]),
    ("rate_reversed_band", lambda: ["rate", "--kT-keV", "5", "--band-keV", "2,0.5"], lambda w: None, 2,
     [r"band-keV|band", r"(?i)lo|increasing|<|less"]),
    ("rate_negative_redshift", lambda: ["rate", "--kT-keV", "5", "--redshift", "-0.5"], lambda w: None, 2,
     [r"--redshift", r"(?i)>= ?0|non-negative|range|negative|in \[0,"]),
    ("rate_instrument_is_not_an_instrument",
     lambda: ["rate", "--kT-keV", "5", "--instrument", os.path.join(BASE, "obs.yaml")], lambda w: None, 2,
     [r"obs\.yaml", r"instrument"]),
    ("rate_not_a_number", lambda: ["rate", "--kT-keV", "hot"], lambda w: None, 2, [r"kT-keV", r"hot"]),
    # ---- survey
    ("survey_empty_sample", lambda: ["survey", "sample.yaml", "--progress", "none"],
     lambda w: sample_yaml(w, "  []\n"), 2, [r"sample\.yaml", r"clusters", r"(?i)no entries|empty|at least"]),
    ("survey_duplicate_names", lambda: ["survey", "sample.yaml", "--progress", "none"],
     lambda w: sample_yaml(w, f"  - {{name: A, model: {MODELS}/tolva2_non_cool_core.yaml}}\n"
                              f"  - {{name: A, model: {MODELS}/maren7_cool_core.yaml}}\n"), 2,
     [r"sample\.yaml", r"\bA\b", r"(?i)unique|duplicate|twice"]),
    ("survey_defaults_typo", lambda: ["survey", "sample.yaml", "--progress", "none"],
     lambda w: sample_yaml(w, f"  - {{name: A, model: {MODELS}/tolva2_non_cool_core.yaml}}\n",
                           defaults_extra="  model_particle: 2000\n"), 2,
     [r"sample\.yaml:\d+", r"model_particle\b", r"model_particles"]),
    ("survey_negative_redshift", lambda: ["survey", "sample.yaml", "--progress", "none"],
     lambda w: sample_yaml(w, f"  - {{name: A, model: {MODELS}/tolva2_non_cool_core.yaml, redshift: -0.1}}\n"), 2,
     [r"sample\.yaml", r"redshift", r"(?i)> ?0|positive|range|negative"]),
    ("survey_csv_unknown_column", lambda: ["survey", "sample.yaml", "--progress", "none"],
     lambda w: (write(os.path.join(w, "more.csv"), f"name,model,redshfit\nB,{MODELS}/tolva2_non_cool_core.yaml,0.1\n"),
                sample_yaml(w, f"  - {{name: A, model: {MODELS}/tolva2_non_cool_core.yaml}}\n",
                            survey_extra=", entries_csv: more.csv")), 2,
     [r"more\.csv", r"redshfit", r"redshift"]),
    ("survey_missing_listing", lambda: ["survey", "sample.yaml", "--progress", "none"],
     lambda w: sample_yaml(w, f"  - {{name: A, model: {MODELS}/tolva2_non_cool_core.yaml}}\n",
                           survey_extra=", entries_csv: gone.csv"), 2, [r"gone\.csv", r"(?i)cannot|no such|open"]),
    ("survey_output_dir_unwritable", lambda: ["survey", "sample.yaml", "--progress", "none", "--output-dir", "blocker/out"],
     lambda w: (blocker(w), sample_yaml(w, f"  - {{name: A, model: {MODELS}/tolva2_non_cool_core.yaml}}\n")), 4,
     [r"blocker/out"]),
]

# A sample whose every target fails: exit 7, a failures file naming each target and its reason.
ALL_FAIL = ("survey_every_target_fails", ["survey", "sample.yaml", "--progress", "none", "--no-plots", "--threads", "1"])


def snapshot(w):
    found = set()
    for root, dirs, files in os.walk(w):
        for n in dirs + files:
            found.add(os.path.relpath(os.path.join(root, n), w))
    return found


def check_case(name, argv, make, code, patterns):
    w = os.path.join(SCRATCH, name)
    os.makedirs(w)
    make(w)
    before = snapshot(w)
    t0 = time.time()
    quiet = ["-q"] if argv[0] in ("synth", "project", "observe", "measure", "survey") else []
    r = subprocess.run([BIN, argv[0]] + quiet + argv[1:], cwd=w, capture_output=True, text=True, env=ENV, timeout=300)
    dt = time.time() - t0
    problems = []
    if r.returncode != code:
        problems.append("exit status %d, expected %d" % (r.returncode, code))
    lines = r.stderr.splitlines()
    if len(lines) != 1:
        problems.append("stderr has %d lines, expected exactly 1" % len(lines))
    line = lines[-1] if lines else ""
    prefix = "icmscope %s: error: " % argv[0]
    if not line.startswith(prefix):
        problems.append("the error line does not start with %r" % prefix)
    for p in patterns:
        if not re.search(p, line):
            problems.append("the error line does not match /%s/" % p)
    new = sorted(snapshot(w) - before)
    if new:
        problems.append("left behind: %s" % ", ".join(new))
    status = "ok" if not problems else "FAIL"
    print("%-4s %-34s exit %d  %.1fs  %s" % (status, name, r.returncode, dt, line))
    for p in problems:
        print("       - " + p)
    if problems:
        if len(lines) != 1:
            print("       stderr: " + r.stderr.replace("\n", "\n               "))
        failures.append(name)


def check_all_fail():
    name, argv = ALL_FAIL
    w = os.path.join(SCRATCH, name)
    os.makedirs(w)
    truncated(C(), os.path.join(w, "trunc.fits"))
    variant(C(), os.path.join(w, "nowcs.fits"), "COUNTS", strip_wcs)
    sample_yaml(w, "  - {name: Obs-trunc, counts: trunc.fits, redshift: 0.08, m500_msun: 5.0e14}\n"
                   "  - {name: Obs-nowcs, counts: nowcs.fits, redshift: 0.08, m500_msun: 5.0e14}\n"
                   "  - {name: Obs-gone, counts: gone.fits, redshift: 0.08, m500_msun: 5.0e14}\n")
    r = subprocess.run([BIN] + argv, cwd=w, capture_output=True, text=True, env=ENV, timeout=300)
    problems = []
    if r.returncode != 7:
        problems.append("exit status %d, expected 7 (some targets failed)" % r.returncode)
    out = os.path.join(w, "bad_survey")
    fpath = os.path.join(out, "bad_failures.csv")
    if not os.path.isfile(fpath):
        problems.append("no failures file %s" % fpath)
    else:
        rows = [l for l in open(fpath).read().splitlines() if l and not l.startswith("target_index")]
        if len(rows) != 3:
            problems.append("failures file has %d rows, expected 3" % len(rows))
        for target, pat in (("Obs-trunc", r"trunc\.fits"), ("Obs-nowcs", r"nowcs\.fits.*(?i:WCS|CTYPE)"),
                            ("Obs-gone", r"gone\.fits")):
            row = [l for l in rows if target in l]
            if len(row) != 1 or not re.search(pat, row[0]):
                problems.append("failures file: no one-line reason for %s matching /%s/" % (target, pat))
    cat = os.path.join(out, "bad_catalog.csv")
    if os.path.isfile(cat) and len(open(cat).read().splitlines()) > 1:
        problems.append("the catalog has rows although every target failed")
    temps = [p for p in snapshot(w) if re.search(r"(?i)(\.tmp|\.part|~)$|/\.|^\.", p)]
    if temps:
        problems.append("temporary files left: %s" % ", ".join(sorted(temps)))
    if [l for l in r.stderr.splitlines() if re.search(r"(?i)terminate|abort|exception|traceback", l)]:
        problems.append("stderr shows a crash: %s" % r.stderr)
    print("%-4s %-34s exit %d  failures file %s" % ("ok" if not problems else "FAIL", name, r.returncode,
                                                    os.path.relpath(fpath, w)))
    for p in problems:
        print("       - " + p)
    if problems:
        failures.append(name)


def main():
    t0 = time.time()
    make_base()
    base_before = snapshot(BASE)
    only = sys.argv[1:]
    n = 0
    for name, argv, make, code, patterns in CASES:
        if only and not any(o in name for o in only):
            continue
        check_case(name, argv(), make, code, patterns)
        n += 1
    if not only or any(o in ALL_FAIL[0] for o in only):
        check_all_fail()
        n += 1
    if snapshot(BASE) != base_before:
        failures.append("base folder changed")
        print("FAIL: the base products folder changed: %s" % sorted(snapshot(BASE) ^ base_before))
    print("%d bad-input cases across synth, project, observe, rate, measure, survey; %.0f s" % (n, time.time() - t0))
    if failures:
        print("FAILED: %s" % ", ".join(failures))
        sys.exit(1)
    shutil.rmtree(SCRATCH, ignore_errors=True)


main()
