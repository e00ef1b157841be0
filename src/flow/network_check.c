/* kilter: the network build's checks of its input (network.c): ids the
 * build relies on.  Loops, islands and device direction are the feeder
 * tree's checks (src/model/feeder_tree.c); buses beyond an open switch are
 * de-energized, not an error (network_emit.c). */
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
