/* kilter: the network's loads (network.c): each spot load at its bus, each
 * distributed load lumped at a node a quarter of the section's length from
 * its source end (2/3 of it) and at the far end (1/3): the exact lumped-load
 * model (Kersting ch. 3, from memory), which reproduces both the voltage drop
 * and the loss of a uniformly distributed load; and the phases of loads and
 * capacitors against their buses'. */
#include <stdio.h>
#include "kl_flow.h"

kl_status kl_network_loads_place(kl_network *n, const int *mid_of, const kl_feeder_tree *t,
                             kl_errors *err)
{
    const kl_feeder *f = n->feeder;
    kl_status st = KL_OK;
    int m = 0;
    for (int l = 0; l < f->nloads; l++) {
        const kl_load *ld = &f->loads[l];
        for (int k = 0; k < 3; k++)
            n->ld_slot[3 * l + k] = k;
        if (ld->bus >= f->nbuses) {
            kl_network_err(err, f, ld->loc, "load", ld->name, "refers to an unknown bus");
            st = KL_EINPUT;
            continue;
        }
        if (ld->bus < 0 && n->sec_first[ld->section] < 0)
            continue; /* its section lies in an island, reported already */
        int bus = ld->bus >= 0 ? ld->bus : n->br_to[n->sec_last[ld->section]];
        if (!kl_feeder_tree_live(t, bus))
            continue;
        int need = ld->phases, have = n->phases[bus];
        if (ld->conn == KL_CONN_DELTA)
            need = ((need & 1) ? 3 : 0) | ((need & 2) ? 6 : 0) | ((need & 4) ? 5 : 0);
        if (need & ~have) {
            char b1[4], b2[4], msg[384];
            snprintf(msg, sizeof msg, "needs phase(s) %s that bus %s does not have (it has %s): "
                     "connect the load to phases the bus carries", kl_phases_str(need & ~have, b1),
                     f->buses[bus].name, kl_phases_str(have, b2));
            kl_network_err(err, f, ld->loc, "load", ld->name, msg);
            st = KL_EINPUT;
            continue;
        }
        if (ld->bus >= 0) {
            n->loads[m++] = (kl_net_load){l, bus, 1.0};
        } else {
            n->loads[m++] = (kl_net_load){l, mid_of[ld->section], KL_DIST_NEAR};
            n->loads[m++] = (kl_net_load){l, bus, 1.0 - KL_DIST_NEAR};
        }
    }
    n->nloads = m;
    return st;
}

kl_status kl_network_loads_check_capacitors(const kl_network *n, const kl_feeder_tree *t,
                                  kl_errors *err)
{
    const kl_feeder *f = n->feeder;
    kl_status st = KL_OK;
    for (int c = 0; c < f->ncapacitors; c++) {
        const kl_capacitor *cp = &f->capacitors[c];
        if (cp->bus < 0 || cp->bus >= f->nbuses) {
            kl_network_err(err, f, cp->loc, "capacitor", cp->name, "refers to an unknown bus");
            st = KL_EINPUT;
            continue;
        }
        int need = cp->phases, have = n->phases[cp->bus];
        if (cp->conn == KL_CONN_DELTA)
            need = ((need & 1) ? 3 : 0) | ((need & 2) ? 6 : 0) | ((need & 4) ? 5 : 0);
        if (kl_feeder_tree_live(t, cp->bus) && (need & ~have)) {
            kl_network_err(err, f, cp->loc, "capacitor", cp->name, "is connected to a phase its bus "
                    "does not have: give phases the bus carries");
            st = KL_EINPUT;
        }
    }
    return st;
}
