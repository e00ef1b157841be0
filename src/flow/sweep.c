/* kilter: the backward/forward sweep (Kersting ch. 10, "ladder iterative
 * technique", from memory).  One iteration:
 *   backward, children before parents:  I_to = J_to (loads + children),
 *                                        I_from = c V_to + d I_to (+ yg V_from for
 *                                        a grounding bank, network.h),  J_from += I_from
 *   forward, parents before children:    V_to = A V_from - B I_to
 * Line branches take the ladder (pi-section) form of the same equations
 * instead, straight from Z and Y (packed by phase count, network.h) with the
 * present voltages:
 *   backward:  I_s = I_to + (Y/2) V_to,   I_from = I_s + (Y/2) (V_to + Z I_s)
 *   forward:   V_to = V_from - Z I_s
 * whose fixed point is the generalized one (a = U + ZY/2, b = Z,
 * c = Y + YZY/4, d = U + YZ/2; Kersting ch. 6, from memory), at a quarter of
 * the memory traffic, and single-phase laterals cost scalar products only;
 * with the source bus at E - Z_s J_source, E the voltages behind the
 * equivalent that hold the bus's positive sequence at its set value
 * (source.c; E itself without an equivalent).  Converged when the largest change of any phase
 * voltage between two iterations is below tol (per unit of the bus base).
 * Everything is read and written by sweep position (network.h), so each
 * pass walks its arrays front to back (or back to front). */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "kilter/flow.h"
#include "kl_flow.h"

/* Phases of each mask, for kernels that skip absent rows and columns. */
static const int PH_N[8] = {0, 1, 1, 2, 1, 2, 2, 3};
static const int PH_L[8][3] = {{0}, {0}, {1}, {0, 1}, {2}, {0, 2}, {1, 2}, {0, 1, 2}};

/* r = M x + sign N y on the phases of mask only (lines and switches: their
 * matrices are zero outside the mask). */
static inline void mv2_masked(const kl_complex *M, const kl_complex *x, const kl_complex *N,
                              const kl_complex *y, double sign, int mask, kl_complex *r)
{
    int n = PH_N[mask];
    const int *l = PH_L[mask];
    for (int i = 0; i < n; i++) {
        int p = l[i];
        kl_complex acc = 0;
        for (int j = 0; j < n; j++) {
            int q = l[j];
            acc += M[3 * p + q] * x[q] + sign * N[3 * p + q] * y[q];
        }
        r[p] = acc;
    }
}

static inline void mv2_full(const kl_complex *M, const kl_complex *x, const kl_complex *N,
                            const kl_complex *y, double sign, kl_complex *r)
{
    for (int p = 0; p < 3; p++)
        r[p] = M[3 * p] * x[0] + M[3 * p + 1] * x[1] + M[3 * p + 2] * x[2] +
               sign * (N[3 * p] * y[0] + N[3 * p + 1] * y[1] + N[3 * p + 2] * y[2]);
}

static inline int is_masked_kind(int kind)
{
    return kind == KL_BR_LINE || kind == KL_BR_SWITCH;
}

/* Line kernels on the packed m x m Z and Y (network.h: the present phases
 * in the order a, b, c; l[] maps packed index to phase slot).  Single-phase
 * laterals, most of a distribution feeder's branches, are scalar. */

/* I_s = I_to + (Y/2) V_to on the packed phases. */
static inline void line_series_current(const kl_complex *Y, int m, const int *l,
                                       const kl_complex *vto, const kl_complex *ito,
                                       kl_complex is[3])
{
    for (int i = 0; i < m; i++) {
        kl_complex acc = 0;
        for (int j = 0; j < m; j++)
            acc += Y[m * i + j] * vto[l[j]];
        is[i] = ito[l[i]] + 0.5 * acc;
    }
}

/* Backward step of a line: I_from = I_s + (Y/2) V_from, with the sending-end
 * voltage the line itself implies, V_from = V_to + Z I_s (= a V_to + b I_to),
 * so I_from = c V_to + d I_to to rounding, as in the generalized form (see
 * the file comment); ifr is zero outside the line's phases. */
static inline void line_backward(const kl_complex *Z, int mask, const kl_complex *vto,
                                 const kl_complex *ito, kl_complex *ifr)
{
    int m = PH_N[mask];
    const int *l = PH_L[mask];
    const kl_complex *Y = Z + m * m;
    ifr[0] = ifr[1] = ifr[2] = 0;
    if (m == 1) {
        int p = l[0];
        kl_complex is = ito[p] + 0.5 * Y[0] * vto[p];
        ifr[p] = is + 0.5 * Y[0] * (vto[p] + Z[0] * is);
        return;
    }
    kl_complex is[3], vfr[3];
    line_series_current(Y, m, l, vto, ito, is);
    for (int i = 0; i < m; i++) {
        kl_complex acc = 0;
        for (int j = 0; j < m; j++)
            acc += Z[m * i + j] * is[j];
        vfr[i] = vto[l[i]] + acc;
    }
    for (int i = 0; i < m; i++) {
        kl_complex acc = 0;
        for (int j = 0; j < m; j++)
            acc += Y[m * i + j] * vfr[j];
        ifr[l[i]] = is[i] + 0.5 * acc;
    }
}

/* Forward step of a line: V_to = V_from - Z I_s, with I_s from the
 * receiving-end voltages the backward sweep used (vto_old, not yet
 * overwritten); vnew is left zero outside the line's phases. */
static inline void line_forward(const kl_complex *Z, int mask, const kl_complex *vfr,
                                const kl_complex *ito, const kl_complex *vto_old,
                                kl_complex *vnew)
{
    int m = PH_N[mask];
    const int *l = PH_L[mask];
    const kl_complex *Y = Z + m * m;
    kl_complex is[3];
    line_series_current(Y, m, l, vto_old, ito, is);
    for (int i = 0; i < m; i++) {
        kl_complex acc = 0;
        for (int j = 0; j < m; j++)
            acc += Z[m * i + j] * is[j];
        vnew[l[i]] = vfr[l[i]] - acc;
    }
}

/* Tree branch k's sending-end currents from its receiving-end voltages
 * and currents (the to-bus of branch k sits at position k + 1, and js there
 * holds its I_to). */
static inline void branch_i_from(const kl_network *n, int k, kl_complex ifr[3])
{
    const kl_complex *vto = n->vs + 3 * (size_t)(k + 1), *ito = n->js + 3 * (size_t)(k + 1);
    if (n->br_kind[k] == KL_BR_LINE) {
        line_backward(n->zy + n->zy_at[k], n->br_phases[k], vto, ito, ifr);
    } else if (is_masked_kind(n->br_kind[k])) {
        size_t s = 9 * (size_t)n->dev[k]; /* device slot (network.h) */
        ifr[0] = ifr[1] = ifr[2] = 0;
        mv2_masked(n->c + s, vto, n->d + s, ito, 1.0, n->br_phases[k], ifr);
    } else {
        size_t s = 9 * (size_t)n->dev[k];
        mv2_full(n->c + s, vto, n->d + s, ito, 1.0, ifr);
        if (n->yg[s] != 0) { /* a grounding bank's zero-sequence path (network.h) */
            const kl_complex *vfr = n->vs + 3 * (size_t)n->br_from_pos[k];
            kl_complex g[3];
            kl_cm3_vec(n->yg + s, vfr, g);
            for (int p = 0; p < 3; p++)
                ifr[p] += g[p];
        }
    }
}

/* Tree part of the backward sweep, children before parents: I_from of
 * each branch added into its from-bus's J (I_to = J_to is complete by then:
 * the branch's children come after it).  js must already hold the loads'
 * (and any loop-closing branches') currents. */
void kl_sweep_tree_currents(kl_network *n)
{
    for (int k = n->nbranches - 1; k >= 0; k--) {
        kl_complex ifr[3];
        branch_i_from(n, k, ifr);
        kl_complex *jfr = n->js + 3 * (size_t)n->br_from_pos[k];
        for (int p = 0; p < 3; p++)
            jfr[p] += ifr[p];
    }
}

void kl_sweep_i_from(const kl_network *n, int k, kl_complex out[3])
{
    if (k >= n->nbranches) {
        memcpy(out, n->i_from_link + 3 * (size_t)(k - n->nbranches), 3 * sizeof out[0]);
        return;
    }
    branch_i_from(n, k, out);
}

/* Backward sweep: currents from the present voltages. */
static void sweep_backward(kl_network *n, double scale)
{
    memset(n->js, 0, 3 * (size_t)n->nbuses * sizeof n->js[0]);
    kl_load_inject(n, scale);
    kl_sweep_tree_currents(n);
}

/* Sets the voltages at position i (bus `bus`), returning the largest change
 * in per unit (INFINITY on a non-finite value) and where it sits. */
static inline double set_voltage(kl_network *n, int i, const kl_complex vnew[3],
                                 double worst, int *where)
{
    kl_complex *v = n->vs + 3 * (size_t)i;
    int mask = n->pos_phases[i];
    double big = 0;
    for (int p = 0; p < 3; p++) {
        kl_complex x = (mask & (1 << p)) ? vnew[p] : 0, dv = x - v[p];
        double d2 = creal(dv) * creal(dv) + cimag(dv) * cimag(dv);
        if (!(d2 <= big)) /* also takes NaN */
            big = isnan(d2) ? INFINITY : d2;
        v[p] = x;
    }
    double dv = sqrt(big) * n->pos_inv_base[i];
    if (dv > worst) {
        *where = i;
        return dv;
    }
    return worst;
}

/* Forward sweep: voltages from the currents; returns the largest change
 * and (*where) the position where it sits. */
static double sweep_forward(kl_network *n, int *where)
{
    kl_complex vs[3], t[3];
    kl_source_emf(n, n->js, n->v_emf); /* js at position 0: what the feeder draws */
    memcpy(vs, n->v_emf, sizeof vs);
    if (n->has_zsource) {
        kl_cm3_vec(n->zsource, n->js, t);
        for (int p = 0; p < 3; p++)
            vs[p] -= t[p];
    }
    double worst = set_voltage(n, 0, vs, 0.0, where);
    for (int k = 0; k < n->nbranches; k++) {
        kl_complex vnew[3] = {0, 0, 0};
        const kl_complex *vf = n->vs + 3 * (size_t)n->br_from_pos[k];
        const kl_complex *ito = n->js + 3 * (size_t)(k + 1); /* I_to of branch k */
        if (n->br_kind[k] == KL_BR_LINE)
            line_forward(n->zy + n->zy_at[k], n->br_phases[k], vf, ito, n->vs + 3 * (k + 1),
                         vnew);
        else if (is_masked_kind(n->br_kind[k]))
            mv2_masked(n->A + 9 * (size_t)n->dev[k], vf, n->B + 9 * (size_t)n->dev[k], ito,
                       -1.0, n->br_phases[k], vnew);
        else
            mv2_full(n->A + 9 * (size_t)n->dev[k], vf, n->B + 9 * (size_t)n->dev[k], ito,
                     -1.0, vnew);
        worst = set_voltage(n, k + 1, vnew, worst, where);
    }
    return worst;
}

/* Lowest present-phase voltage in per unit, for the non-convergence message. */
static double lowest_voltage(const kl_network *n, int *bus)
{
    double low = INFINITY;
    for (int b = 0; b < n->nbuses; b++)
        for (int p = 0; p < 3; p++) {
            if (!(n->phases[b] & (1 << p)))
                continue;
            double x = cabs(kl_network_bus_v(n, b)[p]) / n->v_base_ln[b];
            if (!isfinite(x))
                return NAN; /* diverged: there is no meaningful lowest voltage */
            if (x < low) {
                low = x;
                *bus = b;
            }
        }
    return low;
}

static const char *bus_name(const kl_network *n, int b, char *buf, size_t len)
{
    if (b >= 0 && b < n->nfeeder_buses)
        return n->feeder->buses[b].name;
    snprintf(buf, len, "(internal node of a distributed load)");
    return buf;
}

static void report_noconv(const kl_network *n, int it, double worst, int where, kl_errors *err)
{
    char b1[64], b2[64];
    int lowbus = -1;
    double low = lowest_voltage(n, &lowbus);
    char why[700];
    kl_diverge_hint(n, low, worst, why, sizeof why);
    char lowtxt[160];
    if (isfinite(low) && worst < 1.0)
        snprintf(lowtxt, sizeof lowtxt, "lowest voltage %.3f pu at bus %s", low,
                 bus_name(n, lowbus, b2, sizeof b2));
    else
        snprintf(lowtxt, sizeof lowtxt, "the voltages diverged");
    char change[64]; /* never "inf" or "nan" in a message: say what it means */
    if (isfinite(worst))
        snprintf(change, sizeof change, "%.3g pu", worst);
    else
        snprintf(change, sizeof change, "beyond any number");
    kl_errors_add(err, n->feeder->path, 0, 0, "load flow",
                  "did not converge after %d iterations: largest voltage change %s at bus "
                  "%s; %s; likely reason: %s", it, change, bus_name(n, where, b1, sizeof b1),
                  lowtxt, why);
}

/* The sweep layout the passes rely on (network.h): the to-bus of tree
 * branch k at position k + 1 and its from-bus at an earlier position (so the
 * forward pass meets a parent's voltages and the backward pass a child's
 * currents complete); the position-ordered copies of phases and bases in
 * step with the bus-id arrays (rephasing updates both); each branch with its
 * storage (packed Z, Y for a line, a device slot otherwise), and a closed
 * switch's matrices zero off its phases (mv2_masked skips them).  Checked at
 * each flat start, in the debug and sanitizer builds. */
static void layout_check(const kl_network *n)
{
#ifdef KILTER_CHECKS
    KL_ASSERT(n->order[0] == n->source && n->pos[n->source] == 0);
    for (int i = 0; i < n->nbuses; i++) {
        int b = n->order[i];
        KL_ASSERT(n->pos[b] == i && n->pos_phases[i] == n->phases[b]);
        KL_ASSERT(n->pos_inv_base[i] == 1.0 / n->v_base_ln[b]);
    }
    for (int k = 0; k < n->nbranches; k++) {
        KL_ASSERT(n->pos[n->br_to[k]] == k + 1 && n->br_from_pos[k] == n->pos[n->br_from[k]]);
        KL_ASSERT(n->br_from_pos[k] <= k);
        KL_ASSERT((n->br_kind[k] == KL_BR_LINE) ? n->zy_at[k] >= 0 : n->dev[k] >= 0);
        if (n->br_kind[k] != KL_BR_SWITCH)
            continue;
        for (int e = 0; e < 9; e++) {
            size_t s = 9 * (size_t)n->dev[k] + (size_t)e;
            int in = (n->br_phases[k] >> (e / 3) & 1) && (n->br_phases[k] >> (e % 3) & 1);
            KL_ASSERT(in || (n->A[s] == 0 && n->B[s] == 0 && n->c[s] == 0 && n->d[s] == 0));
        }
    }
#else
    (void)n;
#endif
}

/* Starts from the source voltages carried through every branch at no load. */
static void flat_start(kl_network *n)
{
    int where = -1;
    memset(n->js, 0, 3 * (size_t)n->nbuses * sizeof n->js[0]);
    memset(n->vs, 0, 3 * (size_t)n->nbuses * sizeof n->vs[0]);
    sweep_forward(n, &where);
}

kl_status kl_sweep_solve(kl_network *n, const kl_flow_options *opt, kl_flow_result *res,
                         kl_errors *err)
{
    if (!n || !opt || !err)
        return KL_EARG;
    if (n->nlinks > 0) {
        const kl_section *sc = &n->feeder->sections[n->br_section[n->nbranches]];
        char elem[128];
        snprintf(elem, sizeof elem, "section %s", sc->name ? sc->name : "?");
        kl_errors_add(err, n->feeder->path, sc->loc.line, sc->loc.col, elem, "closes a loop "
                      "(the feeder says radial: false): the backward/forward sweep solves "
                      "radial networks only; use the nodal solver (--solver nodal) or open a "
                      "switch in the loop");
        return KL_ETOPO;
    }
    double scale = opt->load_scale;
    if (!n->v_valid) {
        layout_check(n);
        flat_start(n);
    }
    double worst = INFINITY;
    int where = -1, it = 0;
    while (it < opt->max_iter) {
        it++;
        sweep_backward(n, scale);
        where = -1;
        worst = sweep_forward(n, &where);
        where = where >= 0 ? n->order[where] : -1;
        if (!isfinite(worst) || worst < opt->tol_pu)
            break;
    }
    /* final currents consistent with the final voltages (exact power balance) */
    if (isfinite(worst))
        sweep_backward(n, scale);
    n->v_valid = 1;
    if (res) {
        res->iterations = it;
        res->total_iterations += it;
        res->mismatch_pu = worst;
        res->mismatch_bus = where < n->nfeeder_buses ? where : -1;
        res->converged = worst < opt->tol_pu;
    }
    if (worst < opt->tol_pu)
        return KL_OK;
    report_noconv(n, it, worst, where, err);
    n->v_valid = 0;
    return KL_ENOCONV;
}
