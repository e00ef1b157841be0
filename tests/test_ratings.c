/* Rated voltages that do not fit the bus (kl_feeder_ratings_check): a
 * transformer, a regulator's PT and a capacitor's units against the nominal
 * voltage of the bus they sit on.  Beyond 10 % the loader refuses the feeder
 * naming both voltages, the element and its position; beyond 5 % the check
 * reports a warning and the feeder loads.
 *
 * References: a distribution transformer's no-load taps span +-5 % in
 * 2.5 % steps, so a rating more than 5 % off needs taps and one more than
 * 10 % off cannot be brought to nominal (common practice); a regulator's PT
 * brings its rated voltage to 120 V (pt_ratio x 120 V, common practice;
 * the IEEE 13-node feeder's regulator, 20 x 120 V = 2.4 kV on 4.16 kV / sqrt 3,
 * tests/ref_ieee13.c); a capacitor's var scale with the square of the
 * voltage (Q = V^2 / X_c, common practice). */
#include <check.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "harness.h"

static const char *FMT =
    "kilter-feeder: 1\n"
    "name: Ratings fit\n"
    "source: {bus: sub, nominal_voltage: %s, regulated_voltage: 1.0 pu}\n"
    "constructions:\n"
    "  - {name: m3, phases: abc, impedance: {aa: 0.3 + j1 ohm/mi, bb: 0.3 + j1 ohm/mi, cc: 0.3 + j1 ohm/mi}}\n"
    "sections:\n"
    "  - {name: s1, from: sub, to: b1, length: 2000 ft, construction: m3}\n"
    "  - {name: r1, from: b1, to: b2, regulator: reg}\n"
    "  - {name: t1, from: b2, to: b3, transformer: xf}\n"
    "transformers:\n"
    "  - {name: xf, rating: 1000 kVA, high: {voltage: %s, connection: grounded-wye},\n"
    "     low: {voltage: 4.16 kV, connection: grounded-wye}, resistance: 1 %%, reactance: 6 %%}\n"
    "regulators:\n"
    "  - {name: reg, control: fixed, pt_ratio: %s}\n"
    "capacitors:\n"
    "  - {name: cap, bus: b1, reactive_power: {a: 100 kvar, b: 100 kvar, c: 100 kvar}, rated_voltage: %s}\n"
    "loads:\n"
    "  - {name: l, bus: b3, power: {a: 100 + j50 kVA, b: 100 + j50 kVA, c: 100 + j50 kVA}}\n";

static kl_status load(harness *h, const char *src_kv, const char *xf_kv, const char *pt, const char *cap_kv)
{
    char text[4096];
    snprintf(text, sizeof text, FMT, src_kv, xf_kv, pt, cap_kv);
    harness_init(h);
    return harness_load_text(h, text, "fit.yaml");
}

static int has_error(const harness *h, int line, const char *element, const char *a, const char *b)
{
    for (int i = 0; i < h->err.count; i++) {
        const kl_error_item *it = &h->err.items[i];
        if (it->line == line && strcmp(it->element, element) == 0 && strstr(it->message, a) &&
            strstr(it->message, b))
            return 1;
    }
    return 0;
}

/* The case: a 12.47 kV transformer on a 24.94 kV feeder (regulator
 * and capacitor fitted to 24.94 kV: PT 120, units 14.4 kV). */
START_TEST(test_transformer_on_twice_its_voltage)
{
    harness h;
    ck_assert_int_eq(load(&h, "24.94 kV", "12.47 kV", "120", "14.4 kV"), KL_EINPUT);
    ck_assert_int_eq(h.err.count, 1);
    ck_assert_msg(has_error(&h, 9, "section \"t1\"", "rated 12.47 kV", "nominal 24.94 kV"), "%s",
                  harness_first_error(&h));
    ck_assert_ptr_nonnull(strstr(h.err.items[0].message, "transformer 'xf'"));
    ck_assert_int_eq(h.err.items[0].col, 5);
    harness_free(&h);
}
END_TEST

/* A regulator whose PT is for 12.47 kV (60 x 120 V = 7.2 kV) on 24.94 kV, and
 * 7.2 kV capacitor units on the same bus: both refused. */
START_TEST(test_regulator_and_capacitor_on_twice_their_voltage)
{
    harness h;
    ck_assert_int_eq(load(&h, "24.94 kV", "24.94 kV", "60", "7.2 kV"), KL_EINPUT);
    ck_assert_int_eq(h.err.count, 2);
    ck_assert_msg(has_error(&h, 8, "section \"r1\"", "rated 7.2 kV line-to-neutral", "nominal 14.4 kV"), "%s",
                  harness_first_error(&h));
    ck_assert(has_error(&h, 16, "capacitor \"cap\"", "rated 7.2 kV line-to-neutral", "nominal 14.4 kV"));
    harness_free(&h);
}
END_TEST

/* Within 5 %: nothing.  12.47 kV on 13.2 kV (5.5 % off) and 7.62 kV units on a
 * 12.47 kV feeder (7.2 kV, 5.8 % off): the feeder loads, the check warns of
 * both, and the capacitor gives (7.2 / 7.62)^2 of its rating. */
START_TEST(test_off_by_a_tap_range_warns)
{
    harness h;
    ck_assert_int_eq(load(&h, "12.47 kV", "12.47 kV", "60", "7.2 kV"), KL_OK);
    ck_assert_int_eq(kl_feeder_ratings_check(h.f, KL_RATING_WARN_TOL, &h.err), 0);
    ck_assert_double_eq_tol(h.f->capacitors[0].q_var[0], 100e3 * pow(12470 / sqrt(3) / 7200, 2), 1e-6);
    harness_free(&h);

    ck_assert_int_eq(load(&h, "13.2 kV", "12.47 kV", "63.5", "7.62 kV"), KL_OK);
    ck_assert_int_eq(kl_feeder_ratings_check(h.f, KL_RATING_WARN_TOL, &h.err), 1);
    ck_assert(has_error(&h, 9, "section \"t1\"", "rated 12.47 kV", "nominal 13.2 kV"));
    harness_free(&h);

    ck_assert_int_eq(load(&h, "12.47 kV", "12.47 kV", "60", "7.62 kV"), KL_OK);
    ck_assert_int_eq(kl_feeder_ratings_check(h.f, KL_RATING_WARN_TOL, &h.err), 1);
    ck_assert(has_error(&h, 16, "capacitor \"cap\"", "rated 7.62 kV", "nominal 7.2 kV"));
    ck_assert_double_eq_tol(h.f->capacitors[0].q_var[1], 100e3 * pow(12470 / sqrt(3) / 7620, 2), 1e-6);
    harness_free(&h);
}
END_TEST

/* The bundled feeders fit: the IEEE 13-node regulator's PT (20 x 120 V on
 * 4.16 kV) and XFM-1 (4.16 kV high winding), the demo's banks and units. */
START_TEST(test_bundled_feeders_fit)
{
    static const char *const files[] = {"feeders/reference/ieee-13-node.yaml", "feeders/demo/quillmere-f3.yaml",
                                        "feeders/reference/ieee-4-node-delta-gry-unbalanced.yaml"};
    for (int i = 0; i < 3; i++) {
        harness h;
        harness_init(&h);
        HARNESS_OK(&h, harness_load(&h, files[i]));
        ck_assert_int_eq(kl_feeder_ratings_check(h.f, KL_RATING_WARN_TOL, &h.err), 0);
        harness_free(&h);
    }
}
END_TEST

int main(void)
{
    Suite *s = suite_create("ratings");
    TCase *tc = tcase_create("fit");
    tcase_add_test(tc, test_transformer_on_twice_its_voltage);
    tcase_add_test(tc, test_regulator_and_capacitor_on_twice_their_voltage);
    tcase_add_test(tc, test_off_by_a_tap_range_warns);
    tcase_add_test(tc, test_bundled_feeders_fit);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int nf = srunner_ntests_failed(sr);
    srunner_free(sr);
    return nf ? 1 : 0;
}
