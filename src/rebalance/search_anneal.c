/* kilter: simulated annealing of a rebalancing plan (Kirkpatrick, Gelatt and
 * Vecchi, Science 220 (1983); the Metropolis acceptance rule: a neighbour
 * worse by d is taken with probability exp(-d / T)) over change / undo / swap
 * moves, with a seeded GSL generator so that a seed gives one result. */
#include <math.h>
#include <string.h>
#include <gsl/gsl_rng.h>
#include "kilter/rebalance.h"
#include "kl_rebalance.h"

/* One random neighbour of x into y: change one item's rotation (to another
 * allowed one, 0 = undo); when that would exceed K moves, undo another moved
 * item as well (a swap).  Returns 0 when no neighbour exists. */
static int neighbour(kl_search_engine *e, gsl_rng *rng, const int *x, int *y)
{
    int n = e->rp->nitems;
    memcpy(y, x, sizeof(int) * (size_t)n);
    if (e->nmov == 0)
        return 0;
    int i = e->movable[gsl_rng_uniform_int(rng, (unsigned long)e->nmov)];
    int opts[3], no = 0;
    for (int r = 0; r < 3; r++)
        if (r != x[i] && (e->rp->items[i].allowed & (1 << r)))
            opts[no++] = r;
    if (!no)
        return 0;
    y[i] = opts[gsl_rng_uniform_int(rng, (unsigned long)no)];
    if (x[i] == 0 && kl_search_engine_count_moves(e, y, NULL) > e->opt->max_moves) {
        int moved[64], nm = 0;
        for (int q = 0; q < e->nmov && nm < 64; q++)
            if (y[e->movable[q]] && e->movable[q] != i)
                moved[nm++] = e->movable[q];
        if (!nm)
            return 0;
        y[moved[gsl_rng_uniform_int(rng, (unsigned long)nm)]] = 0;
    }
    return kl_search_engine_admissible(e, y);
}

/* Starting temperature: the mean worsening of a few random neighbours of x,
 * so that an average uphill step is first accepted with probability 1/e
 * (common practice). */
static double anneal_t0(kl_search_engine *e, gsl_rng *rng, const int *x, double J, int *y,
                        kl_rebalance_summary *sum)
{
    double up = 0;
    int nup = 0;
    for (int s = 0; s < 20 && !kl_search_engine_time_up(e); s++) {
        if (!neighbour(e, rng, x, y))
            continue;
        double Jy = kl_search_engine_score_state(e, y, sum);
        if (isfinite(Jy) && Jy > J) {
            up += Jy - J;
            nup++;
        }
    }
    return nup ? up / nup : 0.1 * fabs(J) + 1e-12;
}

/* One annealing round from the best state x (in/out). */
#define ANNEAL_ROUNDS 3
static void anneal_round(kl_search_engine *e, gsl_rng *rng, int *x, double *J, int *cur, int *y,
                         kl_rebalance_summary *sum, long steps)
{
    int n = e->rp->nitems;
    memcpy(cur, x, sizeof(int) * (size_t)n);
    double Jcur = *J, T0 = anneal_t0(e, rng, x, *J, y, sum);
    for (long s = 0; s < steps && !kl_search_engine_time_up(e); s++) {
        double T = T0 * pow(1e-3, (double)s / (double)steps);
        if (!neighbour(e, rng, cur, y))
            continue;
        double Jy = kl_search_engine_score_state(e, y, sum);
        if (!isfinite(Jy))
            continue;
        double d = Jy - Jcur;
        if (d <= 0 || gsl_rng_uniform(rng) < exp(-d / T)) {
            memcpy(cur, y, sizeof(int) * (size_t)n);
            Jcur = Jy;
            if (Jy < *J - 1e-12 * fabs(*J)) {
                memcpy(x, y, sizeof(int) * (size_t)n);
                *J = Jy;
                e->plan_moves = kl_search_engine_count_moves(e, x, NULL);
            }
        }
    }
}

/* Simulated annealing from x (in/out: the best state found); *J its score.
 * ANNEAL_ROUNDS rounds of `steps` each, every round restarting from the best
 * state with its temperature falling geometrically from anneal_t0 to 1/1000
 * of it. */
kl_status kl_search_anneal(kl_search_engine *e, int *x, double *J, kl_rebalance_summary *sum,
                           long steps)
{
    int n = e->rp->nitems;
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    int *cur = kl_malloc(sizeof(int) * ((size_t)n + 1));
    int *y = kl_malloc(sizeof(int) * ((size_t)n + 1));
    kl_status st = KL_OK;
    if (!rng || !cur || !y) {
        st = KL_ENOMEM;
        goto done;
    }
    gsl_rng_set(rng, e->opt->seed);
    for (int round = 0; round < ANNEAL_ROUNDS; round++)
        anneal_round(e, rng, x, J, cur, y, sum, steps);
    kl_search_engine_set_state(e, x);
done:
    if (rng)
        gsl_rng_free(rng);
    kl_free(cur);
    kl_free(y);
    return st;
}
