/* kilter: the rebalancing plan record and the summary of one solved state.
 *
 * Summary quantities:
 *   residual current  |Ia + Ib + Ic| = 3 |I0| (Fortescue), the current that
 *                      returns by the neutral and the earth;
 *   VUF               |V2| / |V1| of the phase-to-neutral voltages at every
 *                      three-phase bus (IEC 61000-4-30 definition, as in
 *                      unbalance.h);
 *   losses            the real part of the sum of the sections' losses;
 *   voltage range     |V| / V_base over every energized phase of every bus. */
#include <math.h>
#include <string.h>
#include "kilter/rebalance.h"
#include "kilter/sequence.h"
#include "kl_rebalance.h"

kl_status kl_rebalance_plan_alloc(int nitems, int max_steps, kl_rebalance_plan **out)
{
    if (!out || nitems < 0 || max_steps < 0)
        return KL_EARG;
    *out = NULL;
    kl_rebalance_plan *p = kl_calloc(1, sizeof *p);
    if (!p)
        return KL_ENOMEM;
    p->nitems = nitems;
    p->cap_steps = max_steps;
    p->rot = kl_calloc((size_t)nitems + 1, sizeof(int));
    p->steps = kl_calloc((size_t)max_steps + 1, sizeof(kl_plan_step));
    if (!p->rot || !p->steps) {
        kl_rebalance_plan_free(p);
        return KL_ENOMEM;
    }
    *out = p;
    return KL_OK;
}

void kl_rebalance_plan_free(kl_rebalance_plan *p)
{
    if (!p)
        return;
    kl_free(p->rot);
    kl_free(p->steps);
    kl_free(p);
}

static void summarize_voltages(const kl_network *n, kl_rebalance_summary *s)
{
    s->v_min_pu = INFINITY;
    s->v_max_pu = -INFINITY;
    s->v_min_bus = s->v_max_bus = -1;
    s->vuf_max = 0;
    s->vuf_bus = -1;
    for (int b = 0; b < n->nfeeder_buses; b++) {
        const kl_complex *v = kl_network_bus_v(n, b);
        double base = n->v_base_ln[b];
        if (!(base > 0) || !n->phases[b])
            continue;
        for (int p = 0; p < 3; p++) {
            if (!(n->phases[b] & (1 << p)))
                continue;
            double x = cabs(v[p]) / base;
            if (x < s->v_min_pu) {
                s->v_min_pu = x;
                s->v_min_bus = b;
            }
            if (x > s->v_max_pu) {
                s->v_max_pu = x;
                s->v_max_bus = b;
            }
        }
        if (n->phases[b] != KL_PH_ABC)
            continue;
        kl_complex s012[3];
        kl_seq_from_phase(v, s012);
        double v1 = cabs(s012[1]);
        if (v1 > 0 && cabs(s012[2]) / v1 > s->vuf_max) {
            s->vuf_max = cabs(s012[2]) / v1;
            s->vuf_bus = b;
        }
    }
    if (s->v_min_bus < 0)
        s->v_min_pu = s->v_max_pu = 0;
}

/* Real losses: power in at every branch's sending end minus power out at its
 * receiving end (the sum flow.c forms per section). */
static double network_losses(const kl_network *n)
{
    double w = 0;
    for (int k = 0; k < n->nbranches; k++) {
        const kl_complex *vf = kl_network_bus_v(n, n->br_from[k]);
        const kl_complex *vt = kl_network_bus_v(n, n->br_to[k]);
        const kl_complex *jt = kl_network_i_to(n, k);
        kl_complex jf[3];
        kl_sweep_i_from(n, k, jf);
        for (int p = 0; p < 3; p++)
            w += creal(vf[p] * conj(jf[p]) - vt[p] * conj(jt[p]));
    }
    return w;
}

void kl_rebalance_summarize(const kl_network *n, int converged, int neutral_section,
                            kl_rebalance_summary *s)
{
    memset(s, 0, sizeof *s);
    s->converged = converged;
    const kl_complex *jh = kl_network_bus_j(n, n->source);
    kl_complex sum = 0;
    for (int p = 0; p < 3; p++) {
        s->i_head[p] = cabs(jh[p]);
        sum += jh[p];
    }
    s->i_residual = cabs(sum);
    s->i_residual_at = s->i_residual;
    if (neutral_section >= 0 && neutral_section < n->feeder->nsections) {
        int k = n->sec_first[neutral_section];
        kl_complex i[3] = {0, 0, 0};
        if (k >= 0)
            kl_sweep_i_from(n, k, i);
        s->i_residual_at = k >= 0 ? cabs(i[0] + i[1] + i[2]) : 0;
    }
    s->losses_w = network_losses(n);
    summarize_voltages(n, s);
    s->obj[KL_OBJ_NEUTRAL] = s->i_residual_at;
    s->obj[KL_OBJ_VUF] = s->vuf_max;
    s->obj[KL_OBJ_LOSSES] = s->losses_w;
    s->obj[KL_OBJ_CURRENT] = fmax(s->i_head[0], fmax(s->i_head[1], s->i_head[2]));
    s->obj[KL_OBJ_DROP] = 1.0 - s->v_min_pu;
}
