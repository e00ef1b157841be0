/* Tests of the rebalancing advisor (src/rebalance/: the rephaser, the search
 * and its strategies, the plan; src/io/feeder_write.c).
 *
 * References used:
 *  - Fortescue (AIEE Trans. 37, 1918): three equal currents 120 degrees apart
 *    have no zero-sequence part, so identical loads spread one per phase on a
 *    feeder whose impedances are the same for every phase leave no residual
 *    current at the head; all on one phase, the residual equals the phase
 *    current (Kirchhoff's current law: nothing else returns it).
 *  - Exhaustive enumeration of every admissible set of moves: the advisor's
 *    heuristic result must score the same.
 *  - An independent load flow of the feeder file written with the moves
 *    applied, read back by the loader and analysed from scratch. */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include "harness.h"
#include "kilter/rebalance.h"
#include "kl_rebalance.h"

/* A small feeder: a three-phase main with equal self and equal mutual
 * impedances (so every phase is alike), laterals and loads added by the
 * caller.  SI units. */
static const char *HEAD =
    "kilter-feeder: 1\n"
    "name: test feeder\n"
    "units: si\n"
    "source: {bus: sub, nominal_voltage: 12.47 kV}\n"
    "constructions:\n"
    "  - name: m3\n"
    "    phases: abc\n"
    "    impedance:\n"
    "      aa: 0.0003 + j0.0008 ohm/m\n"
    "      bb: 0.0003 + j0.0008 ohm/m\n"
    "      cc: 0.0003 + j0.0008 ohm/m\n"
    "      ab: 0.0001 + j0.0004 ohm/m\n"
    "      bc: 0.0001 + j0.0004 ohm/m\n"
    "      ac: 0.0001 + j0.0004 ohm/m\n"
    "  - name: l1\n"
    "    phases: a\n"
    "    impedance: {aa: 0.0008 + j0.0009 ohm/m}\n"
    "  - name: l2\n"
    "    phases: ab\n"
    "    impedance:\n"
    "      aa: 0.0007 + j0.0009 ohm/m\n"
    "      bb: 0.0007 + j0.0009 ohm/m\n"
    "      ab: 0.0001 + j0.0003 ohm/m\n";

typedef struct {
    harness h;         /* the feeder, its network and the messages (h.err) */
    kl_feeder *f;      /* h.f */
    kl_network *net;   /* h.net */
    kl_rephaser *rp;   /* owned */
} fixture;

/* The loaded feeder (text or file) derived, built and given a rephaser. */
static void fixture_finish(fixture *x)
{
    HARNESS_OK(&x->h, harness_derive(&x->h, KL_CARSON_FULL));
    HARNESS_OK(&x->h, harness_build(&x->h));
    x->f = x->h.f;
    x->net = x->h.net;
    HARNESS_OK(&x->h, kl_rephaser_alloc(x->net, &x->rp, &x->h.err));
}

static void fixture_load_text(fixture *x, const char *text)
{
    x->rp = NULL;
    harness_init(&x->h);
    HARNESS_OK(&x->h, harness_load_text(&x->h, text, "test.yaml"));
    fixture_finish(x);
}

static void fixture_load_file(fixture *x, const char *path)
{
    x->rp = NULL;
    harness_init(&x->h);
    HARNESS_OK(&x->h, harness_load(&x->h, path));
    fixture_finish(x);
}

static void fixture_free(fixture *x)
{
    kl_rephaser_free(x->rp);
    harness_free(&x->h);
}

static char *text_join(const char *a, const char *b)
{
    char *s = malloc(strlen(a) + strlen(b) + 1);
    strcpy(s, a);
    strcat(s, b);
    return s;
}

/* Three identical single-phase laterals, all on phase a. */
static const char *PILE =
    "sections:\n"
    "  - {name: main, from: sub, to: m1, length: 1000 m, construction: m3}\n"
    "  - {name: lat1, from: m1, to: x1, length: 500 m, construction: l1}\n"
    "  - {name: lat2, from: m1, to: x2, length: 500 m, construction: l1}\n"
    "  - {name: lat3, from: m1, to: x3, length: 500 m, construction: l1}\n"
    "loads:\n"
    "  - {name: d1, bus: x1, power: {a: 200 + j50 kVA}}\n"
    "  - {name: d2, bus: x2, power: {a: 200 + j50 kVA}}\n"
    "  - {name: d3, bus: x3, power: {a: 200 + j50 kVA}}\n";

static kl_rebalance_plan *run_plan(fixture *x, const kl_rebalance_options *opt)
{
    kl_rebalance_plan *plan = NULL;
    ck_assert_int_eq(kl_rebalance_plan_alloc(x->rp->nitems, opt->max_moves, &plan), KL_OK);
    kl_status st = kl_rebalance_run(x->rp, opt, plan, &x->h.err);
    if (st && x->h.err.count)
        fprintf(stderr, "%s\n", x->h.err.items[0].message);
    ck_assert_int_eq(st, KL_OK);
    return plan;
}

START_TEST(test_pile_on_one_phase)
{
    fixture x;
    char *text = text_join(HEAD, PILE);
    fixture_load_text(&x, text);
    ck_assert_int_eq(x.rp->nitems, 3);
    for (int mode = KL_SEARCH_HEURISTIC; mode <= KL_SEARCH_EXHAUSTIVE; mode++) {
        kl_rebalance_options opt;
        kl_rebalance_options_default(&opt);
        opt.mode = (kl_search_mode)mode;
        kl_rebalance_plan *plan = run_plan(&x, &opt);
        /* reasoning (file comment): all on a, the residual is the phase-a
         * current, about 3 x 206 kVA / 7.2 kV = 86 A */
        double ia = plan->before[0].i_head[0];
        ck_assert_double_eq_tol(plan->before[0].i_residual, ia, 1e-6 * ia);
        ck_assert(ia > 80 && ia < 95);
        ck_assert_int_eq(plan->nsteps, 2);
        int phases = KL_PH_A; /* the one left where it was */
        for (int s = 0; s < plan->nsteps; s++) {
            ck_assert_int_eq(plan->steps[s].from_phases, KL_PH_A);
            phases |= plan->steps[s].to_phases;
        }
        ck_assert_int_eq(phases, KL_PH_ABC);
        /* one per phase: balanced, no residual (Fortescue) */
        ck_assert(plan->after[0].i_residual < 1e-6 * ia);
        /* the first move halves nothing: two on a, one elsewhere leaves the
         * residual |2 I - I a^k| = sqrt(3) I, an improvement from 3 I */
        double i1 = ia / 3.0;
        ck_assert_double_eq_tol(plan->steps[0].after[0].i_residual, sqrt(3.0) * i1, 0.02 * i1);
        kl_rebalance_plan_free(plan);
    }
    fixture_free(&x);
    free(text);
}
END_TEST

/* Spot loads on a three-phase bus, with a pin and a forbidden phase. */
START_TEST(test_spot_loads_pins_forbidden)
{
    const char *body =
        "sections:\n"
        "  - {name: main, from: sub, to: m1, length: 1500 m, construction: m3}\n"
        "loads:\n"
        "  - {name: s1, bus: m1, power: {a: 150 + j40 kVA}, pinned: true}\n"
        "  - {name: s2, bus: m1, power: {a: 150 + j40 kVA}, forbidden_phases: b}\n"
        "  - {name: s3, bus: m1, power: {a: 150 + j40 kVA}}\n"
        "  - {name: big, bus: m1, power: {a: 90 kVA, b: 90 kVA, c: 90 kVA}}\n";
    fixture x;
    char *text = text_join(HEAD, body);
    fixture_load_text(&x, text);
    ck_assert_int_eq(x.rp->nitems, 3); /* the three-phase load never moves */
    ck_assert(x.rp->items[kl_rephaser_find(x.rp, "s1")].pinned);
    kl_rebalance_options opt;
    kl_rebalance_options_default(&opt);
    kl_rebalance_plan *plan = run_plan(&x, &opt);
    ck_assert_int_eq(plan->nsteps, 2);
    for (int s = 0; s < plan->nsteps; s++) {
        const kl_rephase_item *it = &x.rp->items[plan->steps[s].item];
        ck_assert_str_ne(it->name, "s1");
        if (strcmp(it->name, "s2") == 0)
            ck_assert_int_eq(plan->steps[s].to_phases, KL_PH_C);
    }
    ck_assert(plan->after[0].i_residual < 1e-6 * plan->before[0].i_residual);
    kl_rebalance_plan_free(plan);
    fixture_free(&x);
    free(text);
}
END_TEST

/* Unequal laterals, a two-phase lateral with a single-phase lateral off it
 * (nested moves), a delta load, and a spot load. */
static const char *MIXED =
    "sections:\n"
    "  - {name: main1, from: sub, to: m1, length: 800 m, construction: m3}\n"
    "  - {name: main2, from: m1, to: m2, length: 900 m, construction: m3}\n"
    "  - {name: la, from: m1, to: a1, length: 400 m, construction: l1}\n"
    "  - {name: la2, from: a1, to: a2, length: 300 m, construction: l1}\n"
    "  - {name: lb, from: m1, to: b1, length: 700 m, construction: l1}\n"
    "  - {name: lc, from: m2, to: c1, length: 600 m, construction: l1}\n"
    "  - {name: ld, from: m2, to: d1, length: 200 m, construction: l1}\n"
    "  - {name: t2, from: m2, to: e1, length: 500 m, construction: l2}\n"
    "  - {name: t2x, from: e1, to: e2, length: 300 m, construction: l1}\n"
    "loads:\n"
    "  - {name: qa, bus: a2, power: {a: 120 + j30 kVA}}\n"
    "  - {name: qa1, bus: a1, power: {a: 40 + j10 kVA}}\n"
    "  - {name: qb, bus: b1, power: {a: 260 + j70 kVA}}\n"
    "  - {name: qc, bus: c1, power: {a: 90 + j20 kVA}}\n"
    "  - {name: qd, bus: d1, power: {a: 180 + j60 kVA}}\n"
    "  - {name: qe, bus: e1, connection: delta, power: {ab: 100 + j30 kVA}}\n"
    "  - {name: qe2, bus: e2, power: {a: 70 + j20 kVA}, model: constant-impedance}\n"
    "  - {name: sp, bus: m2, power: {b: 60 + j15 kVA}, model: constant-current}\n"
    "  - {name: bal, bus: m2, power: {a: 100 kVA, b: 100 kVA, c: 100 kVA}}\n";

START_TEST(test_heuristic_equals_exhaustive)
{
    fixture x;
    char *text = text_join(HEAD, MIXED);
    fixture_load_text(&x, text);
    /* la, lb, lc, ld, t2, t2x (nested in t2), sp */
    ck_assert_int_eq(x.rp->nitems, 7);
    int t2 = kl_rephaser_find(x.rp, "t2"), t2x = kl_rephaser_find(x.rp, "t2x");
    ck_assert_int_eq(x.rp->items[t2x].outer, t2);
    ck_assert_int_eq(x.rp->items[t2x].allowed, 3); /* stays on the pair ab: a or b */
    for (int o = 0; o < KL_OBJ_COUNT; o++) {
        double score[2];
        for (int m = 0; m < 2; m++) {
            kl_rebalance_options opt;
            kl_rebalance_options_default(&opt);
            opt.weight[KL_OBJ_NEUTRAL] = 0;
            opt.weight[o] = 1;
            opt.max_moves = 3;
            opt.vmin_pu = 0.5; /* range wide enough not to bind here */
            opt.vmax_pu = 1.5;
            opt.mode = m ? KL_SEARCH_EXHAUSTIVE : KL_SEARCH_HEURISTIC;
            kl_rebalance_plan *plan = run_plan(&x, &opt);
            ck_assert_int_eq(plan->method, opt.mode);
            ck_assert(plan->nsteps <= 3);
            score[m] = plan->score_after;
            ck_assert(plan->score_after <= plan->score_before + 1e-12);
            kl_rebalance_plan_free(plan);
        }
        if (fabs(score[0] - score[1]) > 1e-9 * fabs(score[1]))
            fprintf(stderr, "objective %s: heuristic %.12g exhaustive %.12g\n",
                    kl_objective_name((kl_objective)o), score[0], score[1]);
        ck_assert_double_eq_tol(score[0], score[1], 1e-9 * fabs(score[1]));
    }
    fixture_free(&x);
    free(text);
}
END_TEST

/* Summary of the feeder file at `path`, solved from scratch. */
static void independent_flow(const char *path, double scale, kl_rebalance_summary *s)
{
    harness y;
    harness_init(&y);
    HARNESS_OK(&y, harness_load(&y, path));
    HARNESS_OK(&y, harness_derive(&y, KL_CARSON_FULL));
    HARNESS_OK(&y, harness_build(&y));
    kl_flow_options fo;
    kl_flow_options_default(&fo);
    fo.load_scale = scale;
    HARNESS_OK(&y, harness_solve(&y, &fo));
    kl_rebalance_summarize(y.net, y.res->converged, -1, s);
    harness_free(&y);
}

static void compare_summary(const kl_rebalance_summary *a, const kl_rebalance_summary *b)
{
    /* the sweep stops at 1e-6 pu voltage change, so agreement to about 1e-5
     * relative is what two independent solves can show */
    ck_assert_double_eq_tol(a->i_residual, b->i_residual, 1e-4 * fmax(a->i_head[0], 1.0));
    for (int p = 0; p < 3; p++)
        ck_assert_double_eq_tol(a->i_head[p], b->i_head[p], 1e-5 * fmax(b->i_head[p], 1.0));
    ck_assert_double_eq_tol(a->vuf_max, b->vuf_max, 1e-6);
    ck_assert_double_eq_tol(a->losses_w, b->losses_w, 1e-4 * fmax(b->losses_w, 1.0));
    ck_assert_double_eq_tol(a->v_min_pu, b->v_min_pu, 1e-6);
}

/* Each plan step against a load flow of the file written with moves 1..i. */
static void check_steps_independently(fixture *x, const kl_rebalance_plan *plan)
{
    const kl_feeder *f = x->f;
    int *rot = calloc((size_t)x->rp->nitems + 1, sizeof(int));
    int *sec_rot = calloc((size_t)f->nsections + 1, sizeof(int));
    int *load_rot = calloc((size_t)f->nloads + 1, sizeof(int));
    char path[256];
    snprintf(path, sizeof path, "%s/rebalance-step-%ld.yaml", KILTER_BINARY_DIR, (long)getpid());
    for (int s = 0; s < plan->nsteps; s++) {
        rot[plan->steps[s].item] = plan->steps[s].rot;
        kl_rephase_feeder_rotations(x->rp, rot, sec_rot, load_rot);
        ck_assert_int_eq(kl_feeder_write(f, sec_rot, load_rot, path, &x->h.err), KL_OK);
        for (int l = 0; l < plan->nlevels; l++) {
            kl_rebalance_summary ind;
            independent_flow(path, plan->level[l].scale, &ind);
            compare_summary(&plan->steps[s].after[l], &ind);
        }
    }
    remove(path);
    free(rot);
    free(sec_rot);
    free(load_rot);
}

START_TEST(test_steps_match_independent_flow)
{
    fixture x;
    char *text = text_join(HEAD, MIXED);
    fixture_load_text(&x, text);
    kl_rebalance_options opt;
    kl_rebalance_options_default(&opt);
    opt.weight[KL_OBJ_VUF] = 1;
    opt.nlevels = 2; /* peak and light load */
    opt.level[0] = (kl_load_level){1.0, 1.0};
    opt.level[1] = (kl_load_level){0.4, 0.5};
    opt.max_moves = 4;
    kl_rebalance_plan *plan = run_plan(&x, &opt);
    ck_assert(plan->nsteps >= 2);
    check_steps_independently(&x, plan);
    kl_rebalance_plan_free(plan);
    fixture_free(&x);
    free(text);
}
END_TEST

/* The demo feeder: overhead constructions (Carson + Kron), single-phase
 * transformers, an automatic regulator, a capacitor. */
START_TEST(test_demo_steps_independent)
{
    fixture x;
    fixture_load_file(&x, KILTER_SOURCE_DIR "/feeders/demo/quillmere-f3.yaml");
    ck_assert(x.rp->nitems >= 5);
    kl_rebalance_options opt;
    kl_rebalance_options_default(&opt);
    opt.max_moves = 14; /* more than order_dp takes: the greedy ordering */
    opt.weight[KL_OBJ_LOSSES] = 1;
    opt.anneal_steps = 100;
    kl_rebalance_plan *plan = run_plan(&x, &opt);
    ck_assert(plan->nsteps >= 1);
    ck_assert(plan->after[0].i_residual < plan->before[0].i_residual);
    check_steps_independently(&x, plan);
    /* the search left the network at the original phasing: evaluating the
     * final moves again from there gives the plan's "after" */
    kl_rebalance_summary again;
    ck_assert_int_eq(kl_rebalance_evaluate(x.rp, &opt, plan->rot + 0, &again, &x.h.err), KL_OK);
    compare_summary(&plan->after[0], &again);
    kl_rebalance_plan_free(plan);
    fixture_free(&x);
}
END_TEST

/* Every single move of every item, through the rephased network, against
 * the load flow of the file written with that move: covers single- and
 * two-phase laterals, nested items, delta and spot loads, and a lateral with
 * a single-phase service transformer; a lateral with a center-tapped one is
 * not offered. */
static const char *SERVICE =
    "  - {name: lx, from: m1, to: s1, length: 300 m, construction: l1}\n"
    "  - {name: ly, from: m1, to: s4, length: 200 m, construction: l1}\n"
    "  - {name: tx1, from: s4, to: s2, phases: a, transformer: ct25}\n"
    "  - {name: tx2, from: s1, to: s3, phases: a, transformer: sp10}\n"
    "transformers:\n"
    "  - {name: ct25, rating: 25 kVA, high: {voltage: 7.2 kV, connection: single},\n"
    "     low: {voltage: 240 V, connection: center-tap}, resistance: 1.3 %, reactance: 1.6 %}\n"
    "  - {name: sp10, rating: 10 kVA, high: {voltage: 7.2 kV, connection: single},\n"
    "     low: {voltage: 240 V, connection: single}, resistance: 1.2 %, reactance: 1.5 %}\n";

START_TEST(test_every_move_independent)
{
    /* MIXED with a service lateral spliced into its sections */
    const char *cut = strstr(MIXED, "loads:\n");
    size_t nsec = (size_t)(cut - MIXED);
    char *body = malloc(strlen(MIXED) + strlen(SERVICE) + 512);
    memcpy(body, MIXED, nsec);
    strcpy(body + nsec, SERVICE);
    strcat(body, cut);
    strcat(body, "  - {name: h1, bus: s2, power: {a: 8 + j2 kVA}}\n"
                 "  - {name: h3, bus: s3, power: {a: 7 + j2 kVA}}\n"
                 "  - {name: h4, bus: s1, power: {a: 30 + j9 kVA}}\n");
    char *text = text_join(HEAD, body);
    fixture x;
    fixture_load_text(&x, text);
    int lx = kl_rephaser_find(x.rp, "lx");
    ck_assert_int_ge(lx, 0);
    ck_assert_int_lt(kl_rephaser_find(x.rp, "ly"), 0); /* holds a center-tap bank */
    ck_assert_int_eq(x.rp->nskipped, 1);
    ck_assert(strstr(x.rp->skipped[0], "ly") && strstr(x.rp->skipped[0], "center-tap"));
    kl_rebalance_options opt;
    kl_rebalance_options_default(&opt);
    int n = x.rp->nitems;
    int *rot = calloc((size_t)n, sizeof(int));
    int *sec_rot = calloc((size_t)x.f->nsections, sizeof(int));
    int *load_rot = calloc((size_t)x.f->nloads, sizeof(int));
    char path[256];
    snprintf(path, sizeof path, "%s/rebalance-move-%ld.yaml", KILTER_BINARY_DIR, (long)getpid());
    int checked = 0;
    for (int i = 0; i < n; i++)
        for (int r = 1; r < 3; r++) {
            if (!(x.rp->items[i].allowed & (1 << r)))
                continue;
            rot[i] = r;
            kl_rebalance_summary mine, ind;
            ck_assert_int_eq(kl_rebalance_evaluate(x.rp, &opt, rot, &mine, &x.h.err), KL_OK);
            kl_rephase_feeder_rotations(x.rp, rot, sec_rot, load_rot);
            ck_assert_int_eq(kl_feeder_write(x.f, sec_rot, load_rot, path, &x.h.err), KL_OK);
            independent_flow(path, 1.0, &ind);
            compare_summary(&mine, &ind);
            rot[i] = 0;
            checked++;
        }
    ck_assert_int_ge(checked, 2 * 6);
    remove(path);
    free(rot);
    free(sec_rot);
    free(load_rot);
    fixture_free(&x);
    free(text);
    free(body);
}
END_TEST

/* Names YAML would misread if written bare (quotes, colons, #, backslash,
 * leading dash, non-ASCII) survive the writer: the file reads back with the
 * same names and the same load flow. */
START_TEST(test_write_hostile_names)
{
    const char *body =
        "sections:\n"
        "  - {name: \"main: 1 # a\", from: \"sub\", to: \"- m1\", length: 1000 m, construction: m3}\n"
        "  - {name: 'lat \"q\"', from: \"- m1\", to: 'x\\1', length: 500 m, construction: l1}\n"
        "loads:\n"
        "  - {name: \"d\u00e9p\u00f4t, 1\", bus: 'x\\1', power: {a: 200 + j50 kVA},\n"
        "     description: \"line one\\nline two\"}\n";
    char *text = text_join(HEAD, body);
    fixture x;
    fixture_load_text(&x, text);
    char path[256];
    snprintf(path, sizeof path, "%s/rebalance-names-%ld.yaml", KILTER_BINARY_DIR, (long)getpid());
    int sec_rot[2] = {0, 1}, load_rot[1] = {1};
    ck_assert_int_eq(kl_feeder_write(x.f, sec_rot, load_rot, path, &x.h.err), KL_OK);
    fixture y;
    fixture_load_file(&y, path);
    ck_assert_int_eq(y.f->nsections, 2);
    for (int k = 0; k < 2; k++)
        ck_assert_str_eq(y.f->sections[k].name, x.f->sections[k].name);
    ck_assert_str_eq(y.f->loads[0].name, x.f->loads[0].name);
    ck_assert_str_eq(y.f->loads[0].description, x.f->loads[0].description);
    ck_assert_str_eq(y.f->buses[y.f->sections[1].to].name, "x\\1");
    ck_assert_int_eq(y.f->sections[1].phases, KL_PH_B); /* the lateral moved a -> b */
    ck_assert(cabs(y.f->loads[0].s_va[1] - x.f->loads[0].s_va[0]) == 0);
    remove(path);
    fixture_free(&y);
    fixture_free(&x);
    free(text);
}
END_TEST

/* Writing the feeder unchanged and reading it back gives the same flow. */
START_TEST(test_write_roundtrip)
{
    char path[256];
    snprintf(path, sizeof path, "%s/rebalance-rt-%ld.yaml", KILTER_BINARY_DIR, (long)getpid());
    fixture x;
    fixture_load_file(&x, KILTER_SOURCE_DIR "/feeders/demo/quillmere-f3.yaml");
    ck_assert_int_eq(kl_feeder_write(x.f, NULL, NULL, path, &x.h.err), KL_OK);
    kl_rebalance_summary a, b;
    independent_flow(KILTER_SOURCE_DIR "/feeders/demo/quillmere-f3.yaml", 1.0, &a);
    independent_flow(path, 1.0, &b);
    ck_assert_double_eq_tol(a.losses_w, b.losses_w, 1e-9 * a.losses_w);
    ck_assert_double_eq_tol(a.i_residual, b.i_residual, 1e-9 * a.i_residual);
    ck_assert_double_eq_tol(a.v_min_pu, b.v_min_pu, 1e-12);
    remove(path);
    /* a directory that does not exist: an error, no file */
    ck_assert_int_eq(kl_feeder_write(x.f, NULL, NULL, "/nonexistent-dir/x.yaml", &x.h.err), KL_EIO);
    fixture_free(&x);
}
END_TEST

/* Moving every item around the three phases and back restores every
 * matrix bit for bit (a permutation loses nothing). */
START_TEST(test_rotation_restores)
{
    fixture x;
    char *text = text_join(HEAD, MIXED);
    fixture_load_text(&x, text);
    kl_network *n = x.net;
    /* lines keep Z and Y packed by phase count in zy, devices a..B by slot
     * (network.h); the copy holds each array at a stride of the longest */
    size_t nzy = n->nzy;
    size_t m = 9 * (size_t)n->ndev > nzy ? 9 * (size_t)n->ndev : nzy;
    kl_complex *copy = calloc(7 * m, sizeof(kl_complex));
    kl_complex *arr[7] = {n->a, n->b, n->c, n->d, n->A, n->B, n->zy};
    size_t len[7];
    for (int k = 0; k < 7; k++) {
        len[k] = k < 6 ? 9 * (size_t)n->ndev : nzy;
        memcpy(copy + (size_t)k * m, arr[k], len[k] * sizeof(kl_complex));
    }
    int *ph = malloc(sizeof(int) * (size_t)n->nbuses);
    memcpy(ph, n->phases, sizeof(int) * (size_t)n->nbuses);
    size_t nbr = (size_t)(n->nbranches + n->nlinks);
    int *brph = malloc(sizeof(int) * nbr);
    memcpy(brph, n->br_phases, sizeof(int) * nbr);
    for (int i = 0; i < x.rp->nitems; i++) {
        kl_rephase_set(x.rp, i, 1);
        kl_rephase_set(x.rp, i, 2);
    }
    int moved = 0;
    for (int k = 0; k < 7; k++)
        moved |= memcmp(copy + (size_t)k * m, arr[k], len[k] * sizeof(kl_complex)) != 0;
    /* a single-phase line's packed Z, Y stay put: its phase moves */
    moved |= memcmp(brph, n->br_phases, sizeof(int) * nbr) != 0;
    ck_assert(moved);
    for (int i = x.rp->nitems - 1; i >= 0; i--)
        kl_rephase_set(x.rp, i, 0);
    for (int k = 0; k < 7; k++)
        ck_assert(memcmp(copy + (size_t)k * m, arr[k], len[k] * sizeof(kl_complex)) == 0);
    ck_assert(memcmp(ph, n->phases, sizeof(int) * (size_t)n->nbuses) == 0);
    ck_assert(memcmp(brph, n->br_phases, sizeof(int) * nbr) == 0);
    for (int l = 0; l < x.f->nloads; l++)
        for (int k = 0; k < 3; k++)
            ck_assert_int_eq(n->ld_slot[3 * l + k], k);
    free(copy);
    free(ph);
    free(brph);
    fixture_free(&x);
    free(text);
}
END_TEST

START_TEST(test_bad_options)
{
    fixture x;
    char *text = text_join(HEAD, PILE);
    fixture_load_text(&x, text);
    kl_rebalance_options opt;
    kl_rebalance_options_default(&opt);
    opt.weight[KL_OBJ_NEUTRAL] = 0;
    kl_rebalance_plan *plan = NULL;
    ck_assert_int_eq(kl_rebalance_plan_alloc(x.rp->nitems, 10, &plan), KL_OK);
    ck_assert_int_eq(kl_rebalance_run(x.rp, &opt, plan, &x.h.err), KL_EARG);
    ck_assert(x.h.err.count > 0);
    kl_rebalance_options_default(&opt);
    opt.mode = KL_SEARCH_EXHAUSTIVE;
    opt.exhaustive_limit = 5; /* 27 states */
    ck_assert_int_eq(kl_rebalance_run(x.rp, &opt, plan, &x.h.err), KL_EARG);
    kl_rebalance_options_default(&opt);
    opt.level[0].scale = 500; /* far beyond what the feeder can carry */
    ck_assert_int_eq(kl_rebalance_run(x.rp, &opt, plan, &x.h.err), KL_ENOCONV);
    kl_rebalance_plan_free(plan);
    fixture_free(&x);
    free(text);
}
END_TEST

/* Every allocation failing in turn: a clean status, never a crash. */
START_TEST(test_alloc_failures)
{
    fixture x;
    char *text = text_join(HEAD, MIXED);
    fixture_load_text(&x, text);
    kl_rebalance_options opt;
    kl_rebalance_options_default(&opt);
    opt.anneal_steps = 20;
    kl_status st = KL_ENOMEM;
    long k;
    for (k = 0; k < 400 && st != KL_OK; k++) {
        kl_rephaser *rp = NULL;
        kl_rebalance_plan *plan = NULL;
        kl_alloc_fail_after(k);
        st = kl_rephaser_alloc(x.net, &rp, &x.h.err);
        if (!st)
            st = kl_rebalance_plan_alloc(rp->nitems, 10, &plan);
        if (!st)
            st = kl_rebalance_run(rp, &opt, plan, &x.h.err);
        kl_alloc_fail_after(-1);
        ck_assert(st == KL_OK || st == KL_ENOMEM);
        kl_rebalance_plan_free(plan);
        kl_rephaser_free(rp);
        kl_errors_clear(&x.h.err);
    }
    /* every allocation point was failed once before the run went through */
    ck_assert_int_eq(st, KL_OK);
    ck_assert(k > 10);
    fixture_free(&x);
    free(text);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("rebalance");
    TCase *tc = tcase_create("core");
    tcase_set_timeout(tc, 300);
    tcase_add_test(tc, test_pile_on_one_phase);
    tcase_add_test(tc, test_spot_loads_pins_forbidden);
    tcase_add_test(tc, test_heuristic_equals_exhaustive);
    tcase_add_test(tc, test_steps_match_independent_flow);
    tcase_add_test(tc, test_demo_steps_independent);
    tcase_add_test(tc, test_every_move_independent);
    tcase_add_test(tc, test_write_roundtrip);
    tcase_add_test(tc, test_write_hostile_names);
    tcase_add_test(tc, test_rotation_restores);
    tcase_add_test(tc, test_bad_options);
    tcase_add_test(tc, test_alloc_failures);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
