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
#include "kl_io.h"

/* The walk works on compact copies of what it reads and writes, in arrays
 * indexed by bus and section: at a million buses the bus and section records
 * are 56 and 48 MB, and read in breadth-first order each read is a cache
 * miss; the copies are a few bytes per element.  The records are written
 * back front to back at the end (walk_store). */
enum { SI_PHASES = 7, SI_XF = 8, SI_REG = 16 }; /* sinfo bits */

typedef struct {
    int *start;           /* [nbuses + 1]: adjacency of bus b is adj[start[b] .. start[b+1]) */
    int *adj;             /* [2 * closed sections] pairs: 2 * section id + (1 when the bus is
                             the section's `to`), the bus at the other end; closed sections only */
    int *queue;           /* [nbuses] buses, breadth-first */
    int *parent;          /* [nbuses] as kl_bus.parent */
    double *kv;           /* [nbuses] as kl_bus.base_kv_ll */
    unsigned char *ph;    /* [nbuses] as kl_bus.phases */
    unsigned char *seen;  /* [nbuses] 1 reached (energized or not), 2 energized */
    unsigned char *sinfo; /* [nsections] phases | SI_XF | SI_REG */
    unsigned char *loop;  /* [nsections]: loop already reported */
    int head, tail;
} walk;

static void walk_free(walk *w)
{
    kl_free(w->start);
    kl_free(w->adj);
    kl_free(w->queue);
    kl_free(w->parent);
    kl_free(w->kv);
    kl_free(w->ph);
    kl_free(w->seen);
    kl_free(w->sinfo);
    kl_free(w->loop);
}

static int walk_alloc(kl_loader *L, walk *w)
{
    size_t nb = (size_t)L->f->nbuses, ns = (size_t)L->f->nsections;
    memset(w, 0, sizeof *w);
    w->start = kl_calloc(nb + 1, sizeof(int));
    w->adj = kl_malloc(4 * ns * sizeof(int));
    w->queue = kl_malloc(nb * sizeof(int));
    w->parent = kl_malloc(nb * sizeof(int));
    w->kv = kl_malloc(nb * sizeof(double));
    w->ph = kl_malloc(nb);
    w->seen = kl_calloc(nb, 1);
    w->sinfo = kl_malloc(ns);
    w->loop = kl_calloc(ns, 1);
    if (!w->start || !w->adj || !w->queue || !w->parent || !w->kv || !w->ph || !w->seen || !w->sinfo ||
        !w->loop) {
        L->nomem = 1;
        return -1;
    }
    return 0;
}

static int walk_build(kl_loader *L, walk *w)
{
    kl_feeder *f = L->f;
    int i, nb = f->nbuses;
    if (walk_alloc(L, w) < 0)
        return -1;
    for (i = 0; i < nb; i++) {
        w->parent[i] = f->buses[i].parent;
        w->kv[i] = f->buses[i].base_kv_ll;
        w->ph[i] = f->buses[i].phases;
    }
    for (i = 0; i < f->nsections; i++) {
        const kl_section *s = &f->sections[i];
        w->sinfo[i] = (unsigned char)((s->phases & SI_PHASES) | (s->kind == KL_SEC_TRANSFORMER ? SI_XF : 0) |
                                      (s->kind == KL_SEC_REGULATOR ? SI_REG : 0));
        if (s->closed && s->from >= 0 && s->to >= 0 && s->from != s->to) {
            w->start[s->from + 1]++;
            w->start[s->to + 1]++;
        }
    }
    for (i = 0; i < nb; i++)
        w->start[i + 1] += w->start[i];
    for (i = 0; i < f->nsections; i++) {
        const kl_section *s = &f->sections[i];
        int *p;
        if (!s->closed || s->from < 0 || s->to < 0 || s->from == s->to)
            continue;
        p = &w->adj[2 * w->start[s->from]++];
        p[0] = 2 * i;
        p[1] = s->to;
        p = &w->adj[2 * w->start[s->to]++];
        p[0] = 2 * i + 1;
        p[1] = s->from;
    }
    for (i = nb; i > 0; i--) /* the fill pass moved each start to the next bus's */
        w->start[i] = w->start[i - 1];
    w->start[0] = 0;
    return 0;
}

/* The walk's results into the bus records, front to back. */
static void walk_store(kl_loader *L, const walk *w)
{
    kl_feeder *f = L->f;
    int i;
    for (i = 0; i < f->nbuses; i++) {
        kl_bus *b = &f->buses[i];
        if (!w->seen[i])
            continue;
        b->parent = w->parent[i];
        b->base_kv_ll = w->kv[i];
        b->phases = w->ph[i];
        b->energized = w->seen[i] == 2;
    }
}

static void report_loop(kl_loader *L, walk *w, int e, int v)
{
    kl_feeder *f = L->f;
    const kl_section *s = &f->sections[e];
    int p;
    if (!f->radial || w->loop[e])
        return;
    p = w->parent[v];
    w->loop[e] = 1;
    kl_ld_label(L, "section", s->name, e);
    kl_ld_error_at(L, s->loc.line, s->loc.col, "closes a loop: bus '%s' is already fed through section '%s'; "
                   "a radial feeder has one path from the source to each bus (make one section an open "
                   "switch, remove it, or set 'radial: false')",
                   f->buses[v].name, p >= 0 ? f->sections[p].name : "(the source)");
}

/* A transformer's or regulator's section written load side first. */
static void report_direction(kl_loader *L, int e, int u)
{
    kl_feeder *f = L->f;
    const kl_section *s = &f->sections[e];
    kl_ld_label(L, "section", s->name, e);
    kl_ld_error_at(L, s->loc.line, s->loc.col, "'from' must be the source side of a %s: the source is "
                   "reached through bus '%s', so swap 'from' and 'to'",
                   s->kind == KL_SEC_TRANSFORMER ? "transformer" : "regulator", f->buses[u].name);
}

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

/* The section e feeds bus v from bus u (`reversed`: written with v as its
 * `from`): orientation, phases, nominal kV. */
static void feed(kl_loader *L, walk *w, int e, int u, int v, int reversed, int energized)
{
    kl_feeder *f = L->f;
    int info = w->sinfo[e], sph = info & SI_PHASES, up = w->ph[u], phases;
    double kv = w->kv[u];
    w->parent[v] = e;
    w->seen[v] = energized ? 2 : 1;
    f->sections[e].reversed = (uint8_t)reversed;
    if (reversed && (info & (SI_XF | SI_REG)))
        report_direction(L, e, u);
    if (!sph) {
        sph = up;
        f->sections[e].phases = (uint8_t)up;
        w->sinfo[e] = (unsigned char)(info | up);
    }
    /* an upstream bus left with no phases was reported above: say it once */
    if (up && (sph & ~up))
        report_upstream_phases(L, e, u, up);
    phases = sph & up;
    if ((info & SI_XF) && f->sections[e].device >= 0) {
        const kl_transformer *t = &f->transformers[f->sections[e].device];
        /* center-tap legs, open-delta and line-to-line units change the phases below */
        phases = kl_phases_transformer_load(t, phases);
        if (t->kv_high > 0 && t->kv_low > 0)
            kv = w->kv[u] * t->kv_low / t->kv_high;
    }
    w->ph[v] = (unsigned char)phases;
    w->kv[v] = kv;
    w->queue[w->tail++] = v;
}

/* Breadth-first from the buses already queued, through closed sections. */
static void walk_run(kl_loader *L, walk *w, int energized)
{
    while (w->head < w->tail) {
        int u = w->queue[w->head++], k, pu = w->parent[u];
        for (k = w->start[u]; k < w->start[u + 1]; k++) {
            int e = w->adj[2 * k] >> 1, v = w->adj[2 * k + 1];
            if (e == pu)
                continue;
            if (w->seen[v]) {
                report_loop(L, w, e, v);
                continue;
            }
            feed(L, w, e, u, v, w->adj[2 * k] & 1, energized);
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
            if (s->closed || s->from < 0 || s->to < 0 || !w->seen[s->from] == !w->seen[s->to])
                continue;
            u = w->seen[s->from] ? s->from : s->to;
            v = u == s->from ? s->to : s->from;
            feed(L, w, e, u, v, s->from == v, 0);
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

static void check_element(kl_loader *L, const char *kind, const char *name, int i, const kl_loc *loc,
                          int conn, int mask, int has, const char *where, const char *wname)
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
    w.ph[src] = KL_PH_ABC;
    w.kv[src] = f->source.kv_ll;
    w.parent[src] = -1;
    w.seen[src] = 2;
    w.queue[w.tail++] = src;
    walk_run(L, &w, 1);
    walk_open(L, &w);
    walk_store(L, &w);
    report_islands(L, &w);
    check_elements(L);
    walk_free(&w);
}
