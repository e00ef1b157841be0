#!/usr/bin/env bash
# Installs what is missing, builds kilter twice (plain, and with AddressSanitizer +
# UndefinedBehaviorSanitizer) and runs the whole test suite under ctest in both builds.
# Compiler warnings are errors here (KILTER_WERROR; off by default for other compilers).
set -eu
cd "$(dirname "$0")/.."
bash scripts/setup.sh --with-browser
jobs=$(nproc 2>/dev/null || echo 2)
for variant in release sanitize; do
  dir="build-test-$variant"
  san=OFF; type=RelWithDebInfo
  if [ "$variant" = sanitize ]; then san=ON; type=Debug; fi
  echo "== $variant build ($dir) =="
  cmake -S . -B "$dir" -DCMAKE_BUILD_TYPE="$type" -DKILTER_SANITIZE="$san" -DKILTER_WERROR=ON >/dev/null
  cmake --build "$dir" -j "$jobs"
  (cd "$dir" && ASAN_OPTIONS=detect_leaks=1 UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 \
     ctest --output-on-failure -j "$jobs")
done
echo "all tests passed (release and sanitizer builds)"
