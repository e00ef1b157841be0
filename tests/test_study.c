/* Tests of the study (src/study.c, study_flow.c, complaint.c) on the IEEE
 * 13-node feeder solved by kilter, against sequence values computed here
 * from the published phase voltages, and the neutral identity (physics). */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "harness.h"
#include "ref_ieee13.h"
#include "ref_unbalance.h"
#include "kilter/study.h"
#include "study_fixture.h"

#define PI 3.14159265358979323846

static kl_errors err;

static void setup(void) { kl_errors_init(&err); }
static void teardown(void) { kl_errors_free(&err); }

/* Loads, derives, solves and studies a feeder file into x (freed by the
 * caller with harness_free); `ungrounded` isolates every construction's
 * neutral before the line constants are derived. */
static void solve_file(const char *rel, int ungrounded, harness *x)
{
    harness_init(x);
    HARNESS_OK(x, harness_load(x, rel));
    if (ungrounded)
        for (int c = 0; c < x->f->nconstructions; c++)
            x->f->constructions[c].neutral_grounded = 0;
    HARNESS_OK(x, harness_derive(x, KL_CARSON_APPROX));
    HARNESS_OK(x, harness_build(x));
    HARNESS_OK(x, harness_solve(x, NULL));
    HARNESS_OK(x, harness_study(x, NULL));
}

/* The published node voltages of the IEEE PES 13-node test feeder
 * (tests/ref_ieee13.c: results of 2004-06-24, pu of the line-to-neutral
 * base, degrees); the three-phase nodes are checked. */
/* Sequence magnitudes from the published phasors, written out from the
 * Fortescue definitions (AIEE Trans. 37, 1918) with cexp for the operator a,
 * independently of src/sequence.c. */
static void pub_seq(const ref_ieee13_voltage *p, double m012[3])
{
    kl_complex v[3], a = cexp(I * 2.0 * PI / 3.0);
    for (int k = 0; k < 3; k++)
        v[k] = p->mag[k] * cexp(I * p->ang[k] * PI / 180.0);
    m012[0] = cabs(v[0] + v[1] + v[2]) / 3.0;
    m012[1] = cabs(v[0] + a * v[1] + a * a * v[2]) / 3.0;
    m012[2] = cabs(v[0] + a * a * v[1] + a * v[2]) / 3.0;
}

/* Tolerance: the load flow agrees with the published voltages within
 * 0.002 pu per phasor (tests/test_flow_ieee13.c).  A sequence component is a
 * third of a sum of three phasors, so it moves by at most 0.002 pu; the
 * printed digits (0.0001 pu, 0.01 deg = 0.00018 pu) add 0.0002.  VUF =
 * |V2|/|V1| then moves by at most (dV2 + VUF dV1) / (V1 - dV1) < 0.0023. */
#define SEQ_TOL 0.0022
#define VUF_TOL 0.0023

START_TEST(ieee13_sequence_matches_published)
{
    harness x;
    solve_file("feeders/reference/ieee-13-node.yaml", 0, &x);
    for (size_t k = 0; k < REF_IEEE13_NVOLTAGES; k++) {
        const ref_ieee13_voltage *pub = &ref_ieee13_voltages[k];
        double m012[3];
        if (!ref_ieee13_voltage_three_phase(pub))
            continue;
        int b = kl_feeder_find_bus(x.f, pub->bus);
        ck_assert_msg(b >= 0, "bus %s missing", pub->bus);
        pub_seq(pub, m012);
        const kl_seq_point *v = &x.study->vbus[b];
        ck_assert(v->defined & KL_SEQ_DEF_SEQUENCE);
        for (int q = 0; q < 3; q++) {
            double got = cabs(v->x012[q]) / x.res->v_base_ln[b];
            ck_assert_msg(fabs(got - m012[q]) <= SEQ_TOL, "bus %s |V%d| %.5f pu, published %.5f",
                          pub->bus, q, got, m012[q]);
        }
        ck_assert_msg(fabs(x.study->unb[b].vuf - m012[2] / m012[1]) <= VUF_TOL,
                      "bus %s VUF %.5f, published phasors give %.5f", pub->bus,
                      x.study->unb[b].vuf, m012[2] / m012[1]);
    }
    harness_free(&x);
}
END_TEST

/* KCL at a section end: phase currents + neutral + earth return = 0, so
 * I_n = -(Ia + Ib + Ic) - I_e on every four-wire line, and I_n recomputed
 * from the construction's tn rows equals the study's (physics). */
START_TEST(neutral_identity_grounded)
{
    harness x;
    int checked = 0;
    solve_file("feeders/reference/ieee-13-node.yaml", 0, &x);
    for (int k = 0; k < x.f->nsections; k++) {
        const kl_section *sec = &x.f->sections[k];
        if (isnan(creal(x.study->i_n1[k])) || sec->kind != KL_SEC_LINE)
            continue;
        const kl_construction *c = &x.f->constructions[sec->construction];
        kl_complex in = 0;
        double scale = cabs(x.study->isec[k].sum) + cabs(x.res->i[3 * k]) + 1.0;
        for (int r = 0; r < c->ntn; r++)
            for (int p = 0; p < 3; p++)
                if (sec->phases & (1 << p))
                    in += c->tn[r][p] * x.res->i[3 * k + p];
        ck_assert(cabs(x.study->i_n1[k] + x.study->isec[k].sum + x.study->i_e[k]) <= 1e-9 * scale + 1e-9);
        ck_assert(cabs(in - x.study->i_n1[k]) <= 1e-9 * (cabs(in) + 1.0));
        checked++;
    }
    ck_assert_int_ge(checked, 5);
    harness_free(&x);
}
END_TEST

/* An isolated neutral has no earth path: it carries the whole residual,
 * I_n = -(Ia + Ib + Ic) (physics). */
START_TEST(neutral_identity_ungrounded)
{
    harness x;
    int checked = 0;
    solve_file("feeders/reference/ieee-13-node.yaml", 1, &x);
    for (int k = 0; k < x.f->nsections; k++) {
        const kl_section *sec = &x.f->sections[k];
        if (isnan(creal(x.study->i_n1[k])) || sec->kind != KL_SEC_LINE
            || x.f->constructions[sec->construction].kind != KL_CONS_OVERHEAD)
            continue;
        double scale = cabs(x.study->isec[k].sum) + 1.0;
        ck_assert_msg(cabs(x.study->i_n1[k] + x.study->isec[k].sum) <= 1e-6 * scale,
                      "section %s: In %.4f A, -sum %.4f A", sec->name,
                      cabs(x.study->i_n1[k]), cabs(x.study->isec[k].sum));
        checked++;
    }
    ck_assert_int_ge(checked, 5);
    harness_free(&x);
}
END_TEST

/* The demo feeder is built unbalanced on purpose (feeders/demo/README.md):
 * the study finds a bus over an unbalance level and names contributors
 * whose shares, with the rest, add to 1 (construction of the remainder). */
START_TEST(demo_has_broken_limit_and_contributors)
{
    harness x;
    solve_file("feeders/demo/quillmere-f3.yaml", 0, &x);
    ck_assert_int_ge(x.study->n_vuf_compat, 1);
    ck_assert(x.study->contrib_done);
    ck_assert_int_ge(x.study->ncbus, 1);
    ck_assert_int_ge(x.study->cstart[1] - x.study->cstart[0], 1);
    ck_assert(x.study->cshare[0] > 0);
    ck_assert_double_eq_tol(x.study->c_unbal_total[0] + x.study->c_three_phase[0] + x.study->c_remainder[0],
                            1.0, 1e-9);
    harness_free(&x);
}
END_TEST

/* Complaint check: a reading equal to the model agrees; the IEEE Std 1159
 * worked example's magnitudes (230, 232, 225 V) give its 1.7 % unbalance
 * rate (IEEE Std 1159-1995 clause 4.4.4, tests/ref_unbalance.c); readings
 * 5 % off disagree. */
START_TEST(complaint_agrees_and_disagrees)
{
    static fx_feeder x;
    kl_complex z[9];
    kl_study_options opt;
    kl_study *s = NULL;
    kl_complaint_input in = { 0 };
    kl_complaint_result r;
    fx_init(&x, 0.4);
    fx_zsym(0.05 + 0.08 * I, 0.01 + 0.03 * I, z);
    int c = fx_construction(&x, "lv", 0);
    int b1 = fx_line(&x, 0, "b1", KL_PH_ABC, c, z);
    fx_load(&x, "workshop", b1, 0, 150.0, -20.0, 0);
    fx_solve(&x, NULL);
    kl_study_options_default(&opt);
    ck_assert_int_eq(kl_study_run(&x.f, &x.ph, NULL, &opt, &s, &err), KL_OK);
    in.bus = b1;
    in.kind = KL_MEAS_LINE;
    in.tol_pu = 0.02;
    in.tol_vuf = 0.005;
    for (int p = 0; p < 3; p++)
        in.mag[p] = cabs(s->vbus[b1].xll[p]);
    ck_assert_int_eq(kl_complaint_check(&x.f, s, &x.ph, &in, &r, &err), KL_OK);
    ck_assert_int_eq(r.mags_agree, 1);
    ck_assert_int_eq(r.vuf_agree, 1);
    ck_assert_double_eq_tol(r.model_vuf, s->unb[b1].vuf, 1e-9); /* closed form = phasor VUF */
    for (int p = 0; p < 3; p++)
        in.mag[p] *= p == 0 ? 1.05 : 1.0;
    ck_assert_int_eq(kl_complaint_check(&x.f, s, &x.ph, &in, &r, &err), KL_OK);
    ck_assert_int_eq(r.mags_agree, 0);
    /* on the 120 V base (phase readings) */
    in.kind = KL_MEAS_PHASE;
    const ref_unbalance_example *ex = &ref_unbalance_ieee1159;
    for (int p = 0; p < 3; p++)
        in.mag[p] = ex->v[p] * 120.0 / 230.0;
    ck_assert_int_eq(kl_complaint_check(&x.f, s, &x.ph, &in, &r, &err), KL_OK);
    ck_assert_int_eq(r.on_120, 1);
    ck_assert_double_eq_tol(100.0 * r.meas_rate, ex->pct, ex->tol_pct);
    /* readings that fit no base are refused with a message */
    in.mag[0] = in.mag[1] = in.mag[2] = 50.0;
    kl_errors_clear(&err);
    ck_assert_int_eq(kl_complaint_check(&x.f, s, &x.ph, &in, &r, &err), KL_EINPUT);
    ck_assert_int_ge(err.count, 1);
    ck_assert_ptr_nonnull(strstr(err.items[0].message, "120 V base"));
    kl_study_free(s);
}
END_TEST

/* Service-voltage classes and the ground-relay share on a hand-solved
 * feeder: ANSI C84.1 Range A is 114-126 V on 120 V (limits.c, from memory);
 * the relay flag at half the pickup is common practice. */
START_TEST(compliance_service_and_relay)
{
    static fx_feeder x;
    kl_complex z[9];
    kl_study_options opt;
    kl_study *s = NULL;
    fx_init(&x, 4.16);
    fx_zsym(1.0 + 2.0 * I, 0.3 + 0.8 * I, z);
    int c = fx_construction(&x, "c", 0);
    int b1 = fx_line(&x, 0, "b1", KL_PH_ABC, c, z);
    fx_load(&x, "heavy", b1, 0, 200.0, -30.0, 0);
    fx_solve(&x, NULL);
    x.f.source.relay_pickup_a = 300.0;
    kl_study_options_default(&opt);
    ck_assert_int_eq(kl_study_run(&x.f, &x.ph, NULL, &opt, &s, &err), KL_OK);
    double va = s->v_pu[3 * b1] * 120.0;
    int want = va < 110 ? KL_SERVICE_BELOW_B : va < 114 ? KL_SERVICE_B_LOW : KL_SERVICE_A;
    ck_assert_int_eq(s->service[3 * b1], want);
    ck_assert(va < 114.0);                      /* 200 A through 2.2 ohm drops phase a */
    ck_assert_double_eq_tol(cabs(s->head_3i0), 200.0, 1e-9);
    ck_assert_double_eq_tol(s->relay_ratio, 200.0 / 300.0, 1e-12);
    ck_assert_int_eq(s->relay_flag, 1);         /* 67 % > 50 % */
    ck_assert_int_eq(s->lowest_v, b1);
    ck_assert_int_eq(s->lowest_ph, 0);
    kl_study_free(s);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("study");
    TCase *tc = tcase_create("study");
    tcase_add_checked_fixture(tc, setup, teardown);
    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, ieee13_sequence_matches_published);
    tcase_add_test(tc, neutral_identity_grounded);
    tcase_add_test(tc, neutral_identity_ungrounded);
    tcase_add_test(tc, demo_has_broken_limit_and_contributors);
    tcase_add_test(tc, complaint_agrees_and_disagrees);
    tcase_add_test(tc, compliance_service_and_relay);
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
