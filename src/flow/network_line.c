/* kilter: line branches of the network (network.c): their Z and Y packed on
 * the branch's phases (m x m each, m the phase count) and the generalized
 * matrices computed from them when asked (Kersting ch. 6: a = U + Z Y / 2,
 * b = Z, c = Y + Y Z Y / 4, d = U + Y Z / 2, A = a^-1, B = a^-1 b, from
 * memory). */
#include <complex.h>
#include <math.h>
#include <string.h>
#include "kl_flow.h"

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
kl_status kl_network_line_fill(kl_network *n, int k, const kl_section *sc, int construction,
                           double len, kl_errors *err)
{
    const kl_feeder *f = n->feeder;
    const kl_construction *cn = &f->constructions[construction];
    int mask = n->br_phases[k], m = PH_N[mask];
    const int *l = PH_L[mask];
    if (n->nzy + 2 * (size_t)(m * m) > n->zy_cap) { /* zy_count and emission disagree */
        kl_network_err(err, f, sc->loc, "section", sc->name, "internal error: line storage "
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
        kl_network_err(err, f, sc->loc, "section", sc->name, "has a singular line matrix: check the "
                "construction's impedance and susceptance");
        return KL_EINPUT;
    }
    return KL_OK;
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
    if (kl_cm3_inverse_on(ta, mask, tA))
        return KL_EINPUT;
    if (A)
        memcpy(A, tA, sizeof tA);
    if (B)
        kl_cm3_mul(tA, Z, B);
    return KL_OK;
}

/* The section's construction, phases and length as the caller read them
 * (sc is read only to name it in an error). */
kl_status kl_network_line_check(const kl_network *n, const kl_section *sc, int construction,
                            int phases, double length_m, int *mask, kl_errors *err)
{
    const kl_feeder *f = n->feeder;
    if (construction < 0 || construction >= f->nconstructions) {
        kl_network_err(err, f, sc->loc, "section", sc->name, "has no construction");
        return KL_EINPUT;
    }
    const kl_construction *cn = &f->constructions[construction];
    if (!cn->derived && cn->kind != KL_CONS_MATRIX) {
        kl_network_err(err, f, cn->loc, "construction", cn->name, "has no impedance yet: derive line "
                "constants (kl_lines_derive) before building the network");
        return KL_EINPUT;
    }
    *mask = phases ? phases : cn->phases;
    if (*mask & ~cn->phases) {
        kl_network_err(err, f, sc->loc, "section", sc->name, "uses a phase its construction does not "
                "carry: give phases the construction has");
        return KL_EINPUT;
    }
    if (!(length_m > 0) || !isfinite(length_m)) {
        kl_network_err(err, f, sc->loc, "section", sc->name, "needs a positive length");
        return KL_EINPUT;
    }
    return KL_OK;
}
