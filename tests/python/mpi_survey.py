#!/usr/bin/env python3
"""`icmscope survey --mpi` under mpirun gives the single-process catalog, row for row.

Registered by tests/CMakeLists.txt only in ICMSCOPE_MPI builds (not a test_*.py,
so it is not globbed into every build). Invariant: the catalog does not depend
on how targets are spread over ranks and threads (each target's seeds derive
from the sample seed and its id; the catalog is assembled in target order).
Runs as root in CI with the OpenMPI settings of ../shared/reference/standards.md
(OMPI_ALLOW_RUN_AS_ROOT*, oversubscription, the vader single-copy setting).
"""
import os
import subprocess
import sys
import tempfile

BIN = os.environ["ICMSCOPE_BIN"]
SRC = os.environ["ICMSCOPE_SOURCE_DIR"]
MPIEXEC = os.environ.get("ICMSCOPE_MPIEXEC") or "mpirun"

SAMPLE = f"""survey: {{name: small, seed: 77}}
defaults:
  map: {{pixels: 96, pixel_arcsec: 10}}
  model_particles: 20000
  lines_of_sight: [z]
  observation: {{instruments: [{SRC}/config/instruments/vasta_la.yaml], exposures_ks: [10]}}
  measure: {{realisations: {{number: 12}}, quicklook: false}}
clusters:
  - {{name: Tolva-2, model: {SRC}/demo_clusters/models/tolva2_non_cool_core.yaml, lines_of_sight: [x, z]}}
  - name: Kessra-13
    model: {SRC}/demo_clusters/models/kessra13_major_merger.yaml
    lines_of_sight: {{random: 2}}
"""


def run(cmd):
    r = subprocess.run(cmd, capture_output=True, text=True)
    if r.returncode != 0:
        print(" ".join(cmd))
        print(r.stdout, r.stderr)
        sys.exit("command failed with status %d" % r.returncode)
    return r.stdout


with tempfile.TemporaryDirectory() as tmp:
    sample = os.path.join(tmp, "small.yaml")
    with open(sample, "w") as f:
        f.write(SAMPLE)
    common = ["--progress", "none", "--no-plots", "--omp-threads", "1"]
    run([BIN, "survey", sample, "--output-dir", os.path.join(tmp, "single"), "--threads", "1"] + common)
    ref = open(os.path.join(tmp, "single", "small_catalog.csv")).read()
    bad = 0
    for ranks, threads in ((2, 1), (2, 2)):
        out = os.path.join(tmp, "mpi_%d_%d" % (ranks, threads))
        text = run([MPIEXEC, "--allow-run-as-root", "--oversubscribe", "--bind-to", "none", "-np", str(ranks), BIN, "survey", sample,
                    "--output-dir", out, "--mpi", "--threads", str(threads)] + common)
        got = open(os.path.join(out, "small_catalog.csv")).read()
        if got != ref:
            bad += 1
            print("FAIL: %d ranks x %d threads: the catalog differs from the single-process run" % (ranks, threads))
        if text.count("survey small:") != 1:
            bad += 1
            print("FAIL: the summary should be printed once (by rank 0), got:\n" + text)
    if len(ref.splitlines()) != 5:
        bad += 1
        print("FAIL: expected 4 rows")
    if bad:
        sys.exit(1)
    print("survey --mpi: 2 ranks x 1 and x 2 threads give the single-process catalog")
