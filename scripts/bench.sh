#!/usr/bin/env bash
# Scale benchmark of the load flow: builds kilter in Release, generates
# synthetic feeders with kl_synth (fixed seed) and times each stage with
# kl_bench.  Prints one table; figures for docs/performance.md (method and history:
# docs/notes/benchmark-notebook.md).
#
#   scripts/bench.sh [--quick] [--full] [--rank-level PCT] [--seed S] [--repeat R] [--keep DIR]
#
#   (default)   N = 1,000 / 10,000 / 100,000, a deep chain of 250,000
#               sections (a few minutes on a loaded 2-core machine)
#   --quick     the same with a deep chain of 25,000 sections, the ranking
#               up to 10,000 buses (a minute or so)
#   --full      also N = 1,000,000 (several more minutes; about 180 MB of
#               YAML and a few GB of memory; the machine is shared: on request)
#   --rank-level PCT  VUF level for the contributor ranking (default 0.05 %,
#               far under any real limit, so that about one bus in ten is ranked;
#               0.2615 % at 1,000,000 buses, where seed 1 then ranks 3,115 buses)
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
# sweep, peak bytes per bus (whole run), the memory bandwidth of a STREAM
# triad measured in the same run, and the sweep's bound at that bandwidth
# (iterations x N x 360 bytes: what an iteration must at least read and write
# per bus, issue 22's count), to read beside the sweep time.
# Then a deep chain (250,000 sections; --quick 25,000): the largest
# nodal-sweep voltage difference with both solvers run to 1e-12 pu, the
# nodal solver's accuracy on a deep feeder (docs/performance.md).
# Then per size the study: `kilter study` at the default limits, and with the
# unbalance level at --rank-level so that thousands of buses are ranked
# (contributors at every one), wall and user CPU seconds and peak memory
# (GNU time).
# Times are process CPU seconds of each stage (see src/tools/kl_bench.c);
# the machine's load average is printed with the table because a shared
# machine slows memory-bound code even when CPU time is measured.
set -eu
cd "$(dirname "$0")/.."

sizes="1000 10000 100000"
rank_sizes="1000 10000 100000 1000000"
rank_level=""
chain=250000
seed=1
repeat=3
keep=""
while [ $# -gt 0 ]; do
  case "$1" in
    --quick) chain=25000; rank_sizes="1000 10000" ;;
    --full) sizes="1000 10000 100000 1000000" ;;
    --rank-level) rank_level="$2"; shift ;;
    --seed) seed="$2"; shift ;;
    --repeat) repeat="$2"; shift ;;
    --keep) keep="$2"; shift ;;
    *) echo "usage: scripts/bench.sh [--quick] [--full] [--rank-level PCT] [--seed S] [--repeat R] [--keep DIR]" >&2; exit 2 ;;
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
printf '%10s %7s %6s %8s %8s %8s %5s %8s %8s %5s %9s %8s %7s %7s %6s %8s\n' \
  N "file" "gen" "load" "derive+" "sweep" "iter" "nodal" "nodal" "iter" "nodal-sw" "peak" "peak" "bytes" "triad" "sweep"
printf '%10s %7s %6s %8s %8s %8s %5s %8s %8s %5s %9s %8s %7s %7s %6s %8s\n' \
  "" "MB" "s" "s" "build s" "s" "" "1st s" "again s" "" "pu" "MB" "sw MB" "/bus" "GB/s" "bound s"
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
  # the sweep's memory bound: iterations x N x 360 bytes (what one iteration
  # must at least read and write per bus, issue 22's count) at the triad rate
  # measured in the same run
  gbs=$(field "$line" triad_gbs)
  bound=-
  if [ "$gbs" != "0.00" ]; then
    bound=$(echo "scale=4; $(field "$line" sweep_iter) * $n * 360 / ($gbs * 1000000000)" | bc)
  fi
  printf '%10s %7s %6.2f %8s %8.3f %8s %5s %8s %8s %5s %9s %8s %7s %7s %6s %8s\n' \
    "$n" "$mb" "$gen" "$(field "$line" load_s)" "$db" "$(field "$line" sweep_s)" \
    "$(field "$line" sweep_iter)" "$(field "$line" nodal_first_s)" "$(field "$line" nodal_s)" \
    "$(field "$line" nodal_iter)" "$(field "$line" nodal_dv_pu)" "$peak" "$bpeak" \
    "$(field "$line" bytes_per_bus)" "$gbs" "$bound"
  echo "  $line" >> "$dir/bench.log"
  # the whole program as a user runs it: load, lines, network, load flow with
  # its result record, CSV bus table streamed out (GNU time's %e %U %M: wall
  # seconds, user CPU seconds, peak resident KiB)
  if [ -x /usr/bin/time ]; then
    /usr/bin/time -f "%e %U %M" -o "$dir/time.txt" "$build/kilter" flow "$f" --format csv >/dev/null
    read -r fw fu fm < "$dir/time.txt"
    echo "  $n buses: $fw s wall, $fu s user CPU, peak $((fm / 1024)) MB" \
         "($(( fm * 1024 / n )) bytes/bus)" >> "$dir/flow.log"
    # the study, at the default limits, then with contributors ranked at every
    # bus over --rank-level (output to a file under the run's directory)
    /usr/bin/time -f "%e %U %M" -o "$dir/time.txt" "$build/kilter" study "$f" --format csv \
      -o "$dir/study.csv"
    read -r sw su sm < "$dir/time.txt"
    line="  $n buses: study $sw s wall, $su s user, peak $((sm / 1024)) MB ($(( sm * 1024 / n )) bytes/bus)"
    case " $rank_sizes " in
      *" $n "*)
        level=${rank_level:-0.05}
        if [ -z "$rank_level" ] && [ "$n" = 1000000 ]; then level=0.2615; fi
        /usr/bin/time -f "%e %U %M" -o "$dir/time.txt" "$build/kilter" study "$f" \
          --level-unbalance "$level" --format csv --table contributors -o "$dir/contrib.csv"
        read -r rw ru rm < "$dir/time.txt"
        ranked=$(tail -n +2 "$dir/contrib.csv" | cut -d, -f1 | uniq | wc -l)
        line="$line; $ranked buses ranked (VUF over $level %): $rw s wall, $ru s user, peak $((rm / 1024)) MB" ;;
    esac
    echo "$line" >> "$dir/study.log"
  fi
done

# Nodal accuracy on a deep feeder: a trunk that is one chain of $chain short
# spans (invented impedances) with one unequal load at its far end.  The nodal
# matrix's conditioning grows with the square of the depth; both solvers run to
# 1e-12 pu so that their difference is their accuracy, not where each stopped.
chainf="$dir/chain-$chain.yaml"
awk -v n="$chain" 'BEGIN {
  print "# A deep chain for the nodal accuracy benchmark (scripts/bench.sh): invented data."
  print "kilter-feeder: 1"; print "name: deep chain " n; print "units: us"
  print "source: {bus: c0, nominal_voltage: 12.47 kV, frequency: 60 Hz}"
  print "constructions:"; print "  - name: span"; print "    phases: abc"
  print "    impedance: {aa: 0.31 + j0.98 ohm/mi, ab: 0.10 + j0.45 ohm/mi, ac: 0.10 + j0.38 ohm/mi, bb: 0.32 + j1.00 ohm/mi, bc: 0.10 + j0.42 ohm/mi, cc: 0.31 + j0.99 ohm/mi}"
  print "    susceptance: {aa: 5.6 uS/mi, ab: -1.8 uS/mi, ac: -1.1 uS/mi, bb: 5.3 uS/mi, bc: -0.8 uS/mi, cc: 5.1 uS/mi}"
  print "sections:"
  for (i = 1; i <= n; i++) printf "  - {name: s%d, from: c%d, to: c%d, length: 10 ft, construction: span}\n", i, i - 1, i
  print "loads:"
  print "  - {name: far, bus: c" n ", connection: wye, model: constant-power, power: {a: 9 + j3 kVA, b: 6 + j2 kVA, c: 11 + j4 kVA}}"
}' > "$chainf"
line=$("$build/kl_bench" --repeat 1 --tol 1e-12 "$chainf")
echo
echo "deep chain of $chain sections, both solvers to 1e-12 pu: largest nodal-sweep difference" \
     "$(field "$line" nodal_dv_pu) pu (sweep $(field "$line" sweep_s) s in $(field "$line" sweep_iter)" \
     "iterations, nodal $(field "$line" nodal_s) s in $(field "$line" nodal_iter))"
echo "  $line" >> "$dir/bench.log"

echo
echo "raw kl_bench lines:"
cat "$dir/bench.log"
if [ -s "$dir/flow.log" ]; then
  echo
  echo "the program end to end (kilter flow FILE --format csv > /dev/null):"
  cat "$dir/flow.log"
  echo
  echo "the study (kilter study FILE --format csv), and the contributor ranking at many buses:"
  cat "$dir/study.log"
else
  echo "(install GNU time, Debian package 'time', for the end-to-end kilter flow and study figures)"
fi
