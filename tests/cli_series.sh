#!/usr/bin/env bash
# `kilter series` from the command line.
#   bash tests/cli_series.sh KILTER_BINARY SOURCE_DIR
# A constant shape on the IEEE 13-node test feeder (feeders/reference/) gives
# at every step the VUF `kilter study` computes for the snapshot; the
# statistics come out in every format; bad inputs get located messages and
# write nothing.
set -u
kilter=$1
src=$2
ieee13="$src/feeders/reference/ieee-13-node.yaml"
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
fails=0
fail() { echo "FAIL: $*"; fails=$((fails + 1)); }

# twelve hourly steps of a flat shape
{
    echo "time,flat"
    for h in 00 01 02 03 04 05 06 07 08 09 10 11; do echo "2026-07-06T$h:00+10:00,1"; done
} >"$work/flat.csv"

# 1. the series' step maximum VUF at 671 and 675 is the snapshot study's (0.0005 %)
"$kilter" study "$ieee13" --format csv >"$work/study.csv" || fail "kilter study exited $?"
if "$kilter" series "$ieee13" --shapes "$work/flat.csv" --shape flat --format csv \
    >"$work/unb.csv" 2>"$work/err"; then
    head -1 "$work/unb.csv" | grep -q '^bus,vuf_p95_week_pct,worst_week,weeks_over,en50160,' ||
        fail "unbalance CSV header: $(head -1 "$work/unb.csv")"
    for b in 671 675 632; do
        want=$(awk -F, -v b=$b '$1 == b { print $9 }' "$work/study.csv")
        got=$(awk -F, -v b=$b 'NR == 1 { for (i = 1; i <= NF; i++) if ($i == "vuf_max_pct") c = i }
                               $1 == b { print $c }' "$work/unb.csv")
        awk -v a="$want" -v b="$got" 'BEGIN { d = a - b; if (d < 0) d = -d; exit !(a != "" && d <= 5e-4) }' ||
            fail "bus $b: series VUF max $got %, study VUF $want %"
        p95=$(awk -F, -v b=$b '$1 == b { print $2 }' "$work/unb.csv")
        awk -v a="$want" -v b="$p95" 'BEGIN { d = a - b; if (d < 0) d = -d; exit !(d <= 5e-4) }' ||
            fail "bus $b: the weekly 95th percentile of a constant series $p95 % is not its value $want %"
    done
else
    fail "kilter series --format csv exited $?"; cat "$work/err"
fi

# 2. every format: text with its sections, JSON that parses, HTML, a record
"$kilter" series "$ieee13" --shapes "$work/flat.csv" --shape flat >"$work/out.txt" 2>"$work/err" ||
    fail "text exited $?"
for w in "12 steps of 60 min" "voltage unbalance (VUF)" "service voltage" "neutral and earth current" \
    "tap steps moved" "caution:"; do
    grep -q "$w" "$work/out.txt" || fail "text lacks '$w'"
done
"$kilter" series "$ieee13" --shapes "$work/flat.csv" --shape flat --format json -o "$work/out.json" \
    --html "$work/out.html" --record 671,611 --record-file "$work/rec.csv" 2>"$work/err" ||
    { fail "json exited $?"; cat "$work/err"; }
python3 -c 'import json, sys; d = json.load(open(sys.argv[1]))
assert d["summary"]["steps"] == 12 and d["summary"]["solved"] == 12, d["summary"]
for k in ("unbalance", "voltage", "sections", "regulators", "capacitors", "failures"): assert k in d, k
assert d["failures"] == []' "$work/out.json" || fail "JSON"
grep -q '<h2>Voltage unbalance' "$work/out.html" || fail "HTML lacks the unbalance table"
# 671 has three phases, 611 one: four lines a step, and the header
[ "$(wc -l <"$work/rec.csv")" -eq $((12 * 4 + 1)) ] || fail "record: $(wc -l <"$work/rec.csv") lines"
head -1 "$work/rec.csv" | grep -q '^time,bus,phase,volts,pu,vuf_pct,solved$' || fail "record header"
for t in sections voltage regulators failures; do
    "$kilter" series "$ieee13" --shapes "$work/flat.csv" --shape flat --format csv --table $t \
        >"$work/$t.csv" 2>"$work/err" || fail "--table $t exited $?"
done
grep -q '^reg1,a,0$' "$work/regulators.csv" || fail "a constant series moves no tap: $(cat "$work/regulators.csv")"

# a time-controlled bank (on 03:00-08:00, no delay) over twelve hours from midnight:
# out at 00:00, in at 03:00, out at 08:00: three switchings, five hours in service
printf 'capacitor,control,on,off,delay_s\ncap-675,time,03:00,08:00,0\n' >"$work/caps.csv"
"$kilter" series "$ieee13" --shapes "$work/flat.csv" --shape flat --capacitor-control "$work/caps.csv" \
    --format csv --table capacitors >"$work/caps.out" 2>"$work/err" || fail "capacitor control exited $?"
grep -q '^cap-675,time,3,5.000000$' "$work/caps.out" || fail "capacitors: $(cat "$work/caps.out")"
# metered: the 634 load from one meter
{ echo "meter,load,time,kw"; for h in 00 01 02 03 04 05 06 07 08 09 10 11; do
      echo "m1,634,2026-07-06T$h:00+10:00,100"; done; } >"$work/meters.csv"
"$kilter" series "$ieee13" --shapes "$work/flat.csv" --meters "$work/meters.csv" --format json \
    -o "$work/m.json" 2>"$work/err" || { fail "meters exited $?"; cat "$work/err"; }

# a rooftop system at half output all day: -100 kW on 675 a, a tenth of the total input energy gone
printf 'name,bus,phase,kw,power_factor,shape,control\npv-1,675,a,200,1,half,constant-pf\n' >"$work/pv.csv"
{ echo "time,flat,half"; for h in 00 01 02 03 04 05 06 07 08 09 10 11; do echo "2026-07-06T$h:00+10:00,1,0.5"; done; } >"$work/pvshapes.csv"
"$kilter" series "$ieee13" --shapes "$work/pvshapes.csv" --shape flat --format json -o "$work/pv0.json" 2>"$work/err" ||
    fail "no PV exited $?"
"$kilter" series "$ieee13" --shapes "$work/pvshapes.csv" --shape flat --generators "$work/pv.csv" --format json \
    -o "$work/pv1.json" 2>"$work/err" || { fail "PV exited $?"; cat "$work/err"; }
python3 -c 'import json, sys
a = json.load(open(sys.argv[1]))["summary"]["input_kwh"][0]; b = json.load(open(sys.argv[2]))["summary"]["input_kwh"][0]
assert 1100 < a - b < 1400, (a, b)  # 12 h x 100 kW, give or take the losses and voltage-dependent loads it changes' "$work/pv0.json" "$work/pv1.json" ||
    fail "PV: phase a input should fall by about the 1200 kWh it generates"

# 3. bad inputs: located, exit 2, nothing written
printf 'time,flat\n2026-07-06T00:00,1\n2026-07-06T01:00,1\n' >"$work/nooffset.csv"
"$kilter" series "$ieee13" --shapes "$work/nooffset.csv" --shape flat -o "$work/none.txt" 2>"$work/err"
rc=$?
[ $rc -eq 2 ] || fail "a time without offset: exit $rc, expected 2"
grep -q "nooffset.csv:2:1: .*no UTC offset" "$work/err" || fail "not located: $(cat "$work/err")"
[ -e "$work/none.txt" ] && fail "output written after a bad input"
printf 'load,shape\nnobody,flat\n' >"$work/assign.csv"
"$kilter" series "$ieee13" --shapes "$work/flat.csv" --assign "$work/assign.csv" 2>"$work/err" >/dev/null
[ $? -eq 2 ] || fail "unknown load: expected exit 2"
grep -q "assign.csv:2:1: nobody: no load of that name" "$work/err" || fail "assign: $(cat "$work/err")"
"$kilter" series "$ieee13" --shape flat 2>"$work/err" >/dev/null
[ $? -eq 64 ] || fail "no --shapes: expected exit 64"
"$kilter" series "$ieee13" --shapes "$work/flat.csv" --shape nothing 2>"$work/err" >/dev/null
[ $? -eq 2 ] || fail "unknown shape: expected exit 2"
grep -q "flat.csv:1:1: nothing: no such shape" "$work/err" || fail "unknown shape: $(cat "$work/err")"

[ $fails -eq 0 ] && echo "cli_series: all passed"
exit $((fails > 0))
