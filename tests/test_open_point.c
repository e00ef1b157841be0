/* Open points: buses beyond a normally-open switch are de-energized (zero
 * voltage, their loads not connected, one note), in both solvers and in the
 * study; and a tie that closes a loop is named as the section that closes it.
 *
 * References:
 *  - an open switch carries no current, so the part of a radial feeder beyond
 *    it draws nothing and the energized part solves exactly as if that part
 *    were not there (Kirchhoff's current law; common practice).  The check
 *    compares against the same feeder written without the part beyond the
 *    switch;
 *  - line data: the IEEE PES 13-node test feeder's configuration 601
 *    (tests/ref_ieee13.c), used only as realistic line data. */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "harness.h"
#include "ref_ieee13.h"

/* %s: the construction's impedance entries; then the sections and loads beyond
 * b2 (or nothing) */
static const char *FEEDER_FMT =
    "kilter-feeder: 1\n"
    "name: Saltmarsh Lane open point\n"
    "source: {bus: sub, nominal_voltage: 4.16 kV, regulated_voltage: 1.0 pu}\n"
    "constructions:\n"
    "  - name: m3\n"
    "    phases: abc\n"
    "    impedance: {%s}\n"
    "    susceptance: {aa: 0 uS/mi, bb: 0 uS/mi, cc: 0 uS/mi}\n"
    "sections:\n"
    "  - {name: s1, from: sub, to: b1, length: 2000 ft, construction: m3}\n"
    "  - {name: s2, from: b1, to: b2, length: 1000 ft, construction: m3}\n"
    "%s"
    "loads:\n"
    "  - {name: l2, bus: b2, power: {a: 300 + j100 kVA, b: 250 + j90 kVA, c: 280 + j95 kVA}}\n"
    "%s";

static const char *BEYOND_SECTIONS =
    "  - {name: np, from: b2, to: b3, switch: open}\n"
    "  - {name: s4, from: b3, to: b4, length: 1500 ft, construction: m3}\n"
    "  - {name: s5, from: b4, to: b5, length: 800 ft, construction: m3, phases: a}\n";
static const char *BEYOND_LOADS =
    "  - {name: l4, bus: b4, power: {a: 200 + j60 kVA, b: 200 + j60 kVA, c: 200 + j60 kVA}}\n"
    "  - {name: l5, bus: b5, model: constant-impedance, power: {a: 100 + j30 kVA}}\n"
    "capacitors:\n"
    "  - {name: c4, bus: b4, reactive_power: {a: 100 kvar, b: 100 kvar, c: 100 kvar}}\n";

static void feeder_text(char *text, size_t n, int beyond)
{
    static const char *const entry[6] = {"aa", "ab", "ac", "bb", "bc", "cc"};
    const ref_ieee13_config *c601 = ref_ieee13_config_find("601");
    char m3[512] = "";
    for (int e = 0; e < 6; e++) {
        double complex z = c601->z[e];
        snprintf(m3 + strlen(m3), sizeof m3 - strlen(m3), "%s%s: %.4f %c j%.4f ohm/mi",
                 e ? ", " : "", entry[e], creal(z), cimag(z) < 0 ? '-' : '+', fabs(cimag(z)));
    }
    snprintf(text, n, FEEDER_FMT, m3, beyond ? BEYOND_SECTIONS : "", beyond ? BEYOND_LOADS : "");
}

static void solve(harness *h, int beyond, kl_solver solver)
{
    char text[4096];
    kl_flow_options opt;
    kl_flow_options_default(&opt);
    opt.solver = solver;
    feeder_text(text, sizeof text, beyond);
    harness_init(h);
    HARNESS_OK(h, harness_load_text(h, text, "open-point.yaml"));
    HARNESS_OK(h, harness_derive(h, KL_CARSON_APPROX));
    HARNESS_OK(h, harness_build(h));
    HARNESS_OK(h, harness_solve(h, &opt));
}

/* Before: the network build refused the file, one error per bus beyond np. */
static void beyond_open_switch(kl_solver solver)
{
    harness with, without;
    solve(&with, 1, solver);
    solve(&without, 0, solver);
    const kl_feeder *f = with.f;
    const char *live[3] = {"sub", "b1", "b2"}, *dead[3] = {"b3", "b4", "b5"};
    for (int k = 0; k < 3; k++) {
        int b = kl_feeder_find_bus(f, live[k]), b0 = kl_feeder_find_bus(without.f, live[k]);
        for (int p = 0; p < 3; p++)
            ck_assert_msg(cabs(with.res->v[3 * b + p] - without.res->v[3 * b0 + p]) < 1e-9 * 2401.8,
                          "%s phase %d", live[k], p);
        ck_assert(!kl_deenergized_bus(f, b));
    }
    for (int k = 0; k < 3; k++) {
        int b = kl_feeder_find_bus(f, dead[k]);
        ck_assert(kl_deenergized_bus(f, b));
        ck_assert_int_eq(with.res->phases[b], 0);
        for (int p = 0; p < 3; p++)
            ck_assert(with.res->v[3 * b + p] == 0);
    }
    for (int p = 0; p < 3; p++) {
        ck_assert(cabs(with.res->s_head[p] - without.res->s_head[p]) < 1e-6 * cabs(without.res->s_head[p]));
        ck_assert(cabs(with.res->s_loads[p] - without.res->s_loads[p]) < 1e-6 * cabs(without.res->s_loads[p]));
        ck_assert(with.res->s_load[3 * 1 + p] == 0 && with.res->q_cap[p] == 0); /* l4, c4 */
    }
    ck_assert(with.res->s_load[3 * 2] == 0); /* l5 */
    ck_assert(kl_deenergized_load(f, 1) && kl_deenergized_load(f, 2) && !kl_deenergized_load(f, 0));
    /* the study runs on the energized part */
    HARNESS_OK(&with, harness_study(&with, NULL));
    char note[512];
    ck_assert_int_eq(kl_deenergized_note(f, note, sizeof note), 3);
    ck_assert_msg(strstr(note, "open switch 'np'") && strstr(note, "'b3', 'b4', 'b5'") &&
                  strstr(note, "2 loads"), "%s", note);
    harness_free(&with);
    harness_free(&without);
}

START_TEST(open_switch_sweep) { beyond_open_switch(KL_SOLVER_SWEEP); }
END_TEST
START_TEST(open_switch_nodal) { beyond_open_switch(KL_SOLVER_NODAL); }
END_TEST

/* A closed tie between the end of a lateral and a bus past the regulator
 * closes a loop with the regulator in it.  Before: the walk reached the
 * regulator's load side through the tie first and blamed the regulator's
 * direction ("'from' must be the source side"). */
START_TEST(tie_names_the_loop)
{
    static const char *text =
        "kilter-feeder: 1\n"
        "name: Gorse Hill tie\n"
        "source: {bus: sub, nominal_voltage: 12.47 kV}\n"
        "constructions:\n"
        "  - {name: m3, phases: abc, impedance: {aa: 0.3 + j1.0 ohm/mi, bb: 0.3 + j1.0 ohm/mi, "
        "cc: 0.3 + j1.0 ohm/mi}}\n"
        "sections:\n"
        "  - {name: s1, from: sub, to: b1, length: 1 mi, construction: m3}\n"
        "  - {name: s2, from: b1, to: b2, length: 1 mi, construction: m3}\n"
        "  - {name: s3, from: b2, to: b3, length: 1 mi, construction: m3}\n"
        "  - {name: s4, from: b3, to: b3r, length: 1 mi, construction: m3}\n"
        "  - {name: rg, from: b3r, to: b4, regulator: reg}\n"
        "  - {name: s5, from: b4, to: b5, length: 1 mi, construction: m3}\n"
        "  - {name: lat, from: sub, to: x1, length: 0.5 mi, construction: m3}\n"
        "  - {name: tie, from: x1, to: b4, switch: closed}\n"
        "regulators:\n"
        "  - {name: reg, phases: abc, taps: {a: 0, b: 0, c: 0}, pt_ratio: 60, ct_primary: 300 A}\n";
    harness h;
    harness_init(&h);
    ck_assert_int_eq(harness_load_text(&h, text, "tie.yaml"), KL_EINPUT);
    int named = 0;
    for (int k = 0; k < h.err.count; k++) {
        const kl_error_item *e = &h.err.items[k];
        ck_assert_msg(!strstr(e->message, "source side"), "blames a direction: %s", e->message);
        if (strstr(e->element, "\"tie\"") && strstr(e->message, "closes a loop") &&
            strstr(e->message, "make 'tie' an open switch"))
            named = 1;
    }
    ck_assert_msg(named, "%s: %s", h.err.count ? h.err.items[0].element : "",
                  h.err.count ? h.err.items[0].message : "no error");
    harness_free(&h);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("open_point");
    TCase *tc = tcase_create("open_point");
    tcase_add_test(tc, open_switch_sweep);
    tcase_add_test(tc, open_switch_nodal);
    tcase_add_test(tc, tie_names_the_loop);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? 1 : 0;
}
