#!/usr/bin/env bash
# Configure and build icmscope (Release) into build/ (or $ICMSCOPE_BUILD_DIR).
set -euo pipefail
here=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
build=${ICMSCOPE_BUILD_DIR:-$here/build}
jobs=${ICMSCOPE_JOBS:-$(nproc)}
cmake -S "$here" -B "$build" -DCMAKE_BUILD_TYPE=${ICMSCOPE_BUILD_TYPE:-Release} ${ICMSCOPE_CMAKE_ARGS:-} >/dev/null
cmake --build "$build" -j "$jobs"
