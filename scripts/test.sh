#!/usr/bin/env bash
# The whole test suite on a fresh machine: install what is missing, build, run ctest.
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/install-deps.sh
bash scripts/build.sh -DORDEX_TESTS=ON
cd build
ctest --output-on-failure -j2 --timeout 900
