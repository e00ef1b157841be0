/* kilter: network analysis for the load flow.  Breadth-first search from the
 * source gives the sweep order (every branch after the branch feeding its
 * source-side bus); each section becomes one branch in generalized matrix form
 * (Kersting ch. 6: a = d = U + Z Y / 2, b = Z, c = Y + Y Z Y / 4,
 * A = a^-1, B = a^-1 b, from memory), or two branches when a distributed load
 * is lumped on it.
 *
 * Distributed load: the exact lumped-load model (Kersting ch. 3, from memory):
 * 2/3 of the load at an internal node one quarter of the length from the
 * source end, 1/3 at the far end.  It reproduces both the voltage drop and the
 * loss of a uniformly distributed load; on the IEEE 13-node feeder it gives
 * the published voltages more closely than all of it at the midpoint (figures
 * in docs/flow.md). */
#include <limits.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "kilter/network.h"
#include "kl_flow.h"
#include "kilter/units.h"

#define DIST_AT 0.25          /* internal node position, share of the length */
#define DIST_NEAR (2.0 / 3.0) /* share of the load at the internal node */

static const double DEG = KL_PI / 180.0;

static void net_err(kl_errors *e, const kl_feeder *f, kl_loc loc, const char *kind,
                    const char *name, const char *msg)
{
    char elem[128];
    if (name && *name)
        snprintf(elem, sizeof elem, "%s %s", kind, name);
    else
        snprintf(elem, sizeof elem, "%s", kind);
    kl_errors_add(e, f->path, loc.line, loc.col, elem, "%s", msg);
}

/* Incidence lists of the closed sections (compressed rows by bus). */
typedef struct {
    int *start; /* [nbuses+1] */
    int *sec;   /* [2*nsections] */
} incidence;

static kl_status incidence_build(const kl_feeder *f, incidence *g)
{
    g->start = kl_calloc((size_t)f->nbuses + 1, sizeof(int));
    g->sec = kl_malloc(sizeof(int) * (2 * (size_t)f->nsections + 1));
    int *fill = kl_calloc((size_t)f->nbuses + 1, sizeof(int));
    if (!g->start || !g->sec || !fill) {
        kl_free(fill);
        return KL_ENOMEM;
    }
    for (int s = 0; s < f->nsections; s++) {
        const kl_section *sc = &f->sections[s];
        if (!sc->closed)
            continue;
        g->start[sc->from + 1]++;
        g->start[sc->to + 1]++;
    }
    for (int b = 0; b < f->nbuses; b++)
        g->start[b + 1] += g->start[b];
    for (int s = 0; s < f->nsections; s++) {
        const kl_section *sc = &f->sections[s];
        if (!sc->closed)
            continue;
        g->sec[g->start[sc->from] + fill[sc->from]++] = s;
        g->sec[g->start[sc->to] + fill[sc->to]++] = s;
    }
    kl_free(fill);
    return KL_OK;
}

/* Checks ids the rest of the build relies on (the loader checks them too). */
static kl_status check_ids(const kl_feeder *f, kl_errors *err)
{
    kl_status st = KL_OK;
    if (f->nbuses <= 0 || f->source.bus < 0 || f->source.bus >= f->nbuses) {
        net_err(err, f, f->source.loc, "source", "", "the source bus is missing or unknown: "
                "name an existing bus in `source: bus:`");
        return KL_EINPUT;
    }
    if (!(f->source.kv_ll > 0) || !isfinite(f->source.kv_ll) || !(f->source.v_pu >= 0) ||
        !isfinite(f->source.v_pu)) {
        net_err(err, f, f->source.loc, "source", "", "needs a positive nominal voltage and a "
                "finite regulated voltage (e.g. nominal_voltage: 12.47 kV, regulated_voltage: 1.0 pu)");
        st = KL_EINPUT;
    }
    for (int s = 0; s < f->nsections; s++) {
        const kl_section *sc = &f->sections[s];
        if (sc->from < 0 || sc->from >= f->nbuses || sc->to < 0 || sc->to >= f->nbuses) {
            net_err(err, f, sc->loc, "section", sc->name, "refers to an unknown bus");
            st = KL_EINPUT;
        } else if (sc->from == sc->to) {
            net_err(err, f, sc->loc, "section", sc->name,
                    "joins a bus to itself: give two different buses in from/to");
            st = KL_EINPUT;
        }
    }
    return st;
}

/* One tree section as the search reaches it, in search (queue) order: the
 * fields the emission needs, copied while the search has the section record
 * at hand, so the emission reads them front to back instead of the 48-byte
 * records in file order (one cache miss each at a million sections).  The
 * record itself is read again only to report an error or build a device. */
typedef struct {
    int s;               /* section id */
    int from, to;        /* bus ids, source side first */
    int from_q;          /* queue index of the from-bus (0 = the source) */
    int construction;
    double length_m;
    unsigned char phases, kind, rev;
} walk_step;

/* Breadth-first search over closed sections.  Fills steps[] (tree sections
 * in visiting order; the to-bus of steps[q] is queue entry q + 1) and
 * seen[bus].  A section that reaches a bus fed already closes a loop: an
 * error for a radial feeder, a link (links[], *nlinks) when the feeder says
 * radial: false. */
static kl_status search(const kl_feeder *f, const incidence *g, walk_step *steps, int *nsec,
                        unsigned char *seen, int *queue, unsigned char *used,
                        int *links, int *nlinks,
                        kl_errors *err)
{
    kl_status st = KL_OK;
    int head = 0, tail = 0, n = 0;
    queue[tail++] = f->source.bus;
    seen[f->source.bus] = 1;
    while (head < tail) {
        int uq = head, u = queue[head++];
        for (int k = g->start[u]; k < g->start[u + 1]; k++) {
            int s = g->sec[k];
            if (used[s])
                continue;
            used[s] = 1;
            const kl_section *sc = &f->sections[s];
            int w = sc->from == u ? sc->to : sc->from;
            if (seen[w] && !f->radial) {
                links[(*nlinks)++] = s;
                continue;
            }
            if (seen[w]) {
                char msg[512];
                snprintf(msg, sizeof msg, "closes a loop (bus %s is already fed another way): "
                         "the backward/forward sweep solves radial feeders only; open a switch "
                         "in the loop or use the nodal solver (--solver nodal)",
                         f->buses[w].name);
                net_err(err, f, sc->loc, "section", sc->name, msg);
                st = KL_ETOPO;
                continue;
            }
            seen[w] = 1;
            steps[n++] = (walk_step){s, u, w, uq, sc->construction, sc->length_m, sc->phases,
                                     (unsigned char)sc->kind, sc->from != u};
            queue[tail++] = w;
        }
    }
    *nsec = n;
    return st;
}

/* An open switch with one end energized and the other not: the usual cause. */
static const char *open_switch_at_edge(const kl_feeder *f, const unsigned char *seen)
{
    for (int s = 0; s < f->nsections; s++) {
        const kl_section *sc = &f->sections[s];
        if (!sc->closed && seen[sc->from] != seen[sc->to])
            return sc->name;
    }
    return NULL;
}

static kl_status report_islands(const kl_feeder *f, const unsigned char *seen, kl_errors *err)
{
    int count = 0;
    const char *edge = NULL;
    for (int b = 0; b < f->nbuses; b++) {
        if (seen[b])
            continue;
        if (count++ >= 5)
            continue;
        if (count == 1) /* a pass over every section: only when there is an island */
            edge = open_switch_at_edge(f, seen);
        const char *via = NULL;
        for (int s = 0; s < f->nsections; s++) {
            const kl_section *sc = &f->sections[s];
            if (!sc->closed && (sc->from == b || sc->to == b))
                via = sc->name;
        }
        char msg[512];
        if (via)
            snprintf(msg, sizeof msg, "is not connected to the source bus %s (island: only "
                     "reached through open switch %s): close the switch or remove the buses "
                     "beyond it", f->buses[f->source.bus].name, via);
        else if (edge)
            snprintf(msg, sizeof msg, "is not connected to the source bus %s (island, beyond "
                     "open switch %s): the sweep solves energized buses only; close the switch "
                     "or remove the buses beyond it", f->buses[f->source.bus].name, edge);
        else
            snprintf(msg, sizeof msg, "is not connected to the source bus %s (island): "
                     "connect it with a section or remove it", f->buses[f->source.bus].name);
        net_err(err, f, f->buses[b].loc, "bus", f->buses[b].name, msg);
    }
    if (count > 5)
        kl_errors_add(err, f->path, 0, 0, NULL, "%d more buses are not connected to the source",
                      count - 5);
    return count ? KL_ETOPO : KL_OK;
}

/* Which sections carry a distributed load (has_dist[nsections]); *ndist
 * counts the loads that name a section. */
static kl_status count_distributed(const kl_feeder *f, unsigned char *has_dist, int *ndist,
                                   kl_errors *err)
{
    kl_status st = KL_OK;
    for (int l = 0; l < f->nloads; l++) {
        const kl_load *ld = &f->loads[l];
        if (ld->bus >= 0)
            continue;
        ++*ndist;
        if (ld->section < 0 || ld->section >= f->nsections) {
            net_err(err, f, ld->loc, "load", ld->name, "names neither a bus nor a section");
            st = KL_EINPUT;
        } else if (f->sections[ld->section].kind != KL_SEC_LINE) {
            net_err(err, f, ld->loc, "load", ld->name, "is distributed along a section that "
                    "is not a line: put it at a bus instead");
            st = KL_EINPUT;
        } else {
            has_dist[ld->section] = 1;
        }
    }
    return st;
}

static kl_status alloc_arrays(kl_network *n, const kl_feeder *f, int nbus, int nbr, int nld,
                              int ndev_max)
{
    /* bus and branch arrays are written whole by the emission (every bus is
     * placed once, every branch emitted once; a build that stops early
     * frees them unread): no zero fill */
    size_t nb = (size_t)nbus, nr = (size_t)nbr, nd = (size_t)(ndev_max > 0 ? ndev_max : 1);
    n->order = kl_malloc(nb * sizeof(int));
    n->phases = kl_malloc(nb * sizeof(int));
    n->v_base_ln = kl_malloc(nb * sizeof(double));
    n->split_phase = kl_malloc(nb * 1);
    n->parent = kl_malloc(nb * sizeof(int));
    n->br_from = kl_malloc(nr * sizeof(int));
    n->br_to = kl_malloc(nr * sizeof(int));
    n->br_kind = kl_malloc(nr * sizeof(int));
    n->br_phases = kl_malloc(nr * sizeof(int));
    n->br_section = kl_malloc(nr * sizeof(int));
    n->dev = kl_malloc(nr * sizeof(int));
    n->zy_at = kl_malloc(nr * sizeof(int));
    kl_complex **m[] = {&n->a, &n->b, &n->c, &n->d, &n->A, &n->B};
    int ok = n->order && n->phases && n->v_base_ln && n->split_phase && n->parent && n->br_from && n->br_to &&
             n->br_kind && n->br_phases && n->br_section && n->dev && n->zy_at;
    for (size_t k = 0; k < sizeof m / sizeof m[0]; k++) {
        /* a..B by device slot (network.h); the lines' packed Z, Y: zy_alloc */
        *m[k] = kl_calloc(9 * nd, sizeof(kl_complex));
        ok = ok && *m[k];
    }
    for (size_t k = 0; n->dev && n->zy_at && k < nr; k++)
        n->dev[k] = n->zy_at[k] = -1;
    n->sec_first = kl_calloc((size_t)f->nsections, sizeof(int));
    n->sec_last = kl_calloc((size_t)f->nsections, sizeof(int));
    n->loads = kl_calloc((size_t)nld, sizeof(kl_net_load));
    n->ld_slot = kl_calloc(3 * (size_t)f->nloads, sizeof(int));
    n->reg_branch = kl_calloc((size_t)f->nregulators, sizeof(int));
    n->tap = kl_calloc(3 * (size_t)f->nregulators, sizeof(int));
    n->i_from_link = kl_calloc(3 * (nr - (size_t)n->nbranches) + 3, sizeof(kl_complex));
    n->i_to_link = kl_calloc(3 * (nr - (size_t)n->nbranches) + 3, sizeof(kl_complex));
    n->pos = kl_malloc(nb * sizeof(int));
    n->br_from_pos = kl_malloc(nr * sizeof(int));
    n->pos_phases = kl_malloc(nb * 1);
    n->pos_inv_base = kl_malloc(nb * sizeof(double));
    n->vs = kl_calloc(3 * nb, sizeof(kl_complex));
    n->js = kl_calloc(3 * nb, sizeof(kl_complex));
    ok = ok && n->sec_first && n->sec_last && n->loads && n->ld_slot && n->reg_branch &&
         n->tap && n->i_from_link && n->i_to_link && n->pos && n->br_from_pos && n->pos_phases &&
         n->pos_inv_base && n->vs && n->js;
    if (!ok)
        return KL_ENOMEM;
    /* every array here is written by the build or the first solve: map the
     * large ones in one call each instead of a page fault per 4 KiB page
     * (prefault.c; about 16 us a page on the machines measured) */
    struct { void *p; size_t len; } big[] = {
        {n->order, nb * sizeof(int)}, {n->phases, nb * sizeof(int)},
        {n->v_base_ln, nb * sizeof(double)}, {n->split_phase, nb}, {n->parent, nb * sizeof(int)},
        {n->br_from, nr * sizeof(int)}, {n->br_to, nr * sizeof(int)},
        {n->br_kind, nr * sizeof(int)}, {n->br_phases, nr * sizeof(int)},
        {n->br_section, nr * sizeof(int)}, {n->dev, nr * sizeof(int)},
        {n->zy_at, nr * sizeof(int)}, {n->sec_first, (size_t)f->nsections * sizeof(int)},
        {n->sec_last, (size_t)f->nsections * sizeof(int)}, {n->loads, (size_t)nld * sizeof(kl_net_load)},
        {n->ld_slot, 3 * (size_t)f->nloads * sizeof(int)}, {n->pos, nb * sizeof(int)},
        {n->br_from_pos, nr * sizeof(int)}, {n->pos_phases, nb},
        {n->pos_inv_base, nb * sizeof(double)}, {n->vs, 3 * nb * sizeof(kl_complex)},
        {n->js, 3 * nb * sizeof(kl_complex)}};
    for (size_t k = 0; k < sizeof big / sizeof big[0]; k++)
        kl_prefault(big[k].p, big[k].len);
    return KL_OK;
}

void kl_network_free(kl_network *n)
{
    if (!n)
        return;
    if (n->nodal_free)
        n->nodal_free(n->nodal); /* the nodal solver's attachment (nodal.c) */
    void *p[] = {n->order, n->phases, n->v_base_ln, n->split_phase, n->parent, n->br_from, n->br_to,
                 n->br_kind, n->br_phases, n->br_section, n->dev, n->a, n->b, n->c, n->d, n->A,
                 n->B, n->zy_at, n->zy, n->sec_first, n->sec_last, n->loads, n->ld_slot,
                 n->parts, n->reg_branch, n->tap, n->i_from_link, n->i_to_link, n->pos,
                 n->br_from_pos, n->pos_phases, n->pos_inv_base, n->vs, n->js};
    for (size_t k = 0; k < sizeof p / sizeof p[0]; k++)
        kl_free(p[k]);
    kl_free(n);
}

/* a^-1 on the present phases (identity rows stand in for absent ones). */
static int inverse_on(const kl_complex a[9], int mask, kl_complex r[9])
{
    kl_complex t[9];
    memcpy(t, a, sizeof t);
    kl_cm3_mask(t, mask);
    for (int p = 0; p < 3; p++)
        if (!(mask & (1 << p)))
            t[4 * p] = 1.0;
    if (kl_cm3_inverse(t, r))
        return -1;
    kl_cm3_mask(r, mask);
    return 0;
}

/* Phases of each mask, in the order a, b, c (the packed layout). */
static const int PH_N[8] = {0, 1, 1, 2, 1, 2, 2, 3};
static const int PH_L[8][3] = {{0}, {0}, {1}, {0, 1}, {2}, {0, 2}, {1, 2}, {0, 1, 2}};

void kl_network_line_zy(const kl_network *n, int k, kl_complex Z[9], kl_complex Y[9])
{
    kl_complex *out[2] = {Z, Y};
    int mask = n->br_phases[k], m = PH_N[mask];
    const int *l = PH_L[mask];
    for (int t = 0; t < 2; t++) {
        if (!out[t])
            continue;
        memset(out[t], 0, 9 * sizeof(kl_complex));
        if (n->zy_at[k] < 0)
            continue;
        const kl_complex *src = n->zy + n->zy_at[k] + t * m * m;
        for (int i = 0; i < m; i++)
            for (int j = 0; j < m; j++)
                out[t][3 * l[i] + l[j]] = src[m * i + j];
    }
}

void kl_network_line_set_zy(kl_network *n, int k, const kl_complex Z[9], const kl_complex Y[9])
{
    int mask = n->br_phases[k], m = PH_N[mask];
    const int *l = PH_L[mask];
    if (n->zy_at[k] < 0)
        return;
    kl_complex *dst = n->zy + n->zy_at[k];
    for (int i = 0; i < m; i++)
        for (int j = 0; j < m; j++) {
            dst[m * i + j] = Z[3 * l[i] + l[j]];
            dst[m * m + m * i + j] = Y[3 * l[i] + l[j]];
        }
}

/* 1 when a = U + Z Y / 2 of the packed m x m Z, Y is singular: the test
 * kl_cm3_inverse applies (|det| against the largest entry cubed, identity
 * rows standing in for absent phases), on the present phases only. */
static int line_a_singular(const kl_complex *Z, const kl_complex *Y, int m)
{
    kl_complex a[9];
    double big2 = m < 3 ? 1.0 : 0.0; /* largest |entry|^2: one square root, not m^2 */
    for (int i = 0; i < m; i++)
        for (int j = 0; j < m; j++) {
            kl_complex acc = i == j ? 1.0 : 0.0;
            for (int q = 0; q < m; q++)
                acc += 0.5 * Z[m * i + q] * Y[m * q + j];
            a[m * i + j] = acc;
            double e2 = creal(acc) * creal(acc) + cimag(acc) * cimag(acc);
            big2 = e2 > big2 ? e2 : big2;
        }
    double big = sqrt(big2);
    kl_complex det = m == 1 ? a[0]
                   : m == 2 ? a[0] * a[3] - a[1] * a[2]
                   : a[0] * (a[4] * a[8] - a[5] * a[7]) - a[1] * (a[3] * a[8] - a[5] * a[6]) +
                         a[2] * (a[3] * a[7] - a[4] * a[6]);
    double tiny = 1e-300 * big * big * big;
    /* |det| >= max(|re|, |im|): when that already exceeds the threshold the
     * answer is known without cabs (the usual case), the same answer */
    if (big != 0 && (fabs(creal(det)) > tiny || fabs(cimag(det)) > tiny))
        return 0;
    return big == 0 || !(cabs(det) > tiny);
}

/* Line branch k's Z and Y, appended to zy: its construction's per-metre
 * matrices on the branch's phases times `share` of the section's length
 * (Carson and Kron reduction were done once per construction by
 * kl_lines_derive).  len is the branch's share of the section's length; sc
 * is read only to name the section in an error. */
static kl_status line_fill(kl_network *n, int k, const kl_section *sc, int construction,
                           double len, kl_errors *err)
{
    const kl_feeder *f = n->feeder;
    const kl_construction *cn = &f->constructions[construction];
    int mask = n->br_phases[k], m = PH_N[mask];
    const int *l = PH_L[mask];
    if (n->nzy + 2 * (size_t)(m * m) > n->zy_cap) { /* zy_count and emission disagree */
        net_err(err, f, sc->loc, "section", sc->name, "internal error: line storage "
                "miscounted (please report this feeder)");
        return KL_EINPUT;
    }
    n->zy_at[k] = (int)n->nzy;
    kl_complex *Z = n->zy + n->nzy, *Y = Z + m * m;
    n->nzy += 2 * (size_t)(m * m);
    for (int i = 0; i < m; i++)
        for (int j = 0; j < m; j++) {
            int p = l[i], q = l[j];
            Z[m * i + j] = (cn->derived ? cn->zabc[p][q] : cn->z_given[p][q]) * len;
            Y[m * i + j] = (cn->derived ? cn->yabc[p][q] : I * cn->b_given[p][q]) * len;
        }
    /* only Z and Y are kept; a singular a would stop every reader of A */
    if (line_a_singular(Z, Y, m)) {
        net_err(err, f, sc->loc, "section", sc->name, "has a singular line matrix: check the "
                "construction's impedance and susceptance");
        return KL_EINPUT;
    }
    return KL_OK;
}

/* Entries zy needs: 2 m^2 per closed line section (twice when a
 * distributed load splits it), m its phase count as check_line takes it;
 * also the sections split (*nsplit) and the device slots (at most one per
 * section that is not a line, *ndev).  One pass over the sections in file
 * order. */
static size_t section_counts(const kl_feeder *f, const unsigned char *has_dist, int *nsplit,
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
        total += 2 * (size_t)(PH_N[mask] * PH_N[mask]) * (has_dist[s] ? 2 : 1);
    }
    return total;
}

kl_status kl_network_line_abcd(const kl_network *n, int k, kl_complex a[9], kl_complex b[9],
                               kl_complex c[9], kl_complex d[9], kl_complex A[9],
                               kl_complex B[9])
{
    kl_complex Z[9], Y[9];
    kl_network_line_zy(n, k, Z, Y);
    int mask = n->br_phases[k];
    kl_complex ZY[9], YZ[9], ta[9];
    kl_cm3_mul(Z, Y, ZY);
    kl_cm3_mul(Y, Z, YZ);
    /* a = U + ZY/2 (needed for A and B as well) */
    kl_cm3_identity(ta, mask);
    for (int i = 0; i < 9; i++)
        ta[i] += 0.5 * ZY[i];
    kl_cm3_mask(ta, mask);
    if (a)
        memcpy(a, ta, sizeof ta);
    if (b)
        memcpy(b, Z, 9 * sizeof *Z);
    if (c) {
        kl_complex YZY[9];
        kl_cm3_mul(YZ, Y, YZY);
        for (int i = 0; i < 9; i++)
            c[i] = Y[i] + 0.25 * YZY[i];
    }
    /* d = U + YZ/2, the transpose of a (not a itself: ZY and YZ differ for
     * unequal phase couplings); it follows from I_from = I_s + (Y/2) V_from
     * with V_from = a V_to + b I_to, the pi section the sweep solves */
    if (d) {
        kl_cm3_identity(d, mask);
        for (int i = 0; i < 9; i++)
            d[i] += 0.5 * YZ[i];
        kl_cm3_mask(d, mask);
    }
    if (!A && !B)
        return KL_OK;
    kl_complex tA[9];
    if (inverse_on(ta, mask, tA))
        return KL_EINPUT;
    if (A)
        memcpy(A, tA, sizeof tA);
    if (B)
        kl_cm3_mul(tA, Z, B);
    return KL_OK;
}

kl_status kl_network_branch_abcd(const kl_network *n, int k, kl_complex a[9],
                                 kl_complex b[9], kl_complex c[9], kl_complex d[9],
                                 kl_complex A[9], kl_complex B[9])
{
    int s = n->dev[k];
    if (s < 0)
        return kl_network_line_abcd(n, k, a, b, c, d, A, B);
    kl_complex *out[] = {a, b, c, d, A, B};
    const kl_complex *src[] = {n->a, n->b, n->c, n->d, n->A, n->B};
    for (int q = 0; q < 6; q++)
        if (out[q])
            memcpy(out[q], src[q] + 9 * (size_t)s, 9 * sizeof(kl_complex));
    return KL_OK;
}

/* The section's construction, phases and length as the caller read them
 * (sc is read only to name it in an error). */
static kl_status check_line(const kl_network *n, const kl_section *sc, int construction,
                            int phases, double length_m, int *mask, kl_errors *err)
{
    const kl_feeder *f = n->feeder;
    if (construction < 0 || construction >= f->nconstructions) {
        net_err(err, f, sc->loc, "section", sc->name, "has no construction");
        return KL_EINPUT;
    }
    const kl_construction *cn = &f->constructions[construction];
    if (!cn->derived && cn->kind != KL_CONS_MATRIX) {
        net_err(err, f, cn->loc, "construction", cn->name, "has no impedance yet: derive line "
                "constants (kl_lines_derive) before building the network");
        return KL_EINPUT;
    }
    *mask = phases ? phases : cn->phases;
    if (*mask & ~cn->phases) {
        net_err(err, f, sc->loc, "section", sc->name, "uses a phase its construction does not "
                "carry: give phases the construction has");
        return KL_EINPUT;
    }
    if (!(length_m > 0) || !isfinite(length_m)) {
        net_err(err, f, sc->loc, "section", sc->name, "needs a positive length");
        return KL_EINPUT;
    }
    return KL_OK;
}

/* Which winding faces the source: the one whose rating is closer to the
 * source-side bus base (step-up when that is the low winding). */
static int transformer_step_up(const kl_transformer *t, double base_ln)
{
    double lo = t->kv_low * 1000.0, hi = t->kv_high * 1000.0;
    if (t->low != KL_WINDING_SINGLE && t->low != KL_WINDING_CENTER_TAP)
        lo /= sqrt(3.0);
    if (t->high != KL_WINDING_SINGLE)
        hi /= sqrt(3.0);
    if (!(lo > 0) || !(hi > 0))
        return 0;
    return fabs(log(base_ln / lo)) < fabs(log(base_ln / hi));
}

static kl_status device_branch(kl_network *n, int k, const kl_section *sc, kl_errors *err)
{
    const kl_feeder *f = n->feeder;
    int from = n->br_from[k], to = n->br_to[k];
    int s = n->dev[k] = n->ndev++;
    kl_complex *A = n->A + 9 * s;
    if (sc->kind == KL_SEC_TRANSFORMER) {
        if (sc->device < 0 || sc->device >= f->ntransformers) {
            net_err(err, f, sc->loc, "section", sc->name, "names an unknown transformer");
            return KL_EINPUT;
        }
        const kl_transformer *t = &f->transformers[sc->device];
        char why[384];
        int up = transformer_step_up(t, n->v_base_ln[from]);
        if (kl_transformer_matrices(t, n->br_phases[k], up, A, n->B + 9 * s, &n->phases[to],
                                    &n->v_base_ln[to], why, sizeof why)) {
            net_err(err, f, sc->loc, "section", sc->name, why);
            return KL_EINPUT;
        }
        n->br_kind[k] = KL_BR_TRANSFORMER;
        n->split_phase[to] = !up && t->low == KL_WINDING_CENTER_TAP;
        kl_cm3_transpose(A, n->d + 9 * s);
        /* a, b only where A is invertible (wye-wye, single-phase); else zero */
        if (inverse_on(A, n->phases[to] == n->br_phases[k] ? n->br_phases[k] : 0,
                       n->a + 9 * s) == 0)
            kl_cm3_mul(n->a + 9 * s, n->B + 9 * s, n->b + 9 * s);
        return KL_OK;
    }
    n->phases[to] = n->br_phases[k];
    n->v_base_ln[to] = n->v_base_ln[from];
    n->split_phase[to] = n->split_phase[from];
    if (sc->kind == KL_SEC_REGULATOR) {
        if (sc->device < 0 || sc->device >= f->nregulators) {
            net_err(err, f, sc->loc, "section", sc->name, "names an unknown regulator");
            return KL_EINPUT;
        }
        n->br_kind[k] = KL_BR_REGULATOR;
        n->reg_branch[sc->device] = k;
        kl_regulator_update(n, sc->device);
        return KL_OK;
    }
    n->br_kind[k] = KL_BR_SWITCH;
    kl_cm3_identity(n->a + 9 * s, n->br_phases[k]);
    memcpy(n->d + 9 * s, n->a + 9 * s, 9 * sizeof(kl_complex));
    memcpy(A, n->a + 9 * s, 9 * sizeof(kl_complex));
    return KL_OK;
}

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
    net_err(err, n->feeder, sc->loc, "section", sc->name, msg);
    return KL_ETOPO;
}

/* What the emission needs of a bus that feeds others, by queue index (the
 * search's order, which is also the order the emission reaches the buses as
 * from-buses: reads go front to back, not to bus-id arrays in file order). */
typedef struct {
    double base;         /* line-to-neutral base, V */
    int pos;             /* sweep position */
    unsigned char ph, split;
} walk_bus;

/* A bus's entries of the bus-id arrays, gathered while the emission visits
 * the buses in search order: one scattered write of one record per bus
 * instead of one to each of five arrays; bus_records_scatter then fills
 * the arrays front to back. */
typedef struct {
    double base;
    int ph, parent, pos;
    unsigned char split;
} bus_rec;

/* the walk keeps both scratch records of a bus inside its js entry */
_Static_assert(sizeof(walk_bus) + sizeof(bus_rec) <= 3 * sizeof(kl_complex),
               "walk scratch must fit in js");

static void bus_records_scatter(kl_network *n, const bus_rec *br)
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

/* Emits the branch(es) of search step w (its to-bus is queue entry q + 1);
 * *nbr and *nbus advance.  The to-bus of tree branch k takes position
 * k + 1 (network.h). */
static kl_status emit_section(kl_network *n, const walk_step *w, walk_bus *bq, bus_rec *br,
                              int q, int split, int *nbr, int *nbus, kl_errors *err)
{
    const kl_feeder *f = n->feeder;
    const kl_section *sc = &f->sections[w->s]; /* read for errors and devices only */
    const walk_bus up = bq[w->from_q];
    int from = w->from, to = w->to;
    int mask = w->phases ? w->phases : up.ph;
    kl_status st;
    if (w->rev && (w->kind == KL_SEC_TRANSFORMER || w->kind == KL_SEC_REGULATOR)) {
        net_err(err, f, sc->loc, "section", sc->name, "is fed from its `to` bus: a transformer "
                "or regulator section must name its source-side bus in `from`");
        return KL_ETOPO;
    }
    if (w->kind == KL_SEC_LINE &&
        (st = check_line(n, sc, w->construction, w->phases, w->length_m, &mask, err)))
        return st;
    int k = (*nbr)++;
    n->br_from[k] = from;
    n->br_to[k] = split ? *nbus : to;
    n->br_phases[k] = mask;
    n->br_section[k] = w->s;
    n->br_from_pos[k] = up.pos;
    n->sec_first[w->s] = k; /* sec_last follows after the walk: k, or k + 1 when split */
    if ((st = phases_present(n, sc, k, up.ph, err)))
        return st;
    if (w->kind != KL_SEC_LINE) {
        /* devices (few) work on the bus-id arrays: their from-bus's entries
         * first (the arrays are filled for every bus after the walk) */
        n->phases[from] = up.ph;
        n->v_base_ln[from] = up.base;
        n->split_phase[from] = up.split;
        if ((st = device_branch(n, k, sc, err)))
            return st;
        bus_place(n, br, to, k + 1, k, n->phases[to], n->v_base_ln[to], n->split_phase[to]);
        bq[q + 1] = (walk_bus){n->v_base_ln[to], k + 1, (unsigned char)n->phases[to],
                               n->split_phase[to]};
        return KL_OK;
    }
    n->br_kind[k] = KL_BR_LINE;
    bus_place(n, br, n->br_to[k], k + 1, k, mask, up.base, up.split);
    if (!split) {
        bq[q + 1] = (walk_bus){up.base, k + 1, (unsigned char)mask, up.split};
        return line_fill(n, k, sc, w->construction, w->length_m * 1.0, err);
    }
    if ((st = line_fill(n, k, sc, w->construction, w->length_m * DIST_AT, err)))
        return st;
    int mid = (*nbus)++;
    int k2 = (*nbr)++;
    n->br_from[k2] = mid;
    n->br_to[k2] = to;
    n->br_phases[k2] = mask;
    n->br_section[k2] = w->s;
    n->br_kind[k2] = KL_BR_LINE;
    n->br_from_pos[k2] = k + 1;
    bus_place(n, br, to, k2 + 1, k2, mask, up.base, up.split);
    bq[q + 1] = (walk_bus){up.base, k2 + 1, (unsigned char)mask, up.split};
    return line_fill(n, k2, sc, w->construction, w->length_m * (1.0 - DIST_AT), err);
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
        net_err(err, f, sc->loc, "section", sc->name, "closes a loop through a transformer or "
                "regulator: a loop must close through a line or a switch");
        return KL_ETOPO;
    }
    if (sc->kind == KL_SEC_LINE &&
        (st = check_line(n, sc, sc->construction, sc->phases, sc->length_m, &mask, err)))
        return st;
    if ((mask & ~n->phases[sc->from]) || (mask & ~n->phases[sc->to]) || !mask ||
        fabs(n->v_base_ln[sc->from] / n->v_base_ln[sc->to] - 1) > 0.01) {
        net_err(err, f, sc->loc, "section", sc->name, "closes a loop between buses that do not "
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
        return line_fill(n, k, sc, sc->construction, sc->length_m * 1.0, err);
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
    for (int p = 0; p < 3; p++)
        n->v_source[p] = vpu * base * cexp(I * (src->angle_deg - 120.0 * p) * DEG);
    n->has_zsource = src->has_equivalent;
    /* Zs = z1 U + (z0 - z1)/3 (ones): the phase form of the sequence impedances */
    for (int i = 0; i < 9; i++)
        n->zsource[i] = (src->z0_ohm - src->z1_ohm) / 3.0 + (i % 4 == 0 ? src->z1_ohm : 0);
}

static kl_status place_loads(kl_network *n, const int *mid_of, const unsigned char *seen,
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
            net_err(err, f, ld->loc, "load", ld->name, "refers to an unknown bus");
            st = KL_EINPUT;
            continue;
        }
        if (ld->bus < 0 && n->sec_first[ld->section] < 0)
            continue; /* its section lies in an island, reported already */
        int bus = ld->bus >= 0 ? ld->bus : n->br_to[n->sec_last[ld->section]];
        if (!seen[bus])
            continue;
        int need = ld->phases, have = n->phases[bus];
        if (ld->conn == KL_CONN_DELTA)
            need = ((need & 1) ? 3 : 0) | ((need & 2) ? 6 : 0) | ((need & 4) ? 5 : 0);
        if (need & ~have) {
            char b1[4], b2[4], msg[384];
            snprintf(msg, sizeof msg, "needs phase(s) %s that bus %s does not have (it has %s): "
                     "connect the load to phases the bus carries", kl_phases_str(need & ~have, b1),
                     f->buses[bus].name, kl_phases_str(have, b2));
            net_err(err, f, ld->loc, "load", ld->name, msg);
            st = KL_EINPUT;
            continue;
        }
        if (ld->bus >= 0) {
            n->loads[m++] = (kl_net_load){l, bus, 1.0};
        } else {
            n->loads[m++] = (kl_net_load){l, mid_of[ld->section], DIST_NEAR};
            n->loads[m++] = (kl_net_load){l, bus, 1.0 - DIST_NEAR};
        }
    }
    n->nloads = m;
    return st;
}

static kl_status check_capacitors(const kl_network *n, const unsigned char *seen,
                                  kl_errors *err)
{
    const kl_feeder *f = n->feeder;
    kl_status st = KL_OK;
    for (int c = 0; c < f->ncapacitors; c++) {
        const kl_capacitor *cp = &f->capacitors[c];
        if (cp->bus < 0 || cp->bus >= f->nbuses) {
            net_err(err, f, cp->loc, "capacitor", cp->name, "refers to an unknown bus");
            st = KL_EINPUT;
            continue;
        }
        int need = cp->phases, have = n->phases[cp->bus];
        if (cp->conn == KL_CONN_DELTA)
            need = ((need & 1) ? 3 : 0) | ((need & 2) ? 6 : 0) | ((need & 4) ? 5 : 0);
        if (seen[cp->bus] && (need & ~have)) {
            net_err(err, f, cp->loc, "capacitor", cp->name, "is connected to a phase its bus "
                    "does not have: give phases the bus carries");
            st = KL_EINPUT;
        }
    }
    return st;
}

/* Builds branches, buses, loads and workspace.  Temporary arrays are freed
 * at the one exit. */
kl_status kl_network_build(const kl_feeder *f, kl_network **out, kl_errors *err)
{
    if (!f || !out || !err)
        return KL_EARG;
    *out = NULL;
    kl_status st = check_ids(f, err);
    if (st)
        return st;
    size_t nb = (size_t)f->nbuses, ns = (size_t)f->nsections + 1;
    incidence g = {NULL, NULL};
    /* flags as bytes: the search reads them in random order, so a quarter of
     * the cache lines an int array would take */
    walk_step *steps = kl_malloc(ns * sizeof *steps);
    int *queue = kl_malloc(nb * sizeof(int));
    unsigned char *seen = kl_calloc(nb, 1), *used = kl_calloc(ns, 1);
    unsigned char *has_dist = kl_calloc(ns, 1);
    int *mid_of = kl_calloc(ns, sizeof(int)), *links = kl_calloc(ns, sizeof(int));
    kl_network *n = kl_calloc(1, sizeof *n);
    if (steps && queue) { /* written front to back: one call, not a fault a page */
        kl_prefault(steps, ns * sizeof *steps);
        kl_prefault(queue, nb * sizeof(int));
    }
    int nsec = 0, nsplit = 0, ndist = 0, nlinks = 0;
    walk_bus *bq = NULL;
    bus_rec *br = NULL;
    if (!steps || !seen || !queue || !used || !has_dist || !mid_of || !links || !n ||
        (st = incidence_build(f, &g)) != KL_OK) {
        st = KL_ENOMEM;
        goto done;
    }
    n->feeder = f;
    st = search(f, &g, steps, &nsec, seen, queue, used, links, &nlinks, err);
    kl_status st2 = report_islands(f, seen, err);
    kl_status st3 = count_distributed(f, has_dist, &ndist, err);
    if (st || st2 || st3) {
        st = st ? st : st2 ? st2 : st3;
        goto done;
    }
    int ndev_max = 0;
    size_t zy_cap = section_counts(f, has_dist, &nsplit, &ndev_max);
    n->nfeeder_buses = f->nbuses;
    n->nbuses = f->nbuses + nsplit;
    n->nbranches = nsec + nsplit;
    n->nlinks = nlinks;
    n->source = f->source.bus;
    if ((st = alloc_arrays(n, f, n->nbuses, n->nbranches + nlinks, f->nloads + ndist,
                           ndev_max)))
        goto done;
    n->zy_cap = zy_cap;
    if (n->zy_cap > (size_t)INT_MAX || !(n->zy = kl_malloc((n->zy_cap + 1) * sizeof(kl_complex)))) {
        st = KL_ENOMEM; /* offsets are ints: over 100 million lines */
        goto done;
    }
    kl_prefault(n->zy, n->zy_cap * sizeof(kl_complex));
    /* the walk's scratch (from-bus records by queue index, bus records by
     * bus id: 16 + 24 bytes a bus) lives in js, mapped already and not used
     * before the first solve (zeroed again after the walk): no fresh pages */
    bq = (walk_bus *)(void *)n->js;
    br = (bus_rec *)(void *)((char *)n->js + (size_t)n->nbuses * sizeof *bq);
    for (int s = 0; s < f->nsections; s++)
        n->sec_first[s] = -1;
    for (int r = 0; r < f->nregulators; r++) {
        n->reg_branch[r] = -1;
        for (int p = 0; p < 3; p++)
            n->tap[3 * r + p] = f->regulators[r].tap[p];
    }
    source_setup(n, br);
    bq[0] = (walk_bus){br[n->source].base, 0, KL_PH_ABC, 0};
    int nbr = 0, nbus = f->nbuses;
    for (int q = 0; q < nsec && !st; q++) {
        int s = steps[q].s;
        if (has_dist[s])
            mid_of[s] = nbus;
        st = emit_section(n, &steps[q], bq, br, q, has_dist[s], &nbr, &nbus, err);
    }
    if (!st) {
        bus_records_scatter(n, br);
        /* a split section's two branches are emitted one after the other */
        for (int s = 0; s < f->nsections; s++)
            n->sec_last[s] = n->sec_first[s] < 0 ? -1 : n->sec_first[s] + has_dist[s];
        memset(n->js, 0, 3 * (size_t)n->nbuses * sizeof n->js[0]);
    }
    for (int q = 0; q < nlinks && !st; q++) {
        if (has_dist[links[q]]) {
            const kl_section *sc = &f->sections[links[q]];
            net_err(err, f, sc->loc, "section", sc->name, "closes a loop and carries a "
                    "distributed load: put the load at a bus, or let another section close "
                    "the loop");
            st = KL_ETOPO;
            break;
        }
        st = emit_link(n, links[q], &nbr, err);
    }
    if (!st)
        st = place_loads(n, mid_of, seen, err);
    if (!st)
        st = check_capacitors(n, seen, err);
    if (!st)
        st = kl_load_parts_build(n);
done:
    kl_free(g.start);
    kl_free(g.sec);
    kl_free(steps);
    kl_free(seen);
    kl_free(queue);
    kl_free(used);
    kl_free(has_dist);
    kl_free(mid_of);
    kl_free(links);
    if (st) {
        kl_network_free(n);
        return st;
    }
    *out = n;
    return KL_OK;
}
