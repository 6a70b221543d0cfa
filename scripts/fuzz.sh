#!/usr/bin/env bash
# Bounded libFuzzer runs of the readers (fuzz/): builds build-fuzz with clang
# (ICMSCOPE_FUZZ=ON: libraries with -fsanitize=fuzzer-no-link,address,undefined)
# and runs every target for a fixed number of inputs with a fixed seed (at most
# ICMSCOPE_FUZZ_SECONDS, default 60) on a scratch copy
# of its committed seed corpus, one process at a time. Exit non-zero when any
# target finds a crash, a sanitizer report, a leak, a timeout or an
# out-of-memory input; the inputs are kept in build-fuzz/fuzz-artifacts/<target>/.
#
#   scripts/fuzz.sh                       # all targets, reproducible bounded runs (<= 60 s each)
#   ICMSCOPE_FUZZ_RUNS=-1 ICMSCOPE_FUZZ_SECONDS=600 scripts/fuzz.sh fits_image   # explore one target, 10 min
set -euo pipefail
here=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
secs=${ICMSCOPE_FUZZ_SECONDS:-60}
build=${ICMSCOPE_FUZZ_BUILD_DIR:-$here/build-fuzz}
jobs=${ICMSCOPE_JOBS:-$(nproc)}
targets=("$@")
[ ${#targets[@]} -gt 0 ] || targets=(yaml_config fits_image ogip_response cells_csv cells_hdf5)

# clang and its libFuzzer / sanitizer runtimes only for this script.
ICMSCOPE_EXTRA_PKGS="${ICMSCOPE_EXTRA_PKGS:-} clang libclang-rt-14-dev" "$here/scripts/deps.sh"

t0=$(date +%s)
CC=clang CXX=clang++ cmake -S "$here" -B "$build" -DCMAKE_BUILD_TYPE=RelWithDebInfo -DICMSCOPE_FUZZ=ON \
  -DICMSCOPE_TESTS=OFF -DICMSCOPE_BENCH=OFF -DICMSCOPE_MPI=OFF -DICMSCOPE_OPENMP=OFF >/dev/null
cmake --build "$build" -j "$jobs" --target "${targets[@]/#/fuzz_}"
echo "fuzz: build took $(( $(date +%s) - t0 )) s"

# A fixed random seed and a fixed number of inputs per target make the bounded
# run reproducible: CI replays the same mutation sequence that passed here
# (ICMSCOPE_FUZZ_SECONDS only caps the time; a slower machine runs a prefix of
# the same sequence). ICMSCOPE_FUZZ_RUNS=-1 fuzzes for the whole time instead,
# with a fresh seed (exploration while developing).
runs_of() {
  if [ -n "${ICMSCOPE_FUZZ_RUNS:-}" ]; then echo "$ICMSCOPE_FUZZ_RUNS"; return; fi
  case "$1" in
    yaml_config) echo 8000 ;;
    fits_image) echo 12000 ;;
    ogip_response) echo 15000 ;;
    cells_csv) echo 15000 ;;
    cells_hdf5) echo 3000 ;;
    *) echo 10000 ;;
  esac
}

max_len() {
  case "$1" in
    yaml_config) echo 12000 ;;
    cells_csv) echo 4096 ;;
    cells_hdf5) echo 16384 ;;
    *) echo 24000 ;;  # FITS: the seeds are 2-7 blocks of 2880 bytes
  esac
}

scratch=$(mktemp -d "${TMPDIR:-/tmp}/icmscope-fuzz.XXXXXX")
trap 'rm -rf "$scratch"' EXIT
# Leaks inside the system libraries' own error paths are not ours to fix;
# fuzz/lsan.supp names them (none of our frames may match).
export LSAN_OPTIONS="suppressions=$here/fuzz/lsan.supp:print_suppressions=0"
export UBSAN_OPTIONS="print_stacktrace=1:halt_on_error=1"
# CFITSIO and HDF5 size some allocations from header fields and handle a NULL
# from malloc as a read error, as with glibc; ASan would abort instead. Our
# own code is still held to 1 GiB per allocation by -malloc_limit_mb.
export ASAN_OPTIONS="allocator_may_return_null=1${ASAN_OPTIONS:+:$ASAN_OPTIONS}"
passed=0 failed=0
for t in "${targets[@]}"; do
  work="$scratch/$t"
  mkdir -p "$work/corpus" "$work/artifacts"
  cp "$here/fuzz/corpus/$t/"* "$work/corpus/"
  runs=$(runs_of "$t")
  seed=1
  [ "$runs" = "-1" ] && seed=0
  args=(-max_total_time="$secs" -runs="$runs" -seed="$seed" -max_len="$(max_len "$t")" -timeout=20 -rss_limit_mb=2048 -malloc_limit_mb=1024
        -print_final_stats=1 -artifact_prefix="$work/artifacts/")
  [ -f "$here/fuzz/$t.dict" ] && args+=(-dict="$here/fuzz/$t.dict")
  log="$work/log.txt"
  if "$build/fuzz/fuzz_$t" "${args[@]}" "$work/corpus" >"$log" 2>&1; then
    passed=$((passed + 1)); status=ok
  else
    failed=$((failed + 1)); status=FAILED
    keep="$build/fuzz-artifacts/$t"
    mkdir -p "$keep"
    cp "$work/artifacts/"* "$keep/" 2>/dev/null || true
    cp "$log" "$keep/log.txt"
    grep -E "ERROR|SUMMARY|==[0-9]+==|#[0-9]+ 0x" "$log" | head -40 || true
    echo "fuzz: $t: inputs and log kept in $keep"
  fi
  execs=$(sed -n 's/^stat::number_of_executed_units: *//p' "$log" | tail -1)
  rate=$(sed -n 's/^stat::average_exec_per_sec: *//p' "$log" | tail -1)
  cov=$(grep -oE "cov: [0-9]+" "$log" | tail -1 || true)
  echo "fuzz: $t: $status, ${execs:-?} inputs (seed $seed, at most ${secs} s; ${rate:-?}/s), ${cov:-cov: ?}"
done
echo "fuzz: total $(( $(date +%s) - t0 )) s"
echo "fuzz: $passed passed, $failed failed"
[ "$failed" -eq 0 ]
