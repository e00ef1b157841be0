#!/usr/bin/env bash
# The workbook (--workbook FILE): every table of a study, a flow and a rebalancing plan as
# the sheets of one .xlsx file.  The file is read back with Python's zipfile and XML parser
# (tests/tools/xlsx_vs_csv.py: the SpreadsheetML of ECMA-376 Part 1) and every cell compared
# with the CSV the same command prints for that table; the summary and compliance sheets are
# checked against the bus table they summarize; a workbook that cannot be written leaves no
# file behind and changes none.
# Usage: bash cli_workbook.sh KILTER_BINARY SOURCE_DIR
set -u
kilter=$1
src=$2
demo="$src/feeders/demo/quillmere-f3.yaml"
ieee13="$src/feeders/reference/ieee-13-node.yaml"
cmp="$src/tests/tools/xlsx_vs_csv.py"
tmp=$(mktemp -d)
trap 'chmod -R u+w "$tmp"; rm -rf "$tmp"' EXIT
fail() { echo "cli_workbook: FAIL: $*"; exit 1; }
command -v python3 >/dev/null 2>&1 || { echo "cli_workbook: python3 missing, skipped"; exit 77; }

# study: eight sheets, each equal to its CSV, on the demo and on a feeder whose bus names
# are digits (IEEE 13-node: they must stay text, the figures numbers).
for feeder in "$demo" "$ieee13"; do
  name=$(basename "$feeder" .yaml)
  "$kilter" study "$feeder" --workbook "$tmp/$name.xlsx" -o "$tmp/$name.txt" 2>"$tmp/err" \
    || { cat "$tmp/err"; fail "study --workbook on $name"; }
  sheets=$(python3 -c 'import sys, zipfile, re
z = zipfile.ZipFile(sys.argv[1])
print(" ".join(re.findall(r"<sheet name=\"([^\"]+)\"", z.read("xl/workbook.xml").decode())))' "$tmp/$name.xlsx")
  [ "$sheets" = "summary compliance buses sections neutrals runs contributors regulators" ] \
    || fail "$name: sheets '$sheets'"
  for t in $sheets; do
    "$kilter" study "$feeder" --format csv --table "$t" >"$tmp/$name-$t.csv" 2>"$tmp/err" \
      || { cat "$tmp/err"; fail "study --table $t on $name"; }
    python3 "$cmp" "$tmp/$name.xlsx" "$t" "$tmp/$name-$t.csv" || fail "$name: sheet $t"
  done
done

# The summary and compliance rows against the bus table they summarize (the demo): the
# worst VUF is the largest vuf_pct and where it is; the buses over the compatibility level
# (2 %, EN 50160) are those of the bus table above it; the lowest phase voltage is the least
# of va/vb/vc_pu.
python3 - "$tmp/quillmere-f3-summary.csv" "$tmp/quillmere-f3-compliance.csv" \
  "$tmp/quillmere-f3-buses.csv" <<'EOF' || fail "summary or compliance against the bus table"
import csv, sys
summary = {r["item"]: r for r in csv.DictReader(open(sys.argv[1]))}
comp = {r["check"]: r for r in csv.DictReader(open(sys.argv[2]))}
buses = list(csv.DictReader(open(sys.argv[3])))
vuf = [(float(b["vuf_pct"]), b["bus"]) for b in buses if b["vuf_pct"]]
worst = max(vuf)
s = summary["worst_vuf"]
assert abs(float(s["value"]) - worst[0]) < 1e-6 and s["at"] == worst[1], (s, worst)
over = sum(1 for v, _ in vuf if v > float(comp["vuf_compat"]["high"]))
assert int(comp["vuf_compat"]["count"]) == over, (comp["vuf_compat"], over)
assert float(comp["vuf_compat"]["high"]) == 2.0 and float(comp["vuf_supply"]["high"]) == 3.0
low = min((float(b[k]), b["bus"], k[1]) for b in buses for k in ("va_pu", "vb_pu", "vc_pu") if b[k])
s = summary["lowest_voltage"]
assert abs(float(s["value"]) - low[0]) < 1e-6 and s["at"] == low[1] and s["phase"] == low[2], (s, low)
EOF

# flow and rebalance: their tables as sheets.
"$kilter" flow "$demo" --workbook "$tmp/flow.xlsx" -o "$tmp/flow.txt" 2>"$tmp/err" \
  || { cat "$tmp/err"; fail "flow --workbook"; }
for t in buses sections regulators; do
  "$kilter" flow "$demo" --format csv --table "$t" >"$tmp/flow-$t.csv" || fail "flow --table $t"
  python3 "$cmp" "$tmp/flow.xlsx" "$t" "$tmp/flow-$t.csv" || fail "flow sheet $t"
done
"$kilter" rebalance "$demo" --format csv -o "$tmp/plan.csv" --workbook "$tmp/plan.xlsx" 2>"$tmp/err" \
  || { cat "$tmp/err"; fail "rebalance --workbook"; }
python3 "$cmp" "$tmp/plan.xlsx" steps "$tmp/plan.csv" || fail "rebalance sheet steps"

# Whole or not at all.  A workbook into a directory that does not exist: exit 4, and the
# command's other output is not written either.
rc=0; "$kilter" study "$demo" --workbook "$tmp/no/such/dir/w.xlsx" -o "$tmp/a.txt" 2>"$tmp/err" || rc=$?
[ "$rc" -eq 4 ] || fail "workbook into a missing directory: exit $rc, expected 4"
[ ! -e "$tmp/a.txt" ] || fail "the -o file was written although the workbook was not"
# A study that fails leaves an existing workbook as it was.
cp "$tmp/flow.xlsx" "$tmp/keep.xlsx"
rc=0; "$kilter" study "$demo" --at no-such-bus --workbook "$tmp/keep.xlsx" >/dev/null 2>&1 || rc=$?
[ "$rc" -ne 0 ] || fail "study --at no-such-bus succeeded"
cmp -s "$tmp/flow.xlsx" "$tmp/keep.xlsx" || fail "a failed study changed the existing workbook"
# No room for the temporary workbook (TMPDIR read-only): a located error, nothing written.
if [ "$(id -u)" -ne 0 ]; then
  mkdir "$tmp/ro" && chmod a-w "$tmp/ro"
  rc=0; TMPDIR="$tmp/ro" "$kilter" study "$demo" --workbook "$tmp/t.xlsx" >/dev/null 2>"$tmp/err" || rc=$?
  [ "$rc" -eq 4 ] || fail "read-only TMPDIR: exit $rc, expected 4"
  grep -q "TMPDIR" "$tmp/err" || fail "read-only TMPDIR: the message does not say what to do"
fi
rc=0; TMPDIR="$tmp/missing" "$kilter" study "$demo" --workbook "$tmp/t.xlsx" >/dev/null 2>"$tmp/err" || rc=$?
[ "$rc" -eq 4 ] || fail "missing TMPDIR: exit $rc, expected 4"
grep -q "TMPDIR" "$tmp/err" || fail "missing TMPDIR: the message does not say what to do"
[ ! -e "$tmp/t.xlsx" ] || fail "a workbook was written although its temporary could not be"
echo "cli_workbook: ok"
