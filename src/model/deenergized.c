/* kilter: the de-energized part of a feeder: the buses beyond open switches
 * (the feeder tree's positions nlive .. nreached - 1), the loads and
 * capacitors on them, which no command counts as connected, and the one note
 * every command gives about them. */
#include <complex.h>
#include <stdio.h>
#include <string.h>
#include "kl_model.h"

static const kl_feeder_tree *tree_of(const kl_feeder *f)
{
    return f->tree; /* built by the loader; a feeder assembled in code has none */
}

int kl_deenergized_bus(const kl_feeder *f, int b)
{
    const kl_feeder_tree *t = tree_of(f);
    return t && b >= 0 && b < f->nbuses && t->pos[b] >= t->nlive;
}

/* A spot load on a de-energized bus, or a distributed load on a section
 * whose buses are de-energized. */
int kl_deenergized_load(const kl_feeder *f, int l)
{
    const kl_load *ld = &f->loads[l];
    if (ld->bus >= 0)
        return kl_deenergized_bus(f, ld->bus);
    if (ld->section < 0 || ld->section >= f->nsections)
        return 0;
    const kl_section *s = &f->sections[ld->section];
    return kl_deenergized_bus(f, s->from) || kl_deenergized_bus(f, s->to);
}

int kl_deenergized_note(const kl_feeder *f, char *buf, size_t n)
{
    const kl_feeder_tree *t = tree_of(f);
    buf[0] = '\0';
    if (!t || t->nreached <= t->nlive)
        return 0;
    char sw[200] = "", names[300] = "";
    int nsw = 0, ndead = t->nreached - t->nlive, nld = 0;
    double kva = 0;
    for (int i = t->nlive; i < t->nreached; i++) {
        int s = t->sec[i];
        if (t->up[i] < t->nlive && nsw++ < 4) /* an open switch at the edge of the energized part */
            snprintf(sw + strlen(sw), sizeof sw - strlen(sw), "%s'%.40s'", nsw > 1 ? ", " : "",
                     f->sections[s].name ? f->sections[s].name : "?");
        if (i - t->nlive < 6)
            snprintf(names + strlen(names), sizeof names - strlen(names), "%s'%.40s'",
                     i > t->nlive ? ", " : "", f->buses[t->order[i]].name);
    }
    if (ndead > 6)
        snprintf(names + strlen(names), sizeof names - strlen(names), " and %d more", ndead - 6);
    if (nsw > 4)
        snprintf(sw + strlen(sw), sizeof sw - strlen(sw), " and %d more", nsw - 4);
    for (int l = 0; l < f->nloads; l++)
        if (kl_deenergized_load(f, l)) {
            nld++;
            kva += cabs(f->loads[l].s_va[0] + f->loads[l].s_va[1] + f->loads[l].s_va[2]) / 1e3;
        }
    snprintf(buf, n, "%d bus%s beyond open switch%s %s %s de-energized (0 V): %s; %d load%s "
             "(%.1f kVA) on %s not counted as connected", ndead, ndead == 1 ? "" : "es",
             nsw == 1 ? "" : "es", sw, ndead == 1 ? "is" : "are", names, nld, nld == 1 ? "" : "s",
             kva, ndead == 1 ? "it" : "them");
    return ndead;
}
