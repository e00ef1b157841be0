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
 *  - more load on phase a than on b and c (so the rebalancing advisor has work);
 *  - a residual current at the head, 3I0 = Ia + Ib + Ic summed here from the head
 *    section's phase currents, above half the ground relay's pickup (where the study
 *    flags it) yet below the pickup itself: a ground relay set under the normal load
 *    residual would trip the feeder at peak load (common practice).
 * VUF is computed here from the phase voltages with the Fortescue transform written out
 * (V2/V1 with a = 1 angle 120 degrees), independently of src/sequence.c.  The line
 * constants are the program's default (Carson's complete earth-return series), so the
 * figures are those `kilter flow` and `kilter study` print for the demo. */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <gsl/gsl_errno.h>
#include "harness.h"

static harness H;
static kl_feeder *F;
static kl_flow_result *R;

static void setup(void)
{
    gsl_set_error_handler_off();
    harness_init(&H);
    harness_solve_file(&H, "feeders/demo/quillmere-f3.yaml", KL_CARSON_FULL);
    F = H.f;
    R = H.res;
}

static void teardown(void)
{
    harness_free(&H);
    R = NULL; F = NULL;
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

START_TEST(head_residual_under_the_ground_pickup)
{
    int head = -1, count = 0;
    for (int s = 0; s < F->nsections; s++)
        if (F->sections[s].from == F->source.bus || F->sections[s].to == F->source.bus) {
            head = s;
            count++;
        }
    ck_assert_msg(count == 1, "the demo's source bus should feed one section, it feeds %d", count);
    const kl_complex *i = &R->i[3 * head];
    double residual = cabs(i[0] + i[1] + i[2]), pickup = F->source.relay_pickup_a;
    ck_assert_msg(pickup > 0, "the demo gives no ground relay pickup");
    ck_assert_msg(residual > 0.5 * pickup && residual < pickup,
                  "head residual %.1f A against a %.0f A ground pickup: expected between half and all of it",
                  residual, pickup);
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
    tcase_add_test(tc, head_residual_under_the_ground_pickup);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? 1 : 0;
}
