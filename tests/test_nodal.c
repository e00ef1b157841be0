/* The nodal (KLU) load flow: agreement with the backward/forward sweep, the
 * physics of a looped network the sweep cannot solve, and its failures.
 *
 * References: the two solvers are independent formulations of the same
 * network equations (a tree walk of the generalized branch matrices, and a
 * sparse LU solve of the nodal/branch equations), so their agreement to
 * 1e-6 pu is the cross-check the load-flow issue asks for; power balance
 * (source input = loads + losses) and Kirchhoff's current law are physics
 * (common practice); the IEEE PES 13-node test feeder's published voltages
 * (IEEE PES Distribution System Analysis Subcommittee, "IEEE 13 Node Test
 * Feeder", results 2004) are the outside reference for the full feeder. */
#include <check.h>
#include <stdio.h>
#include <stdlib.h>
#include "flow_fixture.h"
#include "harness.h"
#include "ref_ieee13.h"
#include "kl_flow.h"

#define AGREE_PU 1e-6 /* the agreement requirement */

static hand_feeder H;

/* Builds and solves f in h (initialised here, freed by the caller) with one
 * solver.  Returns the status. */
static kl_status solve_with(harness *h, kl_feeder *f, kl_solver solver, double tol)
{
    kl_flow_options opt;
    kl_flow_options_default(&opt);
    opt.solver = solver;
    if (tol > 0)
        opt.tol_pu = tol;
    harness_init(h);
    harness_use(h, f);
    kl_status st = harness_build(h);
    if (st)
        return st;
    return harness_solve(h, &opt);
}

static const char *first_error(const kl_errors *e)
{
    return e->count ? e->items[0].message : "(no message)";
}

/* Largest |V_nodal - V_sweep| in pu of the bus base over every bus and phase,
 * and the largest current difference relative to the largest current. */
static void compare(const kl_flow_result *a, const kl_flow_result *b, double *dv_pu,
                    double *di_rel)
{
    double dv = 0, di = 0, imax = 0;
    for (int k = 0; k < 3 * a->nbuses; k++) {
        double d = cabs(a->v[k] - b->v[k]) / a->v_base_ln[k / 3];
        dv = d > dv ? d : dv;
    }
    for (int k = 0; k < 3 * a->nsections; k++) {
        double d = cabs(a->i[k] - b->i[k]);
        di = d > di ? d : di;
        imax = cabs(a->i[k]) > imax ? cabs(a->i[k]) : imax;
    }
    *dv_pu = dv;
    *di_rel = imax > 0 ? di / imax : di;
}

/* Solves with both solvers at the default tolerance and checks agreement
 * (voltages to AGREE_PU, currents to 1e-5 relative), equal taps, and the
 * nodal solution's power balance. */
static void check_agree(kl_feeder *f, const char *what)
{
    harness hs, hn;
    kl_status st = solve_with(&hs, f, KL_SOLVER_SWEEP, 0);
    ck_assert_msg(st == KL_OK, "%s sweep: %s", what, harness_first_error(&hs));
    st = solve_with(&hn, f, KL_SOLVER_NODAL, 0);
    ck_assert_msg(st == KL_OK, "%s nodal: %s", what, harness_first_error(&hn));
    const kl_flow_result *rs = hs.res, *rn = hn.res;
    double dv, di;
    compare(rn, rs, &dv, &di);
    fprintf(stderr, "%-32s nodal-sweep: %.2e pu, currents %.2e rel; iterations %d / %d\n",
            what, dv, di, rn->total_iterations, rs->total_iterations);
    ck_assert_msg(dv <= AGREE_PU, "%s: nodal and sweep differ by %.3g pu", what, dv);
    ck_assert_msg(di <= 1e-5, "%s: currents differ by %.3g relative", what, di);
    for (int k = 0; k < 3 * f->nregulators; k++)
        ck_assert_int_eq(rn->tap[k], rs->tap[k]);
    /* power balance over the three phases: source input = loads + losses
     * (conservation of complex power; per phase it need not hold: mutual
     * coupling, delta loads and banks move power between phases) */
    kl_complex bal = 0;
    double scale = 0;
    for (int p = 0; p < 3; p++) {
        bal += rn->s_head[p] - rn->s_loads[p] - rn->s_losses[p];
        scale += cabs(rn->s_head[p]);
    }
    ck_assert_msg(cabs(bal) <= 1e-6 * scale, "%s: power balance off by %.3g VA of %.3g", what,
                  cabs(bal), scale);
    harness_free(&hs);
    harness_free(&hn);
}

/* IEEE 13-node configurations 601, 603 and 605 (tests/ref_ieee13.c: the
 * published impedances, ohm/mile, and susceptances, uS/mile); used as
 * realistic lines. */
static const ref_ieee13_config *cfg(const char *name)
{
    const ref_ieee13_config *c = ref_ieee13_config_find(name);
    ck_assert_ptr_nonnull(c);
    return c;
}

/* A three-phase main with a two-phase and a single-phase tap, loads of every
 * model in wye and delta, capacitors, a closed switch. */
static void build_taps(hand_feeder *h)
{
    hf_init(h, "taps (hand-built)", "src", 12.47);
    int c3 = hf_matrix(h, "601", "abc", cfg("601")->z, cfg("601")->b);
    int c2 = hf_matrix(h, "603", "bc", cfg("603")->z, cfg("603")->b);
    int c1 = hf_matrix(h, "605", "c", cfg("605")->z, cfg("605")->b);
    hf_line(h, "m1", "src", "b1", 3000, c3);
    hf_line(h, "m2", "b1", "b2", 2500, c3);
    hf_section(h, "sw", "b2", "b3", KL_SEC_SWITCH);
    h->sec[h->f.nsections - 1].phases = KL_PH_ABC;
    hf_line(h, "m3", "b3", "b4", 1500, c3);
    hf_line(h, "t2", "b1", "l1", 800, c2);
    hf_line(h, "t1", "l1", "l2", 600, c1);
    hf_load(h, "pq", "b2", KL_CONN_WYE, KL_LOAD_PQ, (double[]){300, 150, 220},
            (double[]){120, 80, 90});
    hf_load(h, "z", "b4", KL_CONN_DELTA, KL_LOAD_Z, (double[]){200, 180, 0},
            (double[]){90, 60, 0});
    hf_load(h, "i", "b4", KL_CONN_WYE, KL_LOAD_I, (double[]){100, 0, 140},
            (double[]){40, 0, 50});
    hf_load(h, "dpq", "b3", KL_CONN_DELTA, KL_LOAD_PQ, (double[]){150, 150, 150},
            (double[]){70, 70, 70});
    hf_load(h, "lat2", "l1", KL_CONN_DELTA, KL_LOAD_I, (double[]){0, 90, 0},
            (double[]){0, 40, 0});
    int z = hf_load(h, "zip", "l2", KL_CONN_WYE, KL_LOAD_ZIP, (double[]){0, 0, 120},
                    (double[]){0, 0, 60});
    h->load[z].zip[0] = 0.3;
    h->load[z].zip[1] = 0.3;
    h->load[z].zip[2] = 0.4;
    hf_cap(h, "c4", "b4", (double[]){100, 100, 100});
    hf_cap(h, "c2", "l2", (double[]){0, 0, 50});
}

START_TEST(test_taps_loads_switch)
{
    build_taps(&H);
    check_agree(&H.f, "taps, all load models, switch");
}
END_TEST

/* The same feeder behind a Thevenin source (the source bus voltage moves). */
START_TEST(test_thevenin_source)
{
    build_taps(&H);
    H.f.source.has_equivalent = 1;
    H.f.source.z1_ohm = 0.4 + 2.5 * I;
    H.f.source.z0_ohm = 0.9 + 6.0 * I;
    check_agree(&H.f, "Thevenin source");
}
END_TEST

typedef struct {
    const char *what;
    double kv_high, kv_low;
    kl_winding high, low;
    const char *phases; /* source-side phases of the bank */
    int step_up;        /* 1: the low winding faces the source */
} xf_case;

/* Every transformer connection the sweep models (Kersting ch. 8 banks). */
static const xf_case XF[] = {
    {"grounded wye / grounded wye", 12.47, 4.16, KL_WINDING_GRD_WYE, KL_WINDING_GRD_WYE, "abc", 0},
    {"delta / grounded wye step-down", 12.47, 4.16, KL_WINDING_DELTA, KL_WINDING_GRD_WYE, "abc", 0},
    {"delta / grounded wye step-up", 24.9, 12.47, KL_WINDING_GRD_WYE, KL_WINDING_DELTA, "abc", 1},
    {"ungrounded wye / delta", 12.47, 4.16, KL_WINDING_WYE, KL_WINDING_DELTA, "abc", 0},
    {"delta / delta", 12.47, 4.16, KL_WINDING_DELTA, KL_WINDING_DELTA, "abc", 0},
    {"open wye / open delta", 12.47, 4.16, KL_WINDING_OPEN_WYE, KL_WINDING_OPEN_DELTA, "ab", 0},
    {"single phase", 7.2, 2.4, KL_WINDING_SINGLE, KL_WINDING_SINGLE, "c", 0},
    {"single phase, center tap", 7.2, 0.24, KL_WINDING_SINGLE, KL_WINDING_CENTER_TAP, "b", 0},
};

/* 12.47 kV main, the bank, a short low-side line (or none), unbalanced loads. */
static void build_xf(hand_feeder *h, const xf_case *c)
{
    hf_init(h, c->what, "src", 12.47);
    int c3 = hf_matrix(h, "601", "abc", cfg("601")->z, cfg("601")->b);
    hf_line(h, "m1", "src", "hv", 2000, c3);
    double kva = 1500;
    if (c->high == KL_WINDING_SINGLE)
        kva = 100;
    /* step-up: the 12.47 kV low winding faces the source */
    hf_transformer(h, "bank", "hv", "lv", kva, c->kv_high, c->high, c->kv_low, c->low, 1.0, 6.0);
    h->sec[h->f.nsections - 1].phases = (uint8_t)hf_phases(c->phases);
    if (c->high == KL_WINDING_SINGLE) {
        if (c->low == KL_WINDING_CENTER_TAP) {
            hf_load(h, "legs", "lv", KL_CONN_WYE, KL_LOAD_PQ, (double[]){12, 8, 0},
                    (double[]){4, 2, 0});
            hf_load(h, "240", "lv", KL_CONN_DELTA, KL_LOAD_Z, (double[]){20, 0, 0},
                    (double[]){6, 0, 0});
        } else {
            hf_load(h, "one", "lv", KL_CONN_WYE, KL_LOAD_PQ, (double[]){0, 0, 60},
                    (double[]){0, 0, 25});
        }
        return;
    }
    int low_is_delta = c->low == KL_WINDING_DELTA || c->low == KL_WINDING_OPEN_DELTA;
    if (low_is_delta) /* a three-wire secondary: line-to-line loads */
        hf_load(h, "dl", "lv", KL_CONN_DELTA, KL_LOAD_PQ, (double[]){400, 250, 300},
                (double[]){150, 100, 120});
    else
        hf_load(h, "wl", "lv", KL_CONN_WYE, KL_LOAD_PQ, (double[]){400, 250, 300},
                (double[]){150, 100, 120});
    hf_load(h, "dz", "lv", KL_CONN_DELTA, KL_LOAD_Z, (double[]){100, 0, 60},
            (double[]){30, 0, 20});
}

START_TEST(test_transformer_connections)
{
    const xf_case *c = &XF[_i];
    build_xf(&H, c);
    check_agree(&H.f, c->what);
}
END_TEST

static void add_regulator(hand_feeder *h, const char *from, const char *to, kl_reg_connection conn,
                          kl_reg_mode mode, const int tap[3])
{
    int s = hf_section(h, "reg", from, to, KL_SEC_REGULATOR);
    h->sec[s].device = h->f.nregulators;
    h->sec[s].phases = KL_PH_ABC;
    kl_regulator *r = &h->reg[h->f.nregulators++];
    r->name = "reg";
    r->conn = conn;
    r->mode = mode;
    /* open delta: units ab and cb (slots a, c), sharing b */
    r->phases = conn == KL_REG_OPEN_DELTA ? (KL_PH_A | KL_PH_C) : KL_PH_ABC;
    r->shared = conn == KL_REG_OPEN_DELTA ? KL_PH_B : 0;
    r->steps = 16;
    r->step_pu = 0.00625;
    /* IEEE 13-node published regulator settings: 122 V level, 2 V band, PT 20, CT 700 A,
     * R 3 V, X 9 V */
    r->voltage_level_v = 122;
    r->bandwidth_v = 2;
    r->pt_ratio = 20;
    r->ct_primary_a = 700;
    for (int p = 0; p < 3; p++) {
        r->tap[p] = tap[p];
        r->ldc_r_v[p] = 3;
        r->ldc_x_v[p] = 9;
    }
    r->monitored = r->phases;
}

/* IEEE 13-node-like: 4.16 kV, regulator at the head, loads of all kinds. */
static void build_reg(hand_feeder *h, kl_reg_connection conn, kl_reg_mode mode)
{
    hf_init(h, "regulated (hand-built)", "src", 4.16);
    int c3 = hf_matrix(h, "601", "abc", cfg("601")->z, cfg("601")->b);
    add_regulator(h, "src", "rg", conn, mode, (int[]){5, 3, 7});
    hf_line(h, "m1", "rg", "b1", 2000, c3);
    hf_line(h, "m2", "b1", "b2", 2000, c3);
    hf_load(h, "d", "b1", KL_CONN_DELTA, KL_LOAD_PQ, (double[]){385, 385, 385},
            (double[]){220, 220, 220});
    hf_load(h, "w", "b2", KL_CONN_WYE, KL_LOAD_PQ, (double[]){485, 68, 290},
            (double[]){190, 60, 212});
}

START_TEST(test_regulator_wye_fixed)
{
    build_reg(&H, KL_REG_WYE, KL_REG_FIXED);
    check_agree(&H.f, "wye regulator, fixed taps");
}
END_TEST

START_TEST(test_regulator_wye_auto)
{
    build_reg(&H, KL_REG_WYE, KL_REG_AUTO);
    check_agree(&H.f, "wye regulator, automatic");
}
END_TEST

START_TEST(test_regulator_closed_delta)
{
    build_reg(&H, KL_REG_CLOSED_DELTA, KL_REG_FIXED);
    check_agree(&H.f, "closed-delta regulator");
}
END_TEST

START_TEST(test_regulator_open_delta)
{
    build_reg(&H, KL_REG_OPEN_DELTA, KL_REG_FIXED);
    check_agree(&H.f, "open-delta regulator");
}
END_TEST

/* ---- feeder files: the loader and line constants, then both solvers ------ */

/* Loads and derives the file into h (the caller frees h). */
static kl_feeder *load_derived(harness *h, const char *path)
{
    harness_init(h);
    HARNESS_OK(h, harness_load(h, path));
    HARNESS_OK(h, harness_derive(h, KL_CARSON_APPROX));
    return h->f;
}

/* Every bundled reference feeder and the demo: nodal agrees with the sweep. */
static const char *FILES[] = {
    "feeders/reference/ieee-13-node.yaml",
    "feeders/reference/ieee-4-node-gry-gry-balanced.yaml",
    "feeders/reference/ieee-4-node-gry-gry-unbalanced.yaml",
    "feeders/reference/ieee-4-node-delta-gry-unbalanced.yaml",
    "feeders/demo/quillmere-f3.yaml",
};

START_TEST(test_feeder_files)
{
    harness h;
    kl_feeder *f = load_derived(&h, FILES[_i]);
    check_agree(f, FILES[_i] + 8);
    harness_free(&h);
}
END_TEST

/* Published IEEE 13-node node voltages and final taps (tests/ref_ieee13.c,
 * IEEE PES Distribution System Analysis Subcommittee, "IEEE 13 Node Test
 * Feeder" power-flow results, 2004): a second reference for the nodal
 * solution of the file, to the 0.002 pu and 0.2 degrees. */
START_TEST(test_ieee13_published)
{
    harness hf, h;
    kl_feeder *f = load_derived(&hf, "feeders/reference/ieee-13-node.yaml");
    ck_assert_msg(solve_with(&h, f, KL_SOLVER_NODAL, 0) == KL_OK, "%s", harness_first_error(&h));
    const kl_flow_result *r = h.res;
    for (int p = 0; p < 3; p++)
        ck_assert_int_eq(r->tap[p], ref_ieee13_taps[p]);
    const ref_ieee13_voltage *V13 = ref_ieee13_voltages;
    for (size_t k = 0; k < REF_IEEE13_NVOLTAGES; k++) {
        int b = kl_feeder_find_bus(f, V13[k].bus);
        ck_assert_msg(b >= 0, "bus %s", V13[k].bus);
        for (int p = 0; p < 3; p++) {
            if (V13[k].mag[p] == 0)
                continue;
            kl_complex v = r->v[3 * b + p];
            double pu = cabs(v) / r->v_base_ln[b], deg = carg(v) / DEG;
            double dd = fabs(fmod(deg - V13[k].ang[p] + 540.0, 360.0) - 180.0);
            ck_assert_msg(fabs(pu - V13[k].mag[p]) <= 0.002, "bus %s %c: %.4f pu, published "
                          "%.4f", V13[k].bus, 'a' + p, pu, V13[k].mag[p]);
            ck_assert_msg(dd <= 0.2, "bus %s %c: %.2f deg, published %.2f", V13[k].bus, 'a' + p,
                          deg, V13[k].ang[p]);
        }
    }
    harness_free(&h);
    harness_free(&hf);
}
END_TEST

/* A synthetic feeder from kl_synth (three-phase main, two- and single-phase
 * laterals, cables, mixed loads), 3,000 buses, fixed seed. */
START_TEST(test_synthetic_feeder)
{
    char cmd[1024], path[512];
    snprintf(path, sizeof path, "%s/test_nodal_synth.yaml", KILTER_BINARY_DIR);
    snprintf(cmd, sizeof cmd, "'%s/kl_synth' --buses 3000 --seed 7 -o '%s'", KILTER_BINARY_DIR,
             path);
    ck_assert_msg(system(cmd) == 0, "kl_synth failed (is it built?): %s", cmd);
    harness h;
    kl_feeder *f = load_derived(&h, path);
    check_agree(f, "synthetic, 3000 buses");
    harness_free(&h);
    remove(path);
}
END_TEST

/* ---- closed loops (radial: false): the nodal solver only ---------------- */

/* A three-phase main and a lateral tied back to the main's end by `tie`
 * (a line, or a closed switch), loads of several kinds around the loop. */
static void build_loop(hand_feeder *h, int tie_is_switch)
{
    hf_init(h, "loop (hand-built)", "src", 12.47);
    h->f.radial = 0;
    int c3 = hf_matrix(h, "601", "abc", cfg("601")->z, cfg("601")->b);
    hf_line(h, "m1", "src", "b1", 3000, c3);
    hf_line(h, "m2", "b1", "b2", 2500, c3);
    hf_line(h, "m3", "b2", "b3", 2000, c3);
    hf_line(h, "l1", "b1", "c1", 1500, c3);
    hf_line(h, "l2", "c1", "c2", 1500, c3);
    if (tie_is_switch) {
        hf_section(h, "tie", "c2", "b3", KL_SEC_SWITCH);
        h->sec[h->f.nsections - 1].phases = KL_PH_ABC;
    } else {
        hf_line(h, "tie", "c2", "b3", 1200, c3);
    }
    h->sec[h->f.nsections - 1].loc = (kl_loc){41, 7};
    hf_load(h, "w2", "b2", KL_CONN_WYE, KL_LOAD_PQ, (double[]){400, 300, 350},
            (double[]){150, 120, 140});
    hf_load(h, "d3", "b3", KL_CONN_DELTA, KL_LOAD_Z, (double[]){300, 200, 250},
            (double[]){100, 80, 90});
    hf_load(h, "w3", "b3", KL_CONN_WYE, KL_LOAD_I, (double[]){120, 0, 200},
            (double[]){40, 0, 60});
    hf_load(h, "wc1", "c1", KL_CONN_WYE, KL_LOAD_PQ, (double[]){200, 250, 0},
            (double[]){60, 90, 0});
    hf_load(h, "dc2", "c2", KL_CONN_DELTA, KL_LOAD_PQ, (double[]){0, 180, 150},
            (double[]){0, 70, 50});
}

/* Kirchhoff's current law at bus b from the result alone: sending-end
 * currents of sections leaving b, receiving-end currents of sections
 * arriving, and every load's current from its solved power and voltage
 * (I = conj(S / V), delta entries between two phases).  Returns the largest
 * phase residual relative to the largest current meeting at the bus. */
static double kcl_residual(const kl_feeder *f, const kl_flow_result *r, int b)
{
    kl_complex sum[3] = {0};
    double big = 0;
    for (int s = 0; s < f->nsections; s++)
        for (int p = 0; p < 3; p++) {
            kl_complex x = 0;
            if (f->sections[s].from == b)
                x = r->i[3 * s + p];
            else if (f->sections[s].to == b)
                x = -r->i_recv[3 * s + p];
            else
                continue;
            sum[p] += x;
            big = cabs(x) > big ? cabs(x) : big;
        }
    for (int l = 0; l < f->nloads; l++) {
        const kl_load *ld = &f->loads[l];
        if (ld->bus != b)
            continue;
        for (int k = 0; k < 3; k++) {
            if (!(ld->phases & (1 << k)))
                continue;
            int q = (k + 1) % 3;
            kl_complex v = r->v[3 * b + k] - (ld->conn == KL_CONN_DELTA ? r->v[3 * b + q] : 0);
            kl_complex i = conj(r->s_load[3 * l + k] / v);
            sum[k] += i;
            if (ld->conn == KL_CONN_DELTA)
                sum[q] -= i;
        }
    }
    double worst = 0;
    for (int p = 0; p < 3; p++)
        worst = cabs(sum[p]) > worst ? cabs(sum[p]) : worst;
    return worst / big;
}

/* Ohm's law along line section s of a hand-built feeder, from the
 * construction's published matrices and the result alone (pi model:
 * V_from - V_to = Z (I_from - Ysh/2 V_from)); the largest phase residual in
 * per unit of the base. */
static double ohm_residual(const hand_feeder *h, const kl_flow_result *r, int s)
{
    const kl_section *sc = &h->sec[s];
    const kl_construction *c = &h->cons[sc->construction];
    const kl_complex *vf = r->v + 3 * sc->from, *vt = r->v + 3 * sc->to, *i = r->i + 3 * s;
    kl_complex is[3];
    double worst = 0;
    for (int p = 0; p < 3; p++) {
        is[p] = i[p];
        for (int q = 0; q < 3; q++)
            is[p] -= 0.5 * I * c->b_given[p][q] * sc->length_m * vf[q];
    }
    for (int p = 0; p < 3; p++) {
        kl_complex e = vf[p] - vt[p];
        for (int q = 0; q < 3; q++)
            e -= c->z_given[p][q] * sc->length_m * is[q];
        worst = cabs(e) > worst ? cabs(e) : worst;
    }
    return worst / r->v_base_ln[sc->from];
}

static void check_loop(int tie_is_switch)
{
    build_loop(&H, tie_is_switch);
    harness h;
    kl_status st = solve_with(&h, &H.f, KL_SOLVER_NODAL, 0);
    ck_assert_msg(st == KL_OK, "nodal on a loop: %s", harness_first_error(&h));
    const kl_flow_result *res = h.res;
    ck_assert(res->converged);
    int tie = H.f.nsections - 1;
    /* the tie carries real current: the loop is really closed */
    ck_assert_msg(cabs(res->i[3 * tie]) > 5.0, "tie current %.3g A", cabs(res->i[3 * tie]));
    /* Kirchhoff's current law at every bus but the source (common practice) */
    for (int b = 1; b < H.f.nbuses; b++) {
        double kcl = kcl_residual(&H.f, res, b);
        ck_assert_msg(kcl <= 1e-5, "bus %s: KCL residual %.3g of the largest current",
                      H.bus[b].name, kcl);
    }
    /* Ohm's law on every line, the loop's included: with KCL it means the
     * loop's voltages and currents are one consistent solution */
    for (int s = 0; s < H.f.nsections; s++)
        if (H.sec[s].kind == KL_SEC_LINE) {
            double e = ohm_residual(&H, res, s);
            ck_assert_msg(e <= AGREE_PU, "section %s: Ohm's law off by %.3g pu", H.sec[s].name, e);
        }
    /* power balance: source input = loads + losses (common practice) */
    kl_complex bal = 0;
    double scale = 0;
    for (int p = 0; p < 3; p++) {
        bal += res->s_head[p] - res->s_loads[p] - res->s_losses[p];
        scale += cabs(res->s_head[p]);
    }
    ck_assert_msg(cabs(bal) <= 1e-6 * scale, "power balance off by %.3g VA", cabs(bal));
    if (tie_is_switch) /* a closed switch joins equal voltages */
        for (int p = 0; p < 3; p++)
            ck_assert(cabs(res->v[3 * H.sec[tie].from + p] - res->v[3 * H.sec[tie].to + p]) <
                      1e-9 * res->v_base_ln[0]);
    harness_free(&h);

    /* the sweep refuses the same network, naming the section that closes the loop */
    st = solve_with(&h, &H.f, KL_SOLVER_SWEEP, 0);
    ck_assert_int_eq(st, KL_ETOPO);
    ck_assert_str_eq(h.err.items[0].element, "section tie");
    ck_assert_int_eq(h.err.items[0].line, 41);
    ck_assert_msg(strstr(first_error(&h.err), "loop") && strstr(first_error(&h.err), "nodal"),
                  "%s", first_error(&h.err));
    harness_free(&h);
}

START_TEST(test_loop_through_line)
{
    check_loop(0);
}
END_TEST

START_TEST(test_loop_through_switch)
{
    check_loop(1);
}
END_TEST

/* Two identical lines in parallel (a loop of two sections) are one line of
 * half the series impedance and twice the shunt admittance (parallel
 * admittances add: circuit theory, common practice).  The nodal solution of
 * the pair must equal the sweep's solution of the single equivalent line,
 * and each of the pair carries half the current. */
START_TEST(test_parallel_lines_equivalent)
{
    double complex zh[6];
    double b2[6];
    for (int k = 0; k < 6; k++) {
        zh[k] = cfg("601")->z[k] / 2;
        b2[k] = cfg("601")->b[k] * 2;
    }
    harness h1, h2;

    hf_init(&H, "parallel pair", "src", 12.47);
    H.f.radial = 0;
    int c = hf_matrix(&H, "601", "abc", cfg("601")->z, cfg("601")->b);
    hf_line(&H, "p1", "src", "b1", 4000, c);
    hf_line(&H, "p2", "src", "b1", 4000, c);
    hf_load(&H, "l", "b1", KL_CONN_WYE, KL_LOAD_PQ, (double[]){900, 500, 700},
            (double[]){400, 200, 300});
    ck_assert_msg(solve_with(&h1, &H.f, KL_SOLVER_NODAL, 1e-10) == KL_OK, "%s",
                  harness_first_error(&h1));
    static hand_feeder E;
    hf_init(&E, "equivalent line", "src", 12.47);
    int ce = hf_matrix(&E, "601/2", "abc", zh, b2);
    hf_line(&E, "pe", "src", "b1", 4000, ce);
    hf_load(&E, "l", "b1", KL_CONN_WYE, KL_LOAD_PQ, (double[]){900, 500, 700},
            (double[]){400, 200, 300});
    ck_assert_msg(solve_with(&h2, &E.f, KL_SOLVER_SWEEP, 1e-10) == KL_OK, "%s",
                  harness_first_error(&h2));
    const kl_flow_result *r1 = h1.res, *r2 = h2.res;
    for (int p = 0; p < 3; p++) {
        double dv = cabs(r1->v[3 + p] - r2->v[3 + p]) / r1->v_base_ln[1];
        ck_assert_msg(dv <= 1e-9, "phase %c: pair and equivalent differ by %.3g pu", 'a' + p, dv);
        ck_assert(cabs(r1->i[p] - r1->i[3 + p]) <= 1e-6 * cabs(r1->i[p]));
        ck_assert_msg(cabs(r1->i[p] + r1->i[3 + p] - r2->i[p]) <= 1e-6 * cabs(r2->i[p]),
                      "phase %c: %.6g vs %.6g A", (char)('a' + p), cabs(r1->i[p] + r1->i[3 + p]), cabs(r2->i[p]));
    }
    harness_free(&h1);
    harness_free(&h2);
}
END_TEST

/* A load far beyond the feeder's capability: reported as non-convergence
 * with iterations, mismatch, bus and a likely reason, never as results. */
START_TEST(test_noconv_reported)
{
    build_taps(&H);
    H.load[0].s_va[0] *= 400;
    H.load[0].s_va[1] *= 400;
    H.load[0].s_va[2] *= 400;
    harness h;
    kl_status st = solve_with(&h, &H.f, KL_SOLVER_NODAL, 0);
    ck_assert_int_eq(st, KL_ENOCONV);
    ck_assert(!h.res->converged);
    const char *m = first_error(&h.err);
    ck_assert_msg(strstr(m, "did not converge after") && strstr(m, "at bus") &&
                  strstr(m, "likely reason"), "message: %s", m);
    harness_free(&h);
}
END_TEST

/* A line with zero series impedance has no admittance: a located error. */
START_TEST(test_zero_impedance_line)
{
    build_taps(&H);
    static const double complex z0[6] = {0};
    static const double b0[6] = {0};
    int c = hf_matrix(&H, "nothing", "abc", z0, b0);
    H.sec[0].construction = c;
    H.sec[0].loc = (kl_loc){12, 5};
    harness h;
    kl_status st = solve_with(&h, &H.f, KL_SOLVER_NODAL, 0);
    ck_assert_int_eq(st, KL_EINPUT);
    ck_assert_int_eq(h.err.items[0].line, 12);
    ck_assert_str_eq(h.err.items[0].element, "section m1");
    ck_assert_msg(strstr(first_error(&h.err), "singular"), "%s", first_error(&h.err));
    harness_free(&h);
}
END_TEST

/* Every allocation of the nodal solver failing in turn gives KL_ENOMEM and
 * leaks nothing (the sanitizer build checks the leaks). */
START_TEST(test_alloc_failures)
{
    build_taps(&H);
    harness h;
    harness_init(&h);
    harness_use(&h, &H.f);
    HARNESS_OK(&h, harness_build(&h));
    HARNESS_OK(&h, harness_result(&h));
    kl_network *net = h.net;
    kl_flow_result *res = h.res;
    kl_errors err;
    kl_errors_init(&err);
    kl_flow_options opt;
    kl_flow_options_default(&opt);
    int failures = 0;
    for (long n = 0; n < 40; n++) {
        kl_errors_clear(&err);
        net->v_valid = 0;
        kl_alloc_fail_after(n);
        kl_status st = kl_nodal_solve(net, &opt, res, &err);
        kl_alloc_fail_after(-1);
        if (st == KL_OK)
            break;
        ck_assert_int_eq(st, KL_ENOMEM);
        failures++;
    }
    ck_assert(failures > 3);
    net->v_valid = 0;
    ck_assert_int_eq(kl_nodal_solve(net, &opt, res, &err), KL_OK);
    harness_free(&h);
    kl_errors_free(&err);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("nodal");
    TCase *tc = tcase_create("agreement");
    tcase_add_test(tc, test_taps_loads_switch);
    tcase_add_test(tc, test_thevenin_source);
    tcase_add_loop_test(tc, test_transformer_connections, 0, (int)(sizeof XF / sizeof XF[0]));
    tcase_add_test(tc, test_regulator_wye_fixed);
    tcase_add_test(tc, test_regulator_wye_auto);
    tcase_add_test(tc, test_regulator_closed_delta);
    tcase_add_test(tc, test_regulator_open_delta);
    suite_add_tcase(s, tc);
    TCase *tf = tcase_create("files");
    tcase_add_loop_test(tf, test_feeder_files, 0, (int)(sizeof FILES / sizeof FILES[0]));
    tcase_add_test(tf, test_ieee13_published);
    tcase_add_test(tf, test_synthetic_feeder);
    suite_add_tcase(s, tf);
    TCase *tl = tcase_create("loops");
    tcase_add_test(tl, test_loop_through_line);
    tcase_add_test(tl, test_loop_through_switch);
    tcase_add_test(tl, test_parallel_lines_equivalent);
    suite_add_tcase(s, tl);
    TCase *te = tcase_create("errors");
    tcase_add_test(te, test_noconv_reported);
    tcase_add_test(te, test_zero_impedance_line);
    tcase_add_test(te, test_alloc_failures);
    suite_add_tcase(s, te);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
