#!/usr/bin/env bash
# Real coordinates and the GeoJSON output (--geojson FILE).  Each file is checked by
# tests/tools/geojson_check.py against RFC 7946 (FeatureCollection of Features, longitude
# then latitude within range, lines of two or more positions cut at the antimeridian, no
# "crs"), its figures against the command's own JSON output, and the demo's points against
# Vincenty's inverse formula on WGS 84 from the local plane's origin (no PROJ in the check).
# A feeder in WGS 84 / UTM zone 31N puts its bus at easting 500000 m on the equator at
# 3 deg E, 0 deg (the projection's definition); a line far shorter than the distance
# between its buses gets a located warning; a feeder in plot units cannot be mapped and
# says how to state its coordinates; an unknown EPSG code is a located error.
# Usage: bash cli_geojson.sh KILTER_BINARY SOURCE_DIR
set -u
kilter=$1
src=$2
demo="$src/feeders/demo/quillmere-f3.yaml"
check="$src/tests/tools/geojson_check.py"
tmp=$(mktemp -d)
trap 'rm -rf "$tmp"' EXIT
fail() { echo "cli_geojson: FAIL: $*"; exit 1; }
command -v python3 >/dev/null 2>&1 || { echo "cli_geojson: python3 missing, skipped"; exit 77; }

# The demo: a local plane in feet about its substation (feeders/demo: an invented place).
origin=$(sed -n 's/^coordinates: {system: local, longitude: \([-0-9.]*\) deg, latitude: \([-0-9.]*\) deg, unit: ft}$/\1 \2/p' "$demo")
[ -n "$origin" ] || fail "the demo states no local coordinates"
"$kilter" study "$demo" --geojson "$tmp/study.geojson" --format json -o "$tmp/study.json" 2>"$tmp/err" \
  || { cat "$tmp/err"; fail "study --geojson"; }
# shellcheck disable=SC2086
python3 "$check" "$tmp/study.geojson" --results "$tmp/study.json" --local "$demo" $origin 0.3048 \
  || fail "the demo study's GeoJSON"
grep -q '"caution": "results are planning estimates' "$tmp/study.geojson" || fail "no caution in the study's GeoJSON"
"$kilter" flow "$demo" --geojson "$tmp/flow.geojson" --format json -o "$tmp/flow.json" 2>"$tmp/err" \
  || { cat "$tmp/err"; fail "flow --geojson"; }
python3 "$check" "$tmp/flow.geojson" --results "$tmp/flow.json" || fail "the demo flow's GeoJSON"
# The rebalancing plan's moves on the map: each step of the plan's JSON is the "move" of its
# tap section or one of the "moves" of its load's bus, member for member.
"$kilter" rebalance "$demo" --max-moves 4 --format json -o "$tmp/plan.json" --geojson "$tmp/plan.geojson" \
  2>"$tmp/err" || { cat "$tmp/err"; fail "rebalance --geojson"; }
python3 "$check" "$tmp/plan.geojson" || fail "the plan's GeoJSON"
python3 - "$tmp/plan.json" "$tmp/plan.geojson" <<'PY' || fail "the plan's moves on the map"
import json, sys
plan = json.load(open(sys.argv[1]))
moves = []
for f in json.load(open(sys.argv[2]))["features"]:
    p = f["properties"]
    if "move" in p:
        assert p["element"] == "section" and p["move"]["item"] == p["name"], p
        moves.append(p["move"])
    for m in p.get("moves", []):
        assert p["element"] == "bus", p
        moves.append(m)
assert plan["steps"], "the demo's plan has no step"
assert sorted(moves, key=lambda m: m["step"]) == plan["steps"], (moves, plan["steps"])
assert "rephasing is field work on energized equipment" in json.load(open(sys.argv[2]))["caution"]
PY
# No warning on the demo: its lengths follow its coordinates.
"$kilter" check "$demo" >/dev/null 2>"$tmp/err" || fail "check on the demo"
if grep -q "straight distance" "$tmp/err"; then cat "$tmp/err"; fail "a length warning on the demo"; fi

# A small feeder of our own, in a system given by COORDS with buses BUSES.
small() { # COORDS BUS_S BUS_A BUS_B LENGTH_AB
  cat <<EOF
kilter-feeder: 1
name: small
$1
source: {bus: s, nominal_voltage: 12.47 kV}
conductors:
  - {name: c1, resistance: 0.3 ohm/mi, gmr: 0.025 ft, diameter: 0.7 in, ampacity: 500 A}
layouts:
  - name: l1
    positions:
      - {id: "1", x: 0 ft, height: 30 ft}
      - {id: "2", x: 3 ft, height: 30 ft}
      - {id: "3", x: 6 ft, height: 30 ft}
      - {id: n, x: 3 ft, height: 25 ft}
constructions:
  - {name: k3, layout: l1, phase_conductor: c1, phases: {a: "1", b: "2", c: "3"}, neutrals: [{position: n, conductor: c1}]}
buses:
  - {name: s, $2}
  - {name: a, $3}
  - {name: b, $4}
sections:
  - {name: s-a, from: s, to: a, length: 1000 m, construction: k3}
  - {name: a-b, from: a, to: b, length: $5, construction: k3}
loads:
  - {bus: b, power: {a: 100 + j30 kVA, b: 90 + j30 kVA, c: 60 + j20 kVA}}
EOF
}

# WGS 84 / UTM zone 31N: easting 500000 m, northing 0 is 3 deg E on the equator.
small 'coordinates: {system: "EPSG:32631"}' "x: 500000, y: 0" "x: 500000, y: 1000" "x: 501000, y: 1000" \
  "1000 m" >"$tmp/utm.yaml"
"$kilter" study "$tmp/utm.yaml" --geojson "$tmp/utm.geojson" --format json -o "$tmp/utm.json" 2>"$tmp/err" \
  || { cat "$tmp/err"; fail "study --geojson of a UTM feeder"; }
python3 "$check" "$tmp/utm.geojson" --results "$tmp/utm.json" || fail "the UTM feeder's GeoJSON"
grep -q '"coordinates": \[3.0000000, 0.0000000\]' "$tmp/utm.geojson" || fail "easting 500000 m on the equator is not 3 E, 0 N"

# Longitude and latitude as given; a line across the antimeridian is cut there.
small 'coordinates: {system: lon/lat}' "x: 179.995, y: -16.5" "x: 179.9995, y: -16.5" "x: -179.9995, y: -16.5" \
  "120 m" >"$tmp/dateline.yaml"
"$kilter" flow "$tmp/dateline.yaml" --geojson "$tmp/dateline.geojson" -o "$tmp/dateline.txt" 2>"$tmp/err" \
  || { cat "$tmp/err"; fail "flow --geojson across the antimeridian"; }
python3 "$check" "$tmp/dateline.geojson" || fail "the antimeridian feeder's GeoJSON"
grep -q '"MultiLineString"' "$tmp/dateline.geojson" || fail "the line across the antimeridian is not cut"
grep -q '\[179.9995000, -16.5000000\]' "$tmp/dateline.geojson" || fail "a lon/lat bus moved"
# s-a spans about 479 m by its coordinates with 1000 m of line: no warning; a-b spans about
# 107 m with 120 m: none either.  A 60 m a-b is far shorter than 107 m: one, located.
grep -q "straight distance" "$tmp/err" && { cat "$tmp/err"; fail "a length warning where the lengths are right"; }
small 'coordinates: {system: lon/lat}' "x: 179.995, y: -16.5" "x: 179.9995, y: -16.5" "x: -179.9995, y: -16.5" \
  "60 m" >"$tmp/short.yaml"
"$kilter" check "$tmp/short.yaml" >/dev/null 2>"$tmp/err" || { cat "$tmp/err"; fail "check of a short line"; }
line=$(grep -n "name: a-b" "$tmp/short.yaml" | cut -d: -f1)
grep -q "^kilter: $tmp/short.yaml:$line:5: warning: section \"a-b\": length 60 m is 56 % of the straight distance between a and b (107 m" "$tmp/err" \
  || { cat "$tmp/err"; fail "no located warning for a line shorter than its buses' distance"; }

# Plot units cannot be mapped: exit 2, the way to state coordinates, no output written.
rc=0; "$kilter" study "$src/feeders/reference/ieee-13-node.yaml" --geojson "$tmp/x.geojson" -o "$tmp/x.txt" 2>"$tmp/err" || rc=$?
[ "$rc" -eq 2 ] || fail "GeoJSON of a plot-unit feeder: exit $rc, expected 2"
grep -q "top-level 'coordinates'" "$tmp/err" || { cat "$tmp/err"; fail "the message does not say how to state coordinates"; }
[ ! -e "$tmp/x.geojson" ] && [ ! -e "$tmp/x.txt" ] || fail "files written although the GeoJSON was not"
# An EPSG code that PROJ's database does not hold: exit 2 at the coordinates.
small 'coordinates: {system: "EPSG:99999999"}' "x: 0, y: 0" "x: 0, y: 1" "x: 1, y: 1" "1 m" >"$tmp/bad.yaml"
rc=0; "$kilter" check "$tmp/bad.yaml" >/dev/null 2>"$tmp/err" || rc=$?
[ "$rc" -eq 2 ] || fail "unknown EPSG code: exit $rc, expected 2"
grep -q "bad.yaml:3:14: coordinates: " "$tmp/err" || { cat "$tmp/err"; fail "unknown EPSG code not located"; }
echo "cli_geojson: ok"
