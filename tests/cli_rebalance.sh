#!/usr/bin/env bash
# kilter rebalance: the command on a constructed feeder and on the demo feeder.
#   bash tests/cli_rebalance.sh KILTER_BINARY SOURCE_DIR
# Checks that:
#  - three identical single-phase laterals piled on phase a, on a main whose
#    phases are alike, end one per phase in two moves and the head residual
#    current falls to ~0 (Fortescue, AIEE Trans. 37 (1918): a balanced set has
#    no zero-sequence part), from a residual equal to the phase-a current
#    (Kirchhoff: nothing else carries it) -- heuristic and exhaustive alike;
#  - the same seed gives the same plan (CSV identical);
#  - --write-feeder writes a file that, studied again, starts where the plan
#    ended (independent load flow of the written file);
#  - JSON parses (when python3 is present); -o writes the same bytes as stdout;
#  - the table carries the field-work caution;
#  - bad usage exits 64, unknown items and bad rules files exit 2 naming
#    file:line:col, an unwritable --write-feeder exits 4 and leaves no file.
set -u
kilter=$1
src=$2
work=$(mktemp -d)
trap 'rm -rf "$work"' EXIT
fails=0
fail() { echo "FAIL: $*"; fails=$((fails + 1)); }

cat >"$work/pile.yaml" <<'EOF'
kilter-feeder: 1
name: pile on phase a
units: si
source: {bus: sub, nominal_voltage: 12.47 kV}
constructions:
  - name: m3
    phases: abc
    impedance:
      aa: 0.0003 + j0.0008 ohm/m
      bb: 0.0003 + j0.0008 ohm/m
      cc: 0.0003 + j0.0008 ohm/m
      ab: 0.0001 + j0.0004 ohm/m
      bc: 0.0001 + j0.0004 ohm/m
      ac: 0.0001 + j0.0004 ohm/m
  - {name: l1, phases: a, impedance: {aa: 0.0008 + j0.0009 ohm/m}}
sections:
  - {name: main, from: sub, to: m1, length: 1000 m, construction: m3}
  - {name: lat1, from: m1, to: x1, length: 500 m, construction: l1}
  - {name: lat2, from: m1, to: x2, length: 500 m, construction: l1}
  - {name: lat3, from: m1, to: x3, length: 500 m, construction: l1}
loads:
  - {name: d1, bus: x1, power: {a: 200 + j50 kVA}}
  - {name: d2, bus: x2, power: {a: 200 + j50 kVA}}
  - {name: d3, bus: x3, power: {a: 200 + j50 kVA}}
EOF

# CSV columns: step,level_scale,item,kind,from,to,i_head_a,i_head_b,i_head_c,i_residual,...
for search in heuristic exhaustive; do
    "$kilter" rebalance "$work/pile.yaml" --search $search --format csv >"$work/$search.csv" ||
        fail "rebalance --search $search"
    awk -F, 'NR == 2 { ia = $7; res0 = $10 } NR > 2 { last = $10; n++; ph[$6] = 1; if ($5 != "a") bad = 1 }
        END { d = res0 - ia; if (d < 0) d = -d
              if (n != 2 || bad || !("b" in ph) || !("c" in ph) || d > 1e-3 * ia || last > 1e-3 * res0) {
                  print "  steps " n " residual " res0 " -> " last " phase a " ia; exit 1 } }' \
        "$work/$search.csv" || fail "$search: piled laterals not spread one per phase"
done

"$kilter" rebalance "$work/pile.yaml" --format csv --seed 7 >"$work/s1.csv"
"$kilter" rebalance "$work/pile.yaml" --format csv --seed 7 >"$work/s2.csv"
cmp -s "$work/s1.csv" "$work/s2.csv" || fail "same seed, different plans"

# the demo feeder: plan, rebalanced file, and the file studied again
demo="$src/feeders/demo/quillmere-f3.yaml"
"$kilter" rebalance "$demo" --max-moves 4 --time-limit 20 --format csv \
    --write-feeder "$work/rebalanced.yaml" >"$work/demo.csv" || fail "rebalance demo"
[ -s "$work/rebalanced.yaml" ] || fail "--write-feeder wrote nothing"
ls "$work" | grep -q '\.tmp\.' && fail "temporary file left behind"
"$kilter" rebalance "$work/rebalanced.yaml" --max-moves 0 --format csv >"$work/again.csv" ||
    fail "rebalance of the written feeder"
after=$(awk -F, 'NR > 1 && $2 == 1 { r = $10 } END { print r }' "$work/demo.csv")
before_again=$(awk -F, 'NR == 2 { print $10 }' "$work/again.csv")
awk -v a="$after" -v b="$before_again" 'BEGIN { d = a - b; if (d < 0) d = -d; exit !(d <= 0.01 + 1e-4 * a) }' ||
    fail "written feeder: residual $before_again A, the plan said $after A"
awk -F, -v a="$after" 'NR == 2 { exit !($10 > a) }' "$work/demo.csv" ||
    fail "demo: the plan does not lower the head residual current"

"$kilter" rebalance "$work/pile.yaml" >"$work/table.txt" || fail "table output"
grep -q "field work on energized equipment" "$work/table.txt" || fail "no caution in the table"
grep -q "licensed engineering review" "$work/table.txt" || fail "caution lacks the review"

"$kilter" rebalance "$work/pile.yaml" --format json >"$work/p.json" || fail "json output"
if command -v python3 >/dev/null; then
    python3 -c 'import json,sys; d = json.load(open(sys.argv[1])); assert len(d["steps"]) == 2' \
        "$work/p.json" || fail "JSON does not parse or lacks the steps"
fi
"$kilter" rebalance "$work/pile.yaml" --format json -o "$work/o.json" || fail "-o"
# the run times differ between two runs; everything else must not
untimed() { sed -E 's/"seconds(_greedy)?": [0-9.]+//g' "$1"; }
[ "$(untimed "$work/p.json")" = "$(untimed "$work/o.json")" ] || fail "-o differs from stdout"

# levels and objectives
"$kilter" rebalance "$work/pile.yaml" --levels 1:1,0.4:0.5 --objective neutral=1,vuf=2 \
    --format csv >"$work/lv.csv" || fail "--levels/--objective"
grep -c '^0,0.4,' "$work/lv.csv" | grep -qx 1 || fail "second load level missing from the CSV"

# errors
"$kilter" rebalance "$work/pile.yaml" --objective balance >/dev/null 2>"$work/e1"
[ $? -eq 64 ] || fail "unknown objective should exit 64"
"$kilter" rebalance "$work/pile.yaml" --pin nowhere >/dev/null 2>"$work/e2"
[ $? -eq 2 ] || fail "unknown item should exit 2"
grep -q "nowhere" "$work/e2" || fail "unknown item not named"
printf 'pin lat1\nshift lat2 b\n' >"$work/rules.txt"
"$kilter" rebalance "$work/pile.yaml" --rules "$work/rules.txt" >/dev/null 2>"$work/e3"
[ $? -eq 2 ] || fail "bad rules line should exit 2"
grep -q "rules.txt:2:1" "$work/e3" || fail "bad rules line not located: $(cat "$work/e3")"
printf 'pin lat1\npin lat2\nforbid lat3 c\n' >"$work/rules2.txt"
"$kilter" rebalance "$work/pile.yaml" --rules "$work/rules2.txt" --format csv >"$work/r2.csv" ||
    fail "rules file"
awk -F, 'NR > 2 { if ($3 != "lat3" || $6 != "b") bad = 1; n++ } END { exit !(n == 1 && !bad) }' \
    "$work/r2.csv" || fail "rules: only lat3 may move, and not to c"
"$kilter" rebalance "$work/pile.yaml" --write-feeder "$work/no/such/dir/f.yaml" >/dev/null 2>&1
[ $? -eq 4 ] || fail "unwritable --write-feeder should exit 4"
[ -e "$work/no/such/dir/f.yaml" ] && fail "a file appeared"

if [ $fails -ne 0 ]; then
    echo "cli_rebalance: $fails failure(s)"
    exit 1
fi
echo "cli_rebalance: ok"
