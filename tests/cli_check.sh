#!/usr/bin/env bash
# kilter check from the command line: a good file, a broken one (exit 2 and a
# located message), --help, --version, output formats and the atomic -o write.
# Usage: bash cli_check.sh KILTER_BINARY SOURCE_DIR
set -u
kilter=$1
src=$2
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
fail() { echo "cli_check: FAIL: $*"; exit 1; }

# good-small.yaml has bus b7 beyond the open switch sw2 (the loader's tests of the part beyond an
# open switch), de-energized with a note; closed here, it is a file every analysis takes silently.
good="$tmp/good-small.yaml"
sed 's/{name: sw2, from: b4, to: b7, switch: open}/{name: sw2, from: b4, to: b7, switch: closed}/' \
  "$src/tests/data/good-small.yaml" >"$good"
grep -q "name: sw2, from: b4, to: b7, switch: closed" "$good" || fail "good-small.yaml: sw2 not found"
bad="$src/tests/data/broken-phase.yaml"

"$kilter" check "$good" >"$tmp/out" 2>"$tmp/err" || fail "good feeder: exit $?"
grep -q "Hollowmere test feeder" "$tmp/out" || fail "feeder name missing"
grep -Eq "^buses +9$" "$tmp/out" || fail "bus count"
# 2000 + 500 + 300 ft + 0.1 mi = 0.630 mi (1 mi = 5280 ft, NIST SP 811 B.8)
grep -q "line length       0.630 mi" "$tmp/out" || fail "line length"
# phase a: 160 (wye) + 17 (distributed) + 100/2 (delta ca) = 227 kW
grep -Eq "load kW +227.0 +186.0 +457.0 +870.0" "$tmp/out" || fail "per-phase kW"
grep -q "single-phase: a 0, b 0, c 1; two-phase: ab 0, bc 0, ca 1" "$tmp/out" || fail "taps"

"$kilter" check "$bad" >"$tmp/out" 2>"$tmp/err"
rc=$?
[ $rc -eq 2 ] || fail "broken feeder: exit $rc, expected 2"
grep -q "broken-phase.yaml:13:5: section \"s2\": phases 'b' are not all present at its upstream bus 'b1', which has 'ac'" "$tmp/err" \
  || { cat "$tmp/err"; fail "broken feeder message not located"; }

# Issue 14, defect 4: check runs the line constants and the network build and reports what flow
# reports: bare conductors on an underground layout load without error, and only the line
# constants refuse them; check passed such a file (exit 0) that flow then refused.
cat >"$tmp/bare-trench.yaml" <<'EOF'
kilter-feeder: 1
name: bare wires in a trench
source: {bus: sub, nominal_voltage: 12.47 kV}
conductors:
  - {name: c1, resistance: 0.3 ohm/mi, gmr: 0.01 ft, diameter: 0.5 in, ampacity: 300 A}
layouts:
  - name: trench
    kind: underground
    positions:
      - {id: "1", x: 0 in, depth: 4 ft}
      - {id: "2", x: 6 in, depth: 4 ft}
      - {id: "3", x: 12 in, depth: 4 ft}
constructions:
  - {name: k3, layout: trench, phase_conductor: c1, phases: {a: "1", b: "2", c: "3"}}
sections:
  - {name: s1, from: sub, to: b1, length: 100 ft, construction: k3}
loads:
  - {bus: b1, power: {a: 10 kVA}}
EOF
"$kilter" flow "$tmp/bare-trench.yaml" >"$tmp/out" 2>"$tmp/flow.err"
[ $? -eq 2 ] || fail "flow accepts bare conductors in a trench (the case needs a file flow refuses)"
"$kilter" check "$tmp/bare-trench.yaml" >"$tmp/out" 2>"$tmp/err"
rc=$?
[ $rc -eq 2 ] || { cat "$tmp/err"; fail "bare conductors in a trench: check exit $rc, expected 2 as flow"; }
[ ! -s "$tmp/out" ] || fail "check printed a summary of a file it refuses"
grep -q "bare-trench.yaml:14:5: construction k3: bare conductors on an underground layout" "$tmp/err" ||
  { cat "$tmp/err"; fail "check: the line constants' message is missing or not located"; }
cmp -s "$tmp/err" "$tmp/flow.err" || { diff "$tmp/err" "$tmp/flow.err"; fail "check and flow say different things"; }

cat >"$tmp/dead-end.yaml" <<'EOF'
kilter-feeder: 1
name: dead end beyond an open switch
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
sections:
  - {name: s1, from: sub, to: b1, length: 100 ft, construction: k3}
  - {name: sw, from: b1, to: b2, switch: open}
  - {name: s2, from: b2, to: b3, length: 100 ft, construction: k3}
loads:
  - {bus: b1, power: {a: 10 kVA}}
  - {bus: b3, power: {a: 5 kVA}}
EOF
# Issue 12, point 5: the buses beyond the open switch are de-energized, not an error: check,
# flow, study and rebalance accept the file, in every format, and say so in one note on standard
# error, the same for all; flow lists b2 and b3 at zero volts and check leaves their load out.
note="kilter: note: 2 buses beyond open switch 'sw' are de-energized (0 V): 'b2', 'b3'; 1 load (5.0 kVA) on them not counted as connected"
for args in "check" "check --format csv" "check --format json" "flow" "flow --format csv" \
            "flow --format json" "flow --solver nodal" "study" "study --format csv" \
            "study --format json" "rebalance" "rebalance --format json"; do
  # shellcheck disable=SC2086
  "$kilter" $args "$tmp/dead-end.yaml" >"$tmp/out" 2>"$tmp/err"
  rc=$?
  [ $rc -eq 0 ] || { cat "$tmp/err"; fail "dead end beyond an open switch: '$args' exit $rc, expected 0"; }
  [ "$(cat "$tmp/err")" = "$note" ] || { cat "$tmp/err"; fail "'$args': expected the one note"; }
done
"$kilter" flow "$tmp/dead-end.yaml" 2>/dev/null | grep -Eq "^b3 +a +0\.0 +0\.0000 +-$" \
  || fail "flow does not list b3 at zero volts"
"$kilter" check "$tmp/dead-end.yaml" 2>/dev/null | grep -Eq "^  load kW +10\.0 " \
  || fail "check counts the de-energized load as connected"

# Issue 14, defect 6: no control byte from a feeder file or an argument reaches the terminal raw;
# a name holding one is refused where it is written (ECMA-48 5.2: ESC and CSI act on the screen).
printf 'kilter-feeder: 1\nsource: {bus: sub, nominal_voltage: 12.47 kV}\nsections:\n  - {name: "s\\e[2J1", from: sub, to: b1, switch: closed}\n' \
  >"$tmp/escape.yaml"
"$kilter" check "$tmp/escape.yaml" >"$tmp/out" 2>"$tmp/err"
[ $? -eq 2 ] || fail "a name holding ESC: expected exit 2"
grep -q "escape.yaml:4:12: section #1: 'name' holds a control character (byte 0x1B at byte 2" "$tmp/err" ||
  { cat -v "$tmp/err"; fail "a name holding ESC: no located message"; }
"$kilter" flow --table "$(printf 'x\033[2Jy')" 2>"$tmp/err2"
grep -q 'x\\x1B\[2Jy' "$tmp/err2" || { cat -v "$tmp/err2"; fail "an argument's ESC not escaped"; }
if LC_ALL=C grep -q "$(printf '\033')" "$tmp/err" "$tmp/err2"; then fail "a raw ESC reached standard error"; fi

"$kilter" check "$tmp/none.yaml" 2>"$tmp/err"
[ $? -eq 4 ] || fail "missing file: expected exit 4"

"$kilter" --help | grep -q "64  bad command-line usage" || fail "--help lists exit codes"
"$kilter" check --help | grep -q -- "--format table|csv|json" || fail "check --help"
"$kilter" --version | grep -Eq "^kilter [0-9]+\.[0-9]+" || fail "--version"
# The demo feeder of the build tree is the build's own copy beside the program (installed,
# PREFIX/share/kilter: tests/cli_install.sh), the same file as feeders/demo/, and it is what
# runs without a FEEDER argument, whatever the working directory.
bdir=$(cd "$(dirname "$kilter")" && pwd -P)
"$kilter" check --help | grep -qx "  $bdir/share/kilter/demo/quillmere-f3.yaml" ||
  fail "check --help does not name the build's demo copy $bdir/share/kilter/demo/quillmere-f3.yaml"
cmp -s "$bdir/share/kilter/demo/quillmere-f3.yaml" "$src/feeders/demo/quillmere-f3.yaml" ||
  fail "the build's demo copy differs from feeders/demo/quillmere-f3.yaml"
(cd "$tmp" && "$kilter" check >"$tmp/demo.out") || fail "check of the demo from another directory: exit $?"
"$kilter" check "$bdir/share/kilter/demo/quillmere-f3.yaml" | cmp -s - "$tmp/demo.out" ||
  fail "check without FEEDER differs from check of the build's demo copy"
"$kilter" check --bogus "$good" 2>/dev/null
[ $? -eq 64 ] || fail "unknown option: expected 64"
"$kilter" frobnicate 2>/dev/null
[ $? -eq 64 ] || fail "unknown command: expected 64"

"$kilter" check "$good" --format json >"$tmp/j" || fail "json"
python3 -c "import json,sys; d=json.load(open(sys.argv[1])); assert d['buses']==9 and d['load_kw']['a']==227" "$tmp/j" \
  2>/dev/null || { command -v python3 >/dev/null && fail "json content"; }
"$kilter" check "$good" --format csv | grep -q "^load_kw,a,227," || fail "csv"

# -o: written whole under the final name, no temporary left behind
"$kilter" check "$good" -o "$tmp/summary.txt" >"$tmp/stdout" || fail "-o"
[ -s "$tmp/summary.txt" ] && [ ! -s "$tmp/stdout" ] || fail "-o wrote to the wrong place"
ls "$tmp" | grep -q "\.tmp\." && fail "temporary file left"
# a failed write leaves nothing: the directory does not exist
"$kilter" check "$good" -o "$tmp/nodir/summary.txt" 2>/dev/null
[ $? -eq 4 ] || fail "unwritable -o: expected exit 4"
[ ! -e "$tmp/nodir" ] || fail "unwritable -o left something"
# a broken feeder with -o leaves no output file
"$kilter" check "$bad" -o "$tmp/bad.txt" 2>/dev/null
[ ! -e "$tmp/bad.txt" ] || fail "output written for a broken feeder"
# A rating that does not fit its bus (issue 12 point 7): the IEEE 4-node bank (12.47 kV high
# winding) on a 13.2 kV source is 5.5 % off: a warning, exit 0; on 24.94 kV, 50 % off: an error,
# exit 2.  Both name the section, its position and both voltages.
sed 's/nominal_voltage: 12.47 kV/nominal_voltage: 13.2 kV/' "$src/feeders/reference/ieee-4-node-gry-gry-balanced.yaml" >"$tmp/fit.yaml"
"$kilter" flow "$tmp/fit.yaml" >"$tmp/out" 2>"$tmp/err" || fail "13.2 kV feeder: exit $?"
grep -q "^kilter: $tmp/fit.yaml:[0-9]*:5: warning: section \"bank\": .*rated 12.47 kV.*nominal 13.2 kV" "$tmp/err" \
  || { cat "$tmp/err"; fail "no warning of a rating 5.5 % off"; }
sed 's/nominal_voltage: 12.47 kV/nominal_voltage: 24.94 kV/' "$src/feeders/reference/ieee-4-node-gry-gry-balanced.yaml" >"$tmp/fit.yaml"
"$kilter" check "$tmp/fit.yaml" >"$tmp/out" 2>"$tmp/err"
[ $? -eq 2 ] || fail "24.94 kV feeder: expected exit 2"
grep -q "^kilter: $tmp/fit.yaml:[0-9]*:5: section \"bank\": .*rated 12.47 kV.*nominal 24.94 kV" "$tmp/err" \
  || { cat "$tmp/err"; fail "no error of a rating 50 % off"; }
"$kilter" check "$good" 2>&1 >/dev/null | grep -q warning && fail "warning on a fitting feeder"
echo "cli_check: ok"
