/* kilter, mathematics layer (src/math): 3x3 complex matrices, symmetrical
 * components, unbalance indices.  Visible to math and the layers above. */
#ifndef KILTER_MATH_INTERNAL_H
#define KILTER_MATH_INTERNAL_H

#include "kl_base.h"

/* ---- cm3.c: 3x3 complex matrices stored row-major in kl_complex[9]; a
 * phase mask (KL_PH_*) limits an operation to the phases present. */
void kl_cm3_identity(kl_complex m[9], int mask);
void kl_cm3_mul(const kl_complex x[9], const kl_complex y[9], kl_complex r[9]);
void kl_cm3_vec(const kl_complex m[9], const kl_complex v[3], kl_complex r[3]);
void kl_cm3_transpose(const kl_complex m[9], kl_complex r[9]);
void kl_cm3_mask(kl_complex m[9], int mask);
int kl_cm3_inverse(const kl_complex m[9], kl_complex r[9]);
/* m^-1 on the phases of mask (identity rows stand in for the absent ones;
 * absent rows and columns of r zero): 0, or -1 when singular there. */
int kl_cm3_inverse_on(const kl_complex m[9], int mask, kl_complex r[9]);

#endif
