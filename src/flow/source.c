/* kilter: the source bus, held by the substation tap changer.
 *
 * The feeder file's regulated_voltage is the voltage at the source bus, not an
 * EMF behind the source equivalent: the substation's tap changer moves its
 * ratio until the bus reads the set value.  The measure it holds is the
 * POSITIVE-SEQUENCE magnitude |V1| of the bus's phase-to-neutral voltages, at
 * the file's angle (phase a of V1):
 *   - a three-phase tap changer moves all three phases by one ratio, so it can
 *     hold one quantity of the set; |V1| is the one a ratio moves and that
 *     neither the zero sequence (which the average of wye-connected phase
 *     magnitudes mixes in) nor the feeder's own unbalance shifts to first order;
 *     the average of the phase magnitudes differs from |V1| only by terms of
 *     the second order in the unbalance (|V1| (1 + VUF^2/4) without zero
 *     sequence: 0.01 % at 2 % VUF; cross terms of V0 and V2 besides);
 *   - held as a phasor it is linear in the EMF: with the sequence impedances
 *     of the Thevenin equivalent (z0, z1, z2 = z1; Zs = z1 U + (z0 - z1)/3 ones),
 *         E1 = V1_held + z1 J1,   E2 = m E1,   E0 = 0,
 *     J012 the sequence currents the feeder draws from the bus and m the
 *     stated background V2/V1 of the supply (0 when none: the ratio a ganged
 *     tap keeps, so the upstream unbalance scales with the tap).  The bus then
 *     sits at V = E - Zs J: V1 = V1_held exactly, while the unbalanced drop
 *     across the equivalent (V2 = m E1 - z1 J2, V0 = -z0 J0) stays as the
 *     background unbalance the feeder sees.  Each solver iteration sets E
 *     from its present J (sweep) or from J = Ys (E - V) of its last solution
 *     (nodal), so the hold costs no outer loop and converges with the
 *     voltages.
 * A real tap changer moves in steps inside a bandwidth; held continuously
 * here, the bus is at the set value within the solve tolerance. */
#include "kilter/sequence.h"
#include "kl_flow.h"

/* E = k (V_held + m V_neg), k = E1 / V1_held = 1 + z1 J1 / V1_held: the held
 * set scaled and turned by the tap, exactly the held set when k = 1 and m = 0
 * (an ideal balanced source, bit for bit as the file gives it). */
void kl_source_emf(const kl_network *n, const kl_complex j[3], kl_complex e[3])
{
    kl_complex k = 1;
    if (j && n->has_zsource) {
        kl_complex j012[3];
        kl_complex z1 = n->zsource[0] - n->zsource[1]; /* diagonal minus off-diagonal */
        kl_seq_from_phase(j, j012);
        k += z1 * j012[1] / n->v_held[0];
    }
    for (int p = 0; p < 3; p++)
        e[p] = k * (n->v_held[p] + n->background * n->v_neg[p]);
}
