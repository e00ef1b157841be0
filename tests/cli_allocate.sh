#!/usr/bin/env bash
# kilter allocate from the command line (issue 17): a small feeder of our own
# whose allocated feeder file, solved again by `kilter flow`, draws the
# measured head power per phase (the round trip through --write-feeder);
# the three measurement forms; a series with --reading; located errors of the
# measurement file with nothing written; a load flow that cannot carry the
# measurement, said, exit 3.
# Usage: bash cli_allocate.sh KILTER_BINARY SOURCE_DIR
set -u
kilter=$1
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
fail() { echo "cli_allocate: FAIL: $*"; exit 1; }

cat >"$tmp/f.yaml" <<'YAML'
kilter-feeder: 1
name: Brindle Lane
units: us
source: {bus: s, nominal_voltage: 12.47 kV}
constructions:
  - name: plain
    phases: abc
    impedance: {aa: 0.3 + j0.6 ohm/mi, ab: 0.1 + j0.3 ohm/mi, bb: 0.3 + j0.6 ohm/mi, cc: 0.3 + j0.6 ohm/mi}
sections:
  - {name: l1, from: s, to: m, length: 1 mi, construction: plain}
  - {name: l2, from: m, to: n, length: 0.5 mi, construction: plain}
loads:
  - {name: ta, bus: m, connected_kva: {a: 100 kVA}}
  - {name: tb, bus: n, connected_kva: {b: 50 kVA, c: 25 kVA}}
  - {name: tc, bus: n, connected_kva: {c: 75 kVA}, model: constant-impedance}
  - {name: big, bus: m, power: {c: 100 + j30 kVA}, connected_kva: {c: 500 kVA}, fixed_power: true}
YAML
printf 'phase,kw,kvar\na,80,30\nb,40,12\nc,160,50\n' >"$tmp/h.csv"

"$kilter" allocate "$tmp/f.yaml" --head "$tmp/h.csv" --write-feeder "$tmp/out.yaml" >"$tmp/t" \
  || fail "allocate: exit $?"
grep -q '^big .* -  *100\.00  *30\.00$' "$tmp/t" || { cat "$tmp/t"; fail "the held load is not held"; }
# round trip: the allocated feeder's own load flow draws the measurement (0.1 %)
"$kilter" flow "$tmp/out.yaml" >"$tmp/flow" || fail "flow of the allocated feeder: exit $?"
awk '/^input kW/ {a=$3; b=$4; c=$5} /^input kvar/ {qa=$3; qb=$4; qc=$5}
     function off(x, y) { return (x > y ? x - y : y - x) / y }
     END { if (off(a,80) > 0.001 || off(b,40) > 0.001 || off(c,160) > 0.001 || off(qa,30) > 0.002 ||
               off(qc,50) > 0.002) { print a, b, c, qa, qb, qc; exit 1 } }' "$tmp/flow" \
  || fail "the allocated feeder does not draw the measured head power"
grep -q 'connected_kva: {a: 100 kVA}' "$tmp/out.yaml" || fail "connected_kva not written back"
grep -q 'fixed_power: true' "$tmp/out.yaml" || fail "fixed_power not written back"

# the solving commands take the allocation directly: flow --head draws the measurement, study and
# rebalance run on the allocated loads (the same as solving the written feeder)
"$kilter" flow "$tmp/f.yaml" --head "$tmp/h.csv" >"$tmp/flowh" 2>"$tmp/note" || fail "flow --head: exit $?"
cmp -s "$tmp/flow" "$tmp/flowh" || { diff "$tmp/flow" "$tmp/flowh"; fail "flow --head differs from flow of the written feeder"; }
grep -q '^kilter: note: loads allocated by connected kVA to .*h.csv (3 load flows): a 0.7994' "$tmp/note" \
  || { cat "$tmp/note"; fail "flow --head: the note"; }
"$kilter" study "$tmp/f.yaml" --head "$tmp/h.csv" --format csv >"$tmp/sh" 2>/dev/null || fail "study --head"
"$kilter" study "$tmp/out.yaml" --format csv >"$tmp/so" || fail "study of the written feeder"
cmp -s "$tmp/sh" "$tmp/so" || fail "study --head differs from the study of the written feeder"
"$kilter" rebalance "$tmp/f.yaml" --head "$tmp/h.csv" --items >/dev/null 2>&1 || fail "rebalance --head"
"$kilter" flow "$tmp/f.yaml" --reading 17:00 >/dev/null 2>&1
[ $? -eq 64 ] || fail "--reading without --head: expected 64"

# CSV and JSON, the same figures
"$kilter" allocate "$tmp/f.yaml" --head "$tmp/h.csv" --format csv >"$tmp/c" || fail "csv: exit $?"
head -1 "$tmp/c" | grep -qx 'time,phase,basis,factor_kw,factor_kvar,measured_kw,measured_kvar,head_kw,head_kvar,mismatch_pct,held_kw,held_kvar' \
  || fail "csv header"
"$kilter" allocate "$tmp/f.yaml" --head "$tmp/h.csv" --format csv --table loads >"$tmp/cl" || fail "csv loads"
grep -q '^big,m,c,0,,100.000000,30.000000$' "$tmp/cl" || { cat "$tmp/cl"; fail "csv loads: held"; }
"$kilter" allocate "$tmp/f.yaml" --head "$tmp/h.csv" --format json >"$tmp/j" || fail "json: exit $?"
python3 -c 'import json,sys; d=json.load(open(sys.argv[1])); assert d["readings"][0]["phases"]["a"]["measured_kw"] == 80' "$tmp/j" \
  || fail "json"

# kW and pf give the same allocation as the kW and kvar they imply
awk 'BEGIN { printf "phase,kw,pf\na,80,%.12f\nb,40,%.12f\nc,160,%.12f\n", 80/sqrt(80^2+30^2), 40/sqrt(40^2+12^2), 160/sqrt(160^2+50^2) }' >"$tmp/pf.csv"
"$kilter" allocate "$tmp/f.yaml" --head "$tmp/pf.csv" --format csv --table loads >"$tmp/cl2" || fail "pf form"
cmp -s "$tmp/cl" "$tmp/cl2" || { diff "$tmp/cl" "$tmp/cl2"; fail "kW + pf differs from kW + kvar"; }

# a series: every reading listed; --reading picks one; --write-feeder needs one
printf 'time,kw_a,kvar_a,kw_b,kvar_b,kw_c,kvar_c\n17:00,80,30,40,12,160,50\n17:15,85,31,42,13,170,52\n' >"$tmp/s.csv"
"$kilter" allocate "$tmp/f.yaml" --head "$tmp/s.csv" --format csv >"$tmp/sc" || fail "series: exit $?"
[ "$(grep -c '^17:' "$tmp/sc")" = 6 ] || fail "series: 2 readings x 3 phases"
"$kilter" allocate "$tmp/f.yaml" --head "$tmp/s.csv" --reading 17:00 --format csv --table loads >"$tmp/s1" \
  || fail "--reading 17:00"
cmp -s "$tmp/cl" "$tmp/s1" || fail "the series' 17:00 differs from the same snapshot"
"$kilter" allocate "$tmp/f.yaml" --head "$tmp/s.csv" --write-feeder "$tmp/no.yaml" >/dev/null 2>"$tmp/e"
[ $? -eq 64 ] || fail "series --write-feeder without --reading: expected 64"
[ -e "$tmp/no.yaml" ] && fail "series: a feeder written"
"$kilter" allocate "$tmp/f.yaml" --head "$tmp/s.csv" --reading 18:00 >/dev/null 2>"$tmp/e"
[ $? -eq 64 ] && grep -q 'no such time' "$tmp/e" || fail "--reading 18:00"

# measurement errors: located, exit 2, nothing written
printf 'phase,kw,kvar\na,80,30\nb,40,12\na,160,50\n' >"$tmp/bad.csv"
"$kilter" allocate "$tmp/f.yaml" --head "$tmp/bad.csv" -o "$tmp/o.txt" --write-feeder "$tmp/o.yaml" 2>"$tmp/e"
[ $? -eq 2 ] || fail "duplicate phase: expected exit 2"
grep -q "bad.csv:4:1: phase a is given twice (first on line 2)" "$tmp/e" || { cat "$tmp/e"; fail "duplicate phase: message"; }
[ -e "$tmp/o.txt" ] || [ -e "$tmp/o.yaml" ] && fail "files written after an error"
printf 'phase,kw,kvar\na,80,30\nb,40,12\n' >"$tmp/noc.csv"
"$kilter" allocate "$tmp/f.yaml" --head "$tmp/noc.csv" 2>"$tmp/e" >/dev/null
[ $? -eq 2 ] && grep -q "noc.csv: loads on phase c have a basis to allocate but the measurement has no phase c" "$tmp/e" \
  || { cat "$tmp/e"; fail "phase c missing"; }
"$kilter" allocate "$tmp/f.yaml" --head "$tmp/missing.csv" 2>"$tmp/e" >/dev/null
[ $? -eq 4 ] || fail "missing file: expected exit 4"

# by energy: ta's two residential customers, 0.2 + 0.008 kWh each (Kersting sec. 2.3, from
# memory) over the diversity factor of two: (9.8 + 7.0) / 1.6 = 10.5 kW
printf 'customer,load,kwh,period,class\nm1,ta,1200,2026-07,res\nm2,ta,850,2026-07,res\nm3,tb,640,2026-07,res\nm4,tc,1500,2026-07,res\n' >"$tmp/e.csv"
printf 'class,intercept_kw,kw_per_kwh\nres,0.2,0.008\n' >"$tmp/cl.csv"
printf 'customers,diversity_factor\n2,1.6\n' >"$tmp/d.csv"
"$kilter" allocate "$tmp/f.yaml" --head "$tmp/h.csv" --energy "$tmp/e.csv" --classes "$tmp/cl.csv" \
  --diversity "$tmp/d.csv" --format csv --table loads >"$tmp/ec" || fail "energy: exit $?"
grep -q '^ta,m,a,1,10.500000,' "$tmp/ec" || { cat "$tmp/ec"; fail "energy: ta's basis"; }
"$kilter" allocate "$tmp/f.yaml" --head "$tmp/h.csv" --energy "$tmp/e.csv" >/dev/null 2>"$tmp/e"
[ $? -eq 64 ] || fail "--energy without --classes: expected 64"
printf 'customer,load,kwh,period,class\nm1,ta,1200,2026-07,res\nm2,tx,850,2026-07,res\n' >"$tmp/eb.csv"
"$kilter" allocate "$tmp/f.yaml" --head "$tmp/h.csv" --energy "$tmp/eb.csv" --classes "$tmp/cl.csv" \
  --write-feeder "$tmp/o.yaml" >/dev/null 2>"$tmp/e"
[ $? -eq 2 ] && grep -q "eb.csv:3:4: load 'tx' is not in the feeder" "$tmp/e" || { cat "$tmp/e"; fail "energy: unknown load"; }
[ -e "$tmp/o.yaml" ] && fail "energy: feeder written after an error"

# more than the feeder carries: the load flow fails, the message says so
printf 'phase,kw,kvar\na,90000,30000\nb,40,12\nc,160,50\n' >"$tmp/big.csv"
"$kilter" allocate "$tmp/f.yaml" --head "$tmp/big.csv" --write-feeder "$tmp/o.yaml" 2>"$tmp/e" >/dev/null
[ $? -eq 3 ] && grep -q "allocation stopped: the load flow did not converge" "$tmp/e" \
  || { cat "$tmp/e"; fail "no convergence"; }
[ -e "$tmp/o.yaml" ] && fail "feeder written after no convergence"
"$kilter" allocate "$tmp/f.yaml" --head "$tmp/h.csv" --head-tolerance 0 2>/dev/null >/dev/null
[ $? -eq 64 ] || fail "--head-tolerance 0: expected 64"
"$kilter" allocate "$tmp/f.yaml" 2>/dev/null >/dev/null
[ $? -eq 64 ] || fail "no --head: expected 64"
exit 0
