/* kilter: writing a feeder file (format version 1, feeders/README.md).
 *
 * Every quantity is written in SI with its unit and 17 significant digits,
 * so reading the file back gives the same doubles the model held.  A phase
 * rotation r (a -> b -> c -> a, r steps) may be applied to sections and
 * loads on the way out: a rotated line section points at a copy of its
 * construction whose phase positions (or matrix entries) are relabelled the
 * same way, Z'[(i+r)%3][(j+r)%3] = Z[i][j].  kl_feeder_write puts the file in
 * place through the output set (src/base/output.c): whole or not at all. */
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>
#include "kilter/output.h"
#include "kilter/units.h"
#include "kl_io.h"

static const char *const PH[3] = {"a", "b", "c"};
static const char *const PH_DELTA[3] = {"ab", "bc", "ca"};
static const char *const WINDING[] = {"", "grounded-wye", "wye", "delta", "open-wye",
                                      "open-delta", "single", "center-tap"};
static const char *const MODEL[] = {"", "constant-power", "constant-current",
                                    "constant-impedance", "zip"};

/* A YAML double-quoted scalar (names and descriptions may hold anything). */
static void put_str(FILE *o, const char *s)
{
    fputc('"', o);
    for (const unsigned char *p = (const unsigned char *)(s ? s : ""); *p; p++) {
        if (*p == '"' || *p == '\\')
            fprintf(o, "\\%c", *p);
        else if (*p == '\n')
            fputs("\\n", o);
        else if (*p < 0x20)
            fprintf(o, "\\x%02x", *p);
        else
            fputc(*p, o);
    }
    fputc('"', o);
}

static void put_cplx(FILE *o, kl_complex z, const char *unit)
{
    double im = cimag(z);
    fprintf(o, "\"%.17g %c j%.17g %s\"", creal(z), im < 0 ? '-' : '+', fabs(im), unit);
}

static void put_mask(FILE *o, int mask)
{
    char b[4];
    fprintf(o, "%s", kl_phases_str(mask, b));
}

/* Name of construction c rotated by r: the original for r = 0. */
static void cons_name(const kl_feeder *f, int c, int r, char *buf, size_t n)
{
    if (!r) {
        snprintf(buf, n, "%s", f->constructions[c].name);
        return;
    }
    snprintf(buf, n, "%s-rot%d", f->constructions[c].name, r);
    for (int tries = 0; tries < 8; tries++) {
        int clash = 0;
        for (int k = 0; k < f->nconstructions && !clash; k++)
            clash = strcmp(f->constructions[k].name, buf) == 0;
        if (!clash)
            return;
        size_t len = strlen(buf);
        if (len + 2 < n) {
            buf[len] = 'x';
            buf[len + 1] = '\0';
        }
    }
}

/* What the buses' x and y are; nothing for plot units (the default).  x and
 * y are written as read, so a local plane keeps the unit it was read with. */
static void write_coordinates(FILE *o, const kl_coordinates *c)
{
    static const char *const units[] = {"m", "ft", "km", "mi"};
    static const double metres[] = {1.0, 0.3048, 1000.0, 1609.344};
    switch (c->system) {
    case KL_COORD_PLOT: break;
    case KL_COORD_LONLAT: fputs("coordinates: {system: lon/lat}\n", o); break;
    case KL_COORD_EPSG: fprintf(o, "coordinates: {system: \"EPSG:%d\"}\n", c->epsg); break;
    case KL_COORD_LOCAL: {
        const char *u = "m";
        for (int k = 0; k < 4; k++)
            if (c->unit_m == metres[k])
                u = units[k];
        fprintf(o, "coordinates: {system: local, longitude: %.17g deg, latitude: %.17g deg, unit: %s}\n",
                c->origin_lon_deg, c->origin_lat_deg, u);
        break;
    }
    }
}

static void write_head(FILE *o, const kl_feeder *f)
{
    const kl_source *s = &f->source;
    fprintf(o, "# Written by kilter (feeder file format %d, SI units).\n", KL_FEEDER_FORMAT_VERSION);
    fprintf(o, "kilter-feeder: %d\nname: ", KL_FEEDER_FORMAT_VERSION);
    put_str(o, f->name ? f->name : "feeder");
    if (f->description) {
        fputs("\ndescription: ", o);
        put_str(o, f->description);
    }
    fprintf(o, "\nunits: %s\nearth_resistivity: %.17g ohm-m\nradial: %s\n",
            f->units == KL_UNITS_SI ? "si" : "us", f->earth_resistivity_ohm_m,
            f->radial ? "true" : "false");
    if (f->loading_warning > 0)
        fprintf(o, "loading_warning: %.17g\n", f->loading_warning);
    write_coordinates(o, &f->coordinates);
    fputs("source:\n  bus: ", o);
    put_str(o, f->buses[s->bus].name);
    fprintf(o, "\n  nominal_voltage: %.17g V\n  frequency: %.17g Hz\n  regulated_voltage: %.17g pu\n"
            "  angle: %.17g deg\n", s->kv_ll * 1e3, s->freq_hz, s->v_pu, s->angle_deg);
    if (s->has_equivalent) {
        fputs("  equivalent:\n    positive_sequence: ", o);
        put_cplx(o, s->z1_ohm, "ohm");
        fputs("\n    zero_sequence: ", o);
        put_cplx(o, s->z0_ohm, "ohm");
        fputc('\n', o);
    }
    if (s->relay_pickup_a > 0)
        fprintf(o, "  ground_relay_pickup: %.17g A\n", s->relay_pickup_a);
    if (s->has_background) /* as V2/V1: measured line voltages were turned into it on loading */
        fprintf(o, "  background_unbalance:\n    ratio: %.17g\n    angle: %.17g deg\n",
                cabs(s->background), carg(s->background) * 180.0 / KL_PI);
}

static void write_conductors_cables(FILE *o, const kl_feeder *f)
{
    if (f->nconductors)
        fputs("conductors:\n", o);
    for (int i = 0; i < f->nconductors; i++) {
        const kl_conductor *c = &f->conductors[i];
        fputs("  - name: ", o);
        put_str(o, c->name);
        fprintf(o, "\n    resistance: %.17g ohm/m\n    resistance_temperature: %.17g degC\n"
                "    gmr: %.17g m\n    diameter: %.17g m\n", c->r_ohm_per_m, c->r_temp_c,
                c->gmr_m, c->diameter_m);
        if (c->ampacity_a > 0)
            fprintf(o, "    ampacity: %.17g A\n", c->ampacity_a);
        if (c->emergency_ampacity_a > 0)
            fprintf(o, "    emergency_ampacity: %.17g A\n", c->emergency_ampacity_a);
    }
    if (f->ncables)
        fputs("cables:\n", o);
    for (int i = 0; i < f->ncables; i++) {
        const kl_cable *c = &f->cables[i];
        fputs("  - name: ", o);
        put_str(o, c->name);
        fprintf(o, "\n    kind: %s\n    conductor: ",
                c->kind == KL_CABLE_TAPE ? "tape-shielded" : "concentric-neutral");
        put_str(o, f->conductors[c->phase_conductor].name);
        if (c->kind == KL_CABLE_TAPE) {
            fprintf(o, "\n    tape_diameter: %.17g m\n    tape_thickness: %.17g m\n"
                    "    tape_resistivity: %.17g ohm-m\n", c->tape_diameter_m,
                    c->tape_thickness_m, c->tape_resistivity_ohm_m);
        } else {
            fputs("\n    neutral_strand: ", o);
            put_str(o, f->conductors[c->strand_conductor].name);
            fprintf(o, "\n    strands: %d\n    diameter_over_neutral: %.17g m\n", c->strands,
                    c->diameter_over_neutral_m);
        }
        fprintf(o, "    permittivity: %.17g\n", c->insulation_permittivity);
        if (c->ampacity_a > 0)
            fprintf(o, "    ampacity: %.17g A\n", c->ampacity_a);
        if (c->emergency_ampacity_a > 0)
            fprintf(o, "    emergency_ampacity: %.17g A\n", c->emergency_ampacity_a);
    }
}

static void write_layouts(FILE *o, const kl_feeder *f)
{
    if (f->nlayouts)
        fputs("layouts:\n", o);
    for (int i = 0; i < f->nlayouts; i++) {
        const kl_layout *la = &f->layouts[i];
        fputs("  - name: ", o);
        put_str(o, la->name);
        fprintf(o, "\n    kind: %s\n    positions:\n", la->underground ? "underground" : "overhead");
        for (int w = 0; w < la->nwires; w++) {
            fputs("      - {id: ", o);
            put_str(o, la->wire[w]);
            if (la->underground)
                fprintf(o, ", x: %.17g m, depth: %.17g m}\n", la->x_m[w], -la->y_m[w]);
            else
                fprintf(o, ", x: %.17g m, height: %.17g m}\n", la->x_m[w], la->y_m[w]);
        }
    }
}

/* Construction c with its phases relabelled by r. */
static void write_construction(FILE *o, const kl_feeder *f, int c, int r)
{
    const kl_construction *cn = &f->constructions[c];
    char name[192];
    cons_name(f, c, r, name, sizeof name);
    fputs("  - name: ", o);
    put_str(o, name);
    fputs("\n    phases: ", o);
    if (cn->kind == KL_CONS_MATRIX) {
        put_mask(o, kl_phases_rotate(cn->phases, r));
        fputs("\n    impedance: {", o);
        const char *sep = "";
        for (int i = 0; i < 3; i++)
            for (int j = i; j < 3; j++) {
                kl_complex z = cn->z_given[i][j];
                if (cabs(z) == 0)
                    continue;
                int a = (i + r) % 3, b = (j + r) % 3;
                fprintf(o, "%s%s%s: ", sep, PH[a < b ? a : b], PH[a < b ? b : a]);
                put_cplx(o, z, "ohm/m");
                sep = ", ";
            }
        fputs("}\n    susceptance: {", o);
        sep = "";
        for (int i = 0; i < 3; i++)
            for (int j = i; j < 3; j++) {
                int a = (i + r) % 3, b = (j + r) % 3;
                if (cn->b_given[i][j] == 0)
                    continue;
                fprintf(o, "%s%s%s: \"%.17g S/m\"", sep, PH[a < b ? a : b], PH[a < b ? b : a],
                        cn->b_given[i][j]);
                sep = ", ";
            }
        fputs("}\n", o);
        if (cn->ampacity_a > 0)
            fprintf(o, "    ampacity: %.17g A\n", cn->ampacity_a);
        if (cn->emergency_ampacity_a > 0)
            fprintf(o, "    emergency_ampacity: %.17g A\n", cn->emergency_ampacity_a);
        return;
    }
    const kl_layout *la = &f->layouts[cn->layout];
    fputs("{", o);
    const char *sep = "";
    for (int p = 0; p < 3; p++) {
        int src = (p - r + 3) % 3; /* the phase that lands on p */
        if (cn->phase_wire[src] < 0)
            continue;
        fprintf(o, "%s%s: ", sep, PH[p]);
        put_str(o, la->wire[cn->phase_wire[src]]);
        sep = ", ";
    }
    fputs("}\n    layout: ", o);
    put_str(o, la->name);
    if (cn->kind == KL_CONS_CABLE) {
        fputs("\n    cable: ", o);
        put_str(o, f->cables[cn->cable].name);
    } else {
        fputs("\n    phase_conductor: ", o);
        put_str(o, f->conductors[cn->phase_conductor].name);
    }
    fputc('\n', o);
    if (cn->nneutrals)
        fputs("    neutrals:\n", o);
    for (int k = 0; k < cn->nneutrals; k++) {
        fputs("      - {position: ", o);
        put_str(o, la->wire[cn->neutral_wire[k]]);
        fputs(", conductor: ", o);
        put_str(o, f->conductors[cn->neutral_conductor[k]].name);
        fputs("}\n", o);
    }
    fprintf(o, "    neutral_grounded: %s\n", cn->neutral_grounded ? "true" : "false");
    if (cn->earth_resistivity_ohm_m > 0)
        fprintf(o, "    earth_resistivity: %.17g ohm-m\n", cn->earth_resistivity_ohm_m);
}

static void write_constructions(FILE *o, const kl_feeder *f, const int *sec_rot)
{
    if (f->nconstructions)
        fputs("constructions:\n", o);
    for (int c = 0; c < f->nconstructions; c++) {
        write_construction(o, f, c, 0);
        for (int r = 1; r < 3 && sec_rot; r++) {
            int used = 0;
            for (int s = 0; s < f->nsections && !used; s++)
                used = f->sections[s].kind == KL_SEC_LINE && f->sections[s].construction == c &&
                       sec_rot[s] % 3 == r;
            if (used)
                write_construction(o, f, c, r);
        }
    }
}

static void write_buses(FILE *o, const kl_feeder *f)
{
    int any = 0;
    for (int b = 0; b < f->nbuses; b++) {
        const kl_bus *bu = &f->buses[b];
        if (!bu->has_xy && !bu->description)
            continue;
        if (!any++)
            fputs("buses:\n", o);
        fputs("  - {name: ", o);
        put_str(o, bu->name);
        if (bu->has_xy)
            fprintf(o, ", x: %.17g, y: %.17g", bu->x, bu->y);
        if (bu->description) {
            fputs(", description: ", o);
            put_str(o, bu->description);
        }
        fputs("}\n", o);
    }
}

static void write_sections(FILE *o, const kl_feeder *f, const int *sec_rot)
{
    if (f->nsections)
        fputs("sections:\n", o);
    for (int s = 0; s < f->nsections; s++) {
        const kl_section *sc = &f->sections[s];
        int r = sec_rot ? sec_rot[s] % 3 : 0;
        char cname[192];
        fputs("  - {name: ", o);
        put_str(o, sc->name);
        fputs(", from: ", o);
        put_str(o, f->buses[sc->from].name);
        fputs(", to: ", o);
        put_str(o, f->buses[sc->to].name);
        if (sc->phases) {
            fputs(", phases: ", o);
            put_mask(o, kl_phases_rotate(sc->phases, r));
        }
        switch (sc->kind) {
        case KL_SEC_LINE:
            cons_name(f, sc->construction, r, cname, sizeof cname);
            fprintf(o, ", length: %.17g m, construction: ", sc->length_m);
            put_str(o, cname);
            break;
        case KL_SEC_SWITCH:
            fprintf(o, ", switch: %s", sc->closed ? "closed" : "open");
            break;
        case KL_SEC_TRANSFORMER:
            fputs(", transformer: ", o);
            put_str(o, f->transformers[sc->device].name);
            break;
        default:
            fputs(", regulator: ", o);
            put_str(o, f->regulators[sc->device].name);
            break;
        }
        fputs("}\n", o);
    }
}

static void write_transformers(FILE *o, const kl_feeder *f)
{
    if (f->ntransformers)
        fputs("transformers:\n", o);
    for (int i = 0; i < f->ntransformers; i++) {
        const kl_transformer *t = &f->transformers[i];
        fputs("  - name: ", o);
        put_str(o, t->name);
        fprintf(o, "\n    rating: %.17g VA\n    high: {voltage: %.17g V, connection: %s}\n"
                "    low: {voltage: %.17g V, connection: %s}\n    resistance: %.17g\n"
                "    reactance: %.17g\n", t->kva * 1e3, t->kv_high * 1e3, WINDING[t->high],
                t->kv_low * 1e3, WINDING[t->low], t->r_pu, t->x_pu);
        if (t->no_load_loss_pu > 0)
            fprintf(o, "    no_load_loss: %.17g\n", t->no_load_loss_pu);
        if (t->emergency_kva > 0)
            fprintf(o, "    emergency_rating: %.17g VA\n", t->emergency_kva * 1e3);
    }
}

/* key: {a: v_a unit, ...} over the slots of mask, each named by name[p]. */
static void put_per_unit(FILE *o, const char *key, int mask, const char *const name[3],
                         const double v[3], const char *unit)
{
    fprintf(o, "    %s: {", key);
    const char *sep = "";
    for (int p = 0; p < 3; p++)
        if (mask & (1 << p)) {
            fprintf(o, "%s%s: \"%.17g %s\"", sep, name[p], v[p], unit);
            sep = ", ";
        }
    fputs("}\n", o);
}

/* The names of a regulator's units by phase slot (kl_regulator_unit_name). */
static void reg_unit_names(const kl_regulator *g, const char *name[3])
{
    for (int p = 0; p < 3; p++)
        name[p] = kl_regulator_unit_name(g, p);
}

/* monitored: phase letters, or an open delta's unit names as a list. */
static void put_units(FILE *o, const char *key, int mask, const char *const name[3], int open)
{
    const char *sep = "";
    fprintf(o, "    %s: %s", key, open ? "[" : "");
    for (int p = 0; p < 3; p++)
        if (mask & (1 << p)) {
            fprintf(o, "%s%s", sep, name[p]);
            sep = open ? ", " : "";
        }
    fputs(open ? "]\n" : "\n", o);
}

static void write_regulators(FILE *o, const kl_feeder *f)
{
    static const char *const conn[] = {"", "wye", "closed-delta", "open-delta"};
    if (f->nregulators)
        fputs("regulators:\n", o);
    for (int i = 0; i < f->nregulators; i++) {
        const kl_regulator *g = &f->regulators[i];
        const char *name[3];
        int open = g->conn == KL_REG_OPEN_DELTA;
        reg_unit_names(g, name);
        fputs("  - name: ", o);
        put_str(o, g->name);
        fprintf(o, "\n    connection: %s\n", conn[g->conn]);
        put_units(o, open ? "units" : "phases", g->phases, name, open);
        fprintf(o, "    control: %s\n    taps: {", g->mode == KL_REG_AUTO ? "automatic" : "fixed");
        const char *sep = "";
        for (int p = 0; p < 3; p++)
            if (g->phases & (1 << p)) {
                fprintf(o, "%s%s: %d", sep, name[p], g->tap[p]);
                sep = ", ";
            }
        fprintf(o, "}\n    steps: %d\n    step: %.17g\n    voltage_level: %.17g V\n"
                "    bandwidth: %.17g V\n", g->steps, g->step_pu, g->voltage_level_v,
                g->bandwidth_v);
        if (g->pt_ratio > 0)
            fprintf(o, "    pt_ratio: %.17g\n", g->pt_ratio);
        if (g->ct_primary_a > 0)
            fprintf(o, "    ct_primary: %.17g A\n", g->ct_primary_a);
        if (g->rated_current_a > 0 && g->rated_current_a != g->ct_primary_a) /* the default: ct_primary */
            fprintf(o, "    rated_current: %.17g A\n", g->rated_current_a);
        if (g->emergency_current_a > 0)
            fprintf(o, "    emergency_current: %.17g A\n", g->emergency_current_a);
        put_per_unit(o, "compensator_r", open ? g->phases : KL_PH_ABC, name, g->ldc_r_v, "V");
        put_per_unit(o, "compensator_x", open ? g->phases : KL_PH_ABC, name, g->ldc_x_v, "V");
        put_units(o, "monitored", g->monitored ? g->monitored : g->phases, name, open);
    }
}

/* connected_kva and fixed_power, when the file gave them; entries rotated
 * as the power's. */
static void write_nameplate(FILE *o, const kl_feeder *f, const kl_load *ld, int r)
{
    const kl_load_nameplate *np = f->load_nameplate ? &f->load_nameplate[ld - f->loads] : NULL;
    if (!np)
        return;
    const char *const *keys = ld->conn == KL_CONN_DELTA ? PH_DELTA : PH;
    if (np->has_kva) {
        const char *sep = "";
        fputs("    connected_kva: {", o);
        for (int q = 0; q < 3; q++) {
            int k = (q - r + 3) % 3;
            if (!(ld->phases & (1 << k)))
                continue;
            fprintf(o, "%s%s: %.17g kVA", sep, keys[q], np->kva[k] / 1e3);
            sep = ", ";
        }
        fputs("}\n", o);
    }
    if (np->fixed_power)
        fputs("    fixed_power: true\n", o);
}

static void write_load(FILE *o, const kl_feeder *f, const kl_load *ld, int r)
{
    const char *const *keys = ld->conn == KL_CONN_DELTA ? PH_DELTA : PH;
    fputs("  - name: ", o);
    put_str(o, ld->name);
    if (ld->bus >= 0) {
        fputs("\n    bus: ", o);
        put_str(o, f->buses[ld->bus].name);
    } else {
        fputs("\n    section: ", o);
        put_str(o, f->sections[ld->section].name);
    }
    fprintf(o, "\n    connection: %s\n    model: %s\n    power: {",
            ld->conn == KL_CONN_DELTA ? "delta" : "wye", MODEL[ld->model]);
    const char *sep = "";
    for (int q = 0; q < 3; q++) {
        int k = (q - r + 3) % 3; /* the entry that lands on q */
        if (!(ld->phases & (1 << k)))
            continue;
        fprintf(o, "%s%s: ", sep, keys[q]);
        put_cplx(o, ld->s_va[k], "VA");
        sep = ", ";
    }
    fputs("}\n", o);
    write_nameplate(o, f, ld, r);
    if (ld->model == KL_LOAD_ZIP)
        fprintf(o, "    zip: {impedance: %.17g, current: %.17g, power: %.17g}\n", ld->zip[0],
                ld->zip[1], ld->zip[2]);
    if (ld->motor)
        fputs("    motor: true\n", o);
    if (ld->third_harmonic > 0)
        fprintf(o, "    third_harmonic: %.17g\n", ld->third_harmonic);
    if (ld->pinned)
        fputs("    pinned: true\n", o);
    if (ld->forbidden & KL_PH_ABC) {
        fputs("    forbidden_phases: ", o);
        put_mask(o, ld->forbidden & KL_PH_ABC);
        fputc('\n', o);
    }
    fprintf(o, "    move_cost: %.17g\n", ld->move_cost);
    if (ld->description) {
        fputs("    description: ", o);
        put_str(o, ld->description);
        fputc('\n', o);
    }
}

static void write_loads_caps(FILE *o, const kl_feeder *f, const int *load_rot)
{
    if (f->nloads)
        fputs("loads:\n", o);
    for (int l = 0; l < f->nloads; l++)
        write_load(o, f, &f->loads[l], load_rot ? load_rot[l] % 3 : 0);
    if (f->ncapacitors)
        fputs("capacitors:\n", o);
    for (int c = 0; c < f->ncapacitors; c++) {
        const kl_capacitor *cp = &f->capacitors[c];
        const char *const *keys = cp->conn == KL_CONN_DELTA ? PH_DELTA : PH;
        fputs("  - {name: ", o);
        put_str(o, cp->name);
        fputs(", bus: ", o);
        put_str(o, f->buses[cp->bus].name);
        fprintf(o, ", connection: %s, reactive_power: {", cp->conn == KL_CONN_DELTA ? "delta" : "wye");
        const char *sep = "";
        for (int k = 0; k < 3; k++)
            if (cp->phases & (1 << k)) {
                fprintf(o, "%s%s: \"%.17g var\"", sep, keys[k], cp->q_var[k]);
                sep = ", ";
            }
        fputs("}}\n", o);
    }
}

kl_status kl_feeder_write_stream(const kl_feeder *f, const int *sec_rot, const int *load_rot, FILE *o,
                                 kl_errors *err)
{
    if (!f || !o || !err)
        return KL_EARG;
    write_head(o, f);
    write_conductors_cables(o, f);
    write_layouts(o, f);
    write_constructions(o, f, sec_rot);
    write_buses(o, f);
    write_sections(o, f, sec_rot);
    write_transformers(o, f);
    write_regulators(o, f);
    write_loads_caps(o, f, load_rot);
    return ferror(o) ? KL_EIO : KL_OK;
}

/* Through the output set (kilter/output.h), so the file it read from is never
 * the file it writes, and the target is whole or untouched. */
kl_status kl_feeder_write(const kl_feeder *f, const int *sec_rot, const int *load_rot,
                          const char *path, kl_errors *err)
{
    if (!f || !path || !err)
        return KL_EARG;
    kl_output *out = NULL;
    FILE *o = NULL;
    kl_status st = kl_output_create(&out, err);
    if (!st && f->path)
        st = kl_output_input(out, f->path, err);
    if (!st)
        st = kl_output_add(out, path, &o, err);
    if (!st)
        st = kl_feeder_write_stream(f, sec_rot, load_rot, o, err);
    if (!st)
        st = kl_output_commit(out, err);
    kl_output_free(out);
    return st;
}
