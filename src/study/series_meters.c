/* kilter: interval meter data per customer, mapped to loads (kilter/series.h).
 *
 *   meter,load,time,kwh,kvarh
 *   m-40211,pennywort-lane-3,2026-07-06T00:00+10:00,0.21,0.05
 *
 * Columns by their header name, in any order: `meter` (the meter id),
 * `load` (the feeder load it serves), `time` (ISO 8601 with its UTC offset,
 * the start of the interval), and `kw` (average real power) or `kwh`
 * (energy over the interval), optionally `kvar` or `kvarh`.  The readings
 * must fall on the shapes' time steps; readings outside the series' period
 * are passed over (an export usually covers more), a step missing within it
 * is an error.  A load's power at a step is the sum of its meters': its
 * split among the load's phases, and without a reactive column its power
 * factor, kept from the feeder file. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include "kilter/series.h"
#include "kl_io.h"
#include "kl_study.h"

enum { C_METER, C_LOAD, C_TIME, C_P, C_Q, NCOL };

typedef struct {
    int col[NCOL];          /* field index of each column, -1 absent */
    int energy_p, energy_q; /* 1: kWh / kvarh */
    char **meter;           /* [nmeters] ids (owned) */
    int *meter_load;        /* [nmeters] feeder load */
    int *meter_line;        /* [nmeters] first line */
    int nmeters, cap;
    unsigned char *seen;    /* [nsteps * cap] 1 once read (second pass) */
    int last;               /* meter of the row before: rows come grouped by meter, or by
                               time in one meter order, so it or the next one is this row's */
} reader;

static int header(reader *r, const kl_csv_stream *c)
{
    static const char *const names[][2] = {{"meter", NULL}, {"load", NULL}, {"time", NULL},
                                           {"kw", "kwh"}, {"kvar", "kvarh"}};
    for (int k = 0; k < NCOL; k++)
        r->col[k] = -1;
    for (int i = 0; i < c->nfields; i++) {
        int k = 0, e = 0;
        for (; k < NCOL; k++) {
            if (strcasecmp(c->f[i].text, names[k][0]) == 0)
                break;
            if (names[k][1] && strcasecmp(c->f[i].text, names[k][1]) == 0) {
                e = 1;
                break;
            }
        }
        if (k == NCOL || r->col[k] >= 0) {
            kl_errors_add(c->err, c->file, c->line, c->f[i].col, c->f[i].text, k == NCOL ?
                          "unknown column: expected meter, load, time, kw or kwh, and optionally "
                          "kvar or kvarh" : "the column is given twice: keep one");
            return -1;
        }
        r->col[k] = i;
        if (k == C_P)
            r->energy_p = e;
        if (k == C_Q)
            r->energy_q = e;
    }
    for (int k = 0; k < C_Q; k++)
        if (r->col[k] < 0) {
            kl_errors_add(c->err, c->file, c->line, 1, NULL,
                          "the header lacks the column %s: expected meter, load, time and kw "
                          "(or kwh), optionally kvar (or kvarh)", names[k][0]);
            return -1;
        }
    return 0;
}

/* The meter of this row (added on its first row), or -1 after a message. */
static int meter_of(reader *r, const kl_csv_stream *c, const kl_feeder *f)
{
    const char *id = c->f[r->col[C_METER]].text, *ld = c->f[r->col[C_LOAD]].text;
    int m = -1;
    if (r->nmeters > 0) {
        int a = r->last, b = (r->last + 1) % r->nmeters;
        m = strcmp(r->meter[a], id) == 0 ? a : strcmp(r->meter[b], id) == 0 ? b : -1;
        for (int k = r->nmeters - 1; m < 0 && k >= 0; k--)
            if (strcmp(r->meter[k], id) == 0)
                m = k;
    }
    if (m >= 0)
        r->last = m;
    if (m >= 0) {
        if (strcmp(f->loads[r->meter_load[m]].name, ld)) {
            kl_errors_add(c->err, c->file, c->line, c->f[r->col[C_LOAD]].col, id,
                          "the meter serves load %s on line %d, and %s here: a meter serves one "
                          "load", f->loads[r->meter_load[m]].name, r->meter_line[m], ld);
            return -1;
        }
        return m;
    }
    int l = kl_feeder_find_load(f, ld);
    if (l < 0) {
        kl_errors_add(c->err, c->file, c->line, c->f[r->col[C_LOAD]].col, ld,
                      "no load of that name in %s: map the meter to a load of the feeder", f->path);
        return -1;
    }
    if (r->nmeters == r->cap) {
        int nc = r->cap ? 2 * r->cap : 64;
        char **mm = kl_realloc(r->meter, sizeof *mm * (size_t)nc);
        int *ml = mm ? kl_realloc(r->meter_load, sizeof *ml * (size_t)nc) : NULL;
        int *mn = ml ? kl_realloc(r->meter_line, sizeof *mn * (size_t)nc) : NULL;
        if (mm)
            r->meter = mm;
        if (ml)
            r->meter_load = ml;
        if (mn)
            r->meter_line = mn;
        if (!mn)
            return -2;
        r->cap = nc;
    }
    size_t n = strlen(id);
    if (!(r->meter[r->nmeters] = kl_malloc(n + 1)))
        return -2;
    memcpy(r->meter[r->nmeters], id, n + 1);
    r->meter_load[r->nmeters] = l;
    r->meter_line[r->nmeters] = c->line;
    r->last = r->nmeters;
    return r->nmeters++;
}

static int number(const kl_csv_stream *c, int k, double *v)
{
    const char *s = c->f[k].text;
    char *end;
    *v = strtod(s, &end);
    if (end == s || *end || !isfinite(*v)) {
        kl_errors_add(c->err, c->file, c->line, c->f[k].col, NULL, "'%s': expected a number", s);
        return -1;
    }
    return 0;
}

/* The metered-load index of load l, made on its first meter. */
static int metered(kl_series_plan *p, int l)
{
    if (p->load_meter[l] < 0)
        p->load_meter[l] = p->nmetered++;
    return p->load_meter[l];
}

/* First pass: times on the steps, meters and their loads; second pass
 * (after a clean first one): the readings. */
static int row(reader *r, kl_series_plan *p, const kl_csv_stream *c, const kl_feeder *f, int pass)
{
    const kl_shapes *s = p->shapes;
    if (c->nfields <= r->col[C_P] || c->nfields <= r->col[C_TIME] || c->nfields <= r->col[C_LOAD]
        || c->nfields <= r->col[C_METER] || (r->col[C_Q] >= 0 && c->nfields <= r->col[C_Q])) {
        kl_errors_add(c->err, c->file, c->line, 1, NULL, "%d fields, fewer than the header's",
                      c->nfields);
        return -1;
    }
    kl_time t;
    int off;
    const char *why;
    if (kl_time_parse(c->f[r->col[C_TIME]].text, &t, &off, &why)) {
        kl_errors_add(c->err, c->file, c->line, c->f[r->col[C_TIME]].col, NULL, "'%s': %s",
                      c->f[r->col[C_TIME]].text, why);
        return -1;
    }
    kl_time last = s->t[s->nsteps - 1];
    if (t < s->t[0] || t > last)
        return 0; /* outside the series' period */
    if ((t - s->t[0]) % s->interval_s) {
        kl_errors_add(c->err, c->file, c->line, c->f[r->col[C_TIME]].col, NULL,
                      "'%s' is not on the series' steps (every %d s from line %d of %s): give "
                      "readings for the same intervals as the shapes", c->f[r->col[C_TIME]].text,
                      s->interval_s, s->line[0], s->file);
        return -1;
    }
    int i = (int)((t - s->t[0]) / s->interval_s); /* 0 .. nsteps - 1 */
    int m = meter_of(r, c, f);
    if (m < 0)
        return m;
    if (pass == 0) {
        metered(p, r->meter_load[m]);
        return 0;
    }
    unsigned char *seen = r->seen + (size_t)m * (size_t)s->nsteps + (size_t)i;
    if (*seen) {
        kl_errors_add(c->err, c->file, c->line, c->f[r->col[C_TIME]].col, r->meter[m],
                      "a second reading of the meter for %s: keep one", c->f[r->col[C_TIME]].text);
        return -1;
    }
    *seen = 1;
    double pv, qv = NAN, h = s->interval_s / 3600.0;
    if (number(c, r->col[C_P], &pv) || (r->col[C_Q] >= 0 && number(c, r->col[C_Q], &qv)))
        return -1;
    size_t at = (size_t)i * (size_t)p->nmetered + (size_t)p->load_meter[r->meter_load[m]];
    p->meter_w[at] += 1e3 * (r->energy_p ? pv / h : pv);
    if (r->col[C_Q] >= 0)
        p->meter_var[at] += 1e3 * (r->energy_q ? qv / h : qv);
    return 0;
}

/* Every meter read at every step of the period. */
static void check_complete(const reader *r, const kl_series_plan *p, const char *file, kl_errors *err)
{
    const kl_shapes *s = p->shapes;
    for (int m = 0; m < r->nmeters && err->count < 20; m++)
        for (int i = 0; i < s->nsteps; i++)
            if (!r->seen[(size_t)m * (size_t)s->nsteps + (size_t)i]) {
                char ts[32];
                kl_time_format(s->t[i], s->offset_s, ts);
                kl_errors_add(err, file, r->meter_line[m], 1, r->meter[m],
                              "no reading for %s (the series runs every %d s over the shapes' "
                              "period): fill the gap", ts, s->interval_s);
                break;
            }
}

static void reader_free(reader *r)
{
    for (int m = 0; m < r->nmeters; m++)
        kl_free(r->meter[m]);
    kl_free(r->meter);
    kl_free(r->meter_load);
    kl_free(r->meter_line);
    kl_free(r->seen);
}

/* The readings' arrays once the metered loads are known: [nsteps * nmetered]. */
static kl_status plan_meters_alloc(kl_series_plan *p)
{
    size_t n = (size_t)p->shapes->nsteps * (size_t)(p->nmetered > 0 ? p->nmetered : 1);
    p->meter_w = kl_calloc(n, sizeof(double));
    p->meter_var = kl_calloc(n, sizeof(double));
    return p->meter_w && p->meter_var ? KL_OK : KL_ENOMEM;
}

static kl_status pass_over(reader *r, kl_series_plan *p, const kl_feeder *f, const char *text,
                           size_t len, const char *name, int pass, kl_errors *err)
{
    kl_csv_stream c;
    int nerr0 = err->count, got;
    kl_csv_stream_init(&c, text, len, name, err);
    got = kl_csv_stream_row(&c); /* the header */
    if (got == 0)
        kl_errors_add(err, name, 1, 1, NULL, "the file is empty: expected a header such as "
                      "`meter,load,time,kwh`");
    if (got <= 0 || (pass == 0 && header(r, &c)))
        return KL_EINPUT;
    while ((got = kl_csv_stream_row(&c)) > 0 && err->count - nerr0 < 20)
        if (row(r, p, &c, f, pass) == -2)
            return KL_ENOMEM;
    if (pass == 0 && err->count == nerr0 && r->nmeters == 0)
        kl_errors_add(err, name, c.line, 1, NULL,
                      "no reading within the series' period: check the dates and UTC offsets");
    return err->count != nerr0 ? KL_EINPUT : KL_OK;
}

kl_status kl_series_meters_read_buffer(kl_series_plan *p, const kl_feeder *f, const char *text,
                                       size_t len, const char *name, kl_errors *err)
{
    reader r;
    int nerr0 = err->count;
    memset(&r, 0, sizeof r);
    if (p->load_meter) {
        kl_errors_add(err, name, 0, 0, NULL, "meter data are read once per series: put every "
                      "meter in one file");
        return KL_EARG;
    }
    p->load_meter = kl_malloc(sizeof(int) * (size_t)(f->nloads > 0 ? f->nloads : 1));
    if (!p->load_meter)
        return KL_ENOMEM;
    for (int l = 0; l < f->nloads; l++)
        p->load_meter[l] = -1;
    kl_status st = pass_over(&r, p, f, text, len, name, 0, err);
    if (!st)
        st = plan_meters_alloc(p);
    if (!st && r.nmeters > 0)
        r.seen = kl_calloc((size_t)r.nmeters * (size_t)p->shapes->nsteps, 1);
    if (!st && !r.seen)
        st = KL_ENOMEM;
    if (!st)
        st = pass_over(&r, p, f, text, len, name, 1, err);
    if (!st)
        check_complete(&r, p, name, err);
    if (!st && err->count != nerr0)
        st = KL_EINPUT;
    p->meter_has_q = r.col[C_Q] >= 0;
    reader_free(&r);
    if (st) { /* nothing metered: every load back on its shape */
        kl_free(p->load_meter);
        kl_free(p->meter_w);
        kl_free(p->meter_var);
        p->load_meter = NULL;
        p->meter_w = p->meter_var = NULL;
        p->nmetered = 0;
    }
    return st;
}

kl_status kl_series_meters_read(kl_series_plan *p, const kl_feeder *f, const char *path,
                                kl_errors *err)
{
    char *text;
    size_t len;
    kl_status st = kl_csv_stream_file(path, (size_t)1 << 31, &text, &len, err);
    if (st)
        return st;
    st = kl_series_meters_read_buffer(p, f, text, len, path, err);
    kl_free(text);
    return st;
}
