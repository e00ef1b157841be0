/* Divergence hints (src/flow/diverge.c): a load flow that does not converge
 * says why in terms of what it can see.
 *
 * References:
 *  - a capacitor of Q var per phase at V volts has the reactance X = V^2 / Q
 *    (common practice); both solvers iterate its current I = jB V against the
 *    line, V = E - Z I, a linear fixed point that converges only when the
 *    spectral radius of Z jB is below one (the convergence condition of a
 *    linear fixed-point iteration, common practice): with |Z| of the line
 *    above X no load scale makes it converge;
 *  - line data: the IEEE PES 13-node test feeder's configuration 601
 *    (tests/ref_ieee13.c), 6 miles of it; a single-phase capacitor on phase a
 *    sees the line's self impedance 6 z_aa (earth return included). */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "harness.h"
#include "ref_ieee13.h"


static const char *FEEDER_FMT =
    "kilter-feeder: 1\n"
    "name: Brackwater capacitor test\n"
    "source: {bus: sub, nominal_voltage: 12.47 kV}\n"
    "constructions:\n"
    "  - name: m3\n"
    "    phases: abc\n"
    "    impedance: {%s}\n"
    "sections:\n"
    "  - {name: s1, from: sub, to: b1, length: 6 mi, construction: m3}\n"
    "loads:\n"
    "  - {name: l1, bus: b1, power: {a: %s, b: %s, c: %s}}\n"
    "%s";

/* Loads and solves; returns the solve's status (the caller checks h.err). */
static kl_status run(harness *h, const char *load, const char *caps, kl_solver solver,
                     double scale)
{
    static const char *const entry[6] = {"aa", "ab", "ac", "bb", "bc", "cc"};
    const ref_ieee13_config *c601 = ref_ieee13_config_find("601");
    char text[4096], m3[512] = "";
    for (int e = 0; e < 6; e++) {
        double complex z = c601->z[e];
        snprintf(m3 + strlen(m3), sizeof m3 - strlen(m3), "%s%s: %.4f %c j%.4f ohm/mi",
                 e ? ", " : "", entry[e], creal(z), cimag(z) < 0 ? '-' : '+', fabs(cimag(z)));
    }
    snprintf(text, sizeof text, FEEDER_FMT, m3, load, load, load, caps);
    kl_flow_options opt;
    kl_flow_options_default(&opt);
    opt.solver = solver;
    opt.load_scale = scale;
    harness_init(h);
    HARNESS_OK(h, harness_load_text(h, text, "brackwater.yaml"));
    HARNESS_OK(h, harness_derive(h, KL_CARSON_APPROX));
    HARNESS_OK(h, harness_build(h));
    return harness_solve(h, &opt);
}

static const char *message(const harness *h)
{
    return h->err.count ? h->err.items[h->err.count - 1].message : "";
}

/* 9000 kvar on phase a: X = 7199.6^2 / 9e6 = 5.76 ohm against 6 |z_aa| = 6.45 ohm.
 * Before: "the load is beyond what the feeder can carry ... lower the load scale",
 * and a load scale of 0.1 (or 0) diverged the same. */
static void resonance(kl_solver solver)
{
    const ref_ieee13_config *c601 = ref_ieee13_config_find("601");
    double vn = 12470 / sqrt(3.0), xc = vn * vn / 9e6, zline = 6 * cabs(c601->z[0]);
    char want_x[32], want_z[32];
    snprintf(want_x, sizeof want_x, "(%.3g ohm)", xc);
    snprintf(want_z, sizeof want_z, "(%.3g ohm;", zline);
    static const double scales[3] = {1.0, 0.1, 0.0};
    for (int k = 0; k < 3; k++) {
        harness h;
        kl_status st = run(&h, "200 + j60 kVA", "capacitors:\n"
                           "  - {name: c1, bus: b1, reactive_power: {a: 9000 kvar}}\n",
                           solver, scales[k]);
        ck_assert_int_eq(st, KL_ENOCONV);
        const char *m = message(&h);
        ck_assert_msg(strstr(m, "capacitor c1 at bus b1") && strstr(m, "resonance"), "%s", m);
        ck_assert_msg(strstr(m, want_x) && strstr(m, want_z), "%s (want %s, %s)", m, want_x, want_z);
        ck_assert_msg(!strstr(m, "load scale"), "suggests a load scale: %s", m);
        harness_free(&h);
    }
}

START_TEST(resonance_sweep) { resonance(KL_SOLVER_SWEEP); }
END_TEST
START_TEST(resonance_nodal) { resonance(KL_SOLVER_NODAL); }
END_TEST

/* Too much load (25 MVA a phase at the end of 6 miles): the hint is the load,
 * with a load scale, names no capacitor, and the scale it suggests works. */
static void overload(kl_solver solver)
{
    harness h;
    ck_assert_int_eq(run(&h, "25000 + j8000 kVA", "", solver, 1.0), KL_ENOCONV);
    const char *m = message(&h);
    ck_assert_msg(strstr(m, "load scale") && strstr(m, "beyond what"), "%s", m);
    ck_assert_msg(!strstr(m, "capacitor"), "%s", m);
    harness_free(&h);
    ck_assert_int_eq(run(&h, "25000 + j8000 kVA", "", solver, 0.05), KL_OK);
    harness_free(&h);
}

START_TEST(overload_sweep) { overload(KL_SOLVER_SWEEP); }
END_TEST
START_TEST(overload_nodal) { overload(KL_SOLVER_NODAL); }
END_TEST

int main(void)
{
    Suite *s = suite_create("diverge");
    TCase *tc = tcase_create("diverge");
    tcase_add_test(tc, resonance_sweep);
    tcase_add_test(tc, resonance_nodal);
    tcase_add_test(tc, overload_sweep);
    tcase_add_test(tc, overload_nodal);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? 1 : 0;
}
