/* The bundled IEEE 4-node feeder files (feeders/reference/ieee-4-node-*.yaml)
 * solved and compared with the published node voltages: the transformer
 * connections through the loader, the line constants (Carson's equations in
 * the approximate form) and the load flow.
 *
 * Source of every expected value: IEEE PES Distribution System Analysis
 * Subcommittee, "IEEE 4 Node Test Feeder" (revision of 2006-09-19), section
 * "Solutions", step-down cases; the tables are kept once in tests/ref_ieee4.c
 * (checked against /work/shared/reference/ieee-4-node.md).  Companion paper
 * W. H. Kersting, "Radial distribution test feeders", IEEE PES Winter
 * Meeting 2001.
 *
 * The line is not transposed, so even the balanced load gives unequal phase
 * voltages at node 4; matching all three phases in magnitude and angle
 * therefore checks the phasing of the line, the Carson/Kron matrices and the
 * bank. */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <gsl/gsl_errno.h>
#include "harness.h"
#include "ref_ieee4.h"

#define DEG (3.14159265358979323846 / 180.0)

static double angle_diff(double a, double b)
{
    return fabs(fmod(a - b + 540.0, 360.0) - 180.0);
}

/* Solves the case's file and compares each published row: magnitude within
 * rel of the published volts and angle within tol_deg, both strictly. */
static void check_case(const ref_ieee4_case *c, double rel, double tol_deg)
{
    char path[512];
    snprintf(path, sizeof path, "feeders/reference/%s", c->file);
    gsl_set_error_handler_off();
    harness h;
    harness_init(&h);
    harness_solve_file(&h, path, KL_CARSON_APPROX);
    const kl_feeder *f = h.f;
    const kl_flow_result *r = h.res;
    for (int k = 0; k < c->nrows; k++) {
        const ref_ieee4_row *row = &c->rows[k];
        int b = kl_feeder_find_bus(f, row->node);
        ck_assert_int_ge(b, 0);
        for (int p = 0; p < 3; p++) {
            kl_complex v = r->v[3 * b + p];
            double mag = cabs(v), ang = carg(v) / DEG;
            ck_assert_msg(fabs(mag / row->volts[p] - 1) < rel, "%s node %s phase %c: %.1f V, "
                          "published %.1f", c->file, row->node, 'a' + p, mag, row->volts[p]);
            ck_assert_msg(angle_diff(ang, row->deg[p]) < tol_deg, "%s node %s phase %c: %.2f deg, "
                          "published %.1f", c->file, row->node, 'a' + p, ang, row->deg[p]);
        }
    }
    harness_free(&h);
}

/* Grounded-wye/grounded-wye step-down (12.47/4.16 kV), balanced load:
 * published to 4 significant digits and 0.1 degree: 0.1 % and 0.1 degree. */
START_TEST(test_gry_gry_balanced)
{
    check_case(&ref_ieee4_gry_gry_balanced, 0.001, 0.1);
}
END_TEST

/* The same bank with the unbalanced load. */
START_TEST(test_gry_gry_unbalanced)
{
    check_case(&ref_ieee4_gry_gry_unbalanced, 0.001, 0.1);
}
END_TEST

/* Delta/grounded-wye step-down, unbalanced load: the 30-degree shift of the
 * low side at node 4.  (Checked to 0.5 % while its magnitudes were recalled;
 * confirmed against the published table, now 0.1 % like the others.) */
START_TEST(test_delta_gry_unbalanced)
{
    check_case(&ref_ieee4_delta_gry_unbalanced, 0.001, 0.1);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("feeders_ieee4");
    TCase *tc = tcase_create("ieee4-files");
    tcase_add_test(tc, test_gry_gry_balanced);
    tcase_add_test(tc, test_gry_gry_unbalanced);
    tcase_add_test(tc, test_delta_gry_unbalanced);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
