#!/usr/bin/env bash
# The whole test suite again, built with AddressSanitizer + UndefinedBehaviorSanitizer in
# build-asan/ (Debug at -O1: the cheapest build that still runs the suite in reasonable time).
# Any sanitizer report stops the process that made it (-fno-sanitize-recover=all,
# halt_on_error), so the test fails; the tests that run the apps run the sanitized apps.
# The package tests (label "package") are left out: they rebuild the library without the
# sanitizers and test the packaging, which the plain run of scripts/test.sh covers.
# The Python package is not built (-DORDEX_PYTHON=OFF): a sanitized extension module cannot be
# loaded by the unsanitized interpreter. ordex-sweep is built without MPI (-DORDEX_MPI=OFF):
# the MPI runtime's own allocations would be reported as leaks; its threaded path is tested.
set -euo pipefail
cd "$(dirname "$0")/.."
flags="-O1 -g -fno-omit-frame-pointer -fsanitize=address,undefined -fno-sanitize-recover=all"
cmake -S . -B build-asan -DCMAKE_BUILD_TYPE=Debug -DORDEX_TESTS=ON -DORDEX_NATIVE=OFF -DORDEX_PYTHON=OFF -DORDEX_MPI=OFF \
      -DCMAKE_CXX_FLAGS="$flags" -DCMAKE_EXE_LINKER_FLAGS="-fsanitize=address,undefined" \
      -DCMAKE_SHARED_LINKER_FLAGS="-fsanitize=address,undefined" "$@" >/dev/null
# The suppressions hold for the test discovery the build runs too.
export LSAN_OPTIONS="suppressions=$PWD/tests/lsan.supp:print_suppressions=0"
cmake --build build-asan -j2
export ASAN_OPTIONS="halt_on_error=1:detect_leaks=1:detect_stack_use_after_return=0:strict_string_checks=1"
export UBSAN_OPTIONS="halt_on_error=1:print_stacktrace=1"
# Tests that compare peak memory skip the comparison: ASan's quarantine holds freed memory.
export ORDEX_SANITIZED=1
cd build-asan
ctest --output-on-failure -j2 --timeout 2700 -LE package
