/* kilter: constructions, sections, transformers and regulators (loader). */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "kilter/units.h"
#include "kl_io.h"

static int append(kl_loader *L, void **arr, int *n, int *cap, size_t size)
{
    if (kl_ld_grow(L, arr, cap, *n, size) < 0)
        return -1;
    return (*n)++;
}

static const char *named(kl_loader *L, const kl_fields *fl, int k, const char *kind, int i,
                         const kl_names *t, int required)
{
    const char *n;
    kl_ld_label(L, kind, NULL, i);
    n = kl_ld_str(L, fl, k, required ? KL_F_REQ : 0);
    if (!n)
        return NULL;
    kl_ld_label(L, kind, n, i);
    if (kl_names_find_hint(t, n, strlen(n), &L->name_hint) >= 0) {
        kl_ld_error(L, fl->val[k], "duplicate name: another %s is already called '%s': give each a different name",
                    kind, n);
        return NULL;
    }
    return kl_ld_strdup(L, n);
}

static void add_name(kl_loader *L, kl_names *t, const char *name, int i)
{
    if (name && kl_names_add_hint(t, name, i, &L->name_hint) != KL_OK)
        L->nomem = 1;
}

static void set_loc(kl_loader *L, kl_loc *loc, int node)
{
    loc->line = kl_ynode_at(L->r, node)->line;
    loc->col = kl_ynode_at(L->r, node)->col;
}

/* ---- constructions */
enum { CN_NAME, CN_LAYOUT, CN_COND, CN_CABLE, CN_PHASES, CN_NEUT, CN_GROUNDED, CN_RHO, CN_Z, CN_B, CN_AMP,
       CN_EAMP };
static const char *const construction_keys[] = {"name", "layout", "phase_conductor", "cable", "phases",
                                                "neutrals", "neutral_grounded", "earth_resistivity",
                                                "impedance", "susceptance", "ampacity",
                                                "emergency_ampacity", NULL};
static const char *const phase_names[] = {"a", "b", "c", NULL};
enum { NE_POS, NE_COND };
static const char *const neutral_keys[] = {"position", "conductor", NULL};
static const char *const matrix_keys[] = {"aa", "ab", "ac", "ba", "bb", "bc", "ca", "cb", "cc", NULL};

/* A construction given by its matrices names no conductor: its ratings are its own. */
static void cons_matrix_ampacity(kl_loader *L, kl_construction *c, const kl_fields *fl)
{
    kl_ld_real(L, fl, CN_AMP, KL_Q_CURRENT, &c->ampacity_a, 0, KL_F_POS);
    if (kl_ld_real(L, fl, CN_EAMP, KL_Q_CURRENT, &c->emergency_ampacity_a, 0, KL_F_POS) == 0 &&
        fl->val[CN_EAMP] >= 0 && !(c->emergency_ampacity_a >= c->ampacity_a))
        kl_ld_error(L, fl->val[CN_EAMP], "'emergency_ampacity' (%g A) is below 'ampacity' (%g A): an "
                    "emergency rating is the higher, short-time one", c->emergency_ampacity_a, c->ampacity_a);
}

static void cons_ref(kl_loader *L, const kl_fields *fl, int k, int what, int i, int *target,
                     const kl_names *t)
{
    const char *s = kl_ld_str(L, fl, k, KL_F_REQ);
    if (s)
        kl_ld_ref(L, what, i, s, fl->val[k], target, t);
}

/* phases: {a: "2", b: "1", c: "3"} : phase -> position id in the layout. */
static void cons_phase_positions(kl_loader *L, kl_construction *c, kl_cons_pos *cp, int node)
{
    kl_fields fl;
    int p;
    if (kl_ld_fields(L, node, phase_names, &fl, "construction phases (phase: position id)") < 0)
        return;
    for (p = 0; p < 3; p++) {
        const char *id = kl_ld_str(L, &fl, p, 0);
        if (!id)
            continue;
        cp->pos[p] = kl_ld_strdup(L, id);
        set_loc(L, &cp->loc[p], fl.val[p]);
        c->phases |= 1 << p;
    }
    if (!c->phases)
        kl_ld_error(L, node, "'phases' names no phase: write like {a: \"1\", b: \"2\", c: \"3\"}");
}

static void cons_neutrals(kl_loader *L, kl_construction *c, kl_cons_pos *cp, int i, int node)
{
    int n;
    for (n = kl_ynode_at(L->r, node)->first; n >= 0; n = kl_ynode_at(L->r, n)->next) {
        kl_fields fl;
        const char *id;
        int k = c->nneutrals;
        if (kl_ld_fields(L, n, neutral_keys, &fl, "a neutral") < 0)
            continue;
        if (k == KL_MAX_NEUTRALS) {
            kl_ld_error(L, n, "at most %d separate neutrals per construction", KL_MAX_NEUTRALS);
            return;
        }
        id = kl_ld_str(L, &fl, NE_POS, KL_F_REQ);
        if (id) {
            cp->pos[3 + k] = kl_ld_strdup(L, id);
            set_loc(L, &cp->loc[3 + k], fl.val[NE_POS]);
        }
        c->neutral_wire[k] = -1;
        cons_ref(L, &fl, NE_COND, k ? KL_REF_CONS_NEUTRAL1 : KL_REF_CONS_NEUTRAL0, i,
                 &c->neutral_conductor[k], &L->h_cond);
        c->nneutrals++;
    }
}

/* impedance: {aa: ..., ab: ...}: symmetric; ab and ba are the same entry. */
static void cons_matrix(kl_loader *L, kl_construction *c, int zmap, int bmap)
{
    int given[3][3] = {{0}}, which, k;
    for (which = 0; which < 2; which++) {
        int node = which ? bmap : zmap;
        kl_fields fl;
        if (node < 0 || kl_ld_fields(L, node, matrix_keys, &fl, which ? "susceptance" : "impedance") < 0)
            continue;
        for (k = 0; k < 9; k++) {
            int r = k / 3, s = k % 3;
            kl_complex z;
            if (fl.val[k] < 0)
                continue;
            if (which == 0 && given[r][s]) {
                kl_ld_error(L, fl.val[k], "entry %s given twice (as %c%c and %c%c): the matrix is symmetric",
                            matrix_keys[k], 'a' + s, 'a' + r, 'a' + r, 'a' + s);
                continue;
            }
            if (which) {
                double b;
                if (kl_ld_real_node(L, fl.val[k], matrix_keys[k], KL_Q_S_PER_LENGTH, &b, 0) == 0)
                    c->b_given[r][s] = c->b_given[s][r] = b;
                continue;
            }
            if (kl_ld_complex_node(L, fl.val[k], matrix_keys[k], KL_Q_OHM_PER_LENGTH, &z) < 0)
                continue;
            c->z_given[r][s] = c->z_given[s][r] = z;
            given[r][s] = given[s][r] = 1;
        }
    }
    for (k = 0; k < 3; k++) {
        if (given[k][k] && creal(c->z_given[k][k]) <= 0)
            kl_ld_error(L, zmap, "impedance %c%c must have a positive resistance", 'a' + k, 'a' + k);
    }
}

static void cons_matrix_phases(kl_loader *L, kl_construction *c, const kl_fields *fl)
{
    int k, j, diag = 0;
    for (k = 0; k < 3; k++)
        if (cabs(c->z_given[k][k]) > 0)
            diag |= 1 << k;
    if (fl->val[CN_PHASES] >= 0)
        c->phases = kl_ld_phases(L, fl->val[CN_PHASES], "phases");
    else
        c->phases = diag;
    for (k = 0; k < 3; k++) {
        if ((c->phases >> k & 1) && !(diag >> k & 1))
            kl_ld_error(L, fl->val[CN_Z], "impedance: missing the self impedance %c%c of phase %c",
                        'a' + k, 'a' + k, 'a' + k);
        for (j = 0; j < 3; j++)
            if ((cabs(c->z_given[k][j]) > 0 || c->b_given[k][j] != 0) &&
                !((c->phases >> k & 1) && (c->phases >> j & 1)))
                kl_ld_error(L, fl->val[CN_Z], "impedance/susceptance entry %c%c refers to a phase this "
                            "construction does not have (phases %s)", 'a' + k, 'a' + j,
                            kl_phases_str(c->phases, (char[4]){0}));
    }
}

static void cons_built(kl_loader *L, kl_construction *c, const kl_fields *fl, int i)
{
    kl_cons_pos *cp = &L->cons_pos[i];
    if (fl->val[CN_CABLE] >= 0) {
        c->kind = KL_CONS_CABLE;
        cons_ref(L, fl, CN_CABLE, KL_REF_CONS_CABLE, i, &c->cable, &L->h_cable);
        if (fl->val[CN_COND] >= 0)
            kl_ld_error(L, fl->val[CN_COND], "a cable construction takes its conductor from the cable: "
                        "remove 'phase_conductor'");
    } else {
        c->kind = KL_CONS_OVERHEAD;
        cons_ref(L, fl, CN_COND, KL_REF_CONS_COND, i, &c->phase_conductor, &L->h_cond);
    }
    cons_ref(L, fl, CN_LAYOUT, KL_REF_CONS_LAYOUT, i, &c->layout, &L->h_layout);
    if (kl_ld_node(L, fl, CN_PHASES, KL_YMAP, KL_F_REQ) >= 0)
        cons_phase_positions(L, c, cp, fl->val[CN_PHASES]);
    if (kl_ld_node(L, fl, CN_NEUT, KL_YSEQ, 0) >= 0)
        cons_neutrals(L, c, cp, i, fl->val[CN_NEUT]);
    if (fl->val[CN_B] >= 0)
        kl_ld_error(L, fl->val[CN_B], "'susceptance' goes with 'impedance' (a construction given by its "
                    "matrices); a built construction's is computed from its layout");
}

void kl_ld_construction(kl_loader *L, int map)
{
    kl_feeder *f = L->f;
    kl_fields fl;
    kl_construction *c;
    int i = append(L, (void **)&f->constructions, &f->nconstructions, &L->cap_constructions, sizeof *c), k;
    if (i < 0 || kl_ld_grow(L, (void **)&L->cons_pos, &L->cap_conspos, i, sizeof *L->cons_pos) < 0)
        return;
    c = &f->constructions[i];
    set_loc(L, &c->loc, map);
    c->layout = c->phase_conductor = c->cable = -1;
    for (k = 0; k < 3; k++)
        c->phase_wire[k] = -1;
    for (k = 0; k < KL_MAX_NEUTRALS; k++)
        c->neutral_wire[k] = c->neutral_conductor[k] = -1;
    kl_ld_label(L, "construction", NULL, i);
    if (kl_ld_fields(L, map, construction_keys, &fl, "a construction") < 0)
        return;
    c->name = named(L, &fl, CN_NAME, "construction", i, &L->h_cons, 1);
    c->neutral_grounded = kl_ld_bool(L, &fl, CN_GROUNDED, 1);
    kl_ld_real(L, &fl, CN_RHO, KL_Q_RESISTIVITY, &c->earth_resistivity_ohm_m, -1, KL_F_POS);
    if (fl.val[CN_Z] >= 0) {
        c->kind = KL_CONS_MATRIX;
        for (k = CN_LAYOUT; k <= CN_NEUT; k++)
            if (k != CN_PHASES && fl.val[k] >= 0)
                kl_ld_error(L, fl.val[k], "'%s' does not go with 'impedance': a construction is given either "
                            "by its matrices or by layout and conductors", construction_keys[k]);
        if (kl_ld_node(L, &fl, CN_Z, KL_YMAP, 0) >= 0 && (fl.val[CN_B] < 0 || kl_ld_node(L, &fl, CN_B, KL_YMAP, 0) >= 0))
            cons_matrix(L, c, fl.val[CN_Z], fl.val[CN_B]);
        cons_matrix_phases(L, c, &fl);
        cons_matrix_ampacity(L, c, &fl);
    } else {
        cons_built(L, c, &fl, i);
        for (k = CN_AMP; k <= CN_EAMP; k++)
            if (fl.val[k] >= 0)
                kl_ld_error(L, fl.val[k], "'%s' goes with a construction given by its matrices: give it on "
                            "the phase conductor or the cable", construction_keys[k]);
    }
    add_name(L, &L->h_cons, c->name, i);
}

/* ---- sections */
enum { SE_NAME, SE_FROM, SE_TO, SE_LEN, SE_CONS, SE_PHASES, SE_SWITCH, SE_XF, SE_REG };
static const char *const section_keys[] = {"name", "from", "to", "length", "construction", "phases",
                                           "switch", "transformer", "regulator", NULL};
static const char *const switch_states[] = {"open", "closed", NULL};

static const char *section_name(kl_loader *L, const kl_fields *fl, int i)
{
    char buf[300];
    const char *n;
    if (fl->val[SE_NAME] >= 0)
        return named(L, fl, SE_NAME, "section", i, &L->h_sec, 0);
    if (fl->val[SE_FROM] < 0 || fl->val[SE_TO] < 0)
        return NULL;
    snprintf(buf, sizeof buf, "%.140s-%.140s", kl_ynode_text(L->r, fl->val[SE_FROM]),
             kl_ynode_text(L->r, fl->val[SE_TO]));
    kl_ld_label(L, "section", buf, i);
    if (kl_names_find_hint(&L->h_sec, buf, strlen(buf), &L->name_hint) >= 0) {
        kl_ld_error(L, fl->map, "duplicate name: a section called '%s' exists already: give this one a 'name'", buf);
        return NULL;
    }
    n = kl_ld_strdup(L, buf);
    kl_ld_label(L, "section", n, i); /* buf goes out of scope */
    return n;
}

static void section_kind(kl_loader *L, kl_section *s, const kl_fields *fl, int i)
{
    int k, n = 0;
    const char *t;
    for (k = SE_CONS; k <= SE_REG; k++)
        n += k != SE_PHASES && fl->val[k] >= 0;
    if (n != 1) {
        kl_ld_error(L, fl->map, n ? "give only one of 'construction', 'switch', 'transformer', 'regulator'"
                                  : "a section needs one of 'construction' (a line), 'switch', 'transformer' "
                                    "or 'regulator'");
        return;
    }
    if (fl->val[SE_CONS] >= 0 && (t = kl_ld_str(L, fl, SE_CONS, 0))) {
        s->kind = KL_SEC_LINE;
        kl_ld_ref(L, KL_REF_SEC_CONS, i, t, fl->val[SE_CONS], &s->construction, &L->h_cons);
        kl_ld_real(L, fl, SE_LEN, KL_Q_LENGTH, &s->length_m, 0, KL_F_REQ | KL_F_POS);
        return;
    }
    if (fl->val[SE_LEN] >= 0)
        kl_ld_error(L, fl->val[SE_LEN], "only line sections (with 'construction') have a length: remove it");
    if (fl->val[SE_SWITCH] >= 0) {
        s->kind = KL_SEC_SWITCH;
        s->closed = (uint8_t)kl_ld_enum(L, fl, SE_SWITCH, switch_states, 1); /* open 0, closed 1 */
    } else if (fl->val[SE_XF] >= 0 && (t = kl_ld_str(L, fl, SE_XF, 0))) {
        s->kind = KL_SEC_TRANSFORMER;
        kl_ld_ref(L, KL_REF_SEC_XF, i, t, fl->val[SE_XF], &s->device, &L->h_xf);
    } else if (fl->val[SE_REG] >= 0 && (t = kl_ld_str(L, fl, SE_REG, 0))) {
        s->kind = KL_SEC_REGULATOR;
        kl_ld_ref(L, KL_REF_SEC_REG, i, t, fl->val[SE_REG], &s->device, &L->h_reg);
    }
}

void kl_ld_section(kl_loader *L, int map)
{
    kl_feeder *f = L->f;
    kl_fields fl;
    kl_section *s;
    int i = append(L, (void **)&f->sections, &f->nsections, &L->cap_sections, sizeof *s);
    if (i < 0 || kl_ld_grow(L, (void **)&L->sec_phases_given, &L->cap_secph, i, sizeof(int)) < 0)
        return;
    s = &f->sections[i];
    set_loc(L, &s->loc, map);
    s->from = s->to = s->construction = s->device = -1;
    s->closed = 1;
    kl_ld_label(L, "section", NULL, i);
    if (kl_ld_fields(L, map, section_keys, &fl, "a section") < 0)
        return;
    s->name = section_name(L, &fl, i);
    if (kl_ld_node(L, &fl, SE_FROM, 0, KL_F_REQ) >= 0)
        s->from = kl_ld_bus_ref(L, fl.val[SE_FROM], "from");
    if (kl_ld_node(L, &fl, SE_TO, 0, KL_F_REQ) >= 0)
        s->to = kl_ld_bus_ref(L, fl.val[SE_TO], "to");
    if (s->from >= 0 && s->from == s->to)
        kl_ld_error(L, fl.val[SE_TO], "'from' and 'to' are the same bus '%s': a section joins two buses",
                    f->buses[s->to].name);
    section_kind(L, s, &fl, i);
    if (fl.val[SE_PHASES] >= 0)
        L->sec_phases_given[i] = kl_ld_phases(L, fl.val[SE_PHASES], "phases");
    add_name(L, &L->h_sec, s->name, i);
}

/* ---- transformers */
enum { XF_NAME, XF_KVA, XF_HIGH, XF_LOW, XF_R, XF_X, XF_NLL, XF_EKVA };
static const char *const transformer_keys[] = {"name", "rating", "high", "low", "resistance", "reactance",
                                               "no_load_loss", "emergency_rating", NULL};
enum { WI_V, WI_CONN };
static const char *const winding_keys[] = {"voltage", "connection", NULL};
static const char *const winding_names[] = {"grounded-wye", "wye", "delta", "open-wye", "open-delta",
                                            "single", "center-tap", NULL};

static void winding(kl_loader *L, const kl_fields *xf, int k, double *kv, kl_winding *w)
{
    kl_fields fl;
    int n = kl_ld_node(L, xf, k, KL_YMAP, KL_F_REQ);
    if (n < 0 || kl_ld_fields(L, n, winding_keys, &fl, xf->keys[k]) < 0)
        return;
    if (kl_ld_real(L, &fl, WI_V, KL_Q_VOLTAGE, kv, 0, KL_F_REQ | KL_F_POS) == 0)
        *kv /= 1e3; /* the model keeps winding ratings in kV */
    if (fl.val[WI_CONN] < 0)
        kl_ld_error(L, n, "missing required key 'connection' (grounded-wye, wye, delta, open-wye, "
                    "open-delta, single or center-tap)");
    *w = (kl_winding)(kl_ld_enum(L, &fl, WI_CONN, winding_names, 0) + 1);
}

void kl_ld_transformer(kl_loader *L, int map)
{
    kl_feeder *f = L->f;
    kl_fields fl;
    kl_transformer *t;
    int i = append(L, (void **)&f->transformers, &f->ntransformers, &L->cap_transformers, sizeof *t);
    if (i < 0)
        return;
    t = &f->transformers[i];
    set_loc(L, &t->loc, map);
    kl_ld_label(L, "transformer", NULL, i);
    if (kl_ld_fields(L, map, transformer_keys, &fl, "a transformer") < 0)
        return;
    t->name = named(L, &fl, XF_NAME, "transformer", i, &L->h_xf, 1);
    if (kl_ld_real(L, &fl, XF_KVA, KL_Q_POWER, &t->kva, 0, KL_F_REQ | KL_F_POS) == 0)
        t->kva /= 1e3; /* kVA in the model, as its name says */
    winding(L, &fl, XF_HIGH, &t->kv_high, &t->high);
    winding(L, &fl, XF_LOW, &t->kv_low, &t->low);
    kl_ld_real(L, &fl, XF_R, KL_Q_SHARE, &t->r_pu, 0, KL_F_REQ | KL_F_NONNEG);
    kl_ld_real(L, &fl, XF_X, KL_Q_SHARE, &t->x_pu, 0, KL_F_REQ | KL_F_POS);
    kl_ld_real(L, &fl, XF_NLL, KL_Q_SHARE, &t->no_load_loss_pu, 0, KL_F_NONNEG);
    if (kl_ld_real(L, &fl, XF_EKVA, KL_Q_POWER, &t->emergency_kva, 0, KL_F_POS) == 0 && fl.val[XF_EKVA] >= 0) {
        t->emergency_kva /= 1e3;
        if (!(t->emergency_kva >= t->kva))
            kl_ld_error(L, fl.val[XF_EKVA], "'emergency_rating' (%g kVA) is below 'rating' (%g kVA): an "
                        "emergency rating is the higher, short-time one", t->emergency_kva, t->kva);
    }
    add_name(L, &L->h_xf, t->name, i);
}

/* ---- regulators */
enum { RG_NAME, RG_CONN, RG_PHASES, RG_UNITS, RG_CONTROL, RG_TAPS, RG_STEPS, RG_STEP, RG_VL, RG_BW,
       RG_PT, RG_CT, RG_R, RG_X, RG_MON, RG_IR, RG_IE };
static const char *const regulator_keys[] = {"name", "connection", "phases", "units", "control",
                                             "taps", "steps", "step", "voltage_level", "bandwidth",
                                             "pt_ratio", "ct_primary", "compensator_r",
                                             "compensator_x", "monitored", "rated_current",
                                             "emergency_current", NULL};
static const char *const reg_conns[] = {"wye", "closed-delta", "open-delta", NULL};
static const char *const reg_controls[] = {"fixed", "automatic", NULL};

/* The keys per-unit settings are written with, and the unit (phase slot) of
 * each: phase letters, or an open-delta bank's unit names. */
typedef struct {
    const char *keys[4];
    int slot[3];
} reg_units;

static void reg_unit_keys(const kl_regulator *g, reg_units *u)
{
    int n = 0;
    u->keys[0] = NULL;
    if (g->conn == KL_REG_OPEN_DELTA && !g->shared)
        return; /* its units were refused already */
    for (int p = 0; p < 3; p++) {
        if (g->conn != KL_REG_OPEN_DELTA || (g->phases >> p & 1)) {
            u->keys[n] = kl_regulator_unit_name(g, p);
            u->slot[n++] = p;
        }
    }
    u->keys[n] = NULL;
}

/* One unit name "pq" (two different phase letters) at node: p and q, or -1. */
static int unit_name(kl_loader *L, int node, int *q)
{
    const char *t = kl_ynode_text(L->r, node);
    if (kl_ynode_at(L->r, node)->kind != KL_YSCALAR || strlen(t) != 2 || t[0] < 'a' || t[0] > 'c'
        || t[1] < 'a' || t[1] > 'c' || t[0] == t[1]) {
        kl_ld_error(L, node, "an open-delta unit is named by the two phases it connects, the phase "
                    "it regulates first and the phase it shares second (like 'ab' or 'cb'), got '%s'",
                    t);
        return -1;
    }
    *q = t[1] - 'a';
    return t[0] - 'a';
}

/* units: [ab, cb]: two units sharing their second phase. */
static void reg_units_read(kl_loader *L, kl_regulator *g, int node)
{
    const kl_ynode *y = kl_ynode_at(L->r, node);
    int n, k = 0, p[2] = {-1, -1}, q[2] = {-1, -1};
    if (y->kind != KL_YSEQ || y->count != 2) {
        kl_ld_error(L, node, "'units' lists the open-delta bank's two units by the phases each "
                    "connects, like [ab, cb] (units across a-b and c-b, sharing b)");
        return;
    }
    for (n = y->first; n >= 0 && k < 2; n = kl_ynode_at(L->r, n)->next, k++)
        if ((p[k] = unit_name(L, n, &q[k])) < 0)
            return;
    if (q[0] != q[1] || p[0] == p[1]) {
        kl_ld_error(L, node, "the two units of an open delta share one phase, written second in "
                    "each name, and regulate the other two: like [ab, cb] (sharing b), [ba, ca] "
                    "or [ac, bc]");
        return;
    }
    g->shared = 1 << q[0];
    g->phases = (1 << p[0]) | (1 << p[1]);
}

/* The phases (or open-delta units) of a regulator; refuses what does not fit
 * its connection. */
static void reg_phases(kl_loader *L, kl_regulator *g, const kl_fields *fl, int map)
{
    int ph = fl->val[RG_PHASES], un = fl->val[RG_UNITS];
    g->phases = KL_PH_ABC;
    if (g->conn == KL_REG_OPEN_DELTA) {
        if (ph >= 0)
            kl_ld_error(L, ph, "an open-delta bank names its two units by the phases each connects, "
                        "not by 'phases': write 'units: [ab, cb]' (the bus below keeps all three "
                        "phases)");
        if (un >= 0)
            reg_units_read(L, g, un);
        else
            kl_ld_error(L, map, "an open-delta bank needs 'units', the two phase pairs its units "
                        "connect, like [ab, cb]");
        return;
    }
    if (un >= 0)
        kl_ld_error(L, un, "'units' is for open-delta banks; a wye or closed-delta regulator names "
                    "its units by phase with 'phases'");
    if (ph >= 0)
        g->phases = kl_ld_phases(L, ph, "phases");
    if (g->conn == KL_REG_CLOSED_DELTA && ph >= 0 && g->phases != KL_PH_ABC)
        kl_ld_error(L, ph, "a closed-delta bank has three units, one on each phase: write 'abc' or "
                    "leave 'phases' out (two units make an open delta: 'connection: open-delta' "
                    "with 'units: [ab, cb]')");
}

static void reg_taps(kl_loader *L, kl_regulator *g, int node, const reg_units *u)
{
    kl_fields fl;
    if (!u->keys[0]) /* an open delta whose units were refused: said once already */
        return;
    if (kl_ld_fields(L, node, u->keys, &fl, "regulator taps") < 0)
        return;
    for (int k = 0; u->keys[k]; k++) {
        int p = u->slot[k];
        if (fl.val[k] < 0 || kl_ld_int(L, &fl, k, &g->tap[p], 0, 0) < 0)
            continue;
        if (!(g->phases >> p & 1))
            kl_ld_error(L, fl.val[k], "a tap for phase %c, which this regulator has no unit on", 'a' + p);
        else if (g->tap[p] > g->steps || g->tap[p] < -g->steps)
            kl_ld_error(L, fl.val[k], "tap %d is outside -%d..%d (the regulator's steps each way)",
                        g->tap[p], g->steps, g->steps);
    }
}

/* compensator_r: 2 V (every unit) or {a: 2 V, b: 2.5 V, c: 2 V} ({ab: .., cb: ..}
 * for an open delta). */
static void reg_compensator(kl_loader *L, const kl_fields *rf, int k, double v[3],
                            const reg_units *u)
{
    kl_fields fl;
    int n = rf->val[k];
    if (n < 0)
        return;
    if (kl_ynode_at(L->r, n)->kind == KL_YSCALAR) {
        if (kl_ld_real_node(L, n, rf->keys[k], KL_Q_VOLTAGE, &v[0], 0) == 0)
            v[1] = v[2] = v[0];
        return;
    }
    if (!u->keys[0] || kl_ld_fields(L, n, u->keys, &fl, rf->keys[k]) < 0)
        return;
    for (int j = 0; u->keys[j]; j++)
        if (fl.val[j] >= 0)
            kl_ld_real_node(L, fl.val[j], u->keys[j], KL_Q_VOLTAGE, &v[u->slot[j]], 0);
}

/* monitored: phase letters; an open delta's unit names, one or a list. */
static int reg_monitored(kl_loader *L, const kl_regulator *g, int node, const reg_units *u)
{
    const kl_ynode *y = kl_ynode_at(L->r, node);
    int mask = 0;
    if (g->conn != KL_REG_OPEN_DELTA)
        return kl_ld_phases(L, node, "monitored");
    if (!u->keys[0])
        return g->phases;
    for (int n = y->kind == KL_YSEQ ? y->first : node; n >= 0;
         n = y->kind == KL_YSEQ ? kl_ynode_at(L->r, n)->next : -1) {
        const char *t = kl_ynode_text(L->r, n);
        int k = 0;
        while (u->keys[k] && strcmp(u->keys[k], t) != 0)
            k++;
        if (u->keys[k])
            mask |= 1 << u->slot[k];
        else
            kl_ld_error(L, n, "'monitored' names '%s', which is not one of this bank's units (%s, %s)",
                        t, u->keys[0], u->keys[1] ? u->keys[1] : "");
    }
    return mask;
}

static void reg_control(kl_loader *L, kl_regulator *g, const kl_fields *fl, const reg_units *u)
{
    int flags = g->mode == KL_REG_AUTO ? KL_F_REQ | KL_F_POS : KL_F_POS;
    kl_ld_real(L, fl, RG_VL, KL_Q_VOLTAGE, &g->voltage_level_v, 120, KL_F_POS);
    kl_ld_real(L, fl, RG_BW, KL_Q_VOLTAGE, &g->bandwidth_v, 2, KL_F_POS);
    kl_ld_real(L, fl, RG_PT, KL_Q_NUMBER, &g->pt_ratio, 0, flags);
    kl_ld_real(L, fl, RG_CT, KL_Q_CURRENT, &g->ct_primary_a, 0, flags);
    reg_compensator(L, fl, RG_R, g->ldc_r_v, u);
    reg_compensator(L, fl, RG_X, g->ldc_x_v, u);
    g->monitored = fl->val[RG_MON] >= 0 ? reg_monitored(L, g, fl->val[RG_MON], u) : g->phases;
    if (g->monitored & ~g->phases)
        kl_ld_error(L, fl->val[RG_MON], "'monitored' names a phase without a regulator unit");
    /* the CT primary is chosen at the unit's rated load current (common practice) */
    kl_ld_real(L, fl, RG_IR, KL_Q_CURRENT, &g->rated_current_a, g->ct_primary_a, KL_F_POS);
    if (kl_ld_real(L, fl, RG_IE, KL_Q_CURRENT, &g->emergency_current_a, 0, KL_F_POS) == 0 &&
        fl->val[RG_IE] >= 0 && !(g->emergency_current_a >= g->rated_current_a))
        kl_ld_error(L, fl->val[RG_IE], "'emergency_current' (%g A) is below the rated current (%g A): an "
                    "emergency rating is the higher, short-time one", g->emergency_current_a,
                    g->rated_current_a);
}

/* The regulating range, steps x step each way: the ratio 1 + step x tap
 * must stay well away from zero and from a reversal.  Step-voltage
 * regulators are built for +-10 % in 16 steps of 5/8 % each way (ANSI/IEEE
 * C57.15, from memory); beyond +-50 % (a ratio of 0.5 to 1.5) the numbers are a slip. */
static void reg_range(kl_loader *L, const kl_regulator *g, const kl_fields *fl, int map)
{
    double span = g->steps * g->step_pu;
    int at = fl->val[RG_STEP] >= 0 ? fl->val[RG_STEP] : fl->val[RG_STEPS] >= 0 ? fl->val[RG_STEPS] : map;
    if (span > 0.5)
        kl_ld_error(L, at, "%d steps of %.4g %% each way give a ratio from %.4g to %.4g: a "
                    "regulator's range (steps x step) is at most 50 %% each way, usually 10 %% "
                    "(16 steps of 0.625 %%); check 'steps' and 'step'", g->steps, 100 * g->step_pu,
                    1 - span, 1 + span);
    else if (span > 0.15)
        kl_ld_warning(L, at, "%d steps of %.4g %% each way give a range of %.4g %%, usually 10 %% "
                      "(16 steps of 0.625 %%): kilter uses it as given", g->steps, 100 * g->step_pu,
                      100 * span);
}

void kl_ld_regulator(kl_loader *L, int map)
{
    kl_feeder *f = L->f;
    kl_fields fl;
    kl_regulator *g;
    reg_units u;
    int i = append(L, (void **)&f->regulators, &f->nregulators, &L->cap_regulators, sizeof *g);
    if (i < 0)
        return;
    g = &f->regulators[i];
    set_loc(L, &g->loc, map);
    kl_ld_label(L, "regulator", NULL, i);
    if (kl_ld_fields(L, map, regulator_keys, &fl, "a regulator") < 0)
        return;
    g->name = named(L, &fl, RG_NAME, "regulator", i, &L->h_reg, 1);
    g->conn = (kl_reg_connection)(kl_ld_enum(L, &fl, RG_CONN, reg_conns, 0) + 1);
    g->mode = (kl_reg_mode)(kl_ld_enum(L, &fl, RG_CONTROL, reg_controls, 1) + 1);
    reg_phases(L, g, &fl, map);
    reg_unit_keys(g, &u);
    int before = L->nerr;
    kl_ld_int(L, &fl, RG_STEPS, &g->steps, 16, KL_F_POS);
    kl_ld_real(L, &fl, RG_STEP, KL_Q_SHARE, &g->step_pu, 0.00625, KL_F_POS);
    if (L->nerr == before) /* each one read or left at its default */
        reg_range(L, g, &fl, map);
    if (kl_ld_node(L, &fl, RG_TAPS, KL_YMAP, 0) >= 0)
        reg_taps(L, g, fl.val[RG_TAPS], &u);
    reg_control(L, g, &fl, &u);
    add_name(L, &L->h_reg, g->name, i);
}
