/* The network build's sweep layout (include/kilter/network.h) on the IEEE
 * 13-node feeder file: positions, parents and the position-ordered copies
 * that the build now writes while it emits branches, checked against the
 * bus-id arrays and against the published feeder's topology.
 *
 * Topology facts (IEEE PES Distribution System Analysis Subcommittee, "IEEE
 * 13 Node Test Feeder" data sheet, kept in tests/ref_ieee13.c; W. H. Kersting,
 * "Radial distribution test feeders", 2001): 652 is fed from 684 by a line of
 * configuration 607 (phase a only), 611 from 684 by one of 605 (phase c
 * only), 634 is the 480 V side of the in-line transformer XFM-1 (4.16 kV :
 * 480 V, grounded wye both sides), and one distributed load lies on the line
 * 632-671. */
#include <check.h>
#include <math.h>
#include <stdlib.h>
#include "harness.h"
#include "ref_ieee13.h"

static harness H;
static kl_feeder *F;
static kl_network *N;

static void setup(void)
{
    harness_init(&H);
    HARNESS_OK(&H, harness_load(&H, "feeders/reference/ieee-13-node.yaml"));
    HARNESS_OK(&H, harness_derive(&H, KL_CARSON_APPROX));
    HARNESS_OK(&H, harness_build(&H));
    F = H.f;
    N = H.net;
}

static void teardown(void)
{
    harness_free(&H);
}

/* network.h: order[] is the source, then the to-bus of each tree branch in
 * branch order; pos is its inverse; parents come before children. */
START_TEST(test_positions)
{
    ck_assert_int_eq(N->order[0], N->source);
    ck_assert_int_eq(N->pos[N->source], 0);
    ck_assert_int_eq(N->parent[N->source], -1);
    ck_assert_int_eq(N->nbranches + 1, N->nbuses); /* radial: one branch per bus but the source */
    int *hits = calloc((size_t)N->nbuses, sizeof(int));
    ck_assert_ptr_nonnull(hits);
    for (int i = 0; i < N->nbuses; i++) {
        int b = N->order[i];
        ck_assert(b >= 0 && b < N->nbuses);
        hits[b]++;
        ck_assert_int_eq(N->pos[b], i);
        ck_assert_int_eq(N->pos_phases[i], N->phases[b]);
        ck_assert(N->pos_inv_base[i] == 1.0 / N->v_base_ln[b]);
    }
    for (int b = 0; b < N->nbuses; b++)
        ck_assert_int_eq(hits[b], 1);
    free(hits);
    for (int k = 0; k < N->nbranches; k++) {
        ck_assert_int_eq(N->order[k + 1], N->br_to[k]);
        ck_assert_int_eq(N->parent[N->br_to[k]], k);
        ck_assert_int_eq(N->br_from_pos[k], N->pos[N->br_from[k]]);
        ck_assert_int_lt(N->br_from_pos[k], k + 1);
        ck_assert_int_eq(N->br_phases[k] & ~N->phases[N->br_from[k]], 0);
    }
}
END_TEST

/* The published topology: phases and bases of named buses, and the one
 * internal node of the distributed load on 632-671. */
START_TEST(test_published_topology)
{
    int b652 = kl_feeder_find_bus(F, "652"), b611 = kl_feeder_find_bus(F, "611");
    int b634 = kl_feeder_find_bus(F, "634"), b684 = kl_feeder_find_bus(F, "684");
    int b671 = kl_feeder_find_bus(F, "671"), b632 = kl_feeder_find_bus(F, "632");
    ck_assert(b652 >= 0 && b611 >= 0 && b634 >= 0 && b684 >= 0 && b671 >= 0 && b632 >= 0);
    ck_assert_int_eq(N->phases[b652], ref_ieee13_config_find("607")->phases); /* a */
    ck_assert_int_eq(N->phases[b611], ref_ieee13_config_find("605")->phases); /* c */
    ck_assert_int_eq(N->br_from[N->parent[b652]], b684);
    ck_assert_int_eq(N->br_from[N->parent[b611]], b684);
    /* 480 V line-to-line on the low side of XFM-1 */
    const double lv = 1000 * ref_ieee13_xfm1.kv_low, hv = 1000 * ref_ieee13_xfm1.kv_high;
    ck_assert(fabs(N->v_base_ln[b634] - lv / sqrt(3.0)) < 1e-9 * lv);
    ck_assert(fabs(N->v_base_ln[b671] - hv / sqrt(3.0)) < 1e-9 * hv);
    /* the distributed load's internal node sits between 632 and 671 */
    ck_assert_int_eq(N->nbuses, N->nfeeder_buses + 1);
    int mid = N->br_from[N->parent[b671]];
    ck_assert_int_ge(mid, N->nfeeder_buses);
    ck_assert_int_eq(N->br_from[N->parent[mid]], b632);
    int s = kl_feeder_find_section(F, "632-671");
    ck_assert_int_ge(s, 0);
    ck_assert_int_eq(N->sec_first[s], N->parent[mid]);
    ck_assert_int_eq(N->sec_last[s], N->parent[b671]);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("network_layout");
    TCase *tc = tcase_create("layout");
    tcase_add_checked_fixture(tc, setup, teardown);
    tcase_add_test(tc, test_positions);
    tcase_add_test(tc, test_published_topology);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
