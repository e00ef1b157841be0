/* kilter: the feeder tree, built once per feeder and read by every stage that
 * walks the feeder from its source (the loader's phase and voltage fill, the
 * network build, the study's upstream sums, the plots).
 *
 * Breadth-first from the source over closed sections, taken undirected (a
 * line may be written either way round): each bus reached takes a position,
 * the section that reached it and the position of the bus on its source
 * side.  Then the buses beyond open switches are walked the same way,
 * de-energized, so that their phases and voltage are known should a study
 * close the switch.  Within a bus, sections are met in file order, so the
 * order is the file's and does not depend on anything else.
 *
 * The topology checks live here, with one wording: a section that closes a
 * loop (radial feeders), a transformer or regulator written load side first,
 * and buses the source cannot reach (kl_feeder_tree_check_islands). */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "kl_model.h"

/* Scratch of one build: the closed sections as an undirected adjacency. */
typedef struct {
    int *start;          /* [nbuses + 1]: entries of bus b are adj[start[b] .. start[b + 1]) */
    int *adj;            /* [2 * closed sections] pairs: 2 * section + (1 when the bus is the
                            section's `to`), the bus at the other end */
    unsigned char *met;  /* [nsections] 1 once a loop-closing section has been met */
    int *later;          /* [2 * nsections] pairs (section, bus walked): devices met from their
                            load side, walked only if nothing else reaches their source side */
    int nlater;
    int head, tail;      /* the queue is t->order itself */
    int live;            /* 1 while walking through closed sections from the source */
    int nlinks_cap;
} walk;

/* `section "name"`, as the loader labels an element. */
static void label(const kl_feeder *f, int s, char *buf, size_t n)
{
    const char *name = f->sections[s].name;
    if (name && name[0])
        snprintf(buf, n, "section \"%.120s\"", name);
    else
        snprintf(buf, n, "section #%d", s + 1);
}

static void report(kl_feeder_tree *t, const kl_feeder *f, kl_errors *err, int s, const char *fmt,
                   const char *a, const char *b)
{
    char elem[160];
    t->nerrors++;
    if (!err)
        return;
    label(f, s, elem, sizeof elem);
    if (kl_errors_add(err, f->path, f->sections[s].loc.line, f->sections[s].loc.col, elem, fmt, a,
                      b) == KL_ENOMEM)
        t->nomem = 1;
}

static const char *bus_name(const kl_feeder *f, int b)
{
    return f->buses[b].name ? f->buses[b].name : "?";
}

static int is_device(const kl_feeder *f, int e)
{
    return f->sections[e].kind == KL_SEC_TRANSFORMER || f->sections[e].kind == KL_SEC_REGULATOR;
}

static const char *sec_name(const kl_feeder *f, int e)
{
    return f->sections[e].name ? f->sections[e].name : "?";
}

/* The loop that section e (between buses u and v, both placed) closes: e and
 * the tree sections from u and from v up to their common bus (positions
 * climb: up[i] < i).  Named for the section an engineer opens to break it: a
 * switch when the loop has one (the tie), else e unless e is a transformer or
 * regulator (whose direction fixes which side feeds it), else the first line
 * of the loop.  *list gets the loop's sections in order, up to 8 names. */
static int loop_closer(const kl_feeder_tree *t, const kl_feeder *f, int e, int u, int v,
                       char *list, size_t nlist)
{
    int up_u[8], up_v[8], nu = 0, nv = 0, count = 1, pick = -1;
    for (int a = t->pos[u], b = t->pos[v]; a != b && a >= 0 && b >= 0; count++) {
        int from_u = a > b, s = t->sec[from_u ? a : b];
        if (from_u && nu < 8)
            up_u[nu++] = s;
        else if (!from_u && nv < 8)
            up_v[nv++] = s;
        if (pick < 0 && f->sections[s].kind == KL_SEC_SWITCH)
            pick = s;
        if (from_u)
            a = t->up[a];
        else
            b = t->up[b];
    }
    if (f->sections[e].kind == KL_SEC_SWITCH || (pick < 0 && !is_device(f, e)))
        pick = e;
    /* in loop order: e, then from u up to the common bus, then down to v */
    int secs[17], n = 0;
    secs[n++] = e;
    for (int k = 0; k < nu; k++)
        secs[n++] = up_u[k];
    for (int k = nv - 1; k >= 0; k--)
        secs[n++] = up_v[k];
    for (int k = 0; pick < 0 && k < n; k++)
        if (!is_device(f, secs[k]))
            pick = secs[k];
    list[0] = '\0';
    for (int k = 0; k < n && k < 10; k++)
        snprintf(list + strlen(list), nlist - strlen(list), "%s'%.40s'", k ? ", " : "",
                 sec_name(f, secs[k]));
    if (count > 10)
        snprintf(list + strlen(list), nlist - strlen(list), " and %d more", count - 10);
    return pick >= 0 ? pick : e;
}

/* A closed section e between bus u (being walked) and bus v, reached already. */
static void loop_met(kl_feeder_tree *t, walk *w, const kl_feeder *f, kl_errors *err, int e, int u,
                     int v)
{
    if (w->met[e])
        return;
    w->met[e] = 1;
    if (f->radial) {
        char list[400], msg[700];
        int c = loop_closer(t, f, e, u, v, list, sizeof list);
        snprintf(msg, sizeof msg, "closes a loop (sections %s; bus '%s' is reached both ways): a "
                 "radial feeder has one path from the source to each bus; make '%s' an open switch "
                 "(the normally-open point), remove it, or set 'radial: false' and use the nodal "
                 "solver (--solver nodal)", list, bus_name(f, v), sec_name(f, c));
        report(t, f, err, c, "%s%s", msg, "");
        return;
    }
    if (!w->live)
        return;
    if (t->nlinks == w->nlinks_cap) {
        int cap = w->nlinks_cap ? 2 * w->nlinks_cap : 16;
        int *p = kl_realloc(t->links, (size_t)cap * sizeof *p);
        if (!p) {
            t->nomem = 1;
            return;
        }
        t->links = p;
        w->nlinks_cap = cap;
    }
    t->links[t->nlinks++] = e;
}

/* Section e feeds bus v from bus u (`rev`: it is written with v as `from`). */
static void feed(kl_feeder_tree *t, walk *w, const kl_feeder *f, kl_errors *err, int e, int u, int v,
                 int rev)
{
    int i = w->tail++;
    t->order[i] = v;
    t->sec[i] = e;
    t->up[i] = t->pos[u];
    t->pos[v] = i;
    if (rev && (f->sections[e].kind == KL_SEC_TRANSFORMER || f->sections[e].kind == KL_SEC_REGULATOR))
        report(t, f, err, e, "'from' must be the source side of a %s: the source is reached through "
               "bus '%s', so swap 'from' and 'to'",
               f->sections[e].kind == KL_SEC_TRANSFORMER ? "transformer" : "regulator", bus_name(f, u));
}

/* Breadth-first from the buses queued, through closed sections.  A
 * transformer or regulator met from its load side waits until nothing else
 * is left: in a loop the walk then reaches it from its source side and the
 * loop is named by its tie, not blamed on the device's direction; walked
 * last, it is written backwards (feed reports it).  A feeder without loops
 * or backward devices is walked in the same order either way. */
static void walk_run(kl_feeder_tree *t, walk *w, const kl_feeder *f, kl_errors *err)
{
    for (;;) {
        while (w->head < w->tail) {
            int i = w->head++, u = t->order[i], pu = t->sec[i];
            for (int k = w->start[u]; k < w->start[u + 1]; k++) {
                int e = w->adj[2 * k] >> 1, v = w->adj[2 * k + 1], rev = w->adj[2 * k] & 1;
                if (e == pu)
                    continue;
                if (t->pos[v] >= 0)
                    loop_met(t, w, f, err, e, u, v);
                else if (rev && is_device(f, e)) {
                    w->later[2 * w->nlater] = e;
                    w->later[2 * w->nlater++ + 1] = u;
                } else
                    feed(t, w, f, err, e, u, v, rev);
            }
        }
        int fed = 0;
        while (w->nlater > 0 && !fed) {
            int e = w->later[2 * --w->nlater], u = w->later[2 * w->nlater + 1];
            int v = f->sections[e].from; /* met from `to`: its source side is `from` */
            if (t->pos[v] < 0) {
                feed(t, w, f, err, e, u, v, 1);
                fed = 1;
            }   /* else reached from its source side meanwhile: that walk met the loop */
        }
        if (!fed)
            return;
    }
}

/* Buses beyond open switches: each open switch with one end reached feeds
 * the other, in file order, until none is left. */
static void walk_open(kl_feeder_tree *t, walk *w, const kl_feeder *f, kl_errors *err)
{
    int more = 1;
    while (more) {
        more = 0;
        for (int e = 0; e < f->nsections; e++) {
            const kl_section *s = &f->sections[e];
            if (s->closed || s->from < 0 || s->to < 0 || s->from >= f->nbuses || s->to >= f->nbuses ||
                (t->pos[s->from] < 0) == (t->pos[s->to] < 0))
                continue;
            int u = t->pos[s->from] >= 0 ? s->from : s->to, v = u == s->from ? s->to : s->from;
            feed(t, w, f, err, e, u, v, s->from == v);
            walk_run(t, w, f, err);
            more = 1;
        }
    }
}

static int adjacent(const kl_feeder *f, const kl_section *s)
{
    return s->closed && s->from >= 0 && s->to >= 0 && s->from < f->nbuses && s->to < f->nbuses &&
           s->from != s->to;
}

static kl_status walk_build(const kl_feeder *f, walk *w)
{
    size_t nb = (size_t)f->nbuses, ns = (size_t)f->nsections;
    w->start = kl_calloc(nb + 1, sizeof(int));
    w->adj = kl_malloc((4 * ns + 1) * sizeof(int));
    w->met = kl_calloc(ns + 1, 1);
    w->later = kl_malloc((2 * ns + 1) * sizeof(int));
    if (!w->start || !w->adj || !w->met || !w->later)
        return KL_ENOMEM;
    for (int e = 0; e < f->nsections; e++) {
        const kl_section *s = &f->sections[e];
        if (adjacent(f, s)) {
            w->start[s->from + 1]++;
            w->start[s->to + 1]++;
        }
    }
    for (size_t b = 0; b < nb; b++)
        w->start[b + 1] += w->start[b];
    for (int e = 0; e < f->nsections; e++) {
        const kl_section *s = &f->sections[e];
        if (!adjacent(f, s))
            continue;
        int *p = &w->adj[2 * w->start[s->from]++];
        p[0] = 2 * e;
        p[1] = s->to;
        p = &w->adj[2 * w->start[s->to]++];
        p[0] = 2 * e + 1;
        p[1] = s->from;
    }
    for (size_t b = nb; b > 0; b--) /* the fill pass moved each start to the next bus's */
        w->start[b] = w->start[b - 1];
    w->start[0] = 0;
    return KL_OK;
}

void kl_feeder_tree_free(kl_feeder_tree *t)
{
    if (!t)
        return;
    kl_free(t->order);
    kl_free(t->sec);
    kl_free(t->up);
    kl_free(t->pos);
    kl_free(t->links);
    kl_free(t);
}

kl_status kl_feeder_tree_build(const kl_feeder *f, kl_feeder_tree **out, kl_errors *err)
{
    size_t nb = (size_t)(f->nbuses > 0 ? f->nbuses : 0) + 1;
    kl_feeder_tree *t = kl_calloc(1, sizeof *t);
    walk w = {0};
    kl_status st = KL_ENOMEM;
    *out = NULL;
    KL_ASSERT(f->nsections < (1 << 30)); /* 2 * section + 1 fits an int (adj) */
    if (!t)
        return KL_ENOMEM;
    t->nbuses = f->nbuses;
    t->order = kl_malloc(nb * sizeof(int));
    t->sec = kl_malloc(nb * sizeof(int));
    t->up = kl_malloc(nb * sizeof(int));
    t->pos = kl_malloc(nb * sizeof(int));
    if (!t->order || !t->sec || !t->up || !t->pos || walk_build(f, &w) != KL_OK)
        goto done;
    for (int b = 0; b < f->nbuses; b++)
        t->pos[b] = -1;
    int src = f->source.bus;
    if (src >= 0 && src < f->nbuses) {
        t->order[0] = src;
        t->sec[0] = t->up[0] = -1;
        t->pos[src] = 0;
        w.tail = 1;
        w.live = 1;
        walk_run(t, &w, f, err);
        t->nlive = w.tail;
        w.live = 0;
        walk_open(t, &w, f, err);
        t->nreached = w.tail;
    }
    st = t->nomem ? KL_ENOMEM : t->nerrors ? KL_ETOPO : KL_OK;
done:
    kl_free(w.start);
    kl_free(w.adj);
    kl_free(w.met);
    kl_free(w.later);
    if (st == KL_ENOMEM) {
        kl_feeder_tree_free(t);
        return st;
    }
    *out = t;
    return st;
}

kl_status kl_feeder_tree_of(const kl_feeder *f, const kl_feeder_tree **t, kl_feeder_tree **own,
                            kl_errors *err)
{
    *own = NULL;
    *t = f->tree;
    if (f->tree)
        return KL_OK;
    kl_status st = kl_feeder_tree_build(f, own, err);
    *t = *own;
    return st;
}

kl_status kl_feeder_tree_check_islands(const kl_feeder_tree *t, const kl_feeder *f, kl_errors *err)
{
    char list[400] = "";
    int n = 0, first = -1;
    if (t->nreached == f->nbuses || f->source.bus < 0 || f->source.bus >= f->nbuses)
        return KL_OK;
    for (int b = 0; b < f->nbuses; b++) {
        if (t->pos[b] >= 0)
            continue;
        if (first < 0)
            first = b;
        if (n < 5)
            snprintf(list + strlen(list), sizeof list - strlen(list), "%s'%.60s'", n ? ", " : "",
                     bus_name(f, b));
        n++;
    }
    const char *name = f->buses[first].name;
    char elem[160];
    if (name && name[0])
        snprintf(elem, sizeof elem, "bus \"%.120s\"", name);
    else
        snprintf(elem, sizeof elem, "bus #%d", first + 1);
    kl_errors_add(err, f->path, f->buses[first].loc.line, f->buses[first].loc.col, elem,
                  "%d bus%s cannot be reached from the source bus '%s': %s%s; connect %s with a section "
                  "or remove %s", n, n == 1 ? "" : "es", bus_name(f, f->source.bus), list,
                  n > 5 ? " and more" : "", n == 1 ? "it" : "them", n == 1 ? "it" : "them");
    return KL_ETOPO;
}

void kl_feeder_tree_distances(const kl_feeder_tree *t, const kl_feeder *f, int *depth, double *dist_m)
{
    for (int b = 0; b < t->nbuses; b++) {
        depth[b] = -1;
        dist_m[b] = NAN;
    }
    if (t->nlive == 0)
        return;
    depth[t->order[0]] = 0;
    dist_m[t->order[0]] = 0;
    for (int i = 1; i < t->nlive; i++) {
        int b = t->order[i], u = t->order[t->up[i]];
        const kl_section *s = &f->sections[t->sec[i]];
        double len = s->kind == KL_SEC_LINE ? s->length_m : 0; /* devices count zero length */
        depth[b] = depth[u] + 1;
        dist_m[b] = dist_m[u] + (isfinite(len) && len > 0 ? len : 0);
    }
}
