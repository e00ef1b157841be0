/* kilter: phase-frame Thevenin matrices and fault currents (kilter/fault.h).
 *
 * Two passes over the branches, in sweep order and back:
 *   up (leaves to source): the admittance to ground beyond each bus, Ydown,
 *     non-zero only below grounding banks (a grounded-wye/delta bank's
 *     shunt Yg = J / (3 Z_t), transformer.c) and seen through a line as
 *     Yin = Yl (U + Z Yl)^-1, through a device as Yin = Yg + d Yl (U + B Yl)^-1 A;
 *   down (source to leaves): the feeder seen upstream from each bus with the
 *     branch's own shunt taken out, Zx = Zup_f (U + (Ydown_f - Yin) Zup_f)^-1,
 *     then Zup_t = Zx + Z for a line (the series matrix, shunt capacitance
 *     left out) and Zup_t = A (U + Zx Yg)^-1 Zx d + B for a device (from
 *     V_t = A V_f - B I_t, I_f = d I_t + Yg V_f, V_f = -Zx I_f), and the
 *     bus's Thevenin matrix Zth = Zup (U + Ydown Zup)^-1 = (Zup^-1 + Ydown)^-1.
 * The zero-sequence rules of the connections follow from A, d and B
 * (transformer.c): a delta source winding removes the zero sequence from A
 * and d, so a delta/grounded-wye bank shows only its own leakage impedance
 * to it (B); grounded-wye/grounded-wye passes it, scaled by the ratio
 * squared.  A load winding that cannot return zero-sequence current (delta,
 * ungrounded wye, open delta, or a grounded wye behind an ungrounded wye)
 * leaves its side open in the zero sequence (kilter/fault.h): the textbook
 * open circuit
 * (J. D. Glover, M. S. Sarma, T. J. Overbye, "Power System Analysis and
 * Design", 5th ed., ch. 8, the zero-sequence networks of three-phase
 * transformers, from memory). */
#include <math.h>
#include <string.h>
#include "kilter/fault.h"
#include "kilter/sequence.h"
#include "kl_flow.h"

void kl_fault_thevenin_free(kl_fault_thevenin *t)
{
    if (!t)
        return;
    kl_free(t->zth);
    kl_free(t->vpre);
    kl_free(t->ydown);
    kl_free(t->zup);
    kl_free(t->open);
    kl_free(t->open_up);
    kl_free(t);
}

static int all_zero(const kl_complex m[9])
{
    for (int i = 0; i < 9; i++)
        if (m[i] != 0)
            return 0;
    return 1;
}

/* r = Z (U + Y Z)^-1, i.e. (Z^-1 + Y)^-1 without inverting Z (Z may be 0). */
static void z_with_shunt(const kl_complex Z[9], const kl_complex Y[9], kl_complex r[9])
{
    kl_complex m[9], mi[9];
    if (all_zero(Y)) {
        memcpy(r, Z, 9 * sizeof r[0]);
        return;
    }
    kl_cm3_mul(Y, Z, m);
    for (int i = 0; i < 9; i += 4)
        m[i] += 1.0;
    if (kl_cm3_inverse(m, mi)) {
        memcpy(r, Z, 9 * sizeof r[0]); /* U + YZ is singular only for a lossless resonance */
        return;
    }
    kl_cm3_mul(Z, mi, r);
}

/* out = P M Q column by column, P and Q the Fortescue transforms given:
 * M012 = T^-1 M T (to the sequence frame) or M = T M012 T^-1 (back). */
static void basis(const kl_complex M[9], kl_complex out[9],
                  void (*q)(const kl_complex *, kl_complex *),
                  void (*p)(const kl_complex *, kl_complex *))
{
    for (int j = 0; j < 3; j++) {
        kl_complex e[3] = {0, 0, 0}, u[3], w[3], x[3];
        e[j] = 1;
        q(e, u);
        kl_cm3_vec(M, u, w);
        p(w, x);
        for (int i = 0; i < 3; i++)
            out[3 * i + j] = x[i];
    }
}

static void to_seq(const kl_complex M[9], kl_complex S[9])
{
    basis(M, S, kl_seq_to_phase, kl_seq_from_phase);
}

static void from_seq(const kl_complex S[9], kl_complex M[9])
{
    basis(S, M, kl_seq_from_phase, kl_seq_to_phase);
}

/* The 2x2 block (rows, columns 1 and 2) of S inverted into R (the rest 0). */
static int inverse_12(const kl_complex S[9], kl_complex R[9])
{
    kl_complex det = S[4] * S[8] - S[5] * S[7];
    memset(R, 0, 9 * sizeof R[0]);
    if (!(cabs(det) > 0))
        return -1;
    R[4] = S[8] / det;
    R[5] = -S[5] / det;
    R[7] = -S[7] / det;
    R[8] = S[4] / det;
    return 0;
}

/* (Z^-1 + Y)^-1 where Z may be open in the zero sequence (*open): in the
 * sequence frame Z^-1 is then the inverse of its positive/negative block
 * (zero in the zero sequence, the limit of an infinite Z0); a Y with a
 * zero-sequence part (a grounding bank beyond) closes it. */
static void shunted(const kl_complex Z[9], int open, const kl_complex Y[9], kl_complex r[9],
                    unsigned char *open_out)
{
    kl_complex Z012[9], Y012[9], S[9], R[9];
    *open_out = (unsigned char)open;
    if (!open) {
        z_with_shunt(Z, Y, r);
        return;
    }
    if (all_zero(Y)) {
        memcpy(r, Z, 9 * sizeof r[0]);
        return;
    }
    to_seq(Z, Z012);
    to_seq(Y, Y012);
    double big = 0, zero = 0;
    for (int i = 0; i < 9; i++) {
        big = fmax(big, cabs(Y012[i]));
        if (i < 3 || i % 3 == 0)
            zero = fmax(zero, cabs(Y012[i]));
    }
    if (inverse_12(Z012, S)) {
        memcpy(r, Z, 9 * sizeof r[0]);
        return;
    }
    for (int i = 0; i < 9; i++)
        S[i] += Y012[i];
    if (zero > 1e-12 * big && kl_cm3_inverse(S, R) == 0) {
        *open_out = 0;
    } else if (inverse_12(S, R)) {
        memcpy(r, Z, 9 * sizeof r[0]);
        return;
    }
    from_seq(R, r);
}

/* r = Y (U + Z Y)^-1 A' with A' = U (lines) or the device's d Y (U + B Y)^-1 A. */
static void admittance_in(const kl_network *n, int k, const kl_complex Yl[9], kl_complex r[9])
{
    kl_complex Z[9], m[9], mi[9], t1[9];
    memset(r, 0, 9 * sizeof r[0]);
    if (n->br_kind[k] == KL_BR_LINE) {
        if (all_zero(Yl))
            return;
        kl_network_line_zy(n, k, Z, NULL);
        kl_cm3_mul(Z, Yl, m);
        for (int i = 0; i < 9; i += 4)
            m[i] += 1.0;
        if (kl_cm3_inverse(m, mi) == 0)
            kl_cm3_mul(Yl, mi, r);
        return;
    }
    int s = n->dev[k];
    const kl_complex *A = n->A + 9 * s, *B = n->B + 9 * s, *d = n->d + 9 * s;
    if (!all_zero(Yl)) {
        kl_cm3_mul(B, Yl, m);
        for (int i = 0; i < 9; i += 4)
            m[i] += 1.0;
        if (kl_cm3_inverse(m, mi) == 0) {
            kl_cm3_mul(Yl, mi, t1);
            kl_cm3_mul(d, t1, m);
            kl_cm3_mul(m, A, r);
        }
    }
    for (int i = 0; i < 9; i++)
        r[i] += n->yg[9 * s + i];
}

/* 1 when transformer branch k's load winding can return zero-sequence
 * current: a grounded wye fed by a winding that can carry it (delta, or a
 * grounded wye), or a single-phase or center-tapped secondary (grounded,
 * common practice). */
static int load_side_earthed(const kl_network *n, int k)
{
    const kl_feeder *f = n->feeder;
    const kl_section *sc = &f->sections[n->br_section[k]];
    const kl_transformer *t = &f->transformers[sc->device];
    int up = kl_transformer_step_up(t, n->v_base_ln[n->br_from[k]]);
    kl_winding ws = up ? t->low : t->high, wl = up ? t->high : t->low;
    if (wl == KL_WINDING_SINGLE || wl == KL_WINDING_CENTER_TAP)
        return 1;
    return wl == KL_WINDING_GRD_WYE && ws != KL_WINDING_WYE;
}

static void up_pass(const kl_network *n, kl_fault_thevenin *t)
{
    kl_complex yin[9];
    for (int k = n->nbranches - 1; k >= 0; k--) {
        admittance_in(n, k, t->ydown + 9 * (size_t)n->br_to[k], yin);
        kl_complex *yf = t->ydown + 9 * (size_t)n->br_from[k];
        for (int i = 0; i < 9; i++)
            yf[i] += yin[i];
    }
}

/* The upstream seen from branch k's from-bus without the branch itself
 * (Zx, open_x) and, for a device, (Zx^-1 + Yg)^-1 (m): branch_down's first
 * steps, again for the walk up. */
static void excluded(const kl_network *n, const kl_fault_thevenin *t, int k, kl_complex zx[9],
                     unsigned char *open_x)
{
    kl_complex yin[9], yx[9];
    int fb = n->br_from[k];
    admittance_in(n, k, t->ydown + 9 * (size_t)n->br_to[k], yin);
    for (int i = 0; i < 9; i++)
        yx[i] = t->ydown[9 * (size_t)fb + (size_t)i] - yin[i];
    shunted(t->zup + 9 * (size_t)fb, t->open_up[fb], yx, zx, open_x);
}

/* 1 when device branch k passes zero-sequence voltage (A (1,1,1) != 0). */
static int passes_zero(const kl_network *n, int k)
{
    const kl_complex *A = n->A + 9 * (size_t)n->dev[k];
    for (int i = 0; i < 3; i++)
        if (A[3 * i] + A[3 * i + 1] + A[3 * i + 2] != 0)
            return 1;
    return 0;
}

/* Zup of branch k's to-bus from its from-bus (top of file). */
static void branch_down(const kl_network *n, kl_fault_thevenin *t, int k)
{
    int fb = n->br_from[k], tb = n->br_to[k];
    kl_complex zx[9], *zu = t->zup + 9 * (size_t)tb;
    unsigned char open_x;
    excluded(n, t, k, zx, &open_x);
    if (n->br_kind[k] == KL_BR_LINE) {
        kl_complex Z[9];
        kl_network_line_zy(n, k, Z, NULL);
        for (int i = 0; i < 9; i++)
            zu[i] = zx[i] + Z[i];
        t->open_up[tb] = open_x;
    } else {
        int s = n->dev[k];
        kl_complex m[9], t1[9], t2[9];
        unsigned char open_m;
        /* (U + Zx Yg)^-1 Zx = (Zx^-1 + Yg)^-1 */
        shunted(zx, open_x, n->yg + 9 * s, m, &open_m);
        kl_cm3_mul(n->A + 9 * s, m, t1);
        kl_cm3_mul(t1, n->d + 9 * s, t2);
        for (int i = 0; i < 9; i++)
            zu[i] = t2[i] + n->B[9 * s + i];
        if (n->br_kind[k] == KL_BR_TRANSFORMER)
            t->open_up[tb] = !load_side_earthed(n, k) || (passes_zero(n, k) && open_m);
        else
            t->open_up[tb] = open_m;
    }
    kl_cm3_mask(zu, n->phases[tb]);
    /* no-load prefault voltages: V_t = A V_f (lines and switches: equal) */
    kl_complex *vt = t->vpre + 3 * (size_t)tb, *vf = t->vpre + 3 * (size_t)fb;
    if (n->br_kind[k] == KL_BR_LINE)
        memcpy(vt, vf, 3 * sizeof vt[0]);
    else
        kl_cm3_vec(n->A + 9 * (size_t)n->dev[k], vf, vt);
    for (int p = 0; p < 3; p++)
        if (!(n->phases[tb] & (1 << p)))
            vt[p] = 0;
}

kl_status kl_fault_thevenin_build(const kl_network *n, kl_fault_thevenin **out, kl_errors *err)
{
    *out = NULL;
    if (n->nlinks > 0) {
        kl_errors_add(err, n->feeder->path, 0, 0, "faults",
                      "the fault study needs a radial feeder: open the loop-closing sections "
                      "(radial: false feeders are solved only by the load flow)");
        return KL_EINPUT;
    }
    kl_fault_thevenin *t = kl_calloc(1, sizeof *t);
    size_t nb = (size_t)n->nbuses;
    if (t) {
        t->nbuses = n->nbuses;
        t->zth = kl_calloc(9 * nb, sizeof(kl_complex));
        t->vpre = kl_calloc(3 * nb, sizeof(kl_complex));
        t->ydown = kl_calloc(9 * nb, sizeof(kl_complex));
        t->zup = kl_calloc(9 * nb, sizeof(kl_complex));
        t->open = kl_calloc(nb, 1);
        t->open_up = kl_calloc(nb, 1);
    }
    if (!t || !t->zth || !t->vpre || !t->ydown || !t->zup || !t->open || !t->open_up) {
        kl_fault_thevenin_free(t);
        return KL_ENOMEM;
    }
    up_pass(n, t);
    int s = n->source;
    if (n->has_zsource)
        memcpy(t->zup + 9 * (size_t)s, n->zsource, 9 * sizeof(kl_complex));
    memcpy(t->vpre + 3 * (size_t)s, n->v_held, 3 * sizeof(kl_complex));
    for (int k = 0; k < n->nbranches; k++)
        branch_down(n, t, k);
    for (size_t b = 0; b < nb; b++)
        shunted(t->zup + 9 * b, t->open_up[b], t->ydown + 9 * b, t->zth + 9 * b, &t->open[b]);
    *out = t;
    return KL_OK;
}

void kl_fault_thevenin_use_flow(kl_fault_thevenin *t, const kl_network *n)
{
    for (int b = 0; b < n->nbuses; b++)
        memcpy(t->vpre + 3 * (size_t)b, kl_network_bus_v(n, b), 3 * sizeof(kl_complex));
}

/* The fault's three conditions as Cv V + Ci I = 0 (one row each). */
static int conditions(const kl_fault_spec *fs, int mask, kl_complex Cv[9], kl_complex Ci[9])
{
    int p = fs->p, q = fs->q;
    memset(Cv, 0, 9 * sizeof Cv[0]);
    memset(Ci, 0, 9 * sizeof Ci[0]);
    for (int r = 0; r < 3; r++)
        Ci[4 * r] = 1.0; /* I_r = 0 unless a row below says otherwise */
    switch (fs->kind) {
    case KL_FAULT_3PH:
        if (mask != KL_PH_ABC)
            return -1;
        for (int r = 0; r < 3; r++) {
            Cv[4 * r] = 1.0;
            Ci[4 * r] = -fs->zf;
        }
        return 0;
    case KL_FAULT_SLG:
        if (p < 0 || p > 2 || !(mask & (1 << p)))
            return -1;
        Cv[4 * p] = 1.0;
        Ci[4 * p] = -fs->zf;
        return 0;
    case KL_FAULT_LL:
    case KL_FAULT_DLG:
        if (p < 0 || p > 2 || q < 0 || q > 2 || p == q || !(mask & (1 << p)) || !(mask & (1 << q)))
            return -1;
        if (fs->kind == KL_FAULT_LL) {
            Ci[3 * p + q] = 1.0; /* row p: I_p + I_q = 0 */
            Ci[3 * q + q] = 0;   /* row q: V_p - V_q - Zf I_p = 0 */
            Ci[3 * q + p] = -fs->zf;
            Cv[3 * q + p] = 1.0;
            Cv[3 * q + q] = -1.0;
        } else {
            for (int r = 0; r < 2; r++) { /* V_x - Zf (I_p + I_q) = 0, x = p, q */
                int x = r ? q : p;
                Cv[3 * x + x] = 1.0;
                Ci[3 * x + p] = -fs->zf;
                Ci[3 * x + q] = -fs->zf;
            }
        }
        return 0;
    }
    return -1;
}

/* Solves the n x n system M x = r (row-major, n <= 4) by Gaussian
 * elimination with partial pivoting; -1 when a pivot is nil against the
 * largest entry of its column (1e-14: below the rounding of the data). */
static int solve_small(kl_complex *M, kl_complex *r, int n, kl_complex *x)
{
    for (int c = 0; c < n; c++) {
        int piv = c;
        double big = 0;
        for (int i = c; i < n; i++) {
            big = fmax(big, cabs(M[n * i + c]));
            if (cabs(M[n * i + c]) > cabs(M[n * piv + c]))
                piv = i;
        }
        if (!(cabs(M[n * piv + c]) > 1e-14 * big) || big == 0)
            return -1;
        for (int j = 0; j < n; j++) {
            kl_complex tmp = M[n * c + j];
            M[n * c + j] = M[n * piv + j];
            M[n * piv + j] = tmp;
        }
        kl_complex tr = r[c];
        r[c] = r[piv];
        r[piv] = tr;
        for (int i = c + 1; i < n; i++) {
            kl_complex f = M[n * i + c] / M[n * c + c];
            for (int j = c; j < n; j++)
                M[n * i + j] -= f * M[n * c + j];
            r[i] -= f * r[c];
        }
    }
    for (int i = n - 1; i >= 0; i--) {
        kl_complex s = r[i];
        for (int j = i + 1; j < n; j++)
            s -= M[n * i + j] * x[j];
        x[i] = s / M[n * i + i];
    }
    return 0;
}

/* Cv V + Ci I = 0 with V = Vpre - Z I (+ vn (1,1,1) at an open bus, where
 * Ia + Ib + Ic = 0 is the fourth equation):
 *   [Ci - Cv Z | Cv 1] [I; vn] = -Cv Vpre. */
int kl_fault_solve(const kl_fault_thevenin *t, const kl_network *n, int b,
                   const kl_fault_spec *fs, kl_complex i[3], kl_complex v[3])
{
    const kl_complex *Z = t->zth + 9 * (size_t)b, *vp = t->vpre + 3 * (size_t)b;
    kl_complex Cv[9], Ci[9], CvZ[9], M[16], r[4], x[4] = {0, 0, 0, 0}, cv[3];
    int open = t->open[b], m;
    for (int p = 0; p < 3; p++)
        i[p] = v[p] = NAN;
    if (conditions(fs, n->phases[b], Cv, Ci))
        return -1;
    /* A fault that does not touch earth (line-line) leaves the neutral
     * displacement out of its conditions and implies Ia + Ib + Ic = 0: solve
     * it as at an earthed bus, then hold the zero-sequence voltage at its
     * prefault value (the symmetrical stray capacitance to earth keeps it,
     * common practice). */
    int floating = 0;
    if (open) {
        floating = 1;
        for (int row = 0; row < 3; row++)
            if (Cv[3 * row] + Cv[3 * row + 1] + Cv[3 * row + 2] != 0)
                floating = 0;
    }
    m = open && !floating ? 4 : 3;
    kl_cm3_mul(Cv, Z, CvZ);
    kl_cm3_vec(Cv, vp, cv);
    memset(M, 0, sizeof M);
    for (int row = 0; row < 3; row++) {
        for (int col = 0; col < 3; col++)
            M[m * row + col] = Ci[3 * row + col] - CvZ[3 * row + col];
        if (m == 4)
            M[m * row + 3] = Cv[3 * row] + Cv[3 * row + 1] + Cv[3 * row + 2];
        r[row] = -cv[row];
    }
    if (m == 4) {
        for (int col = 0; col < 3; col++)
            M[m * 3 + col] = 1.0;
        r[3] = 0;
    }
    if (solve_small(M, r, m, x))
        return -1;
    for (int p = 0; p < m; p++)
        if (!isfinite(creal(x[p])) || !isfinite(cimag(x[p])))
            return -1;
    kl_complex zi[3];
    kl_cm3_vec(Z, x, zi);
    if (floating)
        x[3] = (zi[0] + zi[1] + zi[2]) / 3.0;
    for (int p = 0; p < 3; p++) {
        i[p] = x[p];
        v[p] = (n->phases[b] & (1 << p)) ? vp[p] - zi[p] + (open ? x[3] : 0) : 0;
    }
    return 0;
}

void kl_fault_feed_current(const kl_fault_thevenin *t, int b, const kl_complex i[3],
                           const kl_complex v[3], kl_complex out[3])
{
    const kl_complex *vp = t->vpre + 3 * (size_t)b;
    kl_complex dv[3], down[3];
    for (int p = 0; p < 3; p++)
        dv[p] = v[p] - vp[p];
    kl_cm3_vec(t->ydown + 9 * (size_t)b, dv, down);
    for (int p = 0; p < 3; p++)
        out[p] = i[p] + down[p];
}

void kl_fault_head_current(const kl_fault_thevenin *t, const kl_network *n, int b,
                           const kl_complex i[3], const kl_complex v[3], kl_complex head[3])
{
    kl_complex cur[3], dv[3];
    kl_fault_feed_current(t, b, i, v, cur);
    for (int p = 0; p < 3; p++)
        dv[p] = v[p] - t->vpre[3 * (size_t)b + (size_t)p];
    if (n->parent[b] < 0) {
        memcpy(head, i, 3 * sizeof head[0]);
        return;
    }
    for (int x = b; n->parent[x] >= 0;) {
        int k = n->parent[x], f = n->br_from[k];
        kl_complex dvf[3], ifrom[3], zx[9], yx[9], yin[9], w[3];
        unsigned char open_x;
        if (n->br_kind[k] == KL_BR_LINE) {
            kl_complex Z[9];
            kl_network_line_zy(n, k, Z, NULL);
            kl_cm3_vec(Z, cur, w);
            for (int p = 0; p < 3; p++) {
                dvf[p] = dv[p] + w[p];
                ifrom[p] = cur[p];
            }
        } else {
            int s = n->dev[k];
            kl_complex m[9], dc[3], yv[3];
            unsigned char open_m;
            excluded(n, t, k, zx, &open_x);
            shunted(zx, open_x, n->yg + 9 * s, m, &open_m);
            kl_cm3_vec(n->d + 9 * s, cur, dc);
            kl_cm3_vec(m, dc, w);
            for (int p = 0; p < 3; p++)
                dvf[p] = -w[p];
            kl_cm3_vec(n->yg + 9 * s, dvf, yv);
            for (int p = 0; p < 3; p++)
                ifrom[p] = dc[p] + yv[p];
        }
        if (f == n->source) {
            memcpy(head, ifrom, 3 * sizeof head[0]);
            return;
        }
        /* the branch feeding f also carries what f's other branches draw */
        admittance_in(n, k, t->ydown + 9 * (size_t)x, yin);
        for (int e = 0; e < 9; e++)
            yx[e] = t->ydown[9 * (size_t)f + (size_t)e] - yin[e];
        kl_cm3_vec(yx, dvf, w);
        for (int p = 0; p < 3; p++) {
            cur[p] = ifrom[p] + w[p];
            dv[p] = dvf[p];
        }
        x = f;
    }
    memcpy(head, cur, 3 * sizeof head[0]); /* not reached: the walk ends at the source */
}

int kl_fault_z01(const kl_fault_thevenin *t, const kl_network *n, int b, kl_complex *z0,
                 kl_complex *z1)
{
    *z0 = *z1 = NAN + NAN * I; /* both parts undefined, not NAN + 0j */
    if (n->phases[b] != KL_PH_ABC)
        return -1;
    /* Z012 = T^-1 Zth T: Z0 from the column of a zero-sequence current
     * (1, 1, 1), Z1 from a positive-sequence one (1, a^2, a). */
    const kl_complex *Z = t->zth + 9 * (size_t)b;
    kl_complex u0[3] = {1, 1, 1}, u1[3], s[3], w[3];
    kl_complex s1[3] = {0, 1, 0};
    kl_seq_to_phase(s1, u1);
    kl_cm3_vec(Z, u0, w);
    kl_seq_from_phase(w, s);
    *z0 = t->open[b] ? NAN + NAN * I : s[0];
    kl_cm3_vec(Z, u1, w);
    kl_seq_from_phase(w, s);
    *z1 = s[1];
    return 0;
}
