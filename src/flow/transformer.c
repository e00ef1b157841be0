/* kilter: transformer banks in the generalized form of the load flow,
 *
 *     V_load = A V_source - B I_load,     I_source = A^T I_load,
 *
 * with phase-to-neutral voltages on both sides (for a delta side, the
 * equivalent line-to-neutral voltages without zero sequence, V_ln = W V_ll)
 * and A real, so I_source = A^T I_load conserves complex power through the
 * ideal part.  The matrices follow Kersting, "Distribution System Modeling
 * and Analysis", ch. 8 (from memory): delta/grounded-wye step-down
 * A = (1/n_t)[1 0 -1; -1 1 0; 0 -1 1], n_t = V_LL,high / V_LN,low, low side
 * lagging the high side by 30 degrees (ANSI); step-up leads by 30 degrees.
 *
 * B: a bank of three identical units with the bank's per-unit impedance z on
 * its own rating shows the equivalent-wye impedance z * V_LL,load^2 / S on
 * the load side to every current it can carry (positive, negative and, where
 * a path exists, zero sequence), so B = z Z_base U for the three-phase banks.
 *
 * Grounded-wye source winding, delta load winding (a grounding bank): the
 * generalized form gains a shunt at the source terminals,
 *
 *     I_source = A^T I_load + Yg V_source,   Yg = J / (3 Z_t),
 *
 * J the 3x3 matrix of ones, Z_t the unit's leakage impedance referred to
 * the wye side (z V_LL,source^2 / S, ohm).  Derivation from the winding
 * equations: unit p sees V_p - Z_t I_p on its wye winding and drives the
 * delta winding with (V_p - Z_t I_p) / n_w; the delta closes, so the three
 * winding voltages sum to zero: V_a + V_b + V_c = Z_t (I_a + I_b + I_c), i.e.
 * I_0 = V_0 / Z_t.  The zero sequence circulates in the delta and never
 * reaches the load side; the positive and negative sequences pass as in the
 * ungrounded connection (A, B unchanged).  This is the textbook zero-sequence
 * equivalent of the bank: the wye side connected to the reference through
 * Z_0 = Z_t, the delta side open (J. D. Glover, M. S. Sarma, T. J. Overbye,
 * "Power System Analysis and Design", 5th ed., ch. 8, the zero-sequence
 * networks of three-phase transformers; Kersting, 4th ed., ch. 8 builds the
 * ungrounded wye/delta bank; both from memory).  For three
 * single-phase units Z_0 = Z_1 exactly; a three-phase core-form unit has a
 * Z_0 somewhat below Z_1 (common practice), which the file cannot state yet.
 * A grounded-wye winding on the load side needs no shunt: there the zero
 * sequence is the load's (V_0 = -Z_t I_0 through B, delta/grounded-wye).
 * The fault study (issue 16) reads the bank's zero-sequence path from Yg.
 *
 * Simplified (said here and in docs/flow.md):
 * - open-wye/open-delta: `rating` is the sum of the two units; each unit has
 *   the bank's per-unit impedance on half of it;
 * - center-tapped 120/240 V secondary: legs 1 and 2 are phase slots a and b
 *   of the secondary bus (V_a = +120 V, V_b = -120 V nominal, so a delta "ab"
 *   load sees 240 V); each half winding carries half the unit's impedance at
 *   240 V, the primary share of the impedance and the coupling between the
 *   halves are not modelled (Kersting's center-tap model splits them);
 * - a single-phase unit across two phases (primary line to line) is handled
 *   when stepping down from the high winding;
 * - no magnetising branch (no_load_loss_pu is not used by the load flow). */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "kl_flow.h"

static int is_wye(kl_winding w)
{
    return w == KL_WINDING_GRD_WYE || w == KL_WINDING_WYE;
}

/* P = U - ones/3 removes the zero sequence. */
static void zero_seq_free(kl_complex P[9], double k)
{
    for (int i = 0; i < 9; i++)
        P[i] = k * ((i % 4 == 0 ? 1.0 : 0.0) - 1.0 / 3.0);
}

/* V_ln = W V_ll for three-wire voltages (Kersting ch. 2, from memory). */
static const double W[9] = {2 / 3.0, 1 / 3.0, 0, 0, 2 / 3.0, 1 / 3.0, 1 / 3.0, 0, 2 / 3.0};

static void w_times(const kl_complex M[9], kl_complex A[9])
{
    kl_complex Wc[9];
    for (int i = 0; i < 9; i++)
        Wc[i] = W[i];
    kl_cm3_mul(Wc, M, A);
}

/* Three-phase bank, source winding s, load winding l; kv are line-to-line. */
static int three_phase(kl_winding s, kl_winding l, double kv_s, double kv_l, int step_up,
                       kl_complex A[9])
{
    memset(A, 0, 9 * sizeof A[0]);
    if (s == KL_WINDING_GRD_WYE && l == KL_WINDING_GRD_WYE) {
        kl_cm3_identity(A, KL_PH_ABC);
        for (int i = 0; i < 9; i++)
            A[i] *= kv_l / kv_s;
    } else if ((is_wye(s) && is_wye(l)) || (s == KL_WINDING_DELTA && l == KL_WINDING_DELTA)) {
        zero_seq_free(A, kv_l / kv_s);
    } else if (s == KL_WINDING_DELTA && is_wye(l)) {
        /* V_an proportional to V_AC (lags 30) step-down, to V_AB (leads 30) step-up */
        double k = kv_l / sqrt(3.0) / kv_s;
        for (int p = 0; p < 3; p++) {
            A[3 * p + p] = k;
            A[3 * p + (step_up ? (p + 1) % 3 : (p + 2) % 3)] = -k;
        }
    } else if (is_wye(s) && l == KL_WINDING_DELTA) {
        /* winding voltages: V_ll = M P V_s / n_w; step-down V_ab ~ V_A (lags 30),
         * step-up V_ab ~ -V_B (leads 30) */
        double nw = kv_s / sqrt(3.0) / kv_l;
        kl_complex M[9] = {0}, P[9], MP[9];
        for (int p = 0; p < 3; p++)
            M[3 * p + (step_up ? (p + 1) % 3 : p)] = step_up ? -1.0 / nw : 1.0 / nw;
        zero_seq_free(P, 1.0);
        kl_cm3_mul(M, P, MP);
        w_times(MP, A);
    } else {
        return -1;
    }
    return 0;
}

/* Open-wye/open-delta: units on source phases p and p+1 (cyclic) feed the
 * delta windings (p, p+1) and (p+1, p+2); the third side closes by KVL. */
static int open_bank(int src_phases, double kv_s, double kv_l, kl_complex zw, kl_complex A[9],
                     kl_complex B[9])
{
    int p;
    if (src_phases == (KL_PH_A | KL_PH_B))
        p = 0;
    else if (src_phases == (KL_PH_B | KL_PH_C))
        p = 1;
    else if (src_phases == (KL_PH_A | KL_PH_C))
        p = 2;
    else
        return -1;
    int q = (p + 1) % 3, m = (p + 2) % 3;
    double nw = kv_s / sqrt(3.0) / kv_l;
    kl_complex M[9] = {0}, N[9] = {0};
    M[3 * p + p] = 1.0 / nw;
    M[3 * q + q] = 1.0 / nw;
    M[3 * m + p] = -1.0 / nw;
    M[3 * m + q] = -1.0 / nw;
    /* winding (p,q) carries I_p, winding (q,m) carries -I_m (Kersting ch. 8, from memory) */
    N[3 * p + p] = zw;
    N[3 * q + m] = -zw;
    N[3 * m + p] = -zw;
    N[3 * m + m] = zw;
    w_times(M, A);
    w_times(N, B);
    return 0;
}

static int single_phase_index(int mask)
{
    return mask == KL_PH_A ? 0 : mask == KL_PH_B ? 1 : mask == KL_PH_C ? 2 : -1;
}

/* Single-phase unit with its primary across two phases p, q (q follows p
 * cyclically: ab, bc, ca): primary voltage V_p - V_q.  A single secondary sits
 * in phase slot p of the load-side bus; a center-tapped one in slots a and b. */
static kl_status line_to_line_unit(const kl_transformer *t, kl_winding wl, int src_phases,
                                   kl_complex A[9], kl_complex B[9], int *load_phases,
                                   double *load_base_ln, char *why, size_t nwhy)
{
    int p = src_phases == 3 ? 0 : src_phases == 6 ? 1 : 2, q = (p + 1) % 3;
    double kv_s = t->kv_high, kv_l = t->kv_low, s_va = t->kva * 1000.0;
    kl_complex z = t->r_pu + I * t->x_pu;
    if (wl == KL_WINDING_SINGLE) {
        A[3 * p + p] = kv_l / kv_s;
        A[3 * p + q] = -kv_l / kv_s;
        B[4 * p] = z * (kv_l * 1000.0) * (kv_l * 1000.0) / s_va;
        *load_phases = 1 << p;
        *load_base_ln = kv_l * 1000.0;
        return KL_OK;
    }
    if (wl == KL_WINDING_CENTER_TAP) {
        double k = (kv_l / 2.0) / kv_s;
        A[p] = k;
        A[q] = -k;
        A[3 + p] = -k;
        A[3 + q] = k;
        B[0] = B[4] = z * (kv_l * 1000.0) * (kv_l * 1000.0) / (2.0 * s_va);
        *load_phases = KL_PH_A | KL_PH_B;
        *load_base_ln = kv_l * 1000.0 / 2.0;
        return KL_OK;
    }
    snprintf(why, nwhy, "single-phase transformer %s across two phases needs a single or "
             "center-tap secondary", t->name);
    return KL_EINPUT;
}

/* Which winding faces the source: the one whose rating is closer to the
 * source-side bus base (step-up when that is the low winding). */
int kl_transformer_step_up(const kl_transformer *t, double source_base_ln)
{
    double lo = t->kv_low * 1000.0, hi = t->kv_high * 1000.0;
    if (t->low != KL_WINDING_SINGLE && t->low != KL_WINDING_CENTER_TAP)
        lo /= sqrt(3.0);
    if (t->high != KL_WINDING_SINGLE)
        hi /= sqrt(3.0);
    if (!(lo > 0) || !(hi > 0))
        return 0;
    return fabs(log(source_base_ln / lo)) < fabs(log(source_base_ln / hi));
}

/* Yg = J / (3 Z_t), Z_t = z V_LL,source^2 / S: the grounding path (top). */
static void grounding_path(kl_complex z, double kv_s, double s_va, kl_complex Yg[9])
{
    kl_complex zt = z * (kv_s * 1000.0) * (kv_s * 1000.0) / s_va;
    for (int i = 0; i < 9; i++)
        Yg[i] = 1.0 / (3.0 * zt);
}

kl_status kl_transformer_matrices(const kl_transformer *t, int src_phases, int step_up,
                                  kl_complex A[9], kl_complex B[9], kl_complex Yg[9],
                                  int *load_phases, double *load_base_ln, char *why, size_t nwhy)
{
    kl_winding ws = step_up ? t->low : t->high, wl = step_up ? t->high : t->low;
    double kv_s = step_up ? t->kv_low : t->kv_high, kv_l = step_up ? t->kv_high : t->kv_low;
    double s_va = t->kva * 1000.0;
    kl_complex z = t->r_pu + I * t->x_pu;
    char b1[4];
    memset(A, 0, 9 * sizeof A[0]);
    memset(B, 0, 9 * sizeof B[0]);
    memset(Yg, 0, 9 * sizeof Yg[0]);
    if (!(s_va > 0) || !(kv_s > 0) || !(kv_l > 0)) {
        snprintf(why, nwhy, "transformer %s needs a positive rating and both voltages",
                 t->name ? t->name : "?");
        return KL_EINPUT;
    }
    if (ws == KL_WINDING_SINGLE && !step_up && (src_phases == 3 || src_phases == 5 || src_phases == 6))
        return line_to_line_unit(t, wl, src_phases, A, B, load_phases, load_base_ln, why, nwhy);
    if (ws == KL_WINDING_SINGLE) {
        int p = single_phase_index(src_phases);
        if (p < 0) {
            snprintf(why, nwhy, "single-phase transformer %s must sit on one phase (line to "
                     "neutral) or across two (line to line); this section has phases %s", t->name, kl_phases_str(src_phases, b1));
            return KL_EINPUT;
        }
        if (wl == KL_WINDING_SINGLE) {
            A[4 * p] = kv_l / kv_s;
            B[4 * p] = z * (kv_l * 1000.0) * (kv_l * 1000.0) / s_va;
            *load_phases = src_phases;
            *load_base_ln = kv_l * 1000.0;
            return KL_OK;
        }
        if (wl == KL_WINDING_CENTER_TAP) {
            double n = kv_s / (kv_l / 2.0);
            A[p] = 1.0 / n;
            A[3 + p] = -1.0 / n;
            B[0] = B[4] = z * (kv_l * 1000.0) * (kv_l * 1000.0) / (2.0 * s_va);
            *load_phases = KL_PH_A | KL_PH_B;
            *load_base_ln = kv_l * 1000.0 / 2.0;
            return KL_OK;
        }
    }
    if (ws == KL_WINDING_OPEN_WYE && wl == KL_WINDING_OPEN_DELTA) {
        kl_complex zw = z * (kv_l * 1000.0) * (kv_l * 1000.0) / (s_va / 2.0);
        if (open_bank(src_phases, kv_s, kv_l, zw, A, B)) {
            snprintf(why, nwhy, "open-wye/open-delta bank %s needs exactly two phases on its "
                     "source side; this section has %s", t->name, kl_phases_str(src_phases, b1));
            return KL_EINPUT;
        }
        *load_phases = KL_PH_ABC;
        *load_base_ln = kv_l * 1000.0 / sqrt(3.0);
        return KL_OK;
    }
    if (three_phase(ws, wl, kv_s, kv_l, step_up, A) == 0) {
        if (src_phases != KL_PH_ABC) {
            snprintf(why, nwhy, "three-phase bank %s needs phases abc on its source side; this "
                     "section has %s", t->name, kl_phases_str(src_phases, b1));
            return KL_EINPUT;
        }
        kl_complex zb = z * (kv_l * 1000.0) * (kv_l * 1000.0) / s_va;
        for (int p = 0; p < 3; p++)
            B[4 * p] = zb;
        if (ws == KL_WINDING_GRD_WYE && wl == KL_WINDING_DELTA && cabs(z) > 0)
            grounding_path(z, kv_s, s_va, Yg);
        *load_phases = KL_PH_ABC;
        *load_base_ln = kv_l * 1000.0 / sqrt(3.0);
        return KL_OK;
    }
    snprintf(why, nwhy, "transformer %s: this pair of winding connections is not modelled; use "
             "grounded-wye, wye or delta on both sides, open-wye/open-delta, single/single or "
             "single/center-tap", t->name);
    return KL_EINPUT;
}

