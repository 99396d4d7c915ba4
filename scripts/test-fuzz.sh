#!/usr/bin/env bash
# Builds the libFuzzer targets of tests/fuzz/ with clang in build-fuzz/ and runs each for a
# short while (ORDEX_FUZZ_SECONDS, default 20) on its committed seed corpus. New inputs that
# libFuzzer finds go to build-fuzz/corpus/NAME/ (the committed seeds are only read); a crash
# leaves build-fuzz/artifacts/NAME-crash-* and fails the script. A crash found becomes a
# regression test in tests/ (the input as a file, the reader expected to fail cleanly).
set -euo pipefail
cd "$(dirname "$0")/.."
seconds="${ORDEX_FUZZ_SECONDS:-20}"
flags="-O1 -g -fno-omit-frame-pointer -fsanitize=fuzzer-no-link,address,undefined -fno-sanitize-recover=all"
cmake -S tests/fuzz -B build-fuzz -DCMAKE_BUILD_TYPE=Debug -DCMAKE_CXX_COMPILER=clang++ \
      -DCMAKE_CXX_FLAGS="$flags" -DCMAKE_EXE_LINKER_FLAGS="-fsanitize=address,undefined" "$@" >/dev/null
cmake --build build-fuzz -j2
mkdir -p build-fuzz/artifacts
export ASAN_OPTIONS="halt_on_error=1:detect_leaks=1"
export LSAN_OPTIONS="suppressions=$PWD/tests/lsan.supp:print_suppressions=0"  # CLN/GiNaC load-time tables
export UBSAN_OPTIONS="halt_on_error=1:print_stacktrace=1"
status=0
for seeds in tests/fuzz/corpus/*/; do
  name=$(basename "$seeds")
  work=build-fuzz/corpus/$name
  mkdir -p "$work"
  echo "== fuzz_$name: ${seconds} s"
  if ! build-fuzz/bin/ordex_fuzz_"$name" -max_total_time="$seconds" -rss_limit_mb=2048 -timeout=10 \
       -print_final_stats=1 -artifact_prefix="build-fuzz/artifacts/$name-" "$work" "$seeds" \
       > "build-fuzz/$name.log" 2>&1; then
    echo "fuzz_$name FAILED (build-fuzz/$name.log):"
    tail -n 40 "build-fuzz/$name.log"
    status=1
  else
    grep -E "^stat::number_of_executed_units|^stat::peak_rss_mb" "build-fuzz/$name.log" | tr '\n' ' '
    echo
  fi
done
exit $status
