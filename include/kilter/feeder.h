/* kilter: the feeder as read from a feeder file, in SI units.
 *
 * Everything here is what the file says, converted to SI (m, ohm/m, S/m, V,
 * W, var, A, Hz, degrees for angles).  Elements refer to each other by
 * integer index into the arrays of this struct (never by pointer).  Names
 * live in the feeder's string arena and stay valid until kl_feeder_free.
 * Every element keeps the file position it was read from (`loc`) so later
 * stages can report "file:line:col: element: what".
 *
 * Units are converted back to the file's own system (`units`) only when
 * printing. */
#ifndef KILTER_FEEDER_H
#define KILTER_FEEDER_H

#include <complex.h>
#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include "kilter/error.h"
#include "kilter/types.h"


#define KL_FEEDER_FORMAT_VERSION 1 /* value of `kilter-feeder:` the loader accepts */
#define KL_MAX_WIRES 8             /* wire positions in one layout */
#define KL_MAX_NEUTRALS 2          /* neutrals per construction */


typedef struct {
    const char *name;
    double r_ohm_per_m;   /* ac resistance at r_temp_c */
    double r_temp_c;      /* temperature the resistance was given at */
    double gmr_m;         /* geometric mean radius */
    double diameter_m;    /* outside diameter */
    double ampacity_a;    /* 0 when not given */
    double emergency_ampacity_a; /* short-time emergency rating; 0 when not given */
    kl_loc loc;
} kl_conductor;

typedef enum { KL_CABLE_CONCENTRIC = 1, KL_CABLE_TAPE = 2 } kl_cable_kind;

typedef struct {
    const char *name;
    kl_cable_kind kind;
    int phase_conductor;          /* index into conductors */
    double insulation_permittivity; /* relative; default 2.3 (common practice for XLPE/EPR planning) */
    /* concentric neutral */
    int strand_conductor;         /* index into conductors: one neutral strand; -1 for tape */
    int strands;                  /* k */
    double diameter_over_neutral_m; /* outside diameter over the neutral strands */
    /* tape shield */
    double tape_diameter_m;       /* outside diameter of the tape shield */
    double tape_thickness_m;
    double tape_resistivity_ohm_m; /* default annealed copper 1.7241e-8 at 20 C */
    double ampacity_a;            /* 0 when not given */
    double emergency_ampacity_a;  /* 0 when not given */
    kl_loc loc;
} kl_cable;

typedef struct {
    const char *name;
    int underground;               /* 1: duct layout (y is negative depth) */
    int nwires;
    const char *wire[KL_MAX_WIRES]; /* position names, e.g. "1", "2", "n" */
    double x_m[KL_MAX_WIRES];       /* horizontal position */
    double y_m[KL_MAX_WIRES];       /* height above ground (overhead), minus depth (underground) */
    kl_loc loc;
} kl_layout;

typedef enum {
    KL_CONS_OVERHEAD = 1, /* layout + bare conductors: Carson + Kron */
    KL_CONS_CABLE = 2,    /* layout + cable type (+ optional separate neutral) */
    KL_CONS_MATRIX = 3    /* impedance and susceptance matrices given */
} kl_cons_kind;

/* A line construction: how one kind of section is built.  Sections share
 * constructions, so the per-metre matrices are computed once per construction. */
typedef struct {
    const char *name;
    kl_cons_kind kind;
    int phases;                      /* mask */
    int layout;                      /* overhead / cable: index into layouts */
    int phase_wire[3];               /* a, b, c: wire index in the layout, -1 when absent */
    int phase_conductor;             /* overhead: index into conductors */
    int cable;                       /* cable: index into cables */
    int nneutrals;                   /* separate neutral conductors, 0..KL_MAX_NEUTRALS */
    int neutral_wire[KL_MAX_NEUTRALS];
    int neutral_conductor[KL_MAX_NEUTRALS];
    int neutral_grounded;            /* 1: multi-grounded (default); 0: isolated neutral */
    double earth_resistivity_ohm_m;  /* the feeder's default unless the construction says */
    /* matrix form, as given (per metre) */
    kl_complex z_given[3][3];        /* ohm/m */
    double b_given[3][3];            /* S/m */
    double ampacity_a;               /* phase ampacity: conductor's or cable's, 0 when unknown */
    double emergency_ampacity_a;     /* phase emergency rating, likewise; 0 when unknown */
    double neutral_ampacity_a;       /* 0 when unknown or no neutral */
    /* derived by kl_lines_derive (lines.h): zero until then */
    int derived;
    kl_complex zabc[3][3];           /* series phase impedance, ohm/m, absent phases zero */
    kl_complex yabc[3][3];           /* shunt admittance, S/m (j*b) */
    int ntn;                         /* rows in tn: neutrals Kron-reduced away */
    kl_complex tn[KL_MAX_NEUTRALS + 3][3]; /* I_n = tn I_abc (one row per eliminated conductor) */
    kl_loc loc;
} kl_construction;

typedef enum {
    KL_SEC_LINE = 1,
    KL_SEC_SWITCH = 2,
    KL_SEC_TRANSFORMER = 3,
    KL_SEC_REGULATOR = 4
} kl_section_kind;

/* A section joins two buses: a line, a switch, a transformer or a regulator.
 * (Members ordered, and the flags kept in bytes, so that the struct has no
 * padding: 48 bytes; a million-bus feeder holds a million sections.) */
typedef struct {
    const char *name;
    kl_section_kind kind;
    int from, to;        /* bus ids */
    int construction;    /* lines: index into constructions */
    int device;          /* transformer / regulator: index into those arrays; -1 otherwise */
    uint8_t phases;      /* mask */
    uint8_t closed;      /* switches: 1 closed, 0 open; 1 for every other kind */
    uint8_t reversed;    /* lines and switches: 1 when written with `to` on the source side
                            (from/to stay as written; the loader sets it from the feeder tree) */
    double length_m;     /* lines; 0 for devices */
    kl_loc loc;
} kl_section;

/* (Members ordered, and the flags kept in bytes: 56 bytes.)  Which buses
 * are energized, and the section feeding each, is the feeder tree's
 * (kl_feeder.tree). */
typedef struct {
    const char *name;
    double base_kv_ll;   /* nominal line-to-line kV, filled by the loader from the source and transformers */
    double x, y;         /* coordinates in the file's own plot units */
    const char *description; /* NULL when none */
    uint8_t phases;      /* mask: phases present, filled by the loader from the sections */
    uint8_t has_xy;
    kl_loc loc;
} kl_bus;

typedef enum { KL_CONN_WYE = 1, KL_CONN_DELTA = 2 } kl_connection;
typedef enum { KL_LOAD_PQ = 1, KL_LOAD_I = 2, KL_LOAD_Z = 3, KL_LOAD_ZIP = 4 } kl_load_model;

/* A spot load at a bus, or a distributed load along a section (bus = -1,
 * section >= 0).  Powers are per phase at nominal voltage: wye a, b, c;
 * delta ab, bc, ca (index 0, 1, 2).  (Members ordered, and the flags kept in
 * bytes, so that the struct has no padding: 136 bytes.) */
typedef struct {
    const char *name;
    int bus;             /* spot load: bus id; -1 for a distributed load */
    int section;         /* distributed load: section id; -1 for a spot load */
    kl_connection conn;
    kl_load_model model;
    uint8_t phases;      /* mask of the entries of s_va that are used (delta: bit 0 ab, 1 bc, 2 ca) */
    uint8_t motor;       /* 1: three-phase motor load (for the derating check) */
    uint8_t pinned;      /* rebalancing: 1 = may not be moved */
    uint8_t forbidden;   /* rebalancing: mask of phases it may not move to */
    kl_complex s_va[3];  /* P + jQ per phase, W + j var */
    double zip[3];       /* ZIP fractions of P and Q: constant Z, I, P (sum 1) */
    double third_harmonic; /* third-harmonic current as a share of fundamental, 0..1 */
    double move_cost;    /* rebalancing: cost of one move (file's own unit, default 1) */
    const char *description;
    kl_loc loc;
} kl_load;

/* What allocating the metered feeder-head demand needs of a load
 * (kilter/allocate.h), kept beside the loads rather than in kl_load (whose
 * 136 bytes a million-load feeder pays for): the nameplate kVA of the
 * distribution transformer(s) serving it, per entry, and whether its power
 * is known (a metered large customer) and held. */
typedef struct {
    double kva[3];       /* connected nameplate kVA per entry (wye a, b, c; delta ab, bc, ca), in
                            VA; 0 when not given */
    uint8_t has_kva;     /* 1: `connected_kva` was given */
    uint8_t fixed_power; /* 1: `fixed_power: true`, allocation keeps its power as given */
} kl_load_nameplate;

typedef struct {
    const char *name;
    int bus;
    kl_connection conn;
    int phases;          /* mask (delta: bit 0 ab, 1 bc, 2 ca) */
    double q_var[3];     /* var per phase at the bus's nominal voltage (the file's rating, scaled
                            by (nominal / rated_v)^2 when rated_v is given) */
    double rated_v;      /* voltage across each unit the file's rating is at (wye: line-to-neutral,
                            delta: line-to-line); 0 when not given (rated at the bus's nominal) */
    kl_loc loc;
} kl_capacitor;

typedef enum {
    KL_WINDING_GRD_WYE = 1,  /* grounded wye */
    KL_WINDING_WYE = 2,      /* ungrounded wye */
    KL_WINDING_DELTA = 3,
    KL_WINDING_OPEN_WYE = 4,
    KL_WINDING_OPEN_DELTA = 5,
    KL_WINDING_SINGLE = 6,   /* single-phase, line-to-neutral (or line-to-line on 2 phases) */
    KL_WINDING_CENTER_TAP = 7 /* single-phase 120/240 V secondary */
} kl_winding;

typedef struct {
    const char *name;
    double kva;               /* bank rating (three-phase total, or the single unit) */
    double kv_high, kv_low;   /* rated line-to-line kV of each side (single-phase: winding kV) */
    kl_winding high, low;
    double r_pu, x_pu;        /* on the bank's own rating */
    double no_load_loss_pu;   /* optional, 0 by default */
    double emergency_kva;     /* short-time emergency rating of the bank; 0 when not given */
    kl_loc loc;
} kl_transformer;

typedef enum { KL_REG_WYE = 1, KL_REG_CLOSED_DELTA = 2, KL_REG_OPEN_DELTA = 3 } kl_reg_connection;
typedef enum { KL_REG_FIXED = 1, KL_REG_AUTO = 2 } kl_reg_mode;

/* Step-voltage regulator: single-phase units (ANSI type B by default).  Wye:
 * one unit per phase, line to neutral; closed delta: three units, unit p
 * between lines p and p+1; open delta: two units, each named by the pair of
 * phases it connects ("ab", "cb"): the line it regulates (its series winding
 * and CT) and the phase both units share, which passes through.  Per-unit
 * arrays (tap, ldc_*) are indexed by the unit's phase slot: the phase of a
 * wye unit, the regulated line of an open-delta unit. */
typedef struct {
    const char *name;
    kl_reg_connection conn;
    kl_reg_mode mode;
    int phases;               /* mask of units present, by slot (open delta ab, cb: a | c);
                                 the section passes all three phases of an open delta */
    int shared;               /* open delta: mask of the phase both units share (b for ab,
                                 cb); 0 for every other connection */
    int tap[3];               /* fixed taps, or the starting taps for automatic control */
    int steps;                /* steps each way, default 16 */
    double step_pu;           /* default 0.00625 (5/8 %) */
    double voltage_level_v;   /* on the 120 V base */
    double bandwidth_v;
    double pt_ratio;
    double ct_primary_a;
    double ldc_r_v[3], ldc_x_v[3]; /* line-drop compensator settings, volts */
    int monitored;            /* mask of phases whose controller acts (default all) */
    double rated_current_a;   /* each unit's rated load current; default ct_primary_a; 0 unknown */
    double emergency_current_a; /* 0 when not given */
    kl_loc loc;
} kl_regulator;

typedef struct {
    int bus;                  /* source bus id */
    double kv_ll;             /* nominal line-to-line kV */
    double freq_hz;
    double v_pu;              /* regulated voltage, per unit of nominal: the positive-sequence
                               * magnitude held at the source bus by the substation tap changer */
    double angle_deg;         /* phase-a angle of that positive-sequence voltage */
    int has_equivalent;       /* 1: behind a Thevenin equivalent */
    kl_complex z1_ohm, z0_ohm;/* positive- and zero-sequence source impedance */
    int has_background;       /* 1: a background unbalance of the supply is stated */
    kl_complex background;    /* stated V2/V1 of the supply's phase-to-neutral voltages with this
                               * feeder unloaded (0 when none): the upstream unbalance the feeder
                               * sees on top of its own (kl_flow_result.source_emf) */
    double relay_pickup_a;    /* ground relay pickup at the head, 0 when not given */
    kl_loc loc;
} kl_source;


/* What the buses' x and y are (the top-level `coordinates`, feeders/README.md):
 * plot units (the default: a drawing, no place on Earth), WGS 84 longitude and
 * latitude in degrees, eastings and northings of a coordinate reference system
 * named by its EPSG code, or a local plane: x east and y north in `unit_m`
 * metres from an origin given by its longitude and latitude.  The conversion
 * to longitude and latitude is kilter/geo.h's. */
typedef enum {
    KL_COORD_PLOT = 0,
    KL_COORD_LONLAT = 1,
    KL_COORD_EPSG = 2,
    KL_COORD_LOCAL = 3
} kl_coord_system;

typedef struct {
    kl_coord_system system;
    int epsg;                 /* KL_COORD_EPSG: the code */
    double origin_lon_deg, origin_lat_deg; /* KL_COORD_LOCAL: where x = y = 0 */
    double unit_m;            /* KL_COORD_LOCAL: metres per unit of x and y */
    kl_loc loc;               /* the `coordinates` mapping */
} kl_coordinates;

struct kl_feeder_tree; /* the feeder tree, src/model/feeder_tree.c */

typedef struct kl_feeder {
    const char *path;          /* file the feeder was read from */
    const char *name;
    const char *description;   /* NULL when none */
    kl_unit_system units;      /* the file's own unit system, for printing */
    double earth_resistivity_ohm_m; /* default 100 */
    int radial;                /* 1 (default): loops and islands are errors */
    double loading_warning;    /* share of a continuous rating above which loading is noted (the
                                  planning margin of the feeder's owner); 0 when not given */
    kl_source source;

    kl_conductor *conductors;      int nconductors;
    kl_cable *cables;              int ncables;
    kl_layout *layouts;            int nlayouts;
    kl_construction *constructions;int nconstructions;
    kl_bus *buses;                 int nbuses;
    kl_section *sections;          int nsections;
    kl_load *loads;                int nloads;
    kl_load_nameplate *load_nameplate; /* [nloads] by load id; NULL when no load gives
                                          connected_kva or fixed_power */
    kl_capacitor *capacitors;      int ncapacitors;
    kl_transformer *transformers;  int ntransformers;
    kl_regulator *regulators;      int nregulators;

    kl_arena *arena;           /* owns every string above */
    struct kl_feeder_tree *tree; /* breadth-first from the source, built by the loader (owned);
                                    NULL for a feeder assembled in code, whose users build one */
    kl_coordinates coordinates;  /* what the buses' x and y are (default: plot units) */
} kl_feeder;

/* The de-energized part (src/model/deenergized.c): buses beyond open
 * switches, from the loader's feeder tree (a feeder assembled in code has
 * none, and nothing of it is de-energized).  No analysis counts their loads
 * and capacitors as connected; the load flow leaves them at zero volts. */
int kl_deenergized_bus(const kl_feeder *f, int bus);
/* A load whose bus (or whose distributed section) is de-energized. */
int kl_deenergized_load(const kl_feeder *f, int load);
/* The one note about the de-energized part, into buf (empty when there is
 * none); returns the number of de-energized buses. */
int kl_deenergized_note(const kl_feeder *f, char *buf, size_t n);

/* Reads and validates a feeder file.  On any error returns KL_EINPUT (or
 * KL_EIO / KL_ENOMEM), stores every problem found in `err` and sets *out to
 * NULL.  The loader keeps going after an error so that all are reported. */
kl_status kl_feeder_load(const char *path, kl_feeder **out, kl_errors *err);
/* The same from a buffer; `name` is used as the file name in messages. */
kl_status kl_feeder_load_buffer(const char *text, size_t len, const char *name,
                                kl_feeder **out, kl_errors *err);
/* kl_feeder_load with a bound on the file size (bytes); files larger are
 * refused before reading.  kl_feeder_load uses KL_FEEDER_MAX_BYTES. */
#define KL_FEEDER_MAX_BYTES ((size_t)1 << 30)
kl_status kl_feeder_load_limit(const char *path, size_t max_bytes, kl_feeder **out, kl_errors *err);
void kl_feeder_free(kl_feeder *f);

/* Rated voltages that do not fit their bus: a transformer's source-side
 * winding, a regulator's PT (pt_ratio x 120 V: line-to-neutral for wye units,
 * line-to-line for delta) and a capacitor's rated_voltage, each against the
 * nominal voltage of the bus it sits on (kl_bus.base_kv_ll, carried down the
 * feeder tree).  Each one further off than `tol` (a share: 0.10 = 10 %) is
 * added to err, located at its section (capacitors: at the capacitor) and
 * naming both voltages; returns how many.  The loader refuses a feeder with
 * one beyond KL_RATING_ERROR_TOL: no tap range brings such a winding to
 * nominal (distribution transformer taps span +-5 %, regulators +-10 %, common
 * practice) and the solve would put the buses beyond it far out of range (a
 * 12.47 kV transformer on a 24.94 kV feeder: 1.94 pu).  The program warns of
 * those beyond KL_RATING_WARN_TOL, the tap range of a distribution
 * transformer (common practice): legitimate with taps, but every voltage
 * beyond it is off by as much.  A feeder without a tree: none checked. */
#define KL_RATING_ERROR_TOL 0.10
#define KL_RATING_WARN_TOL 0.05
int kl_feeder_ratings_check(const kl_feeder *f, double tol, kl_errors *err);

/* Lookups by name (linear or hashed; -1 when absent). */
int kl_feeder_find_bus(const kl_feeder *f, const char *name);
int kl_feeder_find_section(const kl_feeder *f, const char *name);
int kl_feeder_find_load(const kl_feeder *f, const char *name);

/* "abc", "ac", "b" ... for a mask; buf must hold 4 bytes. */
const char *kl_phases_str(int mask, char buf[4]);
/* How many of a, b, c a mask holds (0..3). */
int kl_phases_count(int mask);
/* The name of regulator r's unit in phase slot 0..2: the phase letter ("a")
 * for wye and closed-delta banks; for an open delta the pair "pq", the line
 * it regulates then the phase its units share ("ab", "cb"); "" for a slot
 * without a name. */
const char *kl_regulator_unit_name(const kl_regulator *r, int slot);
/* Cyclic relabelling of a phase mask by r steps (a -> b for r = 1). */
int kl_phases_rotate(int mask, int r);

/* Writes the feeder as a kilter feeder file (format version 1, SI units),
 * with section i's phases rotated by sec_rot[i] and load i's entries by
 * load_rot[i] (either may be NULL: no rotation).  Line constructions used by
 * rotated sections are written once more, rotated, under a new name.  The
 * file is written as one output of kilter/output.h: whole or not at all,
 * never over the file the feeder was read from. */
kl_status kl_feeder_write(const kl_feeder *f, const int *sec_rot, const int *load_rot,
                          const char *path, kl_errors *err);
/* The same, to a stream (one output of a set written together, kilter/output.h);
 * KL_EIO when the stream reports a write error. */
kl_status kl_feeder_write_stream(const kl_feeder *f, const int *sec_rot, const int *load_rot, FILE *o,
                                 kl_errors *err);



#endif
