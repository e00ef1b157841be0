#!/usr/bin/env bash
# Structure of the HTML study report of the demo feeder, and its figures against the study's
# CSV: every table cell carries the figure as the CSV prints it (data-v); those must be the
# CSV's own strings, and the cell text the same figure rounded for reading.
# Usage: bash cli_report_html.sh KILTER_BINARY SOURCE_DIR
set -u
kilter=$1
src=$2
feeder="$src/feeders/demo/quillmere-f3.yaml"
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
fail() { echo "cli_report_html: FAIL: $*"; exit 1; }

"$kilter" study "$feeder" --html "$tmp/r.html" >/dev/null 2>"$tmp/err" \
  || { cat "$tmp/err"; fail "kilter study --html failed"; }
"$kilter" study "$feeder" --format csv --table buses >"$tmp/buses.csv" 2>"$tmp/err" \
  || { cat "$tmp/err"; fail "kilter study --format csv --table buses failed"; }
"$kilter" study "$feeder" --format csv --table neutrals >"$tmp/neutrals.csv" 2>"$tmp/err" \
  || { cat "$tmp/err"; fail "kilter study --format csv --table neutrals failed"; }
h="$tmp/r.html"

# Whole and self-contained: one document, four plots (profile, feeder map, loading map, phasors), no script, nothing fetched.
grep -q '^<!DOCTYPE html>' "$h" || fail "no doctype"
tail -n 1 "$h" | grep -q '</html>' || fail "the document is not complete"
[ "$(grep -o '<svg ' "$h" | wc -l)" -eq 4 ] || fail "expected 4 plots"
[ "$(grep -o '</svg>' "$h" | wc -l)" -eq 4 ] || fail "an SVG is not closed"
for h2 in Summary "Voltage along the feeder" "Feeder map" "Phasors at bus" Unbalance \
          "What causes the unbalance" "Neutral current" "Suggested phase moves"; do
  grep -q "<h2>$h2" "$h" || fail "no section '$h2'"
done
if grep -Eq '<script|src="|href=|url\(' "$h"; then fail "the page refers to something outside it"; fi
if grep -Eq '>-?(nan|inf)<|"-?(nan|inf)"' "$h"; then fail "a NaN or infinity reached the page"; fi

# Each plot is well-formed XML on its own (checked when xmllint, from libxml2-utils, is there).
if command -v xmllint >/dev/null 2>&1; then
  awk -v dir="$tmp" '/<svg /{ n++; f = dir "/plot" n ".svg"; print "<?xml version=\"1.0\" encoding=\"UTF-8\"?>" > f }
       f { print > f } /<\/svg>/{ close(f); f = "" }' "$h"
  for f in "$tmp"/plot*.svg; do
    xmllint --noout "$f" 2>"$tmp/xml.err" || { cat "$tmp/xml.err"; fail "$(basename "$f") is not well-formed XML"; }
  done
else
  echo "cli_report_html: xmllint not installed: SVG well-formedness not checked"
fi

# Rows of one HTML table as "name<TAB>v1 v2 ..." (data-v figures) and "name<TAB>t1 t2 ..." (texts).
rows() { # $1 table class, $2 data|text
  awk -v cls="$1" -v what="$2" '
    index($0, "<table class=\"" cls "\">") { on = 1; next }
    on && index($0, "</table>") { on = 0 }
    on && /^<tr><td class="n">/ {
      line = $0
      name = line; sub(/^<tr><td class="n">/, "", name); sub(/<\/td>.*/, "", name)
      gsub(/&lt;/, "<", name); gsub(/&gt;/, ">", name); gsub(/&quot;/, "\"", name)
      gsub(/&#39;/, "\047", name); gsub(/&amp;/, "\\&", name)
      out = ""
      while (match(line, /<td data-v="[^"]*">[^<]*<\/td>/)) {
        cell = substr(line, RSTART, RLENGTH); line = substr(line, RSTART + RLENGTH)
        v = cell; sub(/^<td data-v="/, "", v); sub(/".*/, "", v)
        t = cell; sub(/^<td data-v="[^"]*">/, "", t); sub(/<\/td>$/, "", t)
        out = out " " (what == "data" ? v : t)
      }
      print name "\t" substr(out, 2)
    }' "$h"
}

# CSV columns by name (the contract in docs/study.md), as "name<TAB>c1 c2 ...".
csv_cols() { # $1 file, $2.. column names; the first column is the name
  local f=$1; shift
  awk -F, -v want="$*" '
    NR == 1 { n = split(want, w, " "); for (i = 1; i <= NF; i++) col[$i] = i
              for (k = 1; k <= n; k++) if (!(w[k] in col)) { print "missing column " w[k] > "/dev/stderr"; exit 3 }
              next }
    { name = $1; gsub(/^"|"$/, "", name); out = ""
      for (k = 1; k <= n; k++) out = out " " $(col[w[k]])
      print name "\t" substr(out, 2) }' "$f"
}

# Unbalance table: Va Vb Vc V0 V1 V2 (pu), VUF, LVUR (%) against the CSV bus table.
rows unbalance data >"$tmp/h_unb"
[ -s "$tmp/h_unb" ] || fail "the unbalance table is empty"
csv_cols "$tmp/buses.csv" va_pu vb_pu vc_pu v0_pu v1_pu v2_pu vuf_pct lvur_pct >"$tmp/c_unb" \
  || fail "the bus CSV lacks a column"
n=0
while IFS=$'\t' read -r name vals; do
  want=$(awk -F'\t' -v b="$name" '$1 == b { print $2; exit }' "$tmp/c_unb")
  [ -n "$want" ] || fail "bus '$name' of the HTML table is not in the CSV"
  [ "$vals" = "$want" ] || fail "bus '$name': HTML figures '$vals', CSV '$want'"
  n=$((n + 1))
done <"$tmp/h_unb"

# Neutral table: fundamental, triplen, RMS (A) against the CSV neutral table.
rows neutral data | awk -F'\t' '{ split($2, v, " "); print $1 "\t" v[1] " " v[2] " " v[3] }' >"$tmp/h_neu"
[ -s "$tmp/h_neu" ] || fail "the neutral table is empty"
csv_cols "$tmp/neutrals.csv" neutral_a triplen_a neutral_rms_a >"$tmp/c_neu" \
  || fail "the neutral CSV lacks a column"
m=0
while IFS=$'\t' read -r name vals; do
  want=$(awk -F'\t' -v b="$name" '$1 == b { print $2; exit }' "$tmp/c_neu")
  [ "$vals" = "$want" ] || fail "section '$name': HTML figures '$vals', CSV '$want'"
  m=$((m + 1))
done <"$tmp/h_neu"

# Loading table (issue 12 point 1): the rated sections' loading against the CSV section table,
# most loaded first.
"$kilter" study "$feeder" --format csv --table sections >"$tmp/sections.csv" 2>"$tmp/err" \
  || { cat "$tmp/err"; fail "kilter study --format csv --table sections failed"; }
rows loading data | awk -F'\t' '{ split($2, v, " "); print $1 "\t" v[1] }' >"$tmp/h_load"
[ -s "$tmp/h_load" ] || fail "the loading table is empty"
csv_cols "$tmp/sections.csv" loading_pct >"$tmp/c_load" || fail "the section CSV lacks loading_pct"
prev=""
while IFS=$'\t' read -r name val; do
  want=$(awk -F'\t' -v b="$name" '$1 == b { print $2; exit }' "$tmp/c_load")
  [ "$val" = "$want" ] || fail "section '$name': HTML loading '$val', CSV '$want'"
  [ -z "$prev" ] || awk -v a="$prev" -v b="$val" 'BEGIN { exit !(a + 0 >= b + 0) }' || fail "loading table not ranked"
  prev=$val
done <"$tmp/h_load"

# The text people read is the same figure, rounded: within half a unit of its last digit.
for t in unbalance neutral loading; do
  paste <(rows $t data | cut -f2) <(rows $t text | cut -f2) | awk -F'\t' -v t="$t" '
    { nd = split($1, d, " "); split($2, x, " ")
      for (i = 1; i <= nd; i++) {
        dec = index(x[i], ".") ? length(x[i]) - index(x[i], ".") : 0
        if ((d[i] - x[i]) > 0.5 * 10 ^ -dec + 1e-9 || (x[i] - d[i]) > 0.5 * 10 ^ -dec + 1e-9) {
          print "cli_report_html: FAIL: " t " row " NR ": shows " x[i] " for " d[i]; bad = 1 } } }
    END { exit bad }' || exit 1
done

# The user chooses what colours the map; a wrong choice is a usage error (exit 64).
"$kilter" study "$feeder" --map neutral --html "$tmp/n.html" >/dev/null 2>"$tmp/err" \
  || { cat "$tmp/err"; fail "kilter study --map neutral failed"; }
grep -q '>neutral current (A)</text>' "$tmp/n.html" || fail "--map neutral: the map legend names another index"
"$kilter" study "$feeder" --map colour --html "$tmp/x.html" >/dev/null 2>"$tmp/err"
[ $? -eq 64 ] || fail "--map colour should be refused with exit 64"
grep -q -- "--map needs vuf, neutral, voltage or loading" "$tmp/err" || fail "--map colour: unclear message"
[ ! -e "$tmp/x.html" ] || fail "--map colour still wrote a report"

# With a rebalancing plan: the moves table and the before/after plot join the page.
"$kilter" rebalance "$feeder" --max-moves 3 --html "$tmp/plan.html" >/dev/null 2>"$tmp/err" \
  || { cat "$tmp/err"; fail "kilter rebalance --html failed"; }
grep -q '<table class="moves">' "$tmp/plan.html" || fail "the plan's report has no moves table"
[ "$(grep -o '<svg ' "$tmp/plan.html" | wc -l)" -eq 5 ] || fail "the plan's report lacks its plot"
nmoves=$(awk '/<table class="moves">/{on=1;next} on&&/<\/table>/{on=0} on&&/^<tr><td>/{n++} END{print n+0}' "$tmp/plan.html")
[ "$nmoves" -ge 1 ] && [ "$nmoves" -le 3 ] || fail "the plan's report lists $nmoves moves (expected 1 to 3)"

echo "cli_report_html: ok ($n bus rows and $m neutral rows agree with the CSV; plan report with $nmoves moves)"
