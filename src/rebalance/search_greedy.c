/* kilter: greedy construction of a rebalancing plan: from the present state,
 * the best single move at a time, while it improves the score J
 * (search_engine.c).  The first phase of the heuristic search; annealing and
 * descent improve on its plan. */
#include <math.h>
#include <stdlib.h>
#include "kilter/rebalance.h"
#include "kl_rebalance.h"

static int cand_cmp(const void *a, const void *b)
{
    double x = ((const kl_search_candidate *)a)->est, y = ((const kl_search_candidate *)b)->est;
    return x < y ? -1 : x > y;
}

/* Candidates of one greedy step, checked one by one against the whole state
 * (kl_search_engine_admissible, O(items) each): the way when x itself is
 * not admissible. */
static void greedy_candidates_full(kl_search_engine *e, int *x)
{
    for (int q = 0; q < e->nmov; q++) {
        int i = e->movable[q];
        if (x[i])
            continue;
        for (int r = 1; r < 3; r++) {
            x[i] = r;
            if ((e->rp->items[i].allowed & (1 << r)) && kl_search_engine_admissible(e, x))
                e->cand[e->ncand++] = (kl_search_candidate){i, r, 0};
        }
        x[i] = 0;
    }
}

/* Candidates of one greedy step: every unmoved item to each allowed
 * rotation that keeps x admissible, in time linear in the items (checking
 * each candidate against the whole state made a step O(items^2): 100,000
 * taps took minutes before the first load flow).  From an admissible x,
 * moving item i by r changes only the count and cost of the moves, i's own
 * rotation, and the total rotation of i and of the items inside it, each by
 * r; sub_ok[i] bit r says none of those lands on a phase forbidden to it.
 * It is gathered inner to outer in one backward pass, items being stored
 * outer before inner (kl_rephaser_alloc). */
static void greedy_candidates(kl_search_engine *e, int *x)
{
    const kl_rephaser *rp = e->rp;
    const kl_rebalance_options *o = e->opt;
    int n = rp->nitems;
    double cost;
    e->ncand = 0;
    if (!kl_search_engine_admissible(e, x)) {
        greedy_candidates_full(e, x);
        return;
    }
    int moves = kl_search_engine_count_moves(e, x, &cost);
    if (moves + 1 > o->max_moves)
        return;
    for (int i = 0; i < n; i++) {
        int out = rp->items[i].outer;
        KL_ASSERT(out < i); /* outer before inner: the forward pass sees the outer total first */
        e->total[i] = (x[i] + (out >= 0 ? e->total[out] : 0)) % 3;
        e->sub_ok[i] = 6; /* bits 1 and 2 */
    }
    for (int i = n - 1; i >= 0; i--) {
        const kl_rephase_item *it = &rp->items[i];
        for (int r = 1; r < 3; r++) {
            int t = (e->total[i] + r) % 3;
            if (t && (kl_phases_rotate(it->phases, t) & it->forbidden))
                e->sub_ok[i] &= (unsigned char)~(1u << r);
        }
        if (it->outer >= 0)
            e->sub_ok[it->outer] &= e->sub_ok[i];
    }
    for (int q = 0; q < e->nmov; q++) {
        int i = e->movable[q];
        const kl_rephase_item *it = &rp->items[i];
        if (x[i] || it->pinned)
            continue;
        if (o->max_cost > 0 && cost + it->cost > o->max_cost + 1e-9)
            continue;
        for (int r = 1; r < 3; r++)
            if ((it->allowed & (1 << r)) && (e->sub_ok[i] >> r & 1))
                e->cand[e->ncand++] = (kl_search_candidate){i, r, 0};
    }
}

/* Greedy construction from x (in/out): the best single move at a time,
 * while it improves the score.  *J is the score of x.  Every candidate taken
 * is judged by a full load flow; when the objectives allow it the candidates
 * are tried in the order of a first-order estimate (search_screen.c), in
 * blocks, and the step ends after the first block that holds an improvement
 * (the worst case tries them all, as the plain greedy does). */
#define SCREEN_BLOCK 24
void kl_search_greedy(kl_search_engine *e, int *x, double *J, kl_rebalance_summary *sum)
{
    int screen = kl_search_screen_possible(e);
    for (int step = 0; step < e->opt->max_moves && !kl_search_engine_time_up(e); step++) {
        int bi = -1, br = 0;
        double bJ = *J;
        greedy_candidates(e, x);
        int ordered = screen && kl_search_screen_estimate(e, x, sum);
        if (ordered)
            qsort(e->cand, (size_t)e->ncand, sizeof *e->cand, cand_cmp);
        for (int c = 0; c < e->ncand && !kl_search_engine_time_up(e); c++) {
            if (ordered && c > 0 && c % SCREEN_BLOCK == 0 && bi >= 0)
                break;
            int i = e->cand[c].item;
            x[i] = e->cand[c].r;
            double Jc = kl_search_engine_score_state(e, x, sum);
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
        e->plan_moves = step + 1;
    }
    kl_search_engine_set_state(e, x);
}
