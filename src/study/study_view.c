/* kilter: the study's views over a solved load flow.  The phase view points
 * at kl_flow_result's arrays; the path view at kl_network's branch matrices
 * (V_to = A V_from - B I_to, I_from = c V_to + d I_to) and its solved
 * voltages, which include the internal nodes of distributed loads. */
#include "kilter/flow.h"
#include "kilter/network.h"
#include "kilter/study.h"
#include "kl_study.h"

void kl_study_view_free(kl_study_view *w)
{
    if (!w)
        return;
    kl_free(w->ld_load);
    kl_free(w->ld_bus);
    kl_free(w->ld_weight);
    kl_free(w->br_abd);
    w->ld_load = w->ld_bus = NULL;
    w->ld_weight = NULL;
    w->br_abd = NULL;
}

static void phases_view(const kl_flow_result *res, kl_study_phases *ph)
{
    ph->v = res->v;
    ph->v_base_ln = res->v_base_ln;
    ph->bus_phases = res->phases;
    ph->i = res->i;
    ph->i_neutral = res->i_neutral;
    ph->i_earth = res->i_earth;
    ph->s_load = res->s_load;
    ph->sec_solved = res->sec_solved;
    ph->i_recv = res->i_recv;
    ph->s_in = res->s_in;
}

static void paths_view(const kl_network *net, kl_study_paths *p)
{
    p->nbuses = net->nbuses;
    p->nfeeder_buses = net->nfeeder_buses;
    p->nbranches = net->nbranches;
    p->source = net->source;
    p->parent = net->parent;
    p->br_from = net->br_from;
    p->br_to = net->br_to;
    p->zsource = net->has_zsource ? net->zsource : NULL;
    p->v = net->v_valid ? net->vs : NULL; /* by sweep position (network.h) */
    p->v_pos = net->pos;
    p->nloads = net->nloads;
    p->ld_slot = net->ld_slot;
}

kl_status kl_study_view_init(kl_study_view *w, const kl_network *net,
                             const kl_flow_result *res, kl_errors *err)
{
    size_t n = (size_t)(net && net->nloads > 0 ? net->nloads : 1);
    w->ld_load = w->ld_bus = NULL;
    w->ld_weight = NULL;
    w->br_abd = NULL;
    if (!net || !res || !res->converged) {
        kl_errors_add(err, NULL, 0, 0, "study",
                      "the study needs a converged load flow: solve the feeder first");
        return KL_EARG;
    }
    phases_view(res, &w->ph);
    paths_view(net, &w->paths);
    w->ld_load = kl_malloc(n * sizeof *w->ld_load);
    w->ld_bus = kl_malloc(n * sizeof *w->ld_bus);
    w->ld_weight = kl_malloc(n * sizeof *w->ld_weight);
    if (!w->ld_load || !w->ld_bus || !w->ld_weight) {
        kl_study_view_free(w);
        kl_errors_add(err, NULL, 0, 0, "study", "out of memory");
        return KL_ENOMEM;
    }
    for (int k = 0; k < net->nloads; k++) {
        w->ld_load[k] = net->loads[k].load;
        w->ld_bus[k] = net->loads[k].bus;
        w->ld_weight[k] = net->loads[k].weight;
    }
    /* the branch matrices are read from the network when needed (the
     * contributors): a copy of every branch's A, B and d took 432 bytes a
     * branch, a fifth of the study's memory */
    w->paths.A = w->paths.B = w->paths.d = NULL;
    w->paths.net = net;
    w->paths.ld_load = w->ld_load;
    w->paths.ld_bus = w->ld_bus;
    w->paths.ld_weight = w->ld_weight;
    return KL_OK;
}
