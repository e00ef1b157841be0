#!/usr/bin/env bash
# The demo study report, rendered by a real browser (Debian's chromium, headless):
# the page must load, show every part, and give a screenshot of the expected size that
# is far from blank.  Usage: bash cli_report_browser.sh KILTER_BINARY SOURCE_DIR
# Without chromium: fails in CI (CI installs it with scripts/setup.sh --with-browser),
# and is skipped (exit 77) elsewhere.
set -u
kilter=$1
src=$2
feeder="$src/feeders/demo/quillmere-f3.yaml"
W=1280
H=2400

browser=""
for b in chromium chromium-browser; do
  if command -v "$b" >/dev/null 2>&1; then browser=$b; break; fi
done
if [ -z "$browser" ]; then
  echo "cli_report_browser: chromium is not installed (scripts/setup.sh --with-browser installs it)"
  if [ -n "${CI:-}" ]; then exit 1; fi
  exit 77
fi

tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
fail() { echo "cli_report_browser: FAIL: $*"; exit 1; }

"$kilter" study "$feeder" --html "$tmp/report.html" >"$tmp/study.out" 2>"$tmp/study.err" \
  || { cat "$tmp/study.err"; fail "kilter study --html exited with $?"; }
[ -s "$tmp/report.html" ] || fail "no report written"

# Renders $1 (an HTML file) to the PNG $2 at W x H; the profile directory is fresh each time
# so no state leaks between runs.  Chromium prints D-Bus noise on a bare machine: ignored.
shoot() {
  local prof
  prof=$(mktemp -d "$tmp/profile.XXXX")
  timeout 120 "$browser" --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
    --disable-background-networking --disable-component-update --disable-sync \
    --user-data-dir="$prof" --window-size=$W,$H --screenshot="$2" "file://$1" \
    >"$tmp/chromium.log" 2>&1
}

# PNG (ISO/IEC 15948, section 11.2.2): 8-byte signature, then the IHDR chunk whose data
# starts at byte 16 with width and height as 4-byte big-endian integers.
png_size() {
  local sig
  sig=$(od -An -tx1 -N8 "$1" | tr -d ' \n')
  [ "$sig" = "89504e470d0a1a0a" ] || { echo "not-a-png"; return; }
  local w h
  w=$(od -An -tu1 -j16 -N4 "$1" | awk '{print $1*16777216+$2*65536+$3*256+$4}')
  h=$(od -An -tu1 -j20 -N4 "$1" | awk '{print $1*16777216+$2*65536+$3*256+$4}')
  echo "${w}x${h}"
}

shoot "$tmp/report.html" "$tmp/report.png" || { cat "$tmp/chromium.log"; fail "chromium could not render the report"; }
[ -s "$tmp/report.png" ] || fail "chromium wrote no screenshot"
size=$(png_size "$tmp/report.png")
[ "$size" = "${W}x${H}" ] || fail "screenshot is $size, expected ${W}x${H}"

# Non-blank: a PNG compresses a uniform page to almost nothing, so the report's image
# must be many times larger than a blank page's rendered the same way.
printf '<!DOCTYPE html><html><body style="background:#fbfaf7"></body></html>\n' >"$tmp/blank.html"
shoot "$tmp/blank.html" "$tmp/blank.png" || fail "chromium could not render a blank page"
rep_bytes=$(wc -c <"$tmp/report.png")
blank_bytes=$(wc -c <"$tmp/blank.png")
[ "$rep_bytes" -gt $((blank_bytes * 10)) ] \
  || fail "screenshot looks blank ($rep_bytes bytes against $blank_bytes for a blank page)"

# The browser's own parse of the page: every part is there, four plots, no script.
prof=$(mktemp -d "$tmp/profile.XXXX")
timeout 120 "$browser" --headless --no-sandbox --disable-gpu --disable-quic --no-first-run \
  --disable-background-networking --disable-component-update --disable-sync \
  --user-data-dir="$prof" --dump-dom "file://$tmp/report.html" >"$tmp/dom.html" 2>"$tmp/chromium.log" \
  || fail "chromium --dump-dom failed"
for h in "Summary" "Voltage along the feeder" "Feeder map" "Phasors at bus" "Unbalance" \
         "Neutral current" "Suggested phase moves"; do
  grep -q "<h2>$h" "$tmp/dom.html" || fail "the rendered page has no heading '$h'"
done
nsvg=$(grep -o '<svg ' "$tmp/dom.html" | wc -l)
[ "$nsvg" -eq 4 ] || fail "the rendered page has $nsvg plots, expected 4"
if grep -q '<script' "$tmp/dom.html"; then fail "the rendered page holds a script element"; fi

echo "cli_report_browser: ok (screenshot $size, $rep_bytes bytes; blank page $blank_bytes bytes)"
