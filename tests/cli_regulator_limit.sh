#!/usr/bin/env bash
# Issue 14, defect 2: an automatic regulator whose set point is out of its reach stops at its last
# tap; the load flow converges and used to say nothing of it.  Every output of flow and study now
# reports the unit held at its limit and the set point not met (text note, CSV and JSON status and
# set_point_met, the HTML report's regulators section).
# Reference: a step-voltage regulator gives +-10 % in 16 steps of 5/8 % each way (ANSI/IEEE
# C57.15, common practice), so at tap +16 its output is 1.1 x its input: 1.1 x 12.47 kV / sqrt(3)
# / PT 60 = 131.99 V on the 120 V base, short of the 135 V set point (band 134-136 V).
# Usage: bash cli_regulator_limit.sh KILTER_BINARY SOURCE_DIR
set -u
kilter=$1
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
fail() { echo "cli_regulator_limit: FAIL: $*"; exit 1; }

cat >"$tmp/held.yaml" <<'EOF'
kilter-feeder: 1
name: regulator set beyond its range
source: {bus: sub, nominal_voltage: 12.47 kV}
conductors:
  - {name: c1, resistance: 0.3 ohm/mi, gmr: 0.01 ft, diameter: 0.5 in, ampacity: 300 A}
layouts:
  - name: l1
    positions:
      - {id: "1", x: 0 ft, height: 28 ft}
      - {id: "2", x: 2 ft, height: 28 ft}
      - {id: "3", x: 4 ft, height: 28 ft}
constructions:
  - {name: k3, layout: l1, phase_conductor: c1, phases: {a: "1", b: "2", c: "3"}}
regulators:
  - {name: r1, connection: wye, control: automatic, voltage_level: 135 V, bandwidth: 2 V,
     pt_ratio: 60, ct_primary: 600 A}
sections:
  - {name: s0, from: sub, to: b0, regulator: r1}
  - {name: s1, from: b0, to: b1, length: 2 mi, construction: k3}
loads:
  - {bus: b1, power: {a: 1500 kVA, b: 1500 kVA, c: 1500 kVA}}
EOF
relay=$(awk 'BEGIN { printf "%.2f", 1.1 * 12470 / sqrt(3) / 60 }')   # 131.99

for cmd in flow study; do
  "$kilter" $cmd "$tmp/held.yaml" >"$tmp/$cmd.txt" 2>"$tmp/err" || fail "$cmd exited $?: $(cat "$tmp/err")"
  # standard error says it too, whatever the format (a bus CSV has no regulator column)
  grep -q "held.yaml:[0-9]*:[0-9]*: warning: regulator \"r1\": units abc held at the raise limit (+16 steps): its set point 135.0 V is not reached" \
    "$tmp/err" || { cat "$tmp/err"; fail "$cmd: no warning on standard error"; }
  for p in a b c; do
    grep -Eq "^r1 +$p +16 +16 +135\.0 +2\.0 +$relay +raise-limit$" "$tmp/$cmd.txt" ||
      { cat "$tmp/$cmd.txt"; fail "$cmd text: unit $p not shown held at +16 with relay $relay V"; }
    grep -q "note: unit $p is held at its raise limit (tap +16 of 16) .* the set point 135.0 V is not reached" \
      "$tmp/$cmd.txt" || fail "$cmd text: no note for unit $p"
  done
  "$kilter" $cmd --format csv --table regulators "$tmp/held.yaml" >"$tmp/$cmd.csv" || fail "$cmd csv"
  head -1 "$tmp/$cmd.csv" | grep -qx "regulator,unit,tap,steps,voltage_level_v,bandwidth_v,relay_v,set_point_met,status" ||
    fail "$cmd csv header: $(head -1 "$tmp/$cmd.csv")"
  [ "$(grep -c "^r1,[abc],16,16,135.000000,2.000000,$relay[0-9]*,0,raise-limit$" "$tmp/$cmd.csv")" = 3 ] ||
    { cat "$tmp/$cmd.csv"; fail "$cmd csv: three units held, set point not met"; }
  "$kilter" $cmd --format json "$tmp/held.yaml" >"$tmp/$cmd.json" || fail "$cmd json"
  if command -v python3 >/dev/null; then
    python3 - "$tmp/$cmd.json" "$relay" <<'PY' || fail "$cmd json: regulators"
import json, sys
d = json.load(open(sys.argv[1]))
(r,) = d["regulators"]
assert r["name"] == "r1" and r["taps"] == {"a": 16, "b": 16, "c": 16}, r
for p in "abc":
    u = r["units"][p]
    assert u["status"] == "raise-limit" and u["set_point_met"] is False, u
    assert abs(u["relay_v"] - float(sys.argv[2])) < 0.006, u
PY
  fi
done

"$kilter" study --html "$tmp/report.html" "$tmp/held.yaml" >/dev/null 2>"$tmp/err" || fail "study --html: $(cat "$tmp/err")"
grep -q '<section id="regulators">' "$tmp/report.html" || fail "report: no regulators section"
grep -q '3 regulator units are held at a tap limit' "$tmp/report.html" || fail "report: held units not said"
[ "$(grep -o '<td class="n bad">raise-limit</td>' "$tmp/report.html" | wc -l)" = 3 ] || fail "report: unit rows"

# Within reach (set point 126 V), the same feeder's units are in band, set point met.
sed 's/voltage_level: 135 V/voltage_level: 126 V/' "$tmp/held.yaml" >"$tmp/ok.yaml"
"$kilter" flow --format csv --table regulators "$tmp/ok.yaml" >"$tmp/ok.csv" || fail "flow in reach"
[ "$(grep -c ',1,in-band$' "$tmp/ok.csv")" = 3 ] || { cat "$tmp/ok.csv"; fail "in reach: not in band"; }
"$kilter" flow "$tmp/ok.yaml" 2>"$tmp/err" | grep -q "note:" && fail "in reach: a note printed"
[ -s "$tmp/err" ] && { cat "$tmp/err"; fail "in reach: a warning printed"; }
echo "cli_regulator_limit: ok"
