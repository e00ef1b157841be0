/* kilter: which loads cause the negative-sequence voltage at a bus.
 *
 * A load drawing I_L at bus m changes the voltage at bus k by
 *     dV_k = -Z_km I_L,
 * Z_km (3x3) being the series impedance common to the source->k and
 * source->m paths (plus the source impedance).  With the generalized branch
 * matrices (V_to = A V_from - B I_to, I_from = d I_to + c V_to) the same is
 * walked branch by branch: the current climbs m's path (I_from = d I_to,
 * which carries it through transformers), then the change descends k's path
 * (dV_to = A dV_from - B dI_to, dI_to nonzero only on the common branches).
 * For lines A = U, B = Z, d = U and this is exactly -Z_km I_L.
 *
 * The share of load L is the projection of its negative-sequence change on
 * the solved negative-sequence voltage at k:
 *     share_L = Re(dV2_L conj(V2_k)) / |V2_k|^2.
 * In a network of lines the voltages are linear in the currents drawn, so
 * the shares of all loads and shunts sum to 1 when the source is balanced.
 * The method is explained in docs/study.md. */
#include <math.h>
#include <stdlib.h>
#include "kilter/sequence.h"
#include "kilter/study.h"
#include "kl_study.h"

/* Negative-sequence component (Fortescue), from the one transform in sequence.c. */
static kl_complex neg_seq(const kl_complex abc[3])
{
    kl_complex s012[3];
    kl_seq_from_phase(abc, s012);
    return s012[2];
}

typedef struct {
    kl_complex *di;   /* [3*nbranches] current change on m's path */
    int *stamp;       /* [nbranches] == tag when the branch is on m's path */
    int *kpath;       /* [nbranches] branches from k up to the source */
    int nk;           /* entries in kpath */
    int tag;
} contrib_ws;

static void ws_free(contrib_ws *w)
{
    kl_free(w->di);
    kl_free(w->stamp);
    kl_free(w->kpath);
}

static kl_status ws_alloc(const kl_study_paths *p, contrib_ws *w)
{
    size_t n = (size_t)(p->nbranches > 0 ? p->nbranches : 1);
    w->di = kl_calloc(3 * n, sizeof *w->di);
    w->stamp = kl_calloc(n, sizeof *w->stamp);
    w->kpath = kl_calloc(n, sizeof *w->kpath);
    w->nk = 0;
    w->tag = 0;
    if (!w->di || !w->stamp || !w->kpath) {
        ws_free(w);
        return KL_ENOMEM;
    }
    return KL_OK;
}

/* y = M x for a row-major 3x3 M. */
static void mul3(const kl_complex *M, const kl_complex x[3], kl_complex y[3])
{
    for (int r = 0; r < 3; r++)
        y[r] = M[3 * r] * x[0] + M[3 * r + 1] * x[1] + M[3 * r + 2] * x[2];
}

static void kpath_set(const kl_study_paths *p, int k, contrib_ws *w)
{
    int br = p->parent[k], guard = 0;
    w->nk = 0;
    while (br >= 0 && guard++ < p->nbranches) {
        w->kpath[w->nk++] = br;
        br = p->parent[p->br_from[br]];
    }
}

/* Kernel: the voltage change at k (kpath set) for current I drawn at m. */
static void delta_v(const kl_study_paths *p, contrib_ws *w, int m,
                    const kl_complex I_m[3], kl_complex dv[3])
{
    kl_complex cur[3] = { I_m[0], I_m[1], I_m[2] }, nxt[3];
    int br = p->parent[m], guard = 0;
    w->tag++;
    while (br >= 0 && guard++ < p->nbranches) {
        w->stamp[br] = w->tag;
        for (int r = 0; r < 3; r++)
            w->di[3 * br + r] = cur[r];
        mul3(&p->d[9 * br], cur, nxt);
        for (int r = 0; r < 3; r++)
            cur[r] = nxt[r];
        br = p->parent[p->br_from[br]];
    }
    dv[0] = dv[1] = dv[2] = 0;
    if (p->zsource) {
        mul3(p->zsource, cur, dv);
        for (int r = 0; r < 3; r++)
            dv[r] = -dv[r];
    }
    for (int n = w->nk - 1; n >= 0; n--) {
        int b = w->kpath[n];
        mul3(&p->A[9 * b], dv, nxt);
        if (w->stamp[b] == w->tag) {
            kl_complex drop[3];
            mul3(&p->B[9 * b], &w->di[3 * b], drop);
            for (int r = 0; r < 3; r++)
                nxt[r] -= drop[r];
        }
        for (int r = 0; r < 3; r++)
            dv[r] = nxt[r];
    }
}

static kl_complex volt(const kl_study_phases *ph, const kl_study_paths *p,
                       int nf, int m, int slot)
{
    if (p->v)
        return p->v[3 * (size_t)(p->v_pos ? p->v_pos[m] : m) + (size_t)slot];
    return m < nf ? ph->v[3 * m + slot] : CMPLX(NAN, NAN);
}

/* Phase currents drawn at network load n's bus (wye entry on slot s; delta
 * entry across slots s and s+1).  0 when a voltage needed is zero/unknown. */
static int load_current(const kl_feeder *f, const kl_study_phases *ph,
                        const kl_study_paths *p, int n, kl_complex I_m[3])
{
    int L = p->ld_load[n], m = p->ld_bus[n];
    const kl_load *ld = &f->loads[L];
    I_m[0] = I_m[1] = I_m[2] = 0;
    for (int e = 0; e < 3; e++) {
        int s = p->ld_slot ? p->ld_slot[3 * L + e] : e, s2 = (s + 1) % 3;
        kl_complex S = p->ld_weight[n] * ph->s_load[3 * L + e], V, Ie;
        if (!(ld->phases & (1 << e)))
            continue;
        V = volt(ph, p, f->nbuses, m, s);
        if (ld->conn == KL_CONN_DELTA)
            V -= volt(ph, p, f->nbuses, m, s2);
        if (!(cabs(V) > 0) || isnan(creal(V)))
            return 0;
        Ie = conj(S / V);
        I_m[s] += Ie;
        if (ld->conn == KL_CONN_DELTA)
            I_m[s2] -= Ie;
    }
    return 1;
}

/* share[L] for every feeder load at bus k (kpath must be set). */
static void shares_at(const kl_feeder *f, const kl_study_phases *ph,
                      const kl_study_paths *p, contrib_ws *w, int k,
                      double *share, double *total)
{
    const kl_complex *vk = &ph->v[3 * k];
    kl_complex v2 = neg_seq(vk);
    double den = creal(v2 * conj(v2));
    *total = 0;
    for (int L = 0; L < f->nloads; L++)
        share[L] = NAN;
    for (int n = 0; n < p->nloads; n++) {
        kl_complex I_m[3], dv[3], dv2;
        int L = p->ld_load[n];
        if (!load_current(f, ph, p, n, I_m))
            continue;
        delta_v(p, w, p->ld_bus[n], I_m, dv);
        dv2 = neg_seq(dv);
        if (isnan(share[L]))
            share[L] = 0;
        share[L] += den > 0 ? creal(dv2 * conj(v2)) / den : NAN;
    }
    for (int L = 0; L < f->nloads; L++)
        if (!isnan(share[L]))
            *total += share[L];
}

static kl_status paths_check(const kl_feeder *f, const kl_study_paths *p,
                             int bus, kl_errors *err)
{
    if (!p->parent || !p->br_from || !p->A || !p->B || !p->d
        || (p->nloads > 0 && (!p->ld_load || !p->ld_bus || !p->ld_weight))) {
        kl_errors_add(err, NULL, 0, 0, "contributors",
                      "the solved network's branch matrices are missing "
                      "(build the network and solve the flow first)");
        return KL_EARG;
    }
    if (bus < 0 || bus >= f->nbuses || bus >= p->nfeeder_buses) {
        kl_errors_add(err, NULL, 0, 0, "contributors",
                      "bus id %d is not a bus of the feeder (0..%d)", bus, f->nbuses - 1);
        return KL_EARG;
    }
    return KL_OK;
}

kl_status kl_contrib_shares(const kl_feeder *f, const kl_study_phases *ph,
                            const kl_study_paths *paths, int bus,
                            double *share, double *total, kl_errors *err)
{
    contrib_ws w = { 0 };
    kl_status st = paths_check(f, paths, bus, err);
    if (st != KL_OK)
        return st;
    if (ws_alloc(paths, &w) != KL_OK) {
        kl_errors_add(err, NULL, 0, 0, "contributors", "out of memory");
        return KL_ENOMEM;
    }
    kpath_set(paths, bus, &w);
    shares_at(f, ph, paths, &w, bus, share, total);
    ws_free(&w);
    return KL_OK;
}

/* ---- ranking */

typedef struct { int kind, id; double share; } contrib_item;

static int by_share_desc(const void *a, const void *b)
{
    double x = ((const contrib_item *)a)->share, y = ((const contrib_item *)b)->share;
    return (x < y) - (x > y);
}

/* A tap: a live section with fewer phases than the bus it leaves. */
static int is_tap(const kl_feeder *f, const kl_study_phases *ph, int k)
{
    const kl_section *sec = &f->sections[k];
    int b = kl_sec_up(sec), up = ph->bus_phases ? ph->bus_phases[b] : f->buses[b].phases;
    return kl_phases_count(sec->phases) < kl_phases_count(up);
}

/* Adds each load's share to every tap above it; counts loads per tap. */
static void tap_sums(const kl_feeder *f, const kl_study_phases *ph,
                     const kl_feeder_tree *t, const double *share,
                     double *tap_share, int *tap_loads)
{
    for (int k = 0; k < f->nsections; k++) {
        tap_share[k] = 0;
        tap_loads[k] = 0;
    }
    for (int L = 0; L < f->nloads; L++) {
        const kl_load *ld = &f->loads[L];
        int k = ld->bus >= 0 ? kl_feeder_tree_psec(t, ld->bus) : ld->section, guard = 0;
        if (isnan(share[L]))
            continue;
        while (k >= 0 && guard++ < f->nsections) {
            if (is_tap(f, ph, k)) {
                tap_share[k] += share[L];
                tap_loads[k]++;
            }
            k = kl_feeder_tree_psec(t, kl_sec_up(&f->sections[k]));
        }
    }
}

typedef struct {
    contrib_ws w;
    const kl_feeder_tree *t; /* not owned */
    double *share;      /* [nloads] */
    double *tap_share;  /* [nsections] */
    int *tap_loads;     /* [nsections] */
    contrib_item *items;/* [nloads + nsections] */
} rank_ws;

static void rank_ws_free(rank_ws *r)
{
    ws_free(&r->w);
    kl_free(r->share);
    kl_free(r->tap_share);
    kl_free(r->tap_loads);
    kl_free(r->items);
}

static kl_status rank_ws_alloc(const kl_feeder *f, const kl_study_paths *p, rank_ws *r)
{
    size_t nl = (size_t)f->nloads + 1, ns = (size_t)f->nsections + 1;
    if (ws_alloc(p, &r->w) != KL_OK)
        return KL_ENOMEM;
    r->share = kl_calloc(nl, sizeof *r->share);
    r->tap_share = kl_calloc(ns, sizeof *r->tap_share);
    r->tap_loads = kl_calloc(ns, sizeof *r->tap_loads);
    r->items = kl_calloc(nl + ns, sizeof *r->items);
    return r->share && r->tap_share && r->tap_loads && r->items ? KL_OK : KL_ENOMEM;
}

/* Ranks the candidates at one bus into s (slot c of the contributor table). */
static void rank_bus(const kl_feeder *f, const kl_study_phases *ph,
                     const kl_study_paths *p, const kl_study_options *opt,
                     rank_ws *r, kl_study *s, int c)
{
    int k = s->cbus[c], n = 0, keep;
    double total;
    kpath_set(p, k, &r->w);
    shares_at(f, ph, p, &r->w, k, r->share, &total);
    tap_sums(f, ph, r->t, r->share, r->tap_share, r->tap_loads);
    s->c_unbal_total[c] = s->c_three_phase[c] = 0;
    for (int L = 0; L < f->nloads; L++) {
        if (isnan(r->share[L]))
            continue;
        /* Three-phase loads are ranked too: an unequal one can outweigh
         * every single-phase load, and the analyst must see it. */
        if (f->loads[L].phases == KL_PH_ABC)
            s->c_three_phase[c] += r->share[L];
        else
            s->c_unbal_total[c] += r->share[L];
        r->items[n++] = (contrib_item){ KL_CONTRIB_LOAD, L, r->share[L] };
    }
    /* A tap with one load would repeat that load's line. */
    for (int q = 0; q < f->nsections; q++)
        if (r->tap_loads[q] >= 2)
            r->items[n++] = (contrib_item){ KL_CONTRIB_TAP, q, r->tap_share[q] };
    s->c_remainder[c] = 1.0 - total;
    qsort(r->items, (size_t)n, sizeof *r->items, by_share_desc);
    keep = n < opt->max_contributors ? n : opt->max_contributors;
    s->cstart[c + 1] = s->cstart[c] + keep;
    for (int j = 0; j < keep; j++) {
        int at = s->cstart[c] + j;
        s->ckind[at] = r->items[j].kind;
        s->cid[at] = r->items[j].id;
        s->cshare[at] = r->items[j].share;
    }
}

/* Buses over an unbalance level (and the complaint's bus), worst VUF first (insertion sort: the list
 * is short and qsort has no context argument in C11). */
static void select_buses(kl_study *s, int at_bus)
{
    s->ncbus = 0;
    for (int b = 0; b < s->nbuses; b++) {
        int j;
        if (s->vuf_flags[b] <= 0 && !(b == at_bus && s->unb[b].defined))
            continue;
        for (j = s->ncbus; j > 0 && s->unb[s->cbus[j - 1]].vuf < s->unb[b].vuf; j--)
            s->cbus[j] = s->cbus[j - 1];
        s->cbus[j] = b;
        s->ncbus++;
    }
}

static kl_status table_alloc(kl_study *s, int max_keep, int at_bus)
{
    size_t nb = (size_t)s->nbuses + 1, items;
    s->cbus = kl_calloc(nb, sizeof *s->cbus);
    s->cstart = kl_calloc(nb + 1, sizeof *s->cstart);
    s->c_unbal_total = kl_calloc(nb, sizeof *s->c_unbal_total);
    s->c_three_phase = kl_calloc(nb, sizeof *s->c_three_phase);
    s->c_remainder = kl_calloc(nb, sizeof *s->c_remainder);
    if (!s->cbus || !s->cstart || !s->c_unbal_total || !s->c_three_phase || !s->c_remainder)
        return KL_ENOMEM;
    select_buses(s, at_bus);
    items = (size_t)(s->ncbus > 0 ? s->ncbus : 1) * (size_t)(max_keep > 0 ? max_keep : 1);
    s->ckind = kl_calloc(items, sizeof *s->ckind);
    s->cid = kl_calloc(items, sizeof *s->cid);
    s->cshare = kl_calloc(items, sizeof *s->cshare);
    return s->ckind && s->cid && s->cshare ? KL_OK : KL_ENOMEM;
}

kl_status kl_contrib_rank(const kl_feeder *f, const kl_study_phases *ph,
                          const kl_study_paths *paths, const kl_study_options *opt,
                          kl_study *s, kl_errors *err)
{
    const kl_feeder_tree *t;
    kl_feeder_tree *own;
    if (kl_feeder_tree_of(f, &t, &own, NULL) == KL_ENOMEM) {
        kl_errors_add(err, NULL, 0, 0, "contributors", "out of memory ranking contributors");
        return KL_ENOMEM;
    }
    kl_status st = kl_contrib_rank_on(f, ph, t, paths, opt, s, err);
    kl_feeder_tree_free(own);
    return st;
}

kl_status kl_contrib_rank_on(const kl_feeder *f, const kl_study_phases *ph,
                             const kl_feeder_tree *t, const kl_study_paths *paths,
                             const kl_study_options *opt, kl_study *s, kl_errors *err)
{
    rank_ws r = { 0 };
    kl_status st = paths_check(f, paths, f->source.bus, err);
    if (st != KL_OK)
        return st;
    r.t = t;
    st = table_alloc(s, opt->max_contributors, opt->at_bus);
    if (st == KL_OK)
        st = rank_ws_alloc(f, paths, &r);
    if (st == KL_OK) {
        for (int c = 0; c < s->ncbus; c++)
            rank_bus(f, ph, paths, opt, &r, s, c);
        s->contrib_done = 1;
    } else {
        kl_errors_add(err, NULL, 0, 0, "contributors", "out of memory ranking contributors");
    }
    rank_ws_free(&r);
    return st;
}
