#!/usr/bin/env bash
# Installs the Debian packages ordex needs that are missing; does nothing when all are there.
# Non-interactive (CI runs it with no standard input).
set -euo pipefail
packages=(build-essential cmake pkg-config libeigen3-dev libsundials-dev libboost-dev
          libboost-program-options-dev libtomlplusplus-dev libmuparser-dev nlohmann-json3-dev
          libgtest-dev python3-numpy python3-scipy
          clang libclang-rt-dev   # clang + libFuzzer and sanitizer runtimes: scripts/test-fuzz.sh
          pybind11-dev python3-dev python3-pybind11 python3-matplotlib  # Python package and plots
          python3-pytest            # runs tests/python/test_*.py under ctest
          libhdf5-dev python3-h5py  # HDF5 output of matrix series
          libginac-dev              # exact Jacobians of nonlinear models
          libopenmpi-dev openmpi-bin  # ordex-sweep across ranks
          ccache)                   # faster rebuilds of the three test builds
missing=()
for p in "${packages[@]}"; do
  dpkg-query -W -f='${Status}' "$p" 2>/dev/null | grep -q "install ok installed" || missing+=("$p")
done
if [ ${#missing[@]} -eq 0 ]; then
  echo "ordex: all required packages are installed"
  exit 0
fi
echo "ordex: installing ${missing[*]}"
SUDO=""
[ "$(id -u)" -eq 0 ] || SUDO="sudo"
export DEBIAN_FRONTEND=noninteractive
$SUDO apt-get update -qq </dev/null
$SUDO apt-get install -y -qq --no-install-recommends "${missing[@]}" </dev/null
