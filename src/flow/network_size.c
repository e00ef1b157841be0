/* kilter: the network build's sizes (network.c), counted from the feeder
 * before anything is allocated: sections split by a distributed load, device
 * slots, and the entries the lines' packed Z and Y take. */
#include "kl_flow.h"

/* Which sections carry a distributed load (has_dist[nsections]); *ndist
 * counts the loads that name a section. */
kl_status kl_network_size_distributed(const kl_feeder *f, unsigned char *has_dist, int *ndist,
                                   kl_errors *err)
{
    kl_status st = KL_OK;
    for (int l = 0; l < f->nloads; l++) {
        const kl_load *ld = &f->loads[l];
        if (ld->bus >= 0)
            continue;
        ++*ndist;
        if (ld->section < 0 || ld->section >= f->nsections) {
            kl_network_err(err, f, ld->loc, "load", ld->name, "names neither a bus nor a section");
            st = KL_EINPUT;
        } else if (f->sections[ld->section].kind != KL_SEC_LINE) {
            kl_network_err(err, f, ld->loc, "load", ld->name, "is distributed along a section that "
                    "is not a line: put it at a bus instead");
            st = KL_EINPUT;
        } else {
            has_dist[ld->section] = 1;
        }
    }
    return st;
}

/* Entries zy needs: 2 m^2 per closed line section (twice when a
 * distributed load splits it), m its phase count as kl_network_line_check takes it;
 * also the sections split (*nsplit) and the device slots (at most one per
 * section that is not a line, *ndev).  One pass over the sections in file
 * order. */
size_t kl_network_size_sections(const kl_feeder *f, const unsigned char *has_dist, int *nsplit,
                             int *ndev)
{
    size_t total = 0;
    *nsplit = *ndev = 0;
    for (int s = 0; s < f->nsections; s++) {
        const kl_section *sc = &f->sections[s];
        *nsplit += has_dist[s];
        *ndev += sc->kind != KL_SEC_LINE;
        if (!sc->closed || sc->kind != KL_SEC_LINE || sc->construction < 0 ||
            sc->construction >= f->nconstructions)
            continue;
        int mask = (sc->phases ? sc->phases : f->constructions[sc->construction].phases) & 7;
        int m = kl_phases_count(mask);
        total += 2 * (size_t)(m * m) * (has_dist[s] ? 2 : 1);
    }
    return total;
}
