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
 * The method is explained in docs/study.md; below, "the transfer engine"
 * says how the shares of every load at a bus are taken in one pass. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
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

static kl_status paths_check(const kl_feeder *f, const kl_study_paths *p,
                             int bus, kl_errors *err)
{
    if (!p->parent || !p->br_from || (!(p->A && p->B && p->d) && !p->net)
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

/* A tap: a live section with fewer phases than the bus it leaves. */
static int is_tap(const kl_feeder *f, const kl_study_phases *ph, int k)
{
    const kl_section *sec = &f->sections[k];
    int b = kl_sec_up(sec), up = ph->bus_phases ? ph->bus_phases[b] : f->buses[b].phases;
    return kl_phases_count(sec->phases) < kl_phases_count(up);
}

/* ---- the transfer engine: every load's share at a bus in one pass
 *
 * Walking each load's path to the source for each bus costs loads x depth
 * per bus.  The paths share their branches, so the same sums are taken once
 * per bus, in time linear in the feeder.  For the bus k and a load drawing I
 * at bus m, let j = lca(k, m) (the last bus the two paths share), C_j the
 * load's current in the branch feeding j and P(j<-m) the product of the d
 * matrices from m up to below j, so C_j = P(j<-m) I; then
 *     dV_j = -T_j C_j,   T_j = A T_p d + B (the branch feeding j, p its from
 *                        bus),  T_source = Zs (0 for an ideal source),
 *     dV_k = Phi(k<-j) dV_j,   Phi the product of the A from j down to k,
 *     share = Re(w . dV_k),    w_p = N_p conj(V2_k) / |V2_k|^2,
 * N the negative-sequence row of the Fortescue transform.  With
 * psi(j) = w Phi(k<-j) (one pass up k's path) and u(j) = -psi(j) T_j:
 *     share = Re(u(j) P(j<-m) I).
 * P(j<-m) is a product of near-identity matrices (U + Z Y / 2 for a line) as
 * long as no device lies between j and m: the tree is cut into segments
 * wherever the running product R(x) = R(parent) d from the segment's top
 * would leave U by more than NEAR_U in any entry (at devices, and on very
 * long runs of lines), so that inside a segment P(j<-m) = R(j)^-1 R(m) with R
 * well conditioned (|R - U| <= 1/4 entrywise: row sums of R - U at most 3/4,
 * so R is invertible and cond(R) <= 7).  Then
 *     share = Re(v(j) . g),   v(j) = u(j) R(j)^-1,   g = R(m) I (once per load)
 * when j lies in m's segment, and otherwise share = Re(sigma(t) . g) with t
 * the top of m's segment and sigma(t) = u(j) P(j<-t), one pass over the
 * segment tops:  sigma(t) = v(lca(k, f)) K_t when k lies below the top of
 * f's segment, else sigma(parent segment) K_t, f the from bus of t's branch
 * and K_t = R(f) d_t.  The loads whose lca with k is j are those under j but
 * not under j's child towards k: two ranges of the loads in preorder.  Per
 * bus: k's path, the segment tops, each load once.
 *
 * Phases a branch does not carry (zero row and column of d) get 1 on d's
 * diagonal inside R: the current climbing from below is zero on them (a
 * line carries only its phases, the ones below it a subset), so the product
 * applied to it is unchanged, and R stays near U. */

#define NEAR_U 0.25

/* Branch br's A, B and d (any may be NULL): from the paths' arrays, or from
 * the network one branch at a time. */
static void branch_abd(const kl_study_paths *p, int br, kl_complex A[9], kl_complex B[9],
                       kl_complex d[9])
{
    size_t o = 9 * (size_t)br;
    if (p->A && p->B && p->d) {
        if (A)
            memcpy(A, p->A + o, 9 * sizeof *A);
        if (B)
            memcpy(B, p->B + o, 9 * sizeof *B);
        if (d)
            memcpy(d, p->d + o, 9 * sizeof *d);
        return;
    }
    /* a solved network's matrices exist: kl_network_build refused a singular line */
    kl_network_branch_abcd(p->net, br, NULL, NULL, NULL, d, A, B);
}

typedef struct {
    int nb;             /* network buses */
    int *kid_at;        /* [nb+1] children of bus x: kid[kid_at[x] .. kid_at[x+1]-1] */
    int *kid;           /* [nb] */
    int *tin, *tout;    /* [nb] preorder number and end of the subtree; -1 unreached */
    int *depth;         /* [nb] branches from the source */
    int *order;         /* [nb] buses in preorder (nvis of them) */
    int nvis, maxdepth;
    int *seg;           /* [nb] segment of the bus */
    int nseg;
    int *top, *tparent; /* [nb] top bus, parent segment (-1 for the source's) */
    kl_complex *K;      /* [9 nb] R(from) d of the top's branch, by segment */
    int *mark;          /* [nb] compact id of a bus on a target's path, else -1 */
    int nmark;
    kl_complex *T;      /* [9 nmark] T_j */
    kl_complex *Am;     /* [9 nmark] A of the branch feeding j (zero at the source) */
    kl_complex *Rinv;   /* [9 nmark] R(j)^-1 */
    int *lcnt;          /* [nvis+1] network loads on buses of preorder below t */
    int *lfl;           /* [nl] network loads by preorder of their bus: the feeder load
                         * each is part of, -1 when its current is not known */
    int *lseg;          /* [nl] segment of the load's bus (by lfl position) */
    kl_complex *g;      /* [3 nl] R(m) I (by lfl position) */
    int *fcnt;          /* [nvis+1] feeder loads keyed below t */
    int *ford;          /* [nfl] feeder loads by key: the preorder number of their
                         * bus, or of a distributed load's section's load-side bus */
    int ntap, *tap;     /* [nsections] tree sections with fewer phases than their source bus */
    int *tap_lo, *tap_hi; /* [nsections] the tap's loads: ford[tap_lo .. tap_hi-1] */
    int *path;          /* [maxdepth+1] scratch: the source .. k */
    kl_complex *uv;     /* [6 (maxdepth+1)] scratch: u and v along the path */
    kl_complex *sig;    /* [3 nseg] scratch */
    double *pre;        /* [nfl+1] scratch: prefix sums of shares in ford order */
    int *pcnt;          /* [nfl+1] scratch: prefix counts of defined shares */
} transfer;

static void transfer_free(transfer *x)
{
    void *all[] = { x->kid_at, x->kid, x->tin, x->tout, x->depth, x->order, x->seg, x->top,
                    x->tparent, x->K, x->mark, x->T, x->Am, x->Rinv, x->lcnt, x->lfl, x->lseg,
                    x->g, x->fcnt, x->ford, x->tap, x->tap_lo, x->tap_hi, x->path, x->uv, x->sig, x->pre,
                    x->pcnt };
    for (size_t i = 0; i < sizeof all / sizeof all[0]; i++)
        kl_free(all[i]);
    memset(x, 0, sizeof *x);
}

/* r = x M for a row vector x and a row-major 3x3 M. */
static void row_mul(const kl_complex x[3], const kl_complex *M, kl_complex r[3])
{
    for (int q = 0; q < 3; q++)
        r[q] = x[0] * M[q] + x[1] * M[3 + q] + x[2] * M[6 + q];
}

/* Children lists, preorder numbers and depths of the network tree from the
 * source (explicit stack: a deep feeder would overflow the call stack);
 * next and stk are [nb] workspaces. */
static void tree_walk(transfer *x, const kl_study_paths *p, int *next, int *stk)
{
    int nb = x->nb, sp = 0, n = 0;
    for (int b = 0; b < nb; b++)
        if (p->parent[b] >= 0)
            x->kid_at[p->br_from[p->parent[b]] + 1]++;
    for (int b = 0; b < nb; b++)
        x->kid_at[b + 1] += x->kid_at[b];
    for (int b = 0; b < nb; b++)
        next[b] = x->kid_at[b];
    for (int b = 0; b < nb; b++)
        if (p->parent[b] >= 0)
            x->kid[next[p->br_from[p->parent[b]]]++] = b;
    for (int b = 0; b < nb; b++) {
        x->tin[b] = x->tout[b] = -1;
        next[b] = x->kid_at[b];
    }
    x->maxdepth = 0;
    x->depth[p->source] = 0;
    x->tin[p->source] = n;
    x->order[n++] = p->source;
    stk[sp++] = p->source;
    while (sp > 0) {
        int b = stk[sp - 1];
        if (next[b] == x->kid_at[b + 1]) {
            x->tout[b] = n;
            sp--;
            continue;
        }
        int c = x->kid[next[b]++];
        KL_ASSERT(x->tin[c] < 0); /* a tree: every bus reached once */
        x->depth[c] = x->depth[b] + 1;
        x->maxdepth = x->depth[c] > x->maxdepth ? x->depth[c] : x->maxdepth;
        x->tin[c] = n;
        x->order[n++] = c;
        stk[sp++] = c;
    }
    x->nvis = n;
}

/* Marks the buses on the paths from the targets to the source. */
static void mark_paths(transfer *x, const kl_study_paths *p, const int *targets, int ntargets)
{
    for (int b = 0; b < x->nb; b++)
        x->mark[b] = -1;
    x->nmark = 0;
    for (int i = 0; i < ntargets; i++) {
        int b = targets[i];
        if (b < 0 || b >= x->nb || x->tin[b] < 0)
            continue;
        while (x->mark[b] < 0) {
            x->mark[b] = x->nmark++;
            if (p->parent[b] < 0)
                break;
            b = p->br_from[p->parent[b]];
        }
    }
}

/* d with 1 on the diagonal of the phases it does not carry. */
static void d_filled(const kl_complex *d, kl_complex r[9])
{
    memcpy(r, d, 9 * sizeof *r);
    for (int q = 0; q < 3; q++)
        if (r[3 * q] == 0 && r[3 * q + 1] == 0 && r[3 * q + 2] == 0 && r[q] == 0 &&
            r[3 + q] == 0 && r[6 + q] == 0)
            r[4 * q] = 1;
}

static int near_u(const kl_complex R[9])
{
    for (int i = 0; i < 9; i++)
        if (!(cabs(R[i] - (i % 4 == 0)) <= NEAR_U))
            return 0;
    return 1;
}

/* Loads' currents once (they do not depend on the bus looked at). */
static void load_order(transfer *x, const kl_feeder *f, const kl_study_phases *ph,
                       const kl_study_paths *p, int *next)
{
    for (int t = 0; t <= x->nvis; t++)
        x->lcnt[t] = 0;
    for (int n = 0; n < p->nloads; n++)
        if (x->tin[p->ld_bus[n]] >= 0)
            x->lcnt[x->tin[p->ld_bus[n]] + 1]++;
    for (int t = 0; t < x->nvis; t++)
        x->lcnt[t + 1] += x->lcnt[t];
    for (int t = 0; t < x->nvis; t++)
        next[t] = x->lcnt[t];
    for (int n = 0; n < p->nloads; n++) {
        int t = x->tin[p->ld_bus[n]];
        if (t < 0)
            continue;
        int q = next[t]++;
        x->lfl[q] = load_current(f, ph, p, n, &x->g[3 * q]) ? p->ld_load[n] : -1;
    }
}

/* Feeder loads keyed by preorder (for the tap sums) and the taps. */
static void feeder_order(transfer *x, const kl_feeder *f, const kl_study_phases *ph,
                         const kl_feeder_tree *t, int *next, int *key)
{
    for (int i = 0; i <= x->nvis; i++)
        x->fcnt[i] = 0;
    for (int L = 0; L < f->nloads; L++) {
        const kl_load *ld = &f->loads[L];
        int b = ld->bus >= 0 ? ld->bus
              : ld->section >= 0 ? kl_sec_down(&f->sections[ld->section]) : -1;
        key[L] = b >= 0 && b < x->nb ? x->tin[b] : -1;
        if (key[L] >= 0)
            x->fcnt[key[L] + 1]++;
    }
    for (int i = 0; i < x->nvis; i++)
        x->fcnt[i + 1] += x->fcnt[i];
    for (int i = 0; i < x->nvis; i++)
        next[i] = x->fcnt[i];
    for (int L = 0; L < f->nloads; L++)
        if (key[L] >= 0)
            x->ford[next[key[L]]++] = L;
    x->ntap = 0;
    for (int q = 0; q < f->nsections; q++) {
        int down = kl_sec_down(&f->sections[q]);
        if (kl_feeder_tree_psec(t, down) == q && down < x->nb && x->tin[down] >= 0 &&
            is_tap(f, ph, q)) {
            x->tap_lo[x->ntap] = x->fcnt[x->tin[down]];
            x->tap_hi[x->ntap] = x->fcnt[x->tout[down]];
            x->tap[x->ntap++] = q;
        }
    }
}

/* Down the tree in preorder: the segments, R by depth (Rs), T by depth on
 * the marked paths (Ts); each load's g = R(m) I; T and R^-1 of marked buses. */
static kl_status segments(transfer *x, const kl_study_paths *p, kl_complex *Rs, kl_complex *Ts)
{
    x->nseg = 0;
    for (int i = 0; i < x->nvis; i++) {
        int b = x->order[i], dep = x->depth[b], br = p->parent[b];
        kl_complex *R = Rs + 9 * (size_t)dep, *T = Ts + 9 * (size_t)dep;
        if (br < 0) { /* the source: the first segment's top */
            memset(R, 0, 9 * sizeof *R);
            R[0] = R[4] = R[8] = 1;
            memset(T, 0, 9 * sizeof *T);
            if (p->zsource)
                memcpy(T, p->zsource, 9 * sizeof *T);
            x->seg[b] = x->nseg;
            x->top[x->nseg] = b;
            x->tparent[x->nseg++] = -1;
        } else {
            int from = p->br_from[br];
            const kl_complex *Rp = Rs + 9 * (size_t)(dep - 1);
            kl_complex df[9], Rn[9], d[9], A[9], B[9];
            branch_abd(p, br, x->mark[b] >= 0 ? A : NULL, x->mark[b] >= 0 ? B : NULL, d);
            d_filled(d, df);
            kl_cm3_mul(Rp, df, Rn);
            if (near_u(Rn)) {
                memcpy(R, Rn, sizeof Rn);
                x->seg[b] = x->seg[from];
            } else { /* a new segment at b, linked by K = R(from) d */
                kl_cm3_mul(Rp, d, x->K + 9 * (size_t)x->nseg);
                memset(R, 0, 9 * sizeof *R);
                R[0] = R[4] = R[8] = 1;
                x->seg[b] = x->nseg;
                x->top[x->nseg] = b;
                x->tparent[x->nseg++] = x->seg[from];
            }
            if (x->mark[b] >= 0) { /* T_b = A T_from d + B (its parent is marked too) */
                kl_complex AT[9];
                kl_cm3_mul(A, Ts + 9 * (size_t)(dep - 1), AT);
                kl_cm3_mul(AT, d, T);
                for (int e = 0; e < 9; e++)
                    T[e] += B[e];
                memcpy(x->Am + 9 * (size_t)x->mark[b], A, sizeof A);
            }
        }
        if (x->mark[b] >= 0) {
            memcpy(x->T + 9 * (size_t)x->mark[b], T, 9 * sizeof *T);
            if (kl_cm3_inverse(R, x->Rinv + 9 * (size_t)x->mark[b]))
                return KL_EARG; /* cannot happen: R is near U (NEAR_U) */
        }
        for (int q = x->lcnt[i]; q < x->lcnt[i + 1]; q++) { /* the loads at b */
            kl_complex I3[3] = { x->g[3 * q], x->g[3 * q + 1], x->g[3 * q + 2] };
            kl_cm3_vec(R, I3, &x->g[3 * q]);
            x->lseg[q] = x->seg[b];
        }
    }
    return KL_OK;
}

static kl_status transfer_alloc(transfer *x, const kl_feeder *f, const kl_study_paths *p)
{
    size_t nb = (size_t)p->nbuses + 1, nl = (size_t)(p->nloads > 0 ? p->nloads : 1),
           nfl = (size_t)f->nloads + 1, ns = (size_t)f->nsections + 1;
    memset(x, 0, sizeof *x);
    x->nb = p->nbuses;
    x->kid_at = kl_calloc(nb + 1, sizeof *x->kid_at);
    x->kid = kl_malloc(nb * sizeof *x->kid);
    x->tin = kl_malloc(nb * sizeof *x->tin);
    x->tout = kl_malloc(nb * sizeof *x->tout);
    x->depth = kl_malloc(nb * sizeof *x->depth);
    x->order = kl_malloc(nb * sizeof *x->order);
    x->seg = kl_malloc(nb * sizeof *x->seg);
    x->top = kl_malloc(nb * sizeof *x->top);
    x->tparent = kl_malloc(nb * sizeof *x->tparent);
    x->K = kl_malloc(9 * nb * sizeof *x->K);
    x->mark = kl_malloc(nb * sizeof *x->mark);
    x->lcnt = kl_malloc((nb + 1) * sizeof *x->lcnt);
    x->lfl = kl_malloc(nl * sizeof *x->lfl);
    x->lseg = kl_malloc(nl * sizeof *x->lseg);
    x->g = kl_malloc(3 * nl * sizeof *x->g);
    x->fcnt = kl_malloc((nb + 1) * sizeof *x->fcnt);
    x->ford = kl_malloc(nfl * sizeof *x->ford);
    x->tap = kl_malloc(ns * sizeof *x->tap);
    x->tap_lo = kl_malloc(ns * sizeof *x->tap_lo);
    x->tap_hi = kl_malloc(ns * sizeof *x->tap_hi);
    x->pre = kl_malloc((nfl + 1) * sizeof *x->pre);
    x->pcnt = kl_malloc((nfl + 1) * sizeof *x->pcnt);
    return x->kid_at && x->kid && x->tin && x->tout && x->depth && x->order && x->seg &&
           x->top && x->tparent && x->K && x->mark && x->lcnt && x->lfl && x->lseg &&
           x->g && x->fcnt && x->ford && x->tap && x->tap_lo && x->tap_hi && x->pre && x->pcnt
           ? KL_OK : KL_ENOMEM;
}

/* Everything that does not depend on the bus looked at, for the targets'
 * paths: tree, segments, loads' g, T and R^-1 on the paths, the taps. */
static kl_status transfer_build(transfer *x, const kl_feeder *f, const kl_study_phases *ph,
                                const kl_feeder_tree *t, const kl_study_paths *p,
                                const int *targets, int ntargets)
{
    kl_status st = transfer_alloc(x, f, p);
    size_t nb = (size_t)p->nbuses + 1;
    int *next = kl_malloc(nb * sizeof *next), *stk = kl_malloc(nb * sizeof *stk);
    int *key = kl_malloc(((size_t)f->nloads + 1) * sizeof *key);
    kl_complex *Rs = NULL, *Ts = NULL;
    if (st || !next || !stk || !key) {
        st = KL_ENOMEM;
        goto done;
    }
    tree_walk(x, p, next, stk);
    mark_paths(x, p, targets, ntargets);
    load_order(x, f, ph, p, next);
    feeder_order(x, f, ph, t, next, key);
    size_t depth = (size_t)x->maxdepth + 1, nm = (size_t)(x->nmark > 0 ? x->nmark : 1);
    Rs = kl_malloc(9 * depth * sizeof *Rs);
    Ts = kl_malloc(9 * depth * sizeof *Ts);
    x->T = kl_malloc(9 * nm * sizeof *x->T);
    x->Rinv = kl_malloc(9 * nm * sizeof *x->Rinv);
    x->Am = kl_calloc(9 * nm, sizeof *x->Am);
    x->path = kl_malloc(depth * sizeof *x->path);
    x->uv = kl_malloc(6 * depth * sizeof *x->uv);
    if (!Rs || !Ts || !x->T || !x->Rinv || !x->Am || !x->path || !x->uv) {
        st = KL_ENOMEM;
        goto done;
    }
    if ((st = segments(x, p, Rs, Ts)))
        goto done;
    x->sig = kl_malloc(3 * (size_t)x->nseg * sizeof *x->sig);
    st = x->sig ? KL_OK : KL_ENOMEM;
done:
    kl_free(next);
    kl_free(stk);
    kl_free(key);
    kl_free(Rs);
    kl_free(Ts);
    return st;
}

/* Index on the path (0 the source .. D the bus) of the deepest bus above
 * or at bus b, b under path[0]. */
static int deepest_above(const transfer *x, int D, int b)
{
    int lo = 0, hi = D, tb = x->tin[b]; /* path[lo] is above b; find the last one */
    while (lo < hi) {
        int mid = (lo + hi + 1) / 2, j = x->path[mid];
        if (x->tin[j] <= tb && tb < x->tout[j])
            lo = mid;
        else
            hi = mid - 1;
    }
    return lo;
}

/* u and v along k's path (from w up the path), then sigma of every segment
 * top; returns D, the index of k on the path. */
static int transfer_path(transfer *x, const kl_study_paths *p, int k, const kl_complex w[3])
{
    int D = x->depth[k];
    for (int i = D, b = k; i >= 0; i--) {
        x->path[i] = b;
        if (i > 0)
            b = p->br_from[p->parent[b]];
    }
    kl_complex psi[3] = { w[0], w[1], w[2] }, nxt[3];
    for (int i = D; i >= 0; i--) {
        int b = x->path[i], m = x->mark[b];
        kl_complex *u = x->uv + 6 * (size_t)i, *v = u + 3;
        KL_ASSERT(m >= 0); /* every target's path was marked */
        row_mul(psi, x->T + 9 * (size_t)m, u);
        for (int q = 0; q < 3; q++)
            u[q] = -u[q];
        row_mul(u, x->Rinv + 9 * (size_t)m, v);
        if (i > 0) {
            row_mul(psi, x->Am + 9 * (size_t)m, nxt);
            memcpy(psi, nxt, sizeof psi);
        }
    }
    int tk = x->tin[k];
    for (int s = 1; s < x->nseg; s++) { /* tops in preorder: parents first */
        int from = p->br_from[p->parent[x->top[s]]], ps = x->tparent[s], tp = x->top[ps];
        const kl_complex *left;
        if (x->tin[tp] <= tk && tk < x->tout[tp]) /* k under the top of from's segment */
            left = x->uv + 6 * (size_t)deepest_above(x, D, from) + 3;
        else
            left = x->sig + 3 * (size_t)ps;
        row_mul(left, x->K + 9 * (size_t)s, x->sig + 3 * (size_t)s);
    }
    return D;
}

/* Adds the shares of the loads in positions [lo, hi) of lord, their lca
 * with k being the path's bus i. */
static void range_shares(const transfer *x, int i, int lo, int hi, double *share)
{
    int sj = x->seg[x->path[i]];
    const kl_complex *v = x->uv + 6 * (size_t)i + 3;
    for (int q = lo; q < hi; q++) {
        int L = x->lfl[q];
        if (L < 0)
            continue;
        const kl_complex *c = x->lseg[q] == sj ? v : x->sig + 3 * (size_t)x->lseg[q];
        const kl_complex *g = x->g + 3 * (size_t)q;
        if (isnan(share[L]))
            share[L] = 0;
        share[L] += creal(c[0] * g[0] + c[1] * g[1] + c[2] * g[2]);
    }
}

/* share[L] for every feeder load at bus k (a marked target); NAN where the
 * load draws nothing known, or everywhere when k has no negative sequence. */
static void transfer_shares(transfer *x, const kl_feeder *f, const kl_study_phases *ph,
                            const kl_study_paths *p, int k, double *share, double *total)
{
    const kl_complex *vk = &ph->v[3 * k];
    kl_complex v2 = neg_seq(vk), w[3];
    double den = creal(v2 * conj(v2));
    *total = 0;
    for (int L = 0; L < f->nloads; L++)
        share[L] = NAN;
    if (k >= x->nb || x->tin[k] < 0 || x->mark[k] < 0)
        return;
    for (int q = 0; q < 3; q++) { /* w_q = N_q conj(V2) / |V2|^2: the row of neg_seq */
        kl_complex e[3] = { 0, 0, 0 };
        e[q] = 1;
        w[q] = den > 0 ? neg_seq(e) * conj(v2) / den : NAN;
    }
    int D = transfer_path(x, p, k, w);
    for (int i = 0; i <= D; i++) {
        int j = x->path[i], c = i < D ? x->path[i + 1] : -1;
        int lo = x->lcnt[x->tin[j]], hi = x->lcnt[x->tout[j]];
        if (c < 0) {
            range_shares(x, i, lo, hi, share);
            continue;
        }
        range_shares(x, i, lo, x->lcnt[x->tin[c]], share);
        range_shares(x, i, x->lcnt[x->tout[c]], hi, share);
    }
    for (int L = 0; L < f->nloads; L++)
        if (!isnan(share[L]))
            *total += share[L];
}

/* Each tap's share (the sum over the loads past it) and its count of loads
 * with a share, from prefix sums over the feeder loads in preorder. */
static void transfer_taps(transfer *x, const double *share,
                          double *tap_share, int *tap_loads)
{
    int nfl = x->fcnt[x->nvis];
    x->pre[0] = 0;
    x->pcnt[0] = 0;
    for (int q = 0; q < nfl; q++) {
        double sh = share[x->ford[q]];
        x->pre[q + 1] = x->pre[q] + (isnan(sh) ? 0 : sh);
        x->pcnt[q + 1] = x->pcnt[q] + !isnan(sh);
    }
    for (int i = 0; i < x->ntap; i++) {
        int lo = x->tap_lo[i], hi = x->tap_hi[i];
        tap_share[i] = x->pre[hi] - x->pre[lo];
        tap_loads[i] = x->pcnt[hi] - x->pcnt[lo];
    }
}

kl_status kl_contrib_shares(const kl_feeder *f, const kl_study_phases *ph,
                            const kl_study_paths *paths, int bus,
                            double *share, double *total, kl_errors *err)
{
    transfer x = { 0 };
    const kl_feeder_tree *t;
    kl_feeder_tree *own = NULL;
    kl_status st = paths_check(f, paths, bus, err);
    if (st != KL_OK)
        return st;
    if (kl_feeder_tree_of(f, &t, &own, NULL) == KL_ENOMEM ||
        transfer_build(&x, f, ph, t, paths, &bus, 1) != KL_OK) {
        kl_feeder_tree_free(own);
        transfer_free(&x);
        kl_errors_add(err, NULL, 0, 0, "contributors", "out of memory");
        return KL_ENOMEM;
    }
    transfer_shares(&x, f, ph, paths, bus, share, total);
    transfer_free(&x);
    kl_feeder_tree_free(own);
    return KL_OK;
}

/* ---- ranking */

typedef struct { int kind, id; double share; } contrib_item;

/* The ranking's order: larger share first, then loads before taps, then
 * the lower id (a total order, so ties rank the same on every platform). */
static int ranks_before(const contrib_item *a, const contrib_item *b)
{
    if (a->share != b->share)
        return a->share > b->share;
    if (a->kind != b->kind)
        return a->kind < b->kind;
    return a->id < b->id;
}

/* Keeps the best `keep` items in a heap whose root is the worst kept:
 * each candidate costs one comparison unless it enters (log keep). */
static void heap_offer(contrib_item *h, int *n, int keep, contrib_item it)
{
    int i;
    if (*n < keep) {
        i = (*n)++;
        while (i > 0 && ranks_before(&h[(i - 1) / 2], &it)) {
            h[i] = h[(i - 1) / 2];
            i = (i - 1) / 2;
        }
        h[i] = it;
        return;
    }
    if (keep == 0 || !ranks_before(&it, &h[0]))
        return;
    i = 0;
    for (;;) {
        int c = 2 * i + 1;
        if (c >= *n)
            break;
        if (c + 1 < *n && ranks_before(&h[c], &h[c + 1]))
            c++;
        if (!ranks_before(&it, &h[c]))
            break;
        h[i] = h[c];
        i = c;
    }
    h[i] = it;
}

static int by_rank(const void *a, const void *b)
{
    const contrib_item *x = a, *y = b;
    return ranks_before(y, x) - ranks_before(x, y);
}

typedef struct {
    transfer x;
    double *share;      /* [nloads] */
    double *tap_share;  /* [ntap] */
    int *tap_loads;     /* [ntap] */
    contrib_item *heap; /* [max_contributors] */
    unsigned char *abc; /* [nloads] 1 for a three-phase load (read per bus: a byte, not
                         * the load record) */
} rank_ws;

static void rank_ws_free(rank_ws *r)
{
    transfer_free(&r->x);
    kl_free(r->share);
    kl_free(r->tap_share);
    kl_free(r->tap_loads);
    kl_free(r->heap);
    kl_free(r->abc);
}

static kl_status rank_ws_alloc(const kl_feeder *f, const kl_feeder_tree *t,
                               const kl_study_phases *ph, const kl_study_paths *p,
                               const kl_study *s, int keep, rank_ws *r)
{
    size_t nl = (size_t)f->nloads + 1, ns = (size_t)f->nsections + 1;
    if (transfer_build(&r->x, f, ph, t, p, s->cbus, s->ncbus) != KL_OK)
        return KL_ENOMEM;
    r->share = kl_calloc(nl, sizeof *r->share);
    r->tap_share = kl_calloc(ns, sizeof *r->tap_share);
    r->tap_loads = kl_calloc(ns, sizeof *r->tap_loads);
    r->heap = kl_calloc((size_t)(keep > 0 ? keep : 1), sizeof *r->heap);
    r->abc = kl_malloc(nl);
    if (!r->share || !r->tap_share || !r->tap_loads || !r->heap || !r->abc)
        return KL_ENOMEM;
    for (int L = 0; L < f->nloads; L++)
        r->abc[L] = f->loads[L].phases == KL_PH_ABC;
    return KL_OK;
}

/* Ranks the candidates at one bus into s (slot c of the contributor table). */
static void rank_bus(const kl_feeder *f, const kl_study_phases *ph,
                     const kl_study_paths *p, const kl_study_options *opt,
                     rank_ws *r, kl_study *s, int c)
{
    int k = s->cbus[c], n = 0, keep = opt->max_contributors > 0 ? opt->max_contributors : 0;
    double total;
    transfer_shares(&r->x, f, ph, p, k, r->share, &total);
    transfer_taps(&r->x, r->share, r->tap_share, r->tap_loads);
    s->c_unbal_total[c] = s->c_three_phase[c] = 0;
    for (int L = 0; L < f->nloads; L++) {
        if (isnan(r->share[L]))
            continue;
        /* Three-phase loads are ranked too: an unequal one can outweigh
         * every single-phase load, and the analyst must see it. */
        if (r->abc[L])
            s->c_three_phase[c] += r->share[L];
        else
            s->c_unbal_total[c] += r->share[L];
        heap_offer(r->heap, &n, keep, (contrib_item){ KL_CONTRIB_LOAD, L, r->share[L] });
    }
    /* A tap with one load would repeat that load's line. */
    for (int i = 0; i < r->x.ntap; i++)
        if (r->tap_loads[i] >= 2)
            heap_offer(r->heap, &n, keep,
                       (contrib_item){ KL_CONTRIB_TAP, r->x.tap[i], r->tap_share[i] });
    s->c_remainder[c] = 1.0 - total;
    qsort(r->heap, (size_t)n, sizeof *r->heap, by_rank);
    s->cstart[c + 1] = s->cstart[c] + n;
    for (int j = 0; j < n; j++) {
        int at = s->cstart[c] + j;
        s->ckind[at] = r->heap[j].kind;
        s->cid[at] = r->heap[j].id;
        s->cshare[at] = r->heap[j].share;
    }
}

typedef struct { double vuf; int bus; } flagged;

/* Worst VUF first, then the lower bus id. */
static int by_vuf_desc(const void *a, const void *b)
{
    const flagged *x = a, *y = b;
    if (x->vuf != y->vuf)
        return (x->vuf < y->vuf) - (x->vuf > y->vuf);
    return (x->bus > y->bus) - (x->bus < y->bus);
}

/* Buses over an unbalance level (and the complaint's bus), worst VUF first. */
static kl_status select_buses(kl_study *s, int at_bus)
{
    flagged *fl = kl_malloc(((size_t)s->nbuses + 1) * sizeof *fl);
    if (!fl)
        return KL_ENOMEM;
    s->ncbus = 0;
    for (int b = 0; b < s->nbuses; b++)
        if (s->vuf_flags[b] > 0 || (b == at_bus && s->unb[b].defined))
            fl[s->ncbus++] = (flagged){ s->unb[b].vuf, b };
    qsort(fl, (size_t)s->ncbus, sizeof *fl, by_vuf_desc);
    for (int c = 0; c < s->ncbus; c++)
        s->cbus[c] = fl[c].bus;
    kl_free(fl);
    return KL_OK;
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
    if (select_buses(s, at_bus) != KL_OK)
        return KL_ENOMEM;
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
    st = table_alloc(s, opt->max_contributors, opt->at_bus);
    if (st == KL_OK)
        st = rank_ws_alloc(f, t, ph, paths, s, opt->max_contributors, &r);
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
