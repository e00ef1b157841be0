/* Tests of the unbalance indices (src/unbalance.c) and the NEMA MG 1 motor
 * derating factor (src/derating.c). */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_interp.h>
#include <gsl/gsl_rng.h>
#include "kilter/sequence.h"
#include "kilter/unbalance.h"
#include "ref_ieee13.h"
#include "ref_unbalance.h"

#define PI 3.14159265358979323846
#define DEG (PI / 180.0)

static kl_complex polar(double mag, double deg)
{
    return mag * cexp(I * deg * DEG);
}

/* IEEE Std 1159-1995 clause 4.4.4 worked example (tests/ref_unbalance.c):
 * 230, 232, 225 V -> 1.7 % (printed to one decimal: compare within half a
 * unit of it). */
START_TEST(ieee1159_example)
{
    const ref_unbalance_example *x = &ref_unbalance_ieee1159;
    ck_assert_double_le(fabs(100 * kl_unb_rate(x->v) - x->pct), x->tol_pct);
}
END_TEST

/* NEMA MG 1 worked figures as printed by secondary sources citing MG 1
 * (tests/ref_unbalance.c): 462, 463, 455 V -> 1.1 %; 480, 476, 472 V ->
 * 0.84 %; 203, 210, 212 V -> 2.5 % (the exact ratio is 2.56 %: the source
 * truncates, so that one is compared within 0.1). */
START_TEST(nema_mg1_examples)
{
    for (int k = 0; k < REF_UNBALANCE_NMG1; k++) {
        const ref_unbalance_example *x = &ref_unbalance_mg1[k];
        ck_assert_msg(fabs(100 * kl_unb_rate(x->v) - x->pct) <= x->tol_pct, "%g, %g, %g V: %g %%",
                      x->v[0], x->v[1], x->v[2], 100 * kl_unb_rate(x->v));
    }
}
END_TEST

START_TEST(rate_undefined)
{
    double z[3] = { 0, 0, 0 }, neg[3] = { -1, 2, 2 };
    ck_assert(isnan(kl_unb_rate(z)));
    ck_assert(isnan(kl_unb_rate(neg)));
}
END_TEST

/* Builds line voltages that close the triangle (Vab + Vbc + Vca = 0) from
 * their magnitudes, by the law of cosines, in abc order (Vbc lags Vab). */
static void triangle(const double m[3], kl_complex vll[3])
{
    double cth = (m[2] * m[2] - m[0] * m[0] - m[1] * m[1]) / (2 * m[0] * m[1]);
    vll[0] = m[0];
    vll[1] = m[1] * cexp(-I * acos(fmax(-1.0, fmin(1.0, cth))));
    vll[2] = -(vll[0] + vll[1]);
}

/* The closed form from line magnitudes (common practice in the power-quality
 * literature) agrees with the phasor definition |V2|/|V1| (IEC 61000-4-30) on
 * line voltages built to close the triangle, to 1e-9. */
static void closed_form_vs_phasor(const double m[3])
{
    kl_complex vll[3], s[3];
    double vuf;
    triangle(m, vll);
    ck_assert_double_le(fabs(cabs(vll[2]) - m[2]), 1e-9 * m[2]);
    kl_seq_from_phase(vll, s);
    ck_assert_int_eq(kl_unb_vuf_from_line_mags(m, &vuf, NULL), KL_OK);
    ck_assert_msg(fabs(vuf - kl_unb_negative_factor(s)) <= 1e-9,
                  "%g %g %g: closed %.12g phasor %.12g", m[0], m[1], m[2], vuf,
                  kl_unb_negative_factor(s));
}

START_TEST(closed_form_examples)
{
    /* the worked-example voltages above, and two more triangles */
    static const double m[][3] = { { 480, 480, 400 }, { 100, 150, 200 } };
    closed_form_vs_phasor(ref_unbalance_ieee1159.v);
    for (int k = 0; k < REF_UNBALANCE_NMG1; k++)
        closed_form_vs_phasor(ref_unbalance_mg1[k].v);
    for (size_t k = 0; k < sizeof m / sizeof m[0]; k++)
        closed_form_vs_phasor(m[k]);
}
END_TEST

START_TEST(closed_form_random)
{
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    ck_assert_ptr_nonnull(r);
    gsl_rng_set(r, 42);
    for (int n = 0; n < 500; n++) {
        double m[3] = { 1, 0, 0 };
        /* sides that close a triangle: b in (0.3, 1.7), c between |1-b| and 1+b */
        m[1] = 0.3 + 1.4 * gsl_rng_uniform(r);
        double lo = fabs(1 - m[1]), hi = 1 + m[1];
        m[2] = lo + (hi - lo) * (0.02 + 0.96 * gsl_rng_uniform(r));
        closed_form_vs_phasor(m);
    }
    gsl_rng_free(r);
}
END_TEST

/* Balanced magnitudes give 0; a flat (degenerate) triangle gives 1
 * (|V2| = |V1|); sides that cannot close are rejected with a message. */
START_TEST(closed_form_limits_and_errors)
{
    double bal[3] = { 480, 480, 480 }, flat[3] = { 1, 1, 2 }, open_[3] = { 1, 1, 3 },
           zero[3] = { 480, 0, 480 }, vuf;
    kl_errors err;
    kl_errors_init(&err);
    ck_assert_int_eq(kl_unb_vuf_from_line_mags(bal, &vuf, &err), KL_OK);
    ck_assert_double_le(vuf, 1e-7);
    ck_assert_int_eq(kl_unb_vuf_from_line_mags(flat, &vuf, &err), KL_OK);
    ck_assert_double_le(fabs(vuf - 1), 1e-6);
    ck_assert_int_eq(kl_unb_vuf_from_line_mags(open_, &vuf, &err), KL_EINPUT);
    ck_assert(isnan(vuf));
    ck_assert_int_eq(kl_unb_vuf_from_line_mags(zero, &vuf, &err), KL_EINPUT);
    ck_assert_int_eq(err.count, 2);
    ck_assert_ptr_nonnull(strstr(err.items[0].message, "triangle"));
    kl_errors_free(&err);
}
END_TEST

/* IEEE 13-node published voltages at node 671 (pu, deg): the voltage indices
 * against an independent computation written out here from the definitions
 * (IEC 61000-4-30 VUF from the Fortescue sums, NEMA MG 1 and IEEE 112 rates
 * from the magnitudes, the closed form from line magnitudes). */
START_TEST(ieee13_671_indices)
{
    const ref_ieee13_voltage *pub = ref_ieee13_voltage_find("671"); /* tests/ref_ieee13.c */
    ck_assert_ptr_nonnull(pub);
    const double *m = pub->mag;
    kl_complex v[3] = { polar(m[0], pub->ang[0]), polar(m[1], pub->ang[1]), polar(m[2], pub->ang[2]) };
    kl_complex a = polar(1, 120);
    kl_complex v0 = (v[0] + v[1] + v[2]) / 3, v1 = (v[0] + a * v[1] + a * a * v[2]) / 3,
               v2 = (v[0] + a * a * v[1] + a * v[2]) / 3;
    double lab = cabs(v[0] - v[1]), lbc = cabs(v[1] - v[2]), lca = cabs(v[2] - v[0]);
    double lavg = (lab + lbc + lca) / 3, pavg = (m[0] + m[1] + m[2]) / 3;
    double lvur = fmax(fabs(lab - lavg), fmax(fabs(lbc - lavg), fabs(lca - lavg))) / lavg;
    double pvur = fmax(fabs(m[0] - pavg), fmax(fabs(m[1] - pavg), fabs(m[2] - pavg))) / pavg;
    double mll[3] = { lab, lbc, lca }, vuf_mag;
    kl_unb_voltage u;
    ck_assert_int_eq(kl_unb_voltage_eval(v, &u, NULL), KL_OK);
    ck_assert_int_eq(u.defined, 1);
    ck_assert_double_le(fabs(u.vuf - cabs(v2) / cabs(v1)), 1e-12);
    ck_assert_double_le(fabs(u.v0_v1 - cabs(v0) / cabs(v1)), 1e-12);
    ck_assert_double_le(fabs(u.vuf_ll - u.vuf), 1e-12); /* zero sequence cancels */
    ck_assert_double_le(fabs(u.lvur - lvur), 1e-12);
    ck_assert_double_le(fabs(u.pvur - pvur), 1e-12);
    ck_assert_int_eq(kl_unb_vuf_from_line_mags(mll, &vuf_mag, NULL), KL_OK);
    ck_assert_double_le(fabs(vuf_mag - u.vuf), 1e-9);
}
END_TEST

/* A set with a large zero sequence: VUF from phase voltages equals VUF from
 * line voltages, V0/V1 is what was added (common practice: V0 does not reach
 * the line voltages). */
START_TEST(zero_sequence_does_not_change_vuf)
{
    kl_complex s[3] = { polar(0.1, 40), polar(1.0, -3), polar(0.025, 71) }, v[3];
    kl_unb_voltage u;
    kl_seq_to_phase(s, v);
    ck_assert_int_eq(kl_unb_voltage_eval(v, &u, NULL), KL_OK);
    ck_assert_double_le(fabs(u.vuf - 0.025), 1e-12);
    ck_assert_double_le(fabs(u.vuf_ll - 0.025), 1e-12);
    ck_assert_double_le(fabs(u.v0_v1 - 0.1), 1e-12);
}
END_TEST

START_TEST(dead_bus_is_undefined)
{
    kl_complex v[3] = { 0, 0, 0 };
    kl_unb_voltage u;
    ck_assert_int_eq(kl_unb_voltage_eval(v, &u, NULL), KL_OK);
    ck_assert_int_eq(u.defined, 0);
    ck_assert(isnan(u.vuf) && isnan(u.lvur) && isnan(u.pvur));
}
END_TEST

/* IEEE 13-node published currents on 632-671 (A, deg): I2/I1 and I0/I1
 * against the Fortescue sums written out here. */
START_TEST(ieee13_current_unbalance)
{
    kl_complex i[3] = { polar(478.29, -27.03), polar(215.12, -134.66), polar(475.50, 99.90) };
    kl_complex a = polar(1, 120);
    kl_complex i0 = (i[0] + i[1] + i[2]) / 3, i1 = (i[0] + a * i[1] + a * a * i[2]) / 3,
               i2 = (i[0] + a * a * i[1] + a * i[2]) / 3;
    kl_unb_current u;
    ck_assert_int_eq(kl_unb_current_eval(i, &u, NULL), KL_OK);
    ck_assert_int_eq(u.defined, 1);
    ck_assert_double_le(fabs(u.i2_i1 - cabs(i2) / cabs(i1)), 1e-12);
    ck_assert_double_le(fabs(u.i0_i1 - cabs(i0) / cabs(i1)), 1e-12);
}
END_TEST

/* Pure zero-sequence current (in phase; common practice): I1 = 0, so the
 * ratios are undefined rather than a huge number over rounding noise. */
START_TEST(zero_sequence_current_is_undefined)
{
    kl_complex i[3] = { polar(10, 5), polar(10, 5), polar(10, 5) };
    kl_unb_current u;
    ck_assert_int_eq(kl_unb_current_eval(i, &u, NULL), KL_OK);
    ck_assert_int_eq(u.defined, 0);
    ck_assert(isnan(u.i2_i1) && isnan(u.i0_i1));
}
END_TEST

/* NEMA MG 1 derating curve points, read off the curve by a secondary source
 * (+/- 0.01; tests/ref_unbalance.c). */
static const double *const mg1_pct = ref_unbalance_derate_pct;
static const double *const mg1_factor = ref_unbalance_derate_factor;
#define NMG1 REF_UNBALANCE_NDERATE

START_TEST(derating_curve_points)
{
    for (int k = 0; k < NMG1; k++) {
        kl_derate_zone zone;
        double f;
        ck_assert_int_eq(kl_derating_factor(mg1_pct[k] / 100, &zone, &f, NULL), KL_OK);
        ck_assert_msg(fabs(f - mg1_factor[k]) <= REF_UNBALANCE_DERATE_TOL, "%g %%: %g", mg1_pct[k], f);
        /* NEMA MG 1: no derating up to 1 % */
        ck_assert_int_eq(zone, mg1_pct[k] <= 1.0 ? KL_DERATE_NONE : KL_DERATE_CURVE);
    }
}
END_TEST

/* NEMA MG 1: above 5 % operation is not recommended: no factor is given. */
START_TEST(derating_above_five_percent)
{
    kl_derate_zone zone;
    double f;
    ck_assert_int_eq(kl_derating_factor(0.0501, &zone, &f, NULL), KL_OK);
    ck_assert_int_eq(zone, KL_DERATE_NOT_RECOMMENDED);
    ck_assert(isnan(f));
    ck_assert_int_eq(kl_derating_factor(0.01, &zone, &f, NULL), KL_OK);
    ck_assert_int_eq(zone, KL_DERATE_NONE);
    ck_assert_double_eq(f, 1.0);
    kl_errors err;
    kl_errors_init(&err);
    ck_assert_int_eq(kl_derating_factor(-0.01, &zone, &f, &err), KL_EARG);
    ck_assert_int_eq(kl_derating_factor(NAN, &zone, &f, &err), KL_EARG);
    ck_assert_int_eq(err.count, 2);
    kl_errors_free(&err);
}
END_TEST

/* The interpolant is monotone non-increasing and stays within the curve's
 * read-off tolerance (0.01; in fact within 0.005) of GSL's monotone Steffen interpolant through
 * the secondary source's points joined to MG 1's 1.00 at 1 % (GSL as the
 * reference library). */
START_TEST(derating_against_steffen)
{
    /* the curve points with MG 1's 1.00 at 1 % put in after 0.5 % */
    double x[NMG1 + 1], y[NMG1 + 1];
    const size_t n = NMG1 + 1;
    for (int k = 0, j = 0; k < NMG1; k++) {
        x[j] = mg1_pct[k];
        y[j++] = mg1_factor[k];
        if (mg1_pct[k] == 0.5) {
            x[j] = 1.0;
            y[j++] = 1.00;
        }
    }
    ck_assert(x[2] == 1.0 && x[n - 1] == 5.0);
    gsl_interp *it = gsl_interp_alloc(gsl_interp_steffen, n);
    gsl_interp_accel *acc = gsl_interp_accel_alloc();
    ck_assert(it && acc);
    ck_assert_int_eq(gsl_interp_init(it, x, y, n), GSL_SUCCESS);
    double prev = 1.0;
    for (int k = 0; k <= 500; k++) {
        double pct = 5.0 * k / 500, f, ref;
        kl_derate_zone zone;
        ck_assert_int_eq(kl_derating_factor(pct / 100, &zone, &f, NULL), KL_OK);
        ck_assert_int_eq(gsl_interp_eval_e(it, x, y, pct, acc, &ref), GSL_SUCCESS);
        ck_assert_msg(fabs(f - ref) <= 0.005, "%g %%: %g vs Steffen %g", pct, f, ref);
        ck_assert_double_le(f, prev);
        prev = f;
    }
    gsl_interp_accel_free(acc);
    gsl_interp_free(it);
}
END_TEST

int main(void)
{
    gsl_set_error_handler_off();
    Suite *s = suite_create("unbalance");
    TCase *tc = tcase_create("indices");
    tcase_add_test(tc, ieee1159_example);
    tcase_add_test(tc, nema_mg1_examples);
    tcase_add_test(tc, rate_undefined);
    tcase_add_test(tc, closed_form_examples);
    tcase_add_test(tc, closed_form_random);
    tcase_add_test(tc, closed_form_limits_and_errors);
    tcase_add_test(tc, ieee13_671_indices);
    tcase_add_test(tc, zero_sequence_does_not_change_vuf);
    tcase_add_test(tc, dead_bus_is_undefined);
    tcase_add_test(tc, ieee13_current_unbalance);
    tcase_add_test(tc, zero_sequence_current_is_undefined);
    suite_add_tcase(s, tc);
    TCase *td = tcase_create("derating");
    tcase_add_test(td, derating_curve_points);
    tcase_add_test(td, derating_above_five_percent);
    tcase_add_test(td, derating_against_steffen);
    suite_add_tcase(s, td);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
