/* Tests of the compliance limits (src/limits.c). */
#include <check.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/limits.h"

/* The defaults are the published figures. */
START_TEST(defaults_are_the_cited_values)
{
    kl_limits l;
    kl_limits_default(&l);
    /* ANSI C84.1 service voltage on 120 V (from memory): A 114-126, B 110-127 */
    ck_assert_double_eq(l.range_a_low_v, 114);
    ck_assert_double_eq(l.range_a_high_v, 126);
    ck_assert_double_eq(l.range_b_low_v, 110);
    ck_assert_double_eq(l.range_b_high_v, 127);
    /* ANSI C84.1 Annex D: 3 %; EN 50160 / IEC 61000-2-2 (from memory): 2 % */
    ck_assert_double_eq_tol(l.vuf_supply, 0.03, 1e-15);
    ck_assert_double_eq_tol(l.vuf_compat, 0.02, 1e-15);
    /* NEMA MG 1: 1 % without derating, above 5 % not recommended */
    ck_assert_double_eq_tol(l.motor_unbalance, 0.01, 1e-15);
    ck_assert_double_eq_tol(l.motor_unbalance_max, 0.05, 1e-15);
    /* common practice: half the ground pickup; neutral at full ampacity */
    ck_assert_double_eq_tol(l.relay_share, 0.5, 1e-15);
    ck_assert_double_eq_tol(l.neutral_share, 1.0, 1e-15);
    ck_assert_int_eq(kl_limits_check(&l, NULL), KL_OK);
}
END_TEST

START_TEST(check_rejects_nonsense)
{
    kl_limits l;
    kl_errors err;
    kl_errors_init(&err);
    kl_limits_default(&l);
    l.range_a_low_v = 108;       /* Range A reaching below Range B */
    l.relay_share = 0;
    ck_assert_int_eq(kl_limits_check(&l, &err), KL_EINPUT);
    ck_assert_int_eq(err.count, 2);
    ck_assert_ptr_nonnull(strstr(err.items[0].message, "Range A must lie inside Range B"));
    ck_assert_str_eq(err.items[1].element, "limits");
    kl_limits_default(&l);
    l.range_b_high_v = 100;      /* high below low */
    ck_assert_int_eq(kl_limits_check(&l, &err), KL_EINPUT);
    kl_errors_free(&err);
}
END_TEST

/* ANSI C84.1 ranges (from memory) applied on the 120 V base: the class of a
 * voltage just inside and just outside each edge. */
START_TEST(service_classes)
{
    kl_limits l;
    kl_limits_default(&l);
    struct { double volts; kl_service_class c; } cases[] = {
        { 120.0, KL_SERVICE_A },   { 114.0, KL_SERVICE_A },       { 126.0, KL_SERVICE_A },
        { 113.9, KL_SERVICE_B_LOW }, { 110.0, KL_SERVICE_B_LOW }, { 109.9, KL_SERVICE_BELOW_B },
        { 126.1, KL_SERVICE_B_HIGH }, { 127.0, KL_SERVICE_B_HIGH }, { 127.1, KL_SERVICE_ABOVE_B },
    };
    for (size_t k = 0; k < sizeof cases / sizeof cases[0]; k++)
        ck_assert_msg(kl_limits_service(&l, cases[k].volts / 120.0) == cases[k].c,
                      "%g V", cases[k].volts);
    ck_assert_int_eq(kl_limits_service(&l, NAN), KL_SERVICE_UNDEFINED);
    ck_assert_str_eq(kl_service_class_str(KL_SERVICE_BELOW_B), "below Range B");
}
END_TEST

/* Voltage unbalance: 2 % (EN 50160 / IEC 61000-2-2) and 3 % (ANSI C84.1). */
START_TEST(vuf_levels)
{
    kl_limits l;
    kl_limits_default(&l);
    ck_assert_int_eq(kl_limits_vuf(&l, 0.015), 0);
    ck_assert_int_eq(kl_limits_vuf(&l, 0.02), 0);
    ck_assert_int_eq(kl_limits_vuf(&l, 0.025), KL_VUF_OVER_COMPAT);
    ck_assert_int_eq(kl_limits_vuf(&l, 0.031), KL_VUF_OVER_COMPAT | KL_VUF_OVER_SUPPLY);
    ck_assert_int_eq(kl_limits_vuf(&l, NAN), -1);
}
END_TEST

/* NEMA MG 1: the worked figures 480/476/472 V (0.84 %, no derating) and
 * 203/210/212 V (about 2.5 %, derating) fall on either side of 1 %. */
START_TEST(motor_levels)
{
    kl_limits l;
    kl_limits_default(&l);
    ck_assert_int_eq(kl_limits_motor(&l, 0.0084), 0);
    ck_assert_int_eq(kl_limits_motor(&l, 0.025), 1);
    ck_assert_int_eq(kl_limits_motor(&l, 0.06), 2);
    ck_assert_int_eq(kl_limits_motor(&l, NAN), -1);
}
END_TEST

/* Ground relay at half its pickup (common practice) and neutral ampacity. */
START_TEST(shares)
{
    kl_limits l;
    double r;
    kl_limits_default(&l);
    ck_assert_int_eq(kl_limits_share(60, 100, l.relay_share, &r), 1);
    ck_assert_double_eq_tol(r, 0.6, 1e-15);
    ck_assert_int_eq(kl_limits_share(40, 100, l.relay_share, &r), 0);
    ck_assert_int_eq(kl_limits_share(40, 0, l.relay_share, &r), -1);
    ck_assert(isnan(r));
    ck_assert_int_eq(kl_limits_share(229, 230, l.neutral_share, &r), 0);
    ck_assert_int_eq(kl_limits_share(231, 230, l.neutral_share, &r), 1);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("limits");
    TCase *tc = tcase_create("limits");
    tcase_add_test(tc, defaults_are_the_cited_values);
    tcase_add_test(tc, check_rejects_nonsense);
    tcase_add_test(tc, service_classes);
    tcase_add_test(tc, vuf_levels);
    tcase_add_test(tc, motor_levels);
    tcase_add_test(tc, shares);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
