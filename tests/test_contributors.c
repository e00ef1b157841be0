/* Tests of the contributor shares (src/contributors.c) on feeders whose
 * answer is known by hand.  The voltages come from study_fixture.h's exact
 * current-driven solution, not from kilter's load flow. */
#include <check.h>
#include <complex.h>
#include <math.h>
#include "study_fixture.h"

static kl_errors err;

static void setup(void) { kl_errors_init(&err); }
static void teardown(void) { kl_errors_free(&err); }

/* One single-phase load is the only current drawn from a balanced source
 * through lines: the negative-sequence voltage everywhere is its doing, so
 * its share is 1 (superposition, linear network: physics). */
START_TEST(single_load_share_one)
{
    static fx_feeder x;
    kl_complex z[9];
    double share[FX_MAX], total;
    fx_init(&x, 4.16);
    fx_z601(0.5, z);
    int c = fx_construction(&x, "c601", 0);
    int b1 = fx_line(&x, 0, "b1", KL_PH_ABC, c, z);
    int b2 = fx_line(&x, b1, "b2", KL_PH_ABC, c, z);
    fx_load(&x, "shop", b2, 1, 150.0, -25.0, 0);
    fx_solve(&x, NULL);
    for (int k = 1; k <= 2; k++) {
        ck_assert_int_eq(kl_contrib_shares(&x.f, &x.ph, &x.paths, k, share, &total, &err), KL_OK);
        ck_assert_double_eq_tol(share[0], 1.0, 1e-9);
        ck_assert_double_eq_tol(total, 1.0, 1e-9);
    }
    (void)b2;
}
END_TEST

/* The same with a source impedance: the source is part of the common path
 * (Z_km includes it), so the share is still 1 (physics). */
START_TEST(single_load_with_source_impedance)
{
    static fx_feeder x;
    kl_complex z[9], zs[9];
    double share[FX_MAX], total;
    fx_init(&x, 12.47);
    fx_z601(2.0, z);
    fx_zsym(0.5 + 3.0 * I, 0.1 + 0.9 * I, zs);
    int c = fx_construction(&x, "c601", 0);
    int b1 = fx_line(&x, 0, "b1", KL_PH_ABC, c, z);
    fx_load(&x, "pump", b1, 2, 80.0, -30.0, 0);
    fx_solve(&x, zs);
    ck_assert_int_eq(kl_contrib_shares(&x.f, &x.ph, &x.paths, b1, share, &total, &err), KL_OK);
    ck_assert_double_eq_tol(share[0], 1.0, 1e-9);
}
END_TEST

/* Two equal loads on phases a and b of a transposed line (sequence
 * decoupled, Z2 = Zs - Zm): their negative-sequence currents are I/3 and
 * a I/3, 120 deg apart, so each projects 0.5 on the sum:
 * Re(x conj(x + a x)) / |x + a x|^2 = Re(1 + a^2) / |1 + a|^2 = 0.5 / 1
 * (worked by hand from the Fortescue definitions). */
START_TEST(two_equal_loads_half_each)
{
    static fx_feeder x;
    kl_complex z[9];
    double share[FX_MAX], total;
    fx_init(&x, 4.16);
    fx_zsym(0.6 + 1.2 * I, 0.2 + 0.5 * I, z);
    int c = fx_construction(&x, "sym", 0);
    int b1 = fx_line(&x, 0, "b1", KL_PH_ABC, c, z);
    fx_load(&x, "north", b1, 0, 120.0, -20.0, 0);
    fx_load(&x, "south", b1, 1, 120.0, -20.0, 0);
    fx_solve(&x, NULL);
    ck_assert_int_eq(kl_contrib_shares(&x.f, &x.ph, &x.paths, b1, share, &total, &err), KL_OK);
    ck_assert_double_eq_tol(share[0], 0.5, 1e-9);
    ck_assert_double_eq_tol(share[1], 0.5, 1e-9);
    ck_assert_double_eq_tol(total, 1.0, 1e-9);
}
END_TEST

/* A balanced three-phase load on a transposed line makes no negative
 * sequence (Z012 diagonal, I2 = 0): share 0, the single-phase load keeps 1
 * (physics). */
START_TEST(balanced_load_shares_nothing)
{
    static fx_feeder x;
    kl_complex z[9];
    double share[FX_MAX], total;
    fx_init(&x, 4.16);
    fx_zsym(0.6 + 1.2 * I, 0.2 + 0.5 * I, z);
    int c = fx_construction(&x, "sym", 0);
    int b1 = fx_line(&x, 0, "b1", KL_PH_ABC, c, z);
    int L = fx_load(&x, "mill", b1, 0, 200.0, -30.0, 0);
    fx_load_phase(&x, L, 1, 200.0, -30.0);
    fx_load_phase(&x, L, 2, 200.0, -30.0);
    fx_load(&x, "kiosk", b1, 2, 60.0, -10.0, 0);
    fx_solve(&x, NULL);
    ck_assert_int_eq(kl_contrib_shares(&x.f, &x.ph, &x.paths, b1, share, &total, &err), KL_OK);
    ck_assert_double_eq_tol(share[0], 0.0, 1e-9);
    ck_assert_double_eq_tol(share[1], 1.0, 1e-9);
}
END_TEST

/* A load on a lateral off b1 only shares the path to b1 with bus b2: its
 * effect at b2 is -Z_01 I, not -(Z_01 + Z_lat) I.  With one load on the
 * lateral and one at b2 on phase a, both of one current, the share of the
 * lateral load at b2 is |Z_01| / (|Z_01| + |Z_01 + Z_12|) for a
 * sequence-decoupled line with equal angles (hand calculation: the changes
 * are collinear, so shares are the ratio of magnitudes). */
START_TEST(lateral_shares_common_path_only)
{
    static fx_feeder x;
    kl_complex z[9];
    double share[FX_MAX], total;
    fx_init(&x, 4.16);
    fx_zsym(0.6 + 1.2 * I, 0.2 + 0.5 * I, z);
    int c = fx_construction(&x, "sym", 0);
    int b1 = fx_line(&x, 0, "b1", KL_PH_ABC, c, z);
    int b2 = fx_line(&x, b1, "b2", KL_PH_ABC, c, z);
    int lat = fx_line(&x, b1, "lat", KL_PH_A, c, z);
    fx_load(&x, "barn", b2, 0, 50.0, -20.0, 0);
    fx_load(&x, "cabin", lat, 0, 50.0, -20.0, 0);
    fx_solve(&x, NULL);
    ck_assert_int_eq(kl_contrib_shares(&x.f, &x.ph, &x.paths, b2, share, &total, &err), KL_OK);
    /* |Z_01 + Z_12| : |Z_01| = 2 : 1 */
    ck_assert_double_eq_tol(share[0], 2.0 / 3.0, 1e-9);
    ck_assert_double_eq_tol(share[1], 1.0 / 3.0, 1e-9);
}
END_TEST

/* The ranking at a bus over the 2 % level (VUF computed, then listed):
 * the tap (two loads on a single-phase lateral) and the loads appear in
 * order of share; three-phase and remainder add up to 1 (construction). */
START_TEST(rank_lists_loads_and_taps)
{
    static fx_feeder x;
    kl_complex z[9];
    kl_study_options opt;
    kl_study *s = NULL;
    fx_init(&x, 4.16);
    fx_z601(3.0, z);
    int c = fx_construction(&x, "c601", 0);
    int b1 = fx_line(&x, 0, "b1", KL_PH_ABC, c, z);
    int b2 = fx_line(&x, b1, "b2", KL_PH_ABC, c, z);
    int lat = fx_line(&x, b1, "lat1", KL_PH_C, c, z);
    int lat2 = fx_line(&x, lat, "lat2", KL_PH_C, c, z);
    fx_load(&x, "grange", lat, 2, 60.0, -20.0, 0);
    fx_load(&x, "orchard", lat2, 2, 60.0, -20.0, 0);
    fx_load(&x, "dairy", b2, 0, 150.0, -25.0, 0);
    fx_solve(&x, NULL);
    kl_study_options_default(&opt);
    ck_assert_int_eq(kl_study_run(&x.f, &x.ph, &x.paths, &opt, &s, &err), KL_OK);
    ck_assert(s->contrib_done);
    ck_assert_int_ge(s->ncbus, 1);
    ck_assert_int_eq(s->cbus[0], b2); /* farthest bus: largest VUF */
    int n = s->cstart[1] - s->cstart[0];
    ck_assert_int_eq(n, 4); /* three loads and the lateral tap */
    for (int j = s->cstart[0] + 1; j < s->cstart[1]; j++)
        ck_assert(s->cshare[j - 1] >= s->cshare[j]);
    double tap = NAN, loads = 0;
    for (int j = s->cstart[0]; j < s->cstart[1]; j++) {
        if (s->ckind[j] == KL_CONTRIB_TAP)
            tap = s->cshare[j];
        else
            loads += s->cshare[j];
    }
    ck_assert_double_eq_tol(loads, 1.0, 1e-9);
    ck_assert_double_eq_tol(s->c_unbal_total[0] + s->c_three_phase[0] + s->c_remainder[0], 1.0, 1e-12);
    ck_assert_double_eq_tol(s->c_remainder[0], 0.0, 1e-9);
    ck_assert(tap > 0 && tap < 1);
    kl_study_free(s);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("contributors");
    TCase *tc = tcase_create("shares");
    tcase_add_checked_fixture(tc, setup, teardown);
    tcase_add_test(tc, single_load_share_one);
    tcase_add_test(tc, single_load_with_source_impedance);
    tcase_add_test(tc, two_equal_loads_half_each);
    tcase_add_test(tc, balanced_load_shares_nothing);
    tcase_add_test(tc, lateral_shares_common_path_only);
    tcase_add_test(tc, rank_lists_loads_and_taps);
    suite_add_tcase(s, tc);
    return s;
}

int main(void)
{
    SRunner *sr = srunner_create(suite());
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? 1 : 0;
}
