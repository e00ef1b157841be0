/* kilter: moving laterals and loads between phases inside an analysed
 * network.
 *
 * A move relabels phases cyclically by r steps (P_r: slot p -> p + r mod 3).
 * For a branch whose source side is relabelled by rf and load side by rt the
 * generalized matrices of Kersting's branch model (network.h) become
 *   a, b, c, d  ->  P_rf M P_rt^T     (rows source side, columns load side)
 *   A           ->  P_rt M P_rf^T     (rows load side, columns source side)
 *   B, Z, Y     ->  P_rt M P_rt^T     (a line's Z and Y: unpacked, relabelled,
 *                                      packed again; network.h)
 * which is the same network with its wires renamed, so the load flow of the
 * moved feeder is exact, not an estimate.  rf = rt = r everywhere in a
 * lateral.  (The code can relabel only the primary side of a center-tap
 * transformer, whose secondary legs are not phases, but such laterals are
 * not offered: the feeder file and the load flow name those legs differently,
 * so the moved feeder could not be written back.) */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/rebalance.h"
#include "kl_rebalance.h"
#include "kilter/units.h"

static const double PI = KL_PI;

/* Phases a load entry set occupies at its bus (delta entry k joins k, k+1). */
static int load_bus_mask(const kl_load *ld)
{
    if (ld->conn != KL_CONN_DELTA)
        return ld->phases & KL_PH_ABC;
    int need = 0;
    for (int k = 0; k < 3; k++)
        if (ld->phases & (1 << k))
            need |= (1 << k) | (1 << ((k + 1) % 3));
    return need;
}

/* Growable int/byte lists used only while finding the items. */
typedef struct {
    int *v;
    unsigned char *f;
    int n, cap;
} list;

static int list_push(list *l, int v, unsigned char f)
{
    if (l->n == l->cap) {
        int cap = l->cap ? 2 * l->cap : 256;
        int *nv = kl_realloc(l->v, sizeof(int) * (size_t)cap);
        if (!nv)
            return -1;
        l->v = nv;
        unsigned char *nf = kl_realloc(l->f, (size_t)cap);
        if (!nf)
            return -1;
        l->f = nf;
        l->cap = cap;
    }
    l->v[l->n] = v;
    l->f[l->n++] = f;
    return 0;
}

/* Work state of kl_rephaser_alloc, freed at its one exit. */
typedef struct {
    kl_rephaser *rp;
    const kl_network *net;
    unsigned char *ct_below; /* [nbuses] at or below a center-tap secondary */
    int *owner;              /* [nbuses] innermost lateral item holding the bus, -1 */
    int *bus_loads_start;    /* [nbuses+1] network loads by bus (CSR) */
    int *bus_loads;          /* [net nloads] feeder load ids */
    unsigned char *ld_seen;  /* [feeder nloads] scratch */
    int *bus_br_start;       /* [nbuses+1] branches by their source-side bus (CSR) */
    int *bus_br;             /* [nbranches] branch ids, ascending within a bus */
    int *cap_first;          /* [nbuses] lowest capacitor id at the bus, -1 */
    int *sub;                /* [nbranches] scratch: the branches of one subtree */
    list br, bus, ld;
    int cap_items, cap_skipped;
} finder;

static kl_status finder_init(finder *w)
{
    const kl_network *n = w->net;
    size_t nb = (size_t)n->nbuses;
    w->ct_below = kl_calloc(nb, 1);
    w->owner = kl_malloc(sizeof(int) * nb);
    w->bus_loads_start = kl_calloc(nb + 1, sizeof(int));
    w->bus_loads = kl_calloc((size_t)n->nloads + 1, sizeof(int));
    w->ld_seen = kl_calloc((size_t)n->feeder->nloads + 1, 1);
    w->bus_br_start = kl_calloc(nb + 1, sizeof(int));
    w->bus_br = kl_calloc((size_t)n->nbranches + 1, sizeof(int));
    w->cap_first = kl_malloc(sizeof(int) * (nb + 1));
    w->sub = kl_calloc((size_t)n->nbranches + 1, sizeof(int));
    if (!w->ct_below || !w->owner || !w->bus_loads_start || !w->bus_loads ||
        !w->ld_seen || !w->bus_br_start || !w->bus_br || !w->cap_first || !w->sub)
        return KL_ENOMEM;
    for (size_t b = 0; b < nb; b++)
        w->owner[b] = w->cap_first[b] = -1;
    /* branches by source-side bus, so that a lateral's subtree is walked in
     * its own size (subtree_collect), not by scanning every later branch */
    for (int k = 0; k < n->nbranches; k++)
        w->bus_br_start[n->br_from[k] + 1]++;
    for (size_t b = 0; b < nb; b++)
        w->bus_br_start[b + 1] += w->bus_br_start[b];
    for (int k = 0; k < n->nbranches; k++)
        w->bus_br[w->bus_br_start[n->br_from[k]] + w->sub[n->br_from[k]]++] = k;
    memset(w->sub, 0, sizeof(int) * (size_t)n->nbranches);
    for (int c = n->feeder->ncapacitors - 1; c >= 0; c--) {
        int b = n->feeder->capacitors[c].bus;
        if (b >= 0 && b < n->nbuses)
            w->cap_first[b] = c;
    }
    for (int k = 0; k < n->nbranches; k++) {
        int to = n->br_to[k];
        const kl_section *sc = &n->feeder->sections[n->br_section[k]];
        if (w->ct_below[n->br_from[k]])
            w->ct_below[to] = 1;
        else if (n->br_kind[k] == KL_BR_TRANSFORMER && sc->device >= 0 &&
                 n->feeder->transformers[sc->device].low == KL_WINDING_CENTER_TAP)
            w->ct_below[to] = 1;
    }
    for (int m = 0; m < n->nloads; m++)
        w->bus_loads_start[n->loads[m].bus + 1]++;
    for (size_t b = 0; b < nb; b++)
        w->bus_loads_start[b + 1] += w->bus_loads_start[b];
    int *fill = kl_calloc(nb + 1, sizeof(int));
    if (!fill)
        return KL_ENOMEM;
    for (int m = 0; m < n->nloads; m++) {
        int b = n->loads[m].bus;
        w->bus_loads[w->bus_loads_start[b] + fill[b]++] = n->loads[m].load;
    }
    kl_free(fill);
    return KL_OK;
}

static void finder_free(finder *w)
{
    kl_free(w->ct_below);
    kl_free(w->owner);
    kl_free(w->bus_loads_start);
    kl_free(w->bus_loads);
    kl_free(w->ld_seen);
    kl_free(w->bus_br_start);
    kl_free(w->bus_br);
    kl_free(w->cap_first);
    kl_free(w->sub);
    kl_free(w->br.v);
    kl_free(w->br.f);
    kl_free(w->bus.v);
    kl_free(w->bus.f);
    kl_free(w->ld.v);
    kl_free(w->ld.f);
}

static kl_rephase_item *item_new(finder *w)
{
    kl_rephaser *rp = w->rp;
    if (rp->nitems == w->cap_items) {
        int cap = w->cap_items ? 2 * w->cap_items : 64;
        kl_rephase_item *ni = kl_realloc(rp->items, sizeof *ni * (size_t)cap);
        if (!ni)
            return NULL;
        rp->items = ni;
        w->cap_items = cap;
    }
    kl_rephase_item *it = &rp->items[rp->nitems];
    memset(it, 0, sizeof *it);
    it->section = it->load = it->outer = -1;
    it->allowed = 1;
    return it;
}

static kl_status skip_note(finder *w, const char *fmt, const char *a, const char *b)
{
    kl_rephaser *rp = w->rp;
    if (rp->nskipped == w->cap_skipped) {
        int cap = w->cap_skipped ? 2 * w->cap_skipped : 16;
        char(*ns)[160] = kl_realloc(rp->skipped, sizeof *ns * (size_t)cap);
        if (!ns)
            return KL_ENOMEM;
        rp->skipped = ns;
        w->cap_skipped = cap;
    }
    snprintf(rp->skipped[rp->nskipped++], 160, fmt, a, b);
    return KL_OK;
}

/* Pins, forbidden phases, cost and kVA from the loads an item rotates. */
static void item_loads_summary(finder *w, kl_rephase_item *it)
{
    const kl_feeder *f = w->net->feeder;
    it->cost = 0;
    for (int q = 0; q < it->nld; q++) {
        const kl_load *ld = &f->loads[w->ld.v[it->first_ld + q]];
        it->pinned |= ld->pinned != 0;
        it->forbidden |= ld->forbidden & KL_PH_ABC;
        double c = ld->move_cost > 0 ? ld->move_cost : 1.0;
        if (c > it->cost)
            it->cost = c;
        for (int k = 0; k < 3; k++)
            if (ld->phases & (1 << k))
                it->kva += cabs(ld->s_va[k]) / 1000.0;
    }
    if (it->nld == 0)
        it->cost = 1.0;
}

static int int_cmp(const void *a, const void *b)
{
    int x = *(const int *)a, y = *(const int *)b;
    return (x > y) - (x < y);
}

/* The branches of the subtree below the tap branch k0, k0 first, in
 * ascending (sweep) order, into w->sub; returns their count.  A walk down the
 * source-side lists, then a sort: O(s log s) for a subtree of s branches. */
static int subtree_branches(finder *w, int k0)
{
    const kl_network *n = w->net;
    int ns = 0, done = 0;
    w->sub[ns++] = k0;
    while (done < ns) {
        int to = n->br_to[w->sub[done++]];
        for (int q = w->bus_br_start[to]; q < w->bus_br_start[to + 1]; q++) {
            KL_ASSERT(w->bus_br[q] > k0); /* sweep order: below k0 means after it */
            w->sub[ns++] = w->bus_br[q];
        }
    }
    qsort(w->sub + 1, (size_t)(ns - 1), sizeof(int), int_cmp);
    return ns;
}

/* Marks the subtree below the tap branch k0 and records its branches, buses
 * and loads, in sweep order.  Returns 1 when the lateral holds something a
 * rotation cannot carry (a regulator or a capacitor), with *why naming it. */
static int subtree_collect(finder *w, kl_rephase_item *it, int k0, const char **why,
                           const char **what)
{
    const kl_network *n = w->net;
    const kl_feeder *f = n->feeder;
    int blocked = 0, ns = subtree_branches(w, k0);
    it->first_br = w->br.n;
    it->first_bus = w->bus.n;
    it->first_ld = w->ld.n;
    for (int j = 0; j < ns; j++) {
        int k = w->sub[j];
        int to = n->br_to[k];
        unsigned char side = (k == k0 || !w->ct_below[n->br_from[k]] ? 1 : 0) |
                             (!w->ct_below[to] ? 2 : 0);
        if (list_push(&w->br, k, side) || list_push(&w->bus, to, !w->ct_below[to]))
            return -1;
        if (n->br_kind[k] == KL_BR_REGULATOR) {
            blocked = 1;
            *why = "holds regulator section %s";
            *what = f->sections[n->br_section[k]].name;
        }
        if (w->ct_below[to] && !w->ct_below[n->br_from[k]]) {
            /* the file gives a center-tap secondary the primary's phase, the
             * load flow its legs as slots a and b: no relabelling keeps both */
            blocked = 1;
            *why = "holds center-tap transformer section %s (move it by hand)";
            *what = f->sections[n->br_section[k]].name;
        }
        if (w->ct_below[to])
            continue;
        for (int q = w->bus_loads_start[to]; q < w->bus_loads_start[to + 1]; q++) {
            int l = w->bus_loads[q];
            if (w->ld_seen[l])
                continue;
            w->ld_seen[l] = 1;
            if (list_push(&w->ld, l, 0))
                return -1;
        }
    }
    it->nbr = w->br.n - it->first_br;
    it->nbus = w->bus.n - it->first_bus;
    it->nld = w->ld.n - it->first_ld;
    /* the lowest-numbered capacitor on a bus of the subtree (not below a
     * center tap), as a scan of every capacitor would name */
    int cap = -1;
    for (int j = 0; j < ns && !blocked; j++) {
        int b = n->br_to[w->sub[j]];
        if (!w->ct_below[b] && w->cap_first[b] >= 0 && (cap < 0 || w->cap_first[b] < cap))
            cap = w->cap_first[b];
    }
    if (cap >= 0 && !blocked) {
        blocked = 1;
        *why = "holds capacitor %s (move it by hand)";
        *what = f->capacitors[cap].name;
    }
    for (int q = 0; q < it->nld; q++)
        w->ld_seen[w->ld.v[it->first_ld + q]] = 0;
    return blocked;
}

/* A lateral item for the tap branch k0 when its phasing qualifies. */
static kl_status lateral_try(finder *w, int k0)
{
    const kl_network *n = w->net;
    const kl_feeder *f = n->feeder;
    int s = n->br_section[k0];
    int from = n->br_from[k0], M = n->br_phases[k0], P = n->phases[from];
    int nm = kl_phases_count(M), np = kl_phases_count(P);
    if (n->sec_first[s] != k0 || w->ct_below[from] || n->br_kind[k0] == KL_BR_REGULATOR)
        return KL_OK;
    if (!((nm == 1 && np >= 2) || (nm == 2 && np == 3)))
        return KL_OK;
    kl_rephase_item *it = item_new(w);
    if (!it)
        return KL_ENOMEM;
    const char *why = NULL, *what = NULL;
    int nbr0 = w->br.n, nbus0 = w->bus.n, nld0 = w->ld.n;
    int blocked = subtree_collect(w, it, k0, &why, &what);
    if (blocked < 0)
        return KL_ENOMEM;
    if (blocked) {
        w->br.n = nbr0;
        w->bus.n = nbus0;
        w->ld.n = nld0;
        char fmt[160];
        snprintf(fmt, sizeof fmt, "lateral %%s: %s", why);
        return skip_note(w, fmt, f->sections[s].name, what);
    }
    it->kind = KL_ITEM_LATERAL;
    it->name = f->sections[s].name;
    it->section = s;
    it->phases = M;
    it->outer = w->owner[from];
    for (int r = 1; r < 3; r++)
        if (!(kl_phases_rotate(M, r) & ~P))
            it->allowed |= 1 << r;
    item_loads_summary(w, it);
    int id = w->rp->nitems++;
    for (int q = 0; q < it->nbus; q++)
        if (w->bus.f[it->first_bus + q])
            w->owner[w->bus.v[it->first_bus + q]] = id;
    return KL_OK;
}

/* A single-phase (one-entry) spot load on a bus with more phases. */
static kl_status load_try(finder *w, int l)
{
    const kl_network *n = w->net;
    const kl_load *ld = &n->feeder->loads[l];
    if (ld->bus < 0 || ld->bus >= n->nbuses || kl_phases_count(ld->phases) != 1 ||
        w->ct_below[ld->bus])
        return KL_OK;
    int need = load_bus_mask(ld), have = n->phases[ld->bus], allowed = 1;
    if (need & ~have)
        return KL_OK;
    for (int r = 1; r < 3; r++)
        if (!(kl_phases_rotate(need, r) & ~have))
            allowed |= 1 << r;
    if (allowed == 1)
        return KL_OK;
    kl_rephase_item *it = item_new(w);
    if (!it || list_push(&w->ld, l, 0))
        return KL_ENOMEM;
    it->kind = KL_ITEM_LOAD;
    it->name = ld->name;
    it->load = l;
    it->phases = need;
    it->allowed = allowed;
    it->outer = w->owner[ld->bus];
    it->first_ld = w->ld.n - 1;
    it->nld = 1;
    it->first_br = w->br.n;
    it->first_bus = w->bus.n;
    item_loads_summary(w, it);
    w->rp->nitems++;
    return KL_OK;
}

/* Moves the finder's lists into the rephaser (they become its arrays). */
static kl_status finder_hand_over(finder *w)
{
    kl_rephaser *rp = w->rp;
    rp->rot = kl_calloc((size_t)rp->nitems + 1, sizeof(int));
    if (!rp->rot)
        return KL_ENOMEM;
    rp->br = w->br.v;
    rp->br_side = w->br.f;
    rp->bus = w->bus.v;
    rp->bus_rot = w->bus.f;
    rp->ld = w->ld.v;
    kl_free(w->ld.f);
    memset(&w->br, 0, sizeof w->br);
    memset(&w->bus, 0, sizeof w->bus);
    memset(&w->ld, 0, sizeof w->ld);
    /* laterals are found in sweep order, so an enclosing item comes before
     * the items inside it: kl_rephase_feeder_rotations relies on it */
    for (int i = 0; i < rp->nitems; i++)
        KL_ASSERT(rp->items[i].outer < i);
    return KL_OK;
}

kl_status kl_rephaser_alloc(kl_network *net, kl_rephaser **out, kl_errors *err)
{
    if (!net || !out)
        return KL_EARG;
    *out = NULL;
    finder w;
    memset(&w, 0, sizeof w);
    w.net = net;
    w.rp = kl_calloc(1, sizeof *w.rp);
    kl_status st = w.rp ? finder_init(&w) : KL_ENOMEM;
    if (st)
        goto done;
    w.rp->net = net;
    for (int k = 0; k < net->nbranches && !st; k++)
        st = lateral_try(&w, k);
    for (int l = 0; l < net->feeder->nloads && !st; l++)
        st = load_try(&w, l);
    if (!st)
        st = finder_hand_over(&w);
done:
    finder_free(&w);
    if (st) {
        kl_rephaser_free(w.rp);
        if (err)
            kl_errors_add(err, NULL, 0, 0, "rebalance", "out of memory while finding the "
                          "movable laterals and loads");
        return st;
    }
    *out = w.rp;
    return KL_OK;
}

void kl_rephaser_free(kl_rephaser *rp)
{
    if (!rp)
        return;
    kl_free(rp->items);
    kl_free(rp->rot);
    kl_free(rp->br);
    kl_free(rp->br_side);
    kl_free(rp->bus);
    kl_free(rp->bus_rot);
    kl_free(rp->ld);
    kl_free(rp->skipped);
    kl_free(rp);
}

int kl_rephaser_find(const kl_rephaser *rp, const char *name)
{
    for (int i = 0; rp && name && i < rp->nitems; i++)
        if (rp->items[i].name && strcmp(rp->items[i].name, name) == 0)
            return i;
    return -1;
}

/* M <- P_rr M P_cc^T on a row-major 3x3 (see the file comment). */
static void mat_relabel(kl_complex *m, int rr, int cc)
{
    if (!rr && !cc)
        return;
    kl_complex t[9];
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            t[3 * ((i + rr) % 3) + (j + cc) % 3] = m[3 * i + j];
    memcpy(m, t, sizeof t);
}

static void branch_relabel(kl_network *n, int k, int rf, int rt)
{
    if (n->dev[k] >= 0) { /* a line keeps only its packed Z and Y (network.h) */
        size_t s = 9 * (size_t)n->dev[k];
        kl_complex *src_load[] = {n->a, n->b, n->c, n->d};
        for (int q = 0; q < 4; q++)
            mat_relabel(src_load[q] + s, rf, rt);
        mat_relabel(n->A + s, rt, rf);
        mat_relabel(n->B + s, rt, rt);
    }
    if (n->zy_at[k] >= 0) {
        /* the packed order follows the phases: unpack on the old mask,
         * pack on the new one (same phase count) */
        kl_complex Z[9], Y[9];
        kl_network_line_zy(n, k, Z, Y);
        mat_relabel(Z, rt, rt);
        mat_relabel(Y, rt, rt);
        n->br_phases[k] = kl_phases_rotate(n->br_phases[k], rf);
        kl_network_line_set_zy(n, k, Z, Y);
        return;
    }
    n->br_phases[k] = kl_phases_rotate(n->br_phases[k], rf);
}

/* Bus voltages follow the move: slot p -> p + dr, and the phasor turns by
 * -120 degrees per step (a positive-sequence source).  v is in the
 * network's layout (by sweep position, network.h). */
static void vector_shift(kl_complex *v3, int relabel, int dr)
{
    kl_complex turn = cexp(-I * (2.0 * PI / 3.0) * dr), t[3];
    for (int p = 0; p < 3; p++)
        t[relabel ? (p + dr) % 3 : p] = v3[p] * turn;
    memcpy(v3, t, sizeof t);
}

void kl_rephase_shift_vector(const kl_rephaser *rp, int i, int dr, kl_complex *v)
{
    const kl_rephase_item *it = &rp->items[i];
    dr = ((dr % 3) + 3) % 3;
    if (!dr)
        return;
    for (int q = 0; q < it->nbus; q++)
        vector_shift(v + 3 * (size_t)rp->net->pos[rp->bus[it->first_bus + q]],
                     rp->bus_rot[it->first_bus + q], dr);
}

void kl_rephase_set(kl_rephaser *rp, int i, int r)
{
    kl_network *n = rp->net;
    const kl_rephase_item *it = &rp->items[i];
    int dr = (((r - rp->rot[i]) % 3) + 3) % 3;
    if (!dr)
        return;
    for (int q = 0; q < it->nbr; q++) {
        unsigned char side = rp->br_side[it->first_br + q];
        branch_relabel(n, rp->br[it->first_br + q], (side & 1) ? dr : 0, (side & 2) ? dr : 0);
    }
    for (int q = 0; q < it->nbus; q++) {
        int b = rp->bus[it->first_bus + q];
        if (rp->bus_rot[it->first_bus + q]) {
            n->phases[b] = kl_phases_rotate(n->phases[b], dr);
            n->pos_phases[n->pos[b]] = (unsigned char)n->phases[b];
        }
    }
    kl_rephase_shift_vector(rp, i, dr, n->vs);
    for (int q = 0; q < it->nld; q++) {
        int *slot = n->ld_slot + 3 * rp->ld[it->first_ld + q];
        for (int k = 0; k < 3; k++)
            slot[k] = (slot[k] + dr) % 3;
    }
    if (it->nld > 0)
        kl_load_parts_moved(n);
    rp->rot[i] = ((r % 3) + 3) % 3;
}

int kl_rephase_total(const kl_rephaser *rp, const int *rot, int i)
{
    int t = 0;
    for (int j = i; j >= 0; j = rp->items[j].outer)
        t += rot[j];
    return t % 3;
}

int kl_rephase_phases(const kl_rephaser *rp, const int *rot, int i)
{
    return kl_phases_rotate(rp->items[i].phases, kl_rephase_total(rp, rot, i));
}

int kl_rephase_state_ok(const kl_rephaser *rp, const int *rot)
{
    for (int i = 0; i < rp->nitems; i++) {
        const kl_rephase_item *it = &rp->items[i];
        if (rot[i] < 0 || rot[i] > 2 || !(it->allowed & (1 << rot[i])))
            return 0;
        if (rot[i] && it->pinned)
            return 0;
        int t = kl_rephase_total(rp, rot, i);
        if (t && (kl_phases_rotate(it->phases, t) & it->forbidden))
            return 0;
    }
    return 1;
}

void kl_rephase_feeder_rotations(const kl_rephaser *rp, const int *rot, int *sec_rot,
                                 int *load_rot)
{
    const kl_network *n = rp->net;
    memset(sec_rot, 0, sizeof(int) * (size_t)n->feeder->nsections);
    memset(load_rot, 0, sizeof(int) * (size_t)n->feeder->nloads);
    /* items are stored outer before inner, so an inner item's total rotation
     * (which includes its outer ones) is written last */
    for (int i = 0; i < rp->nitems; i++) {
        const kl_rephase_item *it = &rp->items[i];
        int t = kl_rephase_total(rp, rot, i);
        for (int q = 0; q < it->nbr; q++)
            if (rp->br_side[it->first_br + q] & 1)
                sec_rot[n->br_section[rp->br[it->first_br + q]]] = t;
        for (int q = 0; q < it->nld; q++)
            load_rot[rp->ld[it->first_ld + q]] = t;
    }
}
