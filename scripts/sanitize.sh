#!/usr/bin/env bash
# AddressSanitizer + UndefinedBehaviorSanitizer run of the whole test suite:
# configures build-asan/ (or $ICMSCOPE_ASAN_BUILD_DIR) with ICMSCOPE_SANITIZE=ON,
# RelWithDebInfo (-O2 -g), builds the library, the CLI and the tests (not the
# bench/ programs), and runs every ctest there. Any sanitizer report fails the
# test that triggered it (halt_on_error, -fno-sanitize-recover=undefined), and
# then this script exits non-zero. Extra arguments go to ctest (e.g. -R io).
# Expects the Debian packages of scripts/deps.sh to be installed.
set -euo pipefail
here=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
build=${ICMSCOPE_ASAN_BUILD_DIR:-$here/build-asan}
jobs=${ICMSCOPE_JOBS:-$(nproc)}

# The build runs each test program once (Catch2 test discovery): give it the
# runtime options ctest uses (tests/CMakeLists.txt sets them per test).
export ASAN_OPTIONS="halt_on_error=1:detect_leaks=1:strict_string_checks=1:check_initialization_order=1"
export UBSAN_OPTIONS="halt_on_error=1:print_stacktrace=1"
export LSAN_OPTIONS="suppressions=$here/tests/sanitize/lsan.supp:print_suppressions=0"

t0=$(date +%s)
# ICMSCOPE_CMAKE_ARGS (e.g. -DICMSCOPE_MPI=ON from .ci/run) apply here too.
cmake -S "$here" -B "$build" -DCMAKE_BUILD_TYPE=RelWithDebInfo \
      ${ICMSCOPE_CMAKE_ARGS:-} -DICMSCOPE_SANITIZE=ON -DICMSCOPE_BENCH=OFF >/dev/null
cmake --build "$build" -j "$jobs"
t1=$(date +%s)
cd "$build"
status=0
ctest --output-on-failure -j "$jobs" "$@" || status=$?
t2=$(date +%s)
echo "sanitize: build $((t1 - t0)) s, ctest $((t2 - t1)) s (ASan+UBSan, $build)"
exit $status
