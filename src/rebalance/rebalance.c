/* kilter: the rebalancing advisor's entry points: the options, and the
 * search that finds and orders a plan.
 *
 * The search, on one evaluation engine (search_engine.c, which states the
 * score and the constraints): exhaustive enumeration when the space is small
 * (search_exhaustive.c); otherwise greedy best-move construction
 * (search_greedy.c), then simulated annealing (search_anneal.c), then a
 * descent to a local optimum over single and paired changes
 * (search_descent.c).  Finally the chosen moves are ordered (plan_order.c) so
 * that the plan can be stopped after any step. */
#include <math.h>
#include <string.h>
#include "kilter/rebalance.h"
#include "kl_rebalance.h"

void kl_rebalance_options_default(kl_rebalance_options *opt)
{
    memset(opt, 0, sizeof *opt);
    opt->weight[KL_OBJ_NEUTRAL] = 1.0;
    opt->neutral_section = -1;
    opt->max_moves = 10;
    opt->max_cost = 0;
    opt->vmin_pu = 0.95; /* ANSI C84.1 range A service voltage, +/-5 % (common practice) */
    opt->vmax_pu = 1.05;
    opt->nlevels = 1;
    opt->level[0] = (kl_load_level){1.0, 1.0};
    opt->mode = KL_SEARCH_AUTO;
    opt->exhaustive_limit = 20000;
    opt->time_limit_s = 30.0;
    opt->anneal_steps = -1; /* default: chosen from the number of items */
    opt->seed = 1;
    kl_flow_options_default(&opt->flow);
}

static kl_status check_options(const kl_rephaser *rp, const kl_rebalance_options *o,
                               kl_errors *err)
{
    double wsum = 0;
    for (int k = 0; k < KL_OBJ_COUNT; k++) {
        if (!(o->weight[k] >= 0) || !isfinite(o->weight[k]))
            goto bad;
        wsum += o->weight[k];
    }
    if (!(wsum > 0) || o->nlevels < 1 || o->nlevels > KL_REBAL_MAX_LEVELS || o->max_moves < 0)
        goto bad;
    for (int l = 0; l < o->nlevels; l++)
        if (!(o->level[l].scale > 0) || !(o->level[l].weight >= 0) ||
            !isfinite(o->level[l].scale) || !isfinite(o->level[l].weight))
            goto bad;
    if (o->neutral_section >= rp->net->feeder->nsections || !(o->vmin_pu < o->vmax_pu) ||
        !(o->flow.tol_pu > 0) || o->flow.max_iter <= 0)
        goto bad;
    return KL_OK;
bad:
    kl_errors_add(err, NULL, 0, 0, "rebalance", "invalid options: objective weights must be "
                  "non-negative with at least one positive, 1 to %d load levels with positive "
                  "scales and non-negative weights, the move limit not negative and the "
                  "voltage range lower bound below the upper", KL_REBAL_MAX_LEVELS);
    return KL_EARG;
}

static void plan_fill_head(kl_rebalance_plan *plan, const kl_rebalance_options *opt)
{
    plan->nlevels = opt->nlevels;
    memcpy(plan->level, opt->level, sizeof plan->level);
    memcpy(plan->weight, opt->weight, sizeof plan->weight);
    plan->neutral_section = opt->neutral_section;
}

/* The search proper, on an initialised engine. */
static kl_status run_search(kl_search_engine *e, kl_rebalance_plan *plan, int *x, kl_errors *err)
{
    const kl_rebalance_options *opt = e->opt;
    kl_rebalance_summary sum[KL_REBAL_MAX_LEVELS];
    kl_status st = kl_search_engine_base(e, plan->before, err);
    if (st)
        return st;
    double J0 = kl_search_engine_score(e, plan->before), J = J0;
    plan->score_before = J0;
    plan->nmovable = e->nmov;
    double space = kl_search_exhaustive_space(e);
    int exh = opt->mode == KL_SEARCH_EXHAUSTIVE ||
              (opt->mode == KL_SEARCH_AUTO && space <= (double)opt->exhaustive_limit);
    if (opt->mode == KL_SEARCH_EXHAUSTIVE && space > (double)opt->exhaustive_limit) {
        kl_errors_add(err, NULL, 0, 0, "rebalance", "exhaustive search asked for, but the "
                      "%d movable items give %.3g combinations, more than the limit %ld: "
                      "raise the limit, pin items, or use the heuristic search", e->nmov,
                      space, opt->exhaustive_limit);
        return KL_EARG;
    }
    plan->method = exh ? KL_SEARCH_EXHAUSTIVE : KL_SEARCH_HEURISTIC;
    if (exh) {
        kl_search_exhaustive(e, x, &J, sum);
    } else {
        kl_search_greedy(e, x, &J, sum);
        plan->seconds_greedy = kl_search_engine_elapsed(e);
        long steps = opt->anneal_steps >= 0 ? opt->anneal_steps
                                            : (50L * e->nmov > 1000 ? 50L * e->nmov : 1000);
        if ((st = kl_search_anneal(e, x, &J, sum, steps)) ||
            (st = kl_search_descent(e, x, &J, sum)))
            return st;
    }
    memcpy(plan->rot, x, sizeof(int) * (size_t)e->rp->nitems);
    int *zero = x + e->rp->nitems;
    memset(zero, 0, sizeof(int) * (size_t)e->rp->nitems);
    kl_search_engine_set_state(e, zero);
    if ((st = kl_plan_order(e, plan->rot, plan, sum)))
        return st;
    kl_search_engine_set_state(e, zero);
    if (plan->nsteps) {
        memcpy(plan->after, plan->steps[plan->nsteps - 1].after, sizeof plan->after);
        plan->score_after = plan->steps[plan->nsteps - 1].score;
    } else {
        memcpy(plan->after, plan->before, sizeof plan->after);
        plan->score_after = J0;
    }
    return KL_OK;
}

kl_status kl_rebalance_run(kl_rephaser *rp, const kl_rebalance_options *opt,
                           kl_rebalance_plan *plan, kl_errors *err)
{
    if (!rp || !opt || !plan || !err || plan->nitems != rp->nitems)
        return KL_EARG;
    kl_status st = check_options(rp, opt, err);
    if (st)
        return st;
    plan_fill_head(plan, opt);
    kl_search_engine e;
    memset(&e, 0, sizeof e);
    int *x = kl_calloc(2 * (size_t)rp->nitems + 1, sizeof(int));
    st = x ? kl_search_engine_init(&e, rp, opt, err) : KL_ENOMEM;
    if (!st)
        st = run_search(&e, plan, x, err);
    if (x && e.rp) {
        memset(x, 0, sizeof(int) * (size_t)rp->nitems);
        kl_search_engine_set_state(&e, x);
        plan->evaluations = e.evals;
        plan->seconds = kl_search_engine_elapsed(&e);
        plan->timed_out = e.timed_out;
    }
    kl_search_engine_free(&e);
    kl_free(x);
    if (st == KL_ENOMEM)
        kl_errors_add(err, NULL, 0, 0, "rebalance", "out of memory during the search");
    return st;
}

kl_status kl_rebalance_evaluate(kl_rephaser *rp, const kl_rebalance_options *opt,
                                const int *rot, kl_rebalance_summary *out, kl_errors *err)
{
    if (!rp || !opt || !rot || !out || !err)
        return KL_EARG;
    kl_search_engine e;
    kl_status st = kl_search_engine_init(&e, rp, opt, err);
    int *zero = kl_calloc((size_t)rp->nitems + 1, sizeof(int));
    if (!st && !zero)
        st = KL_ENOMEM;
    kl_rebalance_summary base[KL_REBAL_MAX_LEVELS];
    if (!st) /* the feeder as given first: new overloads are counted against it */
        st = kl_search_engine_base(&e, base, err);
    if (!st) {
        kl_search_engine_set_state(&e, rot);
        st = kl_search_engine_solve(&e, out, err);
        kl_search_engine_set_state(&e, zero);
    }
    kl_search_engine_free(&e);
    kl_free(zero);
    return st;
}
