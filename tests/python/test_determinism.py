#!/usr/bin/env python3
"""Determinism: the same configuration and seed give byte-identical products.

Invariant (project rule: OpenMP with deterministic fixed-block accumulation; seeds from the
configuration, never from the clock, the thread or the rank): every FITS data unit, every catalog and
every text product is the same, byte for byte, across repeated runs, OpenMP thread counts, survey worker
counts and MPI rank counts. Runs the real binary (env ICMSCOPE_BIN, ICMSCOPE_SOURCE_DIR,
ICMSCOPE_BINARY_DIR) with the shipped examples at small settings:

  project  config/examples/project_cool_core.yaml (model synthesised on the fly)  OMP 2, 2 again, 1
  observe  config/examples/observe_cool_core_vasta.yaml (events, point sources),  OMP 2, 2 again, 1
           --particles 20000
  measure  config/examples/measure_cool_core_vasta.yaml on the first observe      OMP 2, 2 again, 1
           run's products (--observation), --realisations 20
  survey   a 4-target sample (2 models, 2 and 2 lines of sight)                   --threads 2 x --omp-threads 1,
           the same again, --threads 1 x --omp-threads 2; with MPI: mpirun -np 2 --bind-to none ... --mpi

FITS files: for every HDU the SHA-256 of its data unit (the raw bytes on disk, padding included) and
its header cards, minus the keywords listed in HEADER_EXCLUDED (the write time and the checksum that
covers it; DATASUM, the data checksum, is compared). Other files (CSV catalogs, JSON, YAML, PNG, records)
are compared as bytes, minus the files in FILE_EXCLUDED (logs with wall-clock times). Every product of
a run must have its twin in the other run.

MPI: compared when the binary was built with MPI (the survey accepts --mpi: a build without MPI rejects
it) and mpirun is on PATH; otherwise the test prints that the MPI comparison is skipped (CI builds with
MPI ON). OpenMPI runs as root with the settings of tests/python/mpi_survey.py.
"""
import hashlib
import json
import os
import re
import shutil
import subprocess
import sys
import time

from astropy.io import fits

BIN = os.environ["ICMSCOPE_BIN"]
SRC = os.environ["ICMSCOPE_SOURCE_DIR"]
SCRATCH = os.path.join(os.environ.get("ICMSCOPE_BINARY_DIR", "/tmp"), "test_scratch", "determinism")
EX = os.path.join(SRC, "config", "examples")

# Header keywords allowed to differ between runs: the time of writing and the HDU checksum covering it.
HEADER_EXCLUDED = {"DATE", "CHECKSUM"}
# Keywords whose value is compared but whose comment may differ: CFITSIO writes the time into it
# ("data unit checksum updated 2026-...").
COMMENT_EXCLUDED = {"DATASUM"}
# Files allowed to differ: logs carry wall-clock times and durations.
FILE_EXCLUDED = [r"(^|/)logs/", r"\.log$"]
# JSON keys dropped before comparing: wall-clock run time of a measurement.
JSON_EXCLUDED = {"seconds"}
# Text masks (regex -> replacement) applied before comparing text products: the survey names its absolute
# output folder (summary, per-target JSON: where it was written, not what), the summary line ends with the
# wall-clock time and names the log file, whose name is the start time.
TEXT_MASKS = [(r"; [0-9.]+ s$", "; <time> s", "_summary.txt"), (r"logs/[^ \n]+\.log", "logs/<log>", "_summary.txt")]

failures = []


def run(argv, cwd, omp, extra_env=None):
    env = dict(os.environ, OMP_NUM_THREADS=str(omp))
    if extra_env:
        env.update(extra_env)
    r = subprocess.run(argv, cwd=cwd, capture_output=True, text=True, env=env, timeout=600)
    if r.returncode != 0:
        print(" ".join(argv))
        print(r.stdout, r.stderr)
        sys.exit("command failed with status %d" % r.returncode)
    return r


def fits_digest(path):
    """Per HDU: (extname, sha256 of the raw data unit, header cards without HEADER_EXCLUDED)."""
    raw = open(path, "rb").read()
    out = []
    with fits.open(path, memmap=False) as hl:
        for i, h in enumerate(hl):
            info = h.fileinfo()
            data = raw[info["datLoc"]: info["datLoc"] + info["datSpan"]]
            cards = [(c.keyword, str(c.value), "" if c.keyword in COMMENT_EXCLUDED else c.comment)
                     for c in h.header.cards if c.keyword not in HEADER_EXCLUDED]
            out.append((h.name or str(i), hashlib.sha256(data).hexdigest(), cards, len(data)))
    return out


def drop_keys(v):
    if isinstance(v, dict):
        return {k: drop_keys(x) for k, x in v.items() if k not in JSON_EXCLUDED}
    if isinstance(v, list):
        return [drop_keys(x) for x in v]
    return v


def normalised(rel, path, out_dir):
    """The bytes of a product; text products with the masks above (and out_dir replaced by <OUT>)."""
    data = open(path, "rb").read()
    if not rel.endswith((".json", ".txt", ".csv", ".yaml")):
        return data
    text = data.decode().replace(os.path.abspath(out_dir), "<OUT>")
    for pattern, repl, where in TEXT_MASKS:
        if rel.endswith(where):
            text = re.sub(pattern, repl, text, flags=re.M)
    if rel.endswith(".json"):
        # Parsed with the numbers as written (no float round trip), re-dumped without the dropped keys.
        v = json.loads(text, parse_float=str, parse_int=str, parse_constant=str)
        text = json.dumps(drop_keys(v))
    return text.encode()


def products(folder):
    found = {}
    for root, _, files in os.walk(folder):
        for n in files:
            rel = os.path.relpath(os.path.join(root, n), folder)
            if not any(re.search(p, rel) for p in FILE_EXCLUDED):
                found[rel] = os.path.join(root, n)
    return found


def compare(label, ref_dir, got_dir, need_fits=True, expect_differences=None):
    """Every product of ref_dir equals its twin in got_dir. expect_differences (negative control): a list of
    regular expressions that must each match a reported difference, and no failure otherwise."""
    a, b = products(ref_dir), products(got_dir)
    n_fits = n_hdu = n_other = 0
    bad = []
    for rel in sorted(set(a) | set(b)):
        if rel not in a or rel not in b:
            bad.append("%s only in %s" % (rel, ref_dir if rel in a else got_dir))
            continue
        if rel.endswith(".fits"):
            n_fits += 1
            da, db = fits_digest(a[rel]), fits_digest(b[rel])
            if len(da) != len(db):
                bad.append("%s: %d HDUs vs %d" % (rel, len(da), len(db)))
                continue
            for ha, hb in zip(da, db):
                n_hdu += 1
                if ha[1] != hb[1]:
                    bad.append("%s[%s]: data unit differs (sha256 %s.. vs %s..)" % (rel, ha[0], ha[1][:12], hb[1][:12]))
                if ha[2] != hb[2]:
                    diff = [(x, y) for x, y in zip(ha[2], hb[2]) if x != y][:3] or "card count %d vs %d" % (len(ha[2]), len(hb[2]))
                    bad.append("%s[%s]: header differs: %s" % (rel, ha[0], diff))
        else:
            n_other += 1
            if normalised(rel, a[rel], ref_dir) != normalised(rel, b[rel], got_dir):
                bad.append("%s: bytes differ" % rel)
    if expect_differences is not None:
        missing = [p for p in expect_differences if not any(re.search(p, x) for x in bad)]
        print("%-4s %-52s %d differences found, as expected" % ("ok" if not missing else "FAIL", label, len(bad)))
        for p in missing:
            print("       - no reported difference matches /%s/" % p)
        if missing:
            failures.append(label)
        return
    status = "ok" if not bad else "FAIL"
    print("%-4s %-52s %d FITS files (%d HDUs), %d other files identical" % (status, label, n_fits, n_hdu, n_other) if not bad
          else "%-4s %s" % (status, label))
    for x in bad[:20]:
        print("       - " + x)
    if need_fits and n_fits == 0:
        bad.append("no FITS product compared")
        print("       - no FITS product compared")
    if bad:
        failures.append(label)


def timed(label, fn):
    t0 = time.time()
    fn()
    print("     %s: %.1f s" % (label, time.time() - t0))


def verb_runs(name, make_argv, runs, need_fits=True):
    """runs: list of (tag, omp). Runs each in its own folder (same relative output names), compares to the first."""
    dirs = []
    for tag, omp in runs:
        d = os.path.join(SCRATCH, name, tag)
        os.makedirs(d)
        t0 = time.time()
        run(make_argv(d), d, omp)
        print("     %s %s (OMP_NUM_THREADS=%d): %.1f s" % (name, tag, omp, time.time() - t0))
        dirs.append((tag, omp, d))
    ref_tag, ref_omp, ref = dirs[0]
    for tag, omp, d in dirs[1:]:
        compare("%s: %s (OMP %d) vs %s (OMP %d)" % (name, ref_tag, ref_omp, tag, omp), os.path.join(ref, "out"),
                os.path.join(d, "out"), need_fits)
    return dirs


SAMPLE = f"""survey: {{name: det, seed: 4242}}
defaults:
  map: {{pixels: 80, pixel_arcsec: 12}}
  model_particles: 10000
  lines_of_sight: [z]
  observation: {{instruments: [{SRC}/config/instruments/vasta_la.yaml], exposures_ks: [10]}}
  measure: {{realisations: {{number: 8}}, quicklook: true}}
clusters:
  - {{name: Tolva-2, model: {SRC}/demo_clusters/models/tolva2_non_cool_core.yaml, lines_of_sight: [x, z]}}
  - name: Kessra-13
    model: {SRC}/demo_clusters/models/kessra13_major_merger.yaml
    lines_of_sight: {{random: 2}}
"""

MPI_ENV = {"OMPI_ALLOW_RUN_AS_ROOT": "1", "OMPI_ALLOW_RUN_AS_ROOT_CONFIRM": "1",
           "OMPI_MCA_btl_vader_single_copy_mechanism": "none", "OMPI_MCA_btl": "self,vader",
           "OMPI_MCA_rmaps_base_oversubscribe": "1"}
# Sanitizer builds (scripts/sanitize.sh): OpenMPI leaks inside libmpi and in plugins it unloads at
# MPI_Finalize; leak detection is off for the MPI runs only (every other ASan/UBSan check stays).
if "detect_leaks=1" in os.environ.get("ASAN_OPTIONS", ""):
    MPI_ENV["ASAN_OPTIONS"] = os.environ["ASAN_OPTIONS"].replace("detect_leaks=1", "detect_leaks=0")


def mpi_available(sample, cwd):
    """A build without MPI rejects --mpi first ("built without MPI"); an MPI build rejects --mpi with
    --collect instead. Either way nothing runs."""
    mpiexec = os.environ.get("ICMSCOPE_MPIEXEC") or shutil.which("mpirun")
    if not mpiexec:
        return None, "mpirun not found"
    probe = os.path.join(SCRATCH, "mpi_probe")
    r = subprocess.run([BIN, "survey", sample, "--mpi", "--collect", "--output-dir", probe, "--progress", "none", "-q",
                        "--no-plots"], cwd=cwd, capture_output=True, text=True, env=dict(os.environ, **MPI_ENV),
                       timeout=120)
    shutil.rmtree(probe, ignore_errors=True)
    if "built without MPI" in r.stderr:
        return None, "the binary was built without MPI (%s)" % r.stderr.strip()
    return mpiexec, ""


def survey_runs():
    base = os.path.join(SCRATCH, "survey")
    os.makedirs(base)
    sample = os.path.join(base, "det.yaml")
    with open(sample, "w") as f:
        f.write(SAMPLE)
    common = ["--progress", "none", "-q"]
    runs = [("threads2_omp1", 2, 1), ("threads2_omp1_again", 2, 1), ("threads1_omp2", 1, 2)]
    for tag, threads, omp in runs:
        os.makedirs(os.path.join(base, tag))
        t0 = time.time()
        run([BIN, "survey", sample, "--output-dir", "out", "--threads", str(threads), "--omp-threads", str(omp)] + common,
            os.path.join(base, tag), omp)
        print("     survey %s: %.1f s" % (tag, time.time() - t0))
    ref = os.path.join(base, runs[0][0], "out")
    rows = open(os.path.join(ref, "det_catalog.csv")).read().splitlines()
    if len(rows) != 5:
        failures.append("survey rows")
        print("FAIL survey: expected 4 catalog rows, got %d" % (len(rows) - 1))
    for tag, threads, omp in runs[1:]:
        compare("survey: %s vs %s" % (runs[0][0], tag), ref, os.path.join(base, tag, "out"))
    mpiexec, why = mpi_available(sample, base)
    if not mpiexec:
        print("skip survey MPI comparison: %s" % why)
        return
    out = os.path.join(base, "mpi2_threads1", "out")
    os.makedirs(os.path.dirname(out))
    t0 = time.time()
    run([mpiexec, "--allow-run-as-root", "--oversubscribe", "--bind-to", "none", "-np", "2", BIN, "survey", sample,
         "--output-dir", "out", "--mpi", "--threads", "1", "--omp-threads", "1"] + common, os.path.dirname(out), 1,
        MPI_ENV)
    print("     survey mpi2_threads1: %.1f s" % (time.time() - t0))
    compare("survey: %s vs 2 MPI ranks x 1 thread" % runs[0][0], ref, out)


def main():
    t0 = time.time()
    shutil.rmtree(SCRATCH, ignore_errors=True)
    os.makedirs(SCRATCH)
    runs = [("run1", 2), ("run2", 2), ("omp1", 1)]
    # Each run in its own folder with the same relative output folder: the resolved configuration (in
    # every FITS header and the _config.yaml) records output.directory, which must not differ.
    verb_runs("project", lambda d: [BIN, "project", os.path.join(EX, "project_cool_core.yaml"), "--output-dir",
                                    "out", "-q"], runs)
    obs = verb_runs("observe", lambda d: [BIN, "observe", os.path.join(EX, "observe_cool_core_vasta.yaml"),
                                          "--output-dir", "out", "--particles", "20000", "-q"], runs)
    # Negative control: another observation seed must change the counts and the events, so the comparison
    # does see the data units.
    d = os.path.join(SCRATCH, "observe", "seed7002")
    os.makedirs(d)
    run([BIN, "observe", os.path.join(EX, "observe_cool_core_vasta.yaml"), "--output-dir", "out", "--particles",
         "20000", "--seed", "7002", "-q"], d, 2)
    compare("observe: run1 vs --seed 7002 (negative control)", os.path.join(obs[0][2], "out"), os.path.join(d, "out"),
            expect_differences=[r"_counts\.fits\[COUNTS\]: data unit differs", r"_events\.fits\[EVENTS\]: data unit"])
    # measure reads the products of the first observe run; outputs under the same relative names.
    products_prefix = os.path.join(obs[0][2], "out", "Maren-7_Vasta-LA")
    verb_runs("measure", lambda d: (os.makedirs(os.path.join(d, "out")), [
        BIN, "measure", os.path.join(EX, "measure_cool_core_vasta.yaml"), "--observation", products_prefix,
        "--realisations", "20", "--json", "out/m.json", "--csv", "out/m.csv", "--png", "out/m.png", "--no-table",
        "-q"])[1], runs, need_fits=False)
    survey_runs()
    print("determinism: %.0f s" % (time.time() - t0))
    if failures:
        print("FAILED: " + "; ".join(failures))
        sys.exit(1)
    shutil.rmtree(SCRATCH, ignore_errors=True)


main()
