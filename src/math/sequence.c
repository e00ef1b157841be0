/* kilter: Fortescue transform.  X012 = A^-1 Xabc, Xabc = A X012, a = 1 /120 deg
 * (C. L. Fortescue, AIEE Trans. 37, 1918); line quantities Xab = Xa - Xb. */
#include <math.h>
#include "kilter/sequence.h"
#include "kl_math.h" /* CMPLX under clang */

/* a = -1/2 + j sqrt(3)/2 and a^2 = conj(a), written out rather than computed
 * with cexp so that the round trip is exact to rounding (1 + a + a^2 == 0). */
#define KL_SQRT3_2 0.86602540378443864676
static const kl_complex A1 = -0.5 + KL_SQRT3_2 * I;
static const kl_complex A2 = -0.5 - KL_SQRT3_2 * I;

void kl_seq_from_phase(const kl_complex abc[3], kl_complex s012[3])
{
    s012[0] = (abc[0] + abc[1] + abc[2]) / 3.0;
    s012[1] = (abc[0] + A1 * abc[1] + A2 * abc[2]) / 3.0;
    s012[2] = (abc[0] + A2 * abc[1] + A1 * abc[2]) / 3.0;
}

void kl_seq_to_phase(const kl_complex s012[3], kl_complex abc[3])
{
    abc[0] = s012[0] + s012[1] + s012[2];
    abc[1] = s012[0] + A2 * s012[1] + A1 * s012[2];
    abc[2] = s012[0] + A1 * s012[1] + A2 * s012[2];
}

void kl_seq_line_from_phase(const kl_complex vln[3], kl_complex vll[3])
{
    vll[0] = vln[0] - vln[1];
    vll[1] = vln[1] - vln[2];
    vll[2] = vln[2] - vln[0];
}

static int phasor_finite(kl_complex z)
{
    return isfinite(creal(z)) && isfinite(cimag(z));
}

static kl_status point_check(int phases, const kl_complex x[3], kl_errors *err)
{
    static const char name[3] = { 'a', 'b', 'c' };
    if (phases <= 0 || phases > KL_PH_ABC) {
        if (err)
            kl_errors_add(err, NULL, 0, 0, NULL,
                          "phase mask %d is not a non-empty subset of abc "
                          "(expected 1..7: a=1, b=2, c=4)", phases);
        return KL_EARG;
    }
    for (int k = 0; k < 3; k++) {
        if ((phases & (1 << k)) && !phasor_finite(x[k])) {
            if (err)
                kl_errors_add(err, NULL, 0, 0, NULL,
                              "phase %c quantity is not a finite number "
                              "(NaN or infinite): the upstream result is invalid",
                              name[k]);
            return KL_EARG;
        }
    }
    return KL_OK;
}

kl_status kl_seq_point_from_phase(int phases, const kl_complex x[3],
                                  kl_seq_point *out, kl_errors *err)
{
    const kl_complex undef = CMPLX(NAN, NAN);
    kl_status st = point_check(phases, x, err);
    if (st != KL_OK)
        return st;
    out->phases = phases;
    out->defined = phases;
    out->sum = 0;
    for (int k = 0; k < 3; k++) {
        int here = phases & (1 << k);
        out->x[k] = here ? x[k] : undef;
        out->xll[k] = undef;
        out->x012[k] = undef;
        if (here)
            out->sum += x[k];
    }
    /* A difference is defined when both its phases are present. */
    for (int k = 0; k < 3; k++) {
        int j = (k + 1) % 3;
        if ((phases & (1 << k)) && (phases & (1 << j))) {
            out->xll[k] = x[k] - x[j];
            out->defined |= KL_SEQ_DEF_AB << k;
        }
    }
    if (phases == KL_PH_ABC) {
        kl_seq_from_phase(x, out->x012);
        out->defined |= KL_SEQ_DEF_SEQUENCE;
    }
    return KL_OK;
}
