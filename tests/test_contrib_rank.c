/* The contributor ranking at many buses (issue 22, point 1): the shares the
 * study ranks, taken for all loads at once per bus by src/study/contrib.c's
 * transfer engine, must be the shares of the direct method, which walks each
 * load's current up its own path and the voltage change down the bus's path
 * (the definition in docs/study.md: dV_k = -Z_km I for lines, the
 * generalized branch matrices through devices; Kersting, "Distribution
 * System Modeling and Analysis", ch. 6-8, from memory).  The direct method is
 * kept here, written from that definition, as the reference: it costs loads x
 * depth per bus, which is why the library no longer uses it.
 *
 * For every feeder below, the VUF levels are lowered so that every
 * three-phase bus with any unbalance is ranked, then at each such bus:
 *   - every load's share (kl_contrib_shares) equals the direct method's;
 *   - the sums of single/two-phase and three-phase shares and the remainder
 *     equal the direct method's;
 *   - each ranked item's share is the direct method's share of that load, or
 *     its sum over the loads past that tap; the ranking is in order, and no
 *     candidate left out ranks above the last one kept.
 * Tolerance 1e-9 of max(1, |share|) (the two sum in different orders). */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include "harness.h"
#include "kilter/sequence.h"
#include "kilter/network.h"
#include "kl_model.h"

#define TOL 1e-9
#define KEEP 6

/* ---- the direct method (reference) */

static void mul3(const kl_complex *M, const kl_complex x[3], kl_complex y[3])
{
    for (int r = 0; r < 3; r++)
        y[r] = M[3 * r] * x[0] + M[3 * r + 1] * x[1] + M[3 * r + 2] * x[2];
}

static kl_complex neg_seq(const kl_complex abc[3])
{
    kl_complex s012[3];
    kl_seq_from_phase(abc, s012);
    return s012[2];
}

/* Voltage change at k for current I drawn at m: the current climbs m's path
 * (I_from = d I_to), the change descends k's path from the source
 * (dV_to = A dV_from - B dI_to, dI_to nonzero on the branches m's current
 * passes). */
static void direct_dv(const kl_study_paths *p, int k, int m, const kl_complex Ild[3],
                      kl_complex dv[3], kl_complex *di, int *on_m, int *kpath)
{
    kl_complex cur[3] = { Ild[0], Ild[1], Ild[2] }, nxt[3];
    for (int b = 0; b < p->nbranches; b++)
        on_m[b] = 0;
    for (int br = p->parent[m]; br >= 0; br = p->parent[p->br_from[br]]) {
        on_m[br] = 1;
        for (int r = 0; r < 3; r++)
            di[3 * br + r] = cur[r];
        mul3(&p->d[9 * br], cur, nxt);
        for (int r = 0; r < 3; r++)
            cur[r] = nxt[r];
    }
    int nk = 0;
    for (int br = p->parent[k]; br >= 0; br = p->parent[p->br_from[br]])
        kpath[nk++] = br;
    dv[0] = dv[1] = dv[2] = 0;
    if (p->zsource) {
        mul3(p->zsource, cur, dv);
        for (int r = 0; r < 3; r++)
            dv[r] = -dv[r];
    }
    for (int n = nk - 1; n >= 0; n--) {
        int b = kpath[n];
        mul3(&p->A[9 * b], dv, nxt);
        if (on_m[b]) {
            kl_complex drop[3];
            mul3(&p->B[9 * b], &di[3 * b], drop);
            for (int r = 0; r < 3; r++)
                nxt[r] -= drop[r];
        }
        for (int r = 0; r < 3; r++)
            dv[r] = nxt[r];
    }
}

static kl_complex volt(const kl_study_phases *ph, const kl_study_paths *p, int nf, int m, int s)
{
    if (p->v)
        return p->v[3 * (size_t)(p->v_pos ? p->v_pos[m] : m) + (size_t)s];
    return m < nf ? ph->v[3 * m + s] : CMPLX(NAN, NAN);
}

/* The current network load n draws: I = conj(S / V) per entry (wye: phase
 * to neutral, delta: across two phases); 0 when a voltage is unknown. */
static int direct_current(const kl_feeder *f, const kl_study_phases *ph,
                          const kl_study_paths *p, int n, kl_complex Ild[3])
{
    int L = p->ld_load[n], m = p->ld_bus[n];
    const kl_load *ld = &f->loads[L];
    Ild[0] = Ild[1] = Ild[2] = 0;
    for (int e = 0; e < 3; e++) {
        int s = p->ld_slot ? p->ld_slot[3 * L + e] : e, s2 = (s + 1) % 3;
        if (!(ld->phases & (1 << e)))
            continue;
        kl_complex V = volt(ph, p, f->nbuses, m, s);
        if (ld->conn == KL_CONN_DELTA)
            V -= volt(ph, p, f->nbuses, m, s2);
        if (!(cabs(V) > 0) || isnan(creal(V)))
            return 0;
        kl_complex Ie = conj(p->ld_weight[n] * ph->s_load[3 * L + e] / V);
        Ild[s] += Ie;
        if (ld->conn == KL_CONN_DELTA)
            Ild[s2] -= Ie;
    }
    return 1;
}

typedef struct {
    kl_complex *di;
    int *on_m, *kpath;
} direct_ws;

static void direct_shares(const kl_feeder *f, const kl_study_phases *ph,
                          const kl_study_paths *p, direct_ws *w, int k, double *share)
{
    kl_complex v2 = neg_seq(&ph->v[3 * k]);
    double den = creal(v2 * conj(v2));
    for (int L = 0; L < f->nloads; L++)
        share[L] = NAN;
    for (int n = 0; n < p->nloads; n++) {
        kl_complex Ild[3], dv[3];
        int L = p->ld_load[n];
        if (!direct_current(f, ph, p, n, Ild))
            continue;
        direct_dv(p, k, p->ld_bus[n], Ild, dv, w->di, w->on_m, w->kpath);
        if (isnan(share[L]))
            share[L] = 0;
        share[L] += den > 0 ? creal(neg_seq(dv) * conj(v2)) / den : NAN;
    }
}

/* A tap: a live section with fewer phases than the bus it leaves. */
static int is_tap(const kl_feeder *f, const kl_study_phases *ph, int q)
{
    const kl_section *sec = &f->sections[q];
    int b = kl_sec_up(sec), up = ph->bus_phases ? ph->bus_phases[b] : f->buses[b].phases;
    return kl_phases_count(sec->phases) < kl_phases_count(up);
}

/* Each load's share added to every tap on its way to the source. */
static void direct_taps(const kl_feeder *f, const kl_study_phases *ph, const kl_feeder_tree *t,
                        const double *share, double *tap_share, int *tap_loads)
{
    for (int q = 0; q < f->nsections; q++) {
        tap_share[q] = 0;
        tap_loads[q] = 0;
    }
    for (int L = 0; L < f->nloads; L++) {
        const kl_load *ld = &f->loads[L];
        if (isnan(share[L]))
            continue;
        for (int q = ld->bus >= 0 ? kl_feeder_tree_psec(t, ld->bus) : ld->section; q >= 0;
             q = kl_feeder_tree_psec(t, kl_sec_up(&f->sections[q])))
            if (is_tap(f, ph, q)) {
                tap_share[q] += share[L];
                tap_loads[q]++;
            }
    }
}

/* ---- the comparison */

static int close_to(double a, double b)
{
    return fabs(a - b) <= TOL * fmax(1.0, fabs(b));
}

static int kept(const kl_study *s, int c, int kind, int id)
{
    for (int j = s->cstart[c]; j < s->cstart[c + 1]; j++)
        if (s->ckind[j] == kind && s->cid[j] == id)
            return 1;
    return 0;
}

static void check_feeder(const char *path, const char *what)
{
    harness h;
    harness_init(&h);
    HARNESS_OK(&h, harness_load(&h, path));
    HARNESS_OK(&h, harness_derive(&h, KL_CARSON_APPROX));
    HARNESS_OK(&h, harness_build(&h));
    HARNESS_OK(&h, harness_solve(&h, NULL));
    kl_study_options opt;
    kl_study_options_default(&opt);
    opt.limits.vuf_supply = opt.limits.vuf_compat = 1e-9; /* rank every unbalanced bus */
    opt.max_contributors = KEEP;
    HARNESS_OK(&h, harness_study(&h, &opt));
    const kl_feeder *f = h.f;
    const kl_study *s = h.study;
    const kl_study_phases *ph = &h.view.ph;
    const kl_study_paths *p = &h.view.paths; /* the study's: matrices from the network */
    /* the direct method's: every branch's A, B, d in arrays (the form a
     * hand-made kl_study_paths takes, which the library also accepts) */
    kl_study_paths pd = *p;
    size_t m9 = 9 * (size_t)p->nbranches + 9;
    kl_complex *abd = calloc(3 * m9, sizeof *abd);
    ck_assert_ptr_nonnull(abd);
    for (int b = 0; b < p->nbranches; b++)
        ck_assert_int_eq(kl_network_branch_abcd(h.net, b, NULL, NULL, NULL, abd + 2 * m9 + 9 * (size_t)b,
                                                abd + 9 * (size_t)b, abd + m9 + 9 * (size_t)b), KL_OK);
    pd.A = abd;
    pd.B = abd + m9;
    pd.d = abd + 2 * m9;
    pd.net = NULL;
    const kl_feeder_tree *t;
    kl_feeder_tree *own;
    ck_assert_int_eq(kl_feeder_tree_of(f, &t, &own, NULL), KL_OK);
    size_t nl = (size_t)f->nloads + 1, ns = (size_t)f->nsections + 1;
    double *ref = calloc(nl, sizeof *ref), *got = calloc(nl, sizeof *got);
    double *tap = calloc(ns > nl ? ns : nl, sizeof *tap);
    int *taps = calloc(ns, sizeof *taps);
    direct_ws w = { calloc(3 * (size_t)p->nbranches + 3, sizeof(kl_complex)),
                    calloc((size_t)p->nbranches + 1, sizeof(int)),
                    calloc((size_t)p->nbranches + 1, sizeof(int)) };
    ck_assert(ref && got && tap && taps && w.di && w.on_m && w.kpath);
    kl_errors err;
    kl_errors_init(&err);
    ck_assert_msg(s->ncbus >= 2, "%s: only %d buses ranked", what, s->ncbus);
    int ranked = 0;
    for (int c = 0; c < s->ncbus; c++) {
        int k = s->cbus[c];
        double total, unbal = 0, three = 0, all = 0;
        direct_shares(f, ph, &pd, &w, k, ref);
        /* the library both ways: matrices read from the network, and given */
        ck_assert_int_eq(kl_contrib_shares(f, ph, p, k, got, &total, &err), KL_OK);
        double total2;
        ck_assert_int_eq(kl_contrib_shares(f, ph, &pd, k, tap, &total2, &err), KL_OK);
        for (int L = 0; L < f->nloads; L++)
            ck_assert(isnan(tap[L]) == isnan(got[L]) && (isnan(got[L]) || close_to(tap[L], got[L])));
        ck_assert(close_to(total2, total));
        for (int L = 0; L < f->nloads; L++) {
            ck_assert_msg(isnan(ref[L]) == isnan(got[L]) && (isnan(ref[L]) || close_to(got[L], ref[L])),
                          "%s, bus %s, load %s: share %.12g, direct method %.12g", what,
                          f->buses[k].name, f->loads[L].name, got[L], ref[L]);
            if (isnan(ref[L]))
                continue;
            all += ref[L];
            if (f->loads[L].phases == KL_PH_ABC)
                three += ref[L];
            else
                unbal += ref[L];
        }
        ck_assert(close_to(total, all));
        ck_assert_msg(close_to(s->c_unbal_total[c], unbal) && close_to(s->c_three_phase[c], three)
                      && close_to(s->c_remainder[c], 1.0 - all),
                      "%s, bus %s: sums %.12g %.12g %.12g, direct %.12g %.12g %.12g", what,
                      f->buses[k].name, s->c_unbal_total[c], s->c_three_phase[c],
                      s->c_remainder[c], unbal, three, 1.0 - all);
        direct_taps(f, ph, t, ref, tap, taps);
        /* the items kept: each the direct share of its load or tap, in order */
        int n = s->cstart[c + 1] - s->cstart[c], candidates = 0;
        double last = INFINITY;
        for (int j = s->cstart[c]; j < s->cstart[c + 1]; j++) {
            double want = s->ckind[j] == KL_CONTRIB_LOAD ? ref[s->cid[j]] : tap[s->cid[j]];
            ck_assert_msg(s->ckind[j] == KL_CONTRIB_LOAD || taps[s->cid[j]] >= 2,
                          "%s: tap with fewer than two loads ranked", what);
            ck_assert_msg(close_to(s->cshare[j], want), "%s, bus %s, rank %d: %.12g, direct "
                          "%.12g", what, f->buses[k].name, j - s->cstart[c], s->cshare[j], want);
            ck_assert(s->cshare[j] <= last);
            last = s->cshare[j];
        }
        /* nothing left out ranks above the last kept */
        for (int L = 0; L < f->nloads; L++)
            if (!isnan(ref[L])) {
                candidates++;
                ck_assert_msg(kept(s, c, KL_CONTRIB_LOAD, L) ||
                              ref[L] <= last + TOL * fmax(1.0, fabs(last)),
                              "%s, bus %s: load %s (%.6g) left out", what, f->buses[k].name,
                              f->loads[L].name, ref[L]);
            }
        for (int q = 0; q < f->nsections; q++)
            if (taps[q] >= 2) {
                candidates++;
                ck_assert_msg(kept(s, c, KL_CONTRIB_TAP, q) ||
                              tap[q] <= last + TOL * fmax(1.0, fabs(last)),
                              "%s, bus %s: tap %s (%.6g) left out", what, f->buses[k].name,
                              f->sections[q].name, tap[q]);
            }
        ck_assert_int_eq(n, candidates < KEEP ? candidates : KEEP);
        ranked += n;
    }
    fprintf(stderr, "%s: %d buses ranked, %d items, every share as the direct method's\n", what,
            s->ncbus, ranked);
    kl_errors_free(&err);
    kl_feeder_tree_free(own);
    free(ref);
    free(got);
    free(tap);
    free(taps);
    free(abd);
    free(w.di);
    free(w.on_m);
    free(w.kpath);
    harness_free(&h);
}

/* The demo (transformers, regulators, cables, taps of every phasing), the
 * published feeders bundled (regulators, a delta-wye bank, delta loads,
 * distributed loads) and kl_synth feeders (many taps, mixed load models). */
static const char *FILES[] = {
    "feeders/demo/quillmere-f3.yaml",
    "feeders/reference/ieee-13-node.yaml",
    "feeders/reference/ieee-37-node.yaml",
    "feeders/reference/ieee-4-node-delta-gry-unbalanced.yaml",
    "feeders/reference/ieee-4-node-gry-delta-unbalanced.yaml",
};

START_TEST(test_files)
{
    check_feeder(FILES[_i], FILES[_i]);
}
END_TEST

START_TEST(test_synthetic)
{
    char cmd[1024], path[512];
    snprintf(path, sizeof path, "%s/test_contrib_rank_synth.yaml", KILTER_BINARY_DIR);
    snprintf(cmd, sizeof cmd, "'%s/kl_synth' --buses 2000 --seed %d -o '%s'", KILTER_BINARY_DIR,
             11 + _i, path);
    ck_assert_msg(system(cmd) == 0, "kl_synth failed (is it built?): %s", cmd);
    check_feeder(path, "synthetic, 2000 buses");
    remove(path);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("contrib_rank");
    TCase *tc = tcase_create("against the direct method");
    tcase_set_timeout(tc, 300); /* the sanitizer builds are slow */
    tcase_add_loop_test(tc, test_files, 0, (int)(sizeof FILES / sizeof FILES[0]));
    tcase_add_loop_test(tc, test_synthetic, 0, 2);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
