/* kilter: why a load flow does not converge, for the message that says so.
 *
 * Both solvers iterate on current injections: loads and capacitors draw
 * I = Y V at the present voltages and the network answers V = E - Z_th I.
 * For a capacitor (constant admittance Y_c) that is the fixed point
 * V = E - Z_th Y_c V, which the iteration reaches only when the spectral
 * radius of Z_th Y_c is below one (the iteration matrix of a linear fixed
 * point, common practice); |Z_th| beyond the capacitor's reactance means
 * the line and the capacitor are near or past series resonance, the
 * iteration amplifies the capacitor's current every pass, and lowering the
 * load does not help.  Z_th is taken as the series impedance of the path
 * from the source (the source equivalent, every line, the first transformer
 * up the path with its own impedance), on the capacitor's phases: for a
 * grounded-wye capacitor the zero-sequence loop of the line is the one that
 * counts.  From 0.9 the capacitor is named as the cause and no load scale is
 * suggested; otherwise a sweep that collapses is taken to carry more load
 * than the feeder can, the one case where a load scale is the hint (with a
 * capacitor past 0.5 named beside it). */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "kl_flow.h"

/* The series impedance from the source to bus b, 3 x 3 (phase frame of b). */
static void path_impedance(const kl_network *n, int b, kl_complex Z[9])
{
    memset(Z, 0, 9 * sizeof Z[0]);
    for (int k = n->parent[b]; k >= 0; k = n->parent[n->br_from[k]]) {
        kl_complex zk[9] = {0};
        if (n->br_kind[k] == KL_BR_LINE)
            kl_network_line_zy(n, k, zk, NULL);
        else if (n->br_kind[k] != KL_BR_SWITCH)
            memcpy(zk, n->B + 9 * (size_t)n->dev[k], sizeof zk);
        for (int e = 0; e < 9; e++)
            Z[e] += zk[e];
        if (n->br_kind[k] == KL_BR_TRANSFORMER)
            return; /* beyond it, the impedances are on another voltage */
    }
    if (n->has_zsource)
        for (int e = 0; e < 9; e++)
            Z[e] += n->zsource[e];
}

/* Spectral radius of a 3 x 3 complex matrix by power iteration (a hint, not
 * a measurement: 60 steps from a start with every component). */
static double spectral_radius(const kl_complex M[9])
{
    kl_complex x[3] = {1, 0.7 + 0.3 * I, 0.4 - 0.6 * I}, y[3];
    double r = 0;
    for (int it = 0; it < 60; it++) {
        kl_cm3_vec(M, x, y);
        double ny = sqrt(creal(y[0] * conj(y[0]) + y[1] * conj(y[1]) + y[2] * conj(y[2])));
        double nx = sqrt(creal(x[0] * conj(x[0]) + x[1] * conj(x[1]) + x[2] * conj(x[2])));
        if (!(ny > 0) || !(nx > 0))
            return 0;
        r = ny / nx;
        for (int p = 0; p < 3; p++)
            x[p] = y[p] / ny;
    }
    return r;
}

/* Capacitor c's admittance matrix from its load-model parts. */
static void cap_admittance(const kl_network *n, int c, kl_complex Y[9], double *bmax)
{
    kl_load_part pt[3];
    int np = kl_load_cap_parts(n, c, pt);
    memset(Y, 0, 9 * sizeof Y[0]);
    *bmax = 0;
    for (int i = 0; i < np; i++) {
        int p = pt[i].p, q = pt[i].q;
        Y[4 * p] += pt[i].k;
        if (q < 3) {
            Y[4 * q] += pt[i].k;
            Y[3 * p + q] -= pt[i].k;
            Y[3 * q + p] -= pt[i].k;
        }
        *bmax = fmax(*bmax, cabs(pt[i].k));
    }
}

int kl_diverge_hint(const kl_network *n, double low_pu, double worst, char *buf, size_t len)
{
    const kl_feeder *f = n->feeder;
    int worst_c = -1;
    double worst_rho = 0, zline = 0, xc = 0;
    for (int c = 0; c < f->ncapacitors; c++) {
        int b = f->capacitors[c].bus;
        if (b < 0 || b >= n->nfeeder_buses || !n->phases[b])
            continue; /* de-energized */
        kl_complex Z[9], Y[9], M[9];
        double bmax;
        path_impedance(n, b, Z);
        cap_admittance(n, c, Y, &bmax);
        kl_cm3_mul(Z, Y, M);
        double rho = spectral_radius(M);
        if (rho > worst_rho && bmax > 0) {
            worst_rho = rho;
            worst_c = c;
            xc = 1.0 / bmax;
            zline = rho * xc;
        }
    }
    /* at 1 and past it the capacitor alone cannot settle; from 0.9 it is the cause */
    if (worst_c >= 0 && worst_rho >= 0.9) {
        const kl_capacitor *cp = &f->capacitors[worst_c];
        snprintf(buf, len, "capacitor %s at bus %s is near series resonance with the line feeding "
                 "it: its reactance (%.3g ohm) is below the impedance of the path from the source "
                 "as the capacitor loads it (%.3g ohm; for a grounded-wye bank the line's "
                 "zero-sequence loop), so every iteration amplifies its current and neither "
                 "solver can settle; check its rating and connection (kvar, units, wye or delta) "
                 "and the line to it; a lower load does not help", cp->name,
                 f->buses[cp->bus].name, xc, zline);
        return 1;
    }
    char cap[300] = "";
    if (worst_c >= 0 && worst_rho >= 0.5)
        snprintf(cap, sizeof cap, "; capacitor %s at bus %s is close to resonance with the line "
                 "(reactance %.3g ohm against %.3g ohm) and adds to it",
                 f->capacitors[worst_c].name, f->buses[f->capacitors[worst_c].bus].name, xc, zline);
    if (!isfinite(worst) || !isfinite(low_pu) || low_pu < 0.5 || worst > 0.01)
        snprintf(buf, len, "voltages collapse or swing between iterations: the load is beyond what "
                 "the feeder can carry (check load values and their units, or lower the load "
                 "scale)%s", cap);
    else
        snprintf(buf, len, "the iteration creeps toward a solution too slowly: raise the iteration "
                 "limit, or look for very large loads or near-zero impedances%s", cap);
    return 0;
}
