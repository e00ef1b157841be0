#!/usr/bin/env bash
# Speed of the rebalancing advisor (a benchmark, not a test): a 10-move plan
# on a generated 3,000-bus feeder (kl_synth, fixed seed).  Builds kilter in
# Release, prints the search line of the plan (load flows run, seconds, and
# when the greedy construction had its 10-move plan) and the process's CPU
# and wall time.  Figures for docs/rebalance.md.
#
#   scripts/bench_rebalance.sh [--buses N] [--seed S] [--time-limit T]
#
# The advisor keeps improving the plan (annealing, descent) until the time
# limit; the "greedy plan after" figure is the time to a complete plan.
set -eu
cd "$(dirname "$0")/.."
buses=3000
seed=1
limit=25
while [ $# -gt 0 ]; do
  case "$1" in
    --buses) buses="$2"; shift ;;
    --seed) seed="$2"; shift ;;
    --time-limit) limit="$2"; shift ;;
    *) echo "usage: scripts/bench_rebalance.sh [--buses N] [--seed S] [--time-limit T]" >&2; exit 2 ;;
  esac
  shift
done
build=build-bench-rebalance
cmake -S . -B "$build" -DCMAKE_BUILD_TYPE=Release -DKILTER_TESTS=OFF >/dev/null
cmake --build "$build" -j2 --target kl_synth kilter-cli >/dev/null
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
"$build/kl_synth" --buses "$buses" --seed "$seed" -o "$work/feeder.yaml"
taps=$("$build/kilter" rebalance "$work/feeder.yaml" --items | awk 'NR > 1 && ($2 == "lateral" || $2 == "tap-2ph") { n++ } END { print n + 0 }')
echo "feeder: kl_synth --buses $buses --seed $seed ($taps movable taps and laterals)"
echo "load average: $(cut -d' ' -f1-3 /proc/loadavg)"
start=$(date +%s.%N)
# the benchmark line: a 10-move plan on the generated feeder
/usr/bin/time -f "cpu %U s user, %S s system, wall %e s" \
  "$build/kilter" rebalance "$work/feeder.yaml" --max-moves 10 --time-limit "$limit" >"$work/plan.txt"
sed -n '2,3p' "$work/plan.txt"
grep -E '^ +10 ' "$work/plan.txt" >/dev/null && echo "plan: 10 moves" || echo "plan: fewer than 10 moves"
awk '/head neutral/ { print "head residual current: " $4 " A -> " $6 " A" }' "$work/plan.txt"
