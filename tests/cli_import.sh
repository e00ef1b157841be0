#!/usr/bin/env bash
# kilter import: the demo feeder exported to tables by a reader of our own that does not use
# kilter (tests/tools/feeder_tables.py: transformers, regulators, buses, sections, loads and
# capacitors as CSV, the rest as the library) and imported back must be the same feeder: the feeder files kilter writes
# of the two (rebalance --max-moves 0 --write-feeder, SI, 17 digits) are byte-identical, and
# so are their study outputs.  Every problem in a table is located at its file, line and the
# column of the cell (the loader's messages moved back from the generated text), and nothing
# is written then.
# Usage: bash cli_import.sh KILTER_BINARY SOURCE_DIR
set -u
kilter=$1
src=$2
demo="$src/feeders/demo/quillmere-f3.yaml"
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
fail() { echo "cli_import: FAIL: $*"; exit 1; }
command -v python3 >/dev/null 2>&1 || { echo "cli_import: python3 missing, skipped"; exit 77; }

t="$tmp/t"
python3 "$src/tests/tools/feeder_tables.py" "$demo" "$t" >/dev/null || fail "exporting the demo to tables"
imp() { # OUT [TABLE=PATH ...]: the demo's tables, some replaced
  local out=$1; shift
  local lib="$t/library.yaml" buses="$t/buses.csv" sections="$t/sections.csv" loads="$t/loads.csv" caps="$t/capacitors.csv"
  local xfs="$t/transformers.csv" regs="$t/regulators.csv"
  for kv in "$@"; do
    case "$kv" in
      library=*) lib=${kv#*=} ;; buses=*) buses=${kv#*=} ;; sections=*) sections=${kv#*=} ;;
      loads=*) loads=${kv#*=} ;; capacitors=*) caps=${kv#*=} ;;
      transformers=*) xfs=${kv#*=} ;; regulators=*) regs=${kv#*=} ;;
    esac
  done
  "$kilter" import --library "$lib" --transformers "$xfs" --regulators "$regs" --buses "$buses" \
    --sections "$sections" --loads "$loads" --capacitors "$caps" -o "$out"
}

# The demo, rebuilt.
imp "$tmp/rebuilt.yaml" 2>"$tmp/err" || { cat "$tmp/err"; fail "import of the demo's tables"; }
"$kilter" rebalance "$demo" --max-moves 0 --write-feeder "$tmp/a.yaml" -o "$tmp/a.txt" 2>/dev/null || fail "writing the demo"
"$kilter" rebalance "$tmp/rebuilt.yaml" --max-moves 0 --write-feeder "$tmp/b.yaml" -o "$tmp/b.txt" 2>/dev/null \
  || fail "writing the rebuilt demo"
cmp -s "$tmp/a.yaml" "$tmp/b.yaml" || { diff "$tmp/a.yaml" "$tmp/b.yaml" | head; fail "the rebuilt demo differs from the demo"; }
"$kilter" study "$demo" --format json -o "$tmp/a.json" 2>/dev/null
"$kilter" study "$tmp/rebuilt.yaml" --format json -o "$tmp/b.json" 2>/dev/null
cmp -s "$tmp/a.json" "$tmp/b.json" || fail "the rebuilt demo's study differs"
# Diff-friendly: one line per element, in table order.
n=$(sed -n '/^sections:/,/^[a-z]/p' "$tmp/rebuilt.yaml" | grep -c '^  - {')
[ "$n" -eq "$(($(wc -l <"$t/sections.csv") - 1))" ] || fail "not one line per section ($n)"

# setcell IN OUT ROW COLUMN VALUE: sets the cell, and l, c to where it is (tests/tools/csv_cell.py)
setcell() {
  local at
  at=$(python3 "$src/tests/tools/csv_cell.py" "$@") || fail "test setup: csv_cell.py $*"
  read -r l c <<<"$at"
}
located() { # FILE LINE COL TEXT...: the message on stderr
  local f=$1 ln=$2 cl=$3; shift 3
  grep -F -q "kilter: $f:$ln:$cl: $*" "$tmp/err" || { cat "$tmp/err"; fail "expected '$f:$ln:$cl: $*'"; }
}
bad_import() { # WHAT TABLE=PATH: exit 2 and nothing written
  local what=$1; shift
  rm -f "$tmp/x.yaml"
  rc=0; imp "$tmp/x.yaml" "$@" 2>"$tmp/err" || rc=$?
  [ "$rc" -eq 2 ] || { cat "$tmp/err"; fail "$what: exit $rc, expected 2"; }
  [ ! -e "$tmp/x.yaml" ] || fail "$what: a feeder was written although it does not load"
}

# A section naming a construction the library lacks: the loader's message, at the cell.
setcell "$t/sections.csv" "$tmp/s1.csv" m01-m02 construction main-565
bad_import "unknown construction" sections="$tmp/s1.csv"
located "$tmp/s1.csv" "$l" "$c" 'section "m01-m02": '
grep -q "main-565" "$tmp/err" || fail "the message does not name the construction"
# A length that is not a number; an unknown column; a load on a bus no section reaches; a kw
# that is not a number; a load phase the bus lacks.
setcell "$t/sections.csv" "$tmp/s2.csv" m02-m03 length_ft 1O50
bad_import "a length that is no number" sections="$tmp/s2.csv"
located "$tmp/s2.csv" "$l" "$c" "'length_ft' is '1O50': expected a number"
setcell "$t/loads.csv" "$tmp/l1.csv" - kvar kvars
bad_import "unknown column" loads="$tmp/l1.csv"
located "$tmp/l1.csv" "$l" "$c" "unknown column 'kvars'"
setcell "$t/loads.csv" "$tmp/l2.csv" grainstore bus m09x
bad_import "a load on an unknown bus" loads="$tmp/l2.csv"
located "$tmp/l2.csv" "$l" "$c" 'load "grainstore": '
setcell "$t/loads.csv" "$tmp/l3.csv" tarrowby-school kw 5x5
bad_import "a kw that is no number" loads="$tmp/l3.csv"
located "$tmp/l3.csv" "$l" "$c" "'kw' is '5x5': expected a number"
setcell "$t/capacitors.csv" "$tmp/c1.csv" cap-gannet phase d
bad_import "a capacitor on phase d" capacitors="$tmp/c1.csv"
located "$tmp/c1.csv" "$l" "$c" 'capacitor "cap-gannet": '

# A control character in a cell (a carriage return inside a line): at its byte.
awk 'NR==4{sub(/,m03,/, ",m0\r3,")} {print}' "$t/sections.csv" >"$tmp/s3.csv"
bad_import "a control character" sections="$tmp/s3.csv"
c=$(awk 'NR==4{print index($0, "\r")}' "$tmp/s3.csv")
located "$tmp/s3.csv" 4 "$c" "a control character (byte 0x0d)"

# A line far shorter than the distance between its buses (the demo's coordinates): written,
# with a warning at the section's row.
setcell "$t/sections.csv" "$tmp/s4.csv" m03-m04 length_ft 500
imp "$tmp/w.yaml" sections="$tmp/s4.csv" 2>"$tmp/err" || { cat "$tmp/err"; fail "import with a short line"; }
located "$tmp/s4.csv" "$l" 1 'warning: section "m03-m04": length 152 m is 48 % of the straight distance'
[ -s "$tmp/w.yaml" ] || fail "the feeder with a warning was not written"

# Equipment: a transformer's connection that is none, a regulator's step that is no number.
setcell "$t/transformers.csv" "$tmp/x1.csv" brantle-1500 low_connection grounded-why
bad_import "an unknown winding connection" transformers="$tmp/x1.csv"
located "$tmp/x1.csv" "$l" "$c" 'transformer "brantle-1500": '
setcell "$t/regulators.csv" "$tmp/r1.csv" reg-osier step_pct 0,625
bad_import "a step that is no number" regulators="$tmp/r1.csv"
located "$tmp/r1.csv" "$l" "$c" "'step_pct' is '0,625': expected a number"

# A library that has a list a table gives: located at the library's line.
{ cat "$t/library.yaml"; printf '\nbuses:\n  - {name: extra}\n'; } >"$tmp/lib.yaml"
bad_import "a library with buses" library="$tmp/lib.yaml"
l=$(grep -n '^buses:' "$tmp/lib.yaml" | cut -d: -f1)
located "$tmp/lib.yaml" "$l" 1 "the library has 'buses:'"
echo "cli_import: ok"
