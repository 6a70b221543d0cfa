#!/usr/bin/env bash
# Load test (not part of ctest; prints figures). Two runs, each timed with
# /usr/bin/time -v (wall time, peak resident memory):
#   1. a large snapshot: N_CELLS gas cells (default 1e8) written in chunks to
#      an HDF5 file of icmscope's own layout (float32 fields, support radii
#      included) with /usr/bin/python3 h5py/numpy, then projected by
#      `icmscope project` in chunked mode (cells: chunk_cells) onto a
#      PIXELS^2 map; the file is deleted afterwards;
#   2. a survey of SURVEY_LARGE (default 200) small targets (the five demo
#      models at redshifts 0.08 + 0.002 k, 5000 particles, 64^2 mock images,
#      20 ks, 5 realisations, one line of sight), its memory sampled every 2 s:
#      the peak while the first SURVEY_SMALL (default 50) targets ran against
#      the peak over the rest shows whether memory grows with the number of targets.
# Usage: bench/load_test.sh [BUILD_DIR]   (default: build)
# Environment: N_CELLS, CHUNK_CELLS (default 1048576), PIXELS (default 512),
#   SURVEY_SMALL, SURVEY_LARGE, SKIP_CELLS=1, SKIP_SURVEY=1, LOAD_SCRATCH (default BUILD_DIR/load_scratch),
#   KEEP=1 (keep the scratch folder), ICMSCOPE_BIN (default BUILD_DIR/icmscope), ICMSCOPE_SOURCE_DIR.
set -euo pipefail

SRC=${ICMSCOPE_SOURCE_DIR:-$(cd "$(dirname "$0")/.." && pwd)}
BUILD=$(cd "${1:-$SRC/build}" && pwd)
BIN=${ICMSCOPE_BIN:-$BUILD/icmscope}
PY=/usr/bin/python3
N_CELLS=${N_CELLS:-100000000}
CHUNK_CELLS=${CHUNK_CELLS:-1048576}
PIXELS=${PIXELS:-512}
SURVEY_SMALL=${SURVEY_SMALL:-50}
SURVEY_LARGE=${SURVEY_LARGE:-200}
SCRATCH=${LOAD_SCRATCH:-$BUILD/load_scratch}

[ -x "$BIN" ] || { echo "load_test: $BIN not found (build the icmscope target)" >&2; exit 2; }
[ -x /usr/bin/time ] || { echo "load_test: /usr/bin/time missing (apt-get install time)" >&2; exit 2; }
rm -rf "$SCRATCH"
mkdir -p "$SCRATCH"
cleanup() { [ "${KEEP:-0}" = 1 ] || rm -rf "$SCRATCH"; }
trap cleanup EXIT

# "wall_s peak_MB cpu_s cpu_percent" from a /usr/bin/time -v report (cpu = user + system).
figures() {
  awk -F': ' '/Elapsed \(wall clock\)/ { n = split($2, t, ":"); s = 0; for (i = 1; i <= n; i++) s = s * 60 + t[i] }
              /Maximum resident set size/ { kb = $2 }
              /User time \(seconds\)/ { u = $2 }
              /System time \(seconds\)/ { y = $2 }
              /Percent of CPU this job got/ { p = $2 }
              END { printf "%.1f %.0f %.1f %s\n", s, kb / 1024, u + y, p }' "$1"
}

echo "== icmscope load test, $(date -u '+%Y-%m-%d %H:%M UTC'), $(nproc) cores"
echo "   load before: $(uptime | sed 's/.*load average/load average/')"

if [ "${SKIP_CELLS:-0}" != 1 ]; then
  H5="$SCRATCH/big_cells.h5"
  echo
  echo "== 1. $N_CELLS cells: writing $H5 (chunks of 4e6 rows, float32)"
  t0=$(date +%s)
  "$PY" - "$H5" "$N_CELLS" <<'PY'
# A beta-model-like cluster: isotropic positions with a cored radial
# distribution, equal masses, density from the beta profile, a smooth
# temperature profile, and support radii H = (3 * 32 m / (4 pi rho))^(1/3)
# (the radius holding 32 particles' mass, a common SPH choice). Deterministic
# (seeded per chunk).
import sys, h5py, numpy as np
path, n = sys.argv[1], int(sys.argv[2])
chunk = 4_000_000
rc, beta, rmax = 150.0, 2.0 / 3.0, 3000.0          # kpc
m_gas = 1.0e14 / n                                  # Msun: 1e14 Msun of gas in total
with h5py.File(path, "w") as f:
    f.attrs["units"] = "kpc, km/s, Msun, Msun/kpc^3, keV, solar"
    f.attrs["layout_version"] = np.int32(1)
    f.attrs["program"] = "load_test.sh"
    g = f.create_group("cells")
    g.attrs["kind"] = "particles"
    g.attrs["count"] = np.uint64(n)
    ds = {k: g.create_dataset(k, shape=(n,) if k != "position" else (n, 3), dtype="f4", chunks=True)
          for k in ("position", "mass_msun", "density_msun_kpc3", "kT_keV", "metallicity_solar", "support_kpc")}
    for k, u in (("position", "kpc"), ("mass_msun", "Msun"), ("density_msun_kpc3", "Msun/kpc^3"),
                 ("kT_keV", "keV"), ("metallicity_solar", "solar"), ("support_kpc", "kpc")):
        ds[k].attrs["units"] = u
    # Radii from M(<r) of rho ~ (1 + r^2/rc^2)^-1 (beta = 2/3): M ~ r/rc - atan(r/rc), inverted on a table.
    x = np.linspace(0.0, rmax / rc, 200001)
    cum = x - np.arctan(x)
    cum /= cum[-1]
    rho0 = 1.0e14 / (4.0 * np.pi * rc**3 * (rmax / rc - np.arctan(rmax / rc)))
    for s in range(0, n, chunk):
        e = min(n, s + chunk)
        rng = np.random.default_rng([2026, s // chunk])
        r = rc * np.interp(rng.random(e - s), cum, x)
        mu = 2.0 * rng.random(e - s) - 1.0
        ph = 2.0 * np.pi * rng.random(e - s)
        st = np.sqrt(1.0 - mu * mu)
        pos = np.empty((e - s, 3), dtype="f4")
        pos[:, 0] = r * st * np.cos(ph)
        pos[:, 1] = r * st * np.sin(ph)
        pos[:, 2] = r * mu
        rho = rho0 * (1.0 + (r / rc) ** 2) ** (-1.5 * beta)
        ds["position"][s:e] = pos
        ds["mass_msun"][s:e] = np.float32(m_gas)
        ds["density_msun_kpc3"][s:e] = rho.astype("f4")
        ds["kT_keV"][s:e] = (6.0 * (1.0 + (r / 400.0) ** 2) ** -0.3).astype("f4")
        ds["metallicity_solar"][s:e] = np.float32(0.3)
        ds["support_kpc"][s:e] = np.cbrt(3.0 * 32.0 * m_gas / (4.0 * np.pi * rho)).astype("f4")
PY
  t1=$(date +%s)
  bytes=$(stat -c %s "$H5")
  echo "   written in $((t1 - t0)) s: $(awk -v b="$bytes" 'BEGIN { printf "%.2f GB (%.1f bytes per cell)", b / 1e9, b / '"$N_CELLS"' }')"
  cat > "$SCRATCH/big_project.yaml" <<EOF
target: {name: Load-1e8, redshift: 0.1, ra_deg: 150.0, dec_deg: 2.0}
cells:
  file: big_cells.h5
  chunk_cells: $CHUNK_CELLS
map: {line_of_sight: z, pixels: $PIXELS, pixel_arcsec: $(awk -v p="$PIXELS" 'BEGIN { printf "%.4g", 4096.0 / p }'), kernel: cubic_spline}
output: {directory: big_out, quicklook: false}
EOF
  echo "   projecting: icmscope project (chunk_cells: $CHUNK_CELLS, map ${PIXELS}^2, $(nproc) OpenMP threads)"
  echo "   load: $(uptime | sed 's/.*load average/load average/')"
  (cd "$SCRATCH" && /usr/bin/time -v "$BIN" project big_project.yaml > project.log 2> project.err) || {
    echo "load_test: project failed:" >&2; tail -5 "$SCRATCH/project.err" >&2; exit 1; }
  read -r wall peak cpu pct < <(figures "$SCRATCH/project.err")
  grep -E "^(info|warning)?:? ?(cells|project):" "$SCRATCH/project.err" "$SCRATCH/project.log" 2>/dev/null | sed 's/^[^:]*:/   /' | head -4 || true
  echo "   projection of $N_CELLS cells: wall ${wall} s, peak RSS ${peak} MB, CPU ${cpu} s (the job got ${pct} of one core:"
  echo "   shared machine), $(awk -v n="$N_CELLS" -v w="$wall" -v c="$cpu" 'BEGIN { printf "%.2f Mcells/s of wall time, %.2f Mcells per CPU second", n / w / 1e6, n / c / 1e6 }')"
  echo "   (the cells alone, in memory as float32 GasCells, would take $(awk -v n="$N_CELLS" 'BEGIN { printf "%.1f GB", n * 33 / 1e9 }'))"
  echo "   load after: $(uptime | sed 's/.*load average/load average/')"
  rm -f "$H5"
  echo "CELLS $N_CELLS file_GB $(awk -v b="$bytes" 'BEGIN { printf "%.2f", b / 1e9 }') wall_s $wall peak_MB $peak cpu_s $cpu cpu_pct $pct chunk_cells $CHUNK_CELLS pixels $PIXELS"
fi

if [ "${SKIP_SURVEY:-0}" != 1 ]; then
  echo
  # One survey of SURVEY_LARGE targets; a sampler records the resident memory
  # of the survey process every 2 s with the number of finished targets, so
  # the peak while the first SURVEY_SMALL targets ran can be compared with the
  # peak over the rest (memory must not grow with the number of targets).
  models=(maren7_cool_core tolva2_non_cool_core ilvany4_minor_merger kessra13_major_merger quellin31_poor_group)
  n=$SURVEY_LARGE
  y="$SCRATCH/survey_$n.yaml"
  {
    cat <<EOF
survey: {name: load$n, seed: 2026, output_directory: survey_$n, threads: 2}
defaults:
  emission: {table_kT_points: 96, table_Z_points: 4}
  map: {pixels: 64, pixel_arcsec: 16.0, kernel: cubic_spline}
  lines_of_sight: [z]
  model_particles: 5000
  observation: {instruments: [$SRC/config/instruments/vasta_la.yaml], exposures_ks: [20]}
  measure:
    realisations: {number: 5, source: observed}
    quicklook: false
    json: false
clusters:
EOF
    for ((k = 0; k < n; k++)); do
      m=${models[$((k % 5))]}
      z=$(awk -v k="$k" 'BEGIN { printf "%.3f", 0.08 + 0.002 * k }')
      echo "  - {name: T$(printf %03d "$k"), model: $SRC/demo_clusters/models/$m.yaml, redshift: $z}"
    done
  } > "$y"
  echo "== 2. survey of $n small targets (the five demo models, 5000 particles each, 64^2 px, 20 ks, 5 realisations,"
  echo "   2 targets at a time)"
  echo "   load: $(uptime | sed 's/.*load average/load average/')"
  (cd "$SCRATCH" && exec /usr/bin/time -v "$BIN" survey -q "survey_$n.yaml" > "survey_$n.log" 2> "survey_$n.err") &
  job=$!
  : > "$SCRATCH/rss.txt"
  while kill -0 "$job" 2> /dev/null; do
    pid=$(pgrep -f -n "icmscope survey -q survey_$n.yaml" || true)
    if [ -n "$pid" ]; then
      rss=$(awk '/VmRSS/ { print $2 }' "/proc/$pid/status" 2> /dev/null || true)
      done_n=$( (find "$SCRATCH/survey_$n/targets" -name record.txt 2> /dev/null || true) | wc -l)
      [ -n "$rss" ] && echo "$done_n $rss" >> "$SCRATCH/rss.txt"
    fi
    sleep 2
  done
  st=0
  wait "$job" || st=$?
  if [ "$st" != 0 ]; then echo "load_test: survey of $n exited with $st:" >&2; tail -5 "$SCRATCH/survey_$n.err" >&2; exit 1; fi
  rows=$(($(grep -vc '^#' "$SCRATCH/survey_$n/load${n}_catalog.csv") - 1))
  read -r wall peak cpu pct < <(figures "$SCRATCH/survey_$n.err")
  early=$(awk -v m="$SURVEY_SMALL" '$1 <= m && $2 > p { p = $2 } END { printf "%.0f", p / 1024 }' "$SCRATCH/rss.txt")
  late=$(awk -v m="$SURVEY_SMALL" '$1 > m && $2 > p { p = $2 } END { printf "%.0f", p / 1024 }' "$SCRATCH/rss.txt")
  echo "   $rows catalog rows; wall ${wall} s ($(awk -v n="$rows" -v w="$wall" 'BEGIN { printf "%.1f targets/min", 60 * n / w }')), CPU ${cpu} s (${pct} of one core)"
  echo "   peak RSS ${peak} MB over the run; sampled: ${early} MB while targets 1-$SURVEY_SMALL ran, ${late} MB for targets $((SURVEY_SMALL + 1))-$n"
  echo "SURVEY $n rows $rows wall_s $wall peak_MB $peak cpu_s $cpu cpu_pct $pct rss_first${SURVEY_SMALL}_MB $early rss_rest_MB $late"
  echo "   load after: $(uptime | sed 's/.*load average/load average/')"
fi
