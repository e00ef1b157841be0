#!/usr/bin/env python3
"""Exports a kilter feeder file written as the demo is (elements one a line, or
one key a line) into the tables `kilter import` reads (docs/import.md), as a GIS
would hand them over: transformers.csv, regulators.csv, buses.csv, sections.csv,
loads.csv (a row per load and phase), capacitors.csv (a row per phase), and
library.yaml, the file without those six lists.

Usage: feeder_tables.py FEEDER OUTDIR

Independent of kilter: a small reader of YAML flow mappings ({k: v, k: {..}},
quoted or plain scalars) and of block mappings of one key a line, enough for
files written as the demo is."""
import csv
import os
import re
import sys

TABLES = ("transformers", "regulators", "buses", "sections", "loads", "capacitors")


def parse_flow(s, i=0):  # noqa: C901
    """Parses a flow mapping at s[i] == '{'; returns (dict, index after it)."""
    assert s[i] == "{", s[i:]
    i += 1
    out = {}
    while True:
        while s[i] == " ":
            i += 1
        if s[i] == "}":
            return out, i + 1
        j = s.index(":", i)
        key = s[i:j].strip()
        i = j + 1
        while s[i] == " ":
            i += 1
        if s[i] == "{":
            val, i = parse_flow(s, i)
        elif s[i] == '"':
            j = i + 1
            buf = []
            while s[j] != '"':
                if s[j] == "\\":
                    j += 1
                buf.append(s[j])
                j += 1
            val, i = "".join(buf), j + 1
        else:
            j = i
            while s[j] not in ",}":
                j += 1
            val, i = s[i:j].strip(), j
        out[key] = val
        while s[i] == " ":
            i += 1
        if s[i] == ",":
            i += 1


def number_unit(v, units):
    m = re.fullmatch(r"([-+0-9.eE]+) *(\S*)", v)
    assert m and m.group(2) in units, (v, units)
    return m.group(1), m.group(2)


def main():
    feeder, outdir = sys.argv[1:3]
    lines = open(feeder).read().split("\n")
    library, items, current = [], {t: [] for t in TABLES}, None
    for line in lines:
        top = re.match(r"([a-z_-]+):", line)
        if top:
            current = top.group(1) if top.group(1) in TABLES else None
        if current is None:
            library.append(line)
        elif line.startswith("  - {"):
            items[current].append(parse_flow(line, 4)[0])
        elif line.startswith("  - ") or line.startswith("    "):
            # a block mapping, one key a line, its value a flow mapping or a scalar
            body = line[4:] if '"' in line else re.sub(r"\s+#.*$", "", line[4:])
            key, _, val = body.partition(":")
            val = val.strip()
            if line.startswith("  - "):
                items[current].append({})
            items[current][-1][key.strip()] = parse_flow(val)[0] if val.startswith("{") else val
        else:
            assert top or not line.strip() or line.strip().startswith("#"), line
    os.makedirs(outdir, exist_ok=True)
    with open(os.path.join(outdir, "library.yaml"), "w") as f:
        f.write("\n".join(library))

    def table(name, head, rows):
        with open(os.path.join(outdir, name + ".csv"), "w", newline="") as f:
            w = csv.writer(f, lineterminator="\n")
            w.writerow(head)
            for r in rows:
                w.writerow([r.get(h, "") for h in head])

    xfs = []
    for x in items["transformers"]:
        assert set(x) <= {"name", "rating", "high", "low", "resistance", "reactance", "no_load_loss"}, x
        r = {"name": x["name"], "rating_kva": number_unit(x["rating"], ("kVA",))[0],
             "resistance_pct": number_unit(x["resistance"], ("%",))[0],
             "reactance_pct": number_unit(x["reactance"], ("%",))[0]}
        for side in ("high", "low"):
            r[side + "_kv"] = number_unit(x[side]["voltage"], ("kV",))[0]
            r[side + "_connection"] = x[side]["connection"]
        if "no_load_loss" in x:
            r["no_load_loss_pct"] = number_unit(x["no_load_loss"], ("%",))[0]
        xfs.append(r)
    table("transformers", ["name", "rating_kva", "high_kv", "high_connection", "low_kv", "low_connection",
                           "resistance_pct", "reactance_pct", "no_load_loss_pct"], xfs)
    regs = []
    for g in items["regulators"]:
        r = {}
        for key, col, units in (("name", "name", None), ("connection", "connection", None),
                                ("phases", "phases", None), ("control", "control", None),
                                ("steps", "steps", ("",)), ("step", "step_pct", ("%",)),
                                ("voltage_level", "voltage_level_v", ("V",)),
                                ("bandwidth", "bandwidth_v", ("V",)), ("pt_ratio", "pt_ratio", ("",)),
                                ("ct_primary", "ct_primary_a", ("A",)),
                                ("compensator_r", "compensator_r_v", ("V",)),
                                ("compensator_x", "compensator_x_v", ("V",))):
            if key in g:
                r[col] = g[key] if units is None else number_unit(g[key], units)[0]
        for ph, v in g.get("taps", {}).items():
            r["tap_" + ph] = v
        assert set(g) <= {"name", "connection", "phases", "control", "taps", "steps", "step",
                          "voltage_level", "bandwidth", "pt_ratio", "ct_primary", "compensator_r",
                          "compensator_x"}, g
        regs.append(r)
    table("regulators", ["name", "connection", "phases", "control", "tap_a", "tap_b", "tap_c", "steps",
                         "step_pct", "voltage_level_v", "bandwidth_v", "pt_ratio", "ct_primary_a",
                         "compensator_r_v", "compensator_x_v"], regs)
    table("buses", ["name", "x", "y", "description"], items["buses"])
    sections = []
    for s in items["sections"]:
        r = {k: s[k] for k in ("name", "from", "to", "phases", "construction", "switch",
                               "transformer", "regulator") if k in s}
        if "length" in s:
            n, u = number_unit(s["length"], ("ft",))
            r["length_ft"] = n
        sections.append(r)
    table("sections", ["name", "from", "to", "phases", "length_ft", "construction", "switch",
                       "transformer", "regulator"], sections)
    loads = []
    for ld in items["loads"]:
        base = {k: ld[k] for k in ("name", "bus", "section", "connection", "model", "motor", "pinned",
                                    "forbidden_phases", "move_cost", "description") if k in ld}
        for k, col in (("impedance", "zip_impedance_pct"), ("current", "zip_current_pct"),
                       ("power", "zip_power_pct")):
            if "zip" in ld:
                base[col] = number_unit(ld["zip"][k], ("%",))[0]
        if "third_harmonic" in ld:
            base["third_harmonic_pct"] = number_unit(ld["third_harmonic"], ("%",))[0]
        if "fixed_power" in ld:
            base["fixed_power"] = ld["fixed_power"]
        for ph, v in ld["power"].items():
            m = re.fullmatch(r"([-+0-9.eE]+) *([-+]) *j([0-9.eE]+) kVA", v)
            assert m, v
            row = dict(base, phase=ph, kw=m.group(1), kvar=("-" if m.group(2) == "-" else "") + m.group(3))
            if ph in ld.get("connected_kva", {}):
                row["connected_kva"] = number_unit(ld["connected_kva"][ph], ("kVA",))[0]
            loads.append(row)
    table("loads", ["name", "bus", "section", "connection", "model", "phase", "kw", "kvar",
                    "zip_impedance_pct", "zip_current_pct", "zip_power_pct", "motor",
                    "third_harmonic_pct", "pinned", "forbidden_phases", "move_cost", "description",
                    "connected_kva", "fixed_power"], loads)
    caps = []
    for c in items["capacitors"]:
        for ph, v in c["reactive_power"].items():
            caps.append({"name": c["name"], "bus": c["bus"], "connection": c.get("connection", ""),
                         "phase": ph, "kvar": number_unit(v, ("kvar",))[0]})
        assert set(c) <= {"name", "bus", "connection", "reactive_power"}, c
    table("capacitors", ["name", "bus", "connection", "phase", "kvar"], caps)
    print("feeder_tables: %s: %d transformers, %d regulators, %d buses, %d sections, %d loads "
          "(%d rows), %d capacitors" % (feeder, len(xfs), len(regs), len(items["buses"]), len(sections),
                                        len(items["loads"]), len(loads), len(items["capacitors"])))


if __name__ == "__main__":
    main()
