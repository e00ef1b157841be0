/* kilter: 3x3 complex phase-matrix arithmetic (row-major, 9 entries), for
 * the generalized branch matrices of the load flow.  No allocation. */
#include <math.h>
#include <string.h>
#include "kl_math.h"

void kl_cm3_identity(kl_complex m[9], int mask)
{
    memset(m, 0, 9 * sizeof m[0]);
    for (int p = 0; p < 3; p++)
        if (mask & (1 << p))
            m[4 * p] = 1.0;
}

/* r = x y; r may alias neither operand. */
void kl_cm3_mul(const kl_complex x[9], const kl_complex y[9], kl_complex r[9])
{
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            r[3 * i + j] = x[3 * i] * y[j] + x[3 * i + 1] * y[3 + j] + x[3 * i + 2] * y[6 + j];
}

/* r = m v, r may not alias v. */
void kl_cm3_vec(const kl_complex m[9], const kl_complex v[3], kl_complex r[3])
{
    for (int i = 0; i < 3; i++)
        r[i] = m[3 * i] * v[0] + m[3 * i + 1] * v[1] + m[3 * i + 2] * v[2];
}

void kl_cm3_transpose(const kl_complex m[9], kl_complex r[9])
{
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            r[3 * j + i] = m[3 * i + j];
}

/* Zeroes the rows and columns of the phases not in mask. */
void kl_cm3_mask(kl_complex m[9], int mask)
{
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            if (!(mask & (1 << i)) || !(mask & (1 << j)))
                m[3 * i + j] = 0;
}

/* Inverse by cofactors.  Returns -1 (r untouched) when |det| is below
 * 1e-300 relative to the largest entry cubed. */
int kl_cm3_inverse(const kl_complex m[9], kl_complex r[9])
{
    kl_complex c[9];
    c[0] = m[4] * m[8] - m[5] * m[7];
    c[1] = m[2] * m[7] - m[1] * m[8];
    c[2] = m[1] * m[5] - m[2] * m[4];
    c[3] = m[5] * m[6] - m[3] * m[8];
    c[4] = m[0] * m[8] - m[2] * m[6];
    c[5] = m[2] * m[3] - m[0] * m[5];
    c[6] = m[3] * m[7] - m[4] * m[6];
    c[7] = m[1] * m[6] - m[0] * m[7];
    c[8] = m[0] * m[4] - m[1] * m[3];
    kl_complex det = m[0] * c[0] + m[1] * c[3] + m[2] * c[6];
    double big = 0;
    for (int k = 0; k < 9; k++)
        if (cabs(m[k]) > big)
            big = cabs(m[k]);
    if (big == 0 || !(cabs(det) > 1e-300 * big * big * big))
        return -1;
    for (int k = 0; k < 9; k++)
        r[k] = c[k] / det;
    return 0;
}

int kl_cm3_inverse_on(const kl_complex m[9], int mask, kl_complex r[9])
{
    kl_complex t[9];
    memcpy(t, m, sizeof t);
    kl_cm3_mask(t, mask);
    for (int p = 0; p < 3; p++)
        if (!(mask & (1 << p)))
            t[4 * p] = 1.0;
    if (kl_cm3_inverse(t, r))
        return -1;
    kl_cm3_mask(r, mask);
    return 0;
}
