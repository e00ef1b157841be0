/* kilter: the feeder's elements, one reader per kind (loader).
 *
 * Each reader takes one YAML mapping (already in the node pool), converts
 * every quantity to SI, checks its range and records references by name.
 * References that are not yet known are resolved after the whole file has
 * been read (kl_ld_resolve), so elements may be written in any order. */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "kilter/unbalance.h"
#include "kilter/units.h"
#include "kl_io.h"

/* Copper, annealed, at 20 C: 1/58 ohm mm2/m (IEC 60028 International Annealed
 * Copper Standard). */
#define KL_RHO_ANNEALED_CU 1.7241e-8

static int append(kl_loader *L, void **arr, int *n, int *cap, size_t size)
{
    if (kl_ld_grow(L, arr, cap, *n, size) < 0)
        return -1;
    return (*n)++;
}

/* The element's name (arena copy), labelled for messages and checked for
 * duplicates; NULL when absent or repeated. */
static const char *elem_name(kl_loader *L, const kl_fields *fl, int k, const char *kind,
                             int index, const kl_names *table, int required)
{
    const char *n;
    int dup;
    kl_ld_label(L, kind, NULL, index);
    n = kl_ld_str(L, fl, k, required ? KL_F_REQ : 0);
    if (!n)
        return NULL;
    kl_ld_label(L, kind, n, index);
    dup = kl_names_find(table, n, strlen(n));
    if (dup >= 0) {
        kl_ld_error(L, fl->val[k], "duplicate name: another %s is already called '%s': give each a different name",
                    kind, n);
        return NULL;
    }
    return kl_ld_strdup(L, n);
}

static void name_add(kl_loader *L, kl_names *t, const char *name, int index)
{
    if (name && kl_names_add(t, name, index) != KL_OK)
        L->nomem = 1;
}

/* ---- source */
enum { SRC_BUS, SRC_KV, SRC_FREQ, SRC_VPU, SRC_ANGLE, SRC_EQ, SRC_RELAY, SRC_BG };
static const char *const source_keys[] = {"bus", "nominal_voltage", "frequency", "regulated_voltage",
                                          "angle", "equivalent", "ground_relay_pickup",
                                          "background_unbalance", NULL};
enum { EQ_Z1, EQ_Z0, EQ_SC, EQ_XR };
static const char *const equivalent_keys[] = {"positive_sequence", "zero_sequence", "short_circuit",
                                              "x_over_r", NULL};

/* Short-circuit MVA and X/R to an impedance: |Z1| = V_LL^2 / S_sc,
 * R = |Z1| / sqrt(1 + (X/R)^2) (common practice). */
static void source_equivalent(kl_loader *L, int node, kl_source *s)
{
    kl_fields fl;
    double ssc = 0, xr = 0;
    if (kl_ld_fields(L, node, equivalent_keys, &fl, "source equivalent") < 0)
        return;
    s->has_equivalent = 1;
    if (fl.val[EQ_SC] >= 0) {
        if (fl.val[EQ_Z1] >= 0)
            kl_ld_error(L, fl.val[EQ_SC], "give either 'positive_sequence' or 'short_circuit', not both");
        if (kl_ld_real(L, &fl, EQ_SC, KL_Q_POWER, &ssc, 0, KL_F_POS) == 0 &&
            kl_ld_real(L, &fl, EQ_XR, KL_Q_NUMBER, &xr, 0, KL_F_REQ | KL_F_POS) == 0 && s->kv_ll > 0) {
            double zmag = s->kv_ll * s->kv_ll / ssc, r = zmag / sqrt(1 + xr * xr);
            s->z1_ohm = r + I * r * xr;
        }
    } else {
        kl_ld_complex(L, &fl, EQ_Z1, KL_Q_IMPEDANCE, &s->z1_ohm, KL_F_REQ);
        if (fl.val[EQ_XR] >= 0)
            kl_ld_error(L, fl.val[EQ_XR], "'x_over_r' goes with 'short_circuit' only: remove it");
    }
    s->z0_ohm = s->z1_ohm;
    if (fl.val[EQ_Z0] >= 0)
        kl_ld_complex(L, &fl, EQ_Z0, KL_Q_IMPEDANCE, &s->z0_ohm, 0);
}

enum { BG_RATIO, BG_ANGLE, BG_LINES };
static const char *const background_keys[] = {"ratio", "angle", "line_voltages", NULL};

/* Three measured line-to-line magnitudes, in the order ab, bc, ca. */
static void background_lines(kl_loader *L, int seq, kl_source *s)
{
    double v[3];
    int k = 0, ok = 1;
    for (int n = kl_ynode_at(L->r, seq)->first; n >= 0; n = kl_ynode_at(L->r, n)->next, k++)
        if (k < 3 && kl_ld_real_node(L, n, "line_voltages", KL_Q_VOLTAGE, &v[k], KL_F_POS) < 0)
            ok = 0;
    if (k != 3) {
        kl_ld_error(L, seq, "'line_voltages' lists %d values: give the three measured line-to-line "
                    "magnitudes in the order ab, bc, ca (e.g. [12.52 kV, 12.41 kV, 12.47 kV])", k);
        return;
    }
    if (ok && kl_unb_ratio_from_line_mags(v, &s->background, NULL) != KL_OK)
        kl_ld_error(L, seq, "'line_voltages' %g, %g, %g V cannot be three line-to-line voltages: "
                    "each must be at most the sum of the other two (check the readings)",
                    v[0], v[1], v[2]);
}

/* The supply's unbalance before this feeder's load: V2/V1 with its angle, or
 * three measured line voltages (whose V2/V1 follows from their triangle). */
static void source_background(kl_loader *L, int node, kl_source *s)
{
    kl_fields fl;
    double ratio = 0, ang = 0;
    if (kl_ld_fields(L, node, background_keys, &fl, "source background unbalance") < 0)
        return;
    s->has_background = 1;
    if (fl.val[BG_LINES] >= 0) {
        if (fl.val[BG_RATIO] >= 0 || fl.val[BG_ANGLE] >= 0)
            kl_ld_error(L, fl.val[BG_LINES], "give either 'line_voltages' or 'ratio' with "
                        "'angle', not both");
        else if (kl_ld_node(L, &fl, BG_LINES, KL_YSEQ, 0) >= 0)
            background_lines(L, fl.val[BG_LINES], s);
        return;
    }
    if (kl_ld_real(L, &fl, BG_RATIO, KL_Q_SHARE, &ratio, 0, KL_F_REQ | KL_F_NONNEG) < 0)
        return;
    kl_ld_real(L, &fl, BG_ANGLE, KL_Q_ANGLE, &ang, 0, 0);
    if (!(ratio < 1)) {
        kl_ld_error(L, fl.val[BG_RATIO], "'ratio' is |V2/V1|, expected below 100 %% (a supply "
                    "rarely exceeds 3 %%), got '%s'", kl_ynode_text(L->r, fl.val[BG_RATIO]));
        return;
    }
    s->background = ratio * cexp(I * ang * KL_PI / 180.0);
}

void kl_ld_source(kl_loader *L, int map)
{
    kl_source *s = &L->f->source;
    kl_fields fl;
    const char *bus;
    kl_ld_label(L, "source", NULL, -1);
    if (kl_ld_fields(L, map, source_keys, &fl, "source") < 0)
        return;
    L->has_source = 1;
    s->loc.line = kl_ynode_at(L->r, map)->line;
    s->loc.col = kl_ynode_at(L->r, map)->col;
    bus = kl_ld_str(L, &fl, SRC_BUS, KL_F_REQ);
    if (bus)
        kl_ld_ref(L, KL_REF_SOURCE_BUS, 0, bus, fl.val[SRC_BUS], &s->bus, &L->h_bus);
    kl_ld_real(L, &fl, SRC_KV, KL_Q_VOLTAGE, &s->kv_ll, 0, KL_F_REQ | KL_F_POS);
    s->kv_ll /= 1e3; /* the model keeps this one in kV, as its name says */
    kl_ld_real(L, &fl, SRC_FREQ, KL_Q_FREQUENCY, &s->freq_hz, 60, KL_F_POS);
    kl_ld_real(L, &fl, SRC_VPU, KL_Q_PER_UNIT, &s->v_pu, 1.0, KL_F_POS);
    /* one turn at most: the source phases are then 120 degrees apart to the
     * last digit, whatever the number of turns written */
    if (kl_ld_real(L, &fl, SRC_ANGLE, KL_Q_ANGLE, &s->angle_deg, 0, 0) == 0)
        s->angle_deg = fmod(s->angle_deg, 360.0);
    kl_ld_real(L, &fl, SRC_RELAY, KL_Q_CURRENT, &s->relay_pickup_a, 0, KL_F_POS);
    if (kl_ld_node(L, &fl, SRC_EQ, KL_YMAP, 0) >= 0) {
        double kv = s->kv_ll;
        s->kv_ll = kv * 1e3; /* V for the |Z| = V^2/S formula */
        source_equivalent(L, fl.val[SRC_EQ], s);
        s->kv_ll = kv;
    }
    if (kl_ld_node(L, &fl, SRC_BG, KL_YMAP, 0) >= 0)
        source_background(L, fl.val[SRC_BG], s);
}

/* ---- conductors */
enum { CO_NAME, CO_R, CO_RT, CO_GMR, CO_DIAM, CO_AMP, CO_AREA, CO_EAMP };
static const char *const conductor_keys[] = {"name", "resistance", "resistance_temperature", "gmr",
                                             "diameter", "ampacity", "area", "emergency_ampacity", NULL};

/* An emergency rating is a short-time rating above the continuous one. */
static void emergency_ampacity(kl_loader *L, const kl_fields *fl, int k, double normal, double *out)
{
    if (kl_ld_real(L, fl, k, KL_Q_CURRENT, out, 0, KL_F_POS) == 0 && *out > 0 && !(*out >= normal))
        kl_ld_error(L, fl->val[k], "'emergency_ampacity' (%g A) is below the continuous 'ampacity' "
                    "(%g A): an emergency rating is the higher, short-time one", *out, normal);
}

void kl_ld_conductor(kl_loader *L, int map)
{
    kl_feeder *f = L->f;
    kl_fields fl;
    kl_conductor *c;
    double area;
    int i = append(L, (void **)&f->conductors, &f->nconductors, &L->cap_conductors, sizeof *c);
    if (i < 0)
        return;
    c = &f->conductors[i];
    c->loc.line = kl_ynode_at(L->r, map)->line;
    c->loc.col = kl_ynode_at(L->r, map)->col;
    kl_ld_label(L, "conductor", NULL, i);
    if (kl_ld_fields(L, map, conductor_keys, &fl, "a conductor") < 0)
        return;
    c->name = elem_name(L, &fl, CO_NAME, "conductor", i, &L->h_cond, 1);
    kl_ld_real(L, &fl, CO_R, KL_Q_OHM_PER_LENGTH, &c->r_ohm_per_m, 0, KL_F_REQ | KL_F_POS);
    kl_ld_real(L, &fl, CO_RT, KL_Q_TEMPERATURE, &c->r_temp_c, 50, 0);
    kl_ld_real(L, &fl, CO_GMR, KL_Q_LENGTH, &c->gmr_m, 0, KL_F_REQ | KL_F_POS);
    kl_ld_real(L, &fl, CO_DIAM, KL_Q_LENGTH, &c->diameter_m, 0, KL_F_REQ | KL_F_POS);
    kl_ld_real(L, &fl, CO_AMP, KL_Q_CURRENT, &c->ampacity_a, 0, KL_F_POS);
    kl_ld_real(L, &fl, CO_AREA, KL_Q_AREA, &area, 0, KL_F_POS);
    emergency_ampacity(L, &fl, CO_EAMP, c->ampacity_a, &c->emergency_ampacity_a);
    if (c->gmr_m > 0 && c->diameter_m > 0 && c->gmr_m > c->diameter_m / 2)
        kl_ld_error(L, fl.val[CO_GMR], "the GMR (%g m) is larger than the radius (%g m): "
                    "check the units of 'gmr' and 'diameter'", c->gmr_m, c->diameter_m / 2);
    name_add(L, &L->h_cond, c->name, i);
}

/* ---- cables */
enum { CA_NAME, CA_KIND, CA_COND, CA_STRAND, CA_K, CA_DON, CA_TD, CA_TT, CA_TR, CA_EPS, CA_AMP, CA_EAMP };
static const char *const cable_keys[] = {"name", "kind", "conductor", "neutral_strand", "strands",
                                         "diameter_over_neutral", "tape_diameter", "tape_thickness",
                                         "tape_resistivity", "permittivity", "ampacity",
                                         "emergency_ampacity", NULL};
static const char *const cable_kinds[] = {"concentric-neutral", "tape-shielded", NULL};

static void cable_concentric(kl_loader *L, kl_fields *fl, kl_cable *c, int i)
{
    const char *s = kl_ld_str(L, fl, CA_STRAND, KL_F_REQ);
    if (s)
        kl_ld_ref(L, KL_REF_CABLE_STRAND, i, s, fl->val[CA_STRAND], &c->strand_conductor, &L->h_cond);
    kl_ld_int(L, fl, CA_K, &c->strands, 0, KL_F_REQ | KL_F_POS);
    kl_ld_real(L, fl, CA_DON, KL_Q_LENGTH, &c->diameter_over_neutral_m, 0, KL_F_REQ | KL_F_POS);
    if (fl->val[CA_TD] >= 0 || fl->val[CA_TT] >= 0)
        kl_ld_error(L, fl->val[CA_TD] >= 0 ? fl->val[CA_TD] : fl->val[CA_TT],
                    "tape keys belong to 'kind: tape-shielded' cables: remove them or change the kind");
}

static void cable_tape(kl_loader *L, kl_fields *fl, kl_cable *c)
{
    c->strand_conductor = -1;
    kl_ld_real(L, fl, CA_TD, KL_Q_LENGTH, &c->tape_diameter_m, 0, KL_F_REQ | KL_F_POS);
    kl_ld_real(L, fl, CA_TT, KL_Q_LENGTH, &c->tape_thickness_m, 0, KL_F_REQ | KL_F_POS);
    kl_ld_real(L, fl, CA_TR, KL_Q_RESISTIVITY, &c->tape_resistivity_ohm_m, KL_RHO_ANNEALED_CU, KL_F_POS);
    if (fl->val[CA_STRAND] >= 0 || fl->val[CA_K] >= 0)
        kl_ld_error(L, fl->val[CA_STRAND] >= 0 ? fl->val[CA_STRAND] : fl->val[CA_K],
                    "neutral strands belong to 'kind: concentric-neutral' cables: remove them or change the kind");
}

void kl_ld_cable(kl_loader *L, int map)
{
    kl_feeder *f = L->f;
    kl_fields fl;
    kl_cable *c;
    const char *s;
    int i = append(L, (void **)&f->cables, &f->ncables, &L->cap_cables, sizeof *c);
    if (i < 0)
        return;
    c = &f->cables[i];
    c->loc.line = kl_ynode_at(L->r, map)->line;
    c->loc.col = kl_ynode_at(L->r, map)->col;
    c->phase_conductor = c->strand_conductor = -1;
    kl_ld_label(L, "cable", NULL, i);
    if (kl_ld_fields(L, map, cable_keys, &fl, "a cable") < 0)
        return;
    c->name = elem_name(L, &fl, CA_NAME, "cable", i, &L->h_cable, 1);
    if (fl.val[CA_KIND] < 0)
        kl_ld_error(L, map, "missing required key 'kind' (concentric-neutral or tape-shielded)");
    c->kind = (kl_cable_kind)(kl_ld_enum(L, &fl, CA_KIND, cable_kinds, 0) + 1); /* an index of cable_kinds, 0-1 */
    s = kl_ld_str(L, &fl, CA_COND, KL_F_REQ);
    if (s)
        kl_ld_ref(L, KL_REF_CABLE_COND, i, s, fl.val[CA_COND], &c->phase_conductor, &L->h_cond);
    if (c->kind == KL_CABLE_CONCENTRIC)
        cable_concentric(L, &fl, c, i);
    else
        cable_tape(L, &fl, c);
    kl_ld_real(L, &fl, CA_EPS, KL_Q_NUMBER, &c->insulation_permittivity, 2.3, KL_F_POS);
    kl_ld_real(L, &fl, CA_AMP, KL_Q_CURRENT, &c->ampacity_a, 0, KL_F_POS);
    emergency_ampacity(L, &fl, CA_EAMP, c->ampacity_a, &c->emergency_ampacity_a);
    name_add(L, &L->h_cable, c->name, i);
}

/* ---- layouts */
enum { LA_NAME, LA_KIND, LA_POS };
static const char *const layout_keys[] = {"name", "kind", "positions", NULL};
static const char *const layout_kinds[] = {"overhead", "underground", NULL};
enum { PO_ID, PO_X, PO_H, PO_D };
static const char *const position_keys[] = {"id", "x", "height", "depth", NULL};

static void layout_position(kl_loader *L, kl_layout *la, int node)
{
    kl_fields fl;
    const char *id;
    int w = la->nwires, j;
    if (kl_ld_fields(L, node, position_keys, &fl, "a layout position") < 0)
        return;
    if (w == KL_MAX_WIRES) {
        kl_ld_error(L, node, "a layout holds at most %d positions", KL_MAX_WIRES);
        return;
    }
    id = kl_ld_str(L, &fl, PO_ID, KL_F_REQ);
    for (j = 0; id && j < w; j++)
        if (strcmp(la->wire[j], id) == 0) {
            kl_ld_error(L, fl.val[PO_ID], "position id '%s' used twice in this layout", id);
            id = NULL;
        }
    kl_ld_real(L, &fl, PO_X, KL_Q_LENGTH, &la->x_m[w], 0, KL_F_REQ);
    if (la->underground) {
        if (fl.val[PO_H] >= 0)
            kl_ld_error(L, fl.val[PO_H], "an underground layout gives 'depth', not 'height'");
        kl_ld_real(L, &fl, PO_D, KL_Q_LENGTH, &la->y_m[w], 0, KL_F_REQ | KL_F_POS);
        la->y_m[w] = -la->y_m[w];
    } else {
        if (fl.val[PO_D] >= 0)
            kl_ld_error(L, fl.val[PO_D], "an overhead layout gives 'height', not 'depth'");
        kl_ld_real(L, &fl, PO_H, KL_Q_LENGTH, &la->y_m[w], 0, KL_F_REQ | KL_F_POS);
    }
    la->wire[w] = id ? kl_ld_strdup(L, id) : "";
    if (la->wire[w])
        la->nwires++;
}

void kl_ld_layout(kl_loader *L, int map)
{
    kl_feeder *f = L->f;
    kl_fields fl;
    kl_layout *la;
    int i = append(L, (void **)&f->layouts, &f->nlayouts, &L->cap_layouts, sizeof *la), p;
    if (i < 0)
        return;
    la = &f->layouts[i];
    la->loc.line = kl_ynode_at(L->r, map)->line;
    la->loc.col = kl_ynode_at(L->r, map)->col;
    kl_ld_label(L, "layout", NULL, i);
    if (kl_ld_fields(L, map, layout_keys, &fl, "a layout") < 0)
        return;
    la->name = elem_name(L, &fl, LA_NAME, "layout", i, &L->h_layout, 1);
    la->underground = kl_ld_enum(L, &fl, LA_KIND, layout_kinds, 0);
    p = kl_ld_node(L, &fl, LA_POS, KL_YSEQ, KL_F_REQ);
    if (p >= 0) {
        int n;
        for (n = kl_ynode_at(L->r, p)->first; n >= 0; n = kl_ynode_at(L->r, n)->next)
            layout_position(L, la, n);
        if (la->nwires == 0)
            kl_ld_error(L, p, "'positions' is empty: list at least one position");
    }
    name_add(L, &L->h_layout, la->name, i);
}

/* ---- buses */
enum { BU_NAME, BU_X, BU_Y, BU_DESC };
static const char *const bus_keys[] = {"name", "x", "y", "description", NULL};

/* The bus called by the scalar at node, created on first mention. */
int kl_ld_bus_ref(kl_loader *L, int node, const char *key)
{
    kl_feeder *f = L->f;
    const kl_ynode *n = kl_ynode_at(L->r, node);
    kl_name_hint hint;
    const char *t;
    int i;
    if (n->kind != KL_YSCALAR || n->len == 0) {
        kl_ld_error(L, node, "'%s' expects a bus name", key);
        return -1;
    }
    if (kl_ld_printable(L, node, key, 0) < 0)
        return -1;
    t = kl_ynode_text(L->r, node);
    i = kl_names_find_hint(&L->h_bus, t, (size_t)n->len, &hint);
    if (i >= 0)
        return i;
    i = append(L, (void **)&f->buses, &f->nbuses, &L->cap_buses, sizeof *f->buses);
    if (i < 0)
        return -1;
    if (kl_ld_grow(L, (void **)&L->bus_declared, &L->cap_declared, i, 1) < 0)
        return -1;
    f->buses[i].name = kl_ld_strdup(L, t);
    f->buses[i].loc.line = n->line;
    f->buses[i].loc.col = n->col;
    if (f->buses[i].name && kl_names_add_hint(&L->h_bus, f->buses[i].name, i, &hint) != KL_OK)
        L->nomem = 1;
    return f->buses[i].name ? i : -1;
}

void kl_ld_bus(kl_loader *L, int map)
{
    kl_feeder *f = L->f;
    kl_fields fl;
    kl_bus *b;
    const char *d;
    int i;
    kl_ld_label(L, "bus", NULL, -1);
    if (kl_ld_fields(L, map, bus_keys, &fl, "a bus") < 0)
        return;
    if (!kl_ld_str(L, &fl, BU_NAME, KL_F_REQ))
        return;
    kl_ld_label(L, "bus", kl_ynode_text(L->r, fl.val[BU_NAME]), -1);
    i = kl_ld_bus_ref(L, fl.val[BU_NAME], "name");
    if (i < 0)
        return;
    if (L->bus_declared[i]) {
        kl_ld_error(L, fl.val[BU_NAME], "duplicate name: bus '%s' is already listed under buses:", f->buses[i].name);
        return;
    }
    L->bus_declared[i] = 1;
    b = &f->buses[i];
    b->loc.line = kl_ynode_at(L->r, map)->line;
    b->loc.col = kl_ynode_at(L->r, map)->col;
    if ((fl.val[BU_X] >= 0) != (fl.val[BU_Y] >= 0))
        kl_ld_error(L, map, "give both 'x' and 'y' or neither");
    else if (fl.val[BU_X] >= 0 &&
             kl_ld_real(L, &fl, BU_X, KL_Q_NUMBER, &b->x, 0, 0) == 0 &&
             kl_ld_real(L, &fl, BU_Y, KL_Q_NUMBER, &b->y, 0, 0) == 0)
        b->has_xy = 1;
    d = kl_ld_str(L, &fl, BU_DESC, KL_F_TEXT);
    if (d)
        b->description = kl_ld_strdup(L, d);
}
