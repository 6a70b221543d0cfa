#!/usr/bin/env bash
# Install the Debian 12 packages icmscope needs, only those missing.
# Runs apt-get as root (directly, or through sudo when not root).
set -euo pipefail
PKGS=(g++ cmake make pkg-config
      libcfitsio-dev wcslib-dev libgsl-dev libeigen3-dev libyaml-cpp-dev
      libboost-program-options-dev catch2 libhdf5-dev libfftw3-dev
      libplplot-dev plplot-driver-cairo libnanoflann-dev
      python3 python3-numpy python3-astropy python3-scipy python3-h5py)
PKGS+=(${ICMSCOPE_EXTRA_PKGS:-})
missing=()
for p in "${PKGS[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if [ ${#missing[@]} -eq 0 ]; then
  echo "deps: all ${#PKGS[@]} Debian packages present"
  exit 0
fi
SUDO=""
if [ "$(id -u)" -ne 0 ]; then SUDO="sudo"; fi
echo "deps: installing ${missing[*]}"
$SUDO apt-get update -qq
DEBIAN_FRONTEND=noninteractive $SUDO apt-get install -y -qq --no-install-recommends "${missing[@]}"
