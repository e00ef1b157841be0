/* kilter: the statistics of a series of load flows, kept as running values
 * (kilter/series.h), so their memory is fixed by the feeder, not by the
 * number of steps.
 *
 * A step's value holds over its interval [t, t + dt).  The 10-minute values
 * are those of IEC 61000-4-30 (5.7.2: aggregation over 10 min, the square
 * root of the arithmetic mean of the squared input values, intervals on the
 * 10-minute marks of the clock), here the time-weighted mean of the squares
 * of the step values over each 10-minute interval (a step of 1 h gives six
 * equal 10-minute values; steps of 1 min, ten of them pooled).  EN 50160
 * (4.2.5, supply voltage unbalance) then asks that 95 % of the 10-minute
 * mean values of each week be within 2 %: per week, the 95th percentile by
 * nearest rank (the value at ascending rank ceil(0.95 N) of the week's N
 * values; it is within the limit exactly when at least 95 % of the values
 * are), kept from the largest KL_SERIES_TOP_KEEP values only (a min-heap).
 * The neutral's heating window is an RMS over consecutive windows of the
 * stated length on the clock's marks, likewise. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/series.h"
#include "kilter/sequence.h"
#include "kl_study.h"

struct kl_series_run_state {
    int nthree;               /* live three-phase buses */
    int *tp;                  /* [nbuses] their index, -1 for other buses */
    int *tp_bus;              /* [nthree] bus id */
    double *x;                /* [nthree] this step's VUF */
    /* the 10-minute interval being filled */
    int blk_open;
    kl_time blk_start;
    double blk_dur;           /* solved time in it, s */
    double *blk_sq;           /* [nthree] integral of VUF^2 dt */
    /* the week being filled */
    kl_time week0;            /* start of week 0: the 10-minute mark at or before the first step */
    int week, week_n;         /* week index, 10-minute values in it */
    int *week_over;           /* [nthree] values over the limit this week */
    double *top;              /* [KL_SERIES_TOP_KEEP * nthree] min-heaps of the largest values */
    int *top_n;               /* [nthree] */
    /* the heating window being filled */
    int win_open;
    kl_time win_start;
    double win_dur;
    double *win_sq;           /* [nsections] integral of In^2 dt */
    double *in_now;           /* [nsections] this step's neutral current, A */
    double *in_sq, *ie_sq;    /* [nsections] over the whole series */
    unsigned char *has_n;     /* [nsections] 1: a line with a metallic neutral */
};

static void *zalloc(size_t n, size_t size, int *bad)
{
    void *p = kl_calloc(n ? n : 1, size);
    if (!p)
        *bad = 1;
    return p;
}

void kl_series_stats_free(kl_series_stats *s)
{
    if (!s)
        return;
    struct kl_series_run_state *r = s->run;
    if (r) {
        kl_free(r->tp); kl_free(r->tp_bus); kl_free(r->x); kl_free(r->blk_sq);
        kl_free(r->week_over); kl_free(r->top); kl_free(r->top_n); kl_free(r->win_sq); kl_free(r->in_now);
        kl_free(r->in_sq); kl_free(r->ie_sq); kl_free(r->has_n);
        kl_free(r);
    }
    kl_free(s->fail_t); kl_free(s->fail_why);
    kl_free(s->vuf_max); kl_free(s->vuf_max_t); kl_free(s->vuf_mean); kl_free(s->vuf_over_s);
    kl_free(s->vuf10_max); kl_free(s->vuf10_max_t); kl_free(s->vuf10_p95);
    kl_free(s->vuf10_p95_week); kl_free(s->n10); kl_free(s->n10_over); kl_free(s->weeks_over);
    kl_free(s->v_min_pu); kl_free(s->v_max_pu); kl_free(s->v_min_t); kl_free(s->v_max_t);
    kl_free(s->outside_a_s); kl_free(s->outside_b_s);
    kl_free(s->in_max); kl_free(s->in_max_t); kl_free(s->in_rms); kl_free(s->in_win_max);
    kl_free(s->in_win_t); kl_free(s->ie_max); kl_free(s->ie_max_t); kl_free(s->ie_rms);
    kl_free(s->loss_wh); kl_free(s->reg_ops); kl_free(s->cap_switches); kl_free(s->cap_on_s);
    kl_free(s->cap_kind);
    kl_free(s);
}

static void fill_nan(double *x, size_t n)
{
    for (size_t i = 0; i < n; i++)
        x[i] = NAN;
}

static int section_has_neutral(const kl_feeder *f, int k)
{
    const kl_section *sec = &f->sections[k];
    if (sec->kind != KL_SEC_LINE)
        return 0;
    const kl_construction *c = &f->constructions[sec->construction];
    return c->ntn > 0 || c->nneutrals > 0 || c->neutral_ampacity_a > 0; /* as the study (study.c) */
}

static kl_status alloc_run(kl_series_stats *s, const kl_feeder *f)
{
    int bad = 0;
    struct kl_series_run_state *r = zalloc(1, sizeof *r, &bad);
    if (bad)
        return KL_ENOMEM;
    s->run = r;
    size_t nb = (size_t)f->nbuses, ns = (size_t)f->nsections;
    r->tp = zalloc(nb, sizeof(int), &bad);
    r->tp_bus = zalloc(nb, sizeof(int), &bad);
    r->win_sq = zalloc(ns, sizeof(double), &bad);
    r->in_now = zalloc(ns, sizeof(double), &bad);
    r->in_sq = zalloc(ns, sizeof(double), &bad);
    r->ie_sq = zalloc(ns, sizeof(double), &bad);
    r->has_n = zalloc(ns, 1, &bad);
    if (bad)
        return KL_ENOMEM;
    for (int b = 0; b < f->nbuses; b++) {
        r->tp[b] = -1;
        if (f->buses[b].phases == KL_PH_ABC && !kl_deenergized_bus(f, b)) {
            r->tp[b] = r->nthree;
            r->tp_bus[r->nthree++] = b;
        }
    }
    for (int k = 0; k < f->nsections; k++)
        r->has_n[k] = (unsigned char)section_has_neutral(f, k);
    size_t nt = (size_t)r->nthree;
    r->x = zalloc(nt, sizeof(double), &bad);
    r->blk_sq = zalloc(nt, sizeof(double), &bad);
    r->week_over = zalloc(nt, sizeof(int), &bad);
    r->top = zalloc(nt * KL_SERIES_TOP_KEEP, sizeof(double), &bad);
    r->top_n = zalloc(nt, sizeof(int), &bad);
    return bad ? KL_ENOMEM : KL_OK;
}

kl_status kl_series_stats_alloc(const kl_feeder *f, const kl_series_options *o, int offset_s,
                                kl_series_stats **out)
{
    int bad = 0;
    size_t nb = (size_t)f->nbuses, ns = (size_t)f->nsections;
    kl_series_stats *s = zalloc(1, sizeof *s, &bad);
    *out = NULL;
    if (bad)
        return KL_ENOMEM;
    s->nbuses = f->nbuses;
    s->nsections = f->nsections;
    s->nregulators = f->nregulators;
    s->ncapacitors = f->ncapacitors;
    s->offset_s = offset_s;
    s->vuf_limit = o->limits.vuf_compat;
    s->heating_window_s = o->heating_window_s;
    s->fail_t = zalloc(KL_SERIES_FAIL_KEEP, sizeof *s->fail_t, &bad);
    s->fail_why = zalloc(KL_SERIES_FAIL_KEEP, sizeof *s->fail_why, &bad);
    s->vuf_max = zalloc(nb, sizeof(double), &bad);
    s->vuf_max_t = zalloc(nb, sizeof(kl_time), &bad);
    s->vuf_mean = zalloc(nb, sizeof(double), &bad);
    s->vuf_over_s = zalloc(2 * nb, sizeof(double), &bad);
    s->vuf10_max = zalloc(nb, sizeof(double), &bad);
    s->vuf10_max_t = zalloc(nb, sizeof(kl_time), &bad);
    s->vuf10_p95 = zalloc(nb, sizeof(double), &bad);
    s->vuf10_p95_week = zalloc(nb, sizeof(int), &bad);
    s->n10 = zalloc(nb, sizeof(int), &bad);
    s->n10_over = zalloc(nb, sizeof(int), &bad);
    s->weeks_over = zalloc(nb, sizeof(int), &bad);
    s->v_min_pu = zalloc(3 * nb, sizeof(double), &bad);
    s->v_max_pu = zalloc(3 * nb, sizeof(double), &bad);
    s->v_min_t = zalloc(3 * nb, sizeof(kl_time), &bad);
    s->v_max_t = zalloc(3 * nb, sizeof(kl_time), &bad);
    s->outside_a_s = zalloc(3 * nb, sizeof(double), &bad);
    s->outside_b_s = zalloc(3 * nb, sizeof(double), &bad);
    s->in_max = zalloc(ns, sizeof(double), &bad);
    s->in_max_t = zalloc(ns, sizeof(kl_time), &bad);
    s->in_rms = zalloc(ns, sizeof(double), &bad);
    s->in_win_max = zalloc(ns, sizeof(double), &bad);
    s->in_win_t = zalloc(ns, sizeof(kl_time), &bad);
    s->ie_max = zalloc(ns, sizeof(double), &bad);
    s->ie_max_t = zalloc(ns, sizeof(kl_time), &bad);
    s->ie_rms = zalloc(ns, sizeof(double), &bad);
    s->loss_wh = zalloc(3 * ns, sizeof(double), &bad);
    s->reg_ops = zalloc(3 * (size_t)f->nregulators, sizeof(int), &bad);
    s->cap_switches = zalloc((size_t)f->ncapacitors, sizeof(int), &bad);
    s->cap_on_s = zalloc((size_t)f->ncapacitors, sizeof(double), &bad);
    s->cap_kind = zalloc((size_t)f->ncapacitors, 1, &bad);
    if (bad || alloc_run(s, f)) {
        kl_series_stats_free(s);
        return KL_ENOMEM;
    }
    fill_nan(s->vuf_max, nb);
    fill_nan(s->vuf_mean, nb);
    fill_nan(s->vuf10_max, nb);
    fill_nan(s->vuf10_p95, nb);
    fill_nan(s->v_min_pu, 3 * nb);
    fill_nan(s->v_max_pu, 3 * nb);
    fill_nan(s->in_max, ns);
    fill_nan(s->in_rms, ns);
    fill_nan(s->in_win_max, ns);
    for (int b = 0; b < f->nbuses; b++) {
        s->vuf10_p95_week[b] = -1;
        if (s->run->tp[b] >= 0)
            s->vuf_mean[b] = 0; /* an integral until kl_series_stats_finish */
    }
    *out = s;
    return KL_OK;
}

/* ---- the nearest-rank percentile and the heap of the largest values */

static int cmp_double(const void *a, const void *b)
{
    double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

double kl_series_nearest_rank(double *x, int n, double q)
{
    if (n <= 0)
        return NAN;
    qsort(x, (size_t)n, sizeof *x, cmp_double);
    int r = (int)ceil(q * n - 1e-9); /* rank 1..n; 0.95 * 20 is 19, not 19.000000000000004 */
    if (r < 1)
        r = 1;
    return x[r - 1];
}

/* Pushes v into the min-heap h of at most KL_SERIES_TOP_KEEP values. */
static void top_push(double *h, int *n, double v)
{
    int i;
    if (*n < KL_SERIES_TOP_KEEP) {
        i = (*n)++;
        while (i > 0 && h[(i - 1) / 2] > v) {
            h[i] = h[(i - 1) / 2];
            i = (i - 1) / 2;
        }
        h[i] = v;
        return;
    }
    if (v <= h[0])
        return;
    i = 0; /* replace the smallest kept, sift down */
    for (;;) {
        int c = 2 * i + 1;
        if (c >= *n)
            break;
        if (c + 1 < *n && h[c + 1] < h[c])
            c++;
        if (h[c] >= v)
            break;
        h[i] = h[c];
        i = c;
    }
    h[i] = v;
}

/* The week's 95th percentile of n values from the largest ones kept, h[m]:
 * ascending rank r = ceil(0.95 n) is the (n - r + 1)-th largest. */
static double top_p95(double *h, int m, int n)
{
    int r = (int)ceil(0.95 * n - 1e-9);
    int from_top = n - r + 1;
    KL_ASSERT(from_top >= 1 && from_top <= m); /* KL_SERIES_TOP_KEEP covers a week of values */
    qsort(h, (size_t)m, sizeof *h, cmp_double);
    return h[m - from_top];
}

static void close_week(kl_series_stats *s)
{
    struct kl_series_run_state *r = s->run;
    if (r->week_n == 0)
        return;
    for (int i = 0; i < r->nthree; i++) {
        int b = r->tp_bus[i];
        double p95 = top_p95(r->top + (size_t)i * KL_SERIES_TOP_KEEP, r->top_n[i], r->week_n);
        if (!(s->vuf10_p95[b] >= p95)) { /* NAN at first */
            s->vuf10_p95[b] = p95;
            s->vuf10_p95_week[b] = r->week;
        }
        if (p95 > s->vuf_limit)
            s->weeks_over[b]++;
        r->top_n[i] = 0;
        r->week_over[i] = 0;
    }
    s->last_week_partial = r->week_n < KL_SERIES_WEEK_VALUES;
    r->week_n = 0;
}

static void close_block(kl_series_stats *s)
{
    struct kl_series_run_state *r = s->run;
    if (!r->blk_open)
        return;
    r->blk_open = 0;
    if (!(r->blk_dur > 0))
        return; /* no solved step in it: no value */
    int week = (int)((r->blk_start - r->week0) / KL_SERIES_WEEK_S);
    if (week != r->week) {
        close_week(s);
        r->week = week;
    }
    if (r->week_n == 0)
        s->nweeks++;
    r->week_n++;
    for (int i = 0; i < r->nthree; i++) {
        int b = r->tp_bus[i];
        double v = sqrt(r->blk_sq[i] / r->blk_dur); /* IEC 61000-4-30 5.7.2 */
        r->blk_sq[i] = 0;
        top_push(r->top + (size_t)i * KL_SERIES_TOP_KEEP, &r->top_n[i], v);
        s->n10[b]++;
        if (v > s->vuf_limit) {
            s->n10_over[b]++;
            r->week_over[i]++;
        }
        if (!(s->vuf10_max[b] >= v)) {
            s->vuf10_max[b] = v;
            s->vuf10_max_t[b] = r->blk_start;
        }
    }
    r->blk_dur = 0;
}

static void close_window(kl_series_stats *s)
{
    struct kl_series_run_state *r = s->run;
    if (!r->win_open)
        return;
    r->win_open = 0;
    if (r->win_dur > 0)
        for (int k = 0; k < s->nsections; k++) {
            if (!r->has_n[k])
                continue;
            double v = sqrt(r->win_sq[k] / r->win_dur);
            if (!(s->in_win_max[k] >= v)) {
                s->in_win_max[k] = v;
                s->in_win_t[k] = r->win_start;
            }
            r->win_sq[k] = 0;
        }
    r->win_dur = 0;
}

static kl_time floor_to(kl_time t, kl_time len)
{
    return t >= 0 ? t / len * len : -((-t + len - 1) / len) * len;
}

/* The 10-minute intervals and heating windows [t, t + dt) touches: each one
 * it leaves closed, the solved time added to the one it ends in. */
static void clock_step(kl_series_stats *s, kl_time t, int dt, int solved)
{
    struct kl_series_run_state *r = s->run;
    kl_time a = t, end = t + dt;
    while (a < end) {
        kl_time b0 = floor_to(a, KL_SERIES_AGG_S), w0 = floor_to(a, s->heating_window_s);
        if (!r->blk_open || r->blk_start != b0) {
            close_block(s);
            r->blk_open = 1;
            r->blk_start = b0;
        }
        if (!r->win_open || r->win_start != w0) {
            close_window(s);
            r->win_open = 1;
            r->win_start = w0;
        }
        kl_time stop = end;
        if (b0 + KL_SERIES_AGG_S < stop)
            stop = b0 + KL_SERIES_AGG_S;
        if (w0 + s->heating_window_s < stop)
            stop = w0 + s->heating_window_s;
        double seg = (double)(stop - a);
        if (solved) {
            r->blk_dur += seg;
            r->win_dur += seg;
            for (int i = 0; i < r->nthree; i++)
                r->blk_sq[i] += r->x[i] * r->x[i] * seg;
            for (int k = 0; k < s->nsections; k++)
                r->win_sq[k] += r->in_now[k] * r->in_now[k] * seg;
        }
        a = stop;
    }
}

static void note_failure(kl_series_stats *s, kl_time t, const char *why)
{
    s->nfailed++;
    if (s->nfail_kept < KL_SERIES_FAIL_KEEP) {
        s->fail_t[s->nfail_kept] = t;
        snprintf(s->fail_why[s->nfail_kept], sizeof s->fail_why[0], "%s", why ? why : "");
        s->nfail_kept++;
    }
}

static void max_at(double *m, kl_time *mt, double v, kl_time t)
{
    if (!(*m >= v)) {
        *m = v;
        *mt = t;
    }
}

static void step_buses(kl_series_stats *s, const kl_feeder *f, kl_time t, double dt,
                       const kl_flow_result *res, const kl_limits *lim)
{
    struct kl_series_run_state *r = s->run;
    for (int i = 0; i < r->nthree; i++) {
        int b = r->tp_bus[i];
        kl_complex s012[3];
        kl_seq_from_phase(res->v + 3 * (size_t)b, s012);
        double v1 = cabs(s012[1]);
        double x = v1 > 0 ? cabs(s012[2]) / v1 : 0; /* VUF, IEC 61000-4-30 5.7.1 */
        r->x[i] = x;
        max_at(&s->vuf_max[b], &s->vuf_max_t[b], x, t);
        s->vuf_mean[b] += x * dt;
        if (x > lim->vuf_compat)
            s->vuf_over_s[2 * b] += dt;
        if (x > lim->vuf_supply)
            s->vuf_over_s[2 * b + 1] += dt;
    }
    for (int b = 0; b < f->nbuses; b++) {
        if (kl_deenergized_bus(f, b))
            continue;
        for (int p = 0; p < 3; p++) {
            if (!(res->phases[b] & (1 << p)) || !(res->v_base_ln[b] > 0))
                continue;
            size_t k = 3 * (size_t)b + (size_t)p;
            double pu = cabs(res->v[k]) / res->v_base_ln[b];
            max_at(&s->v_max_pu[k], &s->v_max_t[k], pu, t);
            if (!(s->v_min_pu[k] <= pu)) {
                s->v_min_pu[k] = pu;
                s->v_min_t[k] = t;
            }
            kl_service_class c = kl_limits_service(lim, pu);
            if (c != KL_SERVICE_A)
                s->outside_a_s[k] += dt;
            if (c == KL_SERVICE_BELOW_B || c == KL_SERVICE_ABOVE_B || c == KL_SERVICE_UNDEFINED)
                s->outside_b_s[k] += dt;
        }
    }
}

static void step_sections(kl_series_stats *s, kl_time t, double dt, const kl_flow_result *res)
{
    struct kl_series_run_state *r = s->run;
    for (int k = 0; k < s->nsections; k++) {
        r->in_now[k] = 0;
        if (!res->sec_solved[k])
            continue;
        for (int p = 0; p < 3; p++)
            s->loss_wh[3 * (size_t)k + (size_t)p] += creal(res->s_loss[3 * (size_t)k + (size_t)p]) * dt / 3600;
        double ie = cabs(res->i_earth[k]);
        max_at(&s->ie_max[k], &s->ie_max_t[k], ie, t);
        r->ie_sq[k] += ie * ie * dt;
        if (!r->has_n[k])
            continue;
        double in = cabs(res->i_neutral[k]);
        max_at(&s->in_max[k], &s->in_max_t[k], in, t);
        r->in_sq[k] += in * in * dt;
        r->in_now[k] = in;
    }
    for (int p = 0; p < 3; p++) {
        s->head_wh[p] += creal(res->s_head[p]) * dt / 3600;
        s->head_varh[p] += cimag(res->s_head[p]) * dt / 3600;
        s->losses_wh[p] += creal(res->s_losses[p]) * dt / 3600;
    }
}

void kl_series_stats_step(kl_series_stats *s, const kl_feeder *f, kl_time t, int dt,
                          const kl_flow_result *res, const kl_limits *lim, const char *why)
{
    struct kl_series_run_state *r = s->run;
    if (s->nsteps++ == 0) {
        s->t_first = t;
        r->week0 = floor_to(t, KL_SERIES_AGG_S);
    }
    s->t_end = t + dt;
    if (!res) {
        note_failure(s, t, why);
        clock_step(s, t, dt, 0);
        return;
    }
    s->nsolved++;
    s->solved_s += dt;
    step_buses(s, f, t, dt, res, lim);
    step_sections(s, t, dt, res);
    clock_step(s, t, dt, 1); /* this step's values into its intervals and windows */
}

void kl_series_stats_finish(kl_series_stats *s)
{
    struct kl_series_run_state *r = s->run;
    close_block(s);
    close_week(s);
    close_window(s);
    for (int i = 0; i < r->nthree; i++) {
        int b = r->tp_bus[i];
        s->vuf_mean[b] = s->solved_s > 0 ? s->vuf_mean[b] / s->solved_s : NAN;
    }
    for (int k = 0; k < s->nsections; k++) {
        s->ie_rms[k] = s->solved_s > 0 ? sqrt(r->ie_sq[k] / s->solved_s) : NAN;
        if (r->has_n[k])
            s->in_rms[k] = s->solved_s > 0 ? sqrt(r->in_sq[k] / s->solved_s) : NAN;
    }
}
