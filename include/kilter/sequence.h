/* kilter: symmetrical components (Fortescue) of phase quantities.
 *
 * With a = 1 /120 deg:
 *   [X0]         [1  1   1 ] [Xa]
 *   [X1] = 1/3 * [1  a   a^2] [Xb]        (and the inverse, Xabc = A X012,
 *   [X2]         [1  a^2 a  ] [Xc]         A = [[1,1,1],[1,a^2,a],[1,a,a^2]])
 * C. L. Fortescue, "Method of symmetrical co-ordinates applied to the solution
 * of polyphase networks", AIEE Trans. 37 (1918).
 *
 * Works for voltages and currents alike.  Index 0 is always phase a (or line
 * ab, or the zero sequence), 1 is b (bc, positive), 2 is c (ca, negative). */
#ifndef KILTER_SEQUENCE_H
#define KILTER_SEQUENCE_H

#include "kilter/error.h"
#include "kilter/types.h"

/* X012 = A^-1 Xabc.  in: abc[3]; out: s012[3] (zero, positive, negative).
 * abc and s012 may not overlap. */
void kl_seq_from_phase(const kl_complex abc[3], kl_complex s012[3]);

/* Xabc = A X012.  in: s012[3]; out: abc[3].  May not overlap. */
void kl_seq_to_phase(const kl_complex s012[3], kl_complex abc[3]);

/* Line-to-line from phase-to-neutral: Vab = Va - Vb, Vbc = Vb - Vc,
 * Vca = Vc - Va.  in: vln[3]; out: vll[3] (ab, bc, ca).  May not overlap. */
void kl_seq_line_from_phase(const kl_complex vln[3], kl_complex vll[3]);

/* What a point with some of its phases present can report.  Bits 0..2 are
 * the phases (KL_PH_A/B/C, phase quantities); the others: */
enum {
    KL_SEQ_DEF_AB = 1 << 3,       /* xll[0] = Xa - Xb */
    KL_SEQ_DEF_BC = 1 << 4,       /* xll[1] = Xb - Xc */
    KL_SEQ_DEF_CA = 1 << 5,       /* xll[2] = Xc - Xa */
    KL_SEQ_DEF_SEQUENCE = 1 << 6  /* x012 (three phases present) */
};

/* The phase, line-to-line and sequence quantities of one bus or section.
 * Whatever is not defined for the point's phasing holds NAN (never 0, so a
 * missing phase can't be mistaken for a zero value); `defined` says which. */
typedef struct {
    int phases;         /* KL_PH_* mask of the phases present */
    int defined;        /* KL_PH_* and KL_SEQ_DEF_* bits: which fields hold values */
    kl_complex x[3];    /* phase quantities a, b, c */
    kl_complex xll[3];  /* differences ab, bc, ca (line-to-line voltages) */
    kl_complex x012[3]; /* zero, positive, negative sequence */
    kl_complex sum;     /* sum over the present phases: for currents the residual
                           3I0 returning by neutral and earth (absent phases carry
                           none), defined for any phasing */
} kl_seq_point;

/* Fills *out from the phase quantities x[3] of the phases in `phases`
 * (entries of absent phases are ignored).  Returns KL_EARG, with a message
 * in err (may be NULL), when `phases` is not a non-empty subset of abc or a
 * present entry is not finite. */
kl_status kl_seq_point_from_phase(int phases, const kl_complex x[3],
                                  kl_seq_point *out, kl_errors *err);

#endif
