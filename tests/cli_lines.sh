#!/usr/bin/env bash
# kilter lines: the command on the IEEE 13-node reference feeder and on small feeders.
#   bash tests/cli_lines.sh KILTER_BINARY SOURCE_DIR
# Checks that:
#  - the CSV has the documented header and, with --earth-return modified, reproduces
#    published elements of the IEEE 13-node configurations 601, 602, 606 (Z within
#    0.1 % or 0.0005 ohm/mile, B within 0.1 %, 606 B within 0.5 %; IEEE PES 13-node
#    test feeder data sheet);
#  - the default (complete series) differs from --earth-return modified (they are different forms);
#  - JSON parses (when python3 is present) and -o writes the same bytes as stdout;
#  - a feeder in SI units prints _per_km columns;
#  - overlapping cables are a located error (exit 2), a bad --earth-return is a usage error (64).
set -u
kilter=$1
src=$2
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
fails=0
fail() { echo "FAIL: $*"; fails=$((fails + 1)); }
ieee="$src/feeders/reference/ieee-13-node.yaml"

"$kilter" lines "$ieee" --earth-return modified --format csv >"$work/approx.csv" || fail "kilter lines --format csv"
head -1 "$work/approx.csv" | grep -qx 'name,row,col,r_ohm_per_mile,x_ohm_per_mile,b_us_per_mile' ||
    fail "CSV header: $(head -1 "$work/approx.csv")"

# expect NAME ROW COL R X B BTOL: published values (IEEE 13-node data sheet)
expect() {
    awk -F, -v n="$1" -v r="$2" -v c="$3" -v R="$4" -v X="$5" -v B="$6" -v bt="$7" '
        function ok(got, want, rel, abs_) { d = got - want; if (d < 0) d = -d;
            lim = rel * (want < 0 ? -want : want); if (lim < abs_) lim = abs_; return d <= lim }
        $1 == n && $2 == r && $3 == c { found = 1
            if (!ok($4, R, 0.001, 0.0005) || !ok($5, X, 0.001, 0.0005) || !ok($6, B, bt, 0.0005)) {
                print "  got " $0; exit 1 } }
        END { if (!found) { print "  no row " n "," r "," c; exit 1 } }' "$work/approx.csv" ||
        fail "$1 $2$3: expected $4+j$5 ohm/mile, $6 uS/mile"
}
expect 601 a a 0.3465 1.0179 6.2998 0.001
expect 601 a b 0.1560 0.5017 -1.9958 0.001
expect 601 b c 0.1535 0.3849 -0.7417 0.001
expect 602 c c 0.7436 1.2112 5.4246 0.001
expect 603 b c 0.2066 0.4591 -0.8999 0.001
expect 605 c c 1.3292 1.3475 4.5193 0.001
expect 606 a a 0.7982 0.4463 96.8897 0.005
expect 606 a c 0.2849 -0.0143 0 0.001
# phases a configuration lacks: no rows (603 has b and c only)
grep -q '^603,a,' "$work/approx.csv" && fail "603 has no phase a but a row for it was printed"
# 607 is given as a matrix and passes through unchanged
expect 607 a a 1.3425 0.5124 88.9912 0.0001

"$kilter" lines "$ieee" --format csv >"$work/full.csv" || fail "kilter lines (full)"
cmp -s "$work/full.csv" "$work/approx.csv" && fail "--earth-return complete and modified gave the same numbers"

"$kilter" lines "$ieee" --format json >"$work/out.json" || fail "kilter lines --format json"
if command -v python3 >/dev/null; then
    python3 -c 'import json,sys; d=json.load(open(sys.argv[1])); assert len(d["constructions"]) == 7, d' \
        "$work/out.json" || fail "JSON does not parse or lacks constructions"
fi
"$kilter" lines "$ieee" -o "$work/out.txt" || fail "kilter lines -o"
"$kilter" lines "$ieee" >"$work/stdout.txt"
cmp -s "$work/out.txt" "$work/stdout.txt" || fail "-o FILE differs from standard output"
grep -q 'Z1 = ' "$work/stdout.txt" || fail "table lacks the quoted Z1/Z0"
grep -q 'neutral transformation' "$work/stdout.txt" || fail "table lacks t_n"

cat >"$work/si.yaml" <<'YAML'
kilter-feeder: 1
name: Brackenholt test lateral
units: si
source: {bus: src, nominal_voltage: 11 kV, frequency: 50 Hz}
conductors:
  - {name: al95, resistance: 0.32 ohm/km, gmr: 4.4 mm, diameter: 12.5 mm}
  - {name: cu2, resistance: 9.0 ohm/km, gmr: 0.6 mm, diameter: 1.6 mm}
cables:
  - {name: cn95, kind: concentric-neutral, conductor: al95, neutral_strand: cu2, strands: 16, diameter_over_neutral: 34 mm}
layouts:
  - name: trench
    kind: underground
    positions:
      - {id: "1", x: 0 m, depth: 0.9 m}
      - {id: "2", x: 0.15 m, depth: 0.9 m}
      - {id: "3", x: 0.30 m, depth: 0.9 m}
constructions:
  - {name: ug95, layout: trench, cable: cn95, phases: {a: "1", b: "2", c: "3"}}
sections:
  - {name: s1, from: src, to: b1, length: 1.2 km, construction: ug95}
loads:
  - {name: l1, bus: b1, connection: wye, model: constant-power, power: {a: 100 + j30 kVA, b: 100 + j30 kVA, c: 100 + j30 kVA}}
YAML
"$kilter" lines "$work/si.yaml" --format csv >"$work/si.csv" || fail "kilter lines on an SI feeder"
head -1 "$work/si.csv" | grep -qx 'name,row,col,r_ohm_per_km,x_ohm_per_km,b_us_per_km' ||
    fail "SI header: $(head -1 "$work/si.csv")"

sed 's/x: 0.15 m/x: 0.01 m/' "$work/si.yaml" >"$work/bad.yaml"
"$kilter" lines "$work/bad.yaml" >"$work/bad.out" 2>"$work/bad.err"
rc=$?
[ $rc -eq 2 ] || fail "overlapping cables: exit $rc, expected 2"
grep -q 'bad.yaml:[0-9]*:[0-9]*: construction ug95: .*overlap' "$work/bad.err" ||
    fail "overlapping cables: message not located: $(cat "$work/bad.err")"
[ -s "$work/bad.out" ] && fail "overlapping cables: numbers printed anyway"

"$kilter" lines "$ieee" --earth-return bogus >/dev/null 2>&1
rc=$?
[ $rc -eq 64 ] || fail "--earth-return bogus: exit $rc, expected 64"

[ $fails -eq 0 ] && echo "cli_lines: all checks passed"
exit $((fails > 0))
