/* Load flow physics and robustness: power balance, symmetry, circuit-theory
 * closed forms, transformer phase displacement, neutral current, topology
 * errors, non-convergence and allocation failure.  Sources beside each check. */
#include <check.h>
#include <stdio.h>
#include <stdlib.h>
#include "flow_fixture.h"
#include "harness.h"
#include "ref_ieee4.h"
#include "kl_flow.h"

static hand_feeder H;

/* Symmetric (transposed-like) three-phase line: self zs, mutual zm ohm/mile. */
static int sym_line(hand_feeder *h, double complex zs, double complex zm, double bs)
{
    double complex z[6] = {zs, zm, zm, zs, zm, zs};
    double b[6] = {bs, 0, 0, bs, 0, bs};
    return hf_matrix(h, "sym", "abc", z, b);
}

/* Builds and solves f in h (initialised here, freed by the caller with
 * harness_free); net and res point into h (NULL where a step failed). */
static kl_status run(harness *h, kl_feeder *f, const kl_flow_options *o, kl_network **net,
                     kl_flow_result **res)
{
    harness_init(h);
    harness_use(h, f);
    kl_status st = harness_build(h);
    if (!st)
        st = harness_solve(h, o);
    *net = h->net;
    *res = h->res;
    return st;
}

static const char *first(const kl_errors *e)
{
    return e->count ? e->items[0].message : "(no message)";
}

/* Unbalanced feeder with every load model, a delta load, a capacitor and a
 * delta/grounded-wye bank. */
static void build_mixed(hand_feeder *h)
{
    hf_init(h, "mixed", "src", 12.47);
    /* the IEEE 4-node 4-wire line (tests/ref_ieee4.c) as realistic data */
    double b[6] = {5.9, -1.9, -1.2, 5.6, -0.7, 5.3};
    int c = hf_matrix(h, "main", "abc", ref_ieee4_z_4wire, b);
    hf_line(h, "s1", "src", "b1", 2000, c);
    hf_transformer(h, "t1", "b1", "b2", 6000, 12.47, KL_WINDING_DELTA, 4.16,
                   KL_WINDING_GRD_WYE, 1, 6);
    hf_line(h, "s2", "b2", "b3", 2500, c);
    hf_line(h, "s3", "b3", "b4", 1000, c);
    hf_load(h, "l1", "b3", KL_CONN_WYE, KL_LOAD_PQ, (double[]){900, 300, 600},
            (double[]){400, 100, 350});
    hf_load(h, "l2", "b4", KL_CONN_DELTA, KL_LOAD_Z, (double[]){200, 0, 350},
            (double[]){100, 0, 120});
    hf_load(h, "l3", "b4", KL_CONN_WYE, KL_LOAD_I, (double[]){0, 400, 0},
            (double[]){0, 150, 0});
    int z3 = hf_load(h, "l4", "b1", KL_CONN_WYE, KL_LOAD_ZIP, (double[]){100, 200, 300},
                     (double[]){50, 60, 70});
    h->load[z3].zip[0] = 0.3;
    h->load[z3].zip[1] = 0.3;
    h->load[z3].zip[2] = 0.4;
    int d = hf_load(h, "l5", NULL, KL_CONN_WYE, KL_LOAD_PQ, (double[]){50, 80, 20},
                    (double[]){20, 30, 10});
    h->load[d].section = 2;
    hf_cap(h, "c1", "b4", (double[]){300, 300, 300});
}

/* Conservation of complex power (Tellegen's theorem): what enters at the
 * source equals the loads plus every section's loss, to 1e-6 relative. */
START_TEST(test_power_balance)
{
    kl_network *n;
    kl_flow_result *r;
    harness h;
    build_mixed(&H);
    ck_assert_msg(run(&h, &H.f, NULL, &n, &r) == KL_OK, "%s", first(&h.err));
    kl_complex in = 0, out = 0;
    for (int p = 0; p < 3; p++) {
        in += r->s_head[p];
        out += r->s_loads[p] + r->s_losses[p];
    }
    ck_assert_msg(cabs(in - out) <= 1e-6 * cabs(in), "in %g%+gj out %g%+gj", creal(in),
                  cimag(in), creal(out), cimag(out));
    /* losses are positive in total (passive network) */
    ck_assert(creal(r->s_losses[0] + r->s_losses[1] + r->s_losses[2]) > 0);
    harness_free(&h);
}
END_TEST

/* A balanced feeder gives balanced results: equal magnitudes, 120 degrees
 * apart (symmetrical network + balanced load: common practice). */
START_TEST(test_balanced)
{
    kl_network *n;
    kl_flow_result *r;
    harness h;
    hf_init(&H, "balanced", "src", 12.47);
    int c = sym_line(&H, 0.5 + 1.2 * I, 0.15 + 0.45 * I, 5.5);
    hf_line(&H, "s1", "src", "b1", 5000, c);
    hf_transformer(&H, "t1", "b1", "b2", 5000, 12.47, KL_WINDING_DELTA, 4.16,
                   KL_WINDING_GRD_WYE, 1, 6);
    hf_line(&H, "s2", "b2", "b3", 3000, c);
    hf_load(&H, "l1", "b3", KL_CONN_WYE, KL_LOAD_PQ, (double[]){800, 800, 800},
            (double[]){400, 400, 400});
    hf_load(&H, "l2", "b3", KL_CONN_DELTA, KL_LOAD_Z, (double[]){300, 300, 300},
            (double[]){100, 100, 100});
    ck_assert_msg(run(&h, &H.f, NULL, &n, &r) == KL_OK, "%s", first(&h.err));
    for (int b = 0; b < H.f.nbuses; b++) {
        kl_complex *v = r->v + 3 * b;
        for (int p = 1; p < 3; p++) {
            /* V_p = V_a * exp(-j 120 p deg) */
            kl_complex want = v[0] * cexp(-I * 120.0 * p * DEG);
            ck_assert_msg(cabs(v[p] - want) <= 1e-7 * cabs(v[0]), "bus %d phase %d", b, p);
        }
    }
    for (int s = 0; s < H.f.nsections; s++) {
        kl_complex *i = r->i + 3 * s;
        ck_assert(cabs(i[0] + i[1] + i[2]) <= 1e-7 * cabs(i[0]));
    }
    harness_free(&h);
}
END_TEST

/* Circuit theory (Ohm's law, common practice): one phase-a line of series
 * impedance Z feeding a constant-impedance load Zl gives V = E Zl/(Z + Zl). */
START_TEST(test_single_phase_closed_form)
{
    kl_network *n;
    kl_flow_result *r;
    harness h;
    hf_init(&H, "one phase", "src", 12.47);
    double complex z[6] = {0.6 + 1.1 * I, 0, 0, 0, 0, 0};
    double b[6] = {0};
    int c = hf_matrix(&H, "a-only", "a", z, b);
    hf_line(&H, "s1", "src", "b1", MILE / FT * 2, c); /* 2 miles */
    hf_load(&H, "l1", "b1", KL_CONN_WYE, KL_LOAD_Z, (double[]){1500, 0, 0},
            (double[]){700, 0, 0});
    ck_assert_msg(run(&h, &H.f, NULL, &n, &r) == KL_OK, "%s", first(&h.err));
    double vn = 12470 / sqrt(3.0);
    kl_complex zl = vn * vn / conj(1500e3 + 700e3 * I), zline = 2 * (0.6 + 1.1 * I);
    kl_complex want = vn * zl / (zline + zl);
    ck_assert_msg(cabs(r->v[3 * 1] - want) <= 1e-5 * vn, "%g vs %g", cabs(r->v[3]), cabs(want));
    ck_assert(r->v[3 + 1] == 0 && r->v[3 + 2] == 0);
    harness_free(&h);
}
END_TEST

/* Thevenin source (common practice): balanced constant-impedance load Zl
 * behind z1 only.  The tap changer holds the bus at the set voltage, so the
 * bus sits at it on every phase and the voltage behind the equivalent is
 * E = V (z1 + Zl)/Zl. */
START_TEST(test_thevenin_source)
{
    kl_network *n;
    kl_flow_result *r;
    harness h;
    hf_init(&H, "thevenin", "src", 12.47);
    H.f.source.has_equivalent = 1;
    H.f.source.z1_ohm = 0.3 + 2.1 * I;
    H.f.source.z0_ohm = 0.6 + 6.3 * I;
    int c = sym_line(&H, 0, 0, 0);
    H.cons[c].z_given[0][0] = H.cons[c].z_given[1][1] = H.cons[c].z_given[2][2] = 1e-9;
    hf_section(&H, "sw", "src", "b1", KL_SEC_SWITCH);
    H.sec[0].phases = KL_PH_ABC;
    hf_load(&H, "l1", "b1", KL_CONN_WYE, KL_LOAD_Z, (double[]){2000, 2000, 2000},
            (double[]){900, 900, 900});
    ck_assert_msg(run(&h, &H.f, NULL, &n, &r) == KL_OK, "%s", first(&h.err));
    double vn = 12470 / sqrt(3.0);
    kl_complex zl = vn * vn / conj(2000e3 + 900e3 * I);
    for (int p = 0; p < 3; p++) {
        kl_complex want = vn * cexp(-I * 120.0 * p * DEG);
        ck_assert_msg(cabs(r->v[3 + p] - want) <= 1e-5 * vn, "phase %d", p);
        ck_assert_msg(cabs(r->source_emf[p] - want * (0.3 + 2.1 * I + zl) / zl) <= 1e-5 * vn,
                      "emf phase %d", p);
    }
    harness_free(&h);
}
END_TEST

/* Transformer connections at no load: rated load-side voltage, and the ANSI
 * standard phase displacement (ANSI/IEEE C57.12.00: the low-voltage side lags
 * the high-voltage side by 30 degrees for delta-wye and wye-delta banks,
 * from memory), whichever side faces the source. */
START_TEST(test_transformer_no_load)
{
    static const struct { kl_winding hi, lo; int up; double shift; } C[] = {
        {KL_WINDING_GRD_WYE, KL_WINDING_GRD_WYE, 0, 0},
        {KL_WINDING_DELTA, KL_WINDING_GRD_WYE, 0, -30},
        {KL_WINDING_GRD_WYE, KL_WINDING_DELTA, 1, +30}, /* step-up: the wye high side leads */
        {KL_WINDING_DELTA, KL_WINDING_GRD_WYE, 1, +30},  /* step-up: the delta high side leads */
        {KL_WINDING_WYE, KL_WINDING_DELTA, 0, -30},
        {KL_WINDING_DELTA, KL_WINDING_DELTA, 0, 0},
        {KL_WINDING_GRD_WYE, KL_WINDING_DELTA, 0, -30},
    };
    for (size_t k = 0; k < sizeof C / sizeof C[0]; k++) {
        kl_network *n;
        kl_flow_result *r;
        harness h;
        double kv_src = C[k].up ? 4.16 : 12.47, kv_load = C[k].up ? 12.47 : 4.16;
        hf_init(&H, "xf", "src", kv_src);
        hf_transformer(&H, "t", "src", "b1", 3000, 12.47, C[k].hi, 4.16, C[k].lo, 1, 6);
        ck_assert_msg(run(&h, &H.f, NULL, &n, &r) == KL_OK, "case %zu: %s", k, first(&h.err));
        double vb = kv_load * 1000 / sqrt(3.0);
        ck_assert_msg(fabs(r->v_base_ln[1] - vb) < 1e-6 * vb, "case %zu base", k);
        for (int p = 0; p < 3; p++) {
            kl_complex want = vb * cexp(I * (C[k].shift - 120.0 * p) * DEG);
            ck_assert_msg(cabs(r->v[3 + p] - want) <= 1e-9 * vb, "case %zu phase %d: %.3f V "
                          "%.2f deg", k, p, cabs(r->v[3 + p]), carg(r->v[3 + p]) / DEG);
        }
        harness_free(&h);
    }
}
END_TEST

/* Every transformer connection conserves power: input = load + I^2 R of the
 * bank, and with r = x = 0 the loss is zero (ideal transformer: common practice). */
START_TEST(test_transformer_power)
{
    static const kl_winding C[][2] = {
        {KL_WINDING_GRD_WYE, KL_WINDING_GRD_WYE}, {KL_WINDING_DELTA, KL_WINDING_GRD_WYE},
        {KL_WINDING_WYE, KL_WINDING_DELTA}, {KL_WINDING_DELTA, KL_WINDING_DELTA},
        {KL_WINDING_OPEN_WYE, KL_WINDING_OPEN_DELTA}};
    for (size_t k = 0; k < sizeof C / sizeof C[0]; k++) {
        kl_network *n;
        kl_flow_result *r;
        harness h;
        hf_init(&H, "xf", "src", 12.47);
        hf_transformer(&H, "t", "src", "b1", 3000, 12.47, C[k][0], 0.48, C[k][1], 0, 0);
        if (C[k][0] == KL_WINDING_OPEN_WYE)
            H.sec[0].phases = KL_PH_A | KL_PH_B;
        kl_connection conn = C[k][1] == KL_WINDING_GRD_WYE ? KL_CONN_WYE : KL_CONN_DELTA;
        hf_load(&H, "l", "b1", conn, KL_LOAD_PQ, (double[]){300, 200, 250},
                (double[]){100, 50, 80});
        ck_assert_msg(run(&h, &H.f, NULL, &n, &r) == KL_OK, "case %zu: %s", k, first(&h.err));
        kl_complex in = r->s_head[0] + r->s_head[1] + r->s_head[2];
        kl_complex ld = r->s_loads[0] + r->s_loads[1] + r->s_loads[2];
        ck_assert_msg(cabs(in - 750e3 - 230e3 * I) <= 1e-6 * cabs(in), "case %zu: in %g", k,
                      creal(in));
        ck_assert(cabs(ld - 750e3 - 230e3 * I) <= 1e-6 * cabs(ld));
        harness_free(&h);
    }
}
END_TEST

/* Center-tapped 120/240 V secondary: legs at +120 V and -120 V, 240 V across
 * (common practice); a 240 V load across the legs takes its power. */
START_TEST(test_center_tap)
{
    kl_network *n;
    kl_flow_result *r;
    harness h;
    hf_init(&H, "ct", "src", 12.47);
    hf_transformer(&H, "t", "src", "b1", 50, 7.2, KL_WINDING_SINGLE, 0.24,
                   KL_WINDING_CENTER_TAP, 1.1, 1.8);
    H.sec[0].phases = KL_PH_B;
    H.xf[0].kv_high = 12.47 / sqrt(3.0);
    ck_assert_msg(run(&h, &H.f, NULL, &n, &r) == KL_OK, "%s", first(&h.err));
    kl_complex va = r->v[3], vb = r->v[4];
    ck_assert(fabs(cabs(va) - 120) < 1e-9 && fabs(cabs(vb) - 120) < 1e-9);
    ck_assert(cabs(va + vb) < 1e-9);
    ck_assert(fabs(cabs(va - vb) - 240) < 1e-9);
    harness_free(&h);
    hf_load(&H, "house", "b1", KL_CONN_DELTA, KL_LOAD_PQ, (double[]){10, 0, 0},
            (double[]){3, 0, 0});
    hf_load(&H, "lights", "b1", KL_CONN_WYE, KL_LOAD_PQ, (double[]){1.5, 0, 0},
            (double[]){0.2, 0, 0});
    ck_assert_msg(run(&h, &H.f, NULL, &n, &r) == KL_OK, "%s", first(&h.err));
    kl_complex in = r->s_head[0] + r->s_head[1] + r->s_head[2];
    ck_assert(creal(in) > 11.5e3 && creal(in) < 11.5e3 * 1.05);
    ck_assert(cabs(in - 11.5e3 - 3.2e3 * I - (r->s_losses[0] + r->s_losses[1] + r->s_losses[2]))
              <= 1e-6 * cabs(in));
    harness_free(&h);
}
END_TEST

/* Neutral current through tn: with the neutral grounded at both ends its
 * voltage drop is zero, so z_na Ia + z_nb Ib + z_nc Ic + z_nn In = 0
 * (Kersting ch. 4 Kron reduction, from memory).  Primitive matrix of
 * Kersting's example 4.1 (ohm/mile, from memory). */
START_TEST(test_neutral_current)
{
    static const double complex zp[4][4] = {
        {0.4013 + 1.4133 * I, 0.0953 + 0.8515 * I, 0.0953 + 0.7266 * I, 0.0953 + 0.7524 * I},
        {0.0953 + 0.8515 * I, 0.4013 + 1.4133 * I, 0.0953 + 0.7802 * I, 0.0953 + 0.7865 * I},
        {0.0953 + 0.7266 * I, 0.0953 + 0.7802 * I, 0.4013 + 1.4133 * I, 0.0953 + 0.7674 * I},
        {0.0953 + 0.7524 * I, 0.0953 + 0.7865 * I, 0.0953 + 0.7674 * I, 0.6873 + 1.5465 * I}};
    kl_network *n;
    kl_flow_result *r;
    harness h;
    hf_init(&H, "neutral", "src", 12.47);
    double complex z[6] = {0};
    double b[6] = {0};
    int c = hf_matrix(&H, "4w", "abc", z, b);
    kl_construction *cn = &H.cons[c];
    cn->derived = 1;
    cn->ntn = 1;
    for (int i = 0; i < 3; i++) {
        cn->tn[0][i] = -zp[3][i] / zp[3][3];
        for (int j = 0; j < 3; j++)
            cn->zabc[i][j] = (zp[i][j] - zp[i][3] * zp[3][j] / zp[3][3]) / MILE;
    }
    hf_line(&H, "s1", "src", "b1", 3000, c);
    hf_load(&H, "l1", "b1", KL_CONN_WYE, KL_LOAD_PQ, (double[]){1200, 500, 200},
            (double[]){500, 200, 100});
    ck_assert_msg(run(&h, &H.f, NULL, &n, &r) == KL_OK, "%s", first(&h.err));
    kl_complex *i = r->i, in = r->i_neutral[0];
    kl_complex drop = zp[3][0] * i[0] + zp[3][1] * i[1] + zp[3][2] * i[2] + zp[3][3] * in;
    ck_assert_msg(cabs(drop) <= 1e-9 * cabs(zp[3][3] * in), "neutral drop %g", cabs(drop));
    ck_assert(cabs(in) > 1.0); /* an unbalanced load puts current in the neutral */
    ck_assert(cabs(r->i_earth[0] + i[0] + i[1] + i[2] + in) < 1e-9 * cabs(in));
    harness_free(&h);
}
END_TEST

/* Bad networks get a clear error (the brief's rules: islands, loops, phases
 * absent upstream, impossible loading); an open switch is not one. */
START_TEST(test_loop_and_island)
{
    harness h;
    harness_init(&h);
    hf_init(&H, "loop", "src", 12.47);
    int c = sym_line(&H, 0.5 + 1 * I, 0.1 + 0.4 * I, 0);
    hf_line(&H, "s1", "src", "b1", 1000, c);
    hf_line(&H, "s2", "b1", "b2", 1000, c);
    hf_line(&H, "tie", "b2", "src", 1000, c);
    harness_use(&h, &H.f);
    ck_assert_int_eq(harness_build(&h), KL_ETOPO);
    ck_assert(h.net == NULL);
    ck_assert(strstr(first(&h.err), "loop") && strstr(first(&h.err), "nodal"));
    ck_assert(strncmp(h.err.items[0].element, "section ", 8) == 0); /* s2 or tie: either closes it */
    harness_free(&h);

    harness_init(&h);
    H.sec[2].kind = KL_SEC_SWITCH;
    H.sec[2].closed = 0;
    H.sec[2].phases = KL_PH_ABC;
    hf_line(&H, "s4", "b3", "b4", 1000, c);
    hf_section(&H, "open", "b2", "b3", KL_SEC_SWITCH);
    H.sec[4].closed = 0;
    harness_use(&h, &H.f);
    /* beyond an open switch the buses are de-energized, not an error (issue 12 point 5):
     * an open switch carries no current (common practice), so they sit at zero volts */
    ck_assert_msg(harness_build(&h) == KL_OK, "%s", first(&h.err));
    HARNESS_OK(&h, harness_solve(&h, NULL));
    for (int k = 3; k < 5; k++) {
        ck_assert_int_eq(h.res->phases[k], 0);
        for (int p = 0; p < 3; p++)
            ck_assert(h.res->v[3 * k + p] == 0);
    }
    ck_assert(cabs(h.res->v[3 * 2]) > 0.9 * 12470 / sqrt(3.0));
    harness_free(&h);
}
END_TEST

START_TEST(test_phase_absent_upstream)
{
    harness h;
    harness_init(&h);
    hf_init(&H, "phases", "src", 12.47);
    double complex z[6] = {0, 0, 0, 1.3 + 1.3 * I, 0.2 + 0.4 * I, 1.3 + 1.3 * I};
    double b[6] = {0};
    int bc = hf_matrix(&H, "bc", "bc", z, b);
    int c3 = sym_line(&H, 0.5 + 1 * I, 0.1 + 0.4 * I, 0);
    hf_line(&H, "s1", "src", "b1", 1000, bc);
    hf_line(&H, "s2", "b1", "b2", 1000, c3);
    harness_use(&h, &H.f);
    ck_assert_int_eq(harness_build(&h), KL_ETOPO);
    ck_assert(strstr(first(&h.err), "phase(s) a"));
    ck_assert_str_eq(h.err.items[0].element, "section s2");
    harness_free(&h);
    /* a load on a phase the bus lacks */
    harness_init(&h);
    H.sec[1].construction = bc;
    H.sec[1].phases = KL_PH_B | KL_PH_C;
    hf_load(&H, "wrong", "b2", KL_CONN_WYE, KL_LOAD_PQ, (double[]){10, 0, 0}, (double[]){1, 0, 0});
    harness_use(&h, &H.f);
    ck_assert_int_eq(harness_build(&h), KL_EINPUT);
    ck_assert_str_eq(h.err.items[0].element, "load wrong");
    harness_free(&h);
}
END_TEST

/* Load beyond the feeder's capability: the sweep must say it did not
 * converge, where, and why; never return numbers as results.  (A 12.47 kV
 * line of ~10 ohm cannot deliver 100 MW: common practice.) */
START_TEST(test_voltage_collapse)
{
    kl_network *n;
    kl_flow_result *r;
    harness h;
    hf_init(&H, "collapse", "src", 12.47);
    int c = sym_line(&H, 0.5 + 1.2 * I, 0.15 + 0.45 * I, 0);
    hf_line(&H, "s1", "src", "far", 40000, c);
    hf_load(&H, "huge", "far", KL_CONN_WYE, KL_LOAD_PQ, (double[]){30000, 30000, 30000},
            (double[]){10000, 10000, 10000});
    kl_status st = run(&h, &H.f, NULL, &n, &r);
    ck_assert_int_eq(st, KL_ENOCONV);
    ck_assert(!r->converged);
    ck_assert_msg(strstr(first(&h.err), "did not converge") && strstr(first(&h.err), "far") &&
                  strstr(first(&h.err), "beyond what the"), "%s", first(&h.err));
    harness_free(&h);
}
END_TEST

/* Allocation failure anywhere in the build or the result record gives
 * KL_ENOMEM and leaks nothing (sanitizer build). */
START_TEST(test_alloc_failure)
{
    build_mixed(&H);
    for (long k = 0; k < 80; k++) {
        harness h;
        harness_init(&h);
        harness_use(&h, &H.f);
        kl_alloc_fail_after(k);
        kl_status st = harness_build(&h);
        if (st == KL_OK)
            st = harness_result(&h);
        kl_alloc_fail_after(-1);
        ck_assert(st == KL_OK || st == KL_ENOMEM);
        if (st == KL_OK) {
            kl_flow_options o;
            kl_flow_options_default(&o);
            ck_assert_int_eq(kl_flow_solve(h.net, &o, h.res, &h.err), KL_OK);
        }
        harness_free(&h);
    }
}
END_TEST

/* No allocation while solving: repeated solves at other load levels. */
START_TEST(test_no_alloc_in_solve)
{
    kl_network *n;
    kl_flow_result *r;
    harness h;
    build_mixed(&H);
    ck_assert(run(&h, &H.f, NULL, &n, &r) == KL_OK);
    kl_flow_options o;
    kl_flow_options_default(&o);
    long before = kl_alloc_count();
    double p_prev = 0;
    for (int k = 1; k <= 5; k++) {
        o.load_scale = 0.25 * k;
        ck_assert_int_eq(kl_flow_solve(n, &o, r, &h.err), KL_OK);
        double p = creal(r->s_head[0] + r->s_head[1] + r->s_head[2]);
        ck_assert(p > p_prev); /* more load, more input */
        p_prev = p;
    }
    ck_assert_int_eq(kl_alloc_count(), before);
    harness_free(&h);
}
END_TEST


static void add_regulator(hand_feeder *h, kl_reg_connection conn, int phases, int shared,
                          kl_reg_mode mode)
{
    int s = hf_section(h, "reg", "src", "out", KL_SEC_REGULATOR);
    h->sec[s].device = 0;
    h->sec[s].phases = KL_PH_ABC;
    kl_regulator *r = &h->reg[0];
    memset(r, 0, sizeof *r);
    r->name = "reg";
    r->conn = conn;
    r->mode = mode;
    r->phases = phases;
    r->shared = shared;
    r->steps = 16;
    r->step_pu = 0.00625;
    r->voltage_level_v = 122;
    r->bandwidth_v = 2;
    r->pt_ratio = 60;
    r->ct_primary_a = 300;
    h->f.nregulators = 1;
}

/* Open-delta regulator (two units, ab and cb, sharing b): at no load the
 * regulated line-to-line voltages are (1 + 0.00625 tap) times the source's,
 * the third closes the triangle and the shared phase passes through
 * (Kersting ch. 7, from memory). */
START_TEST(test_regulator_open_delta)
{
    kl_network *n;
    kl_flow_result *r;
    harness h;
    hf_init(&H, "open delta reg", "src", 12.47);
    add_regulator(&H, KL_REG_OPEN_DELTA, KL_PH_A | KL_PH_C, KL_PH_B, KL_REG_FIXED);
    H.reg[0].tap[0] = 8;
    H.reg[0].tap[2] = 4;
    ck_assert_msg(run(&h, &H.f, NULL, &n, &r) == KL_OK, "%s", first(&h.err));
    kl_complex *vs = r->v, *vo = r->v + 3;
    kl_complex ab = (vo[0] - vo[1]) / (vs[0] - vs[1]), bc = (vo[1] - vo[2]) / (vs[1] - vs[2]);
    ck_assert_msg(cabs(ab - 1.05) < 1e-12, "ab ratio %g", cabs(ab));
    ck_assert_msg(cabs(bc - 1.025) < 1e-12, "bc ratio %g", cabs(bc));
    ck_assert(cabs(vo[1] - vs[1]) < 1e-9 * cabs(vo[0])); /* b passes through */
    harness_free(&h);
    /* closed delta at no load: V_ab = a_ab V_AB + (1 - a_bc) V_BC, cyclic
     * (Kersting ch. 7, from memory) */
    H.reg[0].conn = KL_REG_CLOSED_DELTA;
    H.reg[0].phases = KL_PH_ABC;
    H.reg[0].shared = 0;
    H.reg[0].tap[1] = 4;
    H.reg[0].tap[2] = -6;
    ck_assert_msg(run(&h, &H.f, NULL, &n, &r) == KL_OK, "%s", first(&h.err));
    vs = r->v;
    vo = r->v + 3;
    double a_r[3] = {1.05, 1.025, 1 - 0.0375};
    for (int p = 0; p < 3; p++) {
        int q = (p + 1) % 3, t = (p + 2) % 3;
        kl_complex want = a_r[p] * (vs[p] - vs[q]) + (1 - a_r[q]) * (vs[q] - vs[t]);
        ck_assert_msg(cabs(vo[p] - vo[q] - want) < 1e-9 * cabs(want), "closed delta pair %d", p);
    }
    harness_free(&h);
}
END_TEST

/* A regulator that cannot reach its band stops at its last step (16 of
 * 5/8 %: the 32-step, +/-10 % regulator, common practice) and the flow
 * still converges; a band narrower than one step hunts and is reported. */
START_TEST(test_regulator_limits)
{
    kl_network *n;
    kl_flow_result *r;
    harness h;
    hf_init(&H, "reg limit", "src", 12.47);
    add_regulator(&H, KL_REG_WYE, KL_PH_ABC, 0, KL_REG_AUTO);
    H.reg[0].voltage_level_v = 140;
    int c = sym_line(&H, 0.5 + 1.2 * I, 0.15 + 0.45 * I, 0);
    hf_line(&H, "s1", "out", "b1", 3000, c);
    hf_load(&H, "l", "b1", KL_CONN_WYE, KL_LOAD_PQ, (double[]){500, 500, 500},
            (double[]){200, 200, 200});
    ck_assert_msg(run(&h, &H.f, NULL, &n, &r) == KL_OK, "%s", first(&h.err));
    for (int p = 0; p < 3; p++)
        ck_assert_int_eq(r->tap[p], 16);
    ck_assert(fabs(cabs(r->v[3]) / r->v_base_ln[1] - 1.10) < 1e-12);
    harness_free(&h);
    H.reg[0].voltage_level_v = 120.3;
    H.reg[0].bandwidth_v = 0.1;
    kl_status st = run(&h, &H.f, NULL, &n, &r);
    ck_assert_int_eq(st, KL_ENOCONV);
    ck_assert_msg(strstr(first(&h.err), "did not settle"), "%s", first(&h.err));
    harness_free(&h);
}
END_TEST

/* The source angle turns every voltage by the same angle (common practice). */
START_TEST(test_source_angle)
{
    kl_network *n1, *n2;
    kl_flow_result *r1, *r2;
    harness h1, h2;
    build_mixed(&H);
    ck_assert(run(&h1, &H.f, NULL, &n1, &r1) == KL_OK);
    H.f.source.angle_deg = 30;
    ck_assert(run(&h2, &H.f, NULL, &n2, &r2) == KL_OK);
    kl_complex rot = cexp(I * 30 * DEG);
    for (int k = 0; k < 3 * H.f.nbuses; k++)
        ck_assert(cabs(r2->v[k] - rot * r1->v[k]) < 1e-6 * 7200);
    harness_free(&h1);
    harness_free(&h2);
}
END_TEST

/* Small deterministic generator (Numerical Recipes' LCG constants: common practice). */
static unsigned rnd_state;
static double rnd(void)
{
    rnd_state = rnd_state * 1664525u + 1013904223u;
    return (rnd_state >> 8) / 16777216.0;
}

static const char *bus_name_of(int k)
{
    static char names[40][8];
    snprintf(names[k], sizeof names[k], "n%d", k);
    return names[k];
}

/* Random radial feeder: 3-phase main, laterals of 1 or 2 phases, every load
 * model, wye and delta, capacitors. */
static void build_random(hand_feeder *h, unsigned seed)
{
    rnd_state = seed;
    hf_init(h, "random", "n0", 12.47);
    const double complex *z3 = ref_ieee4_z_4wire; /* realistic data (tests/ref_ieee4.c) */
    double b3[6] = {5.9, -1.9, -1.2, 5.6, -0.7, 5.3};
    static const char *const phs[8] = {"", "a", "b", "ab", "c", "ac", "bc", "abc"};
    int cons[8];
    for (int m = 1; m < 8; m++)
        cons[m] = hf_matrix(h, phs[m], phs[m], z3, b3);
    int nb = 30, mask[40] = {KL_PH_ABC};
    for (int k = 1; k < nb; k++) {
        int parent = (int)(rnd() * k);
        int m = mask[parent];
        if (m == KL_PH_ABC && rnd() < 0.2)
            m &= ~(1 << (int)(rnd() * 3));          /* two-phase lateral */
        else if (m != KL_PH_A && m != KL_PH_B && m != KL_PH_C && rnd() < 0.3) {
            int bits[3], nbits = 0;              /* single-phase lateral */
            for (int p = 0; p < 3; p++)
                if (m & (1 << p))
                    bits[nbits++] = p;
            m = 1 << bits[(int)(rnd() * nbits)];
        }
        mask[k] = m;
        int c = cons[m];
        hf_bus(h, bus_name_of(k));
        hf_line(h, bus_name_of(k), bus_name_of(parent), bus_name_of(k), 200 + 800 * rnd(), c);
        h->sec[h->f.nsections - 1].phases = (uint8_t)m;
        double kw[3] = {0}, kvar[3] = {0};
        for (int p = 0; p < 3; p++)
            if (m & (1 << p)) {
                kw[p] = 5 + 60 * rnd();
                kvar[p] = 20 * rnd();
            }
        kl_load_model model = (kl_load_model)(1 + (int)(rnd() * 4));
        int delta = m == KL_PH_ABC && rnd() < 0.3;
        int l = hf_load(h, bus_name_of(k), bus_name_of(k), delta ? KL_CONN_DELTA : KL_CONN_WYE, model,
                        kw, kvar);
        h->load[l].zip[0] = 0.2;
        h->load[l].zip[1] = 0.3;
        h->load[l].zip[2] = 0.5;
        if (rnd() < 0.1)
            hf_cap(h, bus_name_of(k), bus_name_of(k), (double[]){m & 1 ? 50 : 0, m & 2 ? 50 : 0,
                                                             m & 4 ? 50 : 0});
    }
}

/* Random feeders: the solution satisfies every line's generalized equations
 * in the other direction, V_from = a V_to + b I_to and I_from = c V_to + d I_to
 * (Kersting ch. 6, from memory; the sweep itself uses A, B, c, d), and power
 * balances. */
START_TEST(test_random_feeders)
{
    for (unsigned seed = 1; seed <= 20; seed++) {
        kl_network *n;
        kl_flow_result *r;
        harness h;
        build_random(&H, seed);
        ck_assert_msg(run(&h, &H.f, NULL, &n, &r) == KL_OK, "seed %u: %s", seed, first(&h.err));
        for (int k = 0; k < n->nbranches; k++) {
            /* the sweep's layout: branch k feeds the bus at position k + 1 */
            ck_assert_int_eq(n->order[k + 1], n->br_to[k]);
            ck_assert_int_eq(n->pos[n->br_to[k]], k + 1);
            kl_complex vf[3], t[3], t2[3], a[9], b[9], c[9], d[9];
            /* generalized form of the branch (lines: from Z and Y, network.h),
             * against the sweep's ladder-form solution */
            kl_network_branch_abcd(n, k, a, b, c, d, NULL, NULL);
            kl_cm3_vec(a, kl_network_bus_v(n, n->br_to[k]), vf);
            kl_cm3_vec(b, kl_network_i_to(n, k), t);
            for (int p = 0; p < 3; p++)
                ck_assert_msg(!(n->br_phases[k] & (1 << p)) ||
                              cabs(vf[p] + t[p] - kl_network_bus_v(n, n->br_from[k])[p]) <
                                  1e-5 * 7200,
                              "seed %u branch %d phase %d", seed, k, p);
            kl_cm3_vec(c, kl_network_bus_v(n, n->br_to[k]), t);
            kl_cm3_vec(d, kl_network_i_to(n, k), t2);
            kl_complex ifr[3];
            kl_sweep_i_from(n, k, ifr);
            for (int p = 0; p < 3; p++)
                ck_assert(cabs(t[p] + t2[p] - ifr[p]) < 1e-9 * (1 + cabs(t2[p])));
        }
        kl_complex in = 0, out = 0;
        for (int p = 0; p < 3; p++) {
            in += r->s_head[p];
            out += r->s_loads[p] + r->s_losses[p];
        }
        ck_assert(cabs(in - out) <= 1e-6 * cabs(in));
        harness_free(&h);
    }
}
END_TEST

/* Single-phase unit across phases b and c (primary line to line): at no load
 * the secondary is V_bc / n, i.e. 240 V at -90 degrees for a 0-degree phase a
 * (common practice); a load's power is what the source delivers plus losses. */
START_TEST(test_line_to_line_unit)
{
    kl_network *n;
    kl_flow_result *r;
    harness h;
    hf_init(&H, "ll unit", "src", 12.47);
    hf_transformer(&H, "t", "src", "b1", 50, 12.47, KL_WINDING_SINGLE, 0.24, KL_WINDING_SINGLE,
                   1.1, 1.8);
    H.sec[0].phases = KL_PH_B | KL_PH_C;
    ck_assert_msg(run(&h, &H.f, NULL, &n, &r) == KL_OK, "%s", first(&h.err));
    ck_assert_int_eq(r->phases[1], KL_PH_B);
    ck_assert(cabs(r->v[3 + 1] - 240.0 * cexp(-I * 90 * DEG)) < 1e-9);
    harness_free(&h);
    hf_load(&H, "shop", "b1", KL_CONN_WYE, KL_LOAD_PQ, (double[]){0, 30, 0}, (double[]){0, 10, 0});
    ck_assert_msg(run(&h, &H.f, NULL, &n, &r) == KL_OK, "%s", first(&h.err));
    kl_complex in = r->s_head[0] + r->s_head[1] + r->s_head[2];
    kl_complex loss = r->s_losses[0] + r->s_losses[1] + r->s_losses[2];
    ck_assert(cabs(in - (30e3 + 10e3 * I) - loss) < 1e-6 * cabs(in));
    ck_assert(creal(loss) > 0 && creal(loss) < 0.02 * 30e3);
    ck_assert(r->s_head[0] == 0); /* phase a carries nothing */
    harness_free(&h);
}
END_TEST

/* The file's order and a line written far end first change nothing: results
 * are indexed by the feeder's own ids (a line is the same in both directions:
 * common practice). */
START_TEST(test_order_independence)
{
    kl_network *n1, *n2;
    kl_flow_result *r1, *r2;
    harness h1, h2;
    build_mixed(&H);
    ck_assert(run(&h1, &H.f, NULL, &n1, &r1) == KL_OK);
    int s3 = 3; /* s3: b3 -> b4 */
    int t = H.sec[s3].from;
    H.sec[s3].from = H.sec[s3].to;
    H.sec[s3].to = t;
    kl_section tmp = H.sec[0]; /* swap s1 and s3 in the list (s2 keeps its distributed load) */
    H.sec[0] = H.sec[3];
    H.sec[3] = tmp;
    ck_assert_msg(run(&h2, &H.f, NULL, &n2, &r2) == KL_OK, "%s", first(&h2.err));
    for (int k = 0; k < 3 * H.f.nbuses; k++)
        ck_assert(cabs(r2->v[k] - r1->v[k]) < 1e-6 * 7200);
    /* section s1 now sits at index 3; its sending-end current is unchanged */
    for (int p = 0; p < 3; p++)
        ck_assert(cabs(r2->i[3 * 3 + p] - r1->i[p]) < 1e-6 * (1 + cabs(r1->i[p])));
    harness_free(&h1);
    harness_free(&h2);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("flow_physics");
    TCase *tc = tcase_create("physics");
    tcase_add_test(tc, test_power_balance);
    tcase_add_test(tc, test_balanced);
    tcase_add_test(tc, test_single_phase_closed_form);
    tcase_add_test(tc, test_thevenin_source);
    tcase_add_test(tc, test_transformer_no_load);
    tcase_add_test(tc, test_transformer_power);
    tcase_add_test(tc, test_center_tap);
    tcase_add_test(tc, test_neutral_current);
    tcase_add_test(tc, test_loop_and_island);
    tcase_add_test(tc, test_phase_absent_upstream);
    tcase_add_test(tc, test_voltage_collapse);
    tcase_add_test(tc, test_alloc_failure);
    tcase_add_test(tc, test_no_alloc_in_solve);
    tcase_add_test(tc, test_regulator_open_delta);
    tcase_add_test(tc, test_regulator_limits);
    tcase_add_test(tc, test_source_angle);
    tcase_add_test(tc, test_random_feeders);
    tcase_add_test(tc, test_line_to_line_unit);
    tcase_add_test(tc, test_order_independence);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
