/* kilter: step-voltage regulators (ANSI type B units) and their control.
 *
 * Each unit's effective ratio is a_R = 1 + step * tap (raise positive): the
 * load-side voltage is a_R times the source side and the source-side current
 * a_R times the load side (ideal, lossless: Kersting ch. 7, from memory).
 * The type-B exact ratio 1 / (1 - step * tap) differs by up to 0.06 % at
 * tap 10; the published IEEE 13-node results use 1 + step * tap (its RG60
 * voltages are 1.0625, 1.0500, 1.06875 pu at taps 10, 8, 11), so kilter does.
 *
 * Wye: one unit per phase, line to neutral.  Open delta (two units, pairs
 * given by the regulator's phase mask: bit 0 ab, bit 1 bc, bit 2 ca) acts on
 * line-to-line voltages, V_pq = a_pq V_PQ for the two units, the third side
 * closing by KVL, and the load side's line-to-neutral voltages are W V_ll
 * (zero sequence free).  Closed delta: three units, each with its series
 * winding in one line (below).
 *
 * Line-drop compensation (Kersting ch. 7, from memory): the relay sees
 *   V_relay = V_out / PT - (R + jX) I_line / CT_primary    [volts, 120 V base]
 * with R, X the compensator settings in volts at rated CT current; each tap
 * moves the relay voltage by step * 120 V. */
#include <math.h>
#include <string.h>
#include "kilter/network.h"
#include "kl_flow.h"

static const double W[9] = {2 / 3.0, 1 / 3.0, 0, 0, 2 / 3.0, 1 / 3.0, 1 / 3.0, 0, 2 / 3.0};

static double ratio(const kl_regulator *r, int tap)
{
    double step = r->step_pu > 0 ? r->step_pu : 0.00625;
    return 1.0 + step * tap;
}

/* Closed delta: the unit between lines p and p+1 has its series winding in
 * line p, excited by the source-side V_p - V_p+1:
 *   V_p' = V_p + (a_p - 1)(V_p - V_p+1),  i.e.  A = U + diag(a - 1) D,
 * which gives V_ab' = a_ab V_AB + (1 - a_bc) V_BC (Kersting ch. 7, from memory). */
static void closed_delta(const kl_regulator *r, const int tap[3], kl_complex A[9])
{
    for (int p = 0; p < 3; p++) {
        double e = ratio(r, tap[p]) - 1.0;
        A[3 * p + p] = 1.0 + e;
        A[3 * p + (p + 1) % 3] = -e;
    }
}

/* Open-delta regulators: A = W M D with D the line-to-line difference matrix. */
static void delta_matrices(const kl_regulator *r, const int tap[3], kl_complex A[9])
{
    if (r->conn == KL_REG_CLOSED_DELTA) {
        closed_delta(r, tap, A);
        return;
    }
    kl_complex M[9] = {0}, D[9] = {0}, Wc[9], WM[9];
    for (int p = 0; p < 3; p++) {
        D[3 * p + p] = 1.0;
        D[3 * p + (p + 1) % 3] = -1.0;
        Wc[3 * p] = W[3 * p];
        Wc[3 * p + 1] = W[3 * p + 1];
        Wc[3 * p + 2] = W[3 * p + 2];
    }
    int missing = -1;
    for (int p = 0; p < 3; p++) {
        if (r->phases & (1 << p))
            M[3 * p + p] = ratio(r, tap[p]);
        else
            missing = p;
    }
    if (missing >= 0)
        for (int p = 0; p < 3; p++)
            if (p != missing)
                M[3 * missing + p] = -M[3 * p + p];
    kl_cm3_mul(Wc, M, WM);
    kl_cm3_mul(WM, D, A);
}

void kl_regulator_matrices(const kl_regulator *r, const int tap[3], int phases,
                           kl_complex A[9], kl_complex d[9], kl_complex a[9])
{
    memset(A, 0, 9 * sizeof A[0]);
    if (r->conn == KL_REG_WYE) {
        for (int p = 0; p < 3; p++)
            if (phases & (1 << p))
                A[4 * p] = (r->phases & (1 << p)) ? ratio(r, tap[p]) : 1.0;
    } else {
        delta_matrices(r, tap, A);
    }
    kl_cm3_transpose(A, d);
    memset(a, 0, 9 * sizeof a[0]);
    for (int p = 0; p < 3; p++)
        if (r->conn == KL_REG_WYE && cabs(A[4 * p]) > 0)
            a[4 * p] = 1.0 / A[4 * p];
}

/* Branch matrices of regulator r from its present taps (after a tap move). */
void kl_regulator_update(kl_network *n, int r)
{
    int k = n->reg_branch[r];
    if (k < 0)
        return;
    const kl_regulator *rg = &n->feeder->regulators[r];
    size_t s = 9 * (size_t)n->dev[k];
    kl_regulator_matrices(rg, n->tap + 3 * r, n->br_phases[k], n->A + s, n->d + s, n->a + s);
}

void kl_regulator_relay_voltage(const kl_network *net, int r, double vr[3])
{
    const kl_regulator *rg = &net->feeder->regulators[r];
    int k = net->reg_branch[r];
    const kl_complex *v = kl_network_bus_v(net, net->br_to[k]), *i = kl_network_i_to(net, k);
    double pt = rg->pt_ratio > 0 ? rg->pt_ratio : 1.0;
    double ct = rg->ct_primary_a > 0 ? rg->ct_primary_a : 1.0;
    for (int p = 0; p < 3; p++) {
        kl_complex vo = v[p];
        if (rg->conn != KL_REG_WYE)
            vo = v[p] - v[(p + 1) % 3]; /* unit between p and p+1 sees V_pq and I_p */
        kl_complex zc = rg->ldc_r_v[p] + I * rg->ldc_x_v[p];
        vr[p] = cabs(vo / pt - zc * i[p] / ct);
    }
}

int kl_regulator_control(kl_network *net, int r)
{
    const kl_regulator *rg = &net->feeder->regulators[r];
    if (rg->mode != KL_REG_AUTO || net->reg_branch[r] < 0)
        return 0;
    double vr[3];
    kl_regulator_relay_voltage(net, r, vr);
    double step_v = 120.0 * (rg->step_pu > 0 ? rg->step_pu : 0.00625);
    double lo = rg->voltage_level_v - rg->bandwidth_v / 2.0;
    double hi = rg->voltage_level_v + rg->bandwidth_v / 2.0;
    int lim = rg->steps > 0 ? rg->steps : 16, moved = 0;
    int monitored = rg->monitored ? rg->monitored : rg->phases;
    int energized = net->br_phases[net->reg_branch[r]];
    if (rg->conn != KL_REG_WYE) /* a delta unit p needs phases p and p+1 */
        energized &= (energized >> 1) | (energized << 2);
    for (int p = 0; p < 3; p++) {
        if (!(rg->phases & monitored & energized & (1 << p)))
            continue;
        int *t = &net->tap[3 * r + p], old = *t;
        /* out of band: the steps that bring the relay voltage nearest the voltage
         * level (band centre), at least one toward it (Kersting ch. 7, from memory) */
        if (vr[p] < lo || vr[p] > hi) {
            /* clamped before the conversion: a relay voltage far out (a
             * diverging first iteration) must not overflow int */
            double kd = round((rg->voltage_level_v - vr[p]) / step_v);
            int k = isnan(kd) ? 0 : kd > 2.0 * lim ? 2 * lim : kd < -2.0 * lim ? -2 * lim : (int)kd;
            if (k == 0)
                k = vr[p] < lo ? 1 : -1;
            *t += k;
        }
        *t = *t > lim ? lim : *t < -lim ? -lim : *t;
        moved += *t != old;
    }
    if (moved)
        kl_regulator_update(net, r);
    return moved;
}
