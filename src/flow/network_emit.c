/* kilter: the network build's emission (network.c): the feeder tree's
 * energized sections become branches in sweep order, each line one branch
 * (two when a distributed load is lumped on it: Kersting ch. 3, from memory,
 * 2/3 of the load at a node a quarter of the length from the source end), each
 * device one; the buses take their sweep positions, phases and bases; then
 * the loop-closing links (radial: false) follow the tree's branches.
 *
 * The to-bus of tree branch k takes position k + 1 (network.h), and the tree's
 * positions are the order the branches are emitted in, so a bus's from-bus
 * record is read front to back (up[] never decreases). */
#include <complex.h>
#include <math.h>
#include <stdint.h>
#include <stdio.h>
#include <string.h>
#include "kl_flow.h"
#include "kilter/units.h"

static const double DEG = KL_PI / 180.0;

/* What the emission needs of a bus that feeds others, by tree position
 * (the order the emission reaches the buses as from-buses: reads go front
 * to back, not to bus-id arrays in file order). */
typedef struct {
    double base;         /* line-to-neutral base, V */
    int pos;             /* sweep position */
    unsigned char ph, split;
} walk_bus;

/* A bus's entries of the bus-id arrays, gathered while the emission visits
 * the buses in tree order: one scattered write of one record per bus
 * instead of one to each of five arrays; scatter() then fills the arrays
 * front to back. */
typedef struct {
    double base;
    int ph, parent, pos;
    unsigned char split;
} bus_rec;

/* The emission's scratch lives in js, mapped already (alloc: prefaulted)
 * and not read before the first solve, which starts from js zeroed again:
 * walk_bus records by tree position at js, bus_rec records by bus id after
 * them (16 + 24 bytes a bus, no fresh pages at a million buses).  That holds
 * while both fit in a bus's 3 js entries and bus_rec's alignment divides
 * nbuses * sizeof(walk_bus). */
_Static_assert(sizeof(walk_bus) + sizeof(bus_rec) <= 3 * sizeof(kl_complex),
               "walk scratch must fit in js");
_Static_assert(sizeof(walk_bus) % _Alignof(bus_rec) == 0 && _Alignof(walk_bus) <= _Alignof(kl_complex),
               "bus records start aligned after the from-bus records");

/* have: the phases of branch k's from-bus */
static kl_status phases_present(const kl_network *n, const kl_section *sc, int k, int have,
                                kl_errors *err)
{
    int missing = n->br_phases[k] & ~have;
    if (!missing)
        return KL_OK;
    char b1[4], b2[4], msg[384];
    snprintf(msg, sizeof msg, "carries phase(s) %s but bus %s upstream has only %s: "
             "give the section phases that exist at its source-side bus",
             kl_phases_str(missing, b1), n->feeder->buses[n->br_from[k]].name,
             kl_phases_str(have, b2));
    kl_network_err(err, n->feeder, sc->loc, "section", sc->name, msg);
    return KL_ETOPO;
}

static void scatter(kl_network *n, const bus_rec *br)
{
    for (int b = 0; b < n->nbuses; b++) {
        n->phases[b] = br[b].ph;
        n->v_base_ln[b] = br[b].base;
        n->split_phase[b] = br[b].split;
        n->parent[b] = br[b].parent;
        n->pos[b] = br[b].pos;
    }
}

/* Bus b placed at sweep position i, fed by branch k: its record (the
 * bus-id arrays, later) and its entries in the position-ordered arrays. */
static void bus_place(kl_network *n, bus_rec *br, int b, int i, int k, int ph, double base,
                      int split)
{
    br[b] = (bus_rec){base, ph, k, i, (unsigned char)split};
    n->order[i] = b;
    n->pos_phases[i] = (unsigned char)ph;
    n->pos_inv_base[i] = 1.0 / base;
}

/* Emits the branch(es) of the section at tree position i (i >= 1; split:
 * it carries a distributed load); *nbr and *nbus advance. */
static kl_status emit_section(kl_network *n, const kl_feeder_tree *t, int i, walk_bus *bq,
                              bus_rec *br, int split, int *nbr, int *nbus, kl_errors *err)
{
    const kl_feeder *f = n->feeder;
    int s = t->sec[i], from = t->order[t->up[i]], to = t->order[i];
    const kl_section *sc = &f->sections[s];
    const walk_bus up = bq[t->up[i]];
    int mask = sc->phases ? sc->phases : up.ph;
    kl_status st;
    if (sc->kind == KL_SEC_LINE &&
        (st = kl_network_line_check(n, sc, sc->construction, sc->phases, sc->length_m, &mask, err)))
        return st;
    int k = (*nbr)++;
    n->br_from[k] = from;
    n->br_to[k] = split ? *nbus : to;
    n->br_phases[k] = mask;
    n->br_section[k] = s;
    n->br_from_pos[k] = up.pos;
    n->sec_first[s] = k; /* sec_last follows after the walk: k, or k + 1 when split */
    if ((st = phases_present(n, sc, k, up.ph, err)))
        return st;
    if (sc->kind != KL_SEC_LINE) {
        /* devices (few) work on the bus-id arrays: their from-bus's entries
         * first (the arrays are filled for every bus after the walk) */
        n->phases[from] = up.ph;
        n->v_base_ln[from] = up.base;
        n->split_phase[from] = up.split;
        if ((st = kl_network_branch_device(n, k, sc, err)))
            return st;
        bus_place(n, br, to, k + 1, k, n->phases[to], n->v_base_ln[to], n->split_phase[to]);
        bq[i] = (walk_bus){n->v_base_ln[to], k + 1, (unsigned char)n->phases[to],
                               n->split_phase[to]};
        return KL_OK;
    }
    n->br_kind[k] = KL_BR_LINE;
    bus_place(n, br, n->br_to[k], k + 1, k, mask, up.base, up.split);
    if (!split) {
        bq[i] = (walk_bus){up.base, k + 1, (unsigned char)mask, up.split};
        return kl_network_line_fill(n, k, sc, sc->construction, sc->length_m * 1.0, err);
    }
    if ((st = kl_network_line_fill(n, k, sc, sc->construction, sc->length_m * KL_DIST_AT, err)))
        return st;
    int mid = (*nbus)++;
    int k2 = (*nbr)++;
    n->br_from[k2] = mid;
    n->br_to[k2] = to;
    n->br_phases[k2] = mask;
    n->br_section[k2] = s;
    n->br_kind[k2] = KL_BR_LINE;
    n->br_from_pos[k2] = k + 1;
    bus_place(n, br, to, k2 + 1, k2, mask, up.base, up.split);
    bq[i] = (walk_bus){up.base, k2 + 1, (unsigned char)mask, up.split};
    return kl_network_line_fill(n, k2, sc, sc->construction, sc->length_m * (1.0 - KL_DIST_AT), err);
}

/* A loop-closing line or closed switch between two buses already placed
 * (radial: false); it changes no bus's phases, base or parent. */
static kl_status emit_link(kl_network *n, int s, int *nbr, kl_errors *err)
{
    const kl_feeder *f = n->feeder;
    const kl_section *sc = &f->sections[s];
    int mask = sc->phases ? sc->phases : n->phases[sc->from] & n->phases[sc->to];
    kl_status st;
    if (sc->kind != KL_SEC_LINE && sc->kind != KL_SEC_SWITCH) {
        kl_network_err(err, f, sc->loc, "section", sc->name, "closes a loop through a transformer or "
                "regulator: a loop must close through a line or a switch");
        return KL_ETOPO;
    }
    if (sc->kind == KL_SEC_LINE &&
        (st = kl_network_line_check(n, sc, sc->construction, sc->phases, sc->length_m, &mask, err)))
        return st;
    if ((mask & ~n->phases[sc->from]) || (mask & ~n->phases[sc->to]) || !mask ||
        fabs(n->v_base_ln[sc->from] / n->v_base_ln[sc->to] - 1) > 0.01) {
        kl_network_err(err, f, sc->loc, "section", sc->name, "closes a loop between buses that do not "
                "both have its phases at the same nominal voltage: check the phases and the "
                "voltage levels on both sides of the loop");
        return KL_ETOPO;
    }
    int k = (*nbr)++;
    n->br_from[k] = sc->from;
    n->br_to[k] = sc->to;
    n->br_phases[k] = mask;
    n->br_section[k] = s;
    n->br_from_pos[k] = n->pos[sc->from];
    n->sec_first[s] = n->sec_last[s] = k;
    if (sc->kind == KL_SEC_LINE) {
        n->br_kind[k] = KL_BR_LINE;
        return kl_network_line_fill(n, k, sc, sc->construction, sc->length_m * 1.0, err);
    }
    n->br_kind[k] = KL_BR_SWITCH;
    size_t q = 9 * (size_t)(n->dev[k] = n->ndev++);
    kl_cm3_identity(n->a + q, mask);
    memcpy(n->d + q, n->a + q, 9 * sizeof(kl_complex));
    memcpy(n->A + q, n->a + q, 9 * sizeof(kl_complex));
    return KL_OK;
}

static void source_setup(kl_network *n, bus_rec *br)
{
    const kl_source *src = &n->feeder->source;
    int b = src->bus;
    double base = src->kv_ll * 1000.0 / sqrt(3.0);
    bus_place(n, br, b, 0, -1, KL_PH_ABC, base, 0);
    double vpu = src->v_pu > 0 ? src->v_pu : 1.0;
    for (int p = 0; p < 3; p++) {
        n->v_held[p] = vpu * base * cexp(I * (src->angle_deg - 120.0 * p) * DEG);
        n->v_neg[p] = vpu * base * cexp(I * (src->angle_deg + 120.0 * p) * DEG);
    }
    n->background = src->has_background ? src->background : 0;
    n->has_zsource = src->has_equivalent;
    /* Zs = z1 U + (z0 - z1)/3 (ones): the phase form of the sequence impedances */
    for (int i = 0; i < 9; i++)
        n->zsource[i] = (src->z0_ohm - src->z1_ohm) / 3.0 + (i % 4 == 0 ? src->z1_ohm : 0);
    kl_source_emf(n, NULL, n->v_emf); /* at no load */
}

/* Buses beyond open switches (tree positions nlive .. nreached - 1) are
 * de-energized: no branch feeds them, so they take the sweep positions after
 * the last tree branch's to-bus, with no phases (every solver and load pass
 * skips them; their voltages stay zero) and the base the loader gave them. */
static void place_dead(kl_network *n, const kl_feeder_tree *t, bus_rec *br, int nbr)
{
    const kl_feeder *f = n->feeder;
    int at = nbr + 1;
    for (int i = t->nlive; i < t->nreached; i++) {
        int b = t->order[i];
        double base = f->buses[b].base_kv_ll > 0 ? f->buses[b].base_kv_ll * 1e3 / sqrt(3.0)
                                                 : br[n->source].base;
        bus_place(n, br, b, at++, -1, 0, base, 0);
    }
}

kl_status kl_network_emit_tree(kl_network *n, const kl_feeder_tree *t, const unsigned char *has_dist,
                               int *mid_of, kl_errors *err)
{
    const kl_feeder *f = n->feeder;
    walk_bus *bq = (walk_bus *)(void *)n->js;
    bus_rec *br = (bus_rec *)(void *)((char *)n->js + (size_t)n->nbuses * sizeof *bq);
    KL_ASSERT(t->nreached == f->nbuses); /* every bus reached (kl_feeder_tree_check_islands):
                                          * each bus and branch array is written whole */
    KL_ASSERT((size_t)n->nbuses * (sizeof *bq + sizeof *br) <= 3 * (size_t)n->nbuses * sizeof n->js[0]);
    KL_ASSERT((uintptr_t)(void *)br % _Alignof(bus_rec) == 0);
    kl_status st = KL_OK;
    for (int s = 0; s < f->nsections; s++)
        n->sec_first[s] = -1;
    source_setup(n, br);
    bq[0] = (walk_bus){br[n->source].base, 0, KL_PH_ABC, 0};
    int nbr = 0, nbus = f->nbuses;
    for (int i = 1; i < t->nlive && !st; i++) {
        int s = t->sec[i];
        if (has_dist[s])
            mid_of[s] = nbus;
        st = emit_section(n, t, i, bq, br, has_dist[s], &nbr, &nbus, err);
    }
    if (st)
        return st;
    place_dead(n, t, br, nbr);
    KL_ASSERT(nbr == n->nbranches && nbus == n->nbuses &&
              nbr + 1 + (t->nreached - t->nlive) == n->nbuses);
    scatter(n, br);
    /* a split section's two branches are emitted one after the other */
    for (int s = 0; s < f->nsections; s++)
        n->sec_last[s] = n->sec_first[s] < 0 ? -1 : n->sec_first[s] + has_dist[s];
    memset(n->js, 0, 3 * (size_t)n->nbuses * sizeof n->js[0]);
    return KL_OK;
}

kl_status kl_network_emit_links(kl_network *n, const kl_feeder_tree *t, const unsigned char *has_dist,
                                kl_errors *err)
{
    const kl_feeder *f = n->feeder;
    kl_status st = KL_OK;
    int nbr = n->nbranches;
    for (int q = 0; q < n->nlinks && !st; q++) {
        int s = t->links[q];
        if (has_dist[s]) {
            const kl_section *sc = &f->sections[s];
            kl_network_err(err, f, sc->loc, "section", sc->name, "closes a loop and carries a "
                    "distributed load: put the load at a bus, or let another section close "
                    "the loop");
            return KL_ETOPO;
        }
        st = emit_link(n, s, &nbr, err);
    }
    return st;
}
