/* Tests of the neutral current and sizing (src/neutral_sizing.c) on feeders
 * built and solved by hand (study_fixture.h: every residual current returns
 * in the neutral). */
#include <check.h>
#include <complex.h>
#include <math.h>
#include "study_fixture.h"

static kl_errors err;
static kl_study_options opt;

static void setup(void)
{
    kl_errors_init(&err);
    kl_study_options_default(&opt);
}
static void teardown(void) { kl_errors_free(&err); }

static void sym(kl_complex z[9])
{
    fx_zsym(0.3 + 0.6 * I, 0.1 + 0.25 * I, z);
}

/* Three single-phase loads of 100 A on a, b, c with a third-harmonic share
 * of 0.3: the fundamentals cancel in the neutral (balanced set: common
 * practice), the third harmonics are in phase (3 x 120 deg = 360 deg) and add
 * arithmetically: I_n3 = 3 x 0.3 x 100 = 90 A (common practice). */
START_TEST(triplens_add_arithmetically)
{
    static fx_feeder x;
    kl_complex z[9];
    kl_study *s = NULL;
    fx_init(&x, 0.208);
    sym(z);
    int c = fx_construction(&x, "four-wire", 200.0);
    int b1 = fx_line(&x, 0, "b1", KL_PH_ABC, c, z);
    for (int p = 0; p < 3; p++)
        fx_load(&x, p == 0 ? "office-a" : p == 1 ? "office-b" : "office-c", b1, p, 100.0, -10.0, 0.3);
    fx_solve(&x, NULL);
    ck_assert_int_eq(kl_study_run(&x.f, &x.ph, NULL, &opt, &s, &err), KL_OK);
    ck_assert_double_eq_tol(cabs(s->i_n1[0]), 0.0, 1e-9);
    ck_assert_double_eq_tol(s->i_n3[0], 90.0, 1e-9);
    ck_assert_double_eq_tol(s->i_n_rms[0], 90.0, 1e-9);
    kl_study_free(s);
}
END_TEST

/* One single-phase load of 100 A with a 0.2 third-harmonic share: the
 * neutral carries the whole fundamental return (Kirchhoff) and 20 A of
 * third harmonic; RMS of two frequencies = sqrt(100^2 + 20^2) (definition
 * of RMS of a sum of sinusoids of different frequencies: physics). */
START_TEST(combined_rms)
{
    static fx_feeder x;
    kl_complex z[9];
    kl_study *s = NULL;
    fx_init(&x, 0.208);
    sym(z);
    int c = fx_construction(&x, "four-wire", 100.0);
    int b1 = fx_line(&x, 0, "b1", KL_PH_ABC, c, z);
    fx_load(&x, "bakery", b1, 1, 100.0, -15.0, 0.2);
    fx_solve(&x, NULL);
    ck_assert_int_eq(kl_study_run(&x.f, &x.ph, NULL, &opt, &s, &err), KL_OK);
    ck_assert_double_eq_tol(cabs(s->i_n1[0]), 100.0, 1e-9);
    ck_assert_double_eq_tol(s->i_n3[0], 20.0, 1e-9);
    ck_assert_double_eq_tol(s->i_n_rms[0], sqrt(100.0 * 100.0 + 20.0 * 20.0), 1e-9);
    /* 101.98 A on a 100 A neutral: over its ampacity (limits.c default share 1.0) */
    ck_assert_int_eq(s->neutral_flag[0], 1);
    ck_assert_int_eq(s->n_neutral_over, 1);
    ck_assert_int_eq(s->worst_neutral, 0);
    kl_study_free(s);
}
END_TEST

/* Triplens pass a grounded-wye/grounded-wye bank scaled by the voltage
 * ratio (ampere-turn balance), and a delta winding traps them (zero-sequence
 * currents circulate in the delta): common practice.  The bank's own row is
 * its sending end, the primary (as every section's currents); every other
 * connection: test_triplen.c. */
START_TEST(transformer_passes_or_traps)
{
    static fx_feeder x;
    kl_complex z[9];
    kl_study *s = NULL;
    for (int delta = 0; delta < 2; delta++) {
        fx_init(&x, 12.47);
        sym(z);
        int c = fx_construction(&x, "primary", 300.0);
        int b1 = fx_line(&x, 0, "b1", KL_PH_ABC, c, z);
        int lv = fx_line(&x, b1, "lv", KL_PH_ABC, c, z);
        x.secs[1].kind = KL_SEC_TRANSFORMER;
        x.secs[1].device = 0;
        x.f.ntransformers = 1;
        x.xf[0] = (kl_transformer){ .name = "bank", .kva = 500, .kv_high = 12.47, .kv_low = 0.48,
                                    .high = delta ? KL_WINDING_DELTA : KL_WINDING_GRD_WYE,
                                    .low = KL_WINDING_GRD_WYE };
        for (int p = 0; p < 3; p++)
            fx_load(&x, "plant", lv, p, 100.0, -20.0, 0.25);
        fx_solve(&x, NULL);
        ck_assert_int_eq(kl_study_run(&x.f, &x.ph, NULL, &opt, &s, &err), KL_OK);
        ck_assert_double_eq_tol(s->i_n3[1], delta ? 0.0 : 75.0 * 0.48 / 12.47, 1e-9);
        ck_assert_double_eq_tol(s->i_n3[0], delta ? 0.0 : 75.0 * 0.48 / 12.47, 1e-9);
        kl_study_free(s);
        s = NULL;
    }
}
END_TEST

/* Neutral runs and sizes: two sections of one construction form one run,
 * a third of another construction a second.  Required = 1.25 x the worst
 * current (kilter's default margin, common practice); the conductor chosen
 * is the smallest library entry at or above it (definition). */
START_TEST(runs_and_sizes)
{
    static fx_feeder x;
    kl_complex z[9];
    kl_study *s = NULL;
    static const double amp[4] = { 340.0, 90.0, 200.0, 140.0 };
    static const char *const names[4] = { "c-340", "c-90", "c-200", "c-140" };
    fx_init(&x, 0.208);
    sym(z);
    for (int k = 0; k < 4; k++) {
        x.cond[k].name = names[k];
        x.cond[k].ampacity_a = amp[k];
    }
    x.f.nconductors = 4;
    int cx = fx_construction(&x, "x", 150.0), cy = fx_construction(&x, "y", 100.0);
    int b1 = fx_line(&x, 0, "b1", KL_PH_ABC, cx, z);
    int b2 = fx_line(&x, b1, "b2", KL_PH_ABC, cx, z);
    int b3 = fx_line(&x, b2, "b3", KL_PH_ABC, cy, z);
    fx_load(&x, "mid", b2, 0, 30.0, 0.0, 0);
    fx_load(&x, "end", b3, 0, 80.0, 0.0, 0);
    fx_solve(&x, NULL);
    ck_assert_int_eq(kl_study_run(&x.f, &x.ph, NULL, &opt, &s, &err), KL_OK);
    ck_assert_int_eq(s->nruns, 2);
    ck_assert_int_eq(s->run[0], s->run[1]);
    ck_assert_int_ne(s->run[1], s->run[2]);
    int r0 = s->run[0], r1 = s->run[2];
    ck_assert_int_eq(s->run_sections[r0], 2);
    ck_assert_int_eq(s->run_first[r0], 0);
    /* 30 + 80 A on phase a, in phase: 110 A in the first run's neutral */
    ck_assert_double_eq_tol(s->run_current[r0], 110.0, 1e-9);
    ck_assert_double_eq_tol(s->run_required[r0], 137.5, 1e-9);
    ck_assert_int_eq(s->run_conductor[r0], 3);   /* 140 A */
    ck_assert_double_eq_tol(s->run_required[r1], 100.0, 1e-9);
    ck_assert_int_eq(s->run_conductor[r1], 3);   /* 140 A: 90 A is too small */
    ck_assert_double_eq_tol(s->run_installed[r1], 100.0, 1e-12);
    opt.sizing_margin = 2.5;                     /* 385 A: nothing carries it */
    kl_study_free(s);
    ck_assert_int_eq(kl_study_run(&x.f, &x.ph, NULL, &opt, &s, &err), KL_OK);
    ck_assert_int_eq(s->run_conductor[s->run[0]], -1);
    kl_study_free(s);
}
END_TEST

/* A construction without a neutral reports none (NAN, not 0). */
START_TEST(no_neutral_is_undefined)
{
    static fx_feeder x;
    kl_complex z[9];
    kl_study *s = NULL;
    fx_init(&x, 4.16);
    sym(z);
    int c = fx_construction(&x, "three-wire", 0.0);
    int b1 = fx_line(&x, 0, "b1", KL_PH_ABC, c, z);
    fx_load(&x, "yard", b1, 0, 10.0, 0.0, 0);
    fx_solve(&x, NULL);
    ck_assert_int_eq(kl_study_run(&x.f, &x.ph, NULL, &opt, &s, &err), KL_OK);
    ck_assert(isnan(s->i_n_rms[0]));
    ck_assert_int_eq(s->run[0], -1);
    ck_assert_int_eq(s->nruns, 0);
    kl_study_free(s);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("neutral");
    TCase *tc = tcase_create("sizing");
    tcase_add_checked_fixture(tc, setup, teardown);
    tcase_add_test(tc, triplens_add_arithmetically);
    tcase_add_test(tc, combined_rms);
    tcase_add_test(tc, transformer_passes_or_traps);
    tcase_add_test(tc, runs_and_sizes);
    tcase_add_test(tc, no_neutral_is_undefined);
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
