/* Allocation of the metered feeder-head demand (kilter/allocate.h): the
 * factors against closed forms of the load-flow equations, proportionality to
 * the connected kVA, the allocation-factor method of the textbook, and the
 * measurement file's errors.  Sources beside each check. */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/allocate.h"
#include "kilter/units.h"
#include "harness.h"
#include "ref_ieee13.h"

/* A 12.47 kV feeder of one mile of line with no mutual coupling and no
 * shunt (each phase a plain series impedance z), the source held balanced
 * at nominal (no equivalent), and at the far bus constant-power loads: a
 * 100 kVA transformer on a, 50 kVA on b, 75 kVA on c and a metered customer
 * held at 100 + j30 kVA on c. */
#define Z_OHM (0.3 + 0.6 * I) /* per phase, per mile */
static const char *const ONE_LINE =
    "kilter-feeder: 1\n"
    "name: one line\n"
    "units: us\n"
    "source: {bus: s, nominal_voltage: 12.47 kV}\n"
    "constructions:\n"
    "  - name: plain\n"
    "    phases: abc\n"
    "    impedance: {aa: 0.3 + j0.6 ohm/mi, bb: 0.3 + j0.6 ohm/mi, cc: 0.3 + j0.6 ohm/mi}\n"
    "sections:\n"
    "  - {name: l1, from: s, to: m, length: 1 mi, construction: plain}\n"
    "loads:\n"
    "  - {name: ta, bus: m, connected_kva: {a: 100 kVA}}\n"
    "  - {name: tb, bus: m, connected_kva: {b: 50 kVA}}\n"
    "  - {name: tc, bus: m, connected_kva: {c: 75 kVA}}\n"
    "  - {name: big, bus: m, power: {c: 100 + j30 kVA}, connected_kva: {c: 500 kVA}, fixed_power: true}\n";

static void chain(harness *h, const char *text)
{
    harness_init(h);
    HARNESS_OK(h, harness_load_text(h, text, "alloc.yaml"));
    HARNESS_OK(h, harness_derive(h, KL_CARSON_FULL));
    HARNESS_OK(h, harness_build(h));
    HARNESS_OK(h, harness_result(h));
}

static kl_status head(const char *csv, kl_head_series *s, kl_errors *e)
{
    return kl_head_read_buffer(csv, strlen(csv), "head.csv", s, e);
}

/* Closed form of one series impedance per phase (circuit theory, common
 * practice): with the source voltage V held, the head power S fixes the
 * current, I = conj(S / V), and the power reaching the loads is
 * S - z |I|^2.  So the exact factor is (S - z |S|^2 / |V|^2 - S_held) / kVA. */
START_TEST(test_factor_closed_form)
{
    harness h;
    kl_head_series hs;
    chain(&h, ONE_LINE);
    ck_assert_int_eq(head("phase,kw,kvar\na,80,30\nb,40,12\nc,160,50\n", &hs, &h.err), KL_OK);
    double *basis = calloc(3 * (size_t)h.f->nloads, sizeof *basis);
    ck_assert_int_eq(kl_alloc_basis_kva(h.f, basis), 3); /* the held customer has none */
    kl_alloc_options o;
    kl_alloc_options_default(&o);
    o.tol = 1e-9;
    kl_alloc_result r;
    HARNESS_OK(&h, kl_alloc_solve(h.f, h.net, basis, &hs.r[0], &o, h.res, &r, &h.err));
    const double v = 12470 / sqrt(3.0), kva[3] = {100e3, 50e3, 75e3};
    const kl_complex s[3] = {80e3 + 30e3 * I, 40e3 + 12e3 * I, 160e3 + 50e3 * I};
    const kl_complex held[3] = {0, 0, 100e3 + 30e3 * I};
    for (int p = 0; p < 3; p++) {
        double i2 = creal(s[p] * conj(s[p])) / (v * v);
        kl_complex exact = (s[p] - Z_OHM * i2 - held[p]) / kva[p];
        ck_assert_msg(cabs(r.factor[p] - exact) < 1e-7 * cabs(exact), "phase %d: factor %g%+gj, closed form %g%+gj",
                      p, creal(r.factor[p]), cimag(r.factor[p]), creal(exact), cimag(exact));
        /* the head of the last load flow is the measurement */
        ck_assert(cabs(h.res->s_head[p] - s[p]) < 1e-8 * cabs(s[p]));
        ck_assert(r.mismatch[p] <= 1e-9);
    }
    ck_assert_int_eq(r.converged, 1);
    /* the held customer keeps its power; the allocated load is basis x factor */
    ck_assert(cabs(h.f->loads[3].s_va[2] - (100e3 + 30e3 * I)) < 1e-9);
    ck_assert(cabs(h.f->loads[0].s_va[0] - 100e3 * r.factor[0]) < 1e-6);
    ck_assert(cabs(r.held[2] - held[2]) < 1e-6 * cabs(held[2]));
    free(basis);
    kl_head_series_free(&hs);
    harness_free(&h);
}
END_TEST

/* The three measurement forms ask for the same head power: kW and pf
 * (Q = P tan(acos pf)) and amperes and pf (|S| = |V| |I|), power triangle,
 * common practice; a leading power factor gives negative vars. */
START_TEST(test_forms)
{
    harness h;
    kl_head_series a, b, c;
    chain(&h, ONE_LINE);
    const double v = 12470 / sqrt(3.0);
    double pf = 0.9, p = 90e3, q = p * tan(acos(pf)), amps = p / pf / v;
    char t1[200], t2[200], t3[200];
    snprintf(t1, sizeof t1, "phase,kw,kvar\na,%.12g,%.12g\nb,%.12g,%.12g\nc,%.12g,%.12g\n", p / 1e3, q / 1e3,
             p / 1e3, q / 1e3, 2 * p / 1e3, -2 * q / 1e3);
    snprintf(t2, sizeof t2, "Phase , KW, PF\na,90,0.9\nb,90,0.9\nc,180,-0.9\n");
    snprintf(t3, sizeof t3, "phase,amps,pf\na,%.12g,0.9\nb,%.12g,0.9\nc,%.12g,-0.9\n", amps, amps, 2 * amps);
    ck_assert_int_eq(head(t1, &a, &h.err), KL_OK);
    ck_assert_int_eq(head(t2, &b, &h.err), KL_OK);
    ck_assert_int_eq(head(t3, &c, &h.err), KL_OK);
    ck_assert_int_eq(b.r[0].form, KL_HEAD_KW_PF);
    ck_assert_int_eq(c.r[0].form, KL_HEAD_AMPS_PF);
    kl_complex sa[3], sb[3], sc[3];
    double vabs[3] = {v, v, v};
    kl_head_target(&a.r[0], vabs, sa);
    kl_head_target(&b.r[0], vabs, sb);
    kl_head_target(&c.r[0], vabs, sc);
    for (int k = 0; k < 3; k++) {
        ck_assert(cabs(sa[k] - sb[k]) < 1e-6 * cabs(sa[k]));
        ck_assert(cabs(sa[k] - sc[k]) < 1e-6 * cabs(sa[k]));
    }
    ck_assert(cimag(sb[2]) < 0);
    kl_head_series_free(&a);
    kl_head_series_free(&b);
    kl_head_series_free(&c);
    harness_free(&h);
}
END_TEST

/* Allocation by connected kVA gives each transformer on a phase the same kW
 * per kVA (Kersting, "Distribution System Modeling and Analysis", sec. 2.3,
 * metered feeder maximum demand, from memory: each transformer's demand is
 * the allocation factor times its kVA).  Through a closed switch (no losses)
 * the factor is the textbook's own: the metered kW over the phase's kVA.  A
 * line-to-line entry takes the mean of its two phases' factors. */
START_TEST(test_proportional_to_kva)
{
    static const char *const TEXT =
        "kilter-feeder: 1\n"
        "name: switch\n"
        "source: {bus: s, nominal_voltage: 12.47 kV}\n"
        "sections:\n"
        "  - {name: k, from: s, to: m, switch: closed}\n"
        "loads:\n"
        "  - {name: t1, bus: m, connected_kva: {a: 25 kVA, b: 50 kVA, c: 37.5 kVA}}\n"
        "  - {name: t2, bus: m, connected_kva: {a: 50 kVA}}\n"
        "  - {name: t3, bus: m, connected_kva: {a: 75 kVA, c: 100 kVA}}\n"
        "  - {name: t4, bus: m, connection: delta, connected_kva: {bc: 30 kVA}}\n";
    harness h;
    kl_head_series hs;
    chain(&h, TEXT);
    ck_assert_int_eq(head("phase,kw,kvar\na,120,40\nb,45,20\nc,90,30\n", &hs, &h.err), KL_OK);
    double basis[12];
    kl_alloc_basis_kva(h.f, basis);
    kl_alloc_options o;
    kl_alloc_options_default(&o);
    o.tol = 1e-10;
    kl_alloc_result r;
    HARNESS_OK(&h, kl_alloc_solve(h.f, h.net, basis, &hs.r[0], &o, h.res, &r, &h.err));
    /* phase a: no line-to-line load, so AF = 120 kW / (25 + 50 + 75) kVA exactly */
    ck_assert(fabs(creal(r.factor[0]) - 120.0 / 150.0) < 1e-9);
    ck_assert(fabs(cimag(r.factor[0]) - 40.0 / 150.0) < 1e-9);
    const kl_load *L = h.f->loads;
    ck_assert(cabs(L[0].s_va[0] / 25e3 - L[1].s_va[0] / 50e3) < 1e-9);
    ck_assert(cabs(L[1].s_va[0] / 50e3 - L[2].s_va[0] / 75e3) < 1e-9);
    ck_assert(cabs(L[0].s_va[2] / 37.5e3 - L[2].s_va[2] / 100e3) < 1e-9);
    /* b and c with the delta entry, whose line currents are +I in b and -I in
     * c: phase b carries V_b / (V_b - V_c) of its power, c -V_c / (V_b - V_c)
     * (circuit theory, common practice), at the balanced voltages behind a
     * switch.  S_b = 50 F_b + 30 (F_b + F_c) / 2 x that, in kVA. */
    kl_complex Fb = r.factor[1], Fc = r.factor[2];
    kl_complex vb = cexp(-I * 2 * KL_PI / 3), vc = cexp(I * 2 * KL_PI / 3);
    kl_complex sd = 30e3 * (Fb + Fc) / 2.0;
    ck_assert(cabs(50e3 * Fb + sd * vb / (vb - vc) - (45e3 + 20e3 * I)) < 1e-3);
    ck_assert(cabs(137.5e3 * Fc + sd * -vc / (vb - vc) - (90e3 + 30e3 * I)) < 1e-3);
    ck_assert(cabs(L[3].s_va[1] - 30e3 * (Fb + Fc) / 2.0) < 1e-6);
    kl_head_series_free(&hs);
    harness_free(&h);
}
END_TEST

/* The IEEE 13-node test feeder with its published input per phase as the
 * head measurement (IEEE PES Distribution Test Feeders, 13-node results,
 * tests/ref_ieee13.c) and each load's own kVA as its basis: the solved head
 * meets the measurement on every phase within the default 0.1 %, and the
 * allocated loads add up per phase to the published loads within 3 % (the
 * allocation gives every load of a phase one power factor, so the vars move
 * between loads of other power factors and their losses change a little). */
/* kW of the loads at nominal voltage per phase, a delta entry half to each
 * of its phases. */
static void per_phase_kw(const kl_feeder *f, double kw[3])
{
    kw[0] = kw[1] = kw[2] = 0;
    for (int l = 0; l < f->nloads; l++)
        for (int k = 0; k < 3; k++) {
            double p = creal(f->loads[l].s_va[k]);
            if (f->loads[l].conn == KL_CONN_DELTA) {
                kw[k] += p / 2;
                kw[(k + 1) % 3] += p / 2;
            } else {
                kw[k] += p;
            }
        }
}

static void chain13(harness *h)
{
    harness_init(h);
    HARNESS_OK(h, harness_load(h, "feeders/reference/ieee-13-node.yaml"));
    HARNESS_OK(h, harness_derive(h, KL_CARSON_APPROX));
    HARNESS_OK(h, harness_build(h));
    HARNESS_OK(h, harness_result(h));
}

START_TEST(test_ieee13_totals)
{
    harness h;
    chain13(&h);
    kl_feeder *f = h.f;
    double *basis = calloc(3 * (size_t)f->nloads, sizeof *basis);
    double given[3], got[3];
    for (int l = 0; l < f->nloads; l++)
        for (int k = 0; k < 3; k++)
            basis[3 * l + k] = cabs(f->loads[l].s_va[k]);
    per_phase_kw(f, given);
    kl_head_reading hr;
    memset(&hr, 0, sizeof hr);
    hr.form = KL_HEAD_KW_KVAR;
    hr.phases = KL_PH_ABC;
    hr.file = "published";
    for (int p = 0; p < 3; p++) {
        hr.p_w[p] = ref_ieee13_input_kw_phase[p] * 1e3;
        hr.q_var[p] = ref_ieee13_input_kvar_phase[p] * 1e3;
    }
    kl_alloc_options o;
    kl_alloc_options_default(&o);
    kl_alloc_result r;
    HARNESS_OK(&h, kl_alloc_solve(f, h.net, basis, &hr, &o, h.res, &r, &h.err));
    for (int p = 0; p < 3; p++) {
        kl_complex meas = hr.p_w[p] + I * hr.q_var[p];
        ck_assert_msg(cabs(h.res->s_head[p] - meas) <= 1e-3 * cabs(meas), "phase %d: head %g%+gj", p,
                      creal(h.res->s_head[p]), cimag(h.res->s_head[p]));
    }
    per_phase_kw(f, got);
    for (int p = 0; p < 3; p++)
        ck_assert_msg(fabs(got[p] - given[p]) < 0.03 * given[p], "phase %d: allocated %g kW, published loads %g kW",
                      p, got[p] / 1e3, given[p] / 1e3);
    free(basis);
    harness_free(&h);
}
END_TEST

/* A series allocated step by step on one network equals each reading
 * allocated alone on a fresh one (issue 17's check): the IEEE 13-node feeder,
 * whose regulator moves its taps between the readings (110 %, 80 % and
 * 100 % of the published input, common practice for a daily swing). */
START_TEST(test_series_equals_snapshots)
{
    static const double level[3] = {1.1, 0.8, 1.0};
    kl_head_reading hr[3];
    kl_alloc_result seq[3], one;
    kl_alloc_options o;
    kl_alloc_options_default(&o);
    memset(hr, 0, sizeof hr);
    for (int k = 0; k < 3; k++) {
        hr[k].form = KL_HEAD_KW_KVAR;
        hr[k].phases = KL_PH_ABC;
        hr[k].file = "series";
        for (int p = 0; p < 3; p++) {
            hr[k].p_w[p] = level[k] * ref_ieee13_input_kw_phase[p] * 1e3;
            hr[k].q_var[p] = level[k] * ref_ieee13_input_kvar_phase[p] * 1e3;
        }
    }
    harness h;
    chain13(&h);
    double *basis = calloc(3 * (size_t)h.f->nloads, sizeof *basis);
    for (int l = 0; l < h.f->nloads; l++)
        for (int k = 0; k < 3; k++)
            basis[3 * l + k] = cabs(h.f->loads[l].s_va[k]);
    int taps[3][3];
    for (int k = 0; k < 3; k++) {
        HARNESS_OK(&h, kl_alloc_solve(h.f, h.net, basis, &hr[k], &o, h.res, &seq[k], &h.err));
        memcpy(taps[k], h.res->tap, sizeof taps[k]);
    }
    ck_assert_msg(memcmp(taps[0], taps[1], sizeof taps[0]) != 0, "the taps should move between readings");
    harness_free(&h);
    for (int k = 0; k < 3; k++) {
        chain13(&h);
        HARNESS_OK(&h, kl_alloc_solve(h.f, h.net, basis, &hr[k], &o, h.res, &one, &h.err));
        ck_assert_int_eq(one.iterations, seq[k].iterations);
        for (int p = 0; p < 3; p++)
            ck_assert_msg(one.factor[p] == seq[k].factor[p], "reading %d phase %d: %.17g alone, %.17g in the series",
                          k, p, creal(one.factor[p]), creal(seq[k].factor[p]));
        harness_free(&h);
    }
    free(basis);
}
END_TEST

/* What cannot be allocated says why, naming the phase and the file. */
START_TEST(test_refusals)
{
    harness h;
    kl_head_series hs;
    double basis[12];
    kl_alloc_options o;
    kl_alloc_result r;
    kl_alloc_options_default(&o);
    chain(&h, ONE_LINE);
    kl_alloc_basis_kva(h.f, basis);
    /* phase c not measured while its loads have kVA */
    ck_assert_int_eq(head("phase,kw,kvar\na,80,30\nb,40,12\n", &hs, &h.err), KL_OK);
    ck_assert_int_eq(kl_alloc_solve(h.f, h.net, basis, &hs.r[0], &o, h.res, &r, &h.err), KL_EINPUT);
    ck_assert_ptr_nonnull(strstr(h.err.items[h.err.count - 1].message, "no phase c"));
    kl_head_series_free(&hs);
    /* the held 100 kW on c is more than the measured 90 kW */
    kl_errors_clear(&h.err);
    ck_assert_int_eq(head("phase,kw,kvar\na,80,30\nb,40,12\nc,90,30\n", &hs, &h.err), KL_OK);
    ck_assert_int_eq(kl_alloc_solve(h.f, h.net, basis, &hs.r[0], &o, h.res, &r, &h.err), KL_EINPUT);
    ck_assert_str_eq(h.err.items[0].file, "head.csv");
    ck_assert_int_eq(h.err.items[0].line, 4);
    ck_assert_ptr_nonnull(strstr(h.err.items[0].message, "phase c: the loads held"));
    kl_head_series_free(&hs);
    /* far more than the feeder carries: the load flow's failure, said */
    kl_errors_clear(&h.err);
    ck_assert_int_eq(head("phase,kw,kvar\na,80000,30000\nb,40,12\nc,160,50\n", &hs, &h.err), KL_OK);
    kl_status st = kl_alloc_solve(h.f, h.net, basis, &hs.r[0], &o, h.res, &r, &h.err);
    ck_assert_int_eq(st, KL_ENOCONV);
    ck_assert_ptr_nonnull(strstr(h.err.items[h.err.count - 1].message, "allocation stopped"));
    kl_head_series_free(&hs);
    harness_free(&h);
}
END_TEST

/* The measurement file's mistakes, each at its line and column. */
static void bad_head(const char *csv, int line, int col, const char *what)
{
    kl_errors e;
    kl_head_series s;
    kl_errors_init(&e);
    ck_assert_int_eq(head(csv, &s, &e), KL_EINPUT);
    ck_assert_ptr_null(s.r);
    ck_assert_msg(e.count >= 1, "no message for %s", csv);
    ck_assert_msg(e.items[0].line == line && e.items[0].col == col && strstr(e.items[0].message, what),
                  "%s: got %d:%d %s", csv, e.items[0].line, e.items[0].col, e.items[0].message);
    kl_errors_free(&e);
}

START_TEST(test_head_errors)
{
    bad_head("phase,kw,kvar\na,1,2\na,3,4\n", 3, 1, "phase a is given twice (first on line 2)");
    bad_head("phase,kw,kvars\na,1,2\n", 1, 10, "unknown column 'kvars'");
    bad_head("phase,kw,kvar\na,1,x\n", 2, 5, "'x' is not a number");
    bad_head("phase,kw,kvar\nd,1,2\n", 2, 1, "unknown phase 'd'");
    bad_head("phase,kw,kvar\na,-5,2\n", 2, 3, "kw must be above 0");
    bad_head("phase,kw,pf\na,5,1.2\n", 2, 5, "a power factor is between -1 and 1");
    bad_head("phase,kw\na,5\n", 1, 1, "give kw and kvar, kw and pf, or amps and pf");
    bad_head("phase,kw,kvar\n", 2, 1, "no measurement after the header");
    bad_head("time,kw_a,kvar_a\n08:00,1,2\n08:15,1,2\n08:00,3,4\n", 4, 1, "time 08:00 is given twice");
    bad_head("phase,kw,kvar\na,\"1,2\n", 2, 3, "not closed");
    bad_head("phase,kw,kvar\na,1\n", 2, 3, "the row ends before its column 'kvar'");
}
END_TEST

/* A series: one reading per time step, phases by column. */
START_TEST(test_head_series)
{
    kl_errors e;
    kl_head_series s;
    kl_errors_init(&e);
    ck_assert_int_eq(head("# feeder 3 head, 15-minute demand\ntime,kw_a,pf_a,kw_c,pf_c\r\n"
                          "2026-07-01 17:00,100,0.95,120,0.9\r\n2026-07-01 17:15,110,0.95,125,-0.9\r\n",
                          &s, &e),
                     KL_OK);
    ck_assert_int_eq(s.n, 2);
    ck_assert_int_eq(s.series, 1);
    ck_assert_int_eq(s.r[1].phases, KL_PH_A | KL_PH_C);
    ck_assert_str_eq(s.r[1].time, "2026-07-01 17:15");
    ck_assert(s.r[1].p_w[2] == 125e3 && s.r[1].pf[2] == -0.9);
    ck_assert_int_eq(s.r[1].loc[0].line, 4);
    kl_head_series_free(&s);
    kl_errors_free(&e);
}
END_TEST

/* The loader's keys: connected_kva alone, with power, and their mistakes. */
START_TEST(test_loader_keys)
{
    harness h;
    harness_init(&h);
    const char *bad =
        "kilter-feeder: 1\nname: x\nsource: {bus: s, nominal_voltage: 12.47 kV}\n"
        "sections:\n  - {name: k, from: s, to: m, switch: closed}\n"
        "loads:\n"
        "  - {name: l1, bus: m, power: {a: 10 kVA}, connected_kva: {b: 25 kVA}}\n"
        "  - {name: l2, bus: m}\n"
        "  - {name: l3, bus: m, connected_kva: {a: 25 kVA}, fixed_power: true}\n";
    ck_assert_int_eq(harness_load_text(&h, bad, "bad.yaml"), KL_EINPUT);
    ck_assert_int_eq(h.err.count, 3);
    ck_assert_int_eq(h.err.items[0].line, 7);
    ck_assert_ptr_nonnull(strstr(h.err.items[0].message, "'connected_kva' names the phases b, 'power' the phases a"));
    ck_assert_int_eq(h.err.items[1].line, 8);
    ck_assert_ptr_nonnull(strstr(h.err.items[1].message, "a load needs 'power'"));
    ck_assert_int_eq(h.err.items[2].line, 9);
    ck_assert_ptr_nonnull(strstr(h.err.items[2].message, "give its 'power' too"));
    harness_free(&h);
}
END_TEST

/* Allocation by energy through a closed switch (no losses), so the factor is
 * the measured kW over the sum of the estimated peaks.  Each load's basis by
 * hand: the linear relation kW = 0.2 + 0.008 kWh for monthly residential
 * energy (Kersting, "Distribution System Modeling and Analysis", sec. 2.3,
 * transformer load management, from memory; its example's customer data not
 * recalled, the figures here are the relation's), a load factor's peak
 * kWh / (hours x LF) (load factor = average / peak demand, common practice),
 * and the group's peak = the sum of the peaks / the diversity factor
 * (diversity factor = sum of individual peaks / group peak, common practice). */
static const char *const SWITCH_FEEDER =
    "kilter-feeder: 1\n"
    "name: switch\n"
    "source: {bus: s, nominal_voltage: 12.47 kV}\n"
    "sections:\n"
    "  - {name: k, from: s, to: m, switch: closed}\n"
    "loads:\n"
    "  - {name: t1, bus: m, connected_kva: {a: 25 kVA}}\n"
    "  - {name: t2, bus: m, connected_kva: {a: 50 kVA, b: 50 kVA}}\n"
    "  - {name: t3, bus: m, connected_kva: {b: 25 kVA}}\n"
    "  - {name: shop, bus: m, power: {b: 30 + j10 kVA}, fixed_power: true}\n";
static const char CLASSES[] = "class,intercept_kw,kw_per_kwh,load_factor,hours\n"
                              "residential,0.2,0.008,,\ncommercial,,,0.5,720\n";
static const char DIVERSITY[] = "customers,diversity_factor\n2,1.6\n4,2.1\n";
static const char ENERGY[] = "customer,load,kwh,period,class\n"
                             "r1,t1,1000,2026-07,residential\n"
                             "r2,t1,500,2026-07,residential\n"
                             "c1,t2,3600,2026-07,commercial\n"
                             "r3,t3,800,2026-07,residential\n"
                             "r4,t3,900,2026-07,residential\n"
                             "r5,t3,1100,2026-07,residential\n"
                             "r1,t1,950,2026-06,residential\n";

START_TEST(test_energy_basis)
{
    harness h;
    kl_class_table ct;
    kl_diversity_table dt;
    kl_energy_table et;
    kl_head_series hs;
    chain(&h, SWITCH_FEEDER);
    ck_assert_int_eq(kl_class_read_buffer(CLASSES, strlen(CLASSES), "classes.csv", &ct, &h.err), KL_OK);
    ck_assert_int_eq(kl_diversity_read_buffer(DIVERSITY, strlen(DIVERSITY), "div.csv", &dt, &h.err), KL_OK);
    ck_assert_int_eq(kl_energy_read_buffer(ENERGY, strlen(ENERGY), "energy.csv", h.f, &ct, "2026-07", &et, &h.err),
                     KL_OK);
    ck_assert_int_eq(et.n, 6);
    double basis[12];
    int n;
    HARNESS_OK(&h, kl_alloc_basis_energy(h.f, &et, &ct, &dt, basis, &n, &h.err));
    ck_assert_int_eq(n, 4);
    /* t1: (0.2 + 8) + (0.2 + 4) = 12.4 kW over DF(2) = 1.6 */
    double t1 = 12.4 / 1.6;
    /* t2: one customer, 3600 / (720 x 0.5) = 10 kW, shared by a and b */
    double t2 = 10.0 / 2;
    /* t3: 6.6 + 7.4 + 9.0 = 23 kW over DF(3), between 1.6 (2) and 2.1 (4) */
    double t3 = 23.0 / 1.85;
    ck_assert(fabs(basis[0] - 1e3 * t1) < 1e-6);
    ck_assert(fabs(basis[3] - 1e3 * t2) < 1e-6 && fabs(basis[4] - 1e3 * t2) < 1e-6);
    ck_assert(fabs(basis[7] - 1e3 * t3) < 1e-6);
    ck_assert(basis[9] == 0 && basis[10] == 0);
    ck_assert(fabs(kl_diversity_factor(&dt, 1) - 1.0) < 1e-12 && fabs(kl_diversity_factor(&dt, 9) - 2.1) < 1e-12);
    /* the factor: measured kW (less the held shop on b) over the phase's basis */
    ck_assert_int_eq(head("phase,kw,kvar\na,40,12\nb,90,25\n", &hs, &h.err), KL_OK);
    kl_alloc_options o;
    kl_alloc_options_default(&o);
    o.tol = 1e-10;
    kl_alloc_result r;
    HARNESS_OK(&h, kl_alloc_solve(h.f, h.net, basis, &hs.r[0], &o, h.res, &r, &h.err));
    ck_assert(fabs(creal(r.factor[0]) - 40 / (t1 + t2)) < 1e-8);
    ck_assert(fabs(creal(r.factor[1]) - (90 - 30) / (t2 + t3)) < 1e-8);
    ck_assert(fabs(creal(h.f->loads[2].s_va[1]) - 1e3 * t3 * 60 / (t2 + t3)) < 1e-3);
    kl_head_series_free(&hs);
    kl_energy_table_free(&et);
    kl_diversity_table_free(&dt);
    kl_class_table_free(&ct);
    harness_free(&h);
}
END_TEST

/* The energy file's mapping errors, each at its line and column. */
static void bad_energy(harness *h, const kl_class_table *ct, const char *csv, const char *period, int line, int col,
                       const char *what)
{
    kl_energy_table et;
    kl_errors_clear(&h->err);
    ck_assert_int_eq(kl_energy_read_buffer(csv, strlen(csv), "e.csv", h->f, ct, period, &et, &h->err), KL_EINPUT);
    ck_assert_ptr_null(et.r);
    ck_assert_msg(h->err.count >= 1 && h->err.items[0].line == line && h->err.items[0].col == col &&
                      strstr(h->err.items[0].message, what),
                  "%s: got %d:%d %s", csv, h->err.count ? h->err.items[0].line : -1,
                  h->err.count ? h->err.items[0].col : -1, h->err.count ? h->err.items[0].message : "");
}

START_TEST(test_energy_errors)
{
    harness h;
    kl_class_table ct;
    chain(&h, SWITCH_FEEDER);
    ck_assert_int_eq(kl_class_read_buffer(CLASSES, strlen(CLASSES), "classes.csv", &ct, &h.err), KL_OK);
    const char *hd = "customer,load,kwh,period,class\n";
    char b[400];
    snprintf(b, sizeof b, "%sr1,t9,10,2026-07,residential\n", hd);
    bad_energy(&h, &ct, b, NULL, 2, 4, "load 't9' is not in the feeder");
    snprintf(b, sizeof b, "%sr1,t1,-10,2026-07,residential\n", hd);
    bad_energy(&h, &ct, b, NULL, 2, 7, "is negative");
    snprintf(b, sizeof b, "%sr1,t1,10,2026-07,farm\n", hd);
    bad_energy(&h, &ct, b, NULL, 2, 18, "class 'farm' is not in the class table");
    snprintf(b, sizeof b, "%sr1,shop,10,2026-07,residential\n", hd);
    bad_energy(&h, &ct, b, NULL, 2, 4, "fixed_power: true");
    snprintf(b, sizeof b, "%sr1,t1,10,2026-07,residential\nr2,t1,10,2026-07,residential\nr1,t3,10,2026-07,residential\n", hd);
    bad_energy(&h, &ct, b, NULL, 4, 1, "customer 'r1' is given twice in period 2026-07 (first on line 2)");
    snprintf(b, sizeof b, "%sr1,t1,10,2026-07,residential\nr1,t1,10,2026-06,residential\n", hd);
    bad_energy(&h, &ct, b, NULL, 3, 1, "more than one billing period");
    snprintf(b, sizeof b, "%sr1,t1,ten,2026-07,residential\n", hd);
    bad_energy(&h, &ct, b, NULL, 2, 7, "'ten' is not a number");
    bad_energy(&h, &ct, "customer,load,kwh\nr1,t1,10\n", NULL, 1, 1, "the header needs the column 'period'");
    bad_energy(&h, &ct, "customer,load,kwh,period\nr1,t1,10,2026-07\n", NULL, 1, 1, "has 2 classes");
    /* the class and diversity tables */
    kl_class_table c2;
    kl_diversity_table d2;
    const char *bc = "class,intercept_kw,kw_per_kwh,load_factor\nres,0.2,0.008,0.4\n";
    kl_errors_clear(&h.err);
    ck_assert_int_eq(kl_class_read_buffer(bc, strlen(bc), "c.csv", &c2, &h.err), KL_EINPUT);
    ck_assert_ptr_nonnull(strstr(h.err.items[0].message, "not both"));
    bc = "class,load_factor\nres,1.4\n";
    kl_errors_clear(&h.err);
    ck_assert_int_eq(kl_class_read_buffer(bc, strlen(bc), "c.csv", &c2, &h.err), KL_EINPUT);
    ck_assert_int_eq(h.err.items[0].line, 2);
    bc = "customers,diversity_factor\n2,1.6\n3,1.4\n";
    kl_errors_clear(&h.err);
    ck_assert_int_eq(kl_diversity_read_buffer(bc, strlen(bc), "d.csv", &d2, &h.err), KL_EINPUT);
    ck_assert_int_eq(h.err.items[0].line, 3);
    ck_assert_ptr_nonnull(strstr(h.err.items[0].message, "does not fall"));
    /* a load with no power and no customer cannot be held at nothing */
    kl_energy_table et;
    double basis[12];
    int n;
    const char *one = "customer,load,kwh,period,class\nr1,t1,10,2026-07,residential\n";
    kl_errors_clear(&h.err);
    ck_assert_int_eq(kl_energy_read_buffer(one, strlen(one), "e.csv", h.f, &ct, NULL, &et, &h.err), KL_OK);
    ck_assert_int_eq(kl_alloc_basis_energy(h.f, &et, &ct, NULL, basis, &n, &h.err), KL_EINPUT);
    ck_assert_int_eq(h.err.count, 2); /* t2 and t3 */
    ck_assert_int_eq(h.err.items[0].line, 8);
    ck_assert_ptr_nonnull(strstr(h.err.items[0].message, "load t2 has no power of its own and no customer"));
    kl_energy_table_free(&et);
    kl_class_table_free(&ct);
    harness_free(&h);
}
END_TEST

static Suite *suite(void)
{
    Suite *s = suite_create("allocate");
    TCase *t = tcase_create("allocate");
    tcase_set_timeout(t, 60);
    tcase_add_test(t, test_factor_closed_form);
    tcase_add_test(t, test_forms);
    tcase_add_test(t, test_proportional_to_kva);
    tcase_add_test(t, test_refusals);
    tcase_add_test(t, test_ieee13_totals);
    tcase_add_test(t, test_series_equals_snapshots);
    tcase_add_test(t, test_head_errors);
    tcase_add_test(t, test_head_series);
    tcase_add_test(t, test_loader_keys);
    tcase_add_test(t, test_energy_basis);
    tcase_add_test(t, test_energy_errors);
    suite_add_tcase(s, t);
    return s;
}

int main(void)
{
    SRunner *sr = srunner_create(suite());
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? 1 : 0;
}
