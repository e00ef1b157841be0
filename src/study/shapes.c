/* kilter: load shapes from CSV (kilter/series.h): a time column and one
 * column per shape, checked row by row; every problem is located
 * (file:line:col) and says what was expected, and nothing is kept then. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include "kilter/series.h"
#include "kl_io.h"
#include "kl_study.h"

#define SHAPES_MAX_BYTES ((size_t)1 << 30)

void kl_shapes_free(kl_shapes *s)
{
    if (!s)
        return;
    for (int k = 0; k < s->nshapes; k++)
        kl_free(s->name[k]);
    kl_free(s->name);
    kl_free(s->absolute);
    kl_free(s->value);
    kl_free(s->t);
    kl_free(s->line);
    kl_free(s->file);
    memset(s, 0, sizeof *s);
}

int kl_shapes_find(const kl_shapes *s, const char *name)
{
    for (int k = 0; k < s->nshapes; k++)
        if (strcmp(s->name[k], name) == 0)
            return k;
    return -1;
}

static char *dup_str(const char *s, size_t n)
{
    char *d = kl_malloc(n + 1);
    if (d) {
        memcpy(d, s, n);
        d[n] = 0;
    }
    return d;
}

/* A header field "name" or "name [kW]" (the unit in any case). */
static kl_status header_field(kl_shapes *s, const kl_csv_stream *c, int k, kl_errors *err)
{
    const char *h = c->f[k + 1].text, *br = strchr(h, '[');
    size_t n = br ? (size_t)(br - h) : strlen(h);
    while (n > 0 && (h[n - 1] == ' ' || h[n - 1] == '\t'))
        n--;
    if (br && !(strcasecmp(br, "[kW]") == 0 || strcasecmp(br, "[pu]") == 0)) {
        kl_errors_add(err, c->file, c->line, c->f[k + 1].col + (int)(br - h), h,
                      "unknown unit '%s': write [kW] for a shape in kilowatts, or nothing (or "
                      "[pu]) for one per unit of each load's power", br);
        return KL_EINPUT;
    }
    if (n == 0) {
        kl_errors_add(err, c->file, c->line, c->f[k + 1].col, NULL,
                      "a shape column without a name: name every column of the header");
        return KL_EINPUT;
    }
    s->absolute[k] = br && strcasecmp(br, "[kW]") == 0;
    s->name_col[k] = c->f[k + 1].col;
    if (!(s->name[k] = dup_str(h, n)))
        return KL_ENOMEM;
    s->nshapes = k + 1; /* owned from here, freed with the shapes */
    for (int j = 0; j < k; j++)
        if (strcmp(s->name[j], s->name[k]) == 0) {
            kl_errors_add(err, c->file, c->line, c->f[k + 1].col, s->name[k],
                          "the shape is named twice in the header (also column %d): give each "
                          "shape its own name", s->name_col[j]);
            return KL_EINPUT;
        }
    return KL_OK;
}

static kl_status read_header(kl_shapes *s, kl_csv_stream *c, kl_errors *err)
{
    int r = kl_csv_stream_row(c);
    if (r <= 0) {
        if (r == 0)
            kl_errors_add(err, c->file, 1, 1, NULL,
                          "the file is empty: expected a header `time,SHAPE,...` and a row per "
                          "time step");
        return KL_EINPUT;
    }
    s->header_line = c->line;
    if (strcasecmp(c->f[0].text, "time") != 0) {
        kl_errors_add(err, c->file, c->line, c->f[0].col, NULL,
                      "the first column must be `time` (ISO 8601 time stamps with their UTC "
                      "offset), not '%s'", c->f[0].text);
        return KL_EINPUT;
    }
    if (c->nfields < 2) {
        kl_errors_add(err, c->file, c->line, c->f[0].col, NULL,
                      "no shape column: add one column per shape after `time`");
        return KL_EINPUT;
    }
    int n = c->nfields - 1;
    s->name = kl_calloc((size_t)n, sizeof *s->name);
    s->absolute = kl_calloc((size_t)n, 1);
    if (!s->name || !s->absolute)
        return KL_ENOMEM;
    for (int k = 0; k < n; k++) {
        kl_status st = header_field(s, c, k, err);
        if (st)
            return st;
    }
    return KL_OK;
}

static kl_status grow(kl_shapes *s, int *cap)
{
    if (s->nsteps < *cap)
        return KL_OK;
    int nc = *cap ? 2 * *cap : 1024;
    double *v = kl_realloc(s->value, sizeof *v * (size_t)nc * (size_t)s->nshapes);
    if (!v)
        return KL_ENOMEM;
    s->value = v;
    kl_time *t = kl_realloc(s->t, sizeof *t * (size_t)nc);
    if (!t)
        return KL_ENOMEM;
    s->t = t;
    int *l = kl_realloc(s->line, sizeof *l * (size_t)nc);
    if (!l)
        return KL_ENOMEM;
    s->line = l;
    *cap = nc;
    return KL_OK;
}

/* The time of the present row, checked against the one before. */
static int row_time(kl_shapes *s, const kl_csv_stream *c, kl_errors *err)
{
    const char *why;
    kl_time t;
    int off, i = s->nsteps;
    if (kl_time_parse(c->f[0].text, &t, &off, &why)) {
        kl_errors_add(err, c->file, c->line, c->f[0].col, NULL, "'%s': %s", c->f[0].text, why);
        return -1;
    }
    if (i == 0)
        s->offset_s = off;
    if (i > 0 && t <= s->t[i - 1]) {
        kl_errors_add(err, c->file, c->line, c->f[0].col, NULL,
                      "'%s' is not after the row before (line %d): rows must be in time order, "
                      "each time once", c->f[0].text, s->line[i - 1]);
        return -1;
    }
    if (i == 1) {
        kl_time dt = t - s->t[0];
        if (dt < KL_SHAPES_MIN_INTERVAL_S || dt > KL_SHAPES_MAX_INTERVAL_S) {
            kl_errors_add(err, c->file, c->line, c->f[0].col, NULL,
                          "the interval is %lld s: expected 1 minute to 1 hour between rows",
                          (long long)dt);
            return -1;
        }
        s->interval_s = (int)dt; /* 60..3600 */
    } else if (i > 1 && t - s->t[i - 1] != s->interval_s) {
        kl_errors_add(err, c->file, c->line, c->f[0].col, NULL,
                      "%lld s after the row before, where the file's interval is %d s: a gap or "
                      "a changed interval (fill the missing rows, or resample to one interval)",
                      (long long)(t - s->t[i - 1]), s->interval_s);
        return -1;
    }
    s->t[i] = t;
    s->line[i] = c->line;
    return 0;
}

static int row_values(kl_shapes *s, const kl_csv_stream *c, kl_errors *err)
{
    if (c->nfields != s->nshapes + 1) {
        kl_errors_add(err, c->file, c->line, c->f[c->nfields - 1].col, NULL,
                      "%d fields where the header has %d: give a time and one value per shape",
                      c->nfields, s->nshapes + 1);
        return -1;
    }
    double *row = s->value + (size_t)s->nsteps * (size_t)s->nshapes;
    for (int k = 0; k < s->nshapes; k++) {
        const char *txt = c->f[k + 1].text;
        char *end;
        double v = strtod(txt, &end);
        if (end == txt || *end || !isfinite(v) || v < 0) {
            kl_errors_add(err, c->file, c->line, c->f[k + 1].col, s->name[k],
                          "'%s': expected a number of 0 or more (%s)", txt,
                          s->absolute[k] ? "the load's real power in kW" : "per unit of the load's power");
            return -1;
        }
        row[k] = s->absolute[k] ? v * 1e3 : v;
    }
    return 0;
}

kl_status kl_shapes_read_buffer(const char *text, size_t len, const char *name, kl_shapes *out,
                                kl_errors *err)
{
    kl_csv_stream c;
    int cap = 0, r, nerr0 = err->count;
    memset(out, 0, sizeof *out);
    if (!(out->file = dup_str(name, strlen(name))))
        return KL_ENOMEM;
    kl_csv_stream_init(&c, text, len, out->file, err);
    kl_status st = read_header(out, &c, err);
    while (!st && (r = kl_csv_stream_row(&c)) != 0) {
        if (r < 0 || (st = grow(out, &cap)))
            break;
        if (row_time(out, &c, err) == 0 && row_values(out, &c, err) == 0)
            out->nsteps++;
        if (err->count - nerr0 >= 20)
            break; /* enough to go on with */
    }
    if (!st && err->count == nerr0 && out->nsteps < 2)
        kl_errors_add(err, out->file, c.line, 1, NULL,
                      "%d time step(s): a series needs at least two rows", out->nsteps);
    if (!st && err->count != nerr0)
        st = KL_EINPUT;
    if (st) {
        kl_shapes_free(out);
        return st;
    }
    return KL_OK;
}

kl_status kl_shapes_read(const char *path, kl_shapes *out, kl_errors *err)
{
    char *text;
    size_t len;
    memset(out, 0, sizeof *out);
    kl_status st = kl_csv_stream_file(path, SHAPES_MAX_BYTES, &text, &len, err);
    if (st)
        return st;
    st = kl_shapes_read_buffer(text, len, path, out, err);
    kl_free(text);
    return st;
}
