/* kilter: sequence impedance matrix of a line section.
 *
 *   Z012 = A^-1 Zabc A,  A = [1 1 1; 1 a^2 a; 1 a a^2],  a = exp(j 2 pi / 3)
 * (C. L. Fortescue, "Method of symmetrical co-ordinates applied to the
 * solution of polyphase networks", AIEE Trans. 37, 1918).  A^-1 = conj(A)/3
 * because A is symmetric with A conj(A) = 3 I. */
#include <math.h>
#include "kilter/lines.h"
#include "kilter/units.h"


/* A[i][j] = a^(-i j): row 1 is [1 a^2 a], row 2 is [1 a a^2]. */
static void fortescue(kl_complex A[3][3])
{
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            A[i][j] = cexp(-I * 2.0 * KL_PI * ((i * j) % 3) / 3.0);
}

void kl_seqz_from_phase(const kl_complex zabc[3][3], kl_complex z012[3][3])
{
    kl_complex A[3][3], T[3][3];
    fortescue(A);
    for (int i = 0; i < 3; i++)         /* T = Zabc A */
        for (int j = 0; j < 3; j++) {
            T[i][j] = 0;
            for (int k = 0; k < 3; k++)
                T[i][j] += zabc[i][k] * A[k][j];
        }
    for (int i = 0; i < 3; i++)         /* Z012 = conj(A) T / 3 */
        for (int j = 0; j < 3; j++) {
            z012[i][j] = 0;
            for (int k = 0; k < 3; k++)
                z012[i][j] += conj(A[i][k]) * T[k][j];
            z012[i][j] /= 3.0;
        }
}

void kl_seqz_quoted(const kl_complex zabc[3][3], kl_complex *z1, kl_complex *z0)
{
    kl_complex z012[3][3];
    kl_seqz_from_phase(zabc, z012);
    *z0 = z012[0][0];
    *z1 = z012[1][1];
}
