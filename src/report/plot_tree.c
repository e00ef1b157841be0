/* kilter: the radial tree of a feeder as the plots need it.
 *
 * Breadth-first from the source over closed sections (lines may be written
 * in either direction in the file, so the adjacency is undirected): each
 * reached bus gets its parent bus and section, its depth and its distance
 * from the source along the lines (devices count zero length).  Buses an
 * open switch cuts off stay unreached and are not drawn.
 *
 * The automatic layout is a layered tree: x is the depth (sections from the
 * source); leaves take consecutive rows in depth-first order, with the
 * largest subtree first, and a bus sits on the row of its largest child.  The
 * main feeder therefore runs straight along the top row and every lateral
 * hangs below the bus it leaves from, without crossings. */
#include <math.h>
#include "kl_report.h"

static int other_end(const kl_section *s, int bus)
{
    return s->from == bus ? s->to : s->from;
}

static kl_status build_adjacency(const kl_feeder *f, kl_plot_tree *t)
{
    for (int s = 0; s < f->nsections; s++) {
        const kl_section *sec = &f->sections[s];
        if (!sec->closed || sec->from < 0 || sec->to < 0 || sec->from >= f->nbuses
            || sec->to >= f->nbuses)
            continue;
        t->adj_start[sec->from + 1]++;
        t->adj_start[sec->to + 1]++;
    }
    for (int b = 0; b < f->nbuses; b++)
        t->adj_start[b + 1] += t->adj_start[b];
    int *fill = t->depth; /* borrowed as a cursor; reset by the search */
    for (int b = 0; b < f->nbuses; b++)
        fill[b] = t->adj_start[b];
    for (int s = 0; s < f->nsections; s++) {
        const kl_section *sec = &f->sections[s];
        if (!sec->closed || sec->from < 0 || sec->to < 0 || sec->from >= f->nbuses
            || sec->to >= f->nbuses)
            continue;
        t->adj_sec[fill[sec->from]++] = s;
        t->adj_sec[fill[sec->to]++] = s;
    }
    return KL_OK;
}

static void search(const kl_feeder *f, kl_plot_tree *t)
{
    for (int b = 0; b < f->nbuses; b++) {
        t->depth[b] = -1;
        t->parent_bus[b] = t->parent_sec[b] = -1;
        t->dist_m[b] = NAN;
    }
    int head = 0, tail = 0, src = f->source.bus;
    if (src < 0 || src >= f->nbuses)
        return;
    t->order[tail++] = src;
    t->depth[src] = 0;
    t->dist_m[src] = 0;
    while (head < tail) {
        int b = t->order[head++];
        for (int k = t->adj_start[b]; k < t->adj_start[b + 1]; k++) {
            int s = t->adj_sec[k], o = other_end(&f->sections[s], b);
            if (t->depth[o] >= 0)
                continue; /* the parent, or a loop in a non-radial file */
            t->depth[o] = t->depth[b] + 1;
            t->parent_bus[o] = b;
            t->parent_sec[o] = s;
            double len = f->sections[s].kind == KL_SEC_LINE ? f->sections[s].length_m : 0;
            t->dist_m[o] = t->dist_m[b] + (isfinite(len) && len > 0 ? len : 0);
            t->order[tail++] = o;
        }
    }
    t->nreached = tail;
}

kl_status kl_plot_tree_build(const kl_feeder *f, kl_plot_tree **out, kl_errors *err)
{
    *out = NULL;
    kl_plot_tree *t = kl_calloc(1, sizeof *t);
    if (!t)
        goto nomem;
    int nb = f->nbuses, ns = f->nsections;
    t->nbuses = nb;
    t->order = kl_malloc(sizeof(int) * (size_t)nb);
    t->parent_bus = kl_malloc(sizeof(int) * (size_t)nb);
    t->parent_sec = kl_malloc(sizeof(int) * (size_t)nb);
    t->depth = kl_malloc(sizeof(int) * (size_t)nb);
    t->dist_m = kl_malloc(sizeof(double) * (size_t)nb);
    t->adj_start = kl_calloc((size_t)nb + 1, sizeof(int));
    t->adj_sec = kl_malloc(sizeof(int) * (size_t)(2 * ns));
    if (!t->order || !t->parent_bus || !t->parent_sec || !t->depth || !t->dist_m
        || !t->adj_start || !t->adj_sec)
        goto nomem;
    build_adjacency(f, t);
    search(f, t);
    *out = t;
    return KL_OK;
nomem:
    kl_plot_tree_free(t);
    kl_errors_add(err, f->path, 0, 0, NULL, "out of memory building the feeder tree "
                  "for the plots (%d buses)", f->nbuses);
    return KL_ENOMEM;
}

void kl_plot_tree_free(kl_plot_tree *t)
{
    if (!t)
        return;
    kl_free(t->order);
    kl_free(t->parent_bus);
    kl_free(t->parent_sec);
    kl_free(t->depth);
    kl_free(t->dist_m);
    kl_free(t->adj_start);
    kl_free(t->adj_sec);
    kl_free(t);
}

/* Children of b in its adjacency slice, largest subtree first (insertion
 * sort: a bus has few children, and stability keeps the file's order). */
static int children(const kl_feeder *f, const kl_plot_tree *t, int b, const int *size, int *kid)
{
    int n = 0;
    for (int k = t->adj_start[b]; k < t->adj_start[b + 1]; k++) {
        int s = t->adj_sec[k], o = other_end(&f->sections[s], b);
        if (t->parent_bus[o] != b || t->parent_sec[o] != s)
            continue;
        int j = n++;
        while (j > 0 && size[kid[j - 1]] < size[o]) {
            kid[j] = kid[j - 1];
            j--;
        }
        kid[j] = o;
    }
    return n;
}

/* out: x[nbuses] = depth, y[nbuses] = row; NAN for unreached buses.
 * Returns the number of rows used. */
kl_status kl_plot_tree_layout(const kl_feeder *f, const kl_plot_tree *t, double *x, double *y,
                              int *nrows, kl_errors *err)
{
    kl_status st = KL_OK;
    int nb = t->nbuses, n = t->nreached, row = 0;
    int *size = kl_calloc((size_t)nb, sizeof(int));
    int *stack = kl_malloc(sizeof(int) * (size_t)(n + 1));
    int *kid = kl_malloc(sizeof(int) * (size_t)(nb + 1));
    if (!size || !stack || !kid) {
        kl_errors_add(err, f->path, 0, 0, NULL, "out of memory laying out the feeder map");
        st = KL_ENOMEM;
        goto done;
    }
    for (int b = 0; b < nb; b++)
        x[b] = y[b] = NAN;
    for (int k = n - 1; k >= 0; k--) { /* reverse breadth-first: children before parents */
        int b = t->order[k];
        size[b] += 1;
        if (t->parent_bus[b] >= 0)
            size[t->parent_bus[b]] += size[b];
    }
    int top = 0;
    if (n > 0)
        stack[top++] = t->order[0];
    while (top > 0) { /* depth-first; every bus is pushed once, so top <= n */
        int b = stack[--top];
        x[b] = t->depth[b];
        int nk = children(f, t, b, size, kid);
        if (nk == 0)
            y[b] = row++;
        for (int j = nk - 1; j >= 0; j--)
            stack[top++] = kid[j];
    }
    for (int k = n - 1; k >= 0; k--) { /* a parent takes the row of its largest child */
        int b = t->order[k];
        int nk = children(f, t, b, size, kid);
        if (nk > 0)
            y[b] = y[kid[0]];
    }
done:
    *nrows = row;
    kl_free(size);
    kl_free(stack);
    kl_free(kid);
    return st;
}
