#!/usr/bin/env python3
"""Checks a GeoJSON file of kilter against RFC 7946 and against figures computed
here, without PROJ.

Usage: geojson_check.py GEOJSON [--results JSON] [--local FEEDER LON LAT UNIT_M]

RFC 7946 rules checked: the text is UTF-8 JSON without NaN or Infinity (clause 2,
and RFC 8259 has no such numbers); a FeatureCollection whose "features" are
Feature objects, each with "geometry" and "properties" members (3.2, 3.3); no
"crs" member anywhere (4: the system is always WGS 84 longitude/latitude);
positions of two numbers, longitude first, within -180..180 and -90..90 (3.1.1,
4); a LineString of two or more positions (3.1.4), a MultiLineString of such
lines (3.1.5), and no line whose longitudes differ by more than 180 degrees
(3.1.9: cut at the antimeridian); each section's line joins its buses' points.

--results: the command's own JSON output; every figure of a solved bus or
section feature must be that output's figure of the same element and key.

--local: the feeder's buses lie on a local plane, x east and y north in UNIT_M
metres from (LON, LAT).  Each bus point must lie at the plane's distance and
direction from the origin, by Vincenty's inverse formula on the WGS 84
ellipsoid (T. Vincenty, "Direct and inverse solutions of geodesics on the
ellipsoid with application of nested equations", Survey Review 23(176), 1975),
within 2 cm (the 7 decimals of the positions)."""
import json
import math
import re
import sys


def fail(msg):
    print("geojson_check: FAIL: " + msg)
    sys.exit(1)


def no_constant(name):
    fail("the text holds %s, which JSON has not" % name)


def vincenty_inverse(lon1, lat1, lon2, lat2):
    """Distance (m) and forward azimuth (rad, from north) on WGS 84."""
    a = 6378137.0
    f = 1 / 298.257223563
    b = a * (1 - f)
    L = math.radians(lon2 - lon1)
    U1 = math.atan((1 - f) * math.tan(math.radians(lat1)))
    U2 = math.atan((1 - f) * math.tan(math.radians(lat2)))
    sinU1, cosU1, sinU2, cosU2 = math.sin(U1), math.cos(U1), math.sin(U2), math.cos(U2)
    lam = L
    for _ in range(200):
        sinl, cosl = math.sin(lam), math.cos(lam)
        sin_s = math.hypot(cosU2 * sinl, cosU1 * sinU2 - sinU1 * cosU2 * cosl)
        if sin_s == 0:
            return 0.0, 0.0
        cos_s = sinU1 * sinU2 + cosU1 * cosU2 * cosl
        sigma = math.atan2(sin_s, cos_s)
        sin_a = cosU1 * cosU2 * sinl / sin_s
        cos2a = 1 - sin_a * sin_a
        cos2sm = cos_s - 2 * sinU1 * sinU2 / cos2a if cos2a else 0.0
        C = f / 16 * cos2a * (4 + f * (4 - 3 * cos2a))
        prev = lam
        lam = L + (1 - C) * f * sin_a * (sigma + C * sin_s * (cos2sm + C * cos_s * (-1 + 2 * cos2sm ** 2)))
        if abs(lam - prev) < 1e-13:
            break
    u2 = cos2a * (a * a - b * b) / (b * b)
    A = 1 + u2 / 16384 * (4096 + u2 * (-768 + u2 * (320 - 175 * u2)))
    B = u2 / 1024 * (256 + u2 * (-128 + u2 * (74 - 47 * u2)))
    ds = B * sin_s * (cos2sm + B / 4 * (cos_s * (-1 + 2 * cos2sm ** 2)
                                        - B / 6 * cos2sm * (-3 + 4 * sin_s ** 2) * (-3 + 4 * cos2sm ** 2)))
    s = b * A * (sigma - ds)
    az = math.atan2(cosU2 * math.sin(lam), cosU1 * sinU2 - sinU1 * cosU2 * math.cos(lam))
    return s, az


def check_position(p, where):
    if not isinstance(p, list) or len(p) != 2 or not all(isinstance(v, (int, float)) for v in p):
        fail("%s: a position is two numbers, longitude then latitude: %r" % (where, p))
    if not (-180 <= p[0] <= 180 and -90 <= p[1] <= 90):
        fail("%s: position %r outside longitude -180..180, latitude -90..90 (swapped?)" % (where, p))


def check_line(line, where):
    if not isinstance(line, list) or len(line) < 2:
        fail("%s: a line needs two or more positions" % where)
    for p in line:
        check_position(p, where)
    for p, q in zip(line, line[1:]):
        if abs(p[0] - q[0]) > 180:
            fail("%s: a segment crosses the antimeridian uncut (RFC 7946 3.1.9)" % where)


def no_crs(obj, where):
    if isinstance(obj, dict):
        if "crs" in obj:
            fail("%s: a 'crs' member (RFC 7946 4 has none)" % where)
        for k, v in obj.items():
            no_crs(v, where + "." + k)
    elif isinstance(obj, list):
        for i, v in enumerate(obj):
            no_crs(v, "%s[%d]" % (where, i))


def main():
    args = sys.argv[1:]
    path = args.pop(0)
    results = local = None
    while args:
        a = args.pop(0)
        if a == "--results":
            results = json.load(open(args.pop(0)))
        elif a == "--local":
            local = (args.pop(0), float(args.pop(0)), float(args.pop(0)), float(args.pop(0)))
    raw = open(path, "rb").read()
    try:
        text = raw.decode("utf-8")
    except UnicodeDecodeError:
        fail("not UTF-8 (RFC 7946 2)")
    doc = json.loads(text, parse_constant=no_constant)
    if doc.get("type") != "FeatureCollection" or not isinstance(doc.get("features"), list):
        fail("the top level is not a FeatureCollection with a features array")
    no_crs(doc, "$")
    points, lines = {}, []
    for i, ft in enumerate(doc["features"]):
        where = "feature %d" % i
        if ft.get("type") != "Feature" or "geometry" not in ft or not isinstance(ft.get("properties"), dict):
            fail("%s: not a Feature with geometry and properties" % where)
        g, pr = ft["geometry"], ft["properties"]
        where += " (%s %s)" % (pr.get("element"), pr.get("name"))
        if g["type"] == "Point":
            check_position(g["coordinates"], where)
            points[pr["name"]] = (g["coordinates"], pr)
        elif g["type"] == "LineString":
            check_line(g["coordinates"], where)
            lines.append((g["coordinates"][0], g["coordinates"][-1], pr, where))
        elif g["type"] == "MultiLineString":
            if len(g["coordinates"]) < 1:
                fail("%s: an empty MultiLineString" % where)
            for ln in g["coordinates"]:
                check_line(ln, where)
            lines.append((g["coordinates"][0][0], g["coordinates"][-1][-1], pr, where))
        else:
            fail("%s: geometry %s" % (where, g["type"]))
    for a, b, pr, where in lines:
        if pr["from"] in points and a != points[pr["from"]][0]:
            fail("%s: does not start at bus %s" % (where, pr["from"]))
        if pr["to"] in points and b != points[pr["to"]][0]:
            fail("%s: does not end at bus %s" % (where, pr["to"]))
    compared = 0
    if results is not None:
        by = {"bus": {r.get("bus", r.get("name")): r for r in results.get("buses", [])},
              "section": {r.get("section", r.get("name")): r for r in results.get("sections", [])}}
        feats = [(pr, "bus") for _, pr in points.values()] + [(pr, "section") for _, _, pr, _ in lines]
        for pr, kind in feats:
            if not pr.get("solved"):
                continue
            row = by[kind].get(pr["name"])
            if row is None:
                fail("%s %s: solved, but not in the results" % (kind, pr["name"]))
            for k, v in row.items():
                if pr.get(k) != v:
                    fail("%s %s: %s is %r, the results' %r" % (kind, pr["name"], k, pr.get(k), v))
                compared += 1
    placed = 0
    if local is not None:
        feeder, lon0, lat0, unit = local
        xy = {m.group(1): (float(m.group(2)), float(m.group(3)))
              for m in re.finditer(r"\{name: ([^,]+), x: ([-0-9.e]+), y: ([-0-9.e]+)", open(feeder).read())}
        for name, (x, y) in xy.items():
            if name not in points:
                fail("bus %s has coordinates but no point" % name)
            p = points[name][0]
            s, az = vincenty_inverse(lon0, lat0, p[0], p[1])
            d = math.hypot(x, y) * unit
            if abs(s - d) > 0.02:
                fail("bus %s: %.3f m from the origin, the plane says %.3f m" % (name, s, d))
            if d > 1:
                off = abs(math.remainder(az - math.atan2(x, y), 2 * math.pi)) * d
                if off > 0.02:
                    fail("bus %s: %.3f m off the plane's direction from the origin" % (name, off))
            placed += 1
    print("geojson_check: %s: %d points, %d lines; %d figures equal to the results; %d buses placed "
          "within 2 cm of the plane" % (path, len(points), len(lines), compared, placed))


if __name__ == "__main__":
    main()
