/* kilter: Kron reduction of a primitive impedance matrix.
 *
 *   [dV_p]   [Z_pp Z_pn] [I_p]
 *   [ 0  ] = [Z_np Z_nn] [I_n]   =>  I_n = t_n I_p,  t_n = -Z_nn^-1 Z_np,
 *                                    Z_abc = Z_pp + Z_pn t_n
 * (G. Kron, "Tensor analysis of networks", 1939; the neutral transformation
 * matrix t_n as in Kersting, "Distribution System Modeling and Analysis",
 * ch. 4).  Matrices are small (at most KL_LINES_MAX_WIRES), row-major, on
 * the stack. */
#include <math.h>
#include <string.h>
#include "kilter/lines.h"

#define NMAX (KL_LINES_MAX_WIRES + 1)

/* Solves A X = B in place (A m x m, B m x nr, both row-major with the given
 * row strides) by Gaussian elimination with partial pivoting; B becomes X.
 * Returns -1 when A is singular to working precision. */
static int solve(int m, kl_complex *A, int lda, kl_complex *B, int ldb, int nr)
{
    double scale = 0;
    for (int i = 0; i < m * lda; i++)
        scale = fmax(scale, cabs(A[i]));
    for (int k = 0; k < m; k++) {
        int p = k;
        for (int i = k + 1; i < m; i++)
            if (cabs(A[i * lda + k]) > cabs(A[p * lda + k]))
                p = i;
        if (!(cabs(A[p * lda + k]) > 1e-13 * scale))
            return -1;
        for (int j = 0; j < m && p != k; j++) {
            kl_complex t = A[k * lda + j]; A[k * lda + j] = A[p * lda + j]; A[p * lda + j] = t;
        }
        for (int j = 0; j < nr && p != k; j++) {
            kl_complex t = B[k * ldb + j]; B[k * ldb + j] = B[p * ldb + j]; B[p * ldb + j] = t;
        }
        for (int i = k + 1; i < m; i++) {
            kl_complex f = A[i * lda + k] / A[k * lda + k];
            for (int j = k; j < m; j++)
                A[i * lda + j] -= f * A[k * lda + j];
            for (int j = 0; j < nr; j++)
                B[i * ldb + j] -= f * B[k * ldb + j];
        }
    }
    for (int k = m - 1; k >= 0; k--) {
        for (int j = 0; j < nr; j++) {
            kl_complex s = B[k * ldb + j];
            for (int i = k + 1; i < m; i++)
                s -= A[k * lda + i] * B[i * ldb + j];
            B[k * ldb + j] = s / A[k * lda + k];
        }
    }
    return 0;
}

/* zr = Z_pp + Z_pn tn - 1 w^T (w = 0 for grounded neutrals). */
static void reduce_phases(const kl_complex *zp, int n, int np, const kl_complex *tn,
                          const kl_complex *w, kl_complex *zr)
{
    for (int i = 0; i < np; i++) {
        for (int j = 0; j < np; j++) {
            kl_complex s = zp[i * n + j] - (w ? w[j] : 0);
            for (int k = np; k < n; k++)
                s += zp[i * n + k] * tn[(k - np) * np + j];
            zr[i * np + j] = s;
        }
    }
}

kl_status kl_kron_reduce(const kl_complex *zp, int n, int np, kl_complex *zr,
                         kl_complex *tn)
{
    int m = n - np;
    if (np < 1 || m < 0 || n > KL_LINES_MAX_WIRES)
        return KL_EARG;
    kl_complex A[NMAX * NMAX], X[NMAX * 3];
    for (int i = 0; i < m; i++) {
        for (int j = 0; j < m; j++)
            A[i * m + j] = zp[(np + i) * n + np + j];
        for (int j = 0; j < np; j++)
            X[i * np + j] = -zp[(np + i) * n + j];
    }
    if (m > 0 && solve(m, A, m, X, np, np) != 0)
        return KL_EARG;
    memcpy(tn, X, sizeof(kl_complex) * (size_t)(m * np));
    reduce_phases(zp, n, np, tn, NULL, zr);
    return KL_OK;
}

/* Unknowns per unit phase current j: the neutral currents and their common
 * drop dV_N.  Equations: Z_NN I_N - dV_N 1 = -Z_Nj and 1^T I_N = -1. */
kl_status kl_kron_reduce_isolated(const kl_complex *zp, int n, int np,
                                  kl_complex *zr, kl_complex *tn)
{
    int m = n - np, s = m + 1;
    if (np < 1 || m < 1 || n > KL_LINES_MAX_WIRES)
        return KL_EARG;
    kl_complex A[NMAX * NMAX], X[NMAX * 3], w[3];
    for (int i = 0; i < m; i++) {
        for (int j = 0; j < m; j++)
            A[i * s + j] = zp[(np + i) * n + np + j];
        A[i * s + m] = -1;
        A[m * s + i] = 1;
        for (int j = 0; j < np; j++)
            X[i * np + j] = -zp[(np + i) * n + j];
    }
    A[m * s + m] = 0;
    for (int j = 0; j < np; j++)
        X[m * np + j] = -1;
    if (solve(s, A, s, X, np, np) != 0)
        return KL_EARG;
    memcpy(tn, X, sizeof(kl_complex) * (size_t)(m * np));
    for (int j = 0; j < np; j++)
        w[j] = X[m * np + j];
    reduce_phases(zp, n, np, tn, w, zr);
    return KL_OK;
}
