#!/usr/bin/env bash
# Scale benchmark of the load flow: builds kilter in Release, generates
# synthetic feeders with kl_synth (fixed seed) and times each stage with
# kl_bench.  Prints one table; figures for docs/performance.md (method and history:
# docs/notes/benchmark-notebook.md).
#
#   scripts/bench.sh [--quick] [--seed S] [--repeat R] [--keep DIR]
#
#   --quick     N = 1,000 / 10,000 / 100,000 only (a minute or so)
#   (default)   also N = 1,000,000 (a few minutes; about 180 MB of YAML and
#               a few GB of memory)
#   --seed S    kl_synth seed (default 1)
#   --repeat R  solves per feeder, the fastest is kept (default 3)
#   --keep DIR  keep the generated feeders in DIR (default: a temporary
#               directory removed at exit)
#
# Columns: file size, kl_synth time (wall), load, line constants + network
# build, sweep solve and its iterations, first nodal solve (assembly,
# ordering, factorisation, iterations), nodal solve again with the factors
# kept, nodal iterations, largest nodal-sweep voltage difference, peak
# resident memory of the whole run (nodal included) and up to the end of the
# sweep, and peak bytes per bus (whole run).
# Times are process CPU seconds of each stage (see src/tools/kl_bench.c);
# the machine's load average is printed with the table because a shared
# machine slows memory-bound code even when CPU time is measured.
set -eu
cd "$(dirname "$0")/.."

sizes="1000 10000 100000 1000000"
seed=1
repeat=3
keep=""
while [ $# -gt 0 ]; do
  case "$1" in
    --quick) sizes="1000 10000 100000" ;;
    --seed) seed="$2"; shift ;;
    --repeat) repeat="$2"; shift ;;
    --keep) keep="$2"; shift ;;
    *) echo "usage: scripts/bench.sh [--quick] [--seed S] [--repeat R] [--keep DIR]" >&2; exit 2 ;;
  esac
  shift
done

build=build-bench
cmake -S . -B "$build" -DCMAKE_BUILD_TYPE=Release -DKILTER_TESTS=OFF >/dev/null
cmake --build "$build" -j2 --target kl_synth kl_bench kilter-cli >/dev/null

if [ -n "$keep" ]; then
  dir="$keep"; mkdir -p "$dir"
else
  dir=$(mktemp -d "${TMPDIR:-/tmp}/kilter-bench.XXXXXX")
  trap 'rm -rf "$dir"' EXIT
fi

# value of key=... in a kl_bench line
field() { printf '%s\n' "$1" | tr ' ' '\n' | sed -n "s/^$2=//p"; }

echo "kilter load-flow benchmark: seed $seed, best of $repeat solves, $(date -u +%Y-%m-%d)"
echo "machine: $(nproc) cores, $(sed -n 's/^model name[[:space:]]*: //p' /proc/cpuinfo | head -1)," \
     "load average $(cut -d' ' -f1-3 /proc/loadavg)"
printf '%10s %7s %6s %8s %8s %8s %5s %8s %8s %5s %9s %8s %7s %7s\n' \
  N "file" "gen" "load" "derive+" "sweep" "iter" "nodal" "nodal" "iter" "nodal-sw" "peak" "peak" "bytes"
printf '%10s %7s %6s %8s %8s %8s %5s %8s %8s %5s %9s %8s %7s %7s\n' \
  "" "MB" "s" "s" "build s" "s" "" "1st s" "again s" "" "pu" "MB" "sw MB" "/bus"
for n in $sizes; do
  f="$dir/synth-$n-$seed.yaml"
  t0=$(date +%s.%N)
  "$build/kl_synth" --buses "$n" --seed "$seed" -o "$f"
  gen=$(echo "$(date +%s.%N) - $t0" | bc)
  line=$("$build/kl_bench" --repeat "$repeat" "$f")
  mb=$(echo "scale=1; $(field "$line" file_bytes) / 1048576" | bc)
  db=$(echo "$(field "$line" derive_s) + $(field "$line" build_s)" | bc)
  peak=$(echo "scale=0; $(field "$line" rss_peak_kib) / 1024" | bc)
  bpeak=$(echo "scale=0; $(field "$line" rss_sweep_kib) / 1024" | bc)
  printf '%10s %7s %6.2f %8s %8.3f %8s %5s %8s %8s %5s %9s %8s %7s %7s\n' \
    "$n" "$mb" "$gen" "$(field "$line" load_s)" "$db" "$(field "$line" sweep_s)" \
    "$(field "$line" sweep_iter)" "$(field "$line" nodal_first_s)" "$(field "$line" nodal_s)" \
    "$(field "$line" nodal_iter)" "$(field "$line" nodal_dv_pu)" "$peak" "$bpeak" \
    "$(field "$line" bytes_per_bus)"
  echo "  $line" >> "$dir/bench.log"
  # the whole program as a user runs it: load, lines, network, load flow with
  # its result record, CSV bus table streamed out (GNU time's %e %U %M: wall
  # seconds, user CPU seconds, peak resident KiB)
  if [ -x /usr/bin/time ]; then
    /usr/bin/time -f "%e %U %M" -o "$dir/time.txt" "$build/kilter" flow "$f" --format csv >/dev/null
    read -r fw fu fm < "$dir/time.txt"
    echo "  $n buses: $fw s wall, $fu s user CPU, peak $((fm / 1024)) MB" \
         "($(( fm * 1024 / n )) bytes/bus)" >> "$dir/flow.log"
  fi
done
echo
echo "raw kl_bench lines:"
cat "$dir/bench.log"
if [ -s "$dir/flow.log" ]; then
  echo
  echo "the program end to end (kilter flow FILE --format csv > /dev/null):"
  cat "$dir/flow.log"
else
  echo "(install GNU time, Debian package 'time', for the end-to-end kilter flow figures)"
fi
