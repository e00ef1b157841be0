/* kilter: screening of the greedy search's candidates by a first-order
 * estimate, so that the likely best moves are solved first.
 *
 * Screening applies to objectives read at the head from the head currents
 * alone (neutral at the head, largest head current): a move by dr steps
 * turns the item's current, I'[p + dr] = I[p] exp(-j 120 dr deg), and the
 * head currents change by I' - I, to first order.  The estimate only orders
 * the candidates; every candidate taken is still judged by a full load flow
 * (search_greedy.c). */
#include <math.h>
#include <string.h>
#include "kilter/rebalance.h"
#include "kl_rebalance.h"

static const double TWO_PI_3 = 2.0943951023931954923; /* 120 degrees */

/* Current item i draws through its tap at the present solution, cur[3]:
 * a lateral's tap-branch sending-end current, or a spot load's entries at
 * their present voltages (taken as constant power). */
static void item_current(const kl_search_engine *e, int i, double scale, kl_complex cur[3])
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

/* 1 when every weighted objective is read from the head currents alone. */
int kl_search_screen_possible(const kl_search_engine *e)
{
    const double *w = e->opt->weight;
    return e->opt->neutral_section < 0 && w[KL_OBJ_VUF] == 0 && w[KL_OBJ_LOSSES] == 0 &&
           w[KL_OBJ_DROP] == 0;
}

static double screen_term(const kl_search_engine *e, int l, const kl_complex ih[3])
{
    const double *w = e->opt->weight;
    double in = cabs(ih[0] + ih[1] + ih[2]);
    double imax = fmax(cabs(ih[0]), fmax(cabs(ih[1]), cabs(ih[2])));
    return e->opt->level[l].weight * (w[KL_OBJ_NEUTRAL] * in / e->scale[l][KL_OBJ_NEUTRAL] +
                                      w[KL_OBJ_CURRENT] * imax / e->scale[l][KL_OBJ_CURRENT]);
}

/* Estimated score of every candidate (state x set in the network).
 * Returns 0 when a level does not solve (then no screening). */
int kl_search_screen_estimate(kl_search_engine *e, const int *x, kl_rebalance_summary *sum)
{
    const kl_network *n = e->net;
    for (int c = 0; c < e->ncand; c++)
        e->cand[c].est = 0;
    kl_search_engine_set_state(e, x);
    for (int l = 0; l < e->opt->nlevels; l++) {
        kl_errors_clear(&e->scratch);
        if (kl_search_engine_solve_level(e, l, &sum[l], &e->scratch))
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
