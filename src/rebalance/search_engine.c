/* kilter: the rebalancing search's evaluation engine: a state (one rotation
 * per item) set in the network and scored by full load flows.
 *
 * Score of a set of moves x (one rotation per item):
 *   J(x) = sum_l w_l sum_o c_o f_o,l(x) / max(|f_o,l(0)|, floor_o)
 * over load levels l (weights w_l) and objectives o (weights c_o), each
 * objective scaled by its value for the feeder as given, so J(0) = sum of the
 * weights and the weights need no units.  Every f is read from a full load
 * flow of the moved network at that level (sweep warm-started from the last
 * voltages of the same level; regulators start from the file's taps each time
 * so a result never depends on the order candidates were tried).
 *
 * Constraints: at most K moves, the cost budget, pins and forbidden phases
 * (kl_rephase_state_ok), service voltages: no bus may leave the range
 * [vmin, vmax], or go further outside it than the feeder as given already is;
 * and loading: no section may go over its continuous rating that was not over
 * it in the feeder as given, and none already over may carry more
 * (kl_search_engine_loading_ok).
 *
 * With few movable items the scores of states seen are kept in an
 * open-addressing cache, so a strategy that comes back to a state does not
 * solve it again. */
#include <math.h>
#include <stdint.h>
#include <string.h>
#include <time.h>
#include "kilter/rebalance.h"
#include "kl_rebalance.h"

/* Scale floors: a feeder that is already balanced on an objective would
 * otherwise divide by ~0 (amperes, fraction, watts, amperes, per unit). */
static const double OBJ_FLOOR[KL_OBJ_COUNT] = {1.0, 1e-4, 1.0, 1.0, 1e-3};

#define CACHE_SIZE (1 << 15)
#define CACHE_ITEMS 40 /* 3^40 < 2^64 */
/* The Fibonacci hash keeps the top 15 bits of the product (>> 49), the
 * slot index of a table of 2^15: the two must change together. */
_Static_assert(CACHE_SIZE == 1 << (64 - 49), "score cache: size and hash bits differ");

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

double kl_search_engine_elapsed(const kl_search_engine *e)
{
    return now_s() - e->t0;
}

kl_status kl_search_engine_init(kl_search_engine *e, kl_rephaser *rp,
                                const kl_rebalance_options *opt, kl_errors *err)
{
    memset(e, 0, sizeof *e);
    e->rp = rp;
    e->net = rp->net;
    e->opt = opt;
    kl_errors_init(&e->scratch);
    const kl_feeder *f = e->net->feeder;
    kl_status st = kl_flow_result_alloc(e->net, &e->res, err);
    if (st)
        return st;
    e->snap = kl_calloc((size_t)opt->nlevels * 3 * (size_t)e->net->nbuses, sizeof(kl_complex));
    e->tap0 = kl_calloc(3 * (size_t)f->nregulators + 1, sizeof(int));
    e->movable = kl_calloc((size_t)rp->nitems + 1, sizeof(int));
    e->cand = kl_calloc(2 * (size_t)rp->nitems + 1, sizeof(kl_search_candidate));
    e->load0 = kl_calloc((size_t)opt->nlevels * (size_t)f->nsections + 1, sizeof(double));
    e->total = kl_calloc((size_t)rp->nitems + 1, sizeof(int));
    e->sub_ok = kl_calloc((size_t)rp->nitems + 1, 1);
    if (!e->snap || !e->tap0 || !e->movable || !e->cand || !e->load0 || !e->total || !e->sub_ok)
        return KL_ENOMEM;
    memcpy(e->tap0, e->net->tap, 3 * (size_t)f->nregulators * sizeof(int));
    for (int r = 0; r < f->nregulators && !opt->flow.fixed_taps; r++)
        e->auto_regs |= f->regulators[r].mode == KL_REG_AUTO;
    for (int i = 0; i < rp->nitems; i++)
        if (rp->items[i].allowed != 1 && !rp->items[i].pinned)
            e->movable[e->nmov++] = i;
    if (e->nmov <= CACHE_ITEMS) {
        e->ckey = kl_calloc(CACHE_SIZE, sizeof(uint64_t));
        e->cval = kl_calloc(CACHE_SIZE, sizeof(double));
        if (!e->ckey || !e->cval)
            return KL_ENOMEM;
    }
    e->t0 = e->last_report = now_s();
    return KL_OK;
}

void kl_search_engine_free(kl_search_engine *e)
{
    kl_flow_result_free(e->res);
    kl_free(e->snap);
    kl_free(e->tap0);
    kl_free(e->movable);
    kl_free(e->cand);
    kl_free(e->load0);
    kl_free(e->total);
    kl_free(e->sub_ok);
    kl_free(e->ckey);
    kl_free(e->cval);
    kl_errors_free(&e->scratch);
}

/* Sets item i to rotation r in the network and in every level's snapshot. */
static void engine_set(kl_search_engine *e, int i, int r)
{
    int dr = r - e->rp->rot[i];
    if (!((dr % 3 + 3) % 3))
        return;
    for (int l = 0; l < e->opt->nlevels; l++)
        kl_rephase_shift_vector(e->rp, i, dr, e->snap + (size_t)l * 3 * (size_t)e->net->nbuses);
    kl_rephase_set(e->rp, i, r);
}

void kl_search_engine_set_state(kl_search_engine *e, const int *rot)
{
    for (int i = 0; i < e->rp->nitems; i++)
        engine_set(e, i, rot[i]);
}

static void taps_reset(kl_search_engine *e)
{
    const kl_feeder *f = e->net->feeder;
    if (!f->nregulators || !memcmp(e->net->tap, e->tap0, 3 * (size_t)f->nregulators * sizeof(int)))
        return;
    memcpy(e->net->tap, e->tap0, 3 * (size_t)f->nregulators * sizeof(int));
    for (int r = 0; r < f->nregulators; r++)
        kl_regulator_update(e->net, r);
}

/* One full load flow at the present network state.  Without automatic
 * regulators the sweep itself is the whole load flow; skipping the result
 * record (the summary reads the network) keeps a candidate to the sweep's
 * own cost.  With them, kl_flow_solve runs the tap control loop. */
static kl_status engine_flow(kl_search_engine *e, const kl_flow_options *fo, kl_errors *err)
{
    if (!e->auto_regs && fo->solver == KL_SOLVER_SWEEP)
        return kl_sweep_solve(e->net, fo, NULL, err);
    return kl_flow_solve(e->net, fo, e->res, err);
}

/* Each section's loading at level l, from the network's solved state: the
 * most loaded, the count over the rating and of those the base case did not
 * have (or had less loaded).  The base case records its own. */
static void level_loading(kl_search_engine *e, int l, kl_rebalance_summary *sum)
{
    const kl_feeder *f = e->net->feeder;
    double *base = e->load0 + (size_t)l * (size_t)f->nsections;
    sum->loading_max = 0;
    sum->loading_section = -1;
    sum->n_overloaded = sum->n_new_overloads = 0;
    for (int s = 0; s < f->nsections; s++) {
        kl_loading ld;
        kl_loading_network(e->net, s, &ld);
        double x = ld.worst;
        if (!e->load0_set)
            base[s] = x;
        if (!isfinite(x))
            continue;
        if (x > sum->loading_max || sum->loading_section < 0) {
            sum->loading_max = x;
            sum->loading_section = s;
        }
        if (x > 1.0) {
            sum->n_overloaded++;
            /* over now: new unless it was over before and carries no more (1e-6: the
             * solver's own tolerance on a state that did not change there) */
            sum->n_new_overloads += e->load0_set && !(base[s] > 1.0 && x <= base[s] * (1 + 1e-6));
        }
    }
}

int kl_search_engine_loading_ok(const kl_search_engine *e, const kl_rebalance_summary *sum)
{
    for (int l = 0; l < e->opt->nlevels; l++)
        if (!sum[l].converged || sum[l].n_new_overloads > 0)
            return 0;
    return 1;
}

/* Solves level l of the present network state into *sum. */
kl_status kl_search_engine_solve_level(kl_search_engine *e, int l, kl_rebalance_summary *sum,
                                       kl_errors *err)
{
    kl_network *n = e->net;
    size_t nv = 3 * (size_t)n->nbuses;
    kl_flow_options fo = e->opt->flow;
    fo.load_scale = e->opt->level[l].scale;
    taps_reset(e);
    if (e->snap_valid[l]) {
        memcpy(n->vs, e->snap + (size_t)l * nv, nv * sizeof(kl_complex)); /* by position */
        n->v_valid = 1;
    } else {
        n->v_valid = 0;
    }
    e->evals++;
    kl_status st = engine_flow(e, &fo, err);
    if (st) {
        sum->converged = 0;
        e->snap_valid[l] = 0;
        return st;
    }
    kl_rebalance_summarize(n, 1, e->opt->neutral_section, sum);
    level_loading(e, l, sum);
    memcpy(e->snap + (size_t)l * nv, n->vs, nv * sizeof(kl_complex));
    e->snap_valid[l] = 1;
    return KL_OK;
}

/* Solves every level of the present network state into sum[].  Returns KL_OK
 * or the first failure (with its message in err). */
kl_status kl_search_engine_solve(kl_search_engine *e, kl_rebalance_summary *sum, kl_errors *err)
{
    for (int l = 0; l < e->opt->nlevels; l++) {
        kl_status st = kl_search_engine_solve_level(e, l, &sum[l], err);
        if (st)
            return st;
    }
    return KL_OK;
}

double kl_search_engine_score(const kl_search_engine *e, const kl_rebalance_summary *sum)
{
    double J = 0;
    for (int l = 0; l < e->opt->nlevels; l++)
        for (int o = 0; o < KL_OBJ_COUNT; o++)
            if (e->opt->weight[o] != 0)
                J += e->opt->level[l].weight * e->opt->weight[o] * sum[l].obj[o] / e->scale[l][o];
    return J;
}

int kl_search_engine_voltage_ok(const kl_search_engine *e, const kl_rebalance_summary *sum)
{
    for (int l = 0; l < e->opt->nlevels; l++)
        if (!sum[l].converged || sum[l].v_min_pu < e->vlo[l] || sum[l].v_max_pu > e->vhi[l])
            return 0;
    return 1;
}

int kl_search_engine_converged(const kl_search_engine *e, const kl_rebalance_summary *sum)
{
    for (int l = 0; l < e->opt->nlevels; l++)
        if (!sum[l].converged)
            return 0;
    return 1;
}

/* Score of the present state; INFINITY when it does not solve or breaks the
 * voltage range. */
static double engine_eval(kl_search_engine *e, kl_rebalance_summary *sum)
{
    kl_errors_clear(&e->scratch);
    if (kl_search_engine_solve(e, sum, &e->scratch) != KL_OK)
        return INFINITY;
    if (!kl_search_engine_voltage_ok(e, sum) || !kl_search_engine_loading_ok(e, sum))
        return INFINITY;
    return kl_search_engine_score(e, sum);
}

/* Base case: scales and voltage bounds from the feeder as given. */
kl_status kl_search_engine_base(kl_search_engine *e, kl_rebalance_summary *base, kl_errors *err)
{
    kl_status st = kl_search_engine_solve(e, base, err);
    if (st)
        return st;
    e->load0_set = 1;
    for (int l = 0; l < e->opt->nlevels; l++) {
        for (int o = 0; o < KL_OBJ_COUNT; o++)
            e->scale[l][o] = fmax(fabs(base[l].obj[o]), OBJ_FLOOR[o]);
        e->vlo[l] = fmin(e->opt->vmin_pu, base[l].v_min_pu) - 1e-9;
        e->vhi[l] = fmax(e->opt->vmax_pu, base[l].v_max_pu) + 1e-9;
    }
    return KL_OK;
}

int kl_search_engine_time_up(kl_search_engine *e)
{
    double t = now_s();
    if (e->opt->progress && t - e->last_report > 0.2) {
        e->last_report = t;
        e->opt->progress(e->opt->progress_ctx, "rebalancing: load flows run", e->evals, 0);
    }
    /* The plan ordering (plan_order.c) runs after the search, inside the same
     * limit: ordering m moves takes at most m(m+1)/2 load flows per level
     * (each prefix the best next step), so the search stops that many mean
     * load-flow times early for one move more than it has.  On a feeder of
     * ordinary size that is milliseconds; on a very large one it keeps the
     * overrun to about one load flow. */
    double m = e->plan_moves + 1;
    double per_flow = e->evals > 0 ? (t - e->t0) / (double)e->evals : 0;
    double reserve = m * (m + 1) / 2 * e->opt->nlevels * per_flow;
    if (e->opt->time_limit_s > 0 && t - e->t0 + reserve > e->opt->time_limit_s)
        e->timed_out = 1;
    return e->timed_out;
}

int kl_search_engine_count_moves(const kl_search_engine *e, const int *rot, double *cost)
{
    int m = 0;
    double c = 0;
    for (int i = 0; i < e->rp->nitems; i++)
        if (rot[i]) {
            m++;
            c += e->rp->items[i].cost;
        }
    if (cost)
        *cost = c;
    return m;
}

/* Moves and cost within the limits, pins and forbidden phases respected. */
int kl_search_engine_admissible(const kl_search_engine *e, const int *rot)
{
    double cost;
    int m = kl_search_engine_count_moves(e, rot, &cost);
    if (m > e->opt->max_moves)
        return 0;
    if (e->opt->max_cost > 0 && cost > e->opt->max_cost + 1e-9)
        return 0;
    return kl_rephase_state_ok(e->rp, rot);
}

/* Scores rot[] (already admissible): sets it, evaluates, leaves it set. */
double kl_search_engine_try_state(kl_search_engine *e, const int *rot, kl_rebalance_summary *sum)
{
    kl_search_engine_set_state(e, rot);
    return engine_eval(e, sum);
}

/* kl_search_engine_try_state through the cache of scores already computed
 * (the summaries are not kept: callers that need them use try_state). */
double kl_search_engine_score_state(kl_search_engine *e, const int *rot,
                                    kl_rebalance_summary *sum)
{
    if (!e->ckey)
        return kl_search_engine_try_state(e, rot, sum);
    uint64_t key = 0;
    for (int q = 0; q < e->nmov; q++)
        key = 3 * key + (uint64_t)rot[e->movable[q]];
    key += 1;
    uint64_t h = (key * 0x9E3779B97F4A7C15ull) >> 49; /* Fibonacci hashing, 15 bits */
    for (int probe = 0; probe < 16; probe++) {
        uint64_t k = (h + (uint64_t)probe) & (CACHE_SIZE - 1);
        if (e->ckey[k] == key)
            return e->cval[k];
        if (e->ckey[k] == 0) {
            double J = kl_search_engine_try_state(e, rot, sum);
            e->ckey[k] = key;
            e->cval[k] = J;
            return J;
        }
    }
    return kl_search_engine_try_state(e, rot, sum); /* neighbourhood full: just solve */
}
