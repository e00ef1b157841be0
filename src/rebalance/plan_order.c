/* kilter: the order of a rebalancing plan's moves, so that the plan can be
 * stopped after any step: the order with the smallest sum of prefix scores
 * over all orders (dynamic programming over the subsets of moves) when that
 * fits in the time left, else greedily (each prefix the best next step).
 * Every step is recorded with the summaries of the state after it. */
#include <math.h>
#include <string.h>
#include "kilter/rebalance.h"
#include "kl_rebalance.h"

/* Order of the m moves ids[] (to target[]) with the smallest sum of prefix
 * scores: dynamic programming over the 2^m subsets (each subset's state
 * solved once), best(S) = J(S) + min_{j in S} best(S - j).  A subset that
 * breaks a limit or the voltage range counts 1e6, so orders that pass
 * through it lose.  order[m] (out). */
#define ORDER_DP_MAX 10
static kl_status order_dp(kl_search_engine *e, const int *ids, const int *target, int m,
                          int *order, kl_rebalance_summary *sum)
{
    size_t ns = (size_t)1 << m;
    double *val = kl_malloc(ns * sizeof(double)), *best = kl_malloc(ns * sizeof(double));
    int *prev = kl_malloc(ns * sizeof(int));
    int *x = kl_calloc((size_t)e->rp->nitems + 1, sizeof(int));
    kl_status st = KL_ENOMEM;
    if (!val || !best || !prev || !x)
        goto done;
    best[0] = 0;
    for (size_t mask = 1; mask < ns; mask++) {
        for (int j = 0; j < m; j++)
            x[ids[j]] = (mask >> j & 1) ? target[ids[j]] : 0;
        double J = kl_search_engine_admissible(e, x) ? kl_search_engine_score_state(e, x, sum)
                                                     : INFINITY;
        val[mask] = isfinite(J) ? J : 1e6;
        best[mask] = INFINITY;
        for (int j = 0; j < m; j++)
            if ((mask >> j & 1) && best[mask ^ ((size_t)1 << j)] + val[mask] < best[mask]) {
                best[mask] = best[mask ^ ((size_t)1 << j)] + val[mask];
                prev[mask] = j;
            }
    }
    for (size_t mask = ns - 1, t = (size_t)m; mask; mask ^= (size_t)1 << prev[mask])
        order[--t] = ids[prev[mask]];
    st = KL_OK;
done:
    kl_free(val);
    kl_free(best);
    kl_free(prev);
    kl_free(x);
    return st;
}

/* 1 when the 2^m subset solves fit in the time left (at least 2 s allowed),
 * judged from the time per load flow so far. */
static int order_dp_affordable(kl_search_engine *e, int m)
{
    if (m < 2 || m > ORDER_DP_MAX)
        return 0;
    double spent = kl_search_engine_elapsed(e), per = spent / (double)(e->evals > 0 ? e->evals : 1);
    double left = e->opt->time_limit_s > 0 ? e->opt->time_limit_s - spent : INFINITY;
    return (double)((size_t)1 << m) * e->opt->nlevels * per <= fmax(2.0, left);
}

/* Appends the step "item bi to target[bi]" from state x (x updated);
 * bs[] holds the summaries of the state after it. */
static void step_record(kl_search_engine *e, int *x, int bi, const int *target,
                        kl_rebalance_plan *plan, const kl_rebalance_summary *bs)
{
    kl_plan_step *s = &plan->steps[plan->nsteps++];
    s->item = bi;
    s->from_phases = kl_rephase_phases(e->rp, x, bi);
    x[bi] = target[bi];
    s->to_phases = kl_rephase_phases(e->rp, x, bi);
    s->rot = target[bi];
    s->cost = e->rp->items[bi].cost;
    s->voltage_ok = kl_search_engine_voltage_ok(e, bs);
    s->loading_ok = kl_search_engine_loading_ok(e, bs);
    s->score = kl_search_engine_score(e, bs);
    memcpy(s->after, bs, sizeof *bs * (size_t)e->opt->nlevels);
}

/* The best next move of target[] from x (admissible states first; breaches
 * of the voltage range after the rest); its summaries into bs[]. */
static int greedy_next(kl_search_engine *e, int *x, const int *target, kl_rebalance_summary *sum,
                       kl_rebalance_summary *bs)
{
    int bi = -1, bok = 0;
    double bJ = INFINITY;
    for (int i = 0; i < e->rp->nitems; i++) {
        if (!target[i] || x[i] == target[i])
            continue;
        x[i] = target[i];
        int ok = kl_rephase_state_ok(e->rp, x);
        double Jc = kl_search_engine_try_state(e, x, sum);
        if (!isfinite(Jc))
            Jc = kl_search_engine_converged(e, sum) ? kl_search_engine_score(e, sum) + 1e6 : 1e300;
        if (bi < 0 || ok > bok || (ok == bok && Jc < bJ)) {
            bi = i;
            bJ = Jc;
            bok = ok;
            memcpy(bs, sum, sizeof *bs * (size_t)e->opt->nlevels);
        }
        x[i] = 0;
    }
    return bi;
}

/* Orders the moves of `target` and records every step's summaries into the
 * plan: the order with the smallest sum of prefix scores when the subsets
 * can be solved in the time left (order_dp), else greedily, each prefix the
 * best next step. */
kl_status kl_plan_order(kl_search_engine *e, const int *target, kl_rebalance_plan *plan,
                        kl_rebalance_summary *sum)
{
    int n = e->rp->nitems, m = 0;
    int *x = kl_calloc((size_t)n + 1, sizeof(int));
    int *ids = kl_calloc((size_t)n + 1, sizeof(int));
    int *order = kl_calloc((size_t)n + 1, sizeof(int));
    kl_rebalance_summary *bs = kl_calloc(KL_REBAL_MAX_LEVELS, sizeof *bs);
    kl_status st = KL_ENOMEM;
    if (!x || !ids || !order || !bs)
        goto done;
    for (int i = 0; i < n; i++)
        if (target[i])
            ids[m++] = i;
    int dp = order_dp_affordable(e, m);
    if (dp && (st = order_dp(e, ids, target, m, order, sum)))
        goto done;
    plan->nsteps = 0;
    for (int t = 0; t < m && plan->nsteps < plan->cap_steps; t++) {
        int bi = order[t];
        if (dp) {
            x[bi] = target[bi];
            kl_search_engine_try_state(e, x, bs);
            x[bi] = 0;
        } else {
            bi = greedy_next(e, x, target, sum, bs);
        }
        step_record(e, x, bi, target, plan, bs);
    }
    st = KL_OK;
done:
    kl_free(x);
    kl_free(ids);
    kl_free(order);
    kl_free(bs);
    return st;
}
