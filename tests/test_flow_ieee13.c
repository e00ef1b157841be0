/* IEEE PES 13-node test feeder: the load flow against the published results.
 *
 * Source of every expected value (unless marked): IEEE PES Distribution
 * System Analysis Subcommittee, "IEEE 13 Node Test Feeder" data sheet and
 * power-flow results (results dated 2004-06-24); companion paper W. H.
 * Kersting, "Radial distribution test feeders", IEEE PES Winter Meeting 2001.
 *
 * The feeder is built here from the published phase impedance and
 * susceptance matrices of configurations 601-607 (so this test depends on
 * neither the loader nor the line-constant code); the feeder file
 * feeders/reference/ieee-13-node.yaml is checked the same way by the CLI
 * test and by test_flow_ieee13_file below when the loader is present. */
#include <check.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "flow_fixture.h"
#include "harness.h"

static hand_feeder H;

static void build13(hand_feeder *h)
{
    /* published phase impedance (ohm/mile) and susceptance (uS/mile), upper triangle */
    static const double complex z601[6] = {0.3465 + 1.0179 * I, 0.1560 + 0.5017 * I,
        0.1580 + 0.4236 * I, 0.3375 + 1.0478 * I, 0.1535 + 0.3849 * I, 0.3414 + 1.0348 * I};
    static const double b601[6] = {6.2998, -1.9958, -1.2595, 5.9597, -0.7417, 5.6386};
    static const double complex z602[6] = {0.7526 + 1.1814 * I, 0.1580 + 0.4236 * I,
        0.1560 + 0.5017 * I, 0.7475 + 1.1983 * I, 0.1535 + 0.3849 * I, 0.7436 + 1.2112 * I};
    static const double b602[6] = {5.6990, -1.0817, -1.6905, 5.1795, -0.6588, 5.4246};
    static const double complex z603[6] = {0, 0, 0, 1.3294 + 1.3471 * I, 0.2066 + 0.4591 * I,
        1.3238 + 1.3569 * I};
    static const double b603[6] = {0, 0, 0, 4.7097, -0.8999, 4.6658};
    static const double complex z604[6] = {1.3238 + 1.3569 * I, 0, 0.2066 + 0.4591 * I, 0, 0,
        1.3294 + 1.3471 * I};
    static const double b604[6] = {4.6658, 0, -0.8999, 0, 0, 4.7097};
    static const double complex z605[6] = {0, 0, 0, 0, 0, 1.3292 + 1.3475 * I};
    static const double b605[6] = {0, 0, 0, 0, 0, 4.5193};
    static const double complex z606[6] = {0.7982 + 0.4463 * I, 0.3192 + 0.0328 * I,
        0.2849 - 0.0143 * I, 0.7891 + 0.4041 * I, 0.3192 + 0.0328 * I, 0.7982 + 0.4463 * I};
    static const double b606[6] = {96.8897, 0, 0, 96.8897, 0, 96.8897};
    static const double complex z607[6] = {1.3425 + 0.5124 * I, 0, 0, 0, 0, 0};
    static const double b607[6] = {88.9912, 0, 0, 0, 0, 0};

    hf_init(h, "ieee13 (hand-built)", "650", 4.16);
    int c601 = hf_matrix(h, "601", "abc", z601, b601);
    int c602 = hf_matrix(h, "602", "abc", z602, b602);
    int c603 = hf_matrix(h, "603", "bc", z603, b603);
    int c604 = hf_matrix(h, "604", "ac", z604, b604);
    int c605 = hf_matrix(h, "605", "c", z605, b605);
    int c606 = hf_matrix(h, "606", "abc", z606, b606);
    int c607 = hf_matrix(h, "607", "a", z607, b607);

    int s = hf_section(h, "reg", "650", "rg60", KL_SEC_REGULATOR);
    h->sec[s].device = 0;
    h->sec[s].phases = KL_PH_ABC;
    kl_regulator *r = &h->reg[0];
    r->name = "reg1";
    r->conn = KL_REG_WYE;
    r->mode = KL_REG_AUTO;
    r->phases = KL_PH_ABC;
    r->steps = 16;
    r->step_pu = 0.00625;
    r->voltage_level_v = 122;
    r->bandwidth_v = 2;
    r->pt_ratio = 20;
    r->ct_primary_a = 700;
    for (int p = 0; p < 3; p++) {
        r->ldc_r_v[p] = 3;
        r->ldc_x_v[p] = 9;
    }
    r->monitored = KL_PH_ABC;
    h->f.nregulators = 1;

    hf_line(h, "rg60-632", "rg60", "632", 2000, c601);
    hf_line(h, "632-645", "632", "645", 500, c603);
    hf_line(h, "645-646", "645", "646", 300, c603);
    hf_line(h, "632-633", "632", "633", 500, c602);
    hf_transformer(h, "xfm-1", "633", "634", 500, 4.16, KL_WINDING_GRD_WYE, 0.48,
                   KL_WINDING_GRD_WYE, 1.1, 2.0);
    int s671 = hf_line(h, "632-671", "632", "671", 2000, c601);
    hf_line(h, "671-684", "671", "684", 300, c604);
    hf_line(h, "684-611", "684", "611", 300, c605);
    hf_line(h, "684-652", "684", "652", 800, c607);
    hf_line(h, "671-680", "671", "680", 1000, c601);
    hf_section(h, "671-692", "671", "692", KL_SEC_SWITCH);
    h->sec[h->f.nsections - 1].phases = KL_PH_ABC;
    hf_line(h, "692-675", "692", "675", 500, c606);

    /* published loads, kW and kvar per phase (delta: ab, bc, ca) */
    hf_load(h, "634", "634", KL_CONN_WYE, KL_LOAD_PQ, (double[]){160, 120, 120},
            (double[]){110, 90, 90});
    hf_load(h, "645", "645", KL_CONN_WYE, KL_LOAD_PQ, (double[]){0, 170, 0},
            (double[]){0, 125, 0});
    hf_load(h, "646", "646", KL_CONN_DELTA, KL_LOAD_Z, (double[]){0, 230, 0},
            (double[]){0, 132, 0});
    hf_load(h, "652", "652", KL_CONN_WYE, KL_LOAD_Z, (double[]){128, 0, 0},
            (double[]){86, 0, 0});
    hf_load(h, "671", "671", KL_CONN_DELTA, KL_LOAD_PQ, (double[]){385, 385, 385},
            (double[]){220, 220, 220});
    hf_load(h, "675", "675", KL_CONN_WYE, KL_LOAD_PQ, (double[]){485, 68, 290},
            (double[]){190, 60, 212});
    hf_load(h, "692", "692", KL_CONN_DELTA, KL_LOAD_I, (double[]){0, 0, 170},
            (double[]){0, 0, 151});
    hf_load(h, "611", "611", KL_CONN_WYE, KL_LOAD_I, (double[]){0, 0, 170},
            (double[]){0, 0, 80});
    int d = hf_load(h, "632-671-distributed", NULL, KL_CONN_WYE, KL_LOAD_PQ,
                    (double[]){17, 66, 117}, (double[]){10, 38, 68});
    h->load[d].section = s671;
    hf_cap(h, "cap-675", "675", (double[]){200, 200, 200});
    hf_cap(h, "cap-611", "611", (double[]){0, 0, 100});
}

typedef struct {
    const char *bus;
    double mag[3], ang[3]; /* pu, degrees; mag 0 = phase absent */
} v_row;

/* Published node voltages (pu of the line-to-neutral base, degrees). */
static const v_row V13[] = {
    {"650", {1.0000, 1.0000, 1.0000}, {0.00, -120.00, 120.00}},
    {"rg60", {1.0625, 1.0500, 1.0687}, {0.00, -120.00, 120.00}},
    {"632", {1.0210, 1.0420, 1.0174}, {-2.49, -121.72, 117.83}},
    {"633", {1.0180, 1.0401, 1.0148}, {-2.56, -121.77, 117.82}},
    {"634", {0.9940, 1.0218, 0.9960}, {-3.23, -122.22, 117.34}},
    {"645", {0, 1.0329, 1.0155}, {0, -121.90, 117.86}},
    {"646", {0, 1.0311, 1.0134}, {0, -121.98, 117.90}},
    {"671", {0.9900, 1.0529, 0.9778}, {-5.30, -122.34, 116.02}},
    {"680", {0.9900, 1.0529, 0.9778}, {-5.30, -122.34, 116.02}},
    {"684", {0.9881, 0, 0.9758}, {-5.32, 0, 115.92}},
    {"611", {0, 0, 0.9738}, {0, 0, 115.78}},
    {"652", {0.9825, 0, 0}, {-5.25, 0, 0}},
    {"692", {0.9900, 1.0529, 0.9777}, {-5.31, -122.34, 116.02}},
    {"675", {0.9835, 1.0553, 0.9758}, {-5.56, -122.52, 116.03}},
};

typedef struct {
    const char *section;
    int recv;               /* 1: receiving-end current */
    double amps[3], ang[3];
} i_row;

/* Published line currents (A, degrees). */
static const i_row I13[] = {
    {"reg", 0, {593.30, 435.61, 626.92}, {-28.58, -140.91, 93.59}},
    {"rg60-632", 0, {558.40, 414.87, 586.60}, {-28.58, -140.91, 93.59}},
    {"632-633", 0, {81.33, 61.12, 62.70}, {-37.74, -159.09, 80.48}},
    {"632-645", 0, {0, 143.02, 65.21}, {0, -142.66, 57.83}},
    {"645-646", 0, {0, 65.21, 65.21}, {0, -122.17, 57.83}},
    {"632-671", 0, {478.29, 215.12, 475.50}, {-27.03, -134.66, 99.90}},
    {"671-684", 0, {63.07, 0, 71.15}, {-39.12, 0, 121.62}},
    {"671-692", 0, {229.11, 69.61, 178.38}, {-18.18, -55.19, 109.39}},
    {"692-675", 0, {205.33, 69.61, 124.07}, {-5.15, -55.19, 111.79}},
    {"684-611", 0, {0, 0, 71.15}, {0, 0, 121.61}},
    {"684-652", 0, {63.07, 0, 0}, {-39.12, 0, 0}},
    {"xfm-1", 1, {704.83, 529.73, 543.45}, {-37.74, -159.09, 80.47}},
};

static double angle_diff(double a, double b)
{
    double d = fmod(a - b + 540.0, 360.0) - 180.0;
    return fabs(d);
}

static int find_bus(const kl_feeder *f, const char *name)
{
    for (int b = 0; b < f->nbuses; b++)
        if (strcmp(f->buses[b].name, name) == 0)
            return b;
    return -1;
}

static int find_section(const kl_feeder *f, const char *name)
{
    for (int s = 0; s < f->nsections; s++)
        if (f->sections[s].name && strcmp(f->sections[s].name, name) == 0)
            return s;
    return -1;
}

/* Builds and solves the feeder in h with default options, asserted. */
static void solve(harness *h)
{
    HARNESS_OK(h, harness_build(h));
    HARNESS_OK(h, harness_solve(h, NULL));
    ck_assert(h->res->converged);
}

/* Every published check on a solved 13-node result; tol_pu and tol_deg for
 * voltages (the brief: 0.002 pu / 0.2 deg at most). */
static void check13(const kl_feeder *f, const kl_flow_result *r, double tol_pu, double tol_deg)
{
    /* published final taps A 10, B 8, C 11 */
    ck_assert_int_eq(r->tap[0], 10);
    ck_assert_int_eq(r->tap[1], 8);
    ck_assert_int_eq(r->tap[2], 11);
    double worst = 0;
    for (size_t k = 0; k < sizeof V13 / sizeof V13[0]; k++) {
        int b = find_bus(f, V13[k].bus);
        ck_assert_msg(b >= 0, "bus %s", V13[k].bus);
        for (int p = 0; p < 3; p++) {
            kl_complex v = r->v[3 * b + p];
            if (V13[k].mag[p] == 0) {
                ck_assert(cabs(v) == 0);
                continue;
            }
            double pu = cabs(v) / r->v_base_ln[b], deg = carg(v) / DEG;
            if (fabs(pu - V13[k].mag[p]) > worst)
                worst = fabs(pu - V13[k].mag[p]);
            ck_assert_msg(fabs(pu - V13[k].mag[p]) <= tol_pu, "bus %s phase %c: %.4f pu, "
                          "published %.4f", V13[k].bus, 'a' + p, pu, V13[k].mag[p]);
            ck_assert_msg(angle_diff(deg, V13[k].ang[p]) <= tol_deg, "bus %s phase %c: %.2f deg,"
                          " published %.2f", V13[k].bus, 'a' + p, deg, V13[k].ang[p]);
        }
    }
    fprintf(stderr, "13-node: largest voltage difference from the published %.5f pu\n", worst);
    for (size_t k = 0; k < sizeof I13 / sizeof I13[0]; k++) {
        int s = find_section(f, I13[k].section);
        ck_assert_msg(s >= 0, "section %s", I13[k].section);
        const kl_complex *i = (I13[k].recv ? r->i_recv : r->i) + 3 * s;
        for (int p = 0; p < 3; p++) {
            if (I13[k].amps[p] == 0)
                continue;
            double a = cabs(i[p]), deg = carg(i[p]) / DEG;
            /* within 0.5 % and 0.5 degrees */
            ck_assert_msg(fabs(a / I13[k].amps[p] - 1) <= 0.005, "%s phase %c: %.2f A, "
                          "published %.2f", I13[k].section, 'a' + p, a, I13[k].amps[p]);
            ck_assert_msg(angle_diff(deg, I13[k].ang[p]) <= 0.5, "%s phase %c: %.2f deg, "
                          "published %.2f", I13[k].section, 'a' + p, deg, I13[k].ang[p]);
        }
    }
    /* published input per phase (kW, kvar) within 0.5 %; losses per phase within 0.5 kW */
    static const double pin[3] = {1251.398, 977.332, 1348.461}, qin[3] = {681.570, 373.418, 669.784};
    static const double ploss[3] = {39.107, -4.697, 76.653};
    for (int p = 0; p < 3; p++) {
        double P = creal(r->s_head[p]) / 1000, Q = cimag(r->s_head[p]) / 1000;
        ck_assert_msg(fabs(P / pin[p] - 1) <= 0.005, "input P phase %c %.3f kW", 'a' + p, P);
        ck_assert_msg(fabs(Q / qin[p] - 1) <= 0.005, "input Q phase %c %.3f kvar", 'a' + p, Q);
        double L = creal(r->s_losses[p]) / 1000;
        ck_assert_msg(fabs(L - ploss[p]) <= 0.5, "loss phase %c %.3f kW, published %.3f",
                      'a' + p, L, ploss[p]);
    }
}

/* Published loads at the solved voltage (kW + j kvar) and capacitor output (kvar). */
static void check13_loads(const kl_feeder *f, const kl_flow_result *r)
{
    static const struct { const char *name; int entry; double kw, kvar; } L[] = {
        {"646", 1, 240.66, 138.12}, {"652", 0, 123.56, 83.02},
        {"611", 2, 165.54, 77.90}, {"692", 2, 168.37, 149.55}};
    for (size_t k = 0; k < sizeof L / sizeof L[0]; k++) {
        int l = -1;
        for (int m = 0; m < f->nloads; m++)
            if (strcmp(f->loads[m].name, L[k].name) == 0)
                l = m;
        ck_assert(l >= 0);
        kl_complex s = r->s_load[3 * l + L[k].entry] / 1000;
        ck_assert_msg(fabs(creal(s) - L[k].kw) <= 0.005 * L[k].kw, "load %s %.2f kW", L[k].name,
                      creal(s));
        ck_assert_msg(fabs(cimag(s) - L[k].kvar) <= 0.005 * L[k].kvar, "load %s %.2f kvar",
                      L[k].name, cimag(s));
    }
    static const double q675[3] = {193.44, 222.75, 190.45};
    for (int p = 0; p < 3; p++)
        ck_assert_msg(fabs(r->q_cap[p] / 1000 - q675[p]) <= 0.005 * q675[p], "cap 675 %c %.2f",
                      'a' + p, r->q_cap[p] / 1000);
    ck_assert(fabs(r->q_cap[3 + 2] / 1000 - 94.82) <= 0.005 * 94.82);
}

START_TEST(test_ieee13_published_matrices)
{
    harness h;
    harness_init(&h);
    build13(&H);
    harness_use(&h, &H.f);
    solve(&h);
    check13(&H.f, h.res, 0.002, 0.2);
    check13_loads(&H.f, h.res);
    harness_free(&h);
}
END_TEST

/* Fixed taps at the published values give the same state in one round. */
START_TEST(test_ieee13_fixed_taps)
{
    harness h;
    harness_init(&h);
    build13(&H);
    H.reg[0].mode = KL_REG_FIXED;
    H.reg[0].tap[0] = 10;
    H.reg[0].tap[1] = 8;
    H.reg[0].tap[2] = 11;
    harness_use(&h, &H.f);
    solve(&h);
    ck_assert_int_eq(h.res->reg_rounds, 0);
    check13(&H.f, h.res, 0.002, 0.2);
    harness_free(&h);
}
END_TEST

/* The bundled feeder file, through the loader and the line constants
 * (Carson's equations in the approximate form the published tables were
 * built with). */
START_TEST(test_ieee13_file)
{
    harness h;
    harness_init(&h);
    HARNESS_OK(&h, harness_load(&h, "feeders/reference/ieee-13-node.yaml"));
    HARNESS_OK(&h, harness_derive(&h, KL_CARSON_APPROX));
    solve(&h);
    check13(h.f, h.res, 0.002, 0.2);
    check13_loads(h.f, h.res);
    harness_free(&h);
}
END_TEST


/* Line branches keep Z and Y packed by phase count (network.h); expanded
 * again they are the published per-mile matrices times the section length
 * (data sheet, configurations 601, 604 (phases a, c) and 605 (phase c),
 * ohm/mile and uS/mile), zero on absent phases; the distributed load's
 * section splits at a quarter of its length (the lumped model, Kersting
 * ch. 3, from memory).  Then the write-back a rephasing uses: 604 moved one
 * phase on (a -> b, c -> a) holds its published a-a entry at b-b and its
 * c-c entry at a-a. */
static int section_id(const kl_feeder *f, const char *name)
{
    for (int s = 0; s < f->nsections; s++)
        if (strcmp(f->sections[s].name, name) == 0)
            return s;
    ck_abort_msg("no section %s", name);
    return -1;
}

static void check_packed(const kl_network *n, int k, double miles, double complex zaa,
                         int pa, double baa_us, int mask)
{
    kl_complex Z[9], Y[9];
    kl_network_line_zy(n, k, Z, Y);
    ck_assert_int_eq(n->br_phases[k], mask);
    ck_assert_msg(cabs(Z[4 * pa] - zaa * miles) <= 1e-12 * cabs(zaa * miles), "branch %d", k);
    ck_assert(fabs(cimag(Y[4 * pa]) - baa_us * 1e-6 * miles) <= 1e-12 * baa_us * 1e-6 * miles);
    for (int i = 0; i < 9; i++)
        if (!(mask & (1 << (i / 3))) || !(mask & (1 << (i % 3))))
            ck_assert(Z[i] == 0 && Y[i] == 0);
}

START_TEST(test_ieee13_packed_lines)
{
    harness h;
    harness_init(&h);
    build13(&H);
    harness_use(&h, &H.f);
    HARNESS_OK(&h, harness_build(&h));
    kl_network *net = h.net;
    const double mi = 1609.344 / 0.3048; /* feet per mile */
    int k601 = net->sec_first[section_id(&H.f, "671-680")];
    check_packed(net, k601, 1000 / mi, 0.3465 + 1.0179 * I, 0, 6.2998, KL_PH_ABC);
    kl_complex Z[9];
    kl_network_line_zy(net, k601, Z, NULL);
    ck_assert(cabs(Z[5] - (0.1535 + 0.3849 * I) * (1000 / mi)) <= 1e-12); /* Zbc */
    ck_assert(cabs(Z[7] - Z[5]) == 0);
    int k605 = net->sec_first[section_id(&H.f, "684-611")];
    check_packed(net, k605, 300 / mi, 1.3292 + 1.3475 * I, 2, 4.5193, KL_PH_C);
    int s671 = section_id(&H.f, "632-671");
    ck_assert_int_ne(net->sec_first[s671], net->sec_last[s671]);
    check_packed(net, net->sec_first[s671], 0.25 * 2000 / mi, 0.3465 + 1.0179 * I, 0, 6.2998,
                 KL_PH_ABC);
    check_packed(net, net->sec_last[s671], 0.75 * 2000 / mi, 0.3465 + 1.0179 * I, 0, 6.2998,
                 KL_PH_ABC);
    int k604 = net->sec_first[section_id(&H.f, "671-684")];
    check_packed(net, k604, 300 / mi, 1.3238 + 1.3569 * I, 0, 4.6658, KL_PH_A | KL_PH_C);
    check_packed(net, k604, 300 / mi, 1.3294 + 1.3471 * I, 2, 4.7097, KL_PH_A | KL_PH_C);
    /* moved one phase on: slot p -> p + 1 */
    kl_complex Y[9], Z2[9], Y2[9];
    kl_network_line_zy(net, k604, Z, Y);
    for (int i = 0; i < 9; i++) {
        int r = (i / 3 + 1) % 3, c = (i % 3 + 1) % 3;
        Z2[3 * r + c] = Z[i];
        Y2[3 * r + c] = Y[i];
    }
    net->br_phases[k604] = KL_PH_A | KL_PH_B;
    kl_network_line_set_zy(net, k604, Z2, Y2);
    check_packed(net, k604, 300 / mi, 1.3238 + 1.3569 * I, 1, 4.6658, KL_PH_A | KL_PH_B);
    check_packed(net, k604, 300 / mi, 1.3294 + 1.3471 * I, 0, 4.7097, KL_PH_A | KL_PH_B);
    kl_network_line_zy(net, k604, Z, NULL);
    ck_assert(cabs(Z[1] - (0.2066 + 0.4591 * I) * (300 / mi)) <= 1e-12); /* published Zac */
    harness_free(&h);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("flow_ieee13");
    TCase *tc = tcase_create("ieee13");
    tcase_add_test(tc, test_ieee13_published_matrices);
    tcase_add_test(tc, test_ieee13_fixed_taps);
    tcase_add_test(tc, test_ieee13_file);
    tcase_add_test(tc, test_ieee13_packed_lines);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
