/* kilter: the feeder tree as the plots draw it: its energized part (the
 * feeder tree, src/model/feeder_tree.c), each bus with its depth and its
 * distance from the source along the lines (devices count zero length).
 * Buses an open switch cuts off are not drawn.
 *
 * The automatic layout is a layered tree: x is the depth (sections from the
 * source); leaves take consecutive rows in depth-first order, with the
 * largest subtree first, and a bus sits on the row of its largest child.  The
 * main feeder therefore runs straight along the top row and every lateral
 * hangs below the bus it leaves from, without crossings. */
#include <math.h>
#include "kl_report.h"

kl_status kl_plot_tree_build(const kl_feeder *f, kl_plot_tree **out, kl_errors *err)
{
    *out = NULL;
    kl_plot_tree *t = kl_calloc(1, sizeof *t);
    if (!t)
        goto nomem;
    /* topology errors are the loader's and the network's to report */
    if (kl_feeder_tree_of(f, &t->tree, &t->own, NULL) == KL_ENOMEM)
        goto nomem;
    t->nbuses = f->nbuses;
    t->nreached = t->tree->nlive;
    t->order = t->tree->order;
    t->depth = kl_malloc(sizeof(int) * ((size_t)f->nbuses + 1));
    t->dist_m = kl_malloc(sizeof(double) * ((size_t)f->nbuses + 1));
    if (!t->depth || !t->dist_m)
        goto nomem;
    kl_feeder_tree_distances(t->tree, f, t->depth, t->dist_m);
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
    kl_feeder_tree_free(t->own);
    kl_free(t->depth);
    kl_free(t->dist_m);
    kl_free(t);
}

/* Children of the bus at position j (positions first[j] .. first[j + 1] - 1:
 * the tree is breadth-first, so they are consecutive, in the order the
 * search met them), largest subtree first (insertion sort: a bus has few
 * children, and stability keeps the file's order). */
static int children(const kl_plot_tree *t, int j, const int *first, const int *size, int *kid)
{
    int n = 0;
    for (int i = first[j]; i < first[j + 1]; i++) {
        int o = t->order[i];
        int k = n++;
        while (k > 0 && size[kid[k - 1]] < size[o]) {
            kid[k] = kid[k - 1];
            k--;
        }
        kid[k] = o;
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
    const int *up = t->tree->up, *pos = t->tree->pos;
    int *size = kl_calloc((size_t)nb + 1, sizeof(int));
    int *stack = kl_malloc(sizeof(int) * (size_t)(n + 1));
    int *kid = kl_malloc(sizeof(int) * (size_t)(nb + 1));
    int *first = kl_calloc((size_t)n + 2, sizeof(int));
    if (!size || !stack || !kid || !first) {
        kl_errors_add(err, f->path, 0, 0, NULL, "out of memory laying out the feeder map");
        st = KL_ENOMEM;
        goto done;
    }
    for (int b = 0; b < nb; b++)
        x[b] = y[b] = NAN;
    for (int i = 1; i < n; i++) /* children of position j: first[j] .. first[j + 1] - 1 */
        first[up[i] + 1]++;
    first[0] = 1;
    for (int j = 1; j <= n; j++)
        first[j] += first[j - 1];
    for (int k = n - 1; k >= 0; k--) { /* reverse breadth-first: children before parents */
        int b = t->order[k];
        size[b] += 1;
        if (k > 0)
            size[t->order[up[k]]] += size[b];
    }
    int top = 0;
    if (n > 0)
        stack[top++] = t->order[0];
    while (top > 0) { /* depth-first; every bus is pushed once, so top <= n */
        int b = stack[--top];
        x[b] = t->depth[b];
        int nk = children(t, pos[b], first, size, kid);
        if (nk == 0)
            y[b] = row++;
        for (int j = nk - 1; j >= 0; j--)
            stack[top++] = kid[j];
    }
    for (int k = n - 1; k >= 0; k--) { /* a parent takes the row of its largest child */
        int b = t->order[k];
        int nk = children(t, k, first, size, kid);
        if (nk > 0)
            y[b] = y[kid[0]];
    }
done:
    *nrows = row;
    kl_free(size);
    kl_free(stack);
    kl_free(kid);
    kl_free(first);
    return st;
}
