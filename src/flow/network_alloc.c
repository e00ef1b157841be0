/* kilter: the network's arrays (network.c), allocated in one place once the
 * sizes are known, and freed in one place. */
#include "kl_flow.h"

kl_status kl_network_alloc(kl_network *n, const kl_feeder *f, int nbus, int nbr, int nld,
                              int ndev_max)
{
    /* bus and branch arrays are written whole by the emission (every bus is
     * placed once, every branch emitted once; a build that stops early
     * frees them unread): no zero fill */
    size_t nb = (size_t)nbus, nr = (size_t)nbr, nd = (size_t)(ndev_max > 0 ? ndev_max : 1);
    n->order = kl_malloc(nb * sizeof(int));
    n->phases = kl_malloc(nb * sizeof(int));
    n->v_base_ln = kl_malloc(nb * sizeof(double));
    n->split_phase = kl_malloc(nb * 1);
    n->parent = kl_malloc(nb * sizeof(int));
    n->br_from = kl_malloc(nr * sizeof(int));
    n->br_to = kl_malloc(nr * sizeof(int));
    n->br_kind = kl_malloc(nr * sizeof(int));
    n->br_phases = kl_malloc(nr * sizeof(int));
    n->br_section = kl_malloc(nr * sizeof(int));
    n->dev = kl_malloc(nr * sizeof(int));
    n->zy_at = kl_malloc(nr * sizeof(int));
    kl_complex **m[] = {&n->a, &n->b, &n->c, &n->d, &n->A, &n->B, &n->yg};
    int ok = n->order && n->phases && n->v_base_ln && n->split_phase && n->parent && n->br_from && n->br_to &&
             n->br_kind && n->br_phases && n->br_section && n->dev && n->zy_at;
    for (size_t k = 0; k < sizeof m / sizeof m[0]; k++) {
        /* a..B by device slot (network.h); the lines' packed Z, Y: zy_alloc */
        *m[k] = kl_calloc(9 * nd, sizeof(kl_complex));
        ok = ok && *m[k];
    }
    for (size_t k = 0; n->dev && n->zy_at && k < nr; k++)
        n->dev[k] = n->zy_at[k] = -1;
    n->sec_first = kl_calloc((size_t)f->nsections, sizeof(int));
    n->sec_last = kl_calloc((size_t)f->nsections, sizeof(int));
    n->loads = kl_calloc((size_t)nld, sizeof(kl_net_load));
    n->ld_slot = kl_calloc(3 * (size_t)f->nloads, sizeof(int));
    n->reg_branch = kl_calloc((size_t)f->nregulators, sizeof(int));
    n->tap = kl_calloc(3 * (size_t)f->nregulators, sizeof(int));
    n->i_from_link = kl_calloc(3 * (nr - (size_t)n->nbranches) + 3, sizeof(kl_complex));
    n->i_to_link = kl_calloc(3 * (nr - (size_t)n->nbranches) + 3, sizeof(kl_complex));
    n->pos = kl_malloc(nb * sizeof(int));
    n->br_from_pos = kl_malloc(nr * sizeof(int));
    n->pos_phases = kl_malloc(nb * 1);
    n->pos_inv_base = kl_malloc(nb * sizeof(double));
    n->vs = kl_calloc(3 * nb, sizeof(kl_complex));
    n->js = kl_calloc(3 * nb, sizeof(kl_complex));
    ok = ok && n->sec_first && n->sec_last && n->loads && n->ld_slot && n->reg_branch &&
         n->tap && n->i_from_link && n->i_to_link && n->pos && n->br_from_pos && n->pos_phases &&
         n->pos_inv_base && n->vs && n->js;
    if (!ok)
        return KL_ENOMEM;
    /* every array here is written by the build or the first solve: map the
     * large ones in one call each instead of a page fault per 4 KiB page
     * (prefault.c; about 16 us a page on the machines measured) */
    struct { void *p; size_t len; } big[] = {
        {n->order, nb * sizeof(int)}, {n->phases, nb * sizeof(int)},
        {n->v_base_ln, nb * sizeof(double)}, {n->split_phase, nb}, {n->parent, nb * sizeof(int)},
        {n->br_from, nr * sizeof(int)}, {n->br_to, nr * sizeof(int)},
        {n->br_kind, nr * sizeof(int)}, {n->br_phases, nr * sizeof(int)},
        {n->br_section, nr * sizeof(int)}, {n->dev, nr * sizeof(int)},
        {n->zy_at, nr * sizeof(int)}, {n->sec_first, (size_t)f->nsections * sizeof(int)},
        {n->sec_last, (size_t)f->nsections * sizeof(int)}, {n->loads, (size_t)nld * sizeof(kl_net_load)},
        {n->ld_slot, 3 * (size_t)f->nloads * sizeof(int)}, {n->pos, nb * sizeof(int)},
        {n->br_from_pos, nr * sizeof(int)}, {n->pos_phases, nb},
        {n->pos_inv_base, nb * sizeof(double)}, {n->vs, 3 * nb * sizeof(kl_complex)},
        {n->js, 3 * nb * sizeof(kl_complex)}};
    for (size_t k = 0; k < sizeof big / sizeof big[0]; k++)
        kl_prefault(big[k].p, big[k].len);
    return KL_OK;
}

void kl_network_free(kl_network *n)
{
    if (!n)
        return;
    if (n->nodal_free)
        n->nodal_free(n->nodal); /* the nodal solver's attachment (nodal.c) */
    void *p[] = {n->order, n->phases, n->v_base_ln, n->split_phase, n->parent, n->br_from, n->br_to,
                 n->br_kind, n->br_phases, n->br_section, n->dev, n->a, n->b, n->c, n->d, n->A,
                 n->B, n->yg, n->zy_at, n->zy, n->sec_first, n->sec_last, n->loads, n->ld_slot,
                 n->parts, n->reg_branch, n->tap, n->i_from_link, n->i_to_link, n->pos,
                 n->br_from_pos, n->pos_phases, n->pos_inv_base, n->vs, n->js};
    for (size_t k = 0; k < sizeof p / sizeof p[0]; k++)
        kl_free(p[k]);
    kl_free(n);
}
