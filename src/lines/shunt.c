/* kilter: shunt admittance of lines and cables.
 *
 * Overhead: potentials V = P q with P_ii = ln(S_ii / RD_i) / (2 pi eps0),
 * P_ij = ln(S_ij / D_ij) / (2 pi eps0) (conductor images in a perfectly
 * conducting earth; S to the image, RD the outside radius, D between
 * conductors).  1 / (2 pi eps0) = 1.79751e10 m/F, i.e. 11.1692 mile/uF; the
 * tables of Kersting's text use 11.17689.  Grounded neutrals (V = 0) are
 * Kron-reduced; C = P_abc^-1, y = j omega C.
 *
 * Cables with a grounded concentric neutral or tape shield: the field stays
 * inside the insulation, so each phase sees only its own shield
 * (Kersting, "Distribution System Modeling and Analysis", ch. 5):
 *   concentric neutral  y = j 2 pi eps0 eps_r omega / (ln(R/RD_c) - ln(k RD_s/R)/k)
 *   tape shield         y = j 2 pi eps0 eps_r omega / ln(R_b/RD_c)
 * With eps_r = 2.3 at 60 Hz the constant is 77.63 uS/mile (the text prints
 * 77.3619, from a rounded eps0). */
#include <math.h>
#include <gsl/gsl_linalg.h>
#include "kilter/lines.h"
#include "kilter/units.h"


static double two_pi_eps0(void) { return 2.0 * KL_PI * KL_EPSILON0; }

/* P[n*n] in m/F; returns -1 on an impossible geometry. */
static int potential_coefficients(const kl_wire *w, int n, double *P)
{
    for (int i = 0; i < n; i++) {
        for (int j = i; j < n; j++) {
            double dx = w[i].x_m - w[j].x_m;
            double S = hypot(dx, w[i].y_m + w[j].y_m);
            double D = (i == j) ? w[i].radius_m : hypot(dx, w[i].y_m - w[j].y_m);
            if (!(D > 0) || !(S > D))
                return -1;
            P[i * n + j] = P[j * n + i] = log(S / D) / two_pi_eps0();
        }
    }
    return 0;
}

/* The np x np phase block of P after the neutrals are grounded (Kron) or
 * left floating with zero charge (dropped). */
static kl_status phase_potentials(const double *P, int n, int np, int grounded,
                                  double *Pabc)
{
    kl_complex Pc[KL_LINES_MAX_WIRES * KL_LINES_MAX_WIRES], Pr[9], tn[KL_LINES_MAX_WIRES * 3];
    if (!grounded || n == np) {
        for (int i = 0; i < np; i++)
            for (int j = 0; j < np; j++)
                Pabc[i * np + j] = P[i * n + j];
        return KL_OK;
    }
    for (int i = 0; i < n * n; i++)
        Pc[i] = P[i];
    kl_status st = kl_kron_reduce(Pc, n, np, Pr, tn);
    for (int i = 0; st == KL_OK && i < np * np; i++)
        Pabc[i] = creal(Pr[i]);
    return st;
}

/* C = P^-1 by LU (GSL); KL_EARG when singular. */
static kl_status invert(double *Pabc, int np, double *C)
{
    size_t perm_data[3];
    gsl_permutation perm = {(size_t)np, perm_data};
    gsl_matrix_view lu = gsl_matrix_view_array(Pabc, (size_t)np, (size_t)np); /* np 1-3 */
    gsl_matrix_view inv = gsl_matrix_view_array(C, (size_t)np, (size_t)np);
    int signum;
    if (gsl_linalg_LU_decomp(&lu.matrix, &perm, &signum) != 0)
        return KL_EARG;
    double det = gsl_linalg_LU_det(&lu.matrix, signum);
    if (!(fabs(det) > 0) || !isfinite(det))
        return KL_EARG;
    if (gsl_linalg_LU_invert(&lu.matrix, &perm, &inv.matrix) != 0)
        return KL_EARG;
    return KL_OK;
}

kl_status kl_shunt_overhead(const kl_wire *w, int n, int np, int neutral_grounded,
                            double freq_hz, double *b, kl_errors *err)
{
    double P[KL_LINES_MAX_WIRES * KL_LINES_MAX_WIRES], Pabc[9];
    if (np < 1 || np > 3 || n < np || n > KL_LINES_MAX_WIRES || !(freq_hz > 0))
        return KL_EARG;
    for (int i = 0; i < n; i++) {
        if (!(w[i].y_m > 0) || !(w[i].radius_m > 0)) {
            kl_errors_add(err, NULL, 0, 0, NULL,
                          "conductor %d: the shunt admittance needs a height above ground "
                          "and a diameter: give both", i + 1);
            return KL_EARG;
        }
    }
    if (potential_coefficients(w, n, P) != 0) {
        kl_errors_add(err, NULL, 0, 0, NULL,
                      "two conductors touch or coincide: check the layout positions");
        return KL_EARG;
    }
    kl_status st = phase_potentials(P, n, np, neutral_grounded, Pabc);
    if (st == KL_OK)
        st = invert(Pabc, np, b);
    if (st != KL_OK) {
        kl_errors_add(err, NULL, 0, 0, NULL, "potential coefficient matrix is singular");
        return st;
    }
    for (int i = 0; i < np * np; i++)
        b[i] *= 2.0 * KL_PI * freq_hz;
    return KL_OK;
}

double kl_shunt_concentric(double freq_hz, double eps_r, double R_m,
                           double rd_c_m, double rd_s_m, int k)
{
    double den = log(R_m / rd_c_m) - log(k * rd_s_m / R_m) / k;
    return two_pi_eps0() * eps_r * 2.0 * KL_PI * freq_hz / den;
}

double kl_shunt_tape(double freq_hz, double eps_r, double rb_m, double rd_c_m)
{
    return two_pi_eps0() * eps_r * 2.0 * KL_PI * freq_hz / log(rb_m / rd_c_m);
}
