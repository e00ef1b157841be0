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
#include "ref_ieee13.h"

static hand_feeder H;

static void build13(hand_feeder *h)
{
    hf_init(h, "ieee13 (hand-built)", "650", 4.16);
    /* the published phase impedance and susceptance matrices */
    static const char *const phasing[8] = {"", "a", "b", "ab", "c", "ac", "bc", "abc"};
    int cfg[REF_IEEE13_NCONFIGS];
    for (int k = 0; k < REF_IEEE13_NCONFIGS; k++) {
        const ref_ieee13_config *c = &ref_ieee13_configs[k];
        cfg[k] = hf_matrix(h, c->name, phasing[c->phases], c->z, c->b);
    }

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
    r->voltage_level_v = ref_ieee13_reg.voltage_level_v;
    r->bandwidth_v = ref_ieee13_reg.bandwidth_v;
    r->pt_ratio = ref_ieee13_reg.pt_ratio;
    r->ct_primary_a = ref_ieee13_reg.ct_primary_a;
    for (int p = 0; p < 3; p++) {
        r->ldc_r_v[p] = ref_ieee13_reg.ldc_r_v;
        r->ldc_x_v[p] = ref_ieee13_reg.ldc_x_v;
    }
    r->monitored = KL_PH_ABC;
    h->f.nregulators = 1;

    /* the published segments; the transformer and the switch in their places */
    static char names[REF_IEEE13_NSEGMENTS][24]; /* the hand feeder keeps the pointers */
    int s671 = -1;
    for (int k = 0; k < REF_IEEE13_NSEGMENTS; k++) {
        const ref_ieee13_segment *g = &ref_ieee13_segments[k];
        snprintf(names[k], sizeof names[k], "%s-%s", g->from, g->to);
        int id = hf_line(h, names[k], g->from, g->to, g->ft,
                         cfg[ref_ieee13_config_find(g->config) - ref_ieee13_configs]);
        if (strcmp(names[k], ref_ieee13_distributed.bus) == 0)
            s671 = id;
    }
    const struct ref_ieee13_xfm *x = &ref_ieee13_xfm1;
    hf_transformer(h, "xfm-1", "633", "634", x->kva, x->kv_high, KL_WINDING_GRD_WYE, x->kv_low,
                   KL_WINDING_GRD_WYE, x->r_pct, x->x_pct);
    hf_section(h, "671-692", "671", "692", KL_SEC_SWITCH);
    h->sec[h->f.nsections - 1].phases = KL_PH_ABC;

    /* the published loads, kW and kvar per phase (delta: ab, bc, ca), and capacitors */
    static const kl_load_model model[] = {
        [REF_IEEE13_PQ] = KL_LOAD_PQ, [REF_IEEE13_Z] = KL_LOAD_Z, [REF_IEEE13_I] = KL_LOAD_I};
    for (int k = 0; k < REF_IEEE13_NLOADS; k++) {
        const ref_ieee13_load *l = &ref_ieee13_loads[k];
        hf_load(h, l->bus, l->bus, l->delta ? KL_CONN_DELTA : KL_CONN_WYE, model[l->model], l->kw,
                l->kvar);
    }
    const ref_ieee13_load *dl = &ref_ieee13_distributed;
    int d = hf_load(h, "632-671-distributed", NULL, KL_CONN_WYE, model[dl->model], dl->kw, dl->kvar);
    h->load[d].section = s671;
    hf_cap(h, "cap-675", "675", ref_ieee13_cap675_kvar);
    hf_cap(h, "cap-611", "611", ref_ieee13_cap611_kvar);
}

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
    /* published final taps */
    for (int p = 0; p < 3; p++)
        ck_assert_int_eq(r->tap[p], ref_ieee13_taps[p]);
    const ref_ieee13_voltage *V13 = ref_ieee13_voltages;
    const ref_ieee13_current *I13 = ref_ieee13_currents;
    double worst = 0;
    for (size_t k = 0; k < REF_IEEE13_NVOLTAGES; k++) {
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
    for (size_t k = 0; k < REF_IEEE13_NCURRENTS; k++) {
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
    const double *pin = ref_ieee13_input_kw_phase, *qin = ref_ieee13_input_kvar_phase;
    const double *ploss = ref_ieee13_loss_kw_phase;
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
    const ref_ieee13_solved_load *L = ref_ieee13_solved_loads;
    for (size_t k = 0; k < REF_IEEE13_NSOLVED_LOADS; k++) {
        int l = -1;
        for (int m = 0; m < f->nloads; m++)
            if (strcmp(f->loads[m].name, L[k].load) == 0)
                l = m;
        ck_assert(l >= 0);
        kl_complex s = r->s_load[3 * l + L[k].entry] / 1000;
        ck_assert_msg(fabs(creal(s) - L[k].kw) <= 0.005 * L[k].kw, "load %s %.2f kW", L[k].load,
                      creal(s));
        ck_assert_msg(fabs(cimag(s) - L[k].kvar) <= 0.005 * L[k].kvar, "load %s %.2f kvar",
                      L[k].load, cimag(s));
    }
    const double *q675 = ref_ieee13_q675_kvar;
    for (int p = 0; p < 3; p++)
        ck_assert_msg(fabs(r->q_cap[p] / 1000 - q675[p]) <= 0.005 * q675[p], "cap 675 %c %.2f",
                      'a' + p, r->q_cap[p] / 1000);
    ck_assert(fabs(r->q_cap[3 + 2] / 1000 - ref_ieee13_q611_kvar) <= 0.005 * ref_ieee13_q611_kvar);
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
    const ref_ieee13_config *p601 = ref_ieee13_config_find("601"),
                            *p604 = ref_ieee13_config_find("604"),
                            *p605 = ref_ieee13_config_find("605");
    int k601 = net->sec_first[section_id(&H.f, "671-680")];
    check_packed(net, k601, 1000 / mi, ref_ieee13_z(p601, 0, 0), 0, ref_ieee13_b(p601, 0, 0),
                 KL_PH_ABC);
    kl_complex Z[9];
    kl_network_line_zy(net, k601, Z, NULL);
    ck_assert(cabs(Z[5] - ref_ieee13_z(p601, 1, 2) * (1000 / mi)) <= 1e-12); /* Zbc */
    ck_assert(cabs(Z[7] - Z[5]) == 0);
    int k605 = net->sec_first[section_id(&H.f, "684-611")];
    check_packed(net, k605, 300 / mi, ref_ieee13_z(p605, 2, 2), 2, ref_ieee13_b(p605, 2, 2), KL_PH_C);
    int s671 = section_id(&H.f, "632-671");
    ck_assert_int_ne(net->sec_first[s671], net->sec_last[s671]);
    check_packed(net, net->sec_first[s671], 0.25 * 2000 / mi, ref_ieee13_z(p601, 0, 0), 0,
                 ref_ieee13_b(p601, 0, 0), KL_PH_ABC);
    check_packed(net, net->sec_last[s671], 0.75 * 2000 / mi, ref_ieee13_z(p601, 0, 0), 0,
                 ref_ieee13_b(p601, 0, 0), KL_PH_ABC);
    int k604 = net->sec_first[section_id(&H.f, "671-684")];
    const double complex z604aa = ref_ieee13_z(p604, 0, 0), z604cc = ref_ieee13_z(p604, 2, 2);
    const double b604aa = ref_ieee13_b(p604, 0, 0), b604cc = ref_ieee13_b(p604, 2, 2);
    check_packed(net, k604, 300 / mi, z604aa, 0, b604aa, KL_PH_A | KL_PH_C);
    check_packed(net, k604, 300 / mi, z604cc, 2, b604cc, KL_PH_A | KL_PH_C);
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
    check_packed(net, k604, 300 / mi, z604aa, 1, b604aa, KL_PH_A | KL_PH_B);
    check_packed(net, k604, 300 / mi, z604cc, 0, b604cc, KL_PH_A | KL_PH_B);
    kl_network_line_zy(net, k604, Z, NULL);
    ck_assert(cabs(Z[1] - ref_ieee13_z(p604, 0, 2) * (300 / mi)) <= 1e-12); /* published Zac */
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
