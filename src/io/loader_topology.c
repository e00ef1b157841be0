/* kilter: the feeder's topology as the loader finishes it.  The feeder tree
 * (src/model/feeder_tree.c) is built once here and kept in the feeder; it
 * checks loops, device direction and islands.  Down the tree the loader
 * records each section's direction (kl_section.reversed), carries phases and
 * nominal voltage from the source (through transformers), reports sections
 * whose phases the upstream bus lacks, and checks that loads and capacitors
 * use phases their bus has. */
#include <stdio.h>
#include <string.h>
#include "kl_io.h"

/* Phases and nominal voltage down the tree, by position (a parent's are
 * read front to back: up[] never decreases), scattered to the bus records
 * front to back at the end.  The section's record is read and written once
 * (its direction, and phases when it gives none). */
typedef struct {
    unsigned char *ph; /* [nreached] by position: as kl_bus.phases */
    double *kv;        /* [nreached] by position: as kl_bus.base_kv_ll */
} fill;

static void report_upstream_phases(kl_loader *L, int e, int u, int up_phases)
{
    kl_feeder *f = L->f;
    const kl_section *s = &f->sections[e];
    char b1[4], b2[4];
    kl_ld_label(L, "section", s->name, e);
    kl_ld_error_at(L, s->loc.line, s->loc.col, "phases '%s' are not all present at its upstream bus '%s', "
                   "which has '%s': use phases the upstream bus has, or correct the section above it",
                   kl_phases_str(s->phases, b1), f->buses[u].name, kl_phases_str(up_phases, b2));
}

/* Position i of the tree: section e feeds bus v from bus u (position j). */
static void fill_step(kl_loader *L, const kl_feeder_tree *t, fill *w, int i)
{
    kl_feeder *f = L->f;
    int j = t->up[i], v = t->order[i], u = t->order[j], e = t->sec[i];
    kl_section *s = &f->sections[e];
    int up = w->ph[j], sph = s->phases, phases;
    double kv = w->kv[j];
    s->reversed = (uint8_t)(s->from == v);
    if (!sph) {
        sph = up;
        s->phases = (uint8_t)up;
    }
    /* an upstream bus left with no phases was reported above: say it once */
    if (up && (sph & ~up))
        report_upstream_phases(L, e, u, up);
    phases = sph & up;
    if (s->kind == KL_SEC_TRANSFORMER && s->device >= 0) {
        const kl_transformer *x = &f->transformers[s->device];
        /* center-tap legs, open-delta and line-to-line units change the phases below */
        phases = kl_phases_transformer_load(x, phases);
        if (x->kv_high > 0 && x->kv_low > 0)
            kv = w->kv[j] * x->kv_low / x->kv_high;
    }
    w->ph[i] = (unsigned char)phases;
    w->kv[i] = kv;
}

/* Buses the source reaches (energized or beyond an open switch) take their
 * phases and nominal voltage from the source and the sections above them. */
static void fill_tree(kl_loader *L, const kl_feeder_tree *t)
{
    kl_feeder *f = L->f;
    fill w;
    w.ph = kl_malloc((size_t)t->nreached + 1);
    w.kv = kl_malloc(((size_t)t->nreached + 1) * sizeof(double));
    if (!w.ph || !w.kv) {
        L->nomem = 1;
    } else if (t->nreached > 0) {
        w.ph[0] = KL_PH_ABC;
        w.kv[0] = f->source.kv_ll;
        for (int i = 1; i < t->nreached; i++)
            fill_step(L, t, &w, i);
        for (int b = 0; b < f->nbuses; b++) {
            int i = t->pos[b];
            if (i < 0)
                continue;
            f->buses[b].phases = w.ph[i];
            f->buses[b].base_kv_ll = w.kv[i];
        }
    }
    kl_free(w.ph);
    kl_free(w.kv);
}

/* Wye: a, b, c must be at the bus; delta pair ab needs a and b, and so on. */
static int needed_phases(kl_connection conn, int mask)
{
    static const int pair[3] = {KL_PH_A | KL_PH_B, KL_PH_B | KL_PH_C, KL_PH_C | KL_PH_A};
    int need = 0, k;
    if (conn != KL_CONN_DELTA)
        return mask;
    for (k = 0; k < 3; k++)
        if (mask >> k & 1)
            need |= pair[k];
    return need;
}

static void check_element(kl_loader *L, const char *kind, const char *name, int i, const kl_loc *loc,
                          kl_connection conn, int mask, int has, const char *where, const char *wname)
{
    int need = needed_phases(conn, mask);
    char b1[4], b2[4];
    if (!has || !(need & ~has))
        return;
    kl_ld_label(L, kind, name, i);
    kl_ld_error_at(L, loc->line, loc->col, "connected to phase%s '%s' but %s '%s' has only '%s': "
                   "move it to phases the %s has", need & (need - 1) ? "s" : "", kl_phases_str(need, b1),
                   where, wname, kl_phases_str(has, b2), where);
}

static void check_elements(kl_loader *L)
{
    kl_feeder *f = L->f;
    int i;
    for (i = 0; i < f->nloads; i++) {
        const kl_load *d = &f->loads[i];
        if (d->bus >= 0)
            check_element(L, "load", d->name, i, &d->loc, d->conn, d->phases, f->buses[d->bus].phases, "bus",
                          f->buses[d->bus].name);
        else if (d->section >= 0)
            check_element(L, "load", d->name, i, &d->loc, d->conn, d->phases, f->sections[d->section].phases,
                          "section", f->sections[d->section].name);
    }
    for (i = 0; i < f->ncapacitors; i++) {
        const kl_capacitor *c = &f->capacitors[i];
        if (c->bus >= 0)
            check_element(L, "capacitor", c->name, i, &c->loc, c->conn, c->phases, f->buses[c->bus].phases,
                          "bus", f->buses[c->bus].name);
    }
}

/* A capacitor rated at another voltage than its bus's nominal gives
 * Q (V_nominal / V_rated)^2 there (constant impedance): the model keeps var
 * at nominal voltage. */
static void scale_capacitors(kl_loader *L)
{
    kl_feeder *f = L->f;
    for (int i = 0; i < f->ncapacitors; i++) {
        kl_capacitor *c = &f->capacitors[i];
        if (!(c->rated_v > 0) || c->bus < 0 || f->tree->pos[c->bus] < 0)
            continue;
        double k = kl_feeder_ratings_unit_kv(f, f->tree, c->bus, c->conn == KL_CONN_DELTA) * 1e3 / c->rated_v;
        for (int p = 0; p < 3; p++)
            c->q_var[p] *= k * k;
    }
}

void kl_ld_topology(kl_loader *L)
{
    kl_feeder *f = L->f;
    if (f->source.bus < 0)
        return;
    kl_status st = kl_feeder_tree_build(f, &f->tree, L->err);
    if (st == KL_ENOMEM) {
        L->nomem = 1;
        return;
    }
    L->nerr += f->tree->nerrors;
    if (f->tree->nomem)
        L->nomem = 1;
    fill_tree(L, f->tree);
    if (f->radial && kl_feeder_tree_check_islands(f->tree, f, L->err) != KL_OK)
        L->nerr++;
    check_elements(L);
    if (L->nerr == 0) { /* the check reads resolved references and a whole tree */
        scale_capacitors(L);
        L->nerr += kl_feeder_ratings_check(f, KL_RATING_ERROR_TOL, L->err);
    }
}
