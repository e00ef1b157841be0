/* The grounded-wye/delta bank as a zero-sequence source (a grounding bank):
 * src/flow/transformer.c, I_source = A^T I_load + Yg V_source, Yg = J / (3 Z_t).
 *
 * 1. Published: the IEEE PES 4-node test feeder, step-down, balanced and
 *    unbalanced load, column Gr.Y-Delta (tests/ref_ieee4.c, from
 *    /work/shared/reference/ieee-4-node.md), with the bundled files
 *    feeders/reference/ieee-4-node-gry-delta-*.yaml.  Its line 1-2 currents
 *    differ from the ungrounded-wye column by up to 1.8 A: solved as an
 *    ungrounded bank (as before), the check fails.
 * 2. Physics: on a symmetrical line the sequence networks do not couple, so a
 *    single-phase load at the bank's primary draws a zero-sequence current
 *    that divides between the source's path (the line's Z_0) and the bank's
 *    (Z_t): I0_line / I0_load = Z_t / (Z0_line + Z_t), and the bank draws
 *    I0 = V0 / Z_t (hand-computed zero-sequence network: current division).
 * 3. Balanced: a balanced load on a symmetrical line has no zero sequence
 *    anywhere, so the grounded and the ungrounded bank give the same answer. */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <gsl/gsl_errno.h>
#include "harness.h"
#include "kilter/units.h"
#include "ref_ieee4.h"

static double angle_diff(double a, double b)
{
    return fabs(fmod(a - b + 540.0, 360.0) - 180.0);
}

static void near_polar(double complex x, double mag, double deg, double tol_mag, double tol_deg,
                       const char *what, int p)
{
    ck_assert_msg(fabs(cabs(x) - mag) <= tol_mag && angle_diff(carg(x) * KL_DEG_PER_RAD, deg) <= tol_deg,
                  "%s phase %c: %.2f/%.2f, published %.1f/%.1f", what, 'a' + p, cabs(x),
                  carg(x) * KL_DEG_PER_RAD, mag, deg);
}

/* Published to 0.1 A and 0.1 degree (currents), 4 digits (voltages): within
 * half a printed digit plus 0.1 A / 0.1 degree / 0.1 %.  The tolerance on
 * I12 is below the published difference between the grounded and the
 * ungrounded columns (checked first, so the case can tell them apart). */
static void check_published(const ref_ieee4_gry_delta *c, int solver)
{
    char path[512];
    snprintf(path, sizeof path, "feeders/reference/%s", c->file);
    double worst = 0;
    for (int p = 0; p < 3; p++)
        worst = fmax(worst, fabs(c->i12_amps[p] - c->i12_ungrounded_amps[p]));
    ck_assert(worst > 0.3); /* the columns differ by more than the tolerance below */
    gsl_set_error_handler_off();
    harness h;
    harness_init(&h);
    HARNESS_OK(&h, harness_load(&h, path));
    HARNESS_OK(&h, harness_derive(&h, KL_CARSON_APPROX));
    HARNESS_OK(&h, harness_build(&h));
    kl_flow_options opt;
    kl_flow_options_default(&opt);
    opt.solver = (kl_solver)solver; /* a kl_solver value, looped over as int */
    HARNESS_OK(&h, harness_solve(&h, &opt));
    const kl_feeder *f = h.f;
    const kl_flow_result *r = h.res;
    int k12 = kl_feeder_find_section(f, "1-2"), b2 = kl_feeder_find_bus(f, "2"),
        b4 = kl_feeder_find_bus(f, "4");
    ck_assert(k12 >= 0 && b2 >= 0 && b4 >= 0);
    for (int p = 0; p < 3; p++) {
        near_polar(r->i[3 * k12 + p], c->i12_amps[p], c->i12_deg[p], 0.15, 0.1, "I12", p);
        near_polar(r->v[3 * b2 + p], c->node2.volts[p], c->node2.deg[p], 1.0, 0.1, "V node 2", p);
        double complex vll = r->v[3 * b4 + p] - r->v[3 * b4 + (p + 1) % 3];
        near_polar(vll, c->node4_ll.volts[p], c->node4_ll.deg[p], 0.001 * c->node4_ll.volts[p],
                   0.1, "V node 4 line to line", p);
    }
    harness_free(&h);
}

START_TEST(ieee4_gry_delta_unbalanced)
{
    check_published(&ref_ieee4_gry_delta_unbalanced, KL_SOLVER_SWEEP);
    check_published(&ref_ieee4_gry_delta_unbalanced, KL_SOLVER_NODAL);
}
END_TEST

START_TEST(ieee4_gry_delta_balanced)
{
    check_published(&ref_ieee4_gry_delta_balanced, KL_SOLVER_SWEEP);
    check_published(&ref_ieee4_gry_delta_balanced, KL_SOLVER_NODAL);
}
END_TEST

/* A symmetrical (transposed) line: Zs = 0.3 + j1.0, Zm = 0.1 + j0.4 ohm/mi,
 * so Z0 = Zs + 2 Zm, per mile; 1 mi long, no shunt admittance.  The bank:
 * 3000 kVA, 12.47 / 4.16 kV, 1 + j6 %. */
static const char *SYM_FMT =
    "kilter-feeder: 1\n"
    "name: Marrowby grounding bank check\n"
    "source: {bus: sub, nominal_voltage: 12.47 kV, regulated_voltage: 1.0 pu}\n"
    "constructions:\n"
    "  - name: transposed\n"
    "    phases: abc\n"
    "    impedance: {aa: 0.3 + j1.0 ohm/mi, bb: 0.3 + j1.0 ohm/mi, cc: 0.3 + j1.0 ohm/mi,\n"
    "                ab: 0.1 + j0.4 ohm/mi, bc: 0.1 + j0.4 ohm/mi, ac: 0.1 + j0.4 ohm/mi}\n"
    "sections:\n"
    "  - {name: feed, from: sub, to: pri, length: 1 mi, construction: transposed}\n"
    "  - {name: xf, from: pri, to: lv, transformer: bank}\n"
    "transformers:\n"
    "  - {name: bank, rating: 3000 kVA, high: {voltage: 12.47 kV, connection: %s},\n"
    "     low: {voltage: 4.16 kV, connection: delta}, resistance: 1 %%, reactance: 6 %%}\n"
    "loads:\n"
    "  - {name: mill, bus: lv, connection: delta, power: {ab: 500 + j200 kVA, bc: 500 + j200 kVA, "
    "ca: 500 + j200 kVA}}\n"
    "%s";

static void solve_sym(harness *h, const char *conn, const char *extra)
{
    char text[2048];
    snprintf(text, sizeof text, SYM_FMT, conn, extra);
    harness_init(h);
    HARNESS_OK(h, harness_load_text(h, text, conn));
    HARNESS_OK(h, harness_derive(h, KL_CARSON_FULL));
    HARNESS_OK(h, harness_build(h));
    kl_flow_options opt;
    kl_flow_options_default(&opt);
    opt.tol_pu = 1e-11; /* the checks below compare differences of solved currents */
    HARNESS_OK(h, harness_solve(h, &opt));
}

static double complex zero_seq(const double complex x[3])
{
    return (x[0] + x[1] + x[2]) / 3.0;
}

START_TEST(zero_sequence_current_division)
{
    harness h;
    solve_sym(&h, "grounded-wye",
              "  - {name: pump, bus: pri, connection: wye, model: constant-impedance, "
              "power: {a: 400 + j150 kVA}}\n");
    const kl_feeder *f = h.f;
    int kf = kl_feeder_find_section(f, "feed"), kx = kl_feeder_find_section(f, "xf"),
        bp = kl_feeder_find_bus(f, "pri");
    double complex zt = (0.01 + 0.06 * I) * 12470.0 * 12470.0 / 3e6;
    double complex z0 = (0.3 + 1.0 * I) + 2.0 * (0.1 + 0.4 * I); /* 1 mile */
    double complex i0_line = zero_seq(h.res->i + 3 * kf), i0_bank = zero_seq(h.res->i + 3 * kx);
    double complex i0_load = i0_line - i0_bank; /* Kirchhoff at pri */
    double complex v0 = zero_seq(h.res->v + 3 * bp);
    ck_assert(cabs(i0_load) > 5.0); /* the single-phase load does draw zero sequence */
    ck_assert_msg(cabs(i0_bank - v0 / zt) < 1e-6 * cabs(i0_bank), "bank I0 %.4f, V0/Zt %.4f",
                  cabs(i0_bank), cabs(v0 / zt));
    ck_assert_msg(cabs(i0_line / i0_load - zt / (z0 + zt)) < 1e-6, "I0 line / I0 load %.6f, want %.6f",
                  cabs(i0_line / i0_load), cabs(zt / (z0 + zt)));
    /* and the source's side: V0 = -Z0_line I0_line with V0 = 0 at the ideal source */
    ck_assert_msg(cabs(v0 + z0 * i0_line) < 1e-6 * cabs(v0), "V0 %g, -Z0 I0 %g", cabs(v0), cabs(z0 * i0_line));
    harness_free(&h);
    /* an ungrounded wye primary draws none: the load's zero sequence all comes by the line */
    solve_sym(&h, "wye",
              "  - {name: pump, bus: pri, connection: wye, model: constant-impedance, "
              "power: {a: 400 + j150 kVA}}\n");
    ck_assert(cabs(zero_seq(h.res->i + 3 * kl_feeder_find_section(h.f, "xf"))) < 1e-9);
    harness_free(&h);
}
END_TEST

START_TEST(balanced_unchanged)
{
    harness g, u;
    solve_sym(&g, "grounded-wye", "");
    solve_sym(&u, "wye", "");
    for (int i = 0; i < 3 * g.f->nbuses; i++)
        ck_assert(cabs(g.res->v[i] - u.res->v[i]) < 1e-6);
    for (int i = 0; i < 3 * g.f->nsections; i++)
        ck_assert(cabs(g.res->i[i] - u.res->i[i]) < 1e-6);
    harness_free(&g);
    harness_free(&u);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("grounding-bank");
    TCase *tc = tcase_create("gry-delta");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, ieee4_gry_delta_unbalanced);
    tcase_add_test(tc, ieee4_gry_delta_balanced);
    tcase_add_test(tc, zero_sequence_current_division);
    tcase_add_test(tc, balanced_unchanged);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? 1 : 0;
}
