/* kilter: loads and capacitors (loader).
 *
 * Powers are per phase at nominal voltage: wye loads by phase a, b, c; delta
 * loads by phase pair ab, bc, ca (stored at index 0, 1, 2). */
#include <stdio.h>
#include <string.h>
#include "kilter/units.h"
#include "kl_io.h"

static const char *const wye_keys[] = {"a", "b", "c", NULL};
static const char *const delta_keys[] = {"ab", "bc", "ca", NULL};
static const char *const connections[] = {"wye", "delta", NULL};

static int append(kl_loader *L, void **arr, int *n, int *cap, size_t size)
{
    if (kl_ld_grow(L, arr, cap, *n, size) < 0)
        return -1;
    return (*n)++;
}

/* Default names "load-N", "capacitor-N" keep every element addressable. */
static const char *elem_name(kl_loader *L, const kl_fields *fl, const char *kind, int i, kl_names *t)
{
    char buf[64];
    const char *n = NULL;
    kl_name_hint hint;
    kl_ld_label(L, kind, NULL, i);
    if (fl->val[0] >= 0) {
        n = kl_ld_str(L, fl, 0, 0);
        if (!n)
            return NULL;
    } else {
        snprintf(buf, sizeof buf, "%s-%d", kind, i + 1);
        n = buf;
    }
    kl_ld_label(L, kind, n, i);
    if (kl_names_find_hint(t, n, strlen(n), &hint) >= 0) {
        kl_ld_error(L, fl->val[0] >= 0 ? fl->val[0] : fl->map,
                    "duplicate name: another %s is already called '%s': give each a different name", kind, n);
        return NULL;
    }
    n = kl_ld_strdup(L, n);
    if (n && kl_names_add_hint(t, n, i, &hint) != KL_OK)
        L->nomem = 1;
    return n;
}

/* {a: 48 + j15.8 kVA, ...} or {ab: ..., ...}: per-phase values, mask returned. */
static int per_phase(kl_loader *L, int node, const char *key, int delta, int cplx, kl_complex v[3])
{
    kl_fields fl;
    int p, mask = 0, before = L->nerr;
    if (kl_ynode_at(L->r, node)->kind != KL_YMAP) {
        kl_ld_error(L, node, "'%s' expects one value per %s, like %s", key, delta ? "phase pair" : "phase",
                    delta ? "{ab: 100 kVA, bc: 100 kVA}" : "{a: 100 kVA, b: 100 kVA}");
        return 0;
    }
    if (kl_ld_fields(L, node, delta ? delta_keys : wye_keys, &fl,
                     delta ? "a delta connection's phase pairs" : "a wye connection's phases") < 0)
        return 0;
    for (p = 0; p < 3; p++) {
        int ok;
        if (fl.val[p] < 0)
            continue;
        if (cplx) {
            ok = kl_ld_complex_node(L, fl.val[p], fl.keys[p], KL_Q_POWER, &v[p]) == 0;
        } else {
            double q;
            ok = kl_ld_real_node(L, fl.val[p], fl.keys[p], KL_Q_POWER, &q, KL_F_NONNEG) == 0;
            v[p] = q;
        }
        if (ok)
            mask |= 1 << p;
    }
    if (!mask && L->nerr == before)
        kl_ld_error(L, node, "'%s' gives no phase", key);
    return mask;
}

enum { LO_NAME, LO_BUS, LO_SEC, LO_CONN, LO_MODEL, LO_POWER, LO_ZIP, LO_MOTOR, LO_H3, LO_PIN, LO_FORBID,
       LO_COST, LO_DESC, LO_KVA, LO_FIXED };
static const char *const load_keys[] = {"name", "bus", "section", "connection", "model", "power", "zip",
                                        "motor", "third_harmonic", "pinned", "forbidden_phases", "move_cost",
                                        "description", "connected_kva", "fixed_power", NULL};
static const char *const load_models[] = {"constant-power", "constant-current", "constant-impedance", "zip",
                                          NULL};
static const char *const zip_keys[] = {"impedance", "current", "power", NULL};

static void load_zip(kl_loader *L, kl_load *d, const kl_fields *lf)
{
    kl_fields fl;
    int k, n = kl_ld_node(L, lf, LO_ZIP, KL_YMAP, d->model == KL_LOAD_ZIP ? KL_F_REQ : 0);
    double sum = 0;
    if (d->model != KL_LOAD_ZIP) {
        d->zip[0] = d->model == KL_LOAD_Z;
        d->zip[1] = d->model == KL_LOAD_I;
        d->zip[2] = d->model == KL_LOAD_PQ;
        if (n >= 0)
            kl_ld_error(L, n, "'zip' goes with 'model: zip' only: remove it or change the model");
        return;
    }
    if (n < 0 || kl_ld_fields(L, n, zip_keys, &fl, "zip fractions") < 0)
        return;
    for (k = 0; k < 3; k++) {
        kl_ld_real(L, &fl, k, KL_Q_SHARE, &d->zip[k], 0, KL_F_REQ | KL_F_NONNEG);
        sum += d->zip[k];
    }
    if (sum < 0.999 || sum > 1.001)
        kl_ld_error(L, n, "zip fractions add up to %.4g %%, not 100 %%", sum * 100);
}

static void load_place(kl_loader *L, kl_load *d, const kl_fields *fl, int i)
{
    const char *t;
    if ((fl->val[LO_BUS] >= 0) == (fl->val[LO_SEC] >= 0)) {
        kl_ld_error(L, fl->map, "give either 'bus' (a spot load) or 'section' (a load spread along a section)");
        return;
    }
    if ((t = kl_ld_str(L, fl, LO_BUS, 0)))
        kl_ld_ref(L, KL_REF_LOAD_BUS, i, t, fl->val[LO_BUS], &d->bus, &L->h_bus);
    else if ((t = kl_ld_str(L, fl, LO_SEC, 0)))
        kl_ld_ref(L, KL_REF_LOAD_SEC, i, t, fl->val[LO_SEC], &d->section, &L->h_sec);
}

static void load_rebalance(kl_loader *L, kl_load *d, const kl_fields *fl)
{
    d->pinned = (uint8_t)kl_ld_bool(L, fl, LO_PIN, 0); /* 0 or 1 */
    if (fl->val[LO_FORBID] >= 0)
        d->forbidden = (uint8_t)kl_ld_phases(L, fl->val[LO_FORBID], "forbidden_phases"); /* a mask, 0-7 */
    kl_ld_real(L, fl, LO_COST, KL_Q_NUMBER, &d->move_cost, 1, KL_F_NONNEG);
}

/* Load i's nameplate record, the array made on first use and kept as long
 * as the loads' (zeroed: no kVA, not fixed); NULL when out of memory. */
static kl_load_nameplate *nameplate(kl_loader *L, int i)
{
    kl_feeder *f = L->f;
    if (L->cap_nameplate < L->cap_loads) {
        void *p = kl_realloc(f->load_nameplate, (size_t)L->cap_loads * sizeof *f->load_nameplate);
        if (!p) {
            L->nomem = 1;
            return NULL;
        }
        f->load_nameplate = p;
        memset(f->load_nameplate + L->cap_nameplate, 0,
               (size_t)(L->cap_loads - L->cap_nameplate) * sizeof *f->load_nameplate);
        L->cap_nameplate = L->cap_loads;
    }
    return &f->load_nameplate[i];
}

/* connected_kva (per phase or phase pair, like power) and fixed_power.  The
 * load's phases are those of its power, or of its kVA when it has no power;
 * given both, they must name the same entries. */
static void load_nameplate(kl_loader *L, kl_load *d, const kl_fields *fl, int i)
{
    kl_complex kva[3] = {0, 0, 0};
    int mask = 0, fixed = kl_ld_bool(L, fl, LO_FIXED, 0);
    if (fl->val[LO_KVA] < 0 && !fixed) {
        if (L->f->load_nameplate && !nameplate(L, i))
            return; /* keeps the array the loads' length */
        if (fl->val[LO_POWER] < 0)
            kl_ld_error(L, fl->map, "a load needs 'power' (kW + j kvar per phase), or 'connected_kva' "
                                    "(the nameplate kVA serving it) for allocation to set its power");
        return;
    }
    if (fl->val[LO_KVA] >= 0 && kl_ld_node(L, fl, LO_KVA, 0, 0) >= 0)
        mask = per_phase(L, fl->val[LO_KVA], "connected_kva", d->conn == KL_CONN_DELTA, 0, kva);
    kl_load_nameplate *np = nameplate(L, i);
    if (!np)
        return;
    for (int p = 0; p < 3; p++)
        np->kva[p] = creal(kva[p]);
    np->has_kva = fl->val[LO_KVA] >= 0;
    np->fixed_power = (uint8_t)fixed; /* 0 or 1 */
    if (fl->val[LO_POWER] < 0) {
        d->phases = (uint8_t)mask; /* 0-7; its power is 0 until allocated */
        if (fixed)
            kl_ld_error(L, fl->val[LO_FIXED], "'fixed_power' holds the load's power as given: give its "
                                               "'power' too");
    } else if (mask && mask != d->phases) {
        char a[4], b[4];
        kl_ld_error(L, fl->val[LO_KVA], "'connected_kva' names the %s %s, 'power' the %s %s: give both "
                    "for the same ones", d->conn == KL_CONN_DELTA ? "pairs" : "phases",
                    kl_phases_str(mask, a), d->conn == KL_CONN_DELTA ? "pairs" : "phases",
                    kl_phases_str(d->phases, b));
    }
}

void kl_ld_load(kl_loader *L, int map)
{
    kl_feeder *f = L->f;
    kl_fields fl;
    kl_load *d;
    const char *t;
    int i = append(L, (void **)&f->loads, &f->nloads, &L->cap_loads, sizeof *d);
    if (i < 0)
        return;
    d = &f->loads[i];
    d->loc.line = kl_ynode_at(L->r, map)->line;
    d->loc.col = kl_ynode_at(L->r, map)->col;
    d->bus = d->section = -1;
    kl_ld_label(L, "load", NULL, i);
    if (kl_ld_fields(L, map, load_keys, &fl, "a load") < 0)
        return;
    d->name = elem_name(L, &fl, "load", i, &L->h_load);
    load_place(L, d, &fl, i);
    d->conn = (kl_connection)(kl_ld_enum(L, &fl, LO_CONN, connections, 0) + 1);
    d->model = (kl_load_model)(kl_ld_enum(L, &fl, LO_MODEL, load_models, 0) + 1);
    if (fl.val[LO_POWER] >= 0 && kl_ld_node(L, &fl, LO_POWER, 0, 0) >= 0)
        d->phases = (uint8_t)per_phase(L, fl.val[LO_POWER], "power", d->conn == KL_CONN_DELTA, 1, d->s_va); /* 0-7 */
    load_nameplate(L, d, &fl, i);
    load_zip(L, d, &fl);
    d->motor = (uint8_t)kl_ld_bool(L, &fl, LO_MOTOR, 0); /* 0 or 1 */
    kl_ld_real(L, &fl, LO_H3, KL_Q_SHARE, &d->third_harmonic, 0, KL_F_NONNEG);
    if (d->third_harmonic > 1)
        kl_ld_error(L, fl.val[LO_H3], "'third_harmonic' is a share of the fundamental current, 0 to 100 %%");
    load_rebalance(L, d, &fl);
    if ((t = kl_ld_str(L, &fl, LO_DESC, KL_F_TEXT)))
        d->description = kl_ld_strdup(L, t);
}

enum { CP_NAME, CP_BUS, CP_CONN, CP_Q, CP_RATED };
static const char *const capacitor_keys[] = {"name", "bus", "connection", "reactive_power", "rated_voltage",
                                             NULL};

void kl_ld_capacitor(kl_loader *L, int map)
{
    kl_feeder *f = L->f;
    kl_fields fl;
    kl_capacitor *c;
    kl_complex q[3] = {0, 0, 0};
    const char *t;
    int i = append(L, (void **)&f->capacitors, &f->ncapacitors, &L->cap_capacitors, sizeof *c), p;
    if (i < 0)
        return;
    c = &f->capacitors[i];
    c->loc.line = kl_ynode_at(L->r, map)->line;
    c->loc.col = kl_ynode_at(L->r, map)->col;
    c->bus = -1;
    kl_ld_label(L, "capacitor", NULL, i);
    if (kl_ld_fields(L, map, capacitor_keys, &fl, "a capacitor") < 0)
        return;
    c->name = elem_name(L, &fl, "capacitor", i, &L->h_cap);
    if ((t = kl_ld_str(L, &fl, CP_BUS, KL_F_REQ)))
        kl_ld_ref(L, KL_REF_CAP_BUS, i, t, fl.val[CP_BUS], &c->bus, &L->h_bus);
    c->conn = (kl_connection)(kl_ld_enum(L, &fl, CP_CONN, connections, 0) + 1);
    if (kl_ld_node(L, &fl, CP_Q, 0, KL_F_REQ) >= 0)
        c->phases = per_phase(L, fl.val[CP_Q], "reactive_power", c->conn == KL_CONN_DELTA, 0, q);
    for (p = 0; p < 3; p++)
        c->q_var[p] = creal(q[p]);
    /* scaled to the bus's nominal voltage once the topology is known (kl_ld_topology) */
    kl_ld_real(L, &fl, CP_RATED, KL_Q_VOLTAGE, &c->rated_v, 0, KL_F_POS);
}
