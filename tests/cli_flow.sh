#!/usr/bin/env bash
# `kilter flow` from the command line.
#   bash tests/cli_flow.sh KILTER_BINARY SOURCE_DIR
# Expected values: IEEE PES 13-node test feeder published results (IEEE PES
# Distribution System Analysis Subcommittee, results dated 2004-06-24).
set -u
kilter=$1
src=$2
ieee13="$src/feeders/reference/ieee-13-node.yaml"
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
fails=0

fail() { echo "FAIL: $*"; fails=$((fails + 1)); }

# within FILE KEY1 KEY2 COLUMN WANT TOL: the row whose first two CSV fields are
# KEY1,KEY2 has |field COLUMN - WANT| <= TOL
within() {
    awk -F, -v k1="$2" -v k2="$3" -v c="$4" -v w="$5" -v t="$6" '
        $1 == k1 && $2 == k2 { found = 1; d = $c - w; if (d < 0) d = -d; if (d > t) bad = 1
                               printf "%s %s: %s (want %s +- %s)\n", k1, k2, $c, w, t > "/dev/stderr" }
        END { exit !(found && !bad) }' "$1"
}

# 1. CSV bus table: the contract header, and published voltages (pu, 0.002).
if "$kilter" flow "$ieee13" --earth-return modified --format csv >"$work/buses.csv" 2>"$work/err"; then
    [ "$(head -1 "$work/buses.csv")" = "bus,phase,v_volts,v_pu,angle_deg,base_ln_volts" ] ||
        fail "bus CSV header: $(head -1 "$work/buses.csv")"
    within "$work/buses.csv" 671 a 4 0.9900 0.002 2>/dev/null || fail "671 a v_pu (published 0.9900)"
    within "$work/buses.csv" 611 c 4 0.9738 0.002 2>/dev/null || fail "611 c v_pu (published 0.9738)"
    within "$work/buses.csv" 634 a 4 0.9940 0.002 2>/dev/null || fail "634 a v_pu on its 480 V base (published 0.9940)"
    within "$work/buses.csv" 675 b 5 -122.52 0.2 2>/dev/null || fail "675 b angle (published -122.52)"
    # absent phases have no row: 611 carries phase c only
    grep -q '^611,a,' "$work/buses.csv" && fail "611 a should have no row"
    rows=$(($(wc -l <"$work/buses.csv") - 1))
    [ "$rows" -eq 35 ] || fail "expected 35 bus-phase rows for the 13-node feeder, got $rows"
else
    fail "kilter flow --format csv exited $?"; cat "$work/err"
fi

# 2. CSV section table with neutral current; published 632-671 phase a 478.29 A (0.5 %).
if "$kilter" flow "$ieee13" --earth-return modified --format csv --table sections >"$work/sec.csv" 2>"$work/err"; then
    head -1 "$work/sec.csv" | grep -q '^section,phase,i_amps,i_angle_deg,.*i_neutral_amps' ||
        fail "section CSV header: $(head -1 "$work/sec.csv")"
    within "$work/sec.csv" 632-671 a 3 478.29 2.4 2>/dev/null || fail "632-671 a current (published 478.29 A)"
    within "$work/sec.csv" 692-675 c 4 111.79 0.5 2>/dev/null || fail "692-675 c angle (published 111.79)"
else
    fail "kilter flow --table sections exited $?"; cat "$work/err"
fi

# 3. Table: caution line, totals, published taps 10 8 11.
"$kilter" flow "$ieee13" --earth-return modified >"$work/table.txt" 2>&1 || fail "table exited $?"
grep -q "planning estimates" "$work/table.txt" || fail "table lacks the caution line"
grep -Eq "^reg1 +a +10 +16 .* in-band$" "$work/table.txt" &&
  grep -Eq "^reg1 +b +8 +16 .* in-band$" "$work/table.txt" &&
  grep -Eq "^reg1 +c +11 +16 .* in-band$" "$work/table.txt" || fail "published taps 10, 8, 11 not in the table"

# 4. JSON: well formed (when python3 is present), converged, taps.
if "$kilter" flow "$ieee13" --earth-return modified --format json >"$work/out.json" 2>"$work/err"; then
    grep -q '"converged": true' "$work/out.json" || fail "JSON converged"
    grep -q '"taps": {"a": 10, "b": 8, "c": 11}' "$work/out.json" || fail "JSON taps"
    if command -v python3 >/dev/null; then
        python3 -c 'import json,sys; d=json.load(open(sys.argv[1])); assert len(d["buses"]) == 14' \
            "$work/out.json" || fail "JSON does not parse or lacks 14 buses"
    fi
else
    fail "kilter flow --format json exited $?"
fi

# 5. -o writes the file whole; an unwritable path fails with exit 4 and leaves nothing.
"$kilter" flow "$ieee13" --earth-return modified --format csv -o "$work/o.csv" >/dev/null 2>&1 || fail "-o exited $?"
cmp -s "$work/o.csv" "$work/buses.csv" || fail "-o output differs from standard output"
"$kilter" flow "$ieee13" --earth-return modified -o "$work/nodir/x.csv" >/dev/null 2>&1
[ $? -eq 4 ] || fail "unwritable -o should exit 4"
[ -e "$work/nodir" ] && fail "unwritable -o left something behind"
# the output is streamed to FILE.tmp.PID and renamed: when the rename fails (FILE
# is a directory) the command fails and no temporary file is left
mkdir "$work/adir"
"$kilter" flow "$ieee13" --earth-return modified --format csv -o "$work/adir" >/dev/null 2>&1
[ $? -eq 4 ] || fail "-o onto a directory should exit 4"
[ -d "$work/adir" ] || fail "-o onto a directory replaced it"
ls "$work" | grep -q '\.tmp\.' && fail "a failed -o left its temporary file"

# 6. Bad usage exits 64 with a message.
"$kilter" flow "$ieee13" --earth-return modified --solver magic >/dev/null 2>"$work/err"
[ $? -eq 64 ] || fail "--solver magic should exit 64"
grep -q "sweep or nodal" "$work/err" || fail "--solver message"
"$kilter" flow "$ieee13" --earth-return modified --table nodes >/dev/null 2>&1
[ $? -eq 64 ] || fail "--table nodes should exit 64"

# 7. Load far beyond the feeder's capability: exit 3, says so, prints no results.
"$kilter" flow "$ieee13" --earth-return modified --load-scale 40 >"$work/out" 2>"$work/err"
[ $? -eq 3 ] || fail "--load-scale 40 should exit 3 (did not converge)"
grep -q "did not converge" "$work/err" || fail "non-convergence message: $(cat "$work/err")"
[ -s "$work/out" ] && fail "non-converged run printed results"

# 8. The demo feeder solves.
"$kilter" flow >/dev/null 2>"$work/err" || { fail "demo feeder: exit $?"; cat "$work/err"; }

# 9. Earth return: Carson's complete series is the default on every command (issue 3: "Default to
#    (b)"), the modified form (first terms) is selectable, and the two give different (close) voltages.
"$kilter" flow "$ieee13" --format csv >"$work/full.csv" 2>/dev/null || fail "default form: exit $?"
cmp -s "$work/full.csv" "$work/buses.csv" && fail "default form gave the modified form's numbers"
"$kilter" flow "$ieee13" --earth-return exact >/dev/null 2>&1
[ $? -eq 64 ] || fail "--earth-return exact should be a usage error (64)"

if [ "$fails" -ne 0 ]; then
    echo "$fails failure(s)"
    exit 1
fi
echo "cli_flow: all checks passed"
