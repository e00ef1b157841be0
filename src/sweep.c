/* kilter: the backward/forward sweep (Kersting ch. 10, "ladder iterative
 * technique", from memory).  One iteration:
 *   backward, children before parents:  I_to = J_to (loads + children),
 *                                        I_from = c V_to + d I_to,  J_from += I_from
 *   forward, parents before children:    V_to = A V_from - B I_to
 * Line branches take the ladder (pi-section) form of the same equations
 * instead, straight from Z (zser) and Y (ysh) with the present voltages:
 *   backward:  I_s = I_to + (Y/2) V_to,   I_from = I_s + (Y/2) (V_to + Z I_s)
 *   forward:   V_to = V_from - Z I_s
 * whose fixed point is the generalized one (a = U + ZY/2, b = Z,
 * c = Y + YZY/4, d = U + YZ/2; Kersting ch. 6, from memory), at a quarter of
 * the memory traffic, and single-phase laterals cost scalar products only.
 * with the source bus held at its ideal voltages (or E - Z_s J_source behind
 * a Thevenin equivalent).  Converged when the largest change of any phase
 * voltage between two iterations is below tol (per unit of the bus base). */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "kilter/flow.h"
#include "kl_internal.h"

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

/* Series current of a line, I_s = I_to + (Y/2) V_to, on the phases of
 * mask (Z and Y are zero outside it).  Single-phase laterals, most of a
 * distribution feeder's branches, take one complex product. */
static inline void line_series_current(const kl_complex *Y, int mask, const kl_complex *vto,
                                       const kl_complex *ito, kl_complex is[3])
{
    int n = PH_N[mask];
    const int *l = PH_L[mask];
    if (n == 1) {
        int p = l[0];
        is[p] = ito[p] + 0.5 * Y[4 * p] * vto[p];
        return;
    }
    for (int i = 0; i < n; i++) {
        int p = l[i];
        kl_complex acc = 0;
        for (int j = 0; j < n; j++)
            acc += Y[3 * p + l[j]] * vto[l[j]];
        is[p] = ito[p] + 0.5 * acc;
    }
}

/* Backward step of a line: I_from = I_s + (Y/2) V_from, with the sending-end
 * voltage the line itself implies, V_from = V_to + Z I_s (= a V_to + b I_to),
 * so I_from = c V_to + d I_to to rounding, as in the generalized form (see
 * the file comment); ifr is zero outside mask. */
static inline void line_backward(const kl_complex *Z, const kl_complex *Y, int mask,
                                 const kl_complex *vto, const kl_complex *ito, kl_complex *ifr)
{
    kl_complex is[3] = {0, 0, 0}, vfr[3] = {0, 0, 0};
    line_series_current(Y, mask, vto, ito, is);
    int n = PH_N[mask];
    const int *l = PH_L[mask];
    if (n == 1) {
        int p = l[0];
        ifr[0] = ifr[1] = ifr[2] = 0;
        ifr[p] = is[p] + 0.5 * Y[4 * p] * (vto[p] + Z[4 * p] * is[p]);
        return;
    }
    for (int i = 0; i < n; i++) {
        int p = l[i];
        kl_complex acc = 0;
        for (int j = 0; j < n; j++)
            acc += Z[3 * p + l[j]] * is[l[j]];
        vfr[p] = vto[p] + acc;
    }
    ifr[0] = ifr[1] = ifr[2] = 0;
    for (int i = 0; i < n; i++) {
        int p = l[i];
        kl_complex acc = 0;
        for (int j = 0; j < n; j++)
            acc += Y[3 * p + l[j]] * vfr[l[j]];
        ifr[p] = is[p] + 0.5 * acc;
    }
}

/* Forward step of a line: V_to = V_from - Z I_s, with I_s from the
 * receiving-end voltages the backward sweep used (vto_old, not yet
 * overwritten); vnew is left zero outside mask. */
static inline void line_forward(const kl_complex *Z, const kl_complex *Y, int mask,
                                const kl_complex *vfr, const kl_complex *ito,
                                const kl_complex *vto_old, kl_complex *vnew)
{
    kl_complex is[3] = {0, 0, 0};
    line_series_current(Y, mask, vto_old, ito, is);
    int n = PH_N[mask];
    const int *l = PH_L[mask];
    for (int i = 0; i < n; i++) {
        int p = l[i];
        kl_complex acc = 0;
        for (int j = 0; j < n; j++)
            acc += Z[3 * p + l[j]] * is[l[j]];
        vnew[p] = vfr[p] - acc;
    }
}

/* Backward sweep: currents from the present voltages (positions: the
 * to-bus of branch k is at k + 1). */
static void sweep_backward(kl_network *n, double scale)
{
    memset(n->js, 0, 3 * (size_t)n->nbuses * sizeof n->js[0]);
    kl_load_inject_at(n, scale, n->vs, n->js, n->pos);
    for (int k = n->nbranches - 1; k >= 0; k--) {
        kl_complex *ito = n->i_to + 3 * k, *ifr = n->i_from + 3 * k;
        const kl_complex *vto = n->vs + 3 * (k + 1), *jto = n->js + 3 * (k + 1);
        kl_complex *jfr = n->js + 3 * n->br_from_pos[k];
        memcpy(ito, jto, 3 * sizeof *ito);
        if (n->br_kind[k] == KL_BR_LINE) {
            line_backward(n->zser + 9 * k, n->ysh + 9 * k, n->br_phases[k], vto, ito, ifr);
        } else if (is_masked_kind(n->br_kind[k])) {
            size_t s = 9 * (size_t)n->dev[k]; /* device slot (network.h) */
            ifr[0] = ifr[1] = ifr[2] = 0;
            mv2_masked(n->c + s, vto, n->d + s, ito, 1.0, n->br_phases[k], ifr);
        } else {
            size_t s = 9 * (size_t)n->dev[k];
            mv2_full(n->c + s, vto, n->d + s, ito, 1.0, ifr);
        }
        for (int p = 0; p < 3; p++)
            jfr[p] += ifr[p];
    }
}

/* Sets the voltages at position i (bus `bus`), returning the largest change
 * in per unit (INFINITY on a non-finite value) and where it sits. */
static inline double set_voltage(kl_network *n, int i, int bus, const kl_complex vnew[3],
                                 double worst, int *where)
{
    kl_complex *v = n->vs + 3 * i;
    int mask = n->phases[bus];
    double big = 0;
    for (int p = 0; p < 3; p++) {
        kl_complex x = (mask & (1 << p)) ? vnew[p] : 0, dv = x - v[p];
        double d2 = creal(dv) * creal(dv) + cimag(dv) * cimag(dv);
        if (!(d2 <= big)) /* also takes NaN */
            big = isnan(d2) ? INFINITY : d2;
        v[p] = x;
    }
    double dv = sqrt(big) / n->v_base_ln[bus];
    if (dv > worst) {
        *where = bus;
        return dv;
    }
    return worst;
}

/* Forward sweep: voltages from the currents; returns the largest change. */
static double sweep_forward(kl_network *n, int *where)
{
    kl_complex vs[3], t[3];
    memcpy(vs, n->v_source, sizeof vs);
    if (n->has_zsource) {
        kl_cm3_vec(n->zsource, n->js, t);
        for (int p = 0; p < 3; p++)
            vs[p] -= t[p];
    }
    double worst = set_voltage(n, 0, n->source, vs, 0.0, where);
    for (int k = 0; k < n->nbranches; k++) {
        kl_complex vnew[3] = {0, 0, 0};
        const kl_complex *vf = n->vs + 3 * n->br_from_pos[k], *ito = n->i_to + 3 * k;
        if (n->br_kind[k] == KL_BR_LINE)
            line_forward(n->zser + 9 * k, n->ysh + 9 * k, n->br_phases[k], vf, ito,
                         n->vs + 3 * (k + 1), vnew);
        else if (is_masked_kind(n->br_kind[k]))
            mv2_masked(n->A + 9 * (size_t)n->dev[k], vf, n->B + 9 * (size_t)n->dev[k], ito,
                       -1.0, n->br_phases[k], vnew);
        else
            mv2_full(n->A + 9 * (size_t)n->dev[k], vf, n->B + 9 * (size_t)n->dev[k], ito,
                     -1.0, vnew);
        worst = set_voltage(n, k + 1, n->br_to[k], vnew, worst, where);
    }
    return worst;
}

/* Between the network's bus-id arrays and the sweep's positions. */
static void gather_voltages(kl_network *n)
{
    for (int i = 0; i < n->nbuses; i++)
        memcpy(n->vs + 3 * i, n->v + 3 * n->order[i], 3 * sizeof n->vs[0]);
}

static void scatter_state(kl_network *n)
{
    for (int i = 0; i < n->nbuses; i++) {
        memcpy(n->v + 3 * n->order[i], n->vs + 3 * i, 3 * sizeof n->v[0]);
        memcpy(n->j + 3 * n->order[i], n->js + 3 * i, 3 * sizeof n->j[0]);
    }
}

/* Lowest present-phase voltage in per unit, for the non-convergence message. */
static double lowest_voltage(const kl_network *n, int *bus)
{
    double low = INFINITY;
    for (int b = 0; b < n->nbuses; b++)
        for (int p = 0; p < 3; p++) {
            if (!(n->phases[b] & (1 << p)))
                continue;
            double x = cabs(n->v[3 * b + p]) / n->v_base_ln[b];
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
    const char *why;
    /* a sweep that still moves voltages by whole percent after all its
     * iterations is not creeping toward a solution: there is none near */
    if (!isfinite(worst) || !isfinite(low) || low < 0.5 || worst > 0.01)
        why = "voltages collapse or swing between iterations: the load is beyond what the "
              "feeder can carry (check load values and their units, or lower the load scale)";
    else
        why = "the iteration creeps toward a solution too slowly: raise the iteration limit, "
              "or look for very large loads or near-zero impedances";
    char lowtxt[160];
    if (isfinite(low) && worst < 1.0)
        snprintf(lowtxt, sizeof lowtxt, "lowest voltage %.3f pu at bus %s", low,
                 bus_name(n, lowbus, b2, sizeof b2));
    else
        snprintf(lowtxt, sizeof lowtxt, "the voltages diverged");
    kl_errors_add(err, n->feeder->path, 0, 0, "load flow",
                  "did not converge after %d iterations: largest voltage change %.3g pu at bus "
                  "%s; %s; likely reason: %s", it, worst, bus_name(n, where, b1, sizeof b1),
                  lowtxt, why);
}

/* Starts from the source voltages carried through every branch at no load. */
static void flat_start(kl_network *n)
{
    int where = -1;
    memset(n->i_to, 0, 3 * (size_t)n->nbranches * sizeof n->i_to[0]);
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
    if (n->v_valid)
        gather_voltages(n);
    else
        flat_start(n);
    double worst = INFINITY;
    int where = -1, it = 0;
    while (it < opt->max_iter) {
        it++;
        sweep_backward(n, scale);
        where = -1;
        worst = sweep_forward(n, &where);
        if (!isfinite(worst) || worst < opt->tol_pu)
            break;
    }
    /* final currents consistent with the final voltages (exact power balance) */
    if (isfinite(worst))
        sweep_backward(n, scale);
    scatter_state(n);
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
