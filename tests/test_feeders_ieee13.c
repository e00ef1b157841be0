/* The bundled feeder file feeders/reference/ieee-13-node.yaml against the published data.
 *
 * Source of every expected value: IEEE PES Distribution System Analysis Subcommittee,
 * "IEEE 13 Node Test Feeder" data sheet (configurations, loads, devices); companion paper
 * W. H. Kersting, "Radial distribution test feeders", IEEE PES Winter Meeting 2001; the
 * tables are kept once in tests/ref_ieee13.c.
 *
 * The file gives configurations 601-606 as conductors and spacings (from memory of the
 * same data set), so the check that matters is that, loaded and passed through the line
 * constants (modified Carson equations, Kron reduction, concentric-neutral cable), they
 * give the published phase impedance matrices with each phase in its published place.
 * A wrong phasing (601 is B A C on positions 1, 2, 3, ...) moves entries and fails here.
 * Last, the whole file is solved (automatic regulator) and compared with the published
 * power-flow results of 2004-06-24. */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include <gsl/gsl_errno.h>
#include "harness.h"
#include "ref_ieee13.h"

#define OHM_PER_MI (1.0 / 1609.344)  /* ohm/mi -> ohm/m */
#define US_PER_MI (1e-6 / 1609.344)  /* uS/mi -> S/m */
#define FT 0.3048

static harness H;
static kl_feeder *F;

static void setup(void)
{
    harness_init(&H);
    HARNESS_OK(&H, harness_load(&H, "feeders/reference/ieee-13-node.yaml"));
    HARNESS_OK(&H, harness_derive(&H, KL_CARSON_APPROX));
    F = H.f;
}

static void teardown(void)
{
    harness_free(&H);
    F = NULL;
}

static const kl_construction *cons(const char *name)
{
    for (int i = 0; i < F->nconstructions; i++)
        if (!strcmp(F->constructions[i].name, name)) return &F->constructions[i];
    ck_abort_msg("construction %s missing", name);
    return NULL;
}

/* Z to the published 4 decimals (+/- 0.0002 ohm/mi allows for rounding on both sides). */
START_TEST(impedance_matrices_match_published)
{
    const ref_ieee13_config *p = &ref_ieee13_configs[_i];
    const kl_construction *c = cons(p->name);
    ck_assert_int_eq(c->phases, p->phases);
    ck_assert_int_eq(c->derived, 1);
    for (int k = 0; k < 6; k++) {
        int r = ref_ieee13_tri[k][0], q = ref_ieee13_tri[k][1];
        double complex z = c->zabc[r][q] / OHM_PER_MI;
        ck_assert_msg(cabs(z - p->z[k]) < 2e-4, "%s Z[%d][%d] = %.4f%+.4fj ohm/mi, published %.4f%+.4fj",
                      p->name, r, q, creal(z), cimag(z), creal(p->z[k]), cimag(p->z[k]));
        ck_assert_msg(cabs(c->zabc[q][r] - c->zabc[r][q]) < 1e-12, "%s Z not symmetric", p->name);
    }
}
END_TEST

/* B within 0.3 %: the data sheet's susceptances rest on its own constants (the 606
 * closed form differs from the sheet by about 0.3 %: reference notes). */
START_TEST(susceptance_matrices_match_published)
{
    const ref_ieee13_config *p = &ref_ieee13_configs[_i];
    const kl_construction *c = cons(p->name);
    for (int k = 0; k < 6; k++) {
        int r = ref_ieee13_tri[k][0], q = ref_ieee13_tri[k][1];
        double b = cimag(c->yabc[r][q]) / US_PER_MI;
        double tol = 0.003 * fabs(p->b[k]) + 1e-3;
        ck_assert_msg(fabs(b - p->b[k]) < tol, "%s B[%d][%d] = %.4f uS/mi, published %.4f",
                      p->name, r, q, b, p->b[k]);
    }
}
END_TEST

static const kl_section *sec_between(const char *from, const char *to)
{
    for (int i = 0; i < F->nsections; i++) {
        const kl_section *s = &F->sections[i];
        if (!strcmp(F->buses[s->from].name, from) && !strcmp(F->buses[s->to].name, to)) return s;
    }
    ck_abort_msg("no section %s-%s", from, to);
    return NULL;
}

/* Line segment data: lengths (ft) and configurations, data sheet "Line Segment Data". */
START_TEST(segments_match_published)
{
    const ref_ieee13_segment *seg = ref_ieee13_segments;
    for (size_t k = 0; k < REF_IEEE13_NSEGMENTS; k++) {
        const kl_section *s = sec_between(seg[k].from, seg[k].to);
        ck_assert_int_eq(s->kind, KL_SEC_LINE);
        ck_assert_msg(fabs(s->length_m - seg[k].ft * FT) < 1e-9, "%s-%s length", seg[k].from, seg[k].to);
        ck_assert_str_eq(F->constructions[s->construction].name, seg[k].config);
    }
    ck_assert_int_eq(sec_between("650", "rg60")->kind, KL_SEC_REGULATOR);
    ck_assert_int_eq(sec_between("633", "634")->kind, KL_SEC_TRANSFORMER);
    const kl_section *sw = sec_between("671", "692");
    ck_assert_int_eq(sw->kind, KL_SEC_SWITCH);
    ck_assert_int_eq(sw->closed, 1);
}
END_TEST

/* Spot and distributed loads, data sheet "Spot Load Data" and "Distributed Load Data"
 * (kW, kvar per phase 1, 2, 3; delta phase 1 = ab). */
START_TEST(loads_match_published)
{
    static const kl_load_model model[] = {
        [REF_IEEE13_PQ] = KL_LOAD_PQ, [REF_IEEE13_Z] = KL_LOAD_Z, [REF_IEEE13_I] = KL_LOAD_I};
    const ref_ieee13_load *ld = ref_ieee13_loads;
    for (size_t k = 0; k < REF_IEEE13_NLOADS; k++) {
        int bus = kl_feeder_find_bus(F, ld[k].bus), found = 0;
        for (int i = 0; i < F->nloads; i++) {
            const kl_load *l = &F->loads[i];
            if (l->bus != bus) continue;
            found = 1;
            ck_assert_int_eq(l->conn, ld[k].delta ? KL_CONN_DELTA : KL_CONN_WYE);
            ck_assert_int_eq(l->model, model[ld[k].model]);
            for (int p = 0; p < 3; p++) {
                ck_assert_msg(fabs(creal(l->s_va[p]) - 1e3 * ld[k].kw[p]) < 1e-6, "load %s P[%d]", ld[k].bus, p);
                ck_assert_msg(fabs(cimag(l->s_va[p]) - 1e3 * ld[k].kvar[p]) < 1e-6, "load %s Q[%d]", ld[k].bus, p);
            }
        }
        ck_assert_msg(found, "no load at %s", ld[k].bus);
    }
    int dist = 0;
    for (int i = 0; i < F->nloads; i++) {
        const kl_load *l = &F->loads[i];
        if (l->section < 0) continue;
        dist++;
        ck_assert_ptr_eq(&F->sections[l->section], sec_between("632", "671"));
        ck_assert_str_eq(ref_ieee13_distributed.bus, "632-671");
        for (int p = 0; p < 3; p++)
            ck_assert(cabs(l->s_va[p] - 1e3 * (ref_ieee13_distributed.kw[p] +
                                                I * ref_ieee13_distributed.kvar[p])) < 1e-6);
    }
    ck_assert_int_eq(dist, 1);
}
END_TEST

/* Regulator and transformer data, data sheet "Regulator Data" and "Transformer Data". */
START_TEST(devices_match_published)
{
    ck_assert_int_eq(F->nregulators, 1);
    const kl_regulator *r = &F->regulators[0];
    ck_assert_int_eq(r->conn, KL_REG_WYE);
    ck_assert_int_eq(r->mode, KL_REG_AUTO);
    ck_assert_int_eq(r->phases, KL_PH_ABC);
    ck_assert_double_eq_tol(r->bandwidth_v, ref_ieee13_reg.bandwidth_v, 1e-12);
    ck_assert_double_eq_tol(r->pt_ratio, ref_ieee13_reg.pt_ratio, 1e-12);
    ck_assert_double_eq_tol(r->ct_primary_a, ref_ieee13_reg.ct_primary_a, 1e-12);
    ck_assert_double_eq_tol(r->voltage_level_v, ref_ieee13_reg.voltage_level_v, 1e-12);
    for (int p = 0; p < 3; p++) {
        ck_assert_double_eq_tol(r->ldc_r_v[p], ref_ieee13_reg.ldc_r_v, 1e-12);
        ck_assert_double_eq_tol(r->ldc_x_v[p], ref_ieee13_reg.ldc_x_v, 1e-12);
    }
    ck_assert_int_eq(F->ntransformers, 1);
    const kl_transformer *t = &F->transformers[0];
    ck_assert_double_eq_tol(t->kva, ref_ieee13_xfm1.kva, 1e-9);
    ck_assert_double_eq_tol(t->kv_high, ref_ieee13_xfm1.kv_high, 1e-12);
    ck_assert_double_eq_tol(t->kv_low, ref_ieee13_xfm1.kv_low, 1e-12);
    ck_assert_int_eq(t->high, KL_WINDING_GRD_WYE);
    ck_assert_int_eq(t->low, KL_WINDING_GRD_WYE);
    ck_assert_double_eq_tol(t->r_pu, ref_ieee13_xfm1.r_pct / 100, 1e-12);
    ck_assert_double_eq_tol(t->x_pu, ref_ieee13_xfm1.x_pct / 100, 1e-12);
    /* Capacitor data: 675 200 kvar each phase, 611 100 kvar phase c. */
    double q675 = 0, q611 = 0;
    for (int i = 0; i < F->ncapacitors; i++) {
        const kl_capacitor *c = &F->capacitors[i];
        double q = c->q_var[0] + c->q_var[1] + c->q_var[2];
        if (c->bus == kl_feeder_find_bus(F, "675")) q675 += q;
        if (c->bus == kl_feeder_find_bus(F, "611")) { q611 += q; ck_assert_int_eq(c->phases, KL_PH_C); }
    }
    double want675 = 0, want611 = 0;
    for (int p = 0; p < 3; p++) {
        want675 += 1e3 * ref_ieee13_cap675_kvar[p];
        want611 += 1e3 * ref_ieee13_cap611_kvar[p];
    }
    ck_assert_double_eq_tol(q675, want675, 1e-6);
    ck_assert_double_eq_tol(q611, want611, 1e-6);
    ck_assert_double_eq_tol(F->source.kv_ll, 4.16, 1e-12);
    ck_assert_double_eq_tol(F->source.v_pu, 1.0, 1e-12);
}
END_TEST

/* ---------------------------------------------------------------- the solved feeder */

START_TEST(solved_feeder_matches_published_results)
{
    gsl_set_error_handler_off();
    HARNESS_OK(&H, harness_build(&H));
    HARNESS_OK(&H, harness_solve(&H, NULL));
    const kl_flow_result *r = H.res;
    ck_assert(r->converged);
    /* Published final taps A 10, B 8, C 11. */
    for (int p = 0; p < 3; p++)
        ck_assert_int_eq(r->tap[p], ref_ieee13_taps[p]);
    /* Published input, kW and kvar; within 0.2 %. */
    double p = 0, q = 0;
    for (int k = 0; k < 3; k++) { p += creal(r->s_head[k]); q += cimag(r->s_head[k]); }
    ck_assert_msg(fabs(p - 1e3 * ref_ieee13_input_kw) < 0.002 * 1e3 * ref_ieee13_input_kw,
                  "input %.3f kW", p / 1e3);
    ck_assert_msg(fabs(q - 1e3 * ref_ieee13_input_kvar) < 0.002 * 1e3 * ref_ieee13_input_kvar,
                  "input %.3f kvar", q / 1e3);
    /* Voltages: published to 4 decimals and 2 in angle; 0.0005 pu and 0.05 degree. */
    for (size_t k = 0; k < REF_IEEE13_NVOLTAGES; k++) {
        const ref_ieee13_voltage *pub = &ref_ieee13_voltages[k];
        int b = kl_feeder_find_bus(F, pub->bus);
        ck_assert_int_ge(b, 0);
        for (int ph = 0; ph < 3; ph++) {
            if (pub->mag[ph] == 0) continue;
            kl_complex v = r->v[3 * b + ph] / r->v_base_ln[b];
            double deg = carg(v) * 180.0 / 3.14159265358979323846;
            ck_assert_msg(fabs(cabs(v) - pub->mag[ph]) < 5e-4 && fabs(deg - pub->ang[ph]) < 0.05,
                          "%s phase %c: %.4f/%.2f, published %.4f/%.2f", pub->bus, 'a' + ph,
                          cabs(v), deg, pub->mag[ph], pub->ang[ph]);
        }
    }
}
END_TEST

int main(void)
{
    Suite *s = suite_create("feeders_ieee13");
    TCase *tc = tcase_create("ieee13-file");
    tcase_add_checked_fixture(tc, setup, teardown);
    int n = REF_IEEE13_NCONFIGS;
    tcase_add_loop_test(tc, impedance_matrices_match_published, 0, n);
    tcase_add_loop_test(tc, susceptance_matrices_match_published, 0, n);
    tcase_add_test(tc, segments_match_published);
    tcase_add_test(tc, loads_match_published);
    tcase_add_test(tc, devices_match_published);
    tcase_add_test(tc, solved_feeder_matches_published_results);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? 1 : 0;
}
