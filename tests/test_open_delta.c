/* Open-delta step-voltage regulators as a bank of two units named by the
 * phase pairs they connect (src/io/loader_sections.c, src/flow/regulator.c).
 *
 * 1. The file: units: [ab, cb]; the bus below keeps three phases; input that
 *    does not describe an open delta is refused with its position.
 * 2. The model: at no load V_ab' = a_ab V_AB and V_cb' = a_cb V_CB, phase b
 *    passes through (Kersting, "Distribution System Modeling and Analysis",
 *    ch. 7, the open-delta connection, from memory).
 * 3. The published case: the IEEE PES 37-node test feeder
 *    (feeders/reference/ieee-37-node.yaml, all data from memory; nothing of it
 *    is in /work/shared/reference), solved from tap 0 under automatic control:
 *    the unit across c-b lands on the published tap 4 and the regulated
 *    V_bc = 1.0250 pu (both from memory); each unit's relay voltage is the one
 *    of the published compensator wiring (the unit across a-b reads V_ab with
 *    I_a, the unit across c-b V_cb with I_c), computed here by hand from the
 *    solved voltages and currents, and settles inside the band.
 *    Not checked: the recalled published tap AB 7 (regulated V_ab 1.0437 pu).
 *    kilter lands on 5.  With the recalled settings (R 1.5 V, X 0.75 V, CT
 *    350 A, PT 40, level 122 V) tap 7 needs a compensator drop near 3.2 V,
 *    more than |R + jX| I_a / CT (about 1.8 V at the solved 367 A) can give
 *    at any angle, so a recalled setting or that tap is doubtful until the
 *    published sheet can be read. */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <string.h>
#include <unistd.h>
#include "harness.h"
#include "kl_flow.h"

static const char *HEAD =
    "kilter-feeder: 1\n"                                                           /* 1 */
    "name: Osterby regulator check\n"                                              /* 2 */
    "source: {bus: sub, nominal_voltage: 4.8 kV, regulated_voltage: 1.0 pu}\n"     /* 3 */
    "constructions:\n"                                                             /* 4 */
    "  - {name: cable, phases: abc, impedance: {aa: 0.5 + j0.3 ohm/mi, bb: 0.5 + j0.3 ohm/mi, "
    "cc: 0.5 + j0.3 ohm/mi, ab: 0.15 + j0.05 ohm/mi, bc: 0.15 + j0.05 ohm/mi, ac: 0.12 + j0.04 ohm/mi}}\n"
    "sections:\n"                                                                  /* 6 */
    "  - {name: reg, from: sub, to: rg%s, regulator: rg1}\n"                       /* 7 */
    "  - {name: main, from: rg, to: b1, length: 2000 ft, construction: cable}\n"   /* 8 */
    "loads:\n"                                                                     /* 9 */
    "  - {name: mill, bus: b1, connection: delta, power: {ab: 300 + j100 kVA, bc: 200 + j80 kVA, "
    "ca: 250 + j90 kVA}}\n"                                                        /* 10 */
    "regulators:\n"                                                                /* 11 */
    "  - name: rg1\n"                                                              /* 12 */
    "    control: fixed\n";                                                        /* 13 */

static kl_errors err;
static kl_feeder *fd;

/* The feeder with the section's extra text and the regulator's lines from 14 on. */
static kl_status load(const char *sec_extra, const char *reg_lines, char *text, size_t n)
{
    char head[2048];
    snprintf(head, sizeof head, HEAD, sec_extra);
    snprintf(text, n, "%s%s", head, reg_lines);
    kl_errors_clear(&err);
    kl_feeder_free(fd);
    fd = NULL;
    return kl_feeder_load_buffer(text, strlen(text), "t.yaml", &fd, &err);
}

static void setup(void)
{
    kl_errors_init(&err);
    fd = NULL;
}

static void teardown(void)
{
    kl_feeder_free(fd);
    kl_errors_free(&err);
}

/* 1-based column of needle on line `line` of text. */
static int col_of(const char *text, int line, const char *needle)
{
    const char *p = text, *end, *hit;
    for (int l = 1; l < line && p; l++)
        if ((p = strchr(p, '\n')))
            p++;
    ck_assert_ptr_nonnull(p);
    end = strchr(p, '\n');
    hit = strstr(p, needle);
    ck_assert_msg(hit && (!end || hit < end), "'%s' not on line %d", needle, line);
    return (int)(hit - p) + 1;
}

/* An error at line:col (col 0: any) of t.yaml whose message holds every word. */
static void expect_error(int line, int col, ...)
{
    for (int i = 0; i < err.count; i++) {
        const kl_error_item *it = &err.items[i];
        va_list ap;
        const char *w;
        int ok = it->line == line && (col == 0 || it->col == col) && strcmp(it->file, "t.yaml") == 0;
        va_start(ap, col);
        while (ok && (w = va_arg(ap, const char *)))
            ok = strstr(it->message, w) != NULL;
        va_end(ap);
        if (ok)
            return;
    }
    for (int i = 0; i < err.count; i++) {
        char buf[1400];
        kl_error_format(&err.items[i], buf, sizeof buf);
        fprintf(stderr, "  %s\n", buf);
    }
    ck_abort_msg("no error at %d:%d", line, col);
}

/* The bank in the new form loads, passes three phases to the bus below (so
 * the three-phase cable below is accepted), and keeps its units ab and cb. */
START_TEST(units_named_by_pairs)
{
    char t[4096];
    ck_assert_int_eq(load("", "    connection: open-delta\n    units: [ab, cb]\n"
                              "    taps: {ab: 3, cb: -2}\n", t, sizeof t), KL_OK);
    const kl_regulator *g = &fd->regulators[0];
    ck_assert_int_eq(g->phases, KL_PH_A | KL_PH_C);
    ck_assert_int_eq(g->shared, KL_PH_B);
    ck_assert_int_eq(g->tap[0], 3);
    ck_assert_int_eq(g->tap[2], -2);
    ck_assert_int_eq(fd->buses[kl_feeder_find_bus(fd, "rg")].phases, KL_PH_ABC);
    ck_assert_int_eq(fd->buses[kl_feeder_find_bus(fd, "b1")].phases, KL_PH_ABC);
}
END_TEST

/* Inconsistent input, each refused at its position. */
START_TEST(inconsistent_refused)
{
    char t[4096];
    /* the case: open delta with three phases */
    ck_assert_int_eq(load("", "    connection: open-delta\n    phases: abc\n", t, sizeof t), KL_EINPUT);
    expect_error(15, col_of(t, 15, "abc"), "units: [ab, cb]", NULL);
    expect_error(12, 0, "needs 'units'", NULL);
    /* two phases (the old way of naming the units) */
    ck_assert_int_eq(load("", "    connection: open-delta\n    phases: ab\n", t, sizeof t), KL_EINPUT);
    expect_error(15, col_of(t, 15, "ab"), "not by 'phases'", NULL);
    /* units that share no phase */
    ck_assert_int_eq(load("", "    connection: open-delta\n    units: [ab, bc]\n", t, sizeof t), KL_EINPUT);
    expect_error(15, col_of(t, 15, "["), "share one phase", NULL);
    /* one unit; a unit that is no pair */
    ck_assert_int_eq(load("", "    connection: open-delta\n    units: [ab]\n", t, sizeof t), KL_EINPUT);
    expect_error(15, col_of(t, 15, "["), "two units", NULL);
    ck_assert_int_eq(load("", "    connection: open-delta\n    units: [ab, bb]\n", t, sizeof t), KL_EINPUT);
    expect_error(15, col_of(t, 15, "bb"), "'bb'", NULL);
    /* settings keyed by phase letters instead of the units */
    ck_assert_int_eq(load("", "    connection: open-delta\n    units: [ab, cb]\n    taps: {a: 3}\n",
                          t, sizeof t), KL_EINPUT);
    expect_error(16, col_of(t, 16, "a: 3"), "'a'", NULL);
    ck_assert_int_eq(load("", "    connection: open-delta\n    units: [ab, cb]\n    monitored: [ab, bc]\n",
                          t, sizeof t), KL_EINPUT);
    expect_error(16, col_of(t, 16, "bc"), "not one of this bank's units", NULL);
    /* units on a wye bank; a closed delta of two units */
    ck_assert_int_eq(load("", "    connection: wye\n    units: [ab, cb]\n", t, sizeof t), KL_EINPUT);
    expect_error(15, col_of(t, 15, "["), "for open-delta banks", NULL);
    ck_assert_int_eq(load("", "    connection: closed-delta\n    phases: ab\n", t, sizeof t), KL_EINPUT);
    expect_error(15, col_of(t, 15, "ab"), "three units", NULL);
    /* the section below an open delta cannot drop a phase */
    ck_assert_int_eq(load(", phases: ab", "    connection: open-delta\n    units: [ab, cb]\n", t, sizeof t),
                     KL_EINPUT);
    expect_error(7, 0, "all three phases", NULL);
}
END_TEST

/* At no load the units scale their own line-to-line voltages and phase b
 * passes through: V_ab' = a_ab V_AB, V_cb' = a_cb V_CB, V_b' = V_B (Kersting
 * ch. 7, from memory); a = 1 + 0.00625 tap. */
START_TEST(no_load_ratios)
{
    char t[4096];
    snprintf(t, sizeof t, HEAD, "");
    char *cut = strstr(t, "loads:\n");
    snprintf(cut, sizeof t - (size_t)(cut - t),
             "regulators:\n  - {name: rg1, control: fixed, connection: open-delta, units: [ab, cb], "
             "taps: {ab: 8, cb: -4}}\n");
    harness h;
    harness_init(&h);
    harness_solve_text(&h, t, "no-load", KL_CARSON_FULL);
    const double complex *vs = h.res->v + 3 * kl_feeder_find_bus(h.f, "sub");
    const double complex *vo = h.res->v + 3 * kl_feeder_find_bus(h.f, "rg");
    ck_assert(cabs((vo[0] - vo[1]) - 1.05 * (vs[0] - vs[1])) < 1e-9 * cabs(vs[0]));
    ck_assert(cabs((vo[2] - vo[1]) - 0.975 * (vs[2] - vs[1])) < 1e-9 * cabs(vs[0]));
    ck_assert(cabs(vo[1] - vs[1]) < 1e-9 * cabs(vs[0]));
    harness_free(&h);
}
END_TEST

/* Relay voltage of open-delta unit p sharing q, on the 120 V base, with the
 * published wiring (V_pq with I_p): V_pq / PT - (R + jX) I_p / CT, from the
 * solved voltages and the regulator's load-side currents. */
static double relay(const harness *h, int p, int q)
{
    const kl_regulator *g = &h->f->regulators[0];
    int k = kl_feeder_find_section(h->f, "reg"), b = kl_feeder_find_bus(h->f, "rg");
    const double complex *v = h->res->v + 3 * b, *i = h->res->i_recv + 3 * k;
    return cabs((v[p] - v[q]) / g->pt_ratio - (g->ldc_r_v[p] + I * g->ldc_x_v[p]) * i[p] / g->ct_primary_a);
}

START_TEST(ieee37_taps_and_voltages)
{
    for (int solver = 0; solver < 2; solver++) {
        harness h;
        harness_init(&h);
        HARNESS_OK(&h, harness_load(&h, "feeders/reference/ieee-37-node.yaml"));
        HARNESS_OK(&h, harness_derive(&h, KL_CARSON_FULL));
        HARNESS_OK(&h, harness_build(&h));
        kl_flow_options opt;
        kl_flow_options_default(&opt);
        opt.solver = solver ? KL_SOLVER_NODAL : KL_SOLVER_SWEEP;
        HARNESS_OK(&h, harness_solve(&h, &opt));
        /* published final tap CB 4 (from memory); no unit on the shared phase */
        ck_assert_int_eq(h.res->tap[2], 4);
        ck_assert_int_eq(h.res->tap[1], 0);
        /* the regulated V_bc at the bank's output: 1.0250 pu published (from
         * memory); V_ab = (1 + 0.00625 tap_ab) V_AB, the source at 1.0 pu */
        const double complex *v = h.res->v + 3 * kl_feeder_find_bus(h.f, "rg");
        ck_assert_double_eq_tol(cabs(v[1] - v[2]) / 4800.0, 1.0250, 0.00006);
        ck_assert_double_eq_tol(cabs(v[0] - v[1]) / 4800.0, 1.0 + 0.00625 * h.res->tap[0], 1e-6);
        /* the relays as the published wiring reads them, and as kilter does */
        double vr[3], ra = relay(&h, 0, 1), rc = relay(&h, 2, 1);
        kl_regulator_relay_voltage(h.net, 0, vr);
        ck_assert_msg(fabs(vr[0] - ra) < 1e-9 && fabs(vr[2] - rc) < 1e-9,
                      "relay ab %.4f V (published wiring %.4f), cb %.4f V (%.4f)", vr[0], ra, vr[2], rc);
        ck_assert_msg(fabs(ra - 122.0) <= 1.0 && fabs(rc - 122.0) <= 1.0, "relays %.2f, %.2f V", ra, rc);
        harness_free(&h);
    }
}
END_TEST

/* The feeder writer (used by kilter rebalance) writes the bank back in the
 * same form: units, per-unit taps, compensators and monitored units. */
START_TEST(written_back_the_same)
{
    char t[4096], path[64];
    ck_assert_int_eq(load("", "    connection: open-delta\n    units: [ba, ca]\n    taps: {ba: 3, ca: -2}\n"
                              "    compensator_r: {ba: 1.5 V, ca: 2 V}\n    monitored: ca\n", t, sizeof t), KL_OK);
    snprintf(path, sizeof path, "/tmp/kl-open-delta-%d.yaml", (int)getpid());
    ck_assert_int_eq(kl_feeder_write(fd, NULL, NULL, path, &err), KL_OK);
    kl_feeder *back = NULL;
    ck_assert_int_eq(kl_feeder_load(path, &back, &err), KL_OK);
    const kl_regulator *a = &fd->regulators[0], *b = &back->regulators[0];
    ck_assert_int_eq(b->conn, KL_REG_OPEN_DELTA);
    ck_assert_int_eq(b->shared, KL_PH_A);
    ck_assert_int_eq(b->phases, KL_PH_B | KL_PH_C);
    ck_assert_int_eq(b->monitored, KL_PH_C);
    for (int p = 0; p < 3; p++) {
        ck_assert_int_eq(b->tap[p], a->tap[p]);
        ck_assert_double_eq_tol(b->ldc_r_v[p], a->ldc_r_v[p], 1e-12);
    }
    kl_feeder_free(back);
    remove(path);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("open-delta");
    TCase *tc = tcase_create("regulator");
    tcase_set_timeout(tc, 60);
    tcase_add_checked_fixture(tc, setup, teardown);
    tcase_add_test(tc, units_named_by_pairs);
    tcase_add_test(tc, inconsistent_refused);
    tcase_add_test(tc, no_load_ratios);
    tcase_add_test(tc, ieee37_taps_and_voltages);
    tcase_add_test(tc, written_back_the_same);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? 1 : 0;
}
