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

/* A bus whose zero sequence has no path to earth (behind a delta or an
 * ungrounded-wye winding, with no grounding bank beyond it) is marked open:
 * its Thevenin matrix then holds only the positive- and negative-sequence
 * part that matters (the zero-sequence row and column in the sequence frame
 * are zero), and a fault there obeys Ia + Ib + Ic = 0 with the bus's
 * neutral displacement a free unknown: the limit of an infinite Z0, taken
 * exactly rather than with a large number (which the 3x3 algebra cannot
 * carry beside ohms). */

/* The Thevenin matrices of every network bus (by network bus id). */
typedef struct {
    int nbuses;
    kl_complex *zth;   /* [9*nbuses] Thevenin matrix seen from the bus, ohm */
    kl_complex *vpre;  /* [3*nbuses] prefault phase-to-ground voltages, V */
    kl_complex *ydown; /* [9*nbuses] shunt admittance to ground beyond the bus (grounding
                          banks, seen through the branches below it), S */
    kl_complex *zup;   /* [9*nbuses] workspace: the feeder seen from the bus upstream */
    unsigned char *open;    /* [nbuses] 1: no zero-sequence path to earth from the bus */
    unsigned char *open_up; /* [nbuses] workspace: the same for zup */
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

/* The current the feeder head carries during the fault at bus b (i, v from
 * kl_fault_solve): the fault's current walked up its path to the source,
 * each branch adding what leaves it into grounding banks beside the path
 * (through a line V_f = V_t + Z I; through a device V_f = -(Zx^-1 + Yg)^-1
 * d I_t, I_f = d I_t + Yg V_f, in changes from the prefault state).  The
 * walk is as long as the path.  head[3] is the sending-end current of the
 * branch leaving the source; the fault's own currents at the source bus. */
void kl_fault_head_current(const kl_fault_thevenin *t, const kl_network *net, int b,
                           const kl_complex i[3], const kl_complex v[3], kl_complex head[3]);

/* Sequence impedances Z0, Z1 of bus b's Thevenin matrix (three-phase buses;
 * 0, and -1 otherwise: Z0 = Z1 = NAN); Z0 is NAN at an open bus. */
int kl_fault_z01(const kl_fault_thevenin *t, const kl_network *net, int b, kl_complex *z0,
                 kl_complex *z1);

/* ---- fault_study.c: every fault type on the phases present at every bus
 * (or the buses chosen), bolted and through the impedances given. */

/* Effectively grounded (IEEE Std C62.92.1, the ratios of its definition, and
 * IEEE Std 142, 1.8; from memory): X0/X1 positive and at most 3, R0/X1 at
 * most 1, seen from the bus. */
#define KL_FAULT_X0X1_MAX 3.0
#define KL_FAULT_R0X1_MAX 1.0

typedef struct {
    const double *zf_earth;  /* [nzf_earth] ohm, earth faults (line-ground, line-line-ground) */
    int nzf_earth;
    const double *zf_phase;  /* [nzf_phase] ohm, phase faults (three-phase, line-line) */
    int nzf_phase;
    const unsigned char *at; /* [feeder nbuses] 1: study the bus; NULL: every energized bus */
} kl_fault_options;

/* Defaults (common practice): earth faults bolted and through 40 ohm, the
 * usual allowance for arc and ground contact on a distribution feeder;
 * phase faults bolted. */
void kl_fault_options_default(kl_fault_options *o);

typedef struct {
    int bus;                 /* feeder bus id */
    kl_fault_spec spec;
    int solved;              /* 0: the equivalent cannot limit it (a bolted fault at an ideal source) */
    kl_complex i[3];         /* fault currents out of the bus, A (NAN unsolved) */
    kl_complex v[3];         /* bus voltages during the fault, V */
    kl_complex vpre[3];      /* before it, V */
    double i_fault;          /* the largest faulted-phase current magnitude, A */
    kl_complex i_neutral;    /* the feeding section's metallic neutral current (t_n), A; NAN
                                when the section has no neutral or is no line */
    kl_complex i_earth;      /* the feeding section's earth return -(Ia+Ib+Ic+In), A */
} kl_fault_case;

typedef struct {
    double base_ln;          /* V */
    kl_complex z0, z1;       /* Thevenin sequence impedances (NAN unless three-phase) */
    int earth_path;          /* 1 when |Z0| (or, on fewer phases, the earth loop) is finite */
    double x0_x1, r0_x1;     /* NAN unless three-phase with X1 > 0 */
    int effectively_grounded;/* 1 yes, 0 no, -1 not defined */
    double earth_fault_factor; /* largest sound-phase |V| over its prefault |V| in a bolted
                                  line-ground fault (IEC 60071-1 definition); NAN when none */
    int case_max, case_min;  /* cases with the largest and the smallest i_fault, -1 none */
    int first, ncases;       /* the bus's cases in kl_fault_result.cases */
} kl_fault_bus;

typedef struct {
    int nbuses;              /* the feeder's */
    kl_fault_bus *bus;       /* [nbuses] by feeder bus id; ncases 0 for buses not studied */
    int ncases;
    kl_fault_case *cases;    /* [ncases] bus by bus in tree order */
    int *order;              /* [nstudied] feeder bus ids studied, in tree order */
    int nstudied;
} kl_fault_result;

kl_status kl_fault_study(const kl_network *net, const kl_fault_thevenin *t,
                         const kl_fault_options *o, kl_fault_result **out, kl_errors *err);
void kl_fault_result_free(kl_fault_result *r);

#endif
