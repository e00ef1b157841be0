/* kilter: the nodal cross-check of the load flow, solved with KLU.
 *
 *     M x = r,   x = [ V (bus phases) ; I (device and switch branch currents) ]
 *
 * M is the three-phase nodal admittance matrix of the lines, augmented with
 * one current unknown per phase of every device and switch (modified nodal
 * analysis), so every branch keeps exactly the model the sweep uses:
 *   line k:    primitive admittance [[Y + Ysh/2, -Y], [-Y, Y + Ysh/2]],
 *              Y = Zser^-1 on the present phases (pi model; Kersting ch. 6,
 *              from memory), stamped into the KCL rows of both buses;
 *   device k:  V_to - A V_from + B I_to = 0    (the branch's own row)
 *              KCL from += d I_to (+ yg V_from, a grounding bank's
 *              zero-sequence path, network.h),  KCL to -= I_to
 *              (the generalized-matrix form of network.h, Kersting ch. 7-8).
 * Why the augmented form for devices: A of a delta/wye bank is singular and
 * B of a regulator or closed switch is zero, so a Y-form primitive would need
 * an invented admittance (a small conductance to ground on ungrounded
 * windings, a large one for a closed switch) and would no longer be the
 * sweep's model.  The extra rows are exact and the switch and device
 * currents come out of the solution directly, which a loop needs (no
 * accumulation down a tree is possible there).
 *
 * Source: an ideal source replaces its bus's KCL rows by V = E; a Thevenin
 * source adds Ys = Zs^-1 to them with the Norton current Ys E, E updated each
 * iteration so that the bus's positive sequence stays at its set value
 * (source.c).
 *
 * Loads and capacitors are current injections (fixed-point current-injection
 * iteration): M does not depend on the loads, so it is ordered and factored
 * once (klu_analyze_given with the leaves-first numbering, klu_z_factor), each iteration is one klu_z_solve with
 * r = -J(V) from load_model.c, and a tap change only refactors (klu_z_refactor,
 * same pattern).  Stop when the largest phase-voltage change between two
 * iterations is below tol (per unit of the bus base), as the sweep does.
 *
 * Complex KLU (klu_z_*) rather than a real 2n x 2n system: half the
 * unknowns, a quarter of the index storage, and the same ordering. */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <klu.h>
#include "kilter/flow.h"
#include "kl_flow.h"

/* Pattern assembly runs the same stamping walk three times: count entries
 * per column, record their rows, then (after compression) add values. */
typedef enum { ST_COUNT, ST_ROWS, ST_VALUES, ST_RESIDUAL } stamp_mode;

typedef struct kl_nodal {
    int n;                 /* unknowns */
    int nnz;               /* entries of M */
    int *Ap;               /* [n+1] column starts */
    int *Ai;               /* [nnz] row indices, sorted within each column */
    kl_complex *Ax;        /* [nnz] values */
    int *vidx;             /* [3*nbuses] unknown of V(bus, phase), -1 when absent */
    int *iidx;             /* [3*ndev] unknown of I_to(device branch, phase) by device slot
                            * (dev[k], network.h): lines have no current unknowns */
    kl_complex *x;         /* [n] right-hand side in, solution out */
    kl_complex *b;         /* [n] the right-hand side kept for refinement */
    kl_complex *r;         /* [n] refinement: residual b - M x, then the correction */
    kl_complex *yl;        /* [nzy/2] each line's Y = Zser^-1 on its m present phases, packed
                            * m x m at zy_at[k]/2 (the network's Z, Y take 2 m^2 at zy_at[k]):
                            * the residual reads it rather than inverting again */
    int *fill;             /* [n] pattern build: entries placed per column */
    int ideal_source;      /* 1: the source bus rows hold V = E */
    int fixed;             /* first of the source bus's three unknowns (numbered last) */
    int nfixed;            /* 3 with an ideal source: rows fixed..fixed+2 take nothing
                            * but V = E; 0 otherwise */
    kl_complex ys[9];      /* Thevenin source admittance Zs^-1 */
    stamp_mode mode;
    int *taps;             /* [3*nregulators] taps M was last assembled with */
    int refine;            /* refine each solve: -1 not yet known for these factors (the
                            * next loaded solve probes), 0 no, 1 yes (see refine()) */
    klu_common common;
    klu_symbolic *sym;
    klu_numeric *num;
} kl_nodal;

/* ---- unknown numbering -------------------------------------------------- */

static int is_line(const kl_network *n, int k)
{
    return n->br_kind[k] == KL_BR_LINE;
}

/* Phases of the branch's own current unknowns: the load side's. */
static int to_mask(const kl_network *n, int k)
{
    return n->br_kind[k] == KL_BR_TRANSFORMER ? n->phases[n->br_to[k]] : n->br_phases[k];
}

static void number_currents(const kl_network *n, kl_nodal *w, int k, int *u)
{
    for (int p = 0; p < 3; p++)
        if (to_mask(n, k) & (1 << p))
            w->iidx[3 * n->dev[k] + p] = (*u)++;
}

/* Leaves first: buses in reverse sweep order, each preceded by the current
 * unknowns of the device feeding it, then loop-closing switches, the source
 * bus last.  Eliminating a tree from its leaves creates no fill, so on a
 * radial network this natural order is already a perfect elimination order
 * and no fill-reducing ordering (AMD) is needed; a closed loop adds fill
 * only along the loop. */
static void number_unknowns(const kl_network *n, kl_nodal *w)
{
    int u = 0, nbr = n->nbranches + n->nlinks;
    for (int i = 0; i < 3 * n->nbuses; i++)
        w->vidx[i] = -1;
    for (int i = 0; i < 3 * n->ndev; i++)
        w->iidx[i] = -1;
    for (int o = n->nbuses - 1; o >= 0; o--) {
        int b = n->order[o], k = n->parent[b];
        if (b == n->source || !n->phases[b])
            continue; /* the source is numbered last; a de-energized bus has no unknowns */
        /* leaves first only if every bus comes after its parent in order[] */
        KL_ASSERT(k >= 0 && n->pos[b] == o && n->pos[n->br_from[k]] < o);
        if (k >= 0 && !is_line(n, k))
            number_currents(n, w, k, &u);
        for (int p = 0; p < 3; p++)
            if (n->phases[b] & (1 << p))
                w->vidx[3 * b + p] = u++;
    }
    for (int k = n->nbranches; k < nbr; k++)
        if (!is_line(n, k))
            number_currents(n, w, k, &u);
    w->fixed = u;
    for (int p = 0; p < 3; p++)
        w->vidx[3 * n->source + p] = u++;
    w->n = u;
}

/* ---- stamping ------------------------------------------------------------ */

/* Adds v at (row i, column j) in the present mode.  A KCL row of an ideal
 * source bus is replaced by V = E, so nothing else is stamped into it. */
static void put_raw(kl_nodal *w, int i, int j, kl_complex v);

static void put(kl_nodal *w, int i, int j, kl_complex v)
{
    if (i < 0 || j < 0)
        return;
    if (i >= w->fixed && i < w->fixed + w->nfixed)
        return;
    put_raw(w, i, j, v);
}

static void put_raw(kl_nodal *w, int i, int j, kl_complex v)
{
    if (w->mode == ST_RESIDUAL) {
        w->r[i] -= v * w->x[j];
    } else if (w->mode == ST_COUNT) {
        w->Ap[j + 1]++;
    } else if (w->mode == ST_ROWS) {
        w->Ai[w->Ap[j] + w->fill[j]++] = i;
    } else {
        for (int e = w->Ap[j]; e < w->Ap[j + 1]; e++)
            if (w->Ai[e] == i) {
                w->Ax[e] += v;
                return;
            }
        /* refactoring keeps the pattern of the first assembly: every value
         * stamped later must fall on it (stamp_device stamps A and d in full
         * on the masks for that reason) */
        KL_ASSERT(0 && "a value stamped outside the nodal matrix's pattern");
    }
}

/* Y = Zser^-1 on the branch's phases (identity stands in for absent ones). */
static int line_admittance(const kl_network *n, int k, kl_complex Y[9])
{
    int mask = n->br_phases[k];
    kl_complex z[9];
    kl_network_line_zy(n, k, z, NULL);
    for (int p = 0; p < 3; p++)
        if (!(mask & (1 << p)))
            z[4 * p] = 1.0;
    if (kl_cm3_inverse(z, Y))
        return -1;
    kl_cm3_mask(Y, mask);
    return 0;
}

/* Residual rows of line k, r -= M x restricted to the line, as the line's
 * currents: I_from = Y (Vf - Vt) + Ysh/2 Vf, I_to = Y (Vf - Vt) - Ysh/2 Vt,
 * from the packed Y (yl) and Ysh (the network's zy) on the m present phases.
 * Why not the matrix product: Y Vf - Y Vt subtracts two products of a large
 * admittance and a full voltage that nearly cancel, losing the digits of the
 * small voltage drop (error eps |Y| |V| per row); the difference Vf - Vt is
 * exact in floating point when the two are close, so the current comes out
 * with error about eps |I|, and refinement with this residual converges to
 * the accuracy of the branch equations at any depth (Higham, "Accuracy and
 * Stability of Numerical Algorithms", ch. 12: refinement with a residual more
 * accurate than the factorization, from memory). */
static void residual_line(kl_nodal *w, const kl_network *n, int k)
{
    static const int PN[8] = {0, 1, 1, 2, 1, 2, 2, 3};
    static const int PL[8][3] = {{0}, {0}, {1}, {0, 1}, {2}, {0, 2}, {1, 2}, {0, 1, 2}};
    int mask = n->br_phases[k], m = PN[mask], at = n->zy_at[k];
    const int *l = PL[mask];
    if (at < 0)
        return; /* a line with no phases carries nothing */
    const kl_complex *Y = w->yl + at / 2, *ysh = n->zy + at + m * m;
    const int *vf = w->vidx + 3 * n->br_from[k], *vt = w->vidx + 3 * n->br_to[k];
    kl_complex dv[3], xf[3], xt[3];
    for (int i = 0; i < m; i++) {
        int uf = vf[l[i]], ut = vt[l[i]];
        KL_ASSERT(uf >= 0 && ut >= 0); /* a line's phases are present at both its buses */
        xf[i] = w->x[uf];
        xt[i] = w->x[ut];
        dv[i] = xf[i] - xt[i];
    }
    for (int i = 0; i < m; i++) {
        kl_complex c = 0, sf = 0, st = 0;
        for (int j = 0; j < m; j++) {
            c += Y[m * i + j] * dv[j];
            sf += ysh[m * i + j] * xf[j];
            st += ysh[m * i + j] * xt[j];
        }
        int uf = vf[l[i]], ut = vt[l[i]];
        if (!(uf >= w->fixed && uf < w->fixed + w->nfixed)) /* an ideal source's rows hold V = E */
            w->r[uf] -= c + 0.5 * sf;
        if (!(ut >= w->fixed && ut < w->fixed + w->nfixed))
            w->r[ut] -= -c + 0.5 * st;
    }
}

/* Keeps line k's Y, packed on its present phases, for the residual. */
static void keep_admittance(kl_nodal *w, const kl_network *n, int k, const kl_complex Y[9])
{
    int at = n->zy_at[k], m = 0, l[3];
    if (at < 0)
        return;
    KL_ASSERT(at % 2 == 0); /* Z, Y pairs of 2 m^2 entries: offsets even, halves disjoint */
    for (int p = 0; p < 3; p++)
        if (n->br_phases[k] & (1 << p))
            l[m++] = p;
    for (int i = 0; i < m; i++)
        for (int j = 0; j < m; j++)
            w->yl[at / 2 + m * i + j] = Y[3 * l[i] + l[j]];
}

static int stamp_line(kl_nodal *w, const kl_network *n, int k)
{
    kl_complex Y[9] = {0}, ysh[9] = {0}; /* the pattern passes need no values */
    if (w->mode == ST_RESIDUAL) {
        residual_line(w, n, k);
        return 0;
    }
    if (w->mode == ST_VALUES && line_admittance(n, k, Y))
        return -1;
    if (w->mode == ST_VALUES) {
        kl_network_line_zy(n, k, NULL, ysh);
        keep_admittance(w, n, k, Y);
    }
    const int *vf = w->vidx + 3 * n->br_from[k], *vt = w->vidx + 3 * n->br_to[k];
    int m = n->br_phases[k];
    for (int p = 0; p < 3; p++)
        for (int q = 0; q < 3; q++) {
            if (!(m & (1 << p)) || !(m & (1 << q)))
                continue;
            kl_complex self = Y[3 * p + q] + 0.5 * ysh[3 * p + q];
            put(w, vf[p], vf[q], self);
            put(w, vf[p], vt[q], -Y[3 * p + q]);
            put(w, vt[p], vf[q], -Y[3 * p + q]);
            put(w, vt[p], vt[q], self);
        }
    return 0;
}

/* Device or closed switch: its row V_to - A V_from + B I_to = 0 and its
 * currents in both buses' KCL.  A and d are stamped in full on the masks
 * (a regulator's zero entries become nonzero at other taps, and the pattern
 * must not change); B only where nonzero (it never changes). */
static void stamp_device(kl_nodal *w, const kl_network *n, int k)
{
    size_t s = 9 * (size_t)n->dev[k]; /* device slot (network.h) */
    const kl_complex *A = n->A + s, *B = n->B + s, *d = n->d + s;
    const int *vf = w->vidx + 3 * n->br_from[k], *vt = w->vidx + 3 * n->br_to[k];
    const int *ik = w->iidx + 3 * (size_t)n->dev[k];
    int mf = n->br_phases[k], mt = to_mask(n, k);
    for (int p = 0; p < 3; p++) {
        if (!(mt & (1 << p)))
            continue;
        put(w, ik[p], vt[p], 1.0);
        put(w, vt[p], ik[p], -1.0);
        for (int q = 0; q < 3; q++) {
            if (mf & (1 << q)) {
                put(w, ik[p], vf[q], -A[3 * p + q]);
                put(w, vf[q], ik[p], d[3 * q + p]);
            }
            if ((mt & (1 << q)) && B[3 * p + q] != 0)
                put(w, ik[p], ik[q], B[3 * p + q]);
        }
    }
    /* a grounding bank's zero-sequence path: yg V_from into the from-bus KCL
     * (fixed, never changes with taps) */
    const kl_complex *yg = n->yg + s;
    for (int p = 0; p < 3; p++)
        for (int q = 0; q < 3; q++)
            if ((mf & (1 << p)) && (mf & (1 << q)) && yg[3 * p + q] != 0)
                put(w, vf[p], vf[q], yg[3 * p + q]);
}

static void stamp_source(kl_nodal *w, const kl_network *n)
{
    const int *vs = w->vidx + 3 * n->source;
    for (int p = 0; p < 3; p++)
        for (int q = 0; q < 3; q++) {
            if (w->ideal_source && p == q)
                put_raw(w, vs[p], vs[p], 1.0);
            else if (!w->ideal_source)
                put(w, vs[p], vs[q], w->ys[3 * p + q]);
        }
}

/* One stamping walk over the whole network; returns the first line whose
 * series impedance cannot be inverted, or -1. */
static int stamp_all(kl_nodal *w, const kl_network *n)
{
    stamp_source(w, n);
    for (int k = 0; k < n->nbranches + n->nlinks; k++) {
        if (!is_line(n, k))
            stamp_device(w, n, k);
        else if (stamp_line(w, n, k))
            return k;
    }
    return -1;
}

/* ---- pattern and values --------------------------------------------------- */

/* Sorts each column's rows and merges repeats (several branches meet at a
 * bus), compacting Ai in place and rewriting Ap. */
static void compress_columns(kl_nodal *w)
{
    int out = 0;
    for (int j = 0; j < w->n; j++) {
        int lo = w->Ap[j], hi = w->Ap[j + 1], start = out;
        for (int e = lo + 1; e < hi; e++) { /* insertion sort: columns hold a few dozen rows */
            int r = w->Ai[e], f = e - 1;
            while (f >= lo && w->Ai[f] > r) {
                w->Ai[f + 1] = w->Ai[f];
                f--;
            }
            w->Ai[f + 1] = r;
        }
        for (int e = lo; e < hi; e++)
            if (out == start || w->Ai[out - 1] != w->Ai[e])
                w->Ai[out++] = w->Ai[e];
        w->Ap[j] = start;
    }
    w->Ap[w->n] = out;
    w->nnz = out;
}

/* Builds Ap, Ai (count, place, compress) and allocates Ax. */
static kl_status build_pattern(kl_nodal *w, const kl_network *n)
{
    w->mode = ST_COUNT;
    stamp_all(w, n);
    for (int j = 0; j < w->n; j++)
        w->Ap[j + 1] += w->Ap[j];
    w->Ai = kl_malloc(sizeof(int) * ((size_t)w->Ap[w->n] + 1));
    if (!w->Ai)
        return KL_ENOMEM;
    w->mode = ST_ROWS;
    memset(w->fill, 0, sizeof(int) * (size_t)w->n);
    stamp_all(w, n);
    /* the two walks stamp the same entries: each column got what it counted */
    for (int j = 0; j < w->n; j++)
        KL_ASSERT(w->fill[j] == w->Ap[j + 1] - w->Ap[j]);
    compress_columns(w);
    int *shrunk = kl_realloc(w->Ai, sizeof(int) * ((size_t)w->nnz + 1));
    if (shrunk)
        w->Ai = shrunk;
    w->Ax = kl_malloc(sizeof(kl_complex) * ((size_t)w->nnz + 1));
    return w->Ax ? KL_OK : KL_ENOMEM;
}

/* Values into the pattern; returns a line whose series impedance cannot be
 * inverted (then M is incomplete), or -1. */
static int assemble_values(kl_nodal *w, const kl_network *n)
{
    memset(w->Ax, 0, sizeof(kl_complex) * (size_t)w->nnz);
    w->mode = ST_VALUES;
    memcpy(w->taps, n->tap, sizeof(int) * 3 * (size_t)n->feeder->nregulators);
    return stamp_all(w, n);
}

static kl_status singular_line(const kl_network *n, int k, kl_errors *err)
{
    const kl_section *sc = &n->feeder->sections[n->br_section[k]];
    char elem[128];
    snprintf(elem, sizeof elem, "section %s", sc->name ? sc->name : "?");
    kl_errors_add(err, n->feeder->path, sc->loc.line, sc->loc.col, elem, "the series impedance "
                  "matrix is singular, so the line has no admittance: check its "
                  "construction's impedances");
    return KL_EINPUT;
}

/* ---- workspace -------------------------------------------------------------- */

static void nodal_free(struct kl_nodal *w)
{
    if (!w)
        return;
    if (w->num)
        klu_z_free_numeric(&w->num, &w->common);
    if (w->sym)
        klu_free_symbolic(&w->sym, &w->common);
    kl_free(w->Ap);
    kl_free(w->Ai);
    kl_free(w->Ax);
    kl_free(w->vidx);
    kl_free(w->iidx);
    kl_free(w->x);
    kl_free(w->b);
    kl_free(w->r);
    kl_free(w->yl);
    kl_free(w->fill);
    kl_free(w->taps);
    kl_free(w);
}

/* The Thevenin admittance, or an ideal source when there is no impedance. */
static kl_status source_setup(kl_nodal *w, const kl_network *n, kl_errors *err)
{
    w->ideal_source = 1;
    w->nfixed = 3;
    if (!n->has_zsource)
        return KL_OK;
    int zero = 1;
    for (int i = 0; i < 9; i++)
        zero = zero && n->zsource[i] == 0;
    if (zero)
        return KL_OK;
    if (kl_cm3_inverse(n->zsource, w->ys)) {
        kl_errors_add(err, n->feeder->path, n->feeder->source.loc.line,
                      n->feeder->source.loc.col, "source", "the source equivalent's phase "
                      "impedance is singular (zero sequence equal to minus twice the positive "
                      "sequence?): give positive- and zero-sequence impedances with positive "
                      "resistance or reactance");
        return KL_EINPUT;
    }
    w->ideal_source = 0;
    w->nfixed = 0;
    return KL_OK;
}

static const char *bus_label(const kl_network *n, int b)
{
    return b < n->nfeeder_buses ? n->feeder->buses[b].name
                                : "(internal node of a distributed load)";
}

/* Unknown u as "bus X phase p" or "section S" for messages (error path only). */
static void describe_unknown(const kl_network *n, const kl_nodal *w, int u, char *buf,
                             size_t len)
{
    snprintf(buf, len, "unknown %d", u);
    for (int i = 0; i < 3 * n->nbuses; i++)
        if (w->vidx[i] == u) {
            snprintf(buf, len, "bus %s phase %c", bus_label(n, i / 3), 'a' + i % 3);
            return;
        }
    for (int k = 0; k < n->nbranches + n->nlinks; k++)
        for (int p = 0; n->dev[k] >= 0 && p < 3; p++)
            if (w->iidx[3 * n->dev[k] + p] == u) {
                snprintf(buf, len, "the current of section %s phase %c",
                         n->feeder->sections[n->br_section[k]].name, 'a' + p);
                return;
            }
}

static kl_status klu_failure(const kl_network *n, const kl_nodal *w, kl_errors *err)
{
    char what[192];
    if (w->common.status == KLU_OUT_OF_MEMORY) {
        kl_errors_add(err, NULL, 0, 0, "nodal solver", "out of memory while factoring the "
                      "%d x %d nodal matrix (%d entries)", w->n, w->n, w->nnz);
        return KL_ENOMEM;
    }
    int col = w->common.singular_col;
    describe_unknown(n, w, col >= 0 && col < w->n ? col : 0, what, sizeof what);
    kl_errors_add(err, n->feeder->path, 0, 0, "nodal solver", "the network equations are "
                  "singular (KLU status %d) at %s: part of the network has no path to the "
                  "source for that phase, or a device joins two buses with zero impedance in "
                  "a loop; check the connections around it", w->common.status, what);
    return KL_ETOPO;
}

static kl_status nodal_alloc(const kl_network *n, kl_nodal **out, kl_errors *err)
{
    kl_nodal *w = kl_calloc(1, sizeof *w);
    *out = NULL;
    if (!w)
        return KL_ENOMEM;
    w->vidx = kl_malloc(sizeof(int) * 3 * (size_t)n->nbuses);
    w->iidx = kl_malloc(sizeof(int) * (3 * (size_t)n->ndev + 1));
    w->taps = kl_calloc(3 * (size_t)n->feeder->nregulators + 1, sizeof(int));
    kl_status st = KL_ENOMEM;
    if (!w->vidx || !w->iidx || !w->taps)
        goto fail;
    number_unknowns(n, w);
    w->Ap = kl_calloc((size_t)w->n + 1, sizeof(int));
    w->fill = kl_calloc((size_t)w->n + 1, sizeof(int));
    w->x = kl_malloc(sizeof(kl_complex) * ((size_t)w->n + 1));
    w->b = kl_malloc(sizeof(kl_complex) * ((size_t)w->n + 1));
    w->r = kl_malloc(sizeof(kl_complex) * ((size_t)w->n + 1));
    w->yl = kl_malloc(sizeof(kl_complex) * (n->nzy / 2 + 1));
    if (!w->Ap || !w->fill || !w->x || !w->b || !w->r || !w->yl)
        goto fail;
    if ((st = source_setup(w, n, err)))
        goto fail;
    if ((st = build_pattern(w, n)))
        goto fail;
    kl_free(w->fill);
    w->fill = NULL;
    int bad = assemble_values(w, n);
    if (bad >= 0) {
        st = singular_line(n, bad, err);
        goto fail;
    }
    w->refine = -1;
    klu_defaults(&w->common);
    /* the natural order is leaves-first (number_unknowns): no AMD needed; KLU
     * still permutes to block triangular form and pivots for stability */
    w->sym = klu_analyze_given(w->n, w->Ap, w->Ai, NULL, NULL, &w->common);
    if (!w->sym || !(w->num = klu_z_factor(w->Ap, w->Ai, (double *)w->Ax, w->sym,
                                           &w->common))) {
        st = klu_failure(n, w, err);
        goto fail;
    }
    *out = w;
    return KL_OK;
fail:
    if (st == KL_ENOMEM && err->count == 0)
        kl_errors_add(err, NULL, 0, 0, "nodal solver", "out of memory for the nodal matrix");
    nodal_free(w);
    return st;
}

/* New values after a tap change: same pattern, same pivot order. */
static kl_status nodal_refresh(kl_nodal *w, const kl_network *n, kl_errors *err)
{
    size_t nt = 3 * (size_t)n->feeder->nregulators;
    if (nt == 0 || memcmp(w->taps, n->tap, nt * sizeof(int)) == 0)
        return KL_OK;
    int bad = assemble_values(w, n); /* the lines inverted at the first assembly: never */
    if (bad >= 0)
        return singular_line(n, bad, err);
    if (!klu_z_refactor(w->Ap, w->Ai, (double *)w->Ax, w->sym, w->num, &w->common))
        return klu_failure(n, w, err);
    w->refine = -1; /* new factors: probe their accuracy again */
    return KL_OK;
}

/* ---- iteration ----------------------------------------------------------- */

/* r = -J (loads draw J), V = E at an ideal source, Ys E - J behind Zs. */
static void build_rhs(kl_nodal *w, const kl_network *n)
{
    memset(w->x, 0, sizeof(kl_complex) * (size_t)w->n);
    for (int i = 0; i < 3 * n->nbuses; i++)
        if (w->vidx[i] >= 0)
            w->x[w->vidx[i]] = -kl_network_bus_j(n, i / 3)[i % 3];
    const int *vs = w->vidx + 3 * n->source;
    for (int p = 0; p < 3; p++) {
        kl_complex e = n->v_emf[p];
        if (w->ideal_source) {
            w->x[vs[p]] = e;
            continue;
        }
        for (int q = 0; q < 3; q++)
            w->x[vs[p]] += w->ys[3 * p + q] * n->v_emf[q];
    }
}

/* The voltages behind the equivalent for the next solve (source.c): from the
 * current the last solution drew through it, J = Ys (E - V), so E1 moves by
 * the bus's remaining error V1_held - V1; at no load, as the file sets them. */
static void source_update(const kl_nodal *w, kl_network *n, int loads)
{
    kl_complex j[3], dv[3];
    const kl_complex *v = kl_network_bus_v(n, n->source);
    if (!loads || w->ideal_source || !n->v_valid) {
        kl_source_emf(n, NULL, n->v_emf);
        return;
    }
    for (int p = 0; p < 3; p++)
        dv[p] = n->v_emf[p] - v[p];
    kl_cm3_vec(w->ys, dv, j);
    kl_source_emf(n, j, n->v_emf);
}

/* Copies the solution into net->vs (and loop-closing switches' currents
 * into i_to_link; the tree's follow in branch_currents);
 * returns the largest change in per unit, INFINITY on a non-finite value. */
static double take_solution(const kl_nodal *w, kl_network *n, int *where)
{
    double worst2 = 0; /* squared, per unit: no square root per phase */
    for (int b = 0; b < n->nbuses; b++) {
        double inv = 1.0 / n->v_base_ln[b];
        kl_complex *v = kl_network_bus_v(n, b);
        for (int p = 0; p < 3; p++) {
            int u = w->vidx[3 * b + p];
            kl_complex x = u >= 0 ? w->x[u] : 0, dx = (x - v[p]) * inv;
            double d2 = creal(dx) * creal(dx) + cimag(dx) * cimag(dx);
            if (!isfinite(d2))
                d2 = INFINITY;
            if (d2 > worst2) {
                worst2 = d2;
                *where = b;
            }
            v[p] = x;
        }
    }
    for (int k = n->nbranches; k < n->nbranches + n->nlinks; k++)
        for (int p = 0; n->dev[k] >= 0 && p < 3; p++) {
            int u = w->iidx[3 * n->dev[k] + p];
            if (u >= 0)
                n->i_to_link[3 * (k - n->nbranches) + p] = w->x[u];
        }
    return sqrt(worst2);
}

/* Iterative refinement of the solve M x = b (Wilkinson; Higham, "Accuracy
 * and Stability of Numerical Algorithms", ch. 12, from memory):
 *     r = b - M x  (branch by branch, residual_line),  M d = r,  x += d,
 * until the correction is below REFINE_PU of the bus base at every voltage,
 * or stops shrinking, or after REFINE_MAX steps.  A plain LU solve of a deep
 * chain is off by about eps cond(M), cond(M) growing with the square of the
 * depth (1.2e-6 pu at 250,000 sections); the branch-by-branch residual holds
 * the digits of the voltage drops, so one or two steps bring the solution to
 * the accuracy of the branch equations.
 *
 * The error is a property of the factors (the conditioning of M), nearly the
 * same for every right-hand side of a load flow, so the first loaded solve
 * after a factorization probes it: a first correction above REFINE_NEEDED_PU
 * turns refinement on for every later solve with these factors, one below it
 * (the solve was already ten times more accurate than the 1e-9 pu asked: a
 * shallow feeder) turns it off, and the feeder pays one residual pass and one
 * solve per factorization. */
#define REFINE_PU 1e-12
#define REFINE_NEEDED_PU 1e-10
#define REFINE_MAX 6

/* Largest |d| over the voltage unknowns, per unit of the bus base. */
static double correction_pu(const kl_nodal *w, const kl_network *n)
{
    double worst2 = 0;
    for (int b = 0; b < n->nbuses; b++) {
        double inv = 1.0 / n->v_base_ln[b];
        for (int p = 0; p < 3; p++) {
            int u = w->vidx[3 * b + p];
            if (u < 0)
                continue;
            kl_complex d = w->r[u] * inv;
            double d2 = creal(d) * creal(d) + cimag(d) * cimag(d);
            worst2 = d2 > worst2 || !isfinite(d2) ? d2 : worst2;
        }
    }
    return sqrt(worst2);
}

/* *first: the first correction, in per unit (INFINITY when not finite). */
static kl_status refine(kl_nodal *w, kl_network *n, double *first, kl_errors *err)
{
    double last = INFINITY;
    *first = INFINITY;
    for (int step = 0; step < REFINE_MAX; step++) {
        memcpy(w->r, w->b, sizeof(kl_complex) * (size_t)w->n);
        w->mode = ST_RESIDUAL;
        stamp_all(w, n); /* the lines inverted at the first assembly: never fails */
        if (!klu_z_solve(w->sym, w->num, w->n, 1, (double *)w->r, &w->common))
            return klu_failure(n, w, err);
        double d = correction_pu(w, n);
        if (step == 0 && isfinite(d))
            *first = d;
        if (!(d < 0.5 * last)) /* not shrinking (or not finite): keep x as it is */
            break;
        for (int u = 0; u < w->n; u++)
            w->x[u] += w->r[u];
        /* refinement contracts the error by about eps cond(M) a step, which
         * the first correction measures (the unrefined error, relative to
         * voltages near 1 pu): what is left is about d times that, kept
         * under REFINE_PU with a margin of 10 */
        if (d < REFINE_PU || 10.0 * d * *first < REFINE_PU)
            break;
        last = d;
    }
    return KL_OK;
}

/* One solve; loads = 0 gives the no-load start. */
static kl_status solve_step(kl_nodal *w, kl_network *n, int loads, double scale, double *worst,
                            int *where, kl_errors *err)
{
    memset(n->js, 0, 3 * (size_t)n->nbuses * sizeof n->js[0]);
    if (loads)
        kl_load_inject(n, scale);
    source_update(w, n, loads);
    build_rhs(w, n);
    memcpy(w->b, w->x, sizeof(kl_complex) * (size_t)w->n);
    if (!klu_z_solve(w->sym, w->num, w->n, 1, (double *)w->x, &w->common))
        return klu_failure(n, w, err);
    if (loads && w->refine != 0) { /* the no-load start needs no accuracy */
        double first;
        kl_status st = refine(w, n, &first, err);
        if (st)
            return st;
        if (w->refine < 0)
            w->refine = first > REFINE_NEEDED_PU;
    }
    *where = -1;
    *worst = take_solution(w, n, where);
    n->v_valid = 1;
    return KL_OK;
}

/* Loop-closing branch k's currents from the solution: a line from its pi
 * model, I_from = Y (Vf - Vt) + Ysh/2 Vf, I_to = Y (Vf - Vt) - Ysh/2 Vt; a
 * switch from its unknowns (already in i_to_link), I_from = d I_to. */
static void link_currents(kl_network *n, int k)
{
    const kl_complex *vf = kl_network_bus_v(n, n->br_from[k]);
    const kl_complex *vt = kl_network_bus_v(n, n->br_to[k]);
    kl_complex *ifr = n->i_from_link + 3 * (size_t)(k - n->nbranches);
    kl_complex *ito = kl_network_i_to(n, k), Y[9], dv[3], tf[3],
               tt[3], ysh[9];
    if (!is_line(n, k)) {
        kl_cm3_vec(n->d + 9 * (size_t)n->dev[k], ito, ifr);
        return;
    }
    if (line_admittance(n, k, Y)) {
        kl_complex d[9];
        kl_network_line_abcd(n, k, NULL, NULL, NULL, d, NULL, NULL);
        kl_cm3_vec(d, ito, ifr);
        return;
    }
    for (int p = 0; p < 3; p++)
        dv[p] = vf[p] - vt[p];
    kl_cm3_vec(Y, dv, ito);
    kl_network_line_zy(n, k, NULL, ysh);
    kl_cm3_vec(ysh, vf, tf);
    kl_cm3_vec(ysh, vt, tt);
    for (int p = 0; p < 3; p++) {
        ifr[p] = ito[p] + 0.5 * tf[p];
        ito[p] -= 0.5 * tt[p];
    }
}

/* Branch and bus currents at the final voltages, as the sweep leaves them:
 * loads at the final voltages; the loop-closing branches' currents from
 * their own models, drawn from their `from` bus and delivered to their `to`
 * bus; then the tree from the leaves up, I_to = J_to, I_from = c V_to + d I_to,
 * J_from += I_from.  Every bus then meets Kirchhoff's current law exactly
 * and the power balance closes; no line admittance is inverted again. */
static void branch_currents(kl_network *n, double scale)
{
    memset(n->js, 0, 3 * (size_t)n->nbuses * sizeof n->js[0]);
    kl_load_inject(n, scale);
    for (int k = n->nbranches; k < n->nbranches + n->nlinks; k++) {
        link_currents(n, k);
        kl_complex *jf = kl_network_bus_j(n, n->br_from[k]), *jt = kl_network_bus_j(n, n->br_to[k]);
        const kl_complex *ito = kl_network_i_to(n, k);
        for (int p = 0; p < 3; p++) {
            jf[p] += n->i_from_link[3 * (size_t)(k - n->nbranches) + (size_t)p];
            jt[p] -= ito[p];
        }
    }
    kl_sweep_tree_currents(n); /* the sweep's own backward step (same branch models) */
}

static void report_noconv(const kl_network *n, int it, double worst, int where,
                          kl_errors *err)
{
    double low = INFINITY;
    int lowbus = n->source;
    for (int b = 0; b < n->nbuses; b++)
        for (int p = 0; p < 3; p++) {
            double x = cabs(kl_network_bus_v(n, b)[p]) / n->v_base_ln[b];
            if ((n->phases[b] & (1 << p)) && !(x >= low)) {
                low = x;
                lowbus = b;
            }
        }
    char why[700];
    kl_diverge_hint(n, low, worst, why, sizeof why); /* the sweep's reasons, same iteration */
    char change[64]; /* never "inf" or "nan" in a message: say what it means */
    if (isfinite(worst))
        snprintf(change, sizeof change, "%.3g pu", worst);
    else
        snprintf(change, sizeof change, "beyond any number");
    kl_errors_add(err, n->feeder->path, 0, 0, "load flow (nodal)",
                  "did not converge after %d iterations: largest voltage change %s at bus "
                  "%s; lowest voltage %.3f pu at bus %s; likely reason: %s", it, change,
                  where >= 0 ? bus_label(n, where) : "?", isfinite(low) ? low : 0.0,
                  bus_label(n, lowbus), why);
}

static void record(kl_flow_result *res, const kl_network *n, int it, double worst, int where,
                   double tol)
{
    if (!res)
        return;
    res->iterations = it;
    res->total_iterations += it;
    res->mismatch_pu = worst;
    res->mismatch_bus = where >= 0 && where < n->nfeeder_buses ? where : -1;
    res->converged = worst < tol;
}

/* Current-injection iteration on a factored matrix. */
static kl_status iterate(kl_nodal *w, kl_network *n, const kl_flow_options *opt,
                         kl_flow_result *res, kl_errors *err)
{
    kl_status st = KL_OK;
    double worst = INFINITY;
    int where = -1, it = 0;
    if (!n->v_valid && (st = solve_step(w, n, 0, 0.0, &worst, &where, err)))
        return st; /* no-load start: the source voltages carried through every branch */
    while (it < opt->max_iter) {
        it++;
        if ((st = solve_step(w, n, 1, opt->load_scale, &worst, &where, err)))
            return st;
        if (!isfinite(worst) || worst < opt->tol_pu)
            break;
    }
    record(res, n, it, worst, where, opt->tol_pu);
    if (worst < opt->tol_pu) {
        branch_currents(n, opt->load_scale);
        return KL_OK;
    }
    report_noconv(n, it, worst, where, err);
    n->v_valid = 0;
    return KL_ENOCONV;
}

void kl_nodal_reset(kl_network *n)
{
    if (!n)
        return;
    nodal_free(n->nodal);
    n->nodal = NULL;
}

/* Analyse and factor on the first call; later calls (regulator rounds, load
 * levels) refactor only when the taps have moved. */
kl_status kl_nodal_solve(kl_network *n, const kl_flow_options *opt, kl_flow_result *res,
                         kl_errors *err)
{
    if (!n || !opt || !err)
        return KL_EARG;
    kl_status st = KL_OK;
    if (!n->nodal) {
        st = nodal_alloc(n, &n->nodal, err);
        n->nodal_free = nodal_free;
    }
    else
        st = nodal_refresh(n->nodal, n, err);
    if (!st)
        st = iterate(n->nodal, n, opt, res, err);
    else
        kl_nodal_reset(n);
    return st;
}
