#!/usr/bin/env python3
"""Writes feeders/demo/quillmere-f3.yaml, the invented demo feeder "Quillmere feeder 3".

Every place, street, customer and company in it is invented.  The layout is laid out on a
plane in feet (x east, y north, substation at 0,0); section lengths are the distances
between bus coordinates, so the map and the impedances agree.  Loads on the single-phase
laterals are drawn from a seeded generator, so the file is reproducible:

    python3 scripts/make_demo.py > feeders/demo/quillmere-f3.yaml
    python3 scripts/make_demo.py --energy > feeders/demo/quillmere-f3-energy.csv

Only the Python standard library is used.
"""
import math
import random
import sys

RNG = random.Random(20260301)   # fixed seed: the committed file is reproducible

out = []          # lines of the finished file
buses = []        # (name, x, y, description)
where = {}        # bus name -> (x, y)
phases_of = {}    # bus name -> phase string


def emit(s=""):
    out.append(s)


def bus(name, x, y, desc=None, ph="abc"):
    assert name not in where, name
    buses.append((name, x, y, desc))
    where[name] = (x, y)
    phases_of[name] = ph


def dist(a, b):
    (x1, y1), (x2, y2) = where[a], where[b]
    return math.hypot(x2 - x1, y2 - y1)


# Sections and loads are gathered per part of the feeder, each part with its heading.
parts = []        # (heading, [section lines], [load lines])


def part(heading):
    parts.append((heading, [], []))


def sec(frm, to, cons=None, **kw):
    if cons:
        length = round(dist(frm, to) / 10.0) * 10
        parts[-1][1].append("  - {name: %s, from: %s, to: %s, length: %d ft, construction: %s}"
                            % (kw.get("name", frm + "-" + to), frm, to, length, cons))
    else:
        extra = ", ".join("%s: %s" % (k, v) for k, v in kw.items() if k != "name")
        parts[-1][1].append("  - {name: %s, from: %s, to: %s, %s}" % (kw.get("name", frm + "-" + to), frm, to, extra))


def kva(p_kw, pf):
    return "%.1f + j%.1f kVA" % (p_kw, p_kw * math.tan(math.acos(pf)))


# Standard single-phase distribution transformer sizes, kVA (common practice).
SIZES = (10, 15, 25, 37.5, 50, 75, 100, 167, 250, 333, 500)
loads_kva = []    # (name, {entry: kVA}, three-phase, held): for the customer energy file


def nameplate(s_kva):
    """The transformer a planner would have fitted: the smallest size with a third in hand."""
    return next((z for z in SIZES if z >= 1.3 * s_kva), SIZES[-1])


def load(name, busname, power, conn="wye", model="constant-power", held=False, **kw):
    items = ", ".join("%s: %s" % (k, v) for k, v in power.items())
    s = "  - {name: %s, bus: %s, connection: %s, model: %s, power: {%s}" % (name, busname, conn, model, items)
    mag = {}
    for k, v in power.items():
        re_, im = v.replace(" kVA", "").split(" + j")
        mag[k] = math.hypot(float(re_), float(im))
    s += ", connected_kva: {%s}" % ", ".join("%s: %g kVA" % (k, nameplate(m)) for k, m in mag.items())
    if held:
        s += ", fixed_power: true"
    for k, v in kw.items():
        s += ", %s: %s" % (k, v)
    parts[-1][2].append(s + "}")
    loads_kva.append((name, mag, len(mag) == 3, held))


def residential(busname, ph, lo, hi, **kw):
    """A group of houses on one phase: mostly constant power, some ZIP or constant impedance."""
    p = RNG.uniform(lo, hi)
    pf = RNG.uniform(0.92, 0.96)
    r = RNG.random()
    if r < 0.65:
        load(busname, busname, {ph: kva(p, pf)}, **kw)
    elif r < 0.85:
        load(busname, busname, {ph: kva(p, pf)}, model="zip",
             zip="{impedance: 40 %, current: 20 %, power: 40 %}", **kw)
    else:   # water and space heating: constant impedance
        load(busname, busname, {ph: kva(p, 0.99)}, model="constant-impedance", **kw)


def lateral(street, prefix, at, ph, n, step, dx, dy, lo, hi, cons=None, first_step=None):
    """A single- (or two-) phase lateral of n buses from bus `at`, heading (dx, dy)."""
    cons = cons or "oh1-" + ph
    x0, y0 = where[at]
    prev = at
    for k in range(1, n + 1):
        d = (first_step or step) + (k - 1) * step
        name = "%s-%d" % (prefix, k)
        desc = "%s, pole %d" % (street, k)
        bus(name, round(x0 + dx * d), round(y0 + dy * d), desc, ph)
        sec(prev, name, cons)
        prev = name
        if len(ph) == 1:
            residential(name, ph, lo, hi)
    return prev


# ----------------------------------------------------------------------------- layout
bus("sub", 0, 0, "Quillmere substation, feeder 3 breaker (12.47 kV bus)")

MAIN_A = ["Quillmere Road at the substation gate", "Quillmere Road at Wicket Lane",
          "Quillmere Road at Fennick Lane", "Quillmere Road at Sedgewick Row",
          "Quillmere Road at Marram Way", "Quillmere Road at Pennywort Meadows",
          "Quillmere Road at Ember Close", "Quillmere Road at Gannet Street (capacitor bank)",
          "Quillmere Road at Hollowell Bend", "Quillmere Road at Osier Lane (regulator)"]
MAIN_B = ["Tarrowby Street at Pibble Road", "Tarrowby Street at Ravel Court",
          "Tarrowby Street at Saxwold Lane", "Tarrowby Street at Kestrelwick Road",
          "Tarrowby Street at Yarrow Lane", "Tarrowby Street at Copperbeech Road",
          "Tarrowby Street at Orchard Rise", "Tarrowby Street at Dunnock Drive",
          "Tarrowby Street at Quarry Lane", "Tarrowby Street, end of line"]

part("Quillmere Road main, substation to the regulator: 556 ACSR on 10 ft crossarms")
x = 0
for i, d in enumerate(MAIN_A, 1):
    x += 1050 if i > 1 else 600
    bus("m%02d" % i, x, 0, d)
    sec("sub" if i == 1 else "m%02d" % (i - 1), "m%02d" % i, "main-556")

part("Step-voltage regulator at Osier Lane")
bus("m10r", where["m10"][0] + 40, 0, "regulator load side, Quillmere Road at Osier Lane")
sec("m10", "m10r", name="reg-osier", regulator="reg-osier")

part("Tarrowby Street main, beyond the regulator: 336 ACSR, vertical armless construction")
x = where["m10r"][0]
for i, d in enumerate(MAIN_B, 11):
    x += 950
    bus("m%02d" % i, x, 0, d)
    sec("m10r" if i == 11 else "m%02d" % (i - 1), "m%02d" % i, "main-336")

# Three-phase customers along the main.
part("Three-phase customers on the main")
load("quillmere-library", "m04", {p: kva(48, 0.95) for p in "abc"}, model="zip",
     zip="{impedance: 20 %, current: 30 %, power: 50 %}", third_harmonic="22 %",
     description='"Quillmere public library: LED lighting and computers"')
load("quillmere-road-shops", "m07", {p: kva(70, 0.9) for p in ("ab", "bc", "ca")}, conn="delta",
     description='"Quillmere Road parade of shops"')
load("grainstore", "m09", {p: kva(90, 0.88) for p in "abc"}, model="constant-current",
     description='"Quillmere grain store: dryers and conveyors"')
load("cresset-offices", "m12", {p: kva(60, 0.93) for p in "abc"}, third_harmonic="30 %",
     description='"Cresset House offices and server room"')
load("tarrowby-school", "m16", {p: kva(55, 0.92) for p in "abc"}, model="constant-impedance",
     description='"Tarrowby Street school: electric heating"')
load("cold-store", "m20", {p: kva(120, 0.86) for p in "abc"}, held=True, motor="true", pinned="true",
     description='"Quillmere cold store: compressor motors, primary metered"')

# ------------------------------------------------------------------ laterals
part("Single-phase laterals off Quillmere Road (before the regulator)")
wicket_end = lateral("Wicket Lane", "wicket", "m02", "a", 5, 380, 0, 1, 15, 30)
lateral("Pellow Court", "pellow", "m03", "b", 4, 350, 0, -1, 15, 30)
lateral("Sedgewick Row", "sedge", "m04", "a", 6, 400, 0, 1, 15, 30)
lateral("Marram Way", "marram", "m05", "c", 5, 380, 0, -1, 15, 30)
lateral("Thistlecombe Drive", "thistle", "m06", "c", 6, 400, 0, 1, 15, 30)
lateral("Ember Close", "ember", "m07", "b", 4, 350, 0, -1, 15, 30)
lateral("Gannet Street", "gannet", "m08", "c", 5, 380, 0, 1, 15, 30)
lateral("Hollowell Bend", "hollowell", "m09", "b", 6, 400, 0, -1, 15, 30)
lateral("Juniper Walk", "juniper", "m09", "b", 4, 350, 0, 1, 15, 30)
lateral("Osier Lane", "osier", "m10", "c", 5, 380, 0, 1, 15, 30)

part("Pole-top service transformer at the end of Wicket Lane (single-phase, phase a)")
bus("wicket-svc", where[wicket_end][0] + 60, where[wicket_end][1], "Wicket Lane farm, 240 V service", "a")
sec(wicket_end, "wicket-svc", name="wicket-xf", transformer="svc-25", phases="a")
load("wicket-farm", "wicket-svc", {"a": kva(18, 0.9)}, pinned="true",
     description='"Wicket Lane farm: 240 V service behind a 25 kVA pole-top unit"')

part("Two-phase lateral: Fennick Lane (phases a and b), 1/0 ACSR")
fen = lateral("Fennick Lane", "fennick", "m03", "ab", 5, 500, 0, 1, 0, 0, cons="oh2-ab")
for k in range(1, 6):
    b = "fennick-%d" % k
    if k % 2:
        residential(b, "a", 20, 30)
    else:
        residential(b, "b", 15, 25, forbidden_phases="c")

part("Underground three-phase loop feed: Pennywort Meadows (350 kcmil AA concentric-neutral cable)")
prev = "m06"
for k in range(1, 6):
    b = "pennywort-%d" % k
    bus(b, where["m06"][0], -350 * k, "Pennywort Meadows pad-mount switch %d" % k)
    sec(prev, b, "ug-cn350")
    prev = b
for k, ph in zip(range(1, 6), ("a", "b", "a", "c", "a")):
    residential("pennywort-%d" % k, ph, 30, 45)

part("Pad-mounted single-phase service transformers in Pennywort Meadows")
bus("pennywort-3-svc", where["pennywort-3"][0] + 50, where["pennywort-3"][1], "Pennywort Meadows clubhouse, 240 V", "a")
sec("pennywort-3", "pennywort-3-svc", name="pennywort-3-xf", transformer="svc-75", phases="a")
load("pennywort-clubhouse", "pennywort-3-svc", {"a": kva(45, 0.93)}, model="zip",
     zip="{impedance: 30 %, current: 30 %, power: 40 %}", pinned="true")
bus("pennywort-5-svc", where["pennywort-5"][0] + 50, where["pennywort-5"][1], "Pennywort Meadows pumping station, 240 V", "c")
sec("pennywort-5", "pennywort-5-svc", name="pennywort-5-xf", transformer="svc-50", phases="c")
load("pennywort-pumps", "pennywort-5-svc", {"c": kva(30, 0.85)}, pinned="true")

part("Single-phase laterals off Tarrowby Street (after the regulator)")
lateral("Pibble Road", "pibble", "m11", "c", 5, 380, 0, -1, 15, 30)
lateral("Ravel Court", "ravel", "m12", "a", 6, 380, 0, 1, 15, 30)
lateral("Saxwold Lane", "saxwold", "m13", "b", 5, 380, 0, -1, 15, 30)
lateral("Yarrow Lane", "yarrow", "m15", "a", 5, 380, 0, -1, 15, 30)
lateral("Copperbeech Road", "copper", "m16", "b", 4, 350, 0, -1, 15, 30)
lateral("Dunnock Drive", "dunnock", "m18", "c", 6, 380, 0, 1, 15, 30)
lateral("Quarry Lane", "quarry", "m19", "c", 4, 350, 0, -1, 15, 30)
lateral("Lantern Row", "lantern", "m20", "b", 4, 350, 0, 1, 15, 30)

part("Two-phase lateral: Orchard Rise (phases a and c), 1/0 ACSR")
lateral("Orchard Rise", "orchard", "m17", "ac", 5, 450, 0, -1, 0, 0, cons="oh2-ac")
for k in range(1, 6):
    residential("orchard-%d" % k, "a" if k != 3 else "c", 20, 30)

part("Three-phase branch: Kestrelwick Road (#2 ACSR), to Brantle sawmill")
prev = "m14"
for k in range(1, 9):
    b = "kestrel-%d" % k
    bus(b, where["m14"][0], 1000 * k, "Kestrelwick Road, pole %d" % (4 * k))
    sec(prev, b, "branch-2")
    prev = b
part("Single-phase laterals off Kestrelwick Road (most of them on phase a)")
lateral("Tansy Row", "tansy", "kestrel-2", "a", 4, 350, -1, 0, 40, 60)
lateral("Underhill Way", "underhill", "kestrel-3", "a", 5, 350, 1, 0, 40, 60)
lateral("Vetch Close", "vetch", "kestrel-5", "a", 4, 350, -1, 0, 40, 60)
lateral("Wren Ridge", "wren", "kestrel-6", "a", 3, 350, 1, 0, 20, 35)
lateral("Harebell End", "harebell", "kestrel-7", "a", 6, 350, -1, 0, 40, 60)

part("Brantle sawmill: 1500 kVA delta / grounded-wye bank, 480 V motors")
bus("brantle-480", where["kestrel-8"][0] + 80, where["kestrel-8"][1], "Brantle sawmill 480 V switchboard")
sec("kestrel-8", "brantle-480", name="brantle-xf", transformer="brantle-1500")
load("brantle-motors", "brantle-480", {p: kva(150, 0.84) for p in "abc"}, motor="true", pinned="true",
     description='"Brantle sawmill: saw and planer motors"')
load("brantle-lighting", "brantle-480", {p: kva(12, 0.98) for p in "abc"}, model="constant-impedance",
     pinned="true")

# ----------------------------------------------------------------------------- writing
HEAD = """\
# Quillmere feeder 3: the demo feeder bundled with kilter.
#
# INVENTED DATA.  Quillmere, its streets, customers and companies do not exist; any
# resemblance to a real place or utility is chance.  Written by scripts/make_demo.py
# (edit that script, not this file, then run it again).
#
# A 12.47 kV grounded-wye feeder, about 4.2 mi of three-phase main out of Quillmere
# substation: Quillmere Road (556 ACSR, 10 ft crossarms) to a step-voltage regulator at
# Osier Lane, then Tarrowby Street (336 ACSR, vertical armless poles).  Two-phase and
# many single-phase laterals; the single-phase load sits mostly on phase a, on purpose,
# so that the unbalance study and the rebalancing advisor have something to find.
# Bus coordinates are in feet from the substation (x east, y north).  For the map outputs
# (GeoJSON) the substation is placed at an invented spot in the open Pacific, far off any
# coast, so that no real utility's feeder is suggested.
kilter-feeder: 1
name: Quillmere feeder 3
description: >-
  Invented 12.47 kV demo feeder: overhead main with a regulator part-way, an underground
  loop feed, two-phase and single-phase laterals loaded mostly on phase a, a sawmill
  with motors behind a delta/grounded-wye bank, and a fixed capacitor bank.
units: us
earth_resistivity: 100 ohm-m
radial: true
coordinates: {system: local, longitude: -131.27 deg, latitude: 45.38 deg, unit: ft}

# ----------------------------------------------------------------------------- source
# Quillmere substation, 69 kV / 12.47 kV bank with load tap changer holding the
# 12.47 kV bus (its positive sequence) at 1.025 pu, 123 V on the 120 V base; the
# equivalent is the bank plus the 69 kV system seen from the bus.
source:
  bus: sub
  nominal_voltage: 12.47 kV
  frequency: 60 Hz
  regulated_voltage: 1.025 pu
  angle: 0 deg
  equivalent:
    positive_sequence: 0.12 + j1.05 ohm
    zero_sequence: 0.08 + j0.95 ohm
  ground_relay_pickup: 240 A

# ----------------------------------------------------------------------------- conductors
# Conductor data: the usual handbook values for these sizes (from memory); 350AA (37
# strands) has its GMR as 0.768 x its radius and its 50 degC resistance from the
# aluminium's 20 degC value (common practice).
conductors:
  - {name: 556ACSR, resistance: 0.1859 ohm/mi, gmr: 0.0313 ft, diameter: 0.927 in, ampacity: 730 A}
  - {name: 336ACSR, resistance: 0.306 ohm/mi, gmr: 0.0244 ft, diameter: 0.721 in, ampacity: 530 A}
  - {name: 4/0ACSR, resistance: 0.592 ohm/mi, gmr: 0.00814 ft, diameter: 0.563 in, ampacity: 340 A}
  - {name: 1/0ACSR, resistance: 1.12 ohm/mi, gmr: 0.00446 ft, diameter: 0.398 in, ampacity: 230 A}
  - {name: 2ACSR, resistance: 1.69 ohm/mi, gmr: 0.00418 ft, diameter: 0.316 in, ampacity: 180 A}
  - {name: 350AA, resistance: 0.29 ohm/mi, gmr: 0.0218 ft, diameter: 0.681 in, ampacity: 330 A}
  - {name: 14CU, resistance: 14.8722 ohm/mi, gmr: 0.00208 ft, diameter: 0.0641 in}

# ----------------------------------------------------------------------------- cables
cables:
  - name: cn350                 # Pennywort Meadows: 350 kcmil aluminium, one-third neutral
    kind: concentric-neutral
    conductor: 350AA
    neutral_strand: 14CU
    strands: 18
    diameter_over_neutral: 1.46 in

# ----------------------------------------------------------------------------- pole tops and trench
layouts:
  - name: crossarm-10ft         # Quillmere Road and Kestrelwick Road
    kind: overhead
    positions:
      - {id: "1", x: 0 ft, height: 32 ft}
      - {id: "2", x: 3.5 ft, height: 32 ft}
      - {id: "3", x: 9.5 ft, height: 32 ft}
      - {id: n, x: 5.5 ft, height: 27.5 ft}
  - name: vertical-armless      # Tarrowby Street: insulators stacked on one side of the pole
    kind: overhead
    positions:
      - {id: "1", x: 0.8 ft, height: 38 ft}
      - {id: "2", x: 0.8 ft, height: 34 ft}
      - {id: "3", x: 0.8 ft, height: 30 ft}
      - {id: n, x: 0 ft, height: 26 ft}
  - name: two-phase-arm
    kind: overhead
    positions:
      - {id: "1", x: 0 ft, height: 29 ft}
      - {id: "2", x: 5 ft, height: 29 ft}
      - {id: n, x: 2.5 ft, height: 25 ft}
  - name: pin-top               # single-phase laterals: phase on a pole-top pin, neutral on a rack
    kind: overhead
    positions:
      - {id: "1", x: 0 ft, height: 33 ft}
      - {id: n, x: 0.7 ft, height: 28.5 ft}
  - name: trench-flat
    kind: underground
    positions:
      - {id: "1", x: 0 in, depth: 3.5 ft}
      - {id: "2", x: 7.5 in, depth: 3.5 ft}
      - {id: "3", x: 15 in, depth: 3.5 ft}

# ----------------------------------------------------------------------------- constructions
constructions:
  - name: main-556
    layout: crossarm-10ft
    phase_conductor: 556ACSR
    phases: {a: "1", b: "2", c: "3"}
    neutrals: [{position: n, conductor: 4/0ACSR}]
  - name: main-336
    layout: vertical-armless
    phase_conductor: 336ACSR
    phases: {a: "1", b: "2", c: "3"}
    neutrals: [{position: n, conductor: 4/0ACSR}]
  - name: branch-2
    layout: crossarm-10ft
    phase_conductor: 2ACSR
    phases: {a: "1", b: "2", c: "3"}
    neutrals: [{position: n, conductor: 2ACSR}]
  - name: ug-cn350
    layout: trench-flat
    cable: cn350
    phases: {a: "1", b: "2", c: "3"}
  - {name: oh2-ab, layout: two-phase-arm, phase_conductor: 1/0ACSR, phases: {a: "1", b: "2"}, neutrals: [{position: n, conductor: 1/0ACSR}]}
  - {name: oh2-ac, layout: two-phase-arm, phase_conductor: 1/0ACSR, phases: {a: "1", c: "2"}, neutrals: [{position: n, conductor: 1/0ACSR}]}
  - {name: oh1-a, layout: pin-top, phase_conductor: 2ACSR, phases: {a: "1"}, neutrals: [{position: n, conductor: 2ACSR}]}
  - {name: oh1-b, layout: pin-top, phase_conductor: 2ACSR, phases: {b: "1"}, neutrals: [{position: n, conductor: 2ACSR}]}
  - {name: oh1-c, layout: pin-top, phase_conductor: 2ACSR, phases: {c: "1"}, neutrals: [{position: n, conductor: 2ACSR}]}

# ----------------------------------------------------------------------------- transformers
transformers:
  - name: brantle-1500          # sawmill bank
    rating: 1500 kVA
    high: {voltage: 12.47 kV, connection: delta}
    low: {voltage: 0.48 kV, connection: grounded-wye}
    resistance: 1 %
    reactance: 5.75 %
  - name: svc-25                # pole-top service unit, 7.2 kV to 240 V
    rating: 25 kVA
    high: {voltage: 7.2 kV, connection: single}
    low: {voltage: 0.24 kV, connection: single}
    resistance: 1.3 %
    reactance: 1.6 %
  - name: svc-50                # pad-mounted service unit
    rating: 50 kVA
    high: {voltage: 7.2 kV, connection: single}
    low: {voltage: 0.24 kV, connection: single}
    resistance: 1.1 %
    reactance: 1.8 %
  - name: svc-75
    rating: 75 kVA
    high: {voltage: 7.2 kV, connection: single}
    low: {voltage: 0.24 kV, connection: single}
    resistance: 1.0 %
    reactance: 2.0 %

# ----------------------------------------------------------------------------- regulator
# Three single-phase units in wye at Osier Lane; each phase controlled on its own, with
# line-drop compensation set for a load centre about a mile down Tarrowby Street.
regulators:
  - name: reg-osier
    connection: wye
    phases: abc
    control: automatic
    taps: {a: 0, b: 0, c: 0}
    steps: 16
    step: 0.625 %
    voltage_level: @REG_LEVEL@
    bandwidth: 2 V
    pt_ratio: 60
    ct_primary: 300 A
    compensator_r: @REG_R@
    compensator_x: @REG_X@
"""


def write(f):
    f.write(HEAD.replace("@REG_LEVEL@", "122 V").replace("@REG_R@", "2 V").replace("@REG_X@", "4 V"))
    f.write("\n# " + "-" * 77 + " buses\n")
    f.write("# Plot coordinates in feet from the substation; a description for every bus.\n")
    f.write("buses:\n")
    for name, x, y, desc in buses:
        f.write("  - {name: %s, x: %d, y: %d, description: \"%s\"}\n" % (name, x, y, desc))
    f.write("\n# " + "-" * 77 + " sections\nsections:\n")
    for heading, secs, _ in parts:
        if secs:
            f.write("  # %s\n" % heading)
            for s in secs:
                f.write(s + "\n")
    f.write("\n# " + "-" * 77 + " loads\n")
    f.write("# Powers per phase at nominal voltage; delta loads are given for ab, bc, ca.\n")
    f.write("loads:\n")
    for heading, _, lds in parts:
        if lds:
            f.write("  # %s\n" % heading)
            for s in lds:
                f.write(s + "\n")
    f.write("\n# " + "-" * 77 + " capacitors\n")
    f.write("# Fixed 600 kvar bank on Quillmere Road at Gannet Street, and 300 kvar on Kestrelwick Road.\n")
    f.write("capacitors:\n")
    f.write("  - {name: cap-gannet, bus: m08, connection: wye, reactive_power: {a: 200 kvar, b: 200 kvar, c: 200 kvar}}\n")
    f.write("  - {name: cap-kestrel, bus: kestrel-6, connection: wye, reactive_power: {a: 100 kvar, b: 100 kvar, c: 100 kvar}}\n")


def write_energy(f):
    """Invented July billing for the customers behind each load (none for the metered cold
    store): houses by the linear kWh-to-kW relation of the residential class, read backwards
    (kWh = (kW - 0.2) / 0.008, with a spread), businesses by the load factor of theirs."""
    rng = random.Random(20260714)   # its own seed: the feeder's loads do not move
    f.write("# Quillmere feeder 3: customers' billed energy, July 2026 (invented).\n")
    f.write("customer,load,kwh,period,class\n")
    meter = 410000
    for name, mag, three, held in loads_kva:
        if held:
            continue
        total = sum(mag.values())
        if three:
            n = max(1, int(round(total / 60)))
            for _ in range(n):
                meter += 1
                kwh = total / n * rng.uniform(0.8, 1.2) * 730 * 0.42
                f.write("Q-%d,%s,%d,2026-07,small-commercial\n" % (meter, name, round(kwh)))
            continue
        n = max(1, int(round(total / 4.5)))
        for _ in range(n):
            meter += 1
            peak = total / n * rng.uniform(0.7, 1.3) * 2.3   # a house's own peak, before diversity
            kwh = max(150, (peak - 0.2) / 0.008)
            f.write("Q-%d,%s,%d,2026-07,residential\n" % (meter, name, round(kwh)))


if len(sys.argv) > 1 and sys.argv[1] == "--energy":
    write_energy(sys.stdout)
else:
    write(sys.stdout)
