/* kilter, rebalancing layer (src/rebalance): the rephaser and the advisor's
 * search.  Visible to rebalance and the layers above.
 *
 * The advisor (kl_rebalance_run, rebalance.c) drives one evaluation engine
 * (search_engine.c: a state, one rotation 0..2 per item, scored by full load
 * flows) with one search strategy per file: greedy construction
 * (search_greedy.c, its candidates ordered by the first-order estimate of
 * search_screen.c), simulated annealing (search_anneal.c), descent to a local
 * optimum (search_descent.c), or exhaustive enumeration (search_exhaustive.c);
 * then the plan ordering (plan_order.c) turns the chosen moves into steps.
 * Every strategy takes the best state so far in x[nitems] (in/out) with its
 * score *J (in/out), and sum[nlevels] as workspace for the summaries. */
#ifndef KILTER_REBALANCE_INTERNAL_H
#define KILTER_REBALANCE_INTERNAL_H

#include <stdint.h>
#include "kl_flow.h"
#include "kilter/rebalance.h"

/* ---- search_engine.c: the evaluation engine. */
typedef struct {
    int item, r;             /* move item to rotation r */
    double est;              /* screening estimate of the score */
} kl_search_candidate;

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
    int plan_moves;          /* moves of the best state so far (the strategies keep it): the
                              * plan ordering after the search is reserved time for
                              * (kl_search_engine_time_up) */
    int *movable;            /* [nitems] ids of items that may move */
    int nmov;
    int auto_regs;           /* 1: some regulator controls its taps */
    kl_search_candidate *cand; /* [2*nitems] greedy candidates */
    int ncand;
    double *load0;           /* [nlevels*nsections] each section's loading in the feeder as
                                given (kl_loading.worst, NAN unrated), per level */
    int load0_set;           /* 1 once the base case has filled load0 */
    int *total;              /* [nitems] greedy workspace: each item's total rotation */
    unsigned char *sub_ok;   /* [nitems] greedy workspace: bit r, the item and those inside
                              * it keep off their forbidden phases turned r more */
    uint64_t *ckey;          /* [cache size] scores of states seen (few items only): */
    double *cval;            /* key = base-3 digits of the movable items + 1, 0 empty */
} kl_search_engine;

kl_status kl_search_engine_init(kl_search_engine *e, kl_rephaser *rp,
                                const kl_rebalance_options *opt, kl_errors *err);
void kl_search_engine_free(kl_search_engine *e);
/* Seconds since kl_search_engine_init (monotonic clock). */
double kl_search_engine_elapsed(const kl_search_engine *e);
/* Sets every item to rot[i] in the network and the voltage snapshots. */
void kl_search_engine_set_state(kl_search_engine *e, const int *rot);
/* Solves level l (or every level into sum[nlevels]) of the present state. */
kl_status kl_search_engine_solve_level(kl_search_engine *e, int l, kl_rebalance_summary *sum,
                                       kl_errors *err);
kl_status kl_search_engine_solve(kl_search_engine *e, kl_rebalance_summary *sum, kl_errors *err);
/* Base case: solves the feeder as given into base[], sets the scales and
 * voltage bounds. */
kl_status kl_search_engine_base(kl_search_engine *e, kl_rebalance_summary *base, kl_errors *err);
double kl_search_engine_score(const kl_search_engine *e, const kl_rebalance_summary *sum);
int kl_search_engine_voltage_ok(const kl_search_engine *e, const kl_rebalance_summary *sum);
/* The loading constraint, the one check of it a candidate or a plan step
 * goes through: 1 when no level of sum[] overloads a section that was not
 * overloaded in the feeder as given, or loads an overloaded one more. */
int kl_search_engine_loading_ok(const kl_search_engine *e, const kl_rebalance_summary *sum);
int kl_search_engine_converged(const kl_search_engine *e, const kl_rebalance_summary *sum);
/* 1 once the time limit has passed, less the time the plan ordering will
 * take (and reports progress on the way). */
int kl_search_engine_time_up(kl_search_engine *e);
/* Moves in rot[] (and their cost into *cost unless NULL). */
int kl_search_engine_count_moves(const kl_search_engine *e, const int *rot, double *cost);
/* 1 when rot[] keeps the move and cost limits, pins and forbidden phases. */
int kl_search_engine_admissible(const kl_search_engine *e, const int *rot);
/* Score of rot[] (INFINITY when it does not solve or breaks the voltage
 * range), its summaries in sum[]; leaves rot[] set.  _score_state answers
 * from the cache of states seen when it can (sum[] then not written). */
double kl_search_engine_try_state(kl_search_engine *e, const int *rot, kl_rebalance_summary *sum);
double kl_search_engine_score_state(kl_search_engine *e, const int *rot,
                                    kl_rebalance_summary *sum);

/* ---- search_screen.c: first-order estimate of the greedy candidates. */
int kl_search_screen_possible(const kl_search_engine *e);
int kl_search_screen_estimate(kl_search_engine *e, const int *x, kl_rebalance_summary *sum);

/* ---- search_greedy.c, search_anneal.c, search_descent.c,
 * search_exhaustive.c: the strategies (x, *J in/out; sum workspace). */
void kl_search_greedy(kl_search_engine *e, int *x, double *J, kl_rebalance_summary *sum);
kl_status kl_search_anneal(kl_search_engine *e, int *x, double *J, kl_rebalance_summary *sum,
                           long steps);
kl_status kl_search_descent(kl_search_engine *e, int *x, double *J, kl_rebalance_summary *sum);
/* x: [2*nitems], the second half workspace. */
void kl_search_exhaustive(kl_search_engine *e, int *x, double *J, kl_rebalance_summary *sum);
/* Number of states the exhaustive search would visit (capped near 1e15). */
double kl_search_exhaustive_space(const kl_search_engine *e);

/* ---- plan_order.c: the chosen moves target[nitems] as ordered plan steps. */
kl_status kl_plan_order(kl_search_engine *e, const int *target, kl_rebalance_plan *plan,
                        kl_rebalance_summary *sum);

#endif
