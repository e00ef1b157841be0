#!/usr/bin/env bash
# Runs kilter's libFuzzer targets (tests/fuzz/) for a given time each and says
# what they found.
#
# Usage: scripts/fuzz.sh BUILD SECONDS [--keep-going] [TARGET ...]
#   BUILD     a build configured with clang and -DKILTER_SANITIZE=ON -DKILTER_FUZZ=ON
#             (scripts/test.sh makes one: build-test-clang); the targets are built here
#   SECONDS   time for each target
#   --keep-going  a finding is saved and the target restarted on its corpus until the
#             time is up (the long campaign); without it the first finding stops the
#             target and the script fails (CI)
#   TARGET    fuzz_load, fuzz_pipeline (default: both)
#
# The seed corpus of fuzz_load is the repository's feeders (feeders/*/, tests/data/) and the
# loader corpus (tests/corpus/); fuzz_pipeline's, the feeders that load; what it learns stays in BUILD/fuzz/TARGET/corpus for the
# next run, and findings (crash-*, leak-*, timeout-*, oom-*) go to BUILD/fuzz/TARGET/.
# A finding becomes a regression case: copy it to tests/corpus/ under a name that says
# what it is, fix the cause, and test_fuzz_corpus replays it through the loader and the
# whole chain from then on.
#
# Prints, per target: executions, coverage (libFuzzer's covered PCs of the instrumented
# code, and features), corpus size, findings; for fuzz_pipeline, how many inputs reached
# each step of the chain.  Exits 1 if anything was found.
set -eu
cd "$(dirname "$0")/.."
src=$(pwd)
if [ $# -lt 2 ]; then
  sed -n '4,12p' "$0" >&2
  exit 2
fi
build=$1 secs=$2
shift 2
keep=0
if [ "${1:-}" = --keep-going ]; then keep=1; shift; fi
targets=${*:-fuzz_load fuzz_pipeline}
case $secs in ''|*[!0-9]*) echo "fuzz.sh: SECONDS must be a whole number, not '$secs'" >&2; exit 2 ;; esac
cmake --build "$build" -j "$(nproc 2>/dev/null || echo 2)" --target $targets >/dev/null
found=0
for t in $targets; do
  dir="$build/fuzz/$t"
  mkdir -p "$dir/seed" "$dir/corpus"
  cp "$src"/feeders/*/*.yaml "$src"/tests/data/good-small.yaml "$dir/seed/"
  if [ "$t" = fuzz_load ]; then cp "$src"/tests/data/*.yaml "$src"/tests/corpus/* "$dir/seed/"; fi
  log="$dir/log.txt"
  : > "$log"
  end=$(( $(date +%s) + secs ))
  runs=0 execs=0
  while :; do
    left=$(( end - $(date +%s) ))
    [ "$left" -gt 0 ] || break
    runs=$((runs + 1))
    rc=0
    # max_len: the demo feeder (54 kB) and room to grow; timeout: a hang is a finding
    (cd "$dir" && KILTER_FUZZ_STATS=1 ASAN_OPTIONS=detect_leaks=1 \
       UBSAN_OPTIONS=print_stacktrace=1:halt_on_error=1 \
       "$(cd "$OLDPWD" && cd "$build" && pwd)/$t" -max_total_time="$left" -max_len=131072 \
       -timeout=10 -rss_limit_mb=2048 -print_final_stats=1 -artifact_prefix=./ corpus seed) \
       >>"$log" 2>&1 || rc=$?
    e=$(grep -o 'stat::number_of_executed_units: [0-9]*' "$log" | tail -1 | grep -o '[0-9]*$' || echo 0)
    execs=$((execs + e))
    [ "$rc" -eq 0 ] && break
    found=1
    echo "$t: finding (exit $rc); see $log" >&2
    grep -E '^(SUMMARY|==[0-9]+==ERROR|fuzz:)|runtime error|artifact_prefix' "$log" | tail -4 >&2 || true
    [ "$keep" -eq 1 ] || break
  done
  pcs=$(grep -o 'PC tables ([0-9]* PCs)' "$log" | head -1 | grep -o '[0-9]*' || echo '?')
  last=$(grep -E '^#[0-9]+' "$log" | tail -1)
  cov=$(echo "$last" | grep -o 'cov: [0-9]*' | grep -o '[0-9]*' || echo '?')
  ft=$(echo "$last" | grep -o 'ft: [0-9]*' | grep -o '[0-9]*' || echo '?')
  nfind=$(ls "$dir" | grep -cE '^(crash|leak|timeout|oom|slow-unit)-' || true)
  echo "$t: ${secs} s, $runs run(s), $execs executions, coverage $cov of $pcs PCs ($ft features)," \
       "corpus $(ls "$dir/corpus" | wc -l) files, findings $nfind"
  grep -E '^fuzz_pipeline: [0-9]+ inputs' "$log" | tail -1 || true
done
exit $found
