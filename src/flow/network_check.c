/* kilter: the network build's checks of its input (network.c): ids the
 * build relies on, and buses it cannot solve (beyond an open switch).  Loops,
 * islands and device direction are the feeder tree's checks
 * (src/model/feeder_tree.c). */
#include <math.h>
#include <stdio.h>
#include "kl_flow.h"

/* Checks ids the rest of the build relies on (the loader checks them too). */
kl_status kl_network_check_ids(const kl_feeder *f, kl_errors *err)
{
    kl_status st = KL_OK;
    if (f->nbuses <= 0 || f->source.bus < 0 || f->source.bus >= f->nbuses) {
        kl_network_err(err, f, f->source.loc, "source", "", "the source bus is missing or unknown: "
                "name an existing bus in `source: bus:`");
        return KL_EINPUT;
    }
    if (!(f->source.kv_ll > 0) || !isfinite(f->source.kv_ll) || !(f->source.v_pu >= 0) ||
        !isfinite(f->source.v_pu)) {
        kl_network_err(err, f, f->source.loc, "source", "", "needs a positive nominal voltage and a "
                "finite regulated voltage (e.g. nominal_voltage: 12.47 kV, regulated_voltage: 1.0 pu)");
        st = KL_EINPUT;
    }
    for (int s = 0; s < f->nsections; s++) {
        const kl_section *sc = &f->sections[s];
        if (sc->from < 0 || sc->from >= f->nbuses || sc->to < 0 || sc->to >= f->nbuses) {
            kl_network_err(err, f, sc->loc, "section", sc->name, "refers to an unknown bus");
            st = KL_EINPUT;
        } else if (sc->from == sc->to) {
            kl_network_err(err, f, sc->loc, "section", sc->name,
                    "joins a bus to itself: give two different buses in from/to");
            st = KL_EINPUT;
        }
    }
    return st;
}

/* The first open section on the path from the energized part to position i
 * of the tree (i beyond an open switch). */
static const char *open_switch_above(const kl_feeder_tree *t, const kl_feeder *f, int i)
{
    const char *name = "?";
    for (; i >= t->nlive; i = t->up[i])
        if (!f->sections[t->sec[i]].closed)
            name = f->sections[t->sec[i]].name;
    return name;
}

kl_status kl_network_check_energized(const kl_feeder_tree *t, const kl_feeder *f, kl_errors *err)
{
    int count = 0;
    if (t->nlive == t->nreached)
        return KL_OK;
    for (int b = 0; b < f->nbuses; b++) {
        int i = t->pos[b];
        if (i < t->nlive)
            continue; /* energized, or not reached at all (kl_feeder_tree_check_islands) */
        if (count++ >= 5)
            continue;
        char msg[512];
        snprintf(msg, sizeof msg, "is not connected to the source bus %s (island beyond open "
                 "switch %s): the load flow solves energized buses only; close the switch or "
                 "remove the buses beyond it", f->buses[f->source.bus].name,
                 open_switch_above(t, f, i));
        kl_network_err(err, f, f->buses[b].loc, "bus", f->buses[b].name, msg);
    }
    if (count > 5)
        kl_errors_add(err, f->path, 0, 0, NULL, "%d more buses are not connected to the source",
                      count - 5);
    return KL_ETOPO;
}
