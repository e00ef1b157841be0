#!/usr/bin/env bash
# Scale benchmark of the fault study (issue 16: faults at every bus of a 100,000-bus feeder in a
# few seconds): builds kilter in Release, generates synthetic feeders with kl_synth (fixed seed)
# and times `kilter faults FILE --format csv` (the bus table, every fault type at every bus:
# some ten cases a three-phase bus) end to end, and the same with the case table written too
# (--workbook is left out: a million-row sheet is beyond a workbook).  Prints one table.
#
#   scripts/bench_faults.sh [--sizes "1000 10000 100000"] [--seed S]
set -eu
cd "$(dirname "$0")/.."

sizes="1000 10000 100000"
seed=1
while [ $# -gt 0 ]; do
  case "$1" in
    --sizes) sizes="$2"; shift ;;
    --seed) seed="$2"; shift ;;
    *) echo "usage: scripts/bench_faults.sh [--sizes \"N ...\"] [--seed S]" >&2; exit 2 ;;
  esac
  shift
done

build=build-bench
cmake -S . -B "$build" -DCMAKE_BUILD_TYPE=Release -DKILTER_TESTS=OFF >/dev/null
cmake --build "$build" -j2 --target kl_synth kilter-cli >/dev/null
dir=$(mktemp -d "${TMPDIR:-/tmp}/kilter-bench-faults.XXXXXX")
trap 'rm -rf "$dir"' EXIT

# wall seconds, user CPU seconds and peak resident MB of one kilter run
timed() {
  if [ -x /usr/bin/time ]; then
    /usr/bin/time -f "%e %U %M" -o "$dir/time.txt" "$@" >/dev/null
    read -r w u m < "$dir/time.txt"
    echo "$w $u $((m / 1024))"
  else
    t0=$(date +%s.%N); "$@" >/dev/null; echo "$(echo "$(date +%s.%N) - $t0" | bc) - -"
  fi
}

echo "kilter fault-study benchmark: seed $seed, $(date -u +%Y-%m-%d)"
echo "machine: $(nproc) cores, load average $(cut -d' ' -f1-3 /proc/loadavg)"
printf '%10s %9s %10s %9s %8s | %10s %9s %8s\n' N "cases" "buses s" "CPU s" "peak MB" \
  "+cases s" "CPU s" "peak MB"
for n in $sizes; do
  f="$dir/synth-$n-$seed.yaml"
  "$build/kl_synth" --buses "$n" --seed "$seed" -o "$f"
  read -r w u m <<< "$(timed "$build/kilter" faults "$f" --format csv -o "$dir/buses.csv")"
  read -r w2 u2 m2 <<< "$(timed "$build/kilter" faults "$f" --format csv --table cases -o "$dir/cases.csv")"
  cases=$(($(wc -l < "$dir/cases.csv") - 1))
  printf '%10s %9s %10s %9s %8s | %10s %9s %8s\n' "$n" "$cases" "$w" "$u" "$m" "$w2" "$u2" "$m2"
done
