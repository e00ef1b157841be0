/* kilter: exhaustive search of a rebalancing plan: every admissible state of
 * the movable items (each at every allowed rotation, counted as the digits of
 * a mixed-radix number), when their product is small enough to solve all. */
#include <math.h>
#include <string.h>
#include "kilter/rebalance.h"
#include "kl_rebalance.h"

/* Size of the exhaustive space (product of option counts), capped. */
double kl_search_exhaustive_space(const kl_search_engine *e)
{
    double s = 1;
    for (int q = 0; q < e->nmov; q++) {
        int a = e->rp->items[e->movable[q]].allowed;
        s *= (a & 1) + ((a >> 1) & 1) + ((a >> 2) & 1);
        if (s > 1e15)
            break;
    }
    return s;
}

/* Next allowed rotation of item i after r, wrapping to 0: returns 1 on wrap. */
static int digit_next(const kl_search_engine *e, int i, int *r)
{
    int a = e->rp->items[i].allowed;
    for (int t = *r + 1; t < 3; t++)
        if (a & (1 << t)) {
            *r = t;
            return 0;
        }
    *r = 0;
    return 1;
}

/* Every admissible state; x (out) the best. */
void kl_search_exhaustive(kl_search_engine *e, int *x, double *J, kl_rebalance_summary *sum)
{
    int n = e->rp->nitems;
    int *y = x + n; /* caller gives 2n */
    memset(y, 0, sizeof(int) * (size_t)n);
    for (;;) {
        int q = 0;
        while (q < e->nmov && digit_next(e, e->movable[q], &y[e->movable[q]]))
            q++;
        if (q == e->nmov || kl_search_engine_time_up(e))
            break;
        if (!kl_search_engine_admissible(e, y))
            continue;
        double Jy = kl_search_engine_score_state(e, y, sum);
        if (Jy < *J - 1e-12 * fabs(*J)) {
            *J = Jy;
            memcpy(x, y, sizeof(int) * (size_t)n);
        }
    }
    kl_search_engine_set_state(e, x);
}
