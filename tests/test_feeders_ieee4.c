/* The bundled IEEE 4-node file (grounded-wye/grounded-wye step-down bank, balanced load)
 * solved and compared with the published node voltages.
 *
 * Source: IEEE PES Distribution System Analysis Subcommittee, 4-node test feeder results,
 * step-down GrY-GrY case with balanced load (from memory: the voltages below are recalled,
 * not copied from the sheet).  The line is not transposed, so even the balanced load gives
 * unequal phase voltages at node 4; matching all three phases in magnitude and angle
 * therefore checks the phasing of the line, the Carson/Kron matrices and the bank. */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <gsl/gsl_errno.h>
#include "kilter/feeder.h"
#include "kilter/flow.h"
#include "kilter/lines.h"
#include "kilter/network.h"

START_TEST(gry_gry_balanced_matches_published)
{
    /* Published (from memory): volts line-to-neutral / degrees at nodes 2, 3, 4. */
    static const struct { const char *bus; double v[3], a[3]; } pub[] = {
        {"2", {7107, 7140, 7121}, {-0.3, -120.3, 119.6}},
        {"3", {2247.6, 2269, 2256}, {-3.7, -123.5, 116.4}},
        {"4", {1918, 2061, 1981}, {-9.1, -128.3, 110.9}},
    };
    kl_errors e;
    kl_errors_init(&e);
    kl_feeder *f = NULL;
    kl_network *net = NULL;
    kl_flow_result *r = NULL;
    kl_flow_options opt;
    kl_flow_options_default(&opt);
    gsl_set_error_handler_off();
    ck_assert_int_eq(kl_feeder_load(KILTER_SOURCE_DIR "/feeders/reference/ieee-4-node-gry-gry-balanced.yaml",
                                    &f, &e), KL_OK);
    ck_assert_int_eq(kl_lines_derive(f, KL_CARSON_APPROX, &e), KL_OK);
    ck_assert_int_eq(kl_network_build(f, &net, &e), KL_OK);
    ck_assert_int_eq(kl_flow_result_alloc(net, &r, &e), KL_OK);
    ck_assert_int_eq(kl_flow_solve(net, &opt, r, &e), KL_OK);
    /* Published to 4 significant digits and 0.1 degree: 0.1 % and 0.1 degree. */
    for (size_t k = 0; k < sizeof pub / sizeof pub[0]; k++) {
        int b = kl_feeder_find_bus(f, pub[k].bus);
        ck_assert_int_ge(b, 0);
        for (int p = 0; p < 3; p++) {
            kl_complex v = r->v[3 * b + p];
            double deg = carg(v) * 180.0 / 3.14159265358979323846;
            ck_assert_msg(fabs(cabs(v) - pub[k].v[p]) < 1e-3 * pub[k].v[p] && fabs(deg - pub[k].a[p]) < 0.1,
                          "node %s phase %c: %.1f V / %.2f deg, published %.1f / %.1f", pub[k].bus,
                          'a' + p, cabs(v), deg, pub[k].v[p], pub[k].a[p]);
        }
    }
    kl_flow_result_free(r);
    kl_network_free(net);
    kl_feeder_free(f);
    kl_errors_free(&e);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("feeders_ieee4");
    TCase *tc = tcase_create("ieee4-file");
    tcase_add_test(tc, gry_gry_balanced_matches_published);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? 1 : 0;
}
