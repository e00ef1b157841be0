#!/usr/bin/env bash
# kilter faults: the command on the IEEE 4-node reference feeders and the demo.
#   bash tests/cli_faults.sh KILTER_BINARY SOURCE_DIR
# Checks that:
#  - the CSV headers are the documented ones (docs/faults.md);
#  - a bolted phase-a fault at node 2 of the IEEE 4-node feeder (infinite bus, 2000 ft of
#    its 4-wire line) draws E_a / (Z_aa l) = 7199.56 / (0.3788 (0.4576 + j1.0780)) = 16230 A
#    within 0.1 %, by hand from the published line matrix (/work/shared/reference/ieee-4-node.md);
#  - the delta side of the grounded-wye/delta case has no earth path, an earth-fault factor of
#    sqrt(3) (the ungrounded system, common practice) and is not effectively grounded;
#  - text and JSON carry the caution; JSON parses with both tables; -o writes stdout's bytes;
#  - --prefault flow changes the figures; --workbook writes a workbook;
#  - the demo's ground relay window (pickup 240 A): its load residual is the study's head 3I0
#    (kilter study --format json, head_3i0), its smallest earth-fault residual the smallest
#    line-ground residual at the 12.47 kV buses within 10 % (the head carries the fault's residual
#    through the regulators' ratios; no grounding bank on the demo), each side judged by its margin;
#  - an unknown bus is a located input error (exit 2), bad options usage errors (64).
set -u
kilter=$1
src=$2
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
fails=0
fail() { echo "FAIL: $*"; fails=$((fails + 1)); }
gg="$src/feeders/reference/ieee-4-node-gry-gry-balanced.yaml"
gd="$src/feeders/reference/ieee-4-node-gry-delta-balanced.yaml"

"$kilter" faults "$gg" --format csv >"$work/buses.csv" || fail "faults --format csv"
head -1 "$work/buses.csv" | grep -qx 'bus,phases,base_ln_kv,r1_ohm,x1_ohm,r0_ohm,x0_ohm,x0_x1,r0_x1,earth_path,effectively_grounded,earth_fault_factor,max_amps,max_fault,min_amps,min_fault' ||
    fail "buses CSV header: $(head -1 "$work/buses.csv")"
"$kilter" faults "$gg" --format csv --table cases >"$work/cases.csv" || fail "faults --table cases"
head -1 "$work/cases.csv" | grep -qx 'bus,fault,phases,zf_ohm,fault_amps,ia_amps,ib_amps,ic_amps,i0_amps,i1_amps,i2_amps,residual_amps,neutral_amps,earth_amps,va_pu,vb_pu,vc_pu' ||
    fail "cases CSV header: $(head -1 "$work/cases.csv")"
awk -F, '$1 == "2" && $2 == "line-ground" && $3 == "a" && $4 + 0 == 0 { found = 1
        want = 7199.56 / (2000 / 5280 * sqrt(0.4576 ^ 2 + 1.0780 ^ 2)); d = $5 - want
        if (d < 0) d = -d; if (d > 0.001 * want) { print "  got " $5 ", want " want; exit 1 } }
    END { if (!found) { print "  no row"; exit 1 } }' "$work/cases.csv" ||
    fail "IEEE 4-node node 2, bolted a to ground"

"$kilter" faults "$gd" --format csv >"$work/gd.csv" || fail "faults grounded-wye/delta"
awk -F, '$1 == "3" { found = 1; if ($10 != "none" || $11 != "no" || $12 < 1.731 || $12 > 1.733) {
        print "  got " $0; exit 1 } } END { if (!found) exit 1 }' "$work/gd.csv" ||
    fail "delta side: no earth path, EFF sqrt(3), not effectively grounded"

"$kilter" faults >"$work/demo.txt" || fail "faults on the demo"
grep -q '^caution: fault currents are planning estimates' "$work/demo.txt" || fail "text caution"
"$kilter" faults --format json >"$work/demo.json" || fail "faults --format json"
"$kilter" faults --format json -o "$work/demo-o.json" || fail "faults -o"
cmp -s "$work/demo.json" "$work/demo-o.json" || fail "-o differs from standard output"
if command -v python3 >/dev/null; then
    python3 - "$work/demo.json" <<'PY' || fail "JSON"
import json, sys
d = json.load(open(sys.argv[1]))
assert d["caution"].startswith("caution: fault currents are planning estimates")
assert len(d["buses"]) > 10 and len(d["cases"]) > len(d["buses"])
for b in d["buses"]:
    assert b["min_amps"] is None or b["max_amps"] is None or b["min_amps"] <= b["max_amps"], b
PY
fi
"$kilter" faults --prefault flow --format csv >"$work/flow.csv" || fail "--prefault flow"
"$kilter" faults --format csv >"$work/noload.csv"
cmp -s "$work/flow.csv" "$work/noload.csv" && fail "--prefault flow gives the no-load figures"
"$kilter" faults --workbook "$work/f.xlsx" -o "$work/f.txt" || fail "--workbook"
[ -s "$work/f.xlsx" ] || fail "no workbook written"

"$kilter" faults --format csv --table relay >"$work/relay.csv" || fail "--table relay"
head -1 "$work/relay.csv" | grep -qx 'pickup_amps,load_residual_amps,load_scale,load_margin,load_margin_required,load_side,fault_residual_amps,fault_bus,fault,fault_margin,fault_margin_required,fault_side,window' ||
    fail "relay CSV header: $(head -1 "$work/relay.csv")"
if command -v python3 >/dev/null; then
    "$kilter" study --format json >"$work/study.json" || fail "study --format json"
    python3 - "$work/relay.csv" "$work/study.json" "$work/noload.csv" "$work/demo.json" <<'PY' || fail "relay window against the study and the fault table"
import csv, json, sys
relay = list(csv.DictReader(open(sys.argv[1])))[0]
study = json.load(open(sys.argv[2]))
head = study["head"]["residual_3i0_a"]
load = float(relay["load_residual_amps"])
assert abs(load - head) < 0.01, (load, head)
faults = json.load(open(sys.argv[4]))
kv = {b["bus"]: b["base_ln_kv"] for b in faults["buses"]}
least = min(c["residual_amps"] for c in faults["cases"]
            if c["fault"] == "line-ground" and abs(kv[c["bus"]] - kv["sub"]) < 0.01 * kv["sub"])
# the head carries the fault's residual times the ratios of the regulators on the path
# (within 10 %, a regulator's range, common practice); tests/test_fault.c checks the walk exactly
assert abs(float(relay["fault_residual_amps"]) - least) < 0.1 * least, (relay["fault_residual_amps"], least)
pickup = float(relay["pickup_amps"])
assert relay["load_side"] == ("holds" if pickup >= 2 * load else "fails")
assert relay["fault_side"] == ("holds" if least >= 1.5 * pickup else "fails")
PY
fi
grep -q '^ground relay window at the head' "$work/demo.txt" || fail "text: no relay window"

"$kilter" faults --at nowhere 2>"$work/err"; rc=$?
[ $rc -eq 2 ] || fail "unknown bus: exit $rc"
grep -q "no bus 'nowhere'" "$work/err" || fail "unknown bus message: $(cat "$work/err")"
"$kilter" faults --earth-fault-ohms 0,x 2>/dev/null; rc=$?
[ $rc -eq 64 ] || fail "bad --earth-fault-ohms: exit $rc"
"$kilter" faults --prefault warm 2>/dev/null; rc=$?
[ $rc -eq 64 ] || fail "bad --prefault: exit $rc"
[ $fails -eq 0 ] && echo "cli_faults: all checks passed"
exit $((fails > 0))
