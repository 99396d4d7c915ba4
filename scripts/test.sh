#!/usr/bin/env bash
# The whole test suite on a fresh machine: install what is missing, build and run ctest in
# build/, then the suite again under AddressSanitizer + UndefinedBehaviorSanitizer in
# build-asan/ (scripts/test-sanitizers.sh), then each libFuzzer target briefly in build-fuzz/
# (scripts/test-fuzz.sh: each target x ORDEX_FUZZ_SECONDS, default 20 s). CI allows 90 minutes
# on 2 cores; the sanitizer build is Debug at -O1 to keep it well inside that.
set -euo pipefail
cd "$(dirname "$0")/.."
bash scripts/install-deps.sh
bash scripts/build.sh -DORDEX_TESTS=ON
(cd build && ctest --output-on-failure -j2 --timeout 900)
bash scripts/test-sanitizers.sh
bash scripts/test-fuzz.sh
