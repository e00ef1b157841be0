/* kilter: the feeder's topology, walked breadth-first from the source (loader).
 *
 * Sections are undirected edges in a compressed adjacency list.  The walk
 * orients every line (recording sections written load side first), checks that
 * transformers and regulators are written source side first, carries phases
 * and nominal voltage down from the source, and reports closed loops and
 * buses the source cannot reach when the feeder is declared radial.  Buses
 * beyond an open switch are walked too, marked de-energized. */
#include <stdio.h>
#include <string.h>
#include "kl_internal.h"

typedef struct {
    int *start;           /* [nbuses + 1]: adjacency of bus b is adj[start[b] .. start[b+1]) */
    int *adj;             /* [2 * nsections]: section ids */
    int *queue;           /* [nbuses] */
    unsigned char *seen;  /* [nbuses] */
    unsigned char *loop;  /* [nsections]: loop already reported */
    int head, tail;
} walk;

static void walk_free(walk *w)
{
    kl_free(w->start);
    kl_free(w->adj);
    kl_free(w->queue);
    kl_free(w->seen);
    kl_free(w->loop);
}

static int walk_build(kl_loader *L, walk *w)
{
    kl_feeder *f = L->f;
    int i, nb = f->nbuses;
    memset(w, 0, sizeof *w);
    w->start = kl_calloc((size_t)nb + 1, sizeof(int));
    w->adj = kl_malloc(2 * (size_t)f->nsections * sizeof(int));
    w->queue = kl_malloc((size_t)nb * sizeof(int));
    w->seen = kl_calloc((size_t)nb, 1);
    w->loop = kl_calloc((size_t)f->nsections, 1);
    if (!w->start || !w->adj || !w->queue || !w->seen || !w->loop) {
        L->nomem = 1;
        return -1;
    }
    for (i = 0; i < f->nsections; i++)
        if (f->sections[i].from >= 0 && f->sections[i].to >= 0 && f->sections[i].from != f->sections[i].to) {
            w->start[f->sections[i].from + 1]++;
            w->start[f->sections[i].to + 1]++;
        }
    for (i = 0; i < nb; i++)
        w->start[i + 1] += w->start[i];
    for (i = 0; i < f->nsections; i++) {
        const kl_section *s = &f->sections[i];
        if (s->from < 0 || s->to < 0 || s->from == s->to)
            continue;
        w->adj[w->start[s->from]++] = i;
        w->adj[w->start[s->to]++] = i;
    }
    for (i = nb; i > 0; i--) /* the fill pass moved each start to the next bus's */
        w->start[i] = w->start[i - 1];
    w->start[0] = 0;
    return 0;
}

static void report_loop(kl_loader *L, walk *w, int e, int v)
{
    kl_feeder *f = L->f;
    const kl_section *s = &f->sections[e];
    int p = f->buses[v].parent;
    if (!f->radial || w->loop[e])
        return;
    w->loop[e] = 1;
    kl_ld_label(L, "section", s->name, e);
    kl_ld_error_at(L, s->loc.line, s->loc.col, "closes a loop: bus '%s' is already fed through section '%s'; "
                   "a radial feeder has one path from the source to each bus (make one section an open "
                   "switch, remove it, or set 'radial: false')",
                   f->buses[v].name, p >= 0 ? f->sections[p].name : "(the source)");
}

/* The section e feeds bus v from bus u: orientation, phases, nominal kV. */
static void feed(kl_loader *L, int e, int u, int v, int energized)
{
    kl_feeder *f = L->f;
    kl_section *s = &f->sections[e];
    kl_bus *up = &f->buses[u], *b = &f->buses[v];
    char b1[4], b2[4];
    b->parent = e;
    b->energized = energized;
    s->reversed = s->from == v;
    kl_ld_label(L, "section", s->name, e);
    if (s->reversed && (s->kind == KL_SEC_TRANSFORMER || s->kind == KL_SEC_REGULATOR))
        kl_ld_error_at(L, s->loc.line, s->loc.col, "'from' must be the source side of a %s: the source is "
                       "reached through bus '%s', so swap 'from' and 'to'",
                       s->kind == KL_SEC_TRANSFORMER ? "transformer" : "regulator", up->name);
    if (!s->phases)
        s->phases = up->phases;
    /* an upstream bus left with no phases was reported above: say it once */
    if (up->phases && (s->phases & ~up->phases))
        kl_ld_error_at(L, s->loc.line, s->loc.col, "phases '%s' are not all present at its upstream bus '%s', "
                       "which has '%s': use phases the upstream bus has, or correct the section above it",
                       kl_phases_str(s->phases, b1), up->name, kl_phases_str(up->phases, b2));
    b->phases = s->phases & up->phases;
    b->base_kv_ll = up->base_kv_ll;
    if (s->kind == KL_SEC_TRANSFORMER && s->device >= 0) {
        const kl_transformer *t = &f->transformers[s->device];
        /* center-tap legs, open-delta and line-to-line units change the phases below */
        b->phases = kl_transformer_load_phases(t, b->phases);
        if (t->kv_high > 0 && t->kv_low > 0)
            b->base_kv_ll = up->base_kv_ll * t->kv_low / t->kv_high;
    }
}

/* Breadth-first from the buses already queued, through closed sections. */
static void walk_run(kl_loader *L, walk *w, int energized)
{
    kl_feeder *f = L->f;
    while (w->head < w->tail) {
        int u = w->queue[w->head++], k;
        for (k = w->start[u]; k < w->start[u + 1]; k++) {
            int e = w->adj[k];
            const kl_section *s = &f->sections[e];
            int v = s->from == u ? s->to : s->from;
            if (e == f->buses[u].parent || !s->closed)
                continue;
            if (w->seen[v]) {
                report_loop(L, w, e, v);
                continue;
            }
            w->seen[v] = 1;
            w->queue[w->tail++] = v;
            feed(L, e, u, v, energized);
        }
    }
}

/* Buses beyond open switches: walked as de-energized, so their phases and
 * nominal voltage are known when the switch is closed in a study. */
static void walk_open(kl_loader *L, walk *w)
{
    kl_feeder *f = L->f;
    int e, more = 1;
    while (more) {
        more = 0;
        for (e = 0; e < f->nsections; e++) {
            const kl_section *s = &f->sections[e];
            int u, v;
            if (s->closed || s->from < 0 || s->to < 0 || w->seen[s->from] == w->seen[s->to])
                continue;
            u = w->seen[s->from] ? s->from : s->to;
            v = u == s->from ? s->to : s->from;
            w->seen[v] = 1;
            w->queue[w->tail++] = v;
            feed(L, e, u, v, 0);
            walk_run(L, w, 0);
            more = 1;
        }
    }
}

static void report_islands(kl_loader *L, const walk *w)
{
    kl_feeder *f = L->f;
    char list[400] = "";
    int i, n = 0, first = -1;
    for (i = 0; i < f->nbuses; i++) {
        if (w->seen[i])
            continue;
        if (first < 0)
            first = i;
        if (n < 5)
            snprintf(list + strlen(list), sizeof list - strlen(list), "%s'%.60s'", n ? ", " : "", f->buses[i].name);
        n++;
    }
    if (!n || !f->radial)
        return;
    kl_ld_label(L, "bus", f->buses[first].name, first);
    kl_ld_error_at(L, f->buses[first].loc.line, f->buses[first].loc.col,
                   "%d bus%s cannot be reached from the source bus '%s': %s%s; connect %s with a section "
                   "or remove %s", n, n == 1 ? "" : "es", f->buses[f->source.bus].name, list,
                   n > 5 ? " and more" : "", n == 1 ? "it" : "them", n == 1 ? "it" : "them");
}

/* Wye: a, b, c must be at the bus; delta pair ab needs a and b, and so on. */
static int needed_phases(int conn, int mask)
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

static void check_element(kl_loader *L, const char *kind, const char *name, int i, kl_loc loc,
                          int conn, int mask, int has, const char *where, const char *wname)
{
    int need = needed_phases(conn, mask);
    char b1[4], b2[4];
    if (!has || !(need & ~has))
        return;
    kl_ld_label(L, kind, name, i);
    kl_ld_error_at(L, loc.line, loc.col, "connected to phase%s '%s' but %s '%s' has only '%s': "
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
            check_element(L, "load", d->name, i, d->loc, d->conn, d->phases, f->buses[d->bus].phases, "bus",
                          f->buses[d->bus].name);
        else if (d->section >= 0)
            check_element(L, "load", d->name, i, d->loc, d->conn, d->phases, f->sections[d->section].phases,
                          "section", f->sections[d->section].name);
    }
    for (i = 0; i < f->ncapacitors; i++) {
        const kl_capacitor *c = &f->capacitors[i];
        if (c->bus >= 0)
            check_element(L, "capacitor", c->name, i, c->loc, c->conn, c->phases, f->buses[c->bus].phases,
                          "bus", f->buses[c->bus].name);
    }
}

void kl_ld_topology(kl_loader *L)
{
    kl_feeder *f = L->f;
    walk w;
    int src = f->source.bus;
    if (src < 0 || walk_build(L, &w) < 0) {
        if (src >= 0)
            walk_free(&w);
        return;
    }
    f->buses[src].phases = KL_PH_ABC;
    f->buses[src].base_kv_ll = f->source.kv_ll;
    f->buses[src].energized = 1;
    f->buses[src].parent = -1;
    w.seen[src] = 1;
    w.queue[w.tail++] = src;
    walk_run(L, &w, 1);
    walk_open(L, &w);
    report_islands(L, &w);
    check_elements(L);
    walk_free(&w);
}
