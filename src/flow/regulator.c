/* kilter: step-voltage regulators (ANSI type B units) and their control.
 *
 * Each unit's effective ratio is a_R = 1 + step * tap (raise positive): the
 * load-side voltage is a_R times the source side and the source-side current
 * a_R times the load side (ideal, lossless: Kersting ch. 7, from memory).
 * The type-B exact ratio 1 / (1 - step * tap) differs by up to 0.06 % at
 * tap 10; the published IEEE 13-node results use 1 + step * tap (its
 * regulator's output voltages are 1.0625, 1.0500, 1.06875 pu at taps 10, 8,
 * 11), so kilter does.
 *
 * Wye: one unit per phase, line to neutral.  Open delta: two units, each
 * named by the pair of phases it connects, "pq": its shunt winding across
 * lines p and q, its series winding (and CT) in line p; both share the same
 * q (units ab and cb share b), which passes through unregulated.  So
 *   V_q' = V_Q,   V_p' = V_Q + a_p (V_P - V_Q)   for each unit p,
 * i.e. V_pq' = a_p V_PQ for both units and the third side closes by KVL, with
 * the phase-to-ground voltages exact (Kersting ch. 7, the open-delta
 * connection with its common phase, from memory).  Closed delta: three
 * units, each with its series winding in one line (below).
 *
 * Line-drop compensation (Kersting ch. 7, from memory): the relay sees
 *   V_relay = V_out / PT - (R + jX) I_line / CT_primary    [volts, 120 V base]
 * with R, X the compensator settings in volts at rated CT current; each tap
 * moves the relay voltage by step * 120 V.  V_out and I_line are each unit's
 * own: a wye unit's V_p and I_p; an open-delta unit pq's V_pq and I_p (the
 * published wiring: the unit across a-b reads V_ab with I_a, the unit across
 * c-b reads V_cb with I_c); a closed-delta unit's V_p,p+1 and I_p. */
#include <math.h>
#include <string.h>
#include "kilter/network.h"
#include "kl_flow.h"

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

/* Index (0..2) of the phase an open-delta bank's units share, -1 when the
 * bank is not a valid open delta (kl_regulator_check). */
static int shared_index(const kl_regulator *r)
{
    int q = r->shared == KL_PH_A ? 0 : r->shared == KL_PH_B ? 1 : r->shared == KL_PH_C ? 2 : -1;
    return q >= 0 && r->phases == (KL_PH_ABC & ~r->shared) ? q : -1;
}

/* Open delta with shared phase q: row q passes V_Q, row p is
 * a_p e_p + (1 - a_p) e_q (top of the file). */
static void open_delta(const kl_regulator *r, const int tap[3], kl_complex A[9])
{
    int q = shared_index(r);
    KL_ASSERT(q >= 0); /* kl_regulator_check refused any other bank */
    if (q < 0)
        return;
    A[4 * q] = 1.0;
    for (int p = 0; p < 3; p++) {
        if (p == q)
            continue;
        double a = ratio(r, tap[p]);
        A[4 * p] = a;
        A[3 * p + q] = 1.0 - a;
    }
}

const char *kl_regulator_check(const kl_regulator *r)
{
    if (r->conn == KL_REG_OPEN_DELTA && shared_index(r) < 0)
        return "an open-delta bank needs two units sharing one phase (units ab and cb share b)";
    if (r->conn != KL_REG_OPEN_DELTA && r->shared)
        return "only an open-delta bank has units sharing a phase";
    return NULL;
}

void kl_regulator_matrices(const kl_regulator *r, const int tap[3], int phases,
                           kl_complex A[9], kl_complex d[9], kl_complex a[9])
{
    memset(A, 0, 9 * sizeof A[0]);
    if (r->conn == KL_REG_WYE) {
        for (int p = 0; p < 3; p++)
            if (phases & (1 << p))
                A[4 * p] = (r->phases & (1 << p)) ? ratio(r, tap[p]) : 1.0;
    } else if (r->conn == KL_REG_OPEN_DELTA) {
        open_delta(r, tap, A);
    } else {
        closed_delta(r, tap, A);
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
    int q = rg->conn == KL_REG_OPEN_DELTA ? shared_index(rg) : -1;
    for (int p = 0; p < 3; p++) {
        kl_complex vo = v[p];
        if (rg->conn == KL_REG_CLOSED_DELTA)
            vo = v[p] - v[(p + 1) % 3]; /* unit between p and p+1 sees V_p,p+1 and I_p */
        else if (rg->conn == KL_REG_OPEN_DELTA)
            vo = q >= 0 && p != q ? v[p] - v[q] : 0; /* unit pq: V_pq and I_p */
        kl_complex zc = rg->ldc_r_v[p] + I * rg->ldc_x_v[p];
        vr[p] = cabs(vo / pt - zc * i[p] / ct);
    }
}

/* The units of regulator r its control acts on: automatic, monitored and
 * energized (0 for a fixed regulator). */
static int controlled_units(const kl_network *net, int r)
{
    const kl_regulator *rg = &net->feeder->regulators[r];
    if (rg->mode != KL_REG_AUTO || net->reg_branch[r] < 0)
        return 0;
    int monitored = rg->monitored ? rg->monitored : rg->phases;
    int energized = net->br_phases[net->reg_branch[r]];
    if (rg->conn == KL_REG_CLOSED_DELTA) /* a closed-delta unit p needs phases p and p+1 */
        energized &= (energized >> 1) | (energized << 2);
    else if (rg->conn == KL_REG_OPEN_DELTA) /* an open-delta unit p needs p and the shared one */
        energized = (energized & rg->shared) ? energized : 0;
    return rg->phases & monitored & energized;
}

void kl_regulator_state(const kl_network *net, int r, double vr[3], int limit[3])
{
    const kl_regulator *rg = &net->feeder->regulators[r];
    int units = controlled_units(net, r), lim = rg->steps > 0 ? rg->steps : 16;
    double lo = rg->voltage_level_v - rg->bandwidth_v / 2.0;
    double hi = rg->voltage_level_v + rg->bandwidth_v / 2.0;
    double v[3] = {NAN, NAN, NAN};
    if (units)
        kl_regulator_relay_voltage(net, r, v);
    for (int p = 0; p < 3; p++) {
        int tap = net->tap[3 * r + p], on = units >> p & 1;
        vr[p] = on ? v[p] : NAN;
        /* a raising tap boosts the voltage (the control steps up when the
         * relay voltage is below the band) */
        limit[p] = !on ? 0 : tap >= lim && v[p] < lo ? 1 : tap <= -lim && v[p] > hi ? -1 : 0;
    }
}

int kl_regulator_control(kl_network *net, int r)
{
    const kl_regulator *rg = &net->feeder->regulators[r];
    int units = controlled_units(net, r);
    if (!units)
        return 0;
    double vr[3];
    kl_regulator_relay_voltage(net, r, vr);
    double step_v = 120.0 * (rg->step_pu > 0 ? rg->step_pu : 0.00625);
    double lo = rg->voltage_level_v - rg->bandwidth_v / 2.0;
    double hi = rg->voltage_level_v + rg->bandwidth_v / 2.0;
    int lim = rg->steps > 0 ? rg->steps : 16, moved = 0;
    for (int p = 0; p < 3; p++) {
        if (!(units & (1 << p)))
            continue;
        int *t = &net->tap[3 * r + p], old = *t;
        /* out of band: the steps that bring the relay voltage nearest the voltage
         * level (band centre), at least one toward it (Kersting ch. 7, from memory) */
        if (vr[p] < lo || vr[p] > hi) {
            int k = (int)lround((rg->voltage_level_v - vr[p]) / step_v);
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
