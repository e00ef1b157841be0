/* Triplen (third-harmonic) currents through every winding connection kilter
 * models, and on the primary neutral (src/study/neutral_size.c).
 *
 * Each case solves a small feeder: a four-wire primary line (with a neutral
 * conductor), a bank, and loads with a declared third-harmonic share on the
 * bank's load-side bus.  The expected primary currents are derived here by
 * hand from the winding equations, independently of the code's matrices:
 * each unit's ampere-turn balance N1 I1 = N2 I2 (ideal transformer, which
 * holds at every frequency; common practice) and Kirchhoff's current law at
 * the bank's terminals.  A load's third harmonic is x = h3 |S| / |V| at 3 x the
 * phase angle of its voltage (common practice: harmonic currents of a
 * nonlinear load are locked to its voltage).  Every case names its rule. */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "harness.h"
#include "kilter/units.h"

static const char *HEAD =
    "kilter-feeder: 1\n"
    "name: Wrenfold harmonic test\n"
    "source: {bus: sub, nominal_voltage: 12.47 kV, regulated_voltage: 1.0 pu}\n"
    "conductors:\n"
    "  - {name: 336ACSR, resistance: 0.306 ohm/mi, gmr: 0.0244 ft, diameter: 0.721 in, ampacity: 530 A}\n"
    "  - {name: 4/0ACSR, resistance: 0.592 ohm/mi, gmr: 0.00814 ft, diameter: 0.563 in, ampacity: 340 A}\n"
    "layouts:\n"
    "  - name: arm\n"
    "    positions:\n"
    "      - {id: \"1\", x: 0 ft, height: 28 ft}\n"
    "      - {id: \"2\", x: 2.5 ft, height: 28 ft}\n"
    "      - {id: \"3\", x: 7 ft, height: 28 ft}\n"
    "      - {id: n, x: 4 ft, height: 24 ft}\n"
    "constructions:\n"
    "  - name: four-wire\n"
    "    layout: arm\n"
    "    phase_conductor: 336ACSR\n"
    "    phases: {a: \"1\", b: \"2\", c: \"3\"}\n"
    "    neutrals: [{position: n, conductor: 4/0ACSR}]\n";

/* One case: the bank (transformers: entry), the primary line's phases, the
 * bank section's, and the loads (loads: entries). */
typedef struct {
    const char *name;
    const char *bank;     /* the transformer entry, named "bank" */
    const char *line_ph;  /* phases of the primary line */
    const char *loads;    /* YAML list entries, at bus lv */
} tcase;

static void run(harness *h, const tcase *c)
{
    char text[4096];
    snprintf(text, sizeof text,
             "%s"
             "sections:\n"
             "  - {name: feed, from: sub, to: pri, length: 1000 ft, construction: four-wire, phases: %s}\n"
             "  - {name: xf, from: pri, to: lv, transformer: bank}\n"
             "transformers:\n  - %s\n"
             "loads:\n%s",
             HEAD, c->line_ph, c->bank, c->loads);
    harness_init(h);
    harness_solve_text(h, text, c->name, KL_CARSON_FULL);
    HARNESS_OK(h, harness_study(h, NULL));
}

/* x e^(j3 phi): the third harmonic of load entry e (wye slot p, or delta
 * pair p, p+1) of load L at bus b, from the solved flow. */
static double complex third(const harness *h, const char *load, int e)
{
    const kl_feeder *f = h->f;
    int L = kl_feeder_find_load(f, load);
    const kl_load *ld = &f->loads[L];
    const double complex *v = h->res->v + 3 * ld->bus;
    double complex vx = ld->conn == KL_CONN_WYE ? v[e] : v[e] - v[(e + 1) % 3];
    double step = KL_PI / 6.0, phi = round(carg(vx) / step) * step; /* nominal: 30-degree steps */
    ck_assert(L >= 0);
    return ld->third_harmonic * cabs(h->res->s_load[3 * L + e]) / cabs(vx) * cexp(3.0 * I * phi);
}

/* The feed line's sending-end triplens against want[3]; its neutral against
 * |sum|; tolerance relative to the largest load harmonic. */
static void expect(const harness *h, const double complex want[3], double scale)
{
    int k = kl_feeder_find_section(h->f, "feed");
    const double complex *i3 = h->study->i3 + 3 * k;
    for (int p = 0; p < 3; p++)
        ck_assert_msg(cabs(i3[p] - want[p]) < 1e-9 * scale + 1e-12,
                      "phase %c: %.6f%+.6fj A, want %.6f%+.6fj A", 'a' + p, creal(i3[p]),
                      cimag(i3[p]), creal(want[p]), cimag(want[p]));
    ck_assert_double_eq_tol(h->study->i_n3[k], cabs(want[0] + want[1] + want[2]), 1e-9 * scale + 1e-12);
}

#define BANK3(hi, lo) "{name: bank, rating: 500 kVA, high: {voltage: 12.47 kV, connection: " hi \
    "}, low: {voltage: 0.48 kV, connection: " lo "}, resistance: 1 %, reactance: 5 %}"
#define WYE_A "  - {name: shop, bus: lv, power: {a: 60 + j20 kVA}, third_harmonic: 50 %}\n"
#define WYE_ABC "  - {name: shop, bus: lv, power: {a: 60 + j20 kVA, b: 60 + j20 kVA, c: 60 + j20 kVA}, " \
    "third_harmonic: 50 %}\n"
#define DELTA_AB "  - {name: shop, bus: lv, connection: delta, power: {ab: 60 + j20 kVA}, " \
    "third_harmonic: 50 %}\n"
#define DELTA_ABC "  - {name: shop, bus: lv, connection: delta, power: {ab: 60 + j20 kVA, " \
    "bc: 60 + j20 kVA, ca: 60 + j20 kVA}, third_harmonic: 50 %}\n"

/* Grounded wye/grounded wye: each unit between a phase and the common
 * neutral, so the primary phase carries x (kV_low/kV_high) and so does the
 * primary neutral. */
START_TEST(grounded_wye_passes)
{
    static const tcase c = {"gy-gy", BANK3("grounded-wye", "grounded-wye"), "abc", WYE_A};
    harness h;
    run(&h, &c);
    double complex x = third(&h, "shop", 0), want[3] = {x * 0.48 / 12.47, 0, 0};
    expect(&h, want, cabs(x));
    ck_assert(h.study->i_n3[kl_feeder_find_section(h.f, "feed")] > 0.5 * cabs(x) * 0.48 / 12.47);
    harness_free(&h);
}
END_TEST

/* Ungrounded wye/wye: no neutral on either side, so no zero sequence can
 * flow: each phase carries its own triplen less the three's mean, scaled by
 * the ratio (I_0 = 0).  A balanced set, pure zero sequence, is left with
 * only the residue of the solved voltages' unbalance. */
START_TEST(ungrounded_wye_traps_zero_sequence)
{
    static const tcase c = {"y-y", BANK3("wye", "wye"), "abc", WYE_ABC};
    harness h;
    run(&h, &c);
    double complex x[3], want[3];
    double k = 0.48 / 12.47;
    for (int p = 0; p < 3; p++)
        x[p] = third(&h, "shop", p);
    for (int p = 0; p < 3; p++)
        want[p] = k * (x[p] - (x[0] + x[1] + x[2]) / 3.0);
    expect(&h, want, cabs(x[0]));
    ck_assert(cabs(want[0]) < 0.01 * k * cabs(x[0]));
    harness_free(&h);
}
END_TEST

/* Delta/grounded wye step-down: the secondary winding of phase a sits on the
 * primary delta's A-C winding (kilter's 30-degree-lag connection,
 * transformer.c), phase b's on B-A, phase c's on C-B; winding A-C takes x_a / n_t
 * in at A and out at C, so I_A = (x_a - x_b) / n_t, I_B = (x_b - x_c) / n_t,
 * I_C = (x_c - x_a) / n_t, n_t = V_LL,high / V_LN,low, and the delta's lines sum
 * to zero: nothing on the primary neutral.  A balanced set is pure zero
 * sequence: it circulates in the delta, and the primary carries none. */
START_TEST(delta_primary)
{
    static const tcase one = {"d-gy-1", BANK3("delta", "grounded-wye"), "abc", WYE_A};
    static const tcase bal = {"d-gy-3", BANK3("delta", "grounded-wye"), "abc", WYE_ABC};
    static const tcase ung = {"d-y-3", BANK3("delta", "wye"), "abc", WYE_ABC};
    harness h;
    double nt = 12.47 / (0.48 / sqrt(3.0));
    run(&h, &one);
    double complex x = third(&h, "shop", 0), want[3] = {x / nt, 0, -x / nt};
    expect(&h, want, cabs(x));
    harness_free(&h);
    for (int u = 0; u < 2; u++) {
        run(&h, u ? &ung : &bal);
        double complex xa = third(&h, "shop", 0), xb = third(&h, "shop", 1),
                       xc = third(&h, "shop", 2);
        double complex w3[3] = {(xa - xb) / nt, (xb - xc) / nt, (xc - xa) / nt};
        expect(&h, w3, cabs(xa));
        ck_assert(cabs(w3[0]) < 0.01 * cabs(xa) / nt); /* trapped but for the residue */
        harness_free(&h);
    }
}
END_TEST

/* Wye/delta step-down (grounded or not): unit A feeds the delta winding a-b
 * (transformer.c).  A delta load on a-b draws y from line a and returns it by
 * b; with no circulating current the delta's winding currents are
 * I_ab = (I_a - I_b)/3 = 2y/3, I_bc = (I_b - I_c)/3 = -y/3, I_ca = -y/3, so
 * I_A = 2y / (3 n_w), I_B = I_C = -y / (3 n_w), n_w = V_LN,high / V_LL,low: they
 * sum to zero and nothing reaches the primary neutral (the grounded wye's
 * own zero-sequence path is driven by voltage, not by the load's harmonics).
 * A balanced delta load's triplens circulate inside it: nothing at all. */
START_TEST(wye_delta)
{
    static const tcase g = {"gy-d", BANK3("grounded-wye", "delta"), "abc", DELTA_AB};
    static const tcase u = {"y-d", BANK3("wye", "delta"), "abc", DELTA_AB};
    static const tcase bal = {"gy-d-3", BANK3("grounded-wye", "delta"), "abc", DELTA_ABC};
    harness h;
    double nw = 12.47 / sqrt(3.0) / 0.48;
    for (int k = 0; k < 2; k++) {
        run(&h, k ? &u : &g);
        double complex y = third(&h, "shop", 0);
        double complex want[3] = {2.0 * y / (3 * nw), -y / (3 * nw), -y / (3 * nw)};
        expect(&h, want, cabs(y));
        harness_free(&h);
    }
    run(&h, &bal);
    double complex y[3], line[3], want[3];
    for (int e = 0; e < 3; e++)
        y[e] = third(&h, "shop", e);
    for (int p = 0; p < 3; p++) /* line p: entry p leaves by it, entry p-1 returns */
        line[p] = y[p] - y[(p + 2) % 3];
    for (int p = 0; p < 3; p++)
        want[p] = (line[p] - line[(p + 1) % 3]) / 3.0 / nw;
    expect(&h, want, cabs(y[0]));
    ck_assert(cabs(want[0]) < 0.01 * cabs(y[0]) / nw); /* circulates in the load */
    harness_free(&h);
}
END_TEST

/* Delta/delta: winding currents as above divided by n = V_LL,high /
 * V_LL,low; the primary lines I_A = I_AB - I_CA = y / n, I_B = -y / n,
 * I_C = 0. */
START_TEST(delta_delta)
{
    static const tcase c = {"d-d", BANK3("delta", "delta"), "abc", DELTA_AB};
    harness h;
    run(&h, &c);
    double complex y = third(&h, "shop", 0), n = 12.47 / 0.48;
    double complex want[3] = {y / n, -y / n, 0};
    expect(&h, want, cabs(y));
    harness_free(&h);
}
END_TEST

/* Open wye/open delta on primary phases a, b: unit A feeds winding a-b, unit
 * B winding b-c, the third side open.  Line a meets only winding a-b, so
 * that winding carries I_a; line c only winding b-c, which carries -I_c.
 * I_A = I_a / n_w, I_B = -I_c / n_w, and their sum returns by the primary
 * neutral: a delta load on a-b (I_a = y, I_c = 0) puts y / n_w on it. */
START_TEST(open_wye_open_delta)
{
    static const tcase c = {"oy-od",
        "{name: bank, rating: 100 kVA, high: {voltage: 12.47 kV, connection: open-wye}, "
        "low: {voltage: 0.24 kV, connection: open-delta}, resistance: 1 %, reactance: 2 %}",
        "ab", DELTA_AB};
    harness h;
    run(&h, &c);
    double complex y = third(&h, "shop", 0), nw = 12.47 / sqrt(3.0) / 0.24;
    double complex want[3] = {y / nw, 0, 0};
    expect(&h, want, cabs(y));
    ck_assert(h.study->i_n3[kl_feeder_find_section(h.f, "feed")] > 0.5 * cabs(y) / cabs(nw));
    harness_free(&h);
}
END_TEST

#define UNIT(lo, kv) "{name: bank, rating: 50 kVA, high: {voltage: 7.2 kV, connection: single}, " \
    "low: {voltage: " kv ", connection: " lo "}, resistance: 1.1 %, reactance: 1.6 %}"

/* Single-phase unit line to neutral, single secondary, on phase b: the
 * primary winding sits between phase b and the neutral, so x (kV_low /
 * kV_high) flows in phase b and back in the neutral (the case: 0 A
 * before). */
START_TEST(single_line_to_neutral_passes)
{
    static const tcase c = {"1ph", UNIT("single", "0.24 kV"), "b",
        "  - {name: shop, bus: lv, power: {b: 20 + j5 kVA}, third_harmonic: 50 %}\n"};
    harness h;
    run(&h, &c);
    double complex x = third(&h, "shop", 1), want[3] = {0, x * 0.24 / 7.2, 0};
    expect(&h, want, cabs(x));
    harness_free(&h);
}
END_TEST

/* Center-tapped unit line to neutral on phase c: legs 1 and 2 (slots a, b)
 * 180 degrees apart, so their third harmonics are 3 x 180 = 540 = 180
 * degrees apart: equal legs cancel in the service neutral and add in the
 * primary winding, I_C = (I_1 - I_2) / n, n = 7200 / 120; a 240 V load (delta
 * a-b) draws from leg 1 and returns by leg 2, I_C = 2 z / n.  All of it
 * returns by the primary neutral. */
START_TEST(center_tap_line_to_neutral_passes)
{
    static const tcase c = {"ct", UNIT("center-tap", "240 V"), "c",
        "  - {name: lights, bus: lv, power: {a: 12 + j3 kVA, b: 8 + j2 kVA}, third_harmonic: 50 %}\n"
        "  - {name: dryer, bus: lv, connection: delta, power: {ab: 5 + j0 kVA}, third_harmonic: 20 %}\n"};
    harness h;
    run(&h, &c);
    double complex x1 = third(&h, "lights", 0), x2 = third(&h, "lights", 1),
                   z = third(&h, "dryer", 0), n = 7200.0 / 120.0;
    /* the legs' third harmonics are opposite (x2 = -|x2| e^(j3 phi_1)) */
    ck_assert(cabs(x1 / cabs(x1) + x2 / cabs(x2)) < 1e-12);
    double complex want[3] = {0, 0, (x1 - x2 + 2.0 * z) / n};
    expect(&h, want, cabs(x1));
    harness_free(&h);
}
END_TEST

/* Single-phase unit across two primary phases (a-b): its winding draws from
 * a and returns by b, never by the neutral: I_A = x r, I_B = -x r,
 * r = kV_low / kV_high.  The center-tapped one: I_A = (I_1 - I_2) (0.12/12.47),
 * I_B the opposite. */
START_TEST(line_to_line_unit_no_neutral)
{
    static const tcase s = {"ll-1",
        "{name: bank, rating: 50 kVA, high: {voltage: 12.47 kV, connection: single}, "
        "low: {voltage: 0.24 kV, connection: single}, resistance: 1.1 %, reactance: 1.6 %}", "ab",
        "  - {name: shop, bus: lv, power: {a: 20 + j5 kVA}, third_harmonic: 50 %}\n"};
    static const tcase ct = {"ll-ct",
        "{name: bank, rating: 50 kVA, high: {voltage: 12.47 kV, connection: single}, "
        "low: {voltage: 240 V, connection: center-tap}, resistance: 1.1 %, reactance: 1.6 %}", "ab",
        "  - {name: shop, bus: lv, power: {a: 12 + j3 kVA, b: 8 + j2 kVA}, third_harmonic: 50 %}\n"};
    harness h;
    run(&h, &s);
    double complex x = third(&h, "shop", 0), r = 0.24 / 12.47, want[3] = {x * r, -x * r, 0};
    expect(&h, want, cabs(x));
    harness_free(&h);
    run(&h, &ct);
    double complex x1 = third(&h, "shop", 0), x2 = third(&h, "shop", 1), k = 0.12 / 12.47;
    double complex w2[3] = {(x1 - x2) * k, -(x1 - x2) * k, 0};
    expect(&h, w2, cabs(x1));
    harness_free(&h);
}
END_TEST

/* The case: the same 50 % third-harmonic residential load, once
 * connected straight to the 7.2 kV primary phase and once behind a 7.2 kV /
 * 240 V center-tapped unit, puts about the same triplen current on the
 * primary neutral (ampere-turn balance: the unit changes only the losses'
 * share).  Before, the second showed 0 A. */
START_TEST(same_load_direct_or_behind_unit)
{
    static const char *direct =
        "sections:\n"
        "  - {name: feed, from: sub, to: pri, length: 1000 ft, construction: four-wire, phases: a}\n"
        "loads:\n"
        "  - {name: homes, bus: pri, power: {a: 40 + j10 kVA}, third_harmonic: 50 %}\n";
    static const char *behind =
        "sections:\n"
        "  - {name: feed, from: sub, to: pri, length: 1000 ft, construction: four-wire, phases: a}\n"
        "  - {name: xf, from: pri, to: lv, transformer: bank}\n"
        "transformers:\n  - " UNIT("center-tap", "240 V") "\n"
        "loads:\n"
        "  - {name: homes, bus: lv, connection: delta, power: {ab: 40 + j10 kVA}, third_harmonic: 50 %}\n";
    char text[4096];
    double in3[2];
    for (int k = 0; k < 2; k++) {
        harness h;
        harness_init(&h);
        snprintf(text, sizeof text, "%s%s", HEAD, k ? behind : direct);
        harness_solve_text(&h, text, k ? "behind" : "direct", KL_CARSON_FULL);
        HARNESS_OK(&h, harness_study(&h, NULL));
        in3[k] = h.study->i_n3[kl_feeder_find_section(h.f, "feed")];
        ck_assert(!isnan(h.study->i_n_rms[kl_feeder_find_section(h.f, "feed")]));
        harness_free(&h);
    }
    /* 0.5 x 41.2 kVA / 7.2 kV = 2.9 A */
    ck_assert_double_eq_tol(in3[0], 0.5 * sqrt(40.0 * 40 + 10 * 10) / 7.2, 0.05);
    ck_assert_double_eq_tol(in3[1], in3[0], 0.03 * in3[0]);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("triplen");
    TCase *tc = tcase_create("connections");
    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, grounded_wye_passes);
    tcase_add_test(tc, ungrounded_wye_traps_zero_sequence);
    tcase_add_test(tc, delta_primary);
    tcase_add_test(tc, wye_delta);
    tcase_add_test(tc, delta_delta);
    tcase_add_test(tc, open_wye_open_delta);
    tcase_add_test(tc, single_line_to_neutral_passes);
    tcase_add_test(tc, center_tap_line_to_neutral_passes);
    tcase_add_test(tc, line_to_line_unit_no_neutral);
    tcase_add_test(tc, same_load_direct_or_behind_unit);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? 1 : 0;
}
