/* kilter: the rebalancing search.
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
 * (kl_rephase_state_ok), and service voltages: no bus may leave the range
 * [vmin, vmax], or go further outside it than the feeder as given already is.
 *
 * Search: greedy best-move construction; then simulated annealing (Kirkpatrick,
 * Gelatt and Vecchi, Science 220 (1983), the Metropolis acceptance rule) over
 * change / undo / swap moves with a seeded GSL generator; then a descent to a
 * local optimum over single and (few items) paired changes; or exhaustive
 * enumeration when the space is small.  Finally the chosen moves are ordered
 * (smallest sum of prefix scores over all orders, or greedily) so that the
 * plan can be stopped after any step. */
#include <math.h>
#include <stdint.h>
#include <string.h>
#include <time.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_rng.h>
#include "kilter/rebalance.h"
#include "kl_rebalance.h"

/* Scale floors: a feeder that is already balanced on an objective would
 * otherwise divide by ~0 (amperes, fraction, watts, amperes, per unit). */
static const double OBJ_FLOOR[KL_OBJ_COUNT] = {1.0, 1e-4, 1.0, 1.0, 1e-3};
static const double TWO_PI_3 = 2.0943951023931954923; /* 120 degrees */
static const char *const OBJ_NAME[KL_OBJ_COUNT] = {"neutral", "vuf", "losses", "current", "drop"};

const char *kl_objective_name(kl_objective o)
{
    return (o >= 0 && o < KL_OBJ_COUNT) ? OBJ_NAME[o] : "?";
}

int kl_objective_parse(const char *s)
{
    for (int o = 0; s && o < KL_OBJ_COUNT; o++)
        if (strcmp(s, OBJ_NAME[o]) == 0)
            return o;
    return -1;
}

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

/* ------------------------------------------------------------ the engine */

typedef struct {
    int item, r;             /* move item to rotation r */
    double est;              /* screening estimate of the score */
} candidate;

typedef struct {
    kl_rephaser *rp;
    kl_network *net;
    const kl_rebalance_options *opt;
    kl_flow_result *res;
    kl_complex *snap;        /* [nlevels][3*nbuses] last voltages per level */
    int snap_valid[KL_REBAL_MAX_LEVELS];
    int *tap0;               /* [3*nregulators] the file's taps */
    double scale[KL_REBAL_MAX_LEVELS][KL_OBJ_COUNT];
    double vlo[KL_REBAL_MAX_LEVELS], vhi[KL_REBAL_MAX_LEVELS];
    kl_errors scratch;       /* non-convergence of a candidate is a verdict, not an error */
    long evals;
    double t0, last_report;
    int timed_out;
    int *movable;            /* [nitems] ids of items that may move */
    int nmov;
    int auto_regs;           /* 1: some regulator controls its taps */
    candidate *cand;         /* [2*nitems] greedy candidates */
    int ncand;
    uint64_t *ckey;          /* [CACHE_SIZE] scores of states seen (few items only): */
    double *cval;            /* key = base-3 digits of the movable items + 1, 0 empty */
} engine;

#define CACHE_SIZE (1 << 15)
#define CACHE_ITEMS 40 /* 3^40 < 2^64 */

static double now_s(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + 1e-9 * (double)ts.tv_nsec;
}

static kl_status engine_init(engine *e, kl_rephaser *rp, const kl_rebalance_options *opt,
                             kl_errors *err)
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
    e->cand = kl_calloc(2 * (size_t)rp->nitems + 1, sizeof(candidate));
    if (!e->snap || !e->tap0 || !e->movable || !e->cand)
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

static void engine_free(engine *e)
{
    kl_flow_result_free(e->res);
    kl_free(e->snap);
    kl_free(e->tap0);
    kl_free(e->movable);
    kl_free(e->cand);
    kl_free(e->ckey);
    kl_free(e->cval);
    kl_errors_free(&e->scratch);
}

/* Sets item i to rotation r in the network and in every level's snapshot. */
static void engine_set(engine *e, int i, int r)
{
    int dr = r - e->rp->rot[i];
    if (!((dr % 3 + 3) % 3))
        return;
    for (int l = 0; l < e->opt->nlevels; l++)
        kl_rephase_shift_vector(e->rp, i, dr, e->snap + (size_t)l * 3 * e->net->nbuses);
    kl_rephase_set(e->rp, i, r);
}

static void engine_set_state(engine *e, const int *rot)
{
    for (int i = 0; i < e->rp->nitems; i++)
        engine_set(e, i, rot[i]);
}

static void taps_reset(engine *e)
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
static kl_status engine_flow(engine *e, const kl_flow_options *fo, kl_errors *err)
{
    if (!e->auto_regs && fo->solver == KL_SOLVER_SWEEP)
        return kl_sweep_solve(e->net, fo, NULL, err);
    return kl_flow_solve(e->net, fo, e->res, err);
}

/* Solves level l of the present network state into *sum. */
static kl_status engine_solve_level(engine *e, int l, kl_rebalance_summary *sum, kl_errors *err)
{
    kl_network *n = e->net;
    size_t nv = 3 * (size_t)n->nbuses;
    kl_flow_options fo = e->opt->flow;
    fo.load_scale = e->opt->level[l].scale;
    taps_reset(e);
    if (e->snap_valid[l]) {
        memcpy(n->vs, e->snap + l * nv, nv * sizeof(kl_complex)); /* by position */
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
    memcpy(e->snap + l * nv, n->vs, nv * sizeof(kl_complex));
    e->snap_valid[l] = 1;
    return KL_OK;
}

/* Solves every level of the present network state into sum[].  Returns KL_OK
 * or the first failure (with its message in err). */
static kl_status engine_solve(engine *e, kl_rebalance_summary *sum, kl_errors *err)
{
    for (int l = 0; l < e->opt->nlevels; l++) {
        kl_status st = engine_solve_level(e, l, &sum[l], err);
        if (st)
            return st;
    }
    return KL_OK;
}

static double engine_score(const engine *e, const kl_rebalance_summary *sum)
{
    double J = 0;
    for (int l = 0; l < e->opt->nlevels; l++)
        for (int o = 0; o < KL_OBJ_COUNT; o++)
            if (e->opt->weight[o] != 0)
                J += e->opt->level[l].weight * e->opt->weight[o] * sum[l].obj[o] / e->scale[l][o];
    return J;
}

static int engine_voltage_ok(const engine *e, const kl_rebalance_summary *sum)
{
    for (int l = 0; l < e->opt->nlevels; l++)
        if (!sum[l].converged || sum[l].v_min_pu < e->vlo[l] || sum[l].v_max_pu > e->vhi[l])
            return 0;
    return 1;
}

/* Score of the present state; INFINITY when it does not solve or breaks the
 * voltage range. */
static double engine_eval(engine *e, kl_rebalance_summary *sum)
{
    kl_errors_clear(&e->scratch);
    if (engine_solve(e, sum, &e->scratch) != KL_OK)
        return INFINITY;
    return engine_voltage_ok(e, sum) ? engine_score(e, sum) : INFINITY;
}

/* Base case: scales and voltage bounds from the feeder as given. */
static kl_status engine_base(engine *e, kl_rebalance_summary *base, kl_errors *err)
{
    kl_status st = engine_solve(e, base, err);
    if (st)
        return st;
    for (int l = 0; l < e->opt->nlevels; l++) {
        for (int o = 0; o < KL_OBJ_COUNT; o++)
            e->scale[l][o] = fmax(fabs(base[l].obj[o]), OBJ_FLOOR[o]);
        e->vlo[l] = fmin(e->opt->vmin_pu, base[l].v_min_pu) - 1e-9;
        e->vhi[l] = fmax(e->opt->vmax_pu, base[l].v_max_pu) + 1e-9;
    }
    return KL_OK;
}

static int time_up(engine *e)
{
    double t = now_s();
    if (e->opt->progress && t - e->last_report > 0.2) {
        e->last_report = t;
        e->opt->progress(e->opt->progress_ctx, "rebalancing: load flows run", e->evals, 0);
    }
    if (e->opt->time_limit_s > 0 && t - e->t0 > e->opt->time_limit_s)
        e->timed_out = 1;
    return e->timed_out;
}

static int count_moves(const engine *e, const int *rot, double *cost)
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
static int engine_admissible(const engine *e, const int *rot)
{
    double cost;
    int m = count_moves(e, rot, &cost);
    if (m > e->opt->max_moves)
        return 0;
    if (e->opt->max_cost > 0 && cost > e->opt->max_cost + 1e-9)
        return 0;
    return kl_rephase_state_ok(e->rp, rot);
}

/* ------------------------------------------------------------ the search */

/* Scores rot[] (already admissible): sets it, evaluates, leaves it set. */
static double try_state(engine *e, const int *rot, kl_rebalance_summary *sum)
{
    engine_set_state(e, rot);
    return engine_eval(e, sum);
}

/* try_state through the cache of scores already computed (the summaries
 * are not kept: callers that need them use try_state). */
static double score_state(engine *e, const int *rot, kl_rebalance_summary *sum)
{
    if (!e->ckey)
        return try_state(e, rot, sum);
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
            double J = try_state(e, rot, sum);
            e->ckey[k] = key;
            e->cval[k] = J;
            return J;
        }
    }
    return try_state(e, rot, sum); /* neighbourhood full: just solve */
}

/* ------------------------------------------------ screening (greedy) */

/* Current item i draws through its tap at the present solution, cur[3]:
 * a lateral's tap-branch sending-end current, or a spot load's entries at
 * their present voltages (taken as constant power). */
static void item_current(const engine *e, int i, double scale, kl_complex cur[3])
{
    const kl_network *n = e->net;
    const kl_rephase_item *it = &e->rp->items[i];
    cur[0] = cur[1] = cur[2] = 0;
    if (it->kind == KL_ITEM_LATERAL) {
        kl_sweep_i_from(n, e->rp->br[it->first_br], cur);
        return;
    }
    const kl_load *ld = &n->feeder->loads[it->load];
    const kl_complex *v = kl_network_bus_v(n, ld->bus);
    for (int k = 0; k < 3; k++) {
        if (!(ld->phases & (1 << k)))
            continue;
        int p = n->ld_slot[3 * it->load + k], q = (p + 1) % 3;
        kl_complex vv = ld->conn == KL_CONN_DELTA ? v[p] - v[q] : v[p];
        if (cabs(vv) == 0)
            continue;
        kl_complex c = conj(ld->s_va[k] * scale / vv);
        cur[p] += c;
        if (ld->conn == KL_CONN_DELTA)
            cur[q] -= c;
    }
}

/* Screening applies to objectives read at the head from the head currents
 * alone (neutral at the head, largest head current): a move by dr steps
 * turns the item's current, I'[p + dr] = I[p] exp(-j 120 dr deg), and the
 * head currents change by I' - I, to first order. */
static int screen_possible(const engine *e)
{
    const double *w = e->opt->weight;
    return e->opt->neutral_section < 0 && w[KL_OBJ_VUF] == 0 && w[KL_OBJ_LOSSES] == 0 &&
           w[KL_OBJ_DROP] == 0;
}

static double screen_term(const engine *e, int l, const kl_complex ih[3])
{
    const double *w = e->opt->weight;
    double in = cabs(ih[0] + ih[1] + ih[2]);
    double imax = fmax(cabs(ih[0]), fmax(cabs(ih[1]), cabs(ih[2])));
    return e->opt->level[l].weight * (w[KL_OBJ_NEUTRAL] * in / e->scale[l][KL_OBJ_NEUTRAL] +
                                      w[KL_OBJ_CURRENT] * imax / e->scale[l][KL_OBJ_CURRENT]);
}

/* Estimated score of every candidate (state x set in the network).
 * Returns 0 when a level does not solve (then no screening). */
static int screen_estimate(engine *e, const int *x, kl_rebalance_summary *sum)
{
    const kl_network *n = e->net;
    for (int c = 0; c < e->ncand; c++)
        e->cand[c].est = 0;
    engine_set_state(e, x);
    for (int l = 0; l < e->opt->nlevels; l++) {
        kl_errors_clear(&e->scratch);
        if (engine_solve_level(e, l, &sum[l], &e->scratch))
            return 0;
        const kl_complex *jh = kl_network_bus_j(n, n->source);
        for (int c = 0; c < e->ncand; c++) {
            kl_complex cur[3], ih[3];
            int dr = (e->cand[c].r - x[e->cand[c].item] + 3) % 3;
            kl_complex turn = cexp(-I * TWO_PI_3 * dr);
            item_current(e, e->cand[c].item, e->opt->level[l].scale, cur);
            for (int p = 0; p < 3; p++)
                ih[p] = jh[p] - cur[p];
            for (int p = 0; p < 3; p++)
                ih[(p + dr) % 3] += cur[p] * turn;
            e->cand[c].est += screen_term(e, l, ih);
        }
    }
    return 1;
}

static int cand_cmp(const void *a, const void *b)
{
    double x = ((const candidate *)a)->est, y = ((const candidate *)b)->est;
    return x < y ? -1 : x > y;
}

/* Candidates of one greedy step: every unmoved item to each allowed
 * rotation that keeps x admissible. */
static void greedy_candidates(engine *e, int *x)
{
    e->ncand = 0;
    for (int q = 0; q < e->nmov; q++) {
        int i = e->movable[q];
        if (x[i])
            continue;
        for (int r = 1; r < 3; r++) {
            x[i] = r;
            if ((e->rp->items[i].allowed & (1 << r)) && engine_admissible(e, x))
                e->cand[e->ncand++] = (candidate){i, r, 0};
        }
        x[i] = 0;
    }
}

/* Greedy construction from x (in/out): the best single move at a time,
 * while it improves the score.  *J is the score of x.  Every candidate taken
 * is judged by a full load flow; when the objectives allow it the candidates
 * are tried in the order of a first-order estimate, in blocks, and the step
 * ends after the first block that holds an improvement (the worst case tries
 * them all, as the plain greedy does). */
#define SCREEN_BLOCK 24
static void search_greedy(engine *e, int *x, double *J, kl_rebalance_summary *sum)
{
    int screen = screen_possible(e);
    for (int step = 0; step < e->opt->max_moves && !time_up(e); step++) {
        int bi = -1, br = 0;
        double bJ = *J;
        greedy_candidates(e, x);
        int ordered = screen && screen_estimate(e, x, sum);
        if (ordered)
            qsort(e->cand, (size_t)e->ncand, sizeof *e->cand, cand_cmp);
        for (int c = 0; c < e->ncand && !time_up(e); c++) {
            if (ordered && c > 0 && c % SCREEN_BLOCK == 0 && bi >= 0)
                break;
            int i = e->cand[c].item;
            x[i] = e->cand[c].r;
            double Jc = score_state(e, x, sum);
            x[i] = 0;
            if (Jc < bJ - 1e-12 * fabs(bJ)) {
                bJ = Jc;
                bi = i;
                br = e->cand[c].r;
            }
        }
        if (bi < 0)
            break;
        x[bi] = br;
        *J = bJ;
    }
    engine_set_state(e, x);
}

/* One random neighbour of x into y: change one item's rotation (to another
 * allowed one, 0 = undo); when that would exceed K moves, undo another moved
 * item as well (a swap).  Returns 0 when no neighbour exists. */
static int neighbour(engine *e, gsl_rng *rng, const int *x, int *y)
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
    if (x[i] == 0 && count_moves(e, y, NULL) > e->opt->max_moves) {
        int moved[64], nm = 0;
        for (int q = 0; q < e->nmov && nm < 64; q++)
            if (y[e->movable[q]] && e->movable[q] != i)
                moved[nm++] = e->movable[q];
        if (!nm)
            return 0;
        y[moved[gsl_rng_uniform_int(rng, (unsigned long)nm)]] = 0;
    }
    return engine_admissible(e, y);
}

/* Starting temperature: the mean worsening of a few random neighbours of x,
 * so that an average uphill step is first accepted with probability 1/e
 * (common practice). */
static double anneal_t0(engine *e, gsl_rng *rng, const int *x, double J, int *y,
                        kl_rebalance_summary *sum)
{
    double up = 0;
    int nup = 0;
    for (int s = 0; s < 20 && !time_up(e); s++) {
        if (!neighbour(e, rng, x, y))
            continue;
        double Jy = score_state(e, y, sum);
        if (isfinite(Jy) && Jy > J) {
            up += Jy - J;
            nup++;
        }
    }
    return nup ? up / nup : 0.1 * fabs(J) + 1e-12;
}

/* One annealing round from the best state x (in/out). */
#define ANNEAL_ROUNDS 3
static void anneal_round(engine *e, gsl_rng *rng, int *x, double *J, int *cur, int *y,
                         kl_rebalance_summary *sum, long steps)
{
    int n = e->rp->nitems;
    memcpy(cur, x, sizeof(int) * (size_t)n);
    double Jcur = *J, T0 = anneal_t0(e, rng, x, *J, y, sum);
    for (long s = 0; s < steps && !time_up(e); s++) {
        double T = T0 * pow(1e-3, (double)s / (double)steps);
        if (!neighbour(e, rng, cur, y))
            continue;
        double Jy = score_state(e, y, sum);
        if (!isfinite(Jy))
            continue;
        double d = Jy - Jcur;
        if (d <= 0 || gsl_rng_uniform(rng) < exp(-d / T)) {
            memcpy(cur, y, sizeof(int) * (size_t)n);
            Jcur = Jy;
            if (Jy < *J - 1e-12 * fabs(*J)) {
                memcpy(x, y, sizeof(int) * (size_t)n);
                *J = Jy;
            }
        }
    }
}

/* Simulated annealing from x (in/out: the best state found); *J its score.
 * ANNEAL_ROUNDS rounds of `steps` each, every round restarting from the best
 * state with its temperature falling geometrically from anneal_t0 to 1/1000
 * of it. */
static kl_status search_anneal(engine *e, int *x, double *J, kl_rebalance_summary *sum,
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
    engine_set_state(e, x);
done:
    if (rng)
        gsl_rng_free(rng);
    kl_free(cur);
    kl_free(y);
    return st;
}

/* Tries y = x with item i at ri (and item j at rj when j >= 0); keeps it in
 * x when it improves *J.  Returns 1 on improvement. */
static int try_change(engine *e, int *x, int *y, double *J, kl_rebalance_summary *sum, int i,
                      int ri, int j, int rj)
{
    int n = e->rp->nitems;
    memcpy(y, x, sizeof(int) * (size_t)n);
    y[i] = ri;
    if (j >= 0)
        y[j] = rj;
    if (!engine_admissible(e, y))
        return 0;
    double Jy = score_state(e, y, sum);
    if (!(Jy < *J - 1e-12 * fabs(*J)))
        return 0;
    memcpy(x, y, sizeof(int) * (size_t)n);
    *J = Jy;
    return 1;
}

/* Descent to a local optimum over single changes and, when there are few
 * items, pairs of changes (which include swapping one move for another). */
#define PAIR_LIMIT 40
static kl_status search_descent(engine *e, int *x, double *J, kl_rebalance_summary *sum)
{
    int n = e->rp->nitems, improved = 1;
    int *y = kl_malloc(sizeof(int) * ((size_t)n + 1));
    if (!y)
        return KL_ENOMEM;
    while (improved && !time_up(e)) {
        improved = 0;
        for (int p = 0; p < e->nmov && !improved; p++) {
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
    engine_set_state(e, x);
    kl_free(y);
    return KL_OK;
}

/* Size of the exhaustive space (product of option counts), capped. */
static double space_size(const engine *e)
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
static int digit_next(const engine *e, int i, int *r)
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
static void search_exhaustive(engine *e, int *x, double *J, kl_rebalance_summary *sum)
{
    int n = e->rp->nitems;
    int *y = x + n; /* caller gives 2n */
    memset(y, 0, sizeof(int) * (size_t)n);
    for (;;) {
        int q = 0;
        while (q < e->nmov && digit_next(e, e->movable[q], &y[e->movable[q]]))
            q++;
        if (q == e->nmov || time_up(e))
            break;
        if (!engine_admissible(e, y))
            continue;
        double Jy = score_state(e, y, sum);
        if (Jy < *J - 1e-12 * fabs(*J)) {
            *J = Jy;
            memcpy(x, y, sizeof(int) * (size_t)n);
        }
    }
    engine_set_state(e, x);
}

static int all_converged(const engine *e, const kl_rebalance_summary *sum)
{
    for (int l = 0; l < e->opt->nlevels; l++)
        if (!sum[l].converged)
            return 0;
    return 1;
}

/* Order of the m moves ids[] (to target[]) with the smallest sum of prefix
 * scores: dynamic programming over the 2^m subsets (each subset's state
 * solved once), best(S) = J(S) + min_{j in S} best(S - j).  A subset that
 * breaks a limit or the voltage range counts 1e6, so orders that pass
 * through it lose.  order[m] (out). */
#define ORDER_DP_MAX 10
static kl_status order_dp(engine *e, const int *ids, const int *target, int m, int *order,
                          kl_rebalance_summary *sum)
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
        double J = engine_admissible(e, x) ? score_state(e, x, sum) : INFINITY;
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
static int order_dp_affordable(engine *e, int m)
{
    if (m < 2 || m > ORDER_DP_MAX)
        return 0;
    double spent = now_s() - e->t0, per = spent / (double)(e->evals > 0 ? e->evals : 1);
    double left = e->opt->time_limit_s > 0 ? e->opt->time_limit_s - spent : INFINITY;
    return (double)((size_t)1 << m) * e->opt->nlevels * per <= fmax(2.0, left);
}

/* Appends the step "item bi to target[bi]" from state x (x updated);
 * bs[] holds the summaries of the state after it. */
static void step_record(engine *e, int *x, int bi, const int *target, kl_rebalance_plan *plan,
                        const kl_rebalance_summary *bs)
{
    kl_plan_step *s = &plan->steps[plan->nsteps++];
    s->item = bi;
    s->from_phases = kl_rephase_phases(e->rp, x, bi);
    x[bi] = target[bi];
    s->to_phases = kl_rephase_phases(e->rp, x, bi);
    s->rot = target[bi];
    s->cost = e->rp->items[bi].cost;
    s->voltage_ok = engine_voltage_ok(e, bs);
    s->score = engine_score(e, bs);
    memcpy(s->after, bs, sizeof *bs * (size_t)e->opt->nlevels);
}

/* The best next move of target[] from x (admissible states first; breaches
 * of the voltage range after the rest); its summaries into bs[]. */
static int greedy_next(engine *e, int *x, const int *target, kl_rebalance_summary *sum,
                       kl_rebalance_summary *bs)
{
    int bi = -1, bok = 0;
    double bJ = INFINITY;
    for (int i = 0; i < e->rp->nitems; i++) {
        if (!target[i] || x[i] == target[i])
            continue;
        x[i] = target[i];
        int ok = kl_rephase_state_ok(e->rp, x);
        double Jc = try_state(e, x, sum);
        if (!isfinite(Jc))
            Jc = all_converged(e, sum) ? engine_score(e, sum) + 1e6 : 1e300;
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
static kl_status plan_order(engine *e, const int *target, kl_rebalance_plan *plan,
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
            try_state(e, x, bs);
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
static kl_status run_search(engine *e, kl_rebalance_plan *plan, int *x, kl_errors *err)
{
    const kl_rebalance_options *opt = e->opt;
    kl_rebalance_summary sum[KL_REBAL_MAX_LEVELS];
    kl_status st = engine_base(e, plan->before, err);
    if (st)
        return st;
    double J0 = engine_score(e, plan->before), J = J0;
    plan->score_before = J0;
    plan->nmovable = e->nmov;
    double space = space_size(e);
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
        search_exhaustive(e, x, &J, sum);
    } else {
        search_greedy(e, x, &J, sum);
        plan->seconds_greedy = now_s() - e->t0;
        long steps = opt->anneal_steps >= 0 ? opt->anneal_steps
                                            : (50L * e->nmov > 1000 ? 50L * e->nmov : 1000);
        if ((st = search_anneal(e, x, &J, sum, steps)) || (st = search_descent(e, x, &J, sum)))
            return st;
    }
    memcpy(plan->rot, x, sizeof(int) * (size_t)e->rp->nitems);
    int *zero = x + e->rp->nitems;
    memset(zero, 0, sizeof(int) * (size_t)e->rp->nitems);
    engine_set_state(e, zero);
    if ((st = plan_order(e, plan->rot, plan, sum)))
        return st;
    engine_set_state(e, zero);
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
    gsl_set_error_handler_off();
    kl_status st = check_options(rp, opt, err);
    if (st)
        return st;
    plan_fill_head(plan, opt);
    engine e;
    memset(&e, 0, sizeof e);
    int *x = kl_calloc(2 * (size_t)rp->nitems + 1, sizeof(int));
    st = x ? engine_init(&e, rp, opt, err) : KL_ENOMEM;
    if (!st)
        st = run_search(&e, plan, x, err);
    if (x && e.rp) {
        memset(x, 0, sizeof(int) * (size_t)rp->nitems);
        engine_set_state(&e, x);
        plan->evaluations = e.evals;
        plan->seconds = now_s() - e.t0;
        plan->timed_out = e.timed_out;
    }
    engine_free(&e);
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
    engine e;
    kl_status st = engine_init(&e, rp, opt, err);
    int *zero = kl_calloc((size_t)rp->nitems + 1, sizeof(int));
    if (!st && !zero)
        st = KL_ENOMEM;
    if (!st) {
        engine_set_state(&e, rot);
        st = engine_solve(&e, out, err);
        engine_set_state(&e, zero);
    }
    engine_free(&e);
    kl_free(zero);
    return st;
}
