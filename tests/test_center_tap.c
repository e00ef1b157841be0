/* A center-tapped single-phase service transformer on any primary phase:
 * the loader and the load flow agree that its secondary legs sit in phase
 * slots a and b, so a 120 V load on either leg and a 240 V load across both
 * (delta ab) load, solve and balance.
 *
 * Reference: the three-wire 120/240 V secondary of a center-tapped
 * distribution transformer gives two 120 V legs 180 degrees apart and 240 V
 * across them at no load (common practice; the nameplate ratio 7200/240 V
 * of a 12.47Y/7.2 kV service transformer is common practice too).  The line
 * impedances are the published IEEE PES 13-node test feeder configurations
 * 601 (three-phase) and 605 (single-phase, its phase-c entry; tests/ref_ieee13.c),
 * used here only as realistic data. */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "harness.h"
#include "ref_ieee13.h"

static const char *FEEDER_FMT =
    "kilter-feeder: 1\n"
    "name: Tallowby service test\n"
    "source: {bus: sub, nominal_voltage: 12.47 kV, frequency: 60 Hz, regulated_voltage: 1.0 pu}\n"
    "constructions:\n"
    "  - name: m3\n"
    "    phases: abc\n"
    "    impedance: {%s}\n"
    "    susceptance: {aa: 0 uS/mi, bb: 0 uS/mi, cc: 0 uS/mi}\n"
    "  - name: l1\n"
    "    phases: %s\n"
    "    impedance: {%s%s: %s}\n"
    "    susceptance: {%s%s: 0 uS/mi}\n"
    "sections:\n"
    "  - {name: s1, from: sub, to: m1, length: 2000 ft, construction: m3}\n"
    "  - {name: s2, from: m1, to: p1, length: 500 ft, construction: l1}\n"
    "  - {name: t1, from: p1, to: house, phases: %s, transformer: ct50}\n"
    "transformers:\n"
    "  - {name: ct50, rating: 50 kVA, high: {voltage: 7.2 kV, connection: single},\n"
    "     low: {voltage: 240 V, connection: center-tap}, resistance: 1.1 %%, reactance: 1.6 %%}\n"
    "loads:\n"
    "  - {name: lights, bus: house, connection: wye, model: constant-power, power: {a: %s kVA}}\n"
    "  - {name: oven, bus: house, connection: delta, model: constant-impedance, power: {ab: %s kVA}}\n";

/* "0.3465 + j1.0179 ohm/mi" */
static void z_text(char *buf, size_t n, double complex z)
{
    snprintf(buf, n, "%.4f %c j%.4f ohm/mi", creal(z), cimag(z) < 0 ? '-' : '+', fabs(cimag(z)));
}

/* Loads the feeder with the primary phase ph and the two loads' powers and
 * runs it through to a solved flow; the caller checks the status. */
static kl_status solve(harness *r, const char *ph, const char *p_leg, const char *p_240)
{
    static const char *const entry[6] = {"aa", "ab", "ac", "bb", "bc", "cc"};
    const ref_ieee13_config *c601 = ref_ieee13_config_find("601"), *c605 = ref_ieee13_config_find("605");
    char text[4096], m3[512] = "", l1[64], z[64];
    for (int e = 0; e < 6; e++) {
        z_text(z, sizeof z, c601->z[e]);
        snprintf(m3 + strlen(m3), sizeof m3 - strlen(m3), "%s%s: %s", e ? ", " : "", entry[e], z);
    }
    z_text(l1, sizeof l1, ref_ieee13_z(c605, 2, 2));
    snprintf(text, sizeof text, FEEDER_FMT, m3, ph, ph, ph, l1, ph, ph, ph, p_leg, p_240);
    harness_init(r);
    kl_status st = harness_load_text(r, text, "center-tap.yaml");
    if (!st)
        st = harness_derive(r, KL_CARSON_APPROX);
    if (!st)
        st = harness_build(r);
    if (!st)
        st = harness_solve(r, NULL);
    return st;
}

static const char *PHASES[3] = { "a", "b", "c" };

/* No load: legs at 120 V, 180 degrees apart, on every primary phase. */
START_TEST(test_no_load_legs)
{
    harness r;
    const char *ph = PHASES[_i];
    kl_status st = solve(&r, ph, "0 + j0", "0 + j0");
    ck_assert_msg(st == KL_OK, "phase %s: %s", ph, harness_first_error(&r));
    int h = kl_feeder_find_bus(r.f, "house");
    ck_assert_int_eq(r.f->buses[h].phases, KL_PH_A | KL_PH_B);
    kl_complex v1 = r.res->v[3 * h], v2 = r.res->v[3 * h + 1];
    ck_assert_double_eq_tol(cabs(v1), 120.0, 0.05);  /* common practice: 120 V legs */
    ck_assert_double_eq_tol(cabs(v2), 120.0, 0.05);
    ck_assert_double_eq_tol(cabs(v1 - v2), 240.0, 0.1); /* 240 V across the legs */
    harness_free(&r);
}
END_TEST

/* Loaded: the 240 V load and a leg load are served and the power balances
 * (source input = loads + losses, physics). */
START_TEST(test_loaded_balance)
{
    harness r;
    const char *ph = PHASES[_i];
    kl_status st = solve(&r, ph, "6 + j2", "9 + j0");
    ck_assert_msg(st == KL_OK, "phase %s: %s", ph, harness_first_error(&r));
    int h = kl_feeder_find_bus(r.f, "house");
    double v1 = cabs(r.res->v[3 * h]), v12 = cabs(r.res->v[3 * h] - r.res->v[3 * h + 1]);
    ck_assert(v1 < 120.0 && v1 > 110.0);
    ck_assert(v12 < 240.0 && v12 > 225.0);
    kl_complex in = r.res->s_head[0] + r.res->s_head[1] + r.res->s_head[2];
    kl_complex loss = r.res->s_losses[0] + r.res->s_losses[1] + r.res->s_losses[2];
    kl_complex load = 0;
    for (int k = 0; k < 3 * r.f->nloads; k++)
        load += r.res->s_load[k];
    ck_assert_double_eq_tol(creal(in), creal(load + loss), 1e-6 * cabs(in));
    ck_assert_double_eq_tol(cimag(in), cimag(load + loss), 1e-6 * cabs(in));
    ck_assert_msg(creal(load) > 14000.0 && creal(load) < 15000.0, "load %g W, in %g W, v1 %g, v12 %g", creal(load), creal(in), v1, v12); /* 6 kW + 9 kW near nominal */
    harness_free(&r);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("center_tap");
    TCase *tc = tcase_create("service");
    tcase_add_loop_test(tc, test_no_load_legs, 0, 3);
    tcase_add_loop_test(tc, test_loaded_balance, 0, 3);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int nf = srunner_ntests_failed(sr);
    srunner_free(sr);
    return nf ? 1 : 0;
}
