#!/usr/bin/env bash
# Speed and memory of the series of load flows (a benchmark, not a test; issue 18's targets):
#   year:  8,760 hourly steps on a generated 3,000-bus feeder     (target: under 5 s)
#   week:  1,008 ten-minute steps on a generated 100,000-bus feeder (target: under 60 s)
# and memory independent of the number of steps (the same feeder over a tenth of the steps
# and all of them: peak resident memory printed for both).  Builds kilter in Release, writes
# the feeders (kl_synth, fixed seed) and the shapes, and prints wall time and peak memory of
# `kilter series ... --format csv -o FILE` under GNU time.
#
#   scripts/bench_series.sh [year|week|all]     (default year)
set -eu
cd "$(dirname "$0")/.."
what=${1:-year}
build=build-bench-series
cmake -S . -B "$build" -DCMAKE_BUILD_TYPE=Release -DKILTER_TESTS=OFF >/dev/null
cmake --build "$build" -j2 --target kl_synth kilter-cli >/dev/null
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT

# shapes STEPS INTERVAL_MIN FILE: an evening-peaked daily shape with a seasonal swing
shapes() {
  python3 - "$1" "$2" "$3" <<'PY'
import datetime, math, sys
n, step, path = int(sys.argv[1]), int(sys.argv[2]), sys.argv[3]
d0 = datetime.datetime(2026, 1, 5)
with open(path, "w") as f:
    f.write("time,load\n")
    for i in range(n):
        d = d0 + datetime.timedelta(minutes=step * i)
        h = d.hour + d.minute / 60
        v = 0.5 + 0.4 * math.exp(-((h - 19) / 3) ** 2) + 0.1 * math.sin(2 * math.pi * i * step / 525600)
        f.write("%sZ,%.4f\n" % (d.strftime("%Y-%m-%dT%H:%M"), v))
PY
}

run() { # LABEL FEEDER SHAPES
  /usr/bin/time -f "$1: %e s wall, %U s user, peak %M KB" \
    "$build/kilter" series "$2" --shapes "$3" --shape load --format csv -o "$work/out.csv"
}

if [ "$what" = year ] || [ "$what" = all ]; then
  "$build/kl_synth" --buses 3000 --seed 1 -o "$work/f3k.yaml"
  shapes 8760 60 "$work/year.csv"
  shapes 876 60 "$work/tenth.csv"
  run "3,000 buses, 876 hourly steps" "$work/f3k.yaml" "$work/tenth.csv"
  run "3,000 buses, 8,760 hourly steps (target < 5 s)" "$work/f3k.yaml" "$work/year.csv"
fi
if [ "$what" = week ] || [ "$what" = all ]; then
  "$build/kl_synth" --buses 100000 --seed 1 -o "$work/f100k.yaml"
  shapes 1008 10 "$work/week.csv"
  run "100,000 buses, 1,008 ten-minute steps (target < 60 s)" "$work/f100k.yaml" "$work/week.csv"
fi
