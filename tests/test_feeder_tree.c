/* The feeder tree (src/model/feeder_tree.c): order, parents, live mask,
 * depth and distance, and loop-closing links.
 *
 * Reference: the IEEE 13-node test feeder's published topology and line
 * lengths (IEEE PES Distribution System Analysis Subcommittee, "IEEE 13 Node
 * Test Feeder" data sheet, "Line Segment Data", kept in tests/ref_ieee13.c):
 * every bus fed from the source, each line segment's far bus fed through
 * that segment, and a bus's distance from the source the sum of the segment
 * lengths along its path (devices: the regulator 650-rg60 and the switch
 * 671-692 count no length).  The small hand-built cases are checked against
 * the definition of a breadth-first tree (by construction). */
#include <check.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "harness.h"
#include "kl_model.h"
#include "ref_ieee13.h"

#define FT 0.3048 /* m per international foot (NIST SP 811, exact) */

static harness H;

static int bus_of(const kl_feeder *f, const char *name)
{
    int b = kl_feeder_find_bus(f, name);
    ck_assert_msg(b >= 0, "bus %s", name);
    return b;
}

/* Data-sheet length of the segment joining buses a and b, ft; 0 when none
 * (a device). */
static double segment_ft(const kl_feeder *f, int a, int b)
{
    for (int k = 0; k < REF_IEEE13_NSEGMENTS; k++) {
        const ref_ieee13_segment *s = &ref_ieee13_segments[k];
        int x = bus_of(f, s->from), y = bus_of(f, s->to);
        if ((x == a && y == b) || (x == b && y == a))
            return s->ft;
    }
    return 0;
}

START_TEST(ieee13_tree)
{
    harness_init(&H);
    HARNESS_OK(&H, harness_load(&H, "feeders/reference/ieee-13-node.yaml"));
    const kl_feeder *f = H.f;
    const kl_feeder_tree *t = f->tree;
    ck_assert_ptr_nonnull(t);
    ck_assert_int_eq(t->nlive, f->nbuses); /* no open switch: all energized */
    ck_assert_int_eq(t->nreached, f->nbuses);
    ck_assert_int_eq(t->nlinks, 0);
    ck_assert_int_eq(t->order[0], bus_of(f, "650"));
    for (int i = 0; i < t->nreached; i++) {
        ck_assert_int_eq(t->pos[t->order[i]], i);
        if (i > 0) {
            ck_assert_int_lt(t->up[i], i);
            ck_assert_int_ge(t->up[i], t->up[i - 1]);
        }
    }
    /* each published segment feeds its far bus */
    for (int k = 0; k < REF_IEEE13_NSEGMENTS; k++) {
        const ref_ieee13_segment *s = &ref_ieee13_segments[k];
        int a = bus_of(f, s->from), b = bus_of(f, s->to), e = kl_feeder_tree_psec(t, b);
        ck_assert_int_ge(e, 0);
        ck_assert_int_eq(kl_feeder_tree_pbus(t, b), a);
        ck_assert((f->sections[e].from == a && f->sections[e].to == b) ||
                  (f->sections[e].from == b && f->sections[e].to == a));
    }
    int *depth = malloc(sizeof(int) * (size_t)f->nbuses);
    double *dist = malloc(sizeof(double) * (size_t)f->nbuses);
    ck_assert(depth && dist);
    kl_feeder_tree_distances(t, f, depth, dist);
    for (int b = 0; b < f->nbuses; b++) {
        double ft = 0;
        int n = 0;
        for (int v = b; kl_feeder_tree_pbus(t, v) >= 0; v = kl_feeder_tree_pbus(t, v), n++)
            ft += segment_ft(f, kl_feeder_tree_pbus(t, v), v);
        ck_assert_int_eq(depth[b], n);
        ck_assert_msg(fabs(dist[b] - ft * FT) < 1e-9, "bus %s: %g m, sheet %g ft",
                      f->buses[b].name, dist[b], ft);
    }
    /* 675: rg60-632 2000 ft, 632-671 2000 ft, 692-675 500 ft (sheet) */
    ck_assert(fabs(dist[bus_of(f, "675")] - 4500 * FT) < 1e-9);
    ck_assert_int_eq(depth[bus_of(f, "675")], 5);
    free(depth);
    free(dist);
    harness_free(&H);
}
END_TEST

/* 0-1-2-3 with a tie 3-1 and an open switch 2-4 to 4-5, a line 5-4 written
 * far end first. */
static void small_feeder(kl_feeder *f, kl_bus *bus, kl_section *sec, int radial)
{
    static const int from[6] = {0, 1, 2, 3, 2, 5}, to[6] = {1, 2, 3, 1, 4, 4};
    static const char *names[6] = {"s01", "s12", "s23", "tie", "open", "s45"};
    memset(bus, 0, 6 * sizeof *bus);
    for (int s = 0; s < 6; s++)
        sec[s] = (kl_section){.name = names[s], .kind = KL_SEC_LINE, .from = from[s], .to = to[s],
                              .phases = KL_PH_ABC, .length_m = 10.0, .closed = s != 4,
                              .device = -1};
    sec[4].kind = KL_SEC_SWITCH;
    *f = (kl_feeder){.buses = bus, .nbuses = 6, .sections = sec, .nsections = 6, .radial = radial};
    f->source.bus = 0;
}

START_TEST(links_and_open_switch)
{
    kl_feeder f;
    kl_bus bus[6];
    kl_section sec[6];
    kl_errors err;
    kl_errors_init(&err);
    kl_feeder_tree *t = NULL;
    small_feeder(&f, bus, sec, 0);
    ck_assert_int_eq(kl_feeder_tree_build(&f, &t, &err), KL_OK);
    ck_assert_int_eq(t->nlive, 4);    /* 0 1 2 3 */
    ck_assert_int_eq(t->nreached, 6); /* 4 and 5 beyond the open switch */
    ck_assert_int_eq(t->nlinks, 1);
    /* breadth-first, sections in file order: bus 1 reaches 2 (s12) and 3
     * (the tie), so s23, met from 2 with 3 reached, closes the loop */
    ck_assert_int_eq(t->links[0], 2);
    ck_assert_int_eq(kl_feeder_tree_psec(t, 3), 3);
    ck_assert(kl_feeder_tree_live(t, 3) && !kl_feeder_tree_live(t, 4) && !kl_feeder_tree_live(t, 5));
    ck_assert_int_eq(t->sec[t->pos[4]], 4); /* reached through the open switch */
    ck_assert_int_eq(t->sec[t->pos[5]], 5);
    ck_assert_int_eq(kl_feeder_tree_psec(t, 4), -1); /* not energized: no feeding section */
    kl_feeder_tree_free(t);
    ck_assert_int_eq(err.count, 0);
    /* the same loop in a radial feeder: an error naming the section */
    small_feeder(&f, bus, sec, 1);
    ck_assert_int_eq(kl_feeder_tree_build(&f, &t, &err), KL_ETOPO);
    ck_assert_int_eq(t->nlinks, 0);
    ck_assert_int_eq(err.count, 1);
    ck_assert_str_eq(err.items[0].element, "section \"s23\"");
    ck_assert_ptr_nonnull(strstr(err.items[0].message, "closes a loop"));
    kl_feeder_tree_free(t);
    kl_errors_free(&err);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("feeder_tree");
    TCase *tc = tcase_create("tree");
    tcase_add_test(tc, ieee13_tree);
    tcase_add_test(tc, links_and_open_switch);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
