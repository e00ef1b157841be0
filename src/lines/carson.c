/* kilter: primitive impedance matrix by Carson's equations.
 *
 *   z_ii = r_i + j (w mu0 / 2 pi) ln(S_ii / GMR_i) + (w mu0 / pi)(P_ii + j Q_ii)
 *   z_ij =       j (w mu0 / 2 pi) ln(S_ij / D_ij)  + (w mu0 / pi)(P_ij + j Q_ij)
 *
 * S_ij is the distance from conductor i to the image of j below the earth's
 * surface; P and Q are Carson's earth-return correction terms (Carson 1926,
 * eqs. for P and Q as series in a = S sqrt(w mu0 / rho), angle phi from the
 * vertical).  In SI per metre; at 60 Hz and 100 ohm-m the approximate form
 * gives the familiar 0.09530 ohm/mile and 0.12134 (ln(1/GMR) + 7.93402). */
#include <math.h>
#include "kilter/lines.h"
#include "kilter/units.h"

#define SQRT2 1.41421356237309504880
#define LN2 0.69314718055994530942

#define MU0 (4e-7 * KL_PI) /* H/m; the pre-2019 exact value, within 1e-9 of today's */
#define EULER_GAMMA 0.57721566490153286
#define SERIES_LIMIT 20.0 /* series up to here, asymptotic beyond: see pq_asymptotic */

/* Q's constant: Carson prints -0.0386, the rounded value of 1/4 - gamma/2. */
static double q_constant(kl_carson_form form)
{
    return form == KL_CARSON_APPROX ? -0.0386 : 0.25 - EULER_GAMMA / 2.0;
}

/* Carson's series (used for a <= 20, see pq_asymptotic).  Coefficients by the published recursions:
 * |b1| = sqrt(2)/6, |b2| = 1/16, |b_i| = |b_(i-2)| / (i (i + 2)); the sign
 * of b_i is +1 for i = 1..4, -1 for 5..8, and so on; c2 = 1.3659315 (= 5/4 - gamma + ln 2),
 * c_i = c_(i-2) + 1/i + 1/(i + 2); d_i = (pi/4) b_i.  The terms repeat their
 * shape with period four in i. */
static void pq_series(double a, double phi, double *P, double *Q)
{
    double lna = log(a), p = KL_PI / 8.0;
    double q = q_constant(KL_CARSON_FULL) + 0.5 * (LN2 - lna);
    double b_last[2] = {1.0 / 16.0, SQRT2 / 6.0}; /* latest |b_i|: [0] even i, [1] odd i */
    double c = 1.25 - EULER_GAMMA + LN2;          /* c_i for the latest even i */
    double ai = 1.0;
    for (int i = 1; i <= 200; i++) {
        ai *= a;
        int odd = i % 2;
        int sign = (((i - 1) / 4) % 2 == 0) ? 1 : -1;
        if (i > 2) {
            b_last[odd] /= i * (i + 2.0);
            if (!odd)
                c += 1.0 / i + 1.0 / (i + 2.0);
        }
        double b = sign * b_last[odd];
        double d = KL_PI / 4.0 * b;
        double cs = ai * cos(i * phi), sn = ai * sin(i * phi);
        double tp, tq;
        switch (i % 4) {
        case 1: tp = -b * cs; tq = b * cs; break;
        case 2: tp = b * ((c - lna) * cs + phi * sn); tq = -d * cs; break;
        case 3: tp = b * cs; tq = b * cs; break;
        default: tp = -d * cs; tq = -b * ((c - lna) * cs + phi * sn); break;
        }
        p += tp;
        q += tq;
        if (i > 8 && fabs(tp) + fabs(tq) < 1e-17 * (fabs(p) + fabs(q)))
            break;
    }
    *P = p;
    *Q = q;
}

/* Carson's asymptotic expansion for large a.  Carson switches from the
 * series to this at a = 5, where its truncation error (the first omitted
 * term is O(a^-9)) is still 1.5e-3 on Q, measured against quadrature of
 * Carson's integral.  The series, summed to convergence in double
 * precision, stays within 1e-12 up to a = 15 and 7e-10 at 20, where this
 * expansion is within 5e-9: kilter switches at a = 20 (tests/test_carson.c). */
static void pq_asymptotic(double a, double phi, double *P, double *Q)
{
    double a2 = a * a, a3 = a2 * a, a5 = a3 * a2, a7 = a5 * a2;
    double c1 = cos(phi) / a, c3 = cos(3 * phi) / a3;
    double c5 = 3.0 * cos(5 * phi) / a5, c7 = 45.0 * cos(7 * phi) / a7;
    *P = (c1 + c3 + c5 - c7) / SQRT2 - cos(2 * phi) / a2;
    *Q = (c1 - c3 + c5 + c7) / SQRT2;
}

void kl_carson_pq(double a, double phi, kl_carson_form form, double *P, double *Q)
{
    if (form == KL_CARSON_APPROX) {
        *P = KL_PI / 8.0;
        *Q = q_constant(form) + 0.5 * log(2.0 / a);
    } else if (a <= SERIES_LIMIT) {
        pq_series(a, phi, P, Q);
    } else {
        pq_asymptotic(a, phi, P, Q);
    }
}

static kl_status check_wires(const kl_wire *w, int n, double freq_hz, double rho,
                             kl_errors *err)
{
    if (n < 1 || n > KL_LINES_MAX_WIRES || !(freq_hz > 0) || !(rho > 0)) {
        kl_errors_add(err, NULL, 0, 0, NULL,
                      "Carson's equations need 1..%d conductors, a positive frequency "
                      "and a positive earth resistivity (got %d, %g Hz, %g ohm-m)",
                      KL_LINES_MAX_WIRES, n, freq_hz, rho);
        return KL_EARG;
    }
    for (int i = 0; i < n; i++) {
        if (!(w[i].gmr_m > 0) || w[i].y_m == 0 || !(w[i].r_ohm_per_m >= 0)) {
            kl_errors_add(err, NULL, 0, 0, NULL,
                          "conductor %d: needs a positive GMR, a non-negative resistance "
                          "and a position off the ground surface", i + 1);
            return KL_EARG;
        }
    }
    return KL_OK;
}

kl_status kl_carson_primitive(const kl_wire *w, int n, double freq_hz,
                              double rho_ohm_m, kl_carson_form form,
                              kl_complex *zp, kl_errors *err)
{
    kl_status st = check_wires(w, n, freq_hz, rho_ohm_m, err);
    if (st != KL_OK)
        return st;
    double omega = 2.0 * KL_PI * freq_hz;
    double m = sqrt(omega * MU0 / rho_ohm_m); /* 1/m: a = m S */
    for (int i = 0; i < n; i++) {
        for (int j = i; j < n; j++) {
            double hi = fabs(w[i].y_m), hj = fabs(w[j].y_m);
            double dx = w[i].x_m - w[j].x_m;
            double S = hypot(dx, hi + hj);
            double D = (i == j) ? w[i].gmr_m : kl_wire_gmd(&w[i], &w[j]);
            if (!(D > 0)) {
                kl_errors_add(err, NULL, 0, 0, NULL,
                              "conductors %d and %d overlap: move them apart", i + 1, j + 1);
                return KL_EARG;
            }
            double P, Q;
            kl_carson_pq(m * S, atan2(fabs(dx), hi + hj), form, &P, &Q);
            kl_complex z = omega * MU0 / KL_PI * (P + I * Q)
                         + I * omega * MU0 / (2.0 * KL_PI) * log(S / D);
            if (i == j)
                z += w[i].r_ohm_per_m;
            zp[i * n + j] = zp[j * n + i] = z;
        }
    }
    return KL_OK;
}
