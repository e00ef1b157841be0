/* kilter: the network for the load flow, built once from a feeder and its
 * feeder tree (src/model/feeder_tree.c) in phases, each in its own file:
 *   check   (network_check.c)  ids the build relies on
 *   size    (network_size.c)   distributed loads, split sections, device slots,
 *                              the lines' packed Z and Y entries
 *   alloc   (network_alloc.c)  every array at once, prefaulted
 *   emit    (network_emit.c)   the tree's sections as branches in sweep order
 *                              (lines: network_line.c, devices: network_branch.c),
 *                              then the loop-closing links
 *   loads   (network_loads.c)  loads at their buses and lumped nodes
 * The sweep order is the tree's: every branch after the branch feeding its
 * source-side bus. */
#include <limits.h>
#include "kilter/network.h"
#include "kl_flow.h"

/* The tree's checks and the build's own before anything is sized. */
static kl_status analyse(const kl_feeder *f, const kl_feeder_tree *t, kl_status tree_st,
                         unsigned char *has_dist, int *ndist, kl_errors *err)
{
    kl_status st = tree_st;
    kl_status st2 = kl_feeder_tree_check_islands(t, f, err);
    kl_status st3 = kl_network_size_distributed(f, has_dist, ndist, err);
    return st ? st : st2 ? st2 : st3;
}

/* Sizes, arrays and the lines' packed storage. */
static kl_status size_alloc(kl_network *n, const kl_feeder *f, const kl_feeder_tree *t,
                            const unsigned char *has_dist, int ndist)
{
    int nsplit = 0, ndev_max = 0;
    size_t zy_cap = kl_network_size_sections(f, has_dist, &nsplit, &ndev_max);
    n->nfeeder_buses = f->nbuses;
    n->nbuses = f->nbuses + nsplit;
    n->nbranches = t->nlive - 1 + nsplit;
    n->nlinks = t->nlinks;
    n->source = f->source.bus;
    kl_status st = kl_network_alloc(n, f, n->nbuses, n->nbranches + n->nlinks, f->nloads + ndist,
                                    ndev_max);
    if (st)
        return st;
    n->zy_cap = zy_cap;
    if (n->zy_cap > (size_t)INT_MAX || !(n->zy = kl_malloc((n->zy_cap + 1) * sizeof(kl_complex))))
        return KL_ENOMEM; /* offsets are ints: over 100 million lines */
    kl_prefault(n->zy, n->zy_cap * sizeof(kl_complex));
    for (int r = 0; r < f->nregulators; r++) {
        n->reg_branch[r] = -1;
        for (int p = 0; p < 3; p++)
            n->tap[3 * r + p] = f->regulators[r].tap[p];
    }
    return KL_OK;
}

/* Builds branches, buses, loads and workspace.  Temporary arrays are freed
 * at the one exit. */
kl_status kl_network_build(const kl_feeder *f, kl_network **out, kl_errors *err)
{
    if (!f || !out || !err)
        return KL_EARG;
    *out = NULL;
    kl_status st = kl_network_check_ids(f, err);
    if (st)
        return st;
    const kl_feeder_tree *t = NULL;
    kl_feeder_tree *own = NULL;
    size_t ns = (size_t)f->nsections + 1;
    unsigned char *has_dist = kl_calloc(ns, 1);
    int *mid_of = kl_calloc(ns, sizeof(int)), ndist = 0;
    kl_network *n = kl_calloc(1, sizeof *n);
    /* the feeder's tree; one of its own for a feeder assembled in code */
    kl_status tree_st = KL_ENOMEM;
    if (!has_dist || !mid_of || !n ||
        (tree_st = kl_feeder_tree_of(f, &t, &own, err)) == KL_ENOMEM) {
        st = KL_ENOMEM;
        goto done;
    }
    n->feeder = f;
    if ((st = analyse(f, t, tree_st, has_dist, &ndist, err)) ||
        (st = size_alloc(n, f, t, has_dist, ndist)))
        goto done;
    st = kl_network_emit_tree(n, t, has_dist, mid_of, err);
    if (!st)
        st = kl_network_emit_links(n, t, has_dist, err);
    if (!st)
        st = kl_network_loads_place(n, mid_of, t, err);
    if (!st)
        st = kl_network_loads_check_capacitors(n, t, err);
    if (!st)
        st = kl_load_parts_build(n);
done:
    kl_feeder_tree_free(own);
    kl_free(has_dist);
    kl_free(mid_of);
    if (st) {
        kl_network_free(n);
        return st;
    }
    *out = n;
    return KL_OK;
}
