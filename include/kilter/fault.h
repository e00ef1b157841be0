/* kilter: short-circuit currents of a radial feeder in the phase frame.
 *
 * At every bus the feeder is reduced to its Thevenin equivalent, a 3x3
 * phase impedance matrix Zth seen from the bus with the source voltages
 * shorted, built from the parent bus's in one pass down the tree (lines add
 * their series matrix; transformers and regulators carry it through their
 * generalized matrices, so delta windings block the zero sequence,
 * grounded-wye/delta banks supply it and grounded-wye/grounded-wye banks
 * pass it).  A fault is a set of three linear conditions on the fault
 * currents I and the bus voltages V = Vpre - Zth I (Kersting, "Distribution
 * System Modeling and Analysis", ch. 10, the phase-frame short-circuit
 * method, from memory), so the result holds for untransposed lines without
 * the symmetrical-component approximation; on a transposed line it equals
 * the sequence-network formulas (tests/test_fault.c).
 *
 * Planning estimates: protective settings and equipment duties are the
 * protection engineer's to set and verify, under local codes. */
#ifndef KILTER_FAULT_H
#define KILTER_FAULT_H

#include "kilter/error.h"
#include "kilter/network.h"

typedef enum {
    KL_FAULT_3PH = 0,  /* three phases to ground, each through Zf (V_p = Zf I_p) */
    KL_FAULT_LL = 1,   /* phase p to phase q through Zf */
    KL_FAULT_DLG = 2,  /* phases p and q joined, to ground through Zf */
    KL_FAULT_SLG = 3   /* phase p to ground through Zf */
} kl_fault_kind;

/* One fault: its kind, phases p (and q for LL, DLG), fault impedance. */
typedef struct {
    kl_fault_kind kind;
    int p, q;
    kl_complex zf;     /* ohm */
} kl_fault_spec;

/* Zero-sequence impedance standing for "no path" (a delta or ungrounded-wye
 * winding with no grounding bank beyond it): large enough that the current
 * it lets through is nil on any distribution voltage (7.2 kV / 1e9 ohm is
 * 7 uA), small enough that the 3x3 algebra keeps the positive sequence to
 * 1e-7 ohm in double precision.  A bus whose |Z0| exceeds KL_FAULT_Z0_NONE
 * has no earth path. */
#define KL_FAULT_Z0_OPEN 1e9
#define KL_FAULT_Z0_NONE 1e6

/* The Thevenin matrices of every network bus (by network bus id). */
typedef struct {
    int nbuses;
    kl_complex *zth;   /* [9*nbuses] Thevenin matrix seen from the bus, ohm */
    kl_complex *vpre;  /* [3*nbuses] prefault phase-to-ground voltages, V */
    kl_complex *ydown; /* [9*nbuses] shunt admittance to ground beyond the bus (grounding
                          banks, seen through the branches below it), S */
    kl_complex *zup;   /* [9*nbuses] workspace: the feeder seen from the bus upstream */
} kl_fault_thevenin;

/* Builds the matrices of net (radial: KL_EINPUT when the network has
 * loop-closing branches) and the no-load prefault voltages (the source's
 * held voltages carried through the ideal ratios of the devices).  Line
 * shunt capacitance and loads are left out (common practice for
 * short-circuit currents). */
kl_status kl_fault_thevenin_build(const kl_network *net, kl_fault_thevenin **out, kl_errors *err);
void kl_fault_thevenin_free(kl_fault_thevenin *t);
/* Replace the prefault voltages by the network's solved ones (after a load
 * flow on net). */
void kl_fault_thevenin_use_flow(kl_fault_thevenin *t, const kl_network *net);

/* The fault at network bus b: fault currents i[3] (out of the bus into the
 * fault, A) and bus voltages v[3] during it.  Returns 0, or -1 when the fault
 * needs a phase the bus lacks or the equivalent cannot limit it (a bolted
 * fault at an ideal source): i and v are then NAN. */
int kl_fault_solve(const kl_fault_thevenin *t, const kl_network *net, int b,
                   const kl_fault_spec *fs, kl_complex i[3], kl_complex v[3]);

/* The current the branch feeding bus b carries toward it during the fault
 * (i the fault currents, v the voltages from kl_fault_solve): the fault's
 * own plus what flows on into grounding banks beyond the bus. */
void kl_fault_feed_current(const kl_fault_thevenin *t, int b, const kl_complex i[3],
                           const kl_complex v[3], kl_complex out[3]);

/* Sequence impedances Z0, Z1 of bus b's Thevenin matrix (three-phase buses;
 * 0 and -1 otherwise: Z0 = Z1 = NAN). */
int kl_fault_z01(const kl_fault_thevenin *t, const kl_network *net, int b, kl_complex *z0,
                 kl_complex *z1);

#endif
