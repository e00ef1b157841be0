#!/usr/bin/env bash
# Installs what is missing, builds kilter three times (plain; GCC with AddressSanitizer +
# UndefinedBehaviorSanitizer; clang with the same and the fuzz targets), runs the whole
# test suite under ctest in each build, then each fuzz target for a minute.
# Compiler warnings are errors here (KILTER_WERROR; off by default for other compilers).
set -eu
cd "$(dirname "$0")/.."
bash scripts/setup.sh --with-browser
jobs=$(nproc 2>/dev/null || echo 2)
# The third build is clang's, with AddressSanitizer and UndefinedBehaviorSanitizer
# (clang's -fsanitize=undefined includes float-cast-overflow) and the libFuzzer
# targets (tests/fuzz/), which scripts/fuzz.sh then runs for a minute each.
for variant in release sanitize clang; do
  dir="build-test-$variant"
  san=OFF; type=RelWithDebInfo; extra=""
  if [ "$variant" = sanitize ]; then san=ON; type=Debug; fi
  # optimized, unlike the GCC sanitizer build: instrumented twice (sanitizers and the
  # fuzzer's coverage) at -O0 the demo's rebalancing search would not finish in its time
  # limit and its golden plan would differ
  if [ "$variant" = clang ]; then san=ON; extra="-DCMAKE_C_COMPILER=clang -DKILTER_FUZZ=ON"; fi
  echo "== $variant build ($dir) =="
  # shellcheck disable=SC2086
  cmake -S . -B "$dir" -DCMAKE_BUILD_TYPE="$type" -DKILTER_SANITIZE="$san" -DKILTER_WERROR=ON $extra >/dev/null
  cmake --build "$dir" -j "$jobs"
  (cd "$dir" && ASAN_OPTIONS=detect_leaks=1 UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 \
     ctest --output-on-failure -j "$jobs")
done
echo "== fuzz targets, 60 s each (build-test-clang) =="
bash scripts/fuzz.sh build-test-clang 60
echo "all tests passed (release, sanitizer and clang sanitizer builds; fuzz targets)"
