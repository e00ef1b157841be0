/* Sequence impedances: Z012 = A^-1 Zabc A. */
#include <check.h>
#include <stdlib.h>
#include "lines_fixtures.h"

/* A matrix with equal self (zs) and mutual (zm) terms has Z012 =
 * diag(zs + 2 zm, zs - zm, zs - zm) (Fortescue 1918; common practice). */
START_TEST(balanced_matrix)
{
    kl_complex zs = 0.4 + 1.1 * I, zm = 0.15 + 0.45 * I, z[3][3], s[3][3];
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            z[i][j] = i == j ? zs : zm;
    kl_seqz_from_phase(z, s);
    ck_assert(cabs(s[0][0] - (zs + 2.0 * zm)) < 1e-14);
    ck_assert(cabs(s[1][1] - (zs - zm)) < 1e-14);
    ck_assert(cabs(s[2][2] - (zs - zm)) < 1e-14);
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            if (i != j)
                ck_assert(cabs(s[i][j]) < 1e-14);
    kl_complex z1, z0;
    kl_seqz_quoted(z, &z1, &z0);
    ck_assert(cabs(z1 - (zs - zm)) < 1e-14 && cabs(z0 - (zs + 2.0 * zm)) < 1e-14);
}
END_TEST

/* The convention V_abc = A V_012, A = [1 1 1; 1 a^2 a; 1 a a^2] (phase b
 * lags a by 120 deg in positive sequence; Fortescue, common practice): the
 * phase matrix A diag(0, 1, 0) A^-1 acts on positive sequence only, so its
 * Z012 is diag(0, 1, 0); its element [b][a] is a^2 / 3. */
START_TEST(convention)
{
    kl_complex a = cexp(I * 2.0 * M_PI / 3.0), z[3][3], s[3][3];
    kl_complex col[3] = {1, a * a, a}; /* positive-sequence column of A */
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            z[i][j] = col[i] * conj(col[j]) / 3.0;
    kl_seqz_from_phase(z, s);
    for (int i = 0; i < 3; i++)
        for (int j = 0; j < 3; j++)
            ck_assert(cabs(s[i][j] - (i == 1 && j == 1 ? 1.0 : 0.0)) < 1e-14);
    ck_assert(cabs(z[1][0] - a * a / 3.0) < 1e-15);
}
END_TEST

/* The four-wire overhead example (Kersting, "Distribution System Modeling
 * and Analysis", example 4.1, from memory): Z012 = [0.7735+j1.9373
 * 0.0256+j0.0115 -0.0321+j0.0159; -0.0321+j0.0159 0.3061+j0.6270 -0.0723-j...;
 * 0.0256+j0.0115 0.0723-j... 0.3061+j0.6270] ohm/mile, and the neutral
 * transformation matrix t_n = [-0.4292 -0.4476 -0.4373] + j(...) (the
 * imaginary parts of the last row/column not recalled; not checked). */
START_TEST(four_wire_example)
{
    const double xs[] = {0, 2.5, 7, 4}, ys[] = {29, 29, 29, 25};
    kl_wire w[4];
    for (int i = 0; i < 4; i++) {
        int k = i < 3 ? C336ACSR : C4_0ACSR;
        w[i] = (kl_wire){.x_m = xs[i] * FT, .y_m = ys[i] * FT,
                         .r_ohm_per_m = fx_conductors[k].r / MILE,
                         .gmr_m = fx_conductors[k].gmr * FT};
    }
    kl_complex zp[16], zr[9], tn[3], z[3][3], s[3][3];
    kl_errors err;
    kl_errors_init(&err);
    ck_assert_int_eq(kl_carson_primitive(w, 4, 60, 100, KL_CARSON_APPROX, zp, &err), KL_OK);
    ck_assert_int_eq(kl_kron_reduce(zp, 4, 3, zr, tn), KL_OK);
    for (int i = 0; i < 9; i++)
        z[i / 3][i % 3] = zr[i];
    kl_seqz_from_phase(z, s);
    const struct { int i, j; double r, x; } want[] = {
        {0, 0, 0.7735, 1.9373}, {0, 1, 0.0256, 0.0115}, {0, 2, -0.0321, 0.0159},
        {1, 0, -0.0321, 0.0159}, {1, 1, 0.3061, 0.6270}, {2, 0, 0.0256, 0.0115},
        {2, 2, 0.3061, 0.6270}};
    for (size_t k = 0; k < sizeof want / sizeof *want; k++) {
        fx_assert_close(creal(s[want[k].i][want[k].j]) * MILE, want[k].r, 0, 0.0001);
        fx_assert_close(cimag(s[want[k].i][want[k].j]) * MILE, want[k].x, 0, 0.0001);
    }
    fx_assert_close(creal(s[1][2]) * MILE, -0.0723, 0, 0.0001);
    fx_assert_close(creal(s[2][1]) * MILE, 0.0723, 0, 0.0001);
    const double tn_re[3] = {-0.4292, -0.4476, -0.4373};
    for (int j = 0; j < 3; j++)
        fx_assert_close(creal(tn[j]), tn_re[j], 0, 0.0001);
    kl_errors_free(&err);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("seqz");
    TCase *tc = tcase_create("seqz");
    tcase_add_test(tc, balanced_matrix);
    tcase_add_test(tc, convention);
    tcase_add_test(tc, four_wire_example);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
