/* Tests of the Fortescue transform (src/sequence.c). */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_complex.h>
#include <gsl/gsl_complex_math.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_vector.h>
#include "kilter/sequence.h"
#include "kl_base.h" /* CMPLX under clang */
#include "ref_ieee13.h"

#define PI 3.14159265358979323846
#define DEG (PI / 180.0)

static kl_complex polar(double mag, double deg)
{
    return mag * cexp(I * deg * DEG);
}

/* Published node voltages of the IEEE PES 13-node test feeder
 * (tests/ref_ieee13.c: results of 2004-06-24; pu of the line-to-neutral
 * base, degrees). */
static void ieee13_phasors(const ref_ieee13_voltage *v, kl_complex abc[3])
{
    for (int k = 0; k < 3; k++)
        abc[k] = polar(v->mag[k], v->ang[k]);
}

/* Independent computation: the Fortescue matrix A^-1 = 1/3 [[1,1,1],[1,a,a^2],
 * [1,a^2,a]] built entry by entry with gsl_complex_polar, applied with BLAS
 * zgemv (GSL as the reference library). */
static void gsl_fortescue(const kl_complex abc[3], kl_complex s012[3])
{
    static const int power[3][3] = { { 0, 0, 0 }, { 0, 1, 2 }, { 0, 2, 1 } };
    gsl_matrix_complex *m = gsl_matrix_complex_alloc(3, 3);
    gsl_vector_complex *x = gsl_vector_complex_alloc(3);
    gsl_vector_complex *y = gsl_vector_complex_alloc(3);
    ck_assert(m && x && y);
    for (int r = 0; r < 3; r++) {
        for (int c = 0; c < 3; c++)
            gsl_matrix_complex_set(m, (size_t)r, (size_t)c,
                gsl_complex_polar(1.0 / 3.0, power[r][c] * 2.0 * PI / 3.0));
        gsl_vector_complex_set(x, (size_t)r, gsl_complex_rect(creal(abc[r]), cimag(abc[r])));
    }
    ck_assert_int_eq(gsl_blas_zgemv(CblasNoTrans, GSL_COMPLEX_ONE, m, x,
                                    GSL_COMPLEX_ZERO, y), GSL_SUCCESS);
    for (int r = 0; r < 3; r++) {
        gsl_complex z = gsl_vector_complex_get(y, (size_t)r);
        s012[r] = GSL_REAL(z) + I * GSL_IMAG(z);
    }
    gsl_vector_complex_free(y);
    gsl_vector_complex_free(x);
    gsl_matrix_complex_free(m);
}

/* Common practice: a balanced abc set has only a positive sequence, equal to Va. */
START_TEST(balanced_abc_is_positive)
{
    kl_complex abc[3] = { polar(7200, 10), polar(7200, -110), polar(7200, 130) }, s[3];
    kl_seq_from_phase(abc, s);
    ck_assert_double_le(cabs(s[0]), 1e-12 * 7200);
    ck_assert_double_le(cabs(s[1] - abc[0]), 1e-12 * 7200);
    ck_assert_double_le(cabs(s[2]), 1e-12 * 7200);
}
END_TEST

/* Common practice: the same set in sequence a-c-b has only a negative sequence. */
START_TEST(balanced_acb_is_negative)
{
    kl_complex abc[3] = { polar(2.5, -30), polar(2.5, 90), polar(2.5, -150) }, s[3];
    kl_seq_from_phase(abc, s);
    ck_assert_double_le(cabs(s[0]), 1e-12 * 2.5);
    ck_assert_double_le(cabs(s[1]), 1e-12 * 2.5);
    ck_assert_double_le(cabs(s[2] - abc[0]), 1e-12 * 2.5);
}
END_TEST

/* Common practice: three equal phasors in phase are pure zero sequence. */
START_TEST(in_phase_is_zero_sequence)
{
    kl_complex x = polar(41.0, 75), abc[3] = { x, x, x }, s[3];
    kl_seq_from_phase(abc, s);
    ck_assert_double_le(cabs(s[0] - x), 1e-12 * 41.0);
    ck_assert_double_le(cabs(s[1]), 1e-12 * 41.0);
    ck_assert_double_le(cabs(s[2]), 1e-12 * 41.0);
}
END_TEST

/* Common practice (A A^-1 = 1): phase -> sequence -> phase is exact to 1e-12
 * relative, both ways, on random phasors (GSL's MT19937, fixed seed). */
START_TEST(round_trip_random)
{
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    ck_assert_ptr_nonnull(r);
    gsl_rng_set(r, 20261201);
    for (int n = 0; n < 1000; n++) {
        kl_complex abc[3], s[3], back[3], s2[3];
        double scale = pow(10.0, 6.0 * gsl_rng_uniform(r) - 2.0);
        for (int k = 0; k < 3; k++)
            abc[k] = scale * (gsl_rng_uniform(r) - 0.5 + I * (gsl_rng_uniform(r) - 0.5));
        kl_seq_from_phase(abc, s);
        kl_seq_to_phase(s, back);
        kl_seq_from_phase(back, s2);
        for (int k = 0; k < 3; k++) {
            ck_assert_double_le(cabs(back[k] - abc[k]), 1e-12 * scale);
            ck_assert_double_le(cabs(s2[k] - s[k]), 1e-12 * scale);
        }
    }
    gsl_rng_free(r);
}
END_TEST

/* IEEE 13-node published phase voltages: kilter's sequence values agree with
 * the independent GSL matrix product; the inverse returns the published set. */
START_TEST(ieee13_against_gsl)
{
    /* the three-phase nodes */
    for (int n = 0; n < REF_IEEE13_NVOLTAGES; n++) {
        const ref_ieee13_voltage *v = &ref_ieee13_voltages[n];
        kl_complex abc[3], s[3], ref[3], back[3];
        if (!ref_ieee13_voltage_three_phase(v))
            continue;
        ieee13_phasors(v, abc);
        kl_seq_from_phase(abc, s);
        gsl_fortescue(abc, ref);
        kl_seq_to_phase(s, back);
        for (int k = 0; k < 3; k++) {
            ck_assert_msg(cabs(s[k] - ref[k]) <= 1e-12, "node %s seq %d",
                          v->bus, k);
            ck_assert_double_le(cabs(back[k] - abc[k]), 1e-12);
        }
    }
}
END_TEST

/* Node 671 in the published results: |V1| is at most the mean phase magnitude
 * (triangle inequality on (Va + a Vb + a^2 Vc)/3), and with all three phases
 * present the VUF is below 5 % (IEEE Std 1159-1995 clause 4.4.4: above 5 %
 * usually comes from the loss of a phase). */
START_TEST(ieee13_671_plausible)
{
    kl_complex abc[3], s[3];
    const ref_ieee13_voltage *v = ref_ieee13_voltage_find("671");
    ck_assert_ptr_nonnull(v);
    ieee13_phasors(v, abc);
    kl_seq_from_phase(abc, s);
    ck_assert_double_le(cabs(s[1]), (v->mag[0] + v->mag[1] + v->mag[2]) / 3.0);
    ck_assert_double_lt(cabs(s[2]) / cabs(s[1]), 0.05);
}
END_TEST

/* Line voltages carry no zero sequence, and their positive and negative
 * sequences are sqrt(3) /+30 deg V1 and sqrt(3) /-30 deg V2 (Vab = (1 - a^2) V1
 * + (1 - a) V2; common practice).  So |V2|/|V1| is the same either way. */
START_TEST(line_sequence_identity)
{
    const kl_complex k1 = sqrt(3.0) * cexp(I * 30 * DEG), k2 = sqrt(3.0) * cexp(-I * 30 * DEG);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    ck_assert_ptr_nonnull(r);
    gsl_rng_set(r, 7);
    for (int n = 0; n < REF_IEEE13_NVOLTAGES + 200; n++) {
        kl_complex vln[3], vll[3], s[3], sll[3];
        if (n < REF_IEEE13_NVOLTAGES && !ref_ieee13_voltage_three_phase(&ref_ieee13_voltages[n]))
            continue;
        if (n < REF_IEEE13_NVOLTAGES)
            ieee13_phasors(&ref_ieee13_voltages[n], vln);
        else
            for (int k = 0; k < 3; k++)
                vln[k] = polar(1 + 0.2 * (gsl_rng_uniform(r) - 0.5), -120.0 * k + 20 * gsl_rng_uniform(r))
                         + 0.1 * gsl_rng_uniform(r); /* add a zero-sequence share */
        kl_seq_line_from_phase(vln, vll);
        kl_seq_from_phase(vln, s);
        kl_seq_from_phase(vll, sll);
        ck_assert_double_le(cabs(vll[0] - (vln[0] - vln[1])), 0.0);
        ck_assert_double_le(cabs(sll[0]), 1e-12);
        ck_assert_double_le(cabs(sll[1] - k1 * s[1]), 1e-12);
        ck_assert_double_le(cabs(sll[2] - k2 * s[2]), 1e-12);
    }
    gsl_rng_free(r);
}
END_TEST

/* Two-phase point (IEEE 13-node node 645, phases b and c): the two phase
 * voltages and Vbc are defined, nothing else; no zeros stand in for phase a. */
START_TEST(two_phase_point)
{
    const ref_ieee13_voltage *pub = ref_ieee13_voltage_find("645");
    ck_assert_ptr_nonnull(pub);
    kl_complex v[3] = { 0, polar(pub->mag[1], pub->ang[1]), polar(pub->mag[2], pub->ang[2]) };
    kl_seq_point p;
    kl_errors err;
    kl_errors_init(&err);
    ck_assert_int_eq(kl_seq_point_from_phase(KL_PH_B | KL_PH_C, v, &p, &err), KL_OK);
    ck_assert_int_eq(p.defined, KL_PH_B | KL_PH_C | KL_SEQ_DEF_BC);
    ck_assert(isnan(creal(p.x[0])));
    ck_assert(isnan(creal(p.xll[0])) && isnan(creal(p.xll[2])));
    for (int k = 0; k < 3; k++)
        ck_assert(isnan(creal(p.x012[k])));
    ck_assert_double_le(cabs(p.xll[1] - (v[1] - v[2])), 0.0);
    ck_assert_double_le(cabs(p.sum - (v[1] + v[2])), 1e-15);
    ck_assert_int_eq(err.count, 0);
    kl_errors_free(&err);
}
END_TEST

/* Single-phase point (node 611, phase c) and a three-phase one. */
START_TEST(single_and_three_phase_point)
{
    kl_complex v[3] = { polar(0.99, -5.3), polar(1.05, -122.3), polar(0.9738, 115.78) };
    kl_seq_point p;
    ck_assert_int_eq(kl_seq_point_from_phase(KL_PH_C, v, &p, NULL), KL_OK);
    ck_assert_int_eq(p.defined, KL_PH_C);
    ck_assert(isnan(creal(p.x[0])) && isnan(creal(p.x[1])));
    ck_assert_double_le(cabs(p.x[2] - v[2]), 0.0);
    for (int k = 0; k < 3; k++)
        ck_assert(isnan(cimag(p.xll[k])) && isnan(cimag(p.x012[k])));
    ck_assert_int_eq(kl_seq_point_from_phase(KL_PH_ABC, v, &p, NULL), KL_OK);
    ck_assert_int_eq(p.defined, KL_PH_ABC | KL_SEQ_DEF_AB | KL_SEQ_DEF_BC
                     | KL_SEQ_DEF_CA | KL_SEQ_DEF_SEQUENCE);
    ck_assert_double_le(cabs(3.0 * p.x012[0] - p.sum), 1e-15);
}
END_TEST

START_TEST(bad_point_arguments)
{
    kl_complex v[3] = { 1, CMPLX(NAN, 0), 1 };
    kl_seq_point p;
    kl_errors err;
    kl_errors_init(&err);
    ck_assert_int_eq(kl_seq_point_from_phase(0, v, &p, &err), KL_EARG);
    ck_assert_int_eq(kl_seq_point_from_phase(8, v, &p, &err), KL_EARG);
    ck_assert_int_eq(kl_seq_point_from_phase(KL_PH_ABC, v, &p, &err), KL_EARG);
    ck_assert_int_eq(err.count, 3);
    ck_assert_ptr_nonnull(strstr(err.items[2].message, "phase b"));
    /* phase b absent: its NaN entry is ignored */
    ck_assert_int_eq(kl_seq_point_from_phase(KL_PH_A | KL_PH_C, v, &p, &err), KL_OK);
    kl_errors_free(&err);
}
END_TEST

int main(void)
{
    gsl_set_error_handler_off();
    Suite *s = suite_create("sequence");
    TCase *tc = tcase_create("fortescue");
    tcase_add_test(tc, balanced_abc_is_positive);
    tcase_add_test(tc, balanced_acb_is_negative);
    tcase_add_test(tc, in_phase_is_zero_sequence);
    tcase_add_test(tc, round_trip_random);
    tcase_add_test(tc, ieee13_against_gsl);
    tcase_add_test(tc, ieee13_671_plausible);
    tcase_add_test(tc, line_sequence_identity);
    tcase_add_test(tc, two_phase_point);
    tcase_add_test(tc, single_and_three_phase_point);
    tcase_add_test(tc, bad_point_arguments);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
