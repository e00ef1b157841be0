/* The demo feeder feeders/demo/quillmere-f3.yaml does what its README promises.
 *
 * The demo is invented, so its figures are not checked against published results; what
 * is checked is that it sits where the brief put it with respect to published limits:
 *  - every bus voltage inside ANSI C84.1 Range A, 0.95-1.05 pu of nominal (ANSI C84.1,
 *    Table 1, service voltage range A on the 120 V base: 114-126 V; table number from memory);
 *  - at least one three-phase bus above the 2 % voltage unbalance factor of EN 50160
 *    (negative- over positive-sequence voltage, 10-minute values, 95 % of the week; from
 *    memory), so
 *    the study has something to report;
 *  - a feeder head of 4-7 MVA (a usual 12.47 kV feeder loading: common practice);
 *  - more load on phase a than on b and c (so the rebalancing advisor has work).
 * VUF is computed here from the phase voltages with the Fortescue transform written out
 * (V2/V1 with a = 1 angle 120 degrees), independently of src/sequence.c. */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <gsl/gsl_errno.h>
#include "kilter/feeder.h"
#include "kilter/flow.h"
#include "kilter/lines.h"
#include "kilter/network.h"

static kl_feeder *F;
static kl_network *N;
static kl_flow_result *R;

static void setup(void)
{
    kl_errors e;
    kl_errors_init(&e);
    kl_flow_options opt;
    kl_flow_options_default(&opt);
    gsl_set_error_handler_off();
    kl_status s = kl_feeder_load(KILTER_SOURCE_DIR "/feeders/demo/quillmere-f3.yaml", &F, &e);
    if (s == KL_OK) s = kl_lines_derive(F, KL_CARSON_APPROX, &e);
    if (s == KL_OK) s = kl_network_build(F, &N, &e);
    if (s == KL_OK) s = kl_flow_result_alloc(N, &R, &e);
    if (s == KL_OK) s = kl_flow_solve(N, &opt, R, &e);
    for (int i = 0; i < e.count; i++) {
        char buf[2048];
        kl_error_format(&e.items[i], buf, sizeof buf);
        fprintf(stderr, "%s\n", buf);
    }
    kl_errors_free(&e);
    ck_assert_msg(s == KL_OK, "demo feeder: %s", kl_status_name(s));
}

static void teardown(void)
{
    kl_flow_result_free(R);
    kl_network_free(N);
    kl_feeder_free(F);
    R = NULL; N = NULL; F = NULL;
}

START_TEST(voltages_inside_range_a)
{
    ck_assert(R->converged);
    for (int b = 0; b < R->nbuses; b++)
        for (int k = 0; k < 3; k++) {
            if (!(R->phases[b] & (1 << k))) continue;
            double pu = cabs(R->v[3 * b + k]) / R->v_base_ln[b];
            ck_assert_msg(pu >= 0.95 && pu <= 1.05, "bus %s phase %c at %.4f pu, outside Range A",
                          F->buses[b].name, 'a' + k, pu);
        }
}
END_TEST

START_TEST(some_bus_above_two_percent_vuf)
{
    const kl_complex a = cexp(I * 2.0 * 3.14159265358979323846 / 3.0);
    double worst = 0;
    int at = -1;
    for (int b = 0; b < R->nbuses; b++) {
        if (R->phases[b] != KL_PH_ABC) continue;
        const kl_complex *v = &R->v[3 * b];
        kl_complex v1 = (v[0] + a * v[1] + a * a * v[2]) / 3.0;
        kl_complex v2 = (v[0] + a * a * v[1] + a * v[2]) / 3.0;
        double vuf = cabs(v2) / cabs(v1);
        if (vuf > worst) { worst = vuf; at = b; }
    }
    ck_assert_msg(worst > 0.02, "largest VUF %.2f %% (at %s): the demo should show one above 2 %%",
                  100 * worst, at >= 0 ? F->buses[at].name : "-");
    ck_assert_msg(worst < 0.05, "largest VUF %.2f %%: implausibly high for a demo", 100 * worst);
}
END_TEST

START_TEST(head_loading_and_phase_a_heaviest)
{
    kl_complex s = R->s_head[0] + R->s_head[1] + R->s_head[2];
    ck_assert_msg(cabs(s) > 4e6 && cabs(s) < 7e6, "feeder head %.0f kVA", cabs(s) / 1e3);
    ck_assert(creal(R->s_head[0]) > 1.3 * creal(R->s_head[1]));
    ck_assert(creal(R->s_head[0]) > 1.3 * creal(R->s_head[2]));
}
END_TEST

int main(void)
{
    Suite *s = suite_create("feeders_demo");
    TCase *tc = tcase_create("quillmere-f3");
    tcase_add_checked_fixture(tc, setup, teardown);
    tcase_add_test(tc, voltages_inside_range_a);
    tcase_add_test(tc, some_bus_above_two_percent_vuf);
    tcase_add_test(tc, head_loading_and_phase_a_heaviest);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? 1 : 0;
}
