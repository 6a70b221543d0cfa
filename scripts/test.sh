#!/usr/bin/env bash
# The README's test command: install missing Debian packages, build, run the
# whole suite with ctest.
set -euo pipefail
here=$(cd "$(dirname "${BASH_SOURCE[0]}")/.." && pwd)
"$here/scripts/deps.sh"
"$here/scripts/build.sh"
build=${ICMSCOPE_BUILD_DIR:-$here/build}
cd "$build"
ctest --output-on-failure -j "${ICMSCOPE_JOBS:-$(nproc)}" "$@"
