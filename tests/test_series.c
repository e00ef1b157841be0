/* Tests of the series of load flows and its statistics (kilter/series.h):
 *   - ISO 8601 time stamps against the C library's timegm (POSIX);
 *   - a constant shape gives the snapshot load flow at every step, a shape
 *     held at s the `load_scale = s` load flow (IEEE 13-node test feeder,
 *     feeders/reference/, with its automatic regulator);
 *   - the IEC 61000-4-30 (5.7.2) 10-minute aggregation, the square root of the
 *     mean of the squares, on signals whose value is known in closed form;
 *   - the EN 50160 (4.2.5) weekly 95 % statistic by nearest rank on series
 *     whose answer is known in closed form;
 *   - the running statistics equal those of the full record (demo feeder);
 *   - a step that does not converge is listed and the series goes on;
 *   - bad shapes and assignment files get located messages. */
#define _GNU_SOURCE /* timegm */
#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include "harness.h"
#include "kilter/sequence.h"
#include "kilter/series.h"

#define IEEE13 "feeders/reference/ieee-13-node.yaml"
#define DEMO "feeders/demo/quillmere-f3.yaml"

/* ---- time stamps */

static kl_time c_timegm(int y, int mo, int d, int h, int mi, int s)
{
    struct tm tm = {0};
    tm.tm_year = y - 1900;
    tm.tm_mon = mo - 1;
    tm.tm_mday = d;
    tm.tm_hour = h;
    tm.tm_min = mi;
    tm.tm_sec = s;
    return (kl_time)timegm(&tm);
}

START_TEST(time_stamps_parse_as_the_c_library)
{
    kl_time t;
    int off;
    const char *why;
    ck_assert_int_eq(kl_time_parse("2026-07-06T14:10+10:00", &t, &off, &why), 0);
    ck_assert_int_eq(off, 36000);
    ck_assert(t == c_timegm(2026, 7, 6, 4, 10, 0));
    ck_assert_int_eq(kl_time_parse("2024-02-29T23:59:30-05:30", &t, &off, &why), 0);
    ck_assert(t == c_timegm(2024, 3, 1, 5, 29, 30));
    ck_assert_int_eq(kl_time_parse("1999-12-31 23:00Z", &t, &off, &why), 0);
    ck_assert(t == c_timegm(1999, 12, 31, 23, 0, 0));
    /* refused: no offset, 29 February of a common year, hour 24, trailing text */
    ck_assert_int_eq(kl_time_parse("2026-07-06T14:10", &t, &off, &why), -1);
    ck_assert_ptr_nonnull(strstr(why, "no UTC offset"));
    ck_assert_int_eq(kl_time_parse("2025-02-29T00:00Z", &t, &off, &why), -1);
    ck_assert_int_eq(kl_time_parse("2026-07-06T24:00Z", &t, &off, &why), -1);
    ck_assert_int_eq(kl_time_parse("2026-07-06T14:10+10:00x", &t, &off, &why), -1);
    char buf[32];
    kl_time_format(c_timegm(2026, 7, 6, 4, 10, 0), 36000, buf);
    ck_assert_str_eq(buf, "2026-07-06T14:10+10:00");
    kl_time_format(c_timegm(2026, 1, 1, 2, 0, 5), -18000, buf);
    ck_assert_str_eq(buf, "2025-12-31T21:00:05-05:00");
}
END_TEST

/* A feeder loaded, derived and built, its flow result allocated. */
static void built(harness *h, const char *path)
{
    HARNESS_OK(h, harness_load(h, path));
    HARNESS_OK(h, harness_derive(h, KL_CARSON_FULL));
    HARNESS_OK(h, harness_build(h));
    HARNESS_OK(h, harness_result(h));
}

/* ---- shapes written here: nsteps rows from start at interval_s */

static char *shapes_text(const char *header, int nsteps, int interval_s,
                         double (*val)(int i, int k), int ncols)
{
    size_t cap = (size_t)nsteps * 80 + 256, n = 0;
    char *s = malloc(cap);
    n += (size_t)snprintf(s + n, cap - n, "%s\n", header);
    kl_time t0 = c_timegm(2026, 7, 5, 14, 0, 0); /* 2026-07-06T00:00+10:00 */
    for (int i = 0; i < nsteps; i++) {
        char ts[32];
        kl_time_format(t0 + (kl_time)i * interval_s, 36000, ts);
        n += (size_t)snprintf(s + n, cap - n, "%s", ts);
        for (int k = 0; k < ncols; k++)
            n += (size_t)snprintf(s + n, cap - n, ",%.17g", val(i, k));
        n += (size_t)snprintf(s + n, cap - n, "\n");
    }
    return s;
}

static double one(int i, int k)
{
    (void)i;
    (void)k;
    return 1.0;
}

static double point_seven(int i, int k)
{
    (void)i;
    (void)k;
    return 0.7;
}

typedef struct {
    int nsteps, solved;
    kl_complex *v;      /* [nsteps * 3 * nbuses] */
    int nbuses;
    int *tap;           /* [nsteps * 3 * nreg] */
    int nreg;
} record;

static void keep_step(void *ctx, int step, kl_time t, const kl_flow_result *res, int solved)
{
    record *r = ctx;
    (void)t;
    r->nsteps = step + 1;
    r->solved += solved;
    memcpy(r->v + (size_t)step * 3 * (size_t)r->nbuses, res->v, sizeof(kl_complex) * 3 * (size_t)r->nbuses);
    memcpy(r->tap + (size_t)step * 3 * (size_t)r->nreg, res->tap, sizeof(int) * 3 * (size_t)r->nreg);
}

/* The series of `text` on `path` (every load on column 0) against one
 * snapshot with load_scale `scale` at every step. */
static void series_equals_snapshot(const char *path, const char *text, int nsteps, double scale)
{
    harness hs, h1;
    harness_init(&hs);
    harness_init(&h1);
    built(&hs, path);
    kl_flow_options fo;
    kl_flow_options_default(&fo);
    fo.load_scale = scale;
    HARNESS_OK(&h1, harness_load(&h1, path));
    HARNESS_OK(&h1, harness_derive(&h1, KL_CARSON_FULL));
    HARNESS_OK(&h1, harness_build(&h1));
    HARNESS_OK(&h1, harness_solve(&h1, &fo));

    kl_shapes sh;
    kl_series_plan plan;
    kl_series_stats *st = NULL;
    ck_assert_int_eq(kl_shapes_read_buffer(text, strlen(text), "shapes.csv", &sh, &hs.err), KL_OK);
    ck_assert_int_eq(kl_series_plan_init(&plan, hs.f, &sh, &hs.err), KL_OK);
    ck_assert_int_eq(kl_series_plan_default(&plan, hs.f, sh.name[0], &hs.err), KL_OK);
    int nb = hs.f->nbuses, nr = hs.f->nregulators;
    record r = {0, 0, malloc(sizeof(kl_complex) * 3 * (size_t)nb * (size_t)nsteps), nb,
                malloc(sizeof(int) * (3 * (size_t)nr + 1) * (size_t)nsteps), nr};
    kl_series_options so;
    kl_series_options_default(&so);
    so.on_step = keep_step;
    so.ctx = &r;
    HARNESS_OK(&hs, kl_series_run(hs.f, hs.net, &plan, &so, hs.res, &st, &hs.err));
    ck_assert_int_eq(r.nsteps, nsteps);
    ck_assert_int_eq(r.solved, nsteps);
    ck_assert_int_eq(st->nfailed, 0);
    for (int i = 0; i < nsteps; i++) {
        double worst = 0;
        for (int k = 0; k < 3 * nb; k++) {
            double base = h1.res->v_base_ln[k / 3];
            double d = cabs(r.v[(size_t)i * 3 * (size_t)nb + (size_t)k] - h1.res->v[k]) / base;
            if (d > worst)
                worst = d;
        }
        /* the first step starts from the same flat profile as the snapshot:
         * the same arithmetic, the same numbers; later ones start warm and
         * stop within the solver's tolerance (1e-6 pu) of it */
        double tol = i > 0 ? 1e-5 : scale == 1.0 ? 0.0 : 1e-12; /* s x P rounds once more */
        ck_assert_msg(worst <= tol, "step %d: %.3g pu from the snapshot", i, worst);
        for (int k = 0; k < 3 * nr; k++)
            ck_assert_int_eq(r.tap[(size_t)i * 3 * (size_t)nr + (size_t)k], h1.res->tap[k]);
    }
    /* the statistics of identical steps are the snapshot's figures */
    for (int b = 0; b < nb; b++) {
        if (hs.f->buses[b].phases != KL_PH_ABC)
            continue;
        kl_complex s012[3];
        kl_seq_from_phase(h1.res->v + 3 * b, s012);
        double vuf = cabs(s012[2]) / cabs(s012[1]);
        ck_assert_double_eq_tol(st->vuf_max[b], vuf, 1e-7);
        ck_assert_double_eq_tol(st->vuf10_max[b], vuf, 1e-7);
        ck_assert_double_eq_tol(st->vuf_mean[b], vuf, 1e-7);
    }
    double hours = nsteps * sh.interval_s / 3600.0;
    for (int p = 0; p < 3; p++)
        ck_assert_double_eq_tol(st->head_wh[p], creal(h1.res->s_head[p]) * hours,
                                1e-5 * fabs(creal(h1.res->s_head[p]) * hours));
    /* the taps settle at the first step (from the file's, not counted: the
     * regulator's position before the series is not known) and stay */
    for (int k = 0; k < 3 * nr; k++)
        ck_assert_int_eq(st->reg_ops[k], 0);
    for (int l = 0; l < hs.f->nloads; l++) /* the powers given back */
        for (int e = 0; e < 3; e++)
            ck_assert(hs.f->loads[l].s_va[e] == h1.f->loads[l].s_va[e]);
    free(r.v);
    free(r.tap);
    kl_series_stats_free(st);
    kl_series_plan_free(&plan);
    kl_shapes_free(&sh);
    harness_free(&hs);
    harness_free(&h1);
}

/* The hook allocation plugs into: it sets the loads' powers before each
 * solve; doubling every load there gives the load_scale 2 flow. */
static kl_status double_loads(void *ctx, int step, kl_time t, kl_feeder *f, kl_network *net,
                              kl_errors *err)
{
    (void)ctx; (void)step; (void)t; (void)net; (void)err;
    for (int l = 0; l < f->nloads; l++)
        for (int e = 0; e < 3; e++)
            f->loads[l].s_va[e] *= 2;
    return KL_OK;
}

START_TEST(before_step_hook_sets_the_loads)
{
    harness hs, h1;
    harness_init(&hs);
    harness_init(&h1);
    built(&hs, IEEE13);
    kl_flow_options fo;
    kl_flow_options_default(&fo);
    fo.load_scale = 1.2;
    HARNESS_OK(&h1, harness_load(&h1, IEEE13));
    HARNESS_OK(&h1, harness_derive(&h1, KL_CARSON_FULL));
    HARNESS_OK(&h1, harness_build(&h1));
    HARNESS_OK(&h1, harness_solve(&h1, &fo));
    char *text = shapes_text("time,x", 3, 3600, one, 1);
    kl_shapes sh;
    kl_series_plan p;
    kl_series_stats *st;
    ck_assert_int_eq(kl_shapes_read_buffer(text, strlen(text), "s.csv", &sh, &hs.err), KL_OK);
    ck_assert_int_eq(kl_series_plan_init(&p, hs.f, &sh, &hs.err), KL_OK);
    kl_series_options so;
    kl_series_options_default(&so);
    so.flow.load_scale = 0.6; /* 0.6 x 2 = 1.2 */
    so.before_step = double_loads;
    HARNESS_OK(&hs, kl_series_run(hs.f, hs.net, &p, &so, hs.res, &st, &hs.err));
    for (int k = 0; k < 3 * hs.f->nbuses; k++)
        ck_assert(cabs(hs.res->v[k] - h1.res->v[k]) <= 1e-5 * h1.res->v_base_ln[k / 3]);
    free(text);
    kl_series_stats_free(st);
    kl_series_plan_free(&p);
    kl_shapes_free(&sh);
    harness_free(&hs);
    harness_free(&h1);
}
END_TEST

START_TEST(constant_shape_is_the_snapshot)
{
    char *t = shapes_text("time,flat", 12, 3600, one, 1);
    series_equals_snapshot(IEEE13, t, 12, 1.0);
    free(t);
}
END_TEST

START_TEST(scaled_shape_is_the_load_scale)
{
    char *t = shapes_text("time,steady", 8, 900, point_seven, 1);
    series_equals_snapshot(IEEE13, t, 8, 0.7);
    free(t);
}
END_TEST

/* ---- statistics on a hand-made bus whose VUF is set exactly:
 * Va = 1 + x, Vb = a^2 + x a, Vc = a + x a^2 has V1 = 1, V2 = x, V0 = 0. */

typedef struct {
    kl_feeder f;
    kl_bus bus;
    kl_flow_result res;
    kl_complex v[3];
    double base;
    int phases;
} one_bus;

static void one_bus_init(one_bus *o)
{
    memset(o, 0, sizeof *o);
    o->bus.name = "b1";
    o->bus.phases = KL_PH_ABC;
    o->f.buses = &o->bus;
    o->f.nbuses = 1;
    o->base = 1.0;
    o->phases = KL_PH_ABC;
    o->res.nbuses = 1;
    o->res.v = o->v;
    o->res.v_base_ln = &o->base;
    o->res.phases = &o->phases;
}

static void one_bus_vuf(one_bus *o, double x)
{
    kl_complex a = cexp(I * 2 * M_PI / 3);
    o->v[0] = 1 + x;
    o->v[1] = a * a + x * a;
    o->v[2] = a + x * a * a;
}

static kl_series_stats *stats_for(one_bus *o)
{
    kl_series_options so;
    kl_series_stats *s;
    kl_series_options_default(&so);
    ck_assert_int_eq(kl_series_stats_alloc(&o->f, &so, 0, &s), KL_OK);
    return s;
}

static kl_time T0(void)
{
    return c_timegm(2026, 7, 6, 0, 0, 0);
}

/* IEC 61000-4-30 5.7.2: the 10-minute value is sqrt(mean of squares).
 * One-minute values alternating 1 % and 3 %: sqrt((1 + 9) / 2) = sqrt(5) %. */
START_TEST(ten_minute_value_is_the_rms_of_the_minutes)
{
    one_bus o;
    one_bus_init(&o);
    kl_limits lim;
    kl_limits_default(&lim);
    kl_series_stats *s = stats_for(&o);
    for (int i = 0; i < 60; i++) {
        one_bus_vuf(&o, i % 2 ? 0.03 : 0.01);
        kl_series_stats_step(s, &o.f, T0() + 60 * i, 60, &o.res, &lim, NULL);
    }
    kl_series_stats_finish(s);
    ck_assert_int_eq(s->n10[0], 6);
    ck_assert_double_eq_tol(s->vuf10_max[0], sqrt(5e-4), 1e-12);
    ck_assert_double_eq_tol(s->vuf_max[0], 0.03, 1e-12);
    ck_assert_double_eq_tol(s->vuf_mean[0], 0.02, 1e-12);
    /* 10-minute values of sqrt(5) % all over the 2 % limit; 30 min of 3 % steps */
    ck_assert_int_eq(s->n10_over[0], 6);
    ck_assert_double_eq_tol(s->vuf_over_s[0], 1800, 1e-9);
    kl_series_stats_free(s);

    /* 15-minute steps straddle the 10-minute marks: a step of 0 then one of
     * 4 %: the interval 10-20 min holds 5 min of 0 and 5 of 4 %: sqrt(8) % */
    s = stats_for(&o);
    one_bus_vuf(&o, 0.0);
    kl_series_stats_step(s, &o.f, T0(), 900, &o.res, &lim, NULL);
    one_bus_vuf(&o, 0.04);
    kl_series_stats_step(s, &o.f, T0() + 900, 900, &o.res, &lim, NULL);
    kl_series_stats_finish(s);
    ck_assert_int_eq(s->n10[0], 3);
    ck_assert_double_eq_tol(s->vuf10_max[0], 0.04, 1e-12);
    ck_assert_int_eq(s->n10_over[0], 2); /* sqrt(8) % and 4 % */
    kl_series_stats_free(s);

    /* a series starting off the mark (00:05): the clock's intervals, the
     * first one holding 5 minutes */
    s = stats_for(&o);
    for (int i = 0; i < 10; i++) {
        one_bus_vuf(&o, i < 5 ? 0.02 : 0.01);
        kl_series_stats_step(s, &o.f, T0() + 300 + 60 * i, 60, &o.res, &lim, NULL);
    }
    kl_series_stats_finish(s);
    ck_assert_int_eq(s->n10[0], 2);
    ck_assert_double_eq_tol(s->vuf10_max[0], 0.02, 1e-12);
    ck_assert(s->vuf10_max_t[0] == T0());
    kl_series_stats_free(s);
}
END_TEST

/* Nearest rank: the value at ascending rank ceil(0.95 N). */
START_TEST(nearest_rank_by_hand)
{
    double x[20];
    for (int i = 0; i < 20; i++)
        x[i] = 20 - i; /* 20 .. 1 */
    ck_assert_double_eq(kl_series_nearest_rank(x, 20, 0.95), 19); /* rank 19 */
    double y[7] = {5, 1, 4, 2, 3, 7, 6};
    ck_assert_double_eq(kl_series_nearest_rank(y, 7, 0.95), 7);  /* ceil(6.65) = 7 */
    ck_assert_double_eq(kl_series_nearest_rank(y, 7, 0.5), 4);   /* ceil(3.5) = 4 */
}
END_TEST

/* EN 50160 4.2.5: a week of 10-minute values (i + 1/2) / 1008 * 4 % (i = 0 ..
 * 1007) in a scrambled order: the 95th percentile by nearest rank is the
 * value of ascending rank ceil(0.95 * 1008) = 958, i = 957; a second week of
 * half those values is within the limit, so one week of two is over. */
START_TEST(weekly_95th_percentile_in_closed_form)
{
    one_bus o;
    one_bus_init(&o);
    kl_limits lim;
    kl_limits_default(&lim);
    kl_series_stats *s = stats_for(&o);
    for (int w = 0; w < 2; w++)
        for (int j = 0; j < 1008; j++) {
            int i = (j * 331) % 1008; /* 331 is prime to 1008: a permutation */
            one_bus_vuf(&o, (w == 0 ? 1.0 : 0.5) * (i + 0.5) / 1008.0 * 0.04);
            kl_series_stats_step(s, &o.f, T0() + 600 * (kl_time)(w * 1008 + j), 600, &o.res, &lim, NULL);
        }
    kl_series_stats_finish(s);
    ck_assert_int_eq(s->nweeks, 2);
    ck_assert_int_eq(s->last_week_partial, 0);
    ck_assert_double_eq_tol(s->vuf10_p95[0], 957.5 / 1008.0 * 0.04, 1e-12);
    ck_assert_int_eq(s->vuf10_p95_week[0], 0);
    ck_assert_int_eq(s->weeks_over[0], 1);
    /* over 2 %: i >= 504 in week 0 (504 values), none in week 1 */
    ck_assert_int_eq(s->n10_over[0], 504);
    kl_series_stats_free(s);

    /* hourly steps: each hour is six equal 10-minute values; hour h at
     * h / 168 * 4 %: rank 958 falls on hour floor(957 / 6) = 159 */
    s = stats_for(&o);
    for (int h = 0; h < 168; h++) {
        one_bus_vuf(&o, (167 - h) / 168.0 * 0.04);
        kl_series_stats_step(s, &o.f, T0() + 3600 * (kl_time)h, 3600, &o.res, &lim, NULL);
    }
    kl_series_stats_finish(s);
    ck_assert_int_eq(s->n10[0], 1008);
    ck_assert_double_eq_tol(s->vuf10_p95[0], 159 / 168.0 * 0.04, 1e-12);
    kl_series_stats_free(s);
}
END_TEST

/* ---- the running statistics against the full record (demo feeder) */

static double daily(int i, int k)
{
    double h = fmod(i * 10 / 60.0, 24.0);
    return k == 0 ? 0.4 + 0.9 * exp(-pow((h - 19) / 2.5, 2)) : 0.3 + 0.6 * (h >= 8 && h < 18);
}

typedef struct {
    int bus, sec, n;
    double *vuf, *in;   /* [n] */
    kl_time *t;
} full;

static void full_step(void *ctx, int step, kl_time t, const kl_flow_result *res, int solved)
{
    full *r = ctx;
    ck_assert(solved);
    kl_complex s012[3];
    kl_seq_from_phase(res->v + 3 * r->bus, s012);
    r->vuf[step] = cabs(s012[2]) / cabs(s012[1]);
    r->in[step] = cabs(res->i_neutral[r->sec]);
    r->t[step] = t;
    r->n = step + 1;
}

START_TEST(running_statistics_equal_the_full_record)
{
    enum { N = 9 * 144 }; /* nine days of 10-minute steps: one whole week and two days */
    harness h;
    harness_init(&h);
    built(&h, DEMO);
    char *text = shapes_text("time,home,shop", N, 600, daily, 2);
    kl_shapes sh;
    kl_series_plan plan;
    kl_series_stats *st;
    ck_assert_int_eq(kl_shapes_read_buffer(text, strlen(text), "s.csv", &sh, &h.err), KL_OK);
    ck_assert_int_eq(kl_series_plan_init(&plan, h.f, &sh, &h.err), KL_OK);
    for (int l = 0; l < h.f->nloads; l++)
        plan.load_shape[l] = l % 3 == 0; /* a third on the shop's shape */
    full r = {kl_feeder_find_bus(h.f, "m14"), kl_feeder_find_section(h.f, "m13-m14"), 0,
              malloc(sizeof(double) * N), malloc(sizeof(double) * N), malloc(sizeof(kl_time) * N)};
    ck_assert_int_ge(r.bus, 0);
    ck_assert_int_ge(r.sec, 0);
    kl_series_options so;
    kl_series_options_default(&so);
    so.on_step = full_step;
    so.ctx = &r;
    HARNESS_OK(&h, kl_series_run(h.f, h.net, &plan, &so, h.res, &st, &h.err));
    ck_assert_int_eq(r.n, N);
    /* from the record: max, mean, the weekly percentile of each week */
    double mx = 0, mean = 0, insq = 0, inmax = 0, win = 0;
    for (int i = 0; i < N; i++) {
        mx = fmax(mx, r.vuf[i]);
        mean += r.vuf[i] / N;
        insq += r.in[i] * r.in[i] / N;
        inmax = fmax(inmax, r.in[i]);
    }
    for (int i = 0; i + 6 <= N; i += 6) { /* the steps start on the hour: windows of six */
        double q = 0;
        for (int j = 0; j < 6; j++)
            q += r.in[i + j] * r.in[i + j] / 6;
        win = fmax(win, sqrt(q));
    }
    double *wk = malloc(sizeof(double) * 1008);
    memcpy(wk, r.vuf, sizeof(double) * 1008);
    double p0 = kl_series_nearest_rank(wk, 1008, 0.95);
    memcpy(wk, r.vuf + 1008, sizeof(double) * (N - 1008));
    double p1 = kl_series_nearest_rank(wk, N - 1008, 0.95);
    ck_assert_double_eq_tol(st->vuf_max[r.bus], mx, 1e-15);
    ck_assert_double_eq_tol(st->vuf_mean[r.bus], mean, 1e-12);
    ck_assert_double_eq_tol(st->vuf10_p95[r.bus], fmax(p0, p1), 1e-15);
    ck_assert_int_eq(st->vuf10_p95_week[r.bus], p1 > p0 ? 1 : 0);
    ck_assert_int_eq(st->nweeks, 2);
    ck_assert_int_eq(st->last_week_partial, 1);
    ck_assert_double_eq_tol(st->in_max[r.sec], inmax, 1e-12);
    ck_assert_double_eq_tol(st->in_rms[r.sec], sqrt(insq), 1e-9);
    ck_assert_double_eq_tol(st->in_win_max[r.sec], win, 1e-9);
    ck_assert(mx > 0.001 && inmax > 1); /* the record is not trivially zero */
    free(wk);
    free(r.vuf);
    free(r.in);
    free(r.t);
    free(text);
    kl_series_stats_free(st);
    kl_series_plan_free(&plan);
    kl_shapes_free(&sh);
    harness_free(&h);
}
END_TEST

/* ---- a step that cannot be solved is listed; the series goes on */

static double spike(int i, int k)
{
    (void)k;
    return i == 3 ? 60.0 : 1.0;
}

START_TEST(a_step_that_fails_is_listed_and_the_series_goes_on)
{
    harness h;
    harness_init(&h);
    built(&h, IEEE13);
    char *text = shapes_text("time,load", 6, 3600, spike, 1);
    kl_shapes sh;
    kl_series_plan plan;
    kl_series_stats *st;
    ck_assert_int_eq(kl_shapes_read_buffer(text, strlen(text), "s.csv", &sh, &h.err), KL_OK);
    ck_assert_int_eq(kl_series_plan_init(&plan, h.f, &sh, &h.err), KL_OK);
    ck_assert_int_eq(kl_series_plan_default(&plan, h.f, "load", &h.err), KL_OK);
    kl_series_options so;
    kl_series_options_default(&so);
    HARNESS_OK(&h, kl_series_run(h.f, h.net, &plan, &so, h.res, &st, &h.err));
    ck_assert_int_eq(st->nsteps, 6);
    ck_assert_int_eq(st->nfailed, 1);
    ck_assert_int_eq(st->nsolved, 5);
    ck_assert(st->fail_t[0] == sh.t[3]);
    ck_assert_ptr_nonnull(strstr(st->fail_why[0], "converge"));
    ck_assert_double_eq_tol(st->solved_s, 5 * 3600, 1e-9);
    free(text);
    kl_series_stats_free(st);
    kl_series_plan_free(&plan);
    kl_shapes_free(&sh);
    harness_free(&h);
}
END_TEST

/* ---- located errors */

static void expect_error(const char *text, int line, int col, const char *words)
{
    kl_shapes sh;
    kl_errors e;
    kl_errors_init(&e);
    ck_assert_int_eq(kl_shapes_read_buffer(text, strlen(text), "bad.csv", &sh, &e), KL_EINPUT);
    ck_assert_int_ge(e.count, 1);
    ck_assert_str_eq(e.items[0].file, "bad.csv");
    ck_assert_msg(e.items[0].line == line && e.items[0].col == col,
                  "at %d:%d, expected %d:%d (%s)", e.items[0].line, e.items[0].col, line, col,
                  e.items[0].message);
    ck_assert_msg(strstr(e.items[0].message, words), "'%s' lacks '%s'", e.items[0].message, words);
    ck_assert_int_eq(sh.nsteps, 0);
    kl_errors_free(&e);
}

START_TEST(bad_shapes_are_located)
{
    expect_error("", 1, 1, "empty");
    expect_error("when,a\n", 1, 1, "first column must be `time`");
    expect_error("time,a,a\n", 1, 8, "named twice");
    expect_error("time,a [MW]\n", 1, 8, "unknown unit");
    expect_error("time,a\n2026-07-06T00:00,1\n", 2, 1, "no UTC offset");
    expect_error("time,a\n2026-07-06T00:00Z,1\n2026-07-06T00:00:30Z,1\n", 3, 1, "1 minute to 1 hour");
    expect_error("time,a\n2026-07-06T00:00Z,1\n2026-07-06T00:10Z,1\n2026-07-06T00:30Z,1\n", 4, 1,
                 "a gap");
    expect_error("time,a\n2026-07-06T00:10Z,1\n2026-07-06T00:00Z,1\n", 3, 1, "not after");
    expect_error("time,a,b\n2026-07-06T00:00Z,1,x\n", 2, 21, "expected a number");
    expect_error("time,a\n2026-07-06T00:00Z,-0.5\n", 2, 19, "0 or more");
    expect_error("time,a,b\n2026-07-06T00:00Z,1\n", 2, 19, "2 fields where the header has 3");
    expect_error("time,a\n2026-07-06T00:00Z,1\n", 2, 1, "at least two rows");
    /* a time zone change inside the file is fine: the offsets place it */
    kl_shapes sh;
    kl_errors e;
    kl_errors_init(&e);
    const char *dst = "time,a [kW]\n2026-04-05T02:30+11:00,1\n2026-04-05T02:00+10:00,2\n";
    ck_assert_int_eq(kl_shapes_read_buffer(dst, strlen(dst), "dst.csv", &sh, &e), KL_OK);
    ck_assert_int_eq(sh.interval_s, 1800);
    ck_assert_double_eq(sh.value[1], 2000); /* kW held in W */
    ck_assert_int_eq(sh.absolute[0], 1);
    kl_shapes_free(&sh);
    kl_errors_free(&e);
}
END_TEST

START_TEST(bad_assignments_are_located)
{
    harness h;
    harness_init(&h);
    HARNESS_OK(&h, harness_load(&h, IEEE13));
    const char *shapes = "time,home,shop [kW]\n2026-07-06T00:00Z,1,5\n2026-07-06T01:00Z,1,5\n";
    kl_shapes sh;
    kl_series_plan p;
    ck_assert_int_eq(kl_shapes_read_buffer(shapes, strlen(shapes), "s.csv", &sh, &h.err), KL_OK);
    ck_assert_int_eq(kl_series_plan_init(&p, h.f, &sh, &h.err), KL_OK);
    const char *ld = h.f->loads[0].name;
    char text[512];
    snprintf(text, sizeof text, "load,shape\n%s,home\nnobody,home\n%s,shop\nfeeder,office\n", ld, ld);
    kl_errors e;
    kl_errors_init(&e);
    ck_assert_int_eq(kl_series_plan_read_buffer(&p, h.f, text, strlen(text), "a.csv", &e), KL_EINPUT);
    ck_assert_int_eq(e.count, 3);
    ck_assert_int_eq(e.items[0].line, 3);
    ck_assert_ptr_nonnull(strstr(e.items[0].message, "no load of that name"));
    ck_assert_int_eq(e.items[1].line, 4);
    ck_assert_ptr_nonnull(strstr(e.items[1].message, "twice (also line 2)"));
    ck_assert_int_eq(e.items[2].line, 5);
    ck_assert_int_eq(e.items[2].col, 8);
    ck_assert_int_eq(p.load_shape[0], -1); /* nothing assigned */
    kl_errors_clear(&e);
    snprintf(text, sizeof text, "load,shape\n%s,shop\nfeeder,home\n", ld);
    ck_assert_int_eq(kl_series_plan_read_buffer(&p, h.f, text, strlen(text), "a.csv", &e), KL_OK);
    ck_assert_int_eq(p.load_shape[0], 1);
    for (int l = 1; l < h.f->nloads; l++)
        ck_assert_int_eq(p.load_shape[l], 0);
    kl_errors_free(&e);
    kl_series_plan_free(&p);
    kl_shapes_free(&sh);
    harness_free(&h);
}
END_TEST

/* ---- interval meter data: a load follows the sum of its meters */

typedef struct {
    int load;
    kl_complex s[8][3];
} load_record;

static void keep_load(void *ctx, int step, kl_time t, const kl_flow_result *res, int solved)
{
    load_record *r = ctx;
    (void)t;
    ck_assert(solved);
    memcpy(r->s[step], res->s_load + 3 * r->load, sizeof r->s[step]);
}

START_TEST(metered_load_follows_its_meters)
{
    harness h;
    harness_init(&h);
    built(&h, IEEE13);
    const char *shapes = "time,x\n2026-07-06T00:00Z,1\n2026-07-06T00:15Z,1\n2026-07-06T00:30Z,1\n";
    /* the 634 load, constant power, 160 + j110, 120 + j90, 120 + j90 kVA:
     * 50 + 25 kWh in a quarter hour is 300 kW, shared 0.4 / 0.3 / 0.3 at the
     * entries' power factors: 120 + j82.5, 90 + j67.5, 90 + j67.5 kVA (by hand).
     * Readings of the day before and after the series are passed over. */
    const char *meters = "load,meter,kwh,time\n"
                         "634,m1,9,2026-07-05T23:45Z\n"
                         "634,m1,50,2026-07-06T00:00Z\n634,m2,25,2026-07-06T00:00Z\n"
                         "634,m1,10,2026-07-06T00:15Z\n634,m2,15,2026-07-06T00:15Z\n"
                         "634,m2,0,2026-07-06T00:30Z\n634,m1,0,2026-07-06T00:30Z\n"
                         "634,m1,99,2026-07-06T00:45Z\n";
    kl_shapes sh;
    kl_series_plan p;
    kl_series_stats *st;
    ck_assert_int_eq(kl_shapes_read_buffer(shapes, strlen(shapes), "s.csv", &sh, &h.err), KL_OK);
    ck_assert_int_eq(kl_series_plan_init(&p, h.f, &sh, &h.err), KL_OK);
    HARNESS_OK(&h, kl_series_meters_read_buffer(&p, h.f, meters, strlen(meters), "m.csv", &h.err));
    ck_assert_int_eq(p.nmetered, 1);
    load_record r = {kl_feeder_find_load(h.f, "634"), {{0}}};
    kl_series_options so;
    kl_series_options_default(&so);
    so.on_step = keep_load;
    so.ctx = &r;
    HARNESS_OK(&h, kl_series_run(h.f, h.net, &p, &so, h.res, &st, &h.err));
    const double want[3][3][2] = {{{120, 82.5}, {90, 67.5}, {90, 67.5}},
                                  {{40, 27.5}, {30, 22.5}, {30, 22.5}},
                                  {{0, 0}, {0, 0}, {0, 0}}};
    for (int i = 0; i < 3; i++)
        for (int e = 0; e < 3; e++) {
            ck_assert_double_eq_tol(creal(r.s[i][e]) / 1e3, want[i][e][0], 1e-6);
            ck_assert_double_eq_tol(cimag(r.s[i][e]) / 1e3, want[i][e][1], 1e-6);
        }
    kl_series_stats_free(st);
    kl_series_plan_free(&p);

    /* located errors, nothing metered */
    static const struct {
        const char *text;
        int line, col;
        const char *words;
    } bad[] = {
        {"meter,load,time\n", 1, 1, "lacks the column kw"},
        {"meter,load,time,kw,volts\n", 1, 20, "unknown column"},
        {"meter,load,time,kw\nm1,nobody,2026-07-06T00:00Z,1\n", 2, 4, "no load of that name"},
        {"meter,load,time,kw\nm1,634,2026-07-06T00:05Z,1\n", 2, 8, "not on the series' steps"},
        {"meter,load,time,kw\nm1,634,2026-07-06T00:00Z,1\nm1,675,2026-07-06T00:15Z,1\n", 3, 4,
         "a meter serves one load"},
        {"meter,load,time,kw\nm1,634,2026-07-06T00:00Z,1\nm1,634,2026-07-06T00:00Z,1\n", 3, 8,
         "a second reading"},
        {"meter,load,time,kw\nm1,634,2026-07-06T00:00Z,1\nm1,634,2026-07-06T00:30Z,1\n", 2, 1,
         "no reading for 2026-07-06T00:15+00:00"},
        {"meter,load,time,kw\nm1,634,2026-07-06T00:00Z,x\n", 2, 26, "expected a number"},
    };
    for (size_t k = 0; k < sizeof bad / sizeof bad[0]; k++) {
        kl_errors e;
        kl_errors_init(&e);
        ck_assert_int_eq(kl_series_plan_init(&p, h.f, &sh, &e), KL_OK);
        ck_assert_int_eq(kl_series_meters_read_buffer(&p, h.f, bad[k].text, strlen(bad[k].text), "m.csv", &e),
                         KL_EINPUT);
        ck_assert_msg(e.count >= 1 && e.items[0].line == bad[k].line && e.items[0].col == bad[k].col
                          && strstr(e.items[0].message, bad[k].words),
                      "case %zu: %d:%d %s", k, e.count ? e.items[0].line : 0,
                      e.count ? e.items[0].col : 0, e.count ? e.items[0].message : "(none)");
        ck_assert_int_eq(p.nmetered, 0);
        ck_assert_ptr_null(p.load_meter);
        kl_series_plan_free(&p);
        kl_errors_free(&e);
    }
    kl_shapes_free(&sh);
    harness_free(&h);
}
END_TEST

/* ---- switched capacitor banks against hand-worked sequences */

typedef struct {
    int cap;
    double q[144];
} cap_record;

static void keep_cap(void *ctx, int step, kl_time t, const kl_flow_result *res, int solved)
{
    cap_record *r = ctx;
    (void)t;
    ck_assert(solved);
    r->q[step] = res->q_cap[3 * r->cap] + res->q_cap[3 * r->cap + 1] + res->q_cap[3 * r->cap + 2];
}

static kl_series_stats *run_caps(harness *h, const char *controls, cap_record *r)
{
    char *text = shapes_text("time,flat", 144, 600, one, 1); /* a day from 00:00 local */
    kl_shapes sh;
    kl_series_plan p;
    kl_series_stats *st;
    ck_assert_int_eq(kl_shapes_read_buffer(text, strlen(text), "s.csv", &sh, &h->err), KL_OK);
    ck_assert_int_eq(kl_series_plan_init(&p, h->f, &sh, &h->err), KL_OK);
    HARNESS_OK(h, kl_series_controls_read_buffer(&p, h->f, controls, strlen(controls), "c.csv", &h->err));
    kl_series_options so;
    kl_series_options_default(&so);
    so.on_step = keep_cap;
    so.ctx = r;
    HARNESS_OK(h, kl_series_run(h->f, h->net, &p, &so, h->res, &st, &h->err));
    kl_series_plan_free(&p);
    kl_shapes_free(&sh);
    free(text);
    return st;
}

START_TEST(capacitor_controls_by_hand)
{
    harness h;
    harness_init(&h);
    built(&h, IEEE13);
    int c675 = -1, c611 = -1;
    for (int c = 0; c < h.f->ncapacitors; c++) {
        if (strcmp(h.f->capacitors[c].name, "cap-675") == 0)
            c675 = c;
        if (strcmp(h.f->capacitors[c].name, "cap-611") == 0)
            c611 = c;
    }
    ck_assert(c675 >= 0 && c611 >= 0);
    /* time control 07:00-19:30, a 20-minute delay, 10-minute steps, the bank
     * in service at midnight: off from 00:20, on from 07:20, off from 19:50;
     * three switchings, 20 min + 12 h 30 min in service */
    cap_record r = {c675, {0}};
    kl_series_stats *st = run_caps(&h, "capacitor,control,on,off,delay_s\ncap-675,time,07:00,19:30,1200\n", &r);
    ck_assert_int_eq(st->cap_switches[c675], 3);
    ck_assert_int_eq(st->cap_switches[c611], 0);
    ck_assert_double_eq_tol(st->cap_on_s[c675], 20 * 60 + 12.5 * 3600, 1e-9);
    ck_assert_double_eq_tol(st->cap_on_s[c611], 24 * 3600, 1e-9);
    for (int i = 0; i < 144; i++) {
        int on = i < 2 || (i >= 44 && i < 119); /* 00:00-00:20, 07:20-19:50 */
        ck_assert_msg(on ? r.q[i] > 500e3 : r.q[i] == 0, "step %d: %g var", i, r.q[i]);
    }
    kl_series_stats_free(st);
    /* voltage control: 611 sits near 117 V on the 120 V base (the published
     * 0.9738 pu), above the 115 V switch-off level: with a 15-minute delay
     * the bank goes out at the third step (00:20) and, 611 staying above the
     * 110 V switch-on level, stays out */
    cap_record r2 = {c611, {0}};
    st = run_caps(&h, "capacitor,control,on,off,delay_s\ncap-611,voltage,110,115,900\n", &r2);
    ck_assert_int_eq(st->cap_switches[c611], 1);
    ck_assert_double_eq_tol(st->cap_on_s[c611], 20 * 60, 1e-9);
    ck_assert(r2.q[1] > 50e3 && r2.q[2] == 0 && r2.q[143] == 0);
    kl_series_stats_free(st);
    /* the banks are given back their ratings */
    ck_assert_double_eq(h.f->capacitors[c611].q_var[2], 100e3);
    /* located errors */
    kl_shapes sh;
    kl_series_plan p;
    kl_errors e;
    kl_errors_init(&e);
    const char *s2 = "time,x\n2026-07-06T00:00Z,1\n2026-07-06T01:00Z,1\n";
    ck_assert_int_eq(kl_shapes_read_buffer(s2, strlen(s2), "s.csv", &sh, &e), KL_OK);
    ck_assert_int_eq(kl_series_plan_init(&p, h.f, &sh, &e), KL_OK);
    const char *bad = "capacitor,control,on,off,delay_s\ncap-611,voltage,125,115,0\n"
                      "cap-9,var,1,0,0\ncap-675,time,7:00,19:00,0\ncap-675,pressure,1,2,0\n";
    ck_assert_int_eq(kl_series_controls_read_buffer(&p, h.f, bad, strlen(bad), "c.csv", &e), KL_EINPUT);
    ck_assert_int_eq(e.count, 4);
    ck_assert(e.items[0].line == 2 && e.items[0].col == 17 && strstr(e.items[0].message, "bandwidth"));
    ck_assert(e.items[1].line == 3 && strstr(e.items[1].message, "no capacitor"));
    ck_assert(e.items[2].line == 4 && e.items[2].col == 14 && strstr(e.items[2].message, "HH:MM"));
    ck_assert(e.items[3].line == 5 && strstr(e.items[3].message, "unknown control"));
    ck_assert_ptr_null(p.cap_ctl);
    kl_errors_free(&e);
    kl_series_plan_free(&p);
    kl_shapes_free(&sh);
    harness_free(&h);
}
END_TEST

/* ---- rooftop photovoltaic systems */

/* IEEE Std 1547-2018 Table 8, Category B default volt-var points (from
 * memory): 0.92 / +44 %, 0.98 / 0, 1.02 / 0, 1.08 / -44 %, linear between. */
START_TEST(volt_var_curve_points)
{
    ck_assert_double_eq_tol(kl_series_volt_var(0.90), 0.44, 1e-12);
    ck_assert_double_eq_tol(kl_series_volt_var(0.92), 0.44, 1e-12);
    ck_assert_double_eq_tol(kl_series_volt_var(0.95), 0.22, 1e-12);
    ck_assert_double_eq_tol(kl_series_volt_var(1.00), 0.0, 1e-12);
    ck_assert_double_eq_tol(kl_series_volt_var(1.05), -0.22, 1e-12);
    ck_assert_double_eq_tol(kl_series_volt_var(1.10), -0.44, 1e-12);
}
END_TEST

typedef struct {
    int load, bus, ph;
    kl_complex s[4];
    double v[4];
} gen_record;

static void keep_gen(void *ctx, int step, kl_time t, const kl_flow_result *res, int solved)
{
    gen_record *r = ctx;
    (void)t;
    ck_assert(solved);
    r->s[step] = res->s_load[3 * r->load + r->ph];
    r->v[step] = cabs(res->v[3 * r->bus + r->ph]) / res->v_base_ln[r->bus];
}

static void run_gen(const char *gens, gen_record *r)
{
    harness h;
    harness_init(&h);
    HARNESS_OK(&h, harness_load(&h, IEEE13));
    HARNESS_OK(&h, harness_derive(&h, KL_CARSON_FULL));
    const char *shapes = "time,solar,rest\n2026-07-06T10:00Z,0.5,1\n2026-07-06T11:00Z,1,1\n"
                         "2026-07-06T12:00Z,0,1\n2026-07-06T13:00Z,0.8,1\n";
    kl_shapes sh;
    kl_series_generators g;
    kl_series_plan p;
    kl_series_stats *st;
    ck_assert_int_eq(kl_shapes_read_buffer(shapes, strlen(shapes), "s.csv", &sh, &h.err), KL_OK);
    int n0 = h.f->nloads;
    HARNESS_OK(&h, kl_series_generators_read_buffer(&g, h.f, &sh, gens, strlen(gens), "g.csv", &h.err));
    ck_assert_int_eq(h.f->nloads, n0 + 1);
    HARNESS_OK(&h, harness_build(&h));
    HARNESS_OK(&h, harness_result(&h));
    ck_assert_int_eq(kl_series_plan_init(&p, h.f, &sh, &h.err), KL_OK);
    ck_assert_int_eq(kl_series_plan_generators(&p, &g), KL_OK);
    ck_assert_int_eq(kl_series_plan_default(&p, h.f, "rest", &h.err), KL_OK);
    ck_assert_int_eq(p.load_shape[n0], 0); /* the generator keeps its own shape */
    r->load = n0;
    r->bus = h.f->loads[n0].bus;
    r->ph = h.f->loads[n0].phases == 1 ? 0 : h.f->loads[n0].phases == 2 ? 1 : 2;
    kl_series_options so;
    kl_series_options_default(&so);
    so.on_step = keep_gen;
    so.ctx = r;
    HARNESS_OK(&h, kl_series_run(h.f, h.net, &p, &so, h.res, &st, &h.err));
    kl_series_stats_free(st);
    kl_series_plan_free(&p);
    kl_shapes_free(&sh);
    harness_free(&h);
    kl_series_generators_free(&g);
}

START_TEST(rooftop_pv_as_negative_load)
{
    /* 100 kW at 0.95 absorbing on 675 phase a: at half output -50 kW and
     * +50 tan(acos 0.95) = 16.434 kvar drawn (by hand) */
    gen_record r = {0};
    run_gen("name,bus,phase,kw,power_factor,shape,control\npv-1,675,a,100,0.95 absorbing,solar,constant-pf\n", &r);
    double tanphi = sqrt(1 - 0.95 * 0.95) / 0.95;
    const double out[4] = {0.5, 1, 0, 0.8};
    for (int i = 0; i < 4; i++) {
        ck_assert_double_eq_tol(creal(r.s[i]), -100e3 * out[i], 1e-6);
        ck_assert_double_eq_tol(cimag(r.s[i]), 100e3 * out[i] * tanphi, 1e-6);
    }
    /* volt-var: 300 kW at 611 c (published 0.9738 pu, under the curve's 0.98);
     * the reactive power settles on the curve at the voltage the step ends
     * with (within 1e-3 of the nameplate) */
    gen_record v = {0};
    run_gen("name,bus,phase,kw,power_factor,shape,control\npv-2,611,c,300,1,solar,volt-var\n", &v);
    for (int i = 0; i < 4; i++) {
        ck_assert_double_eq_tol(creal(v.s[i]), -300e3 * out[i], 1e-6);
        ck_assert_double_eq_tol(-cimag(v.s[i]) / 300e3, kl_series_volt_var(v.v[i]), 1e-3);
    }
    ck_assert(fabs(cimag(v.s[2])) > 1e3); /* at no output 611 c is low: the curve acts */
}
END_TEST

START_TEST(bad_generators_are_located)
{
    harness h;
    harness_init(&h);
    HARNESS_OK(&h, harness_load(&h, IEEE13));
    const char *shapes = "time,solar\n2026-07-06T10:00Z,0.5\n2026-07-06T11:00Z,1\n";
    kl_shapes sh;
    kl_series_generators g;
    ck_assert_int_eq(kl_shapes_read_buffer(shapes, strlen(shapes), "s.csv", &sh, &h.err), KL_OK);
    int n0 = h.f->nloads;
    const char *bad = "name,bus,phase,kw,power_factor,shape,control\n"
                      "pv-1,611,a,5,1,solar,constant-pf\n"        /* 611 has phase c only */
                      "pv-2,675,b,5,0.9,solar,constant-pf\n"      /* which way? */
                      "pv-3,675,b,5,1,moon,constant-pf\n"
                      "pv-4,675,b,5,1,solar,droop\n"
                      "pv-5,nowhere,b,5,1,solar,volt-var\n"
                      "pv-6,675,b,0,1,solar,volt-var\n";
    kl_errors e;
    kl_errors_init(&e);
    ck_assert_int_eq(kl_series_generators_read_buffer(&g, h.f, &sh, bad, strlen(bad), "g.csv", &e),
                     KL_EINPUT);
    ck_assert_int_eq(e.count, 6);
    const int col[6] = {10, 14, 16, 22, 6, 12};
    for (int k = 0; k < 6; k++)
        ck_assert_msg(e.items[k].line == k + 2 && e.items[k].col == col[k], "%d: %d:%d %s", k,
                      e.items[k].line, e.items[k].col, e.items[k].message);
    ck_assert_ptr_nonnull(strstr(e.items[1].message, "absorbing or injecting"));
    ck_assert_int_eq(h.f->nloads, n0); /* the feeder as it was */
    kl_errors_free(&e);
    kl_shapes_free(&sh);
    harness_free(&h);
}
END_TEST

int main(void)
{
    Suite *s = suite_create("series");
    TCase *tc = tcase_create("series");
    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, time_stamps_parse_as_the_c_library);
    tcase_add_test(tc, constant_shape_is_the_snapshot);
    tcase_add_test(tc, before_step_hook_sets_the_loads);
    tcase_add_test(tc, scaled_shape_is_the_load_scale);
    tcase_add_test(tc, ten_minute_value_is_the_rms_of_the_minutes);
    tcase_add_test(tc, nearest_rank_by_hand);
    tcase_add_test(tc, weekly_95th_percentile_in_closed_form);
    tcase_add_test(tc, running_statistics_equal_the_full_record);
    tcase_add_test(tc, a_step_that_fails_is_listed_and_the_series_goes_on);
    tcase_add_test(tc, bad_shapes_are_located);
    tcase_add_test(tc, bad_assignments_are_located);
    tcase_add_test(tc, metered_load_follows_its_meters);
    tcase_add_test(tc, capacitor_controls_by_hand);
    tcase_add_test(tc, volt_var_curve_points);
    tcase_add_test(tc, rooftop_pv_as_negative_load);
    tcase_add_test(tc, bad_generators_are_located);
    suite_add_tcase(s, tc);
    SRunner *sr = srunner_create(s);
    srunner_run_all(sr, CK_NORMAL);
    int failed = srunner_ntests_failed(sr);
    srunner_free(sr);
    return failed ? EXIT_FAILURE : EXIT_SUCCESS;
}
