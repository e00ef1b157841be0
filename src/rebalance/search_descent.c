/* kilter: descent of a rebalancing plan to a local optimum of the score J
 * (search_engine.c): the first improving single change, or (few items) pair
 * of changes, is taken, until none improves.  The last phase of the
 * heuristic search, after the annealing. */
#include <math.h>
#include <string.h>
#include "kilter/rebalance.h"
#include "kl_rebalance.h"

/* Tries y = x with item i at ri (and item j at rj when j >= 0); keeps it in
 * x when it improves *J.  Returns 1 on improvement. */
static int try_change(kl_search_engine *e, int *x, int *y, double *J, kl_rebalance_summary *sum,
                      int i, int ri, int j, int rj)
{
    int n = e->rp->nitems;
    memcpy(y, x, sizeof(int) * (size_t)n);
    y[i] = ri;
    if (j >= 0)
        y[j] = rj;
    if (!kl_search_engine_admissible(e, y))
        return 0;
    double Jy = kl_search_engine_score_state(e, y, sum);
    if (!(Jy < *J - 1e-12 * fabs(*J)))
        return 0;
    memcpy(x, y, sizeof(int) * (size_t)n);
    *J = Jy;
    e->plan_moves = kl_search_engine_count_moves(e, x, NULL);
    return 1;
}

/* Descent to a local optimum over single changes and, when there are few
 * items, pairs of changes (which include swapping one move for another). */
#define PAIR_LIMIT 40
kl_status kl_search_descent(kl_search_engine *e, int *x, double *J, kl_rebalance_summary *sum)
{
    int n = e->rp->nitems, improved = 1;
    int *y = kl_malloc(sizeof(int) * ((size_t)n + 1));
    if (!y)
        return KL_ENOMEM;
    while (improved && !kl_search_engine_time_up(e)) {
        improved = 0;
        /* the time is checked before every item: one pass over many items
         * is one load flow each */
        for (int p = 0; p < e->nmov && !improved && !kl_search_engine_time_up(e); p++) {
            int i = e->movable[p];
            for (int ri = 0; ri < 3 && !improved; ri++) {
                if (ri == x[i] || !(e->rp->items[i].allowed & (1 << ri)))
                    continue;
                improved = try_change(e, x, y, J, sum, i, ri, -1, 0);
                for (int q = p + 1; q < e->nmov && !improved && e->nmov <= PAIR_LIMIT; q++) {
                    int j = e->movable[q];
                    for (int rj = 0; rj < 3 && !improved; rj++)
                        if (rj != x[j] && (e->rp->items[j].allowed & (1 << rj)))
                            improved = try_change(e, x, y, J, sum, i, ri, j, rj);
                }
            }
        }
    }
    kl_search_engine_set_state(e, x);
    kl_free(y);
    return KL_OK;
}
