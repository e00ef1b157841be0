/* kilter: which load shape drives each load (kilter/series.h): feeder-wide,
 * or load by load from an assignment CSV; a load without a shape keeps the
 * power its feeder file gives. */
#include <math.h>
#include <string.h>
#include <strings.h>
#include "kilter/series.h"
#include "kl_io.h"
#include "kl_study.h"

kl_status kl_series_plan_init(kl_series_plan *p, const kl_feeder *f, const kl_shapes *s,
                              kl_errors *err)
{
    (void)err;
    memset(p, 0, sizeof *p);
    p->shapes = s;
    p->nloads = f->nloads;
    p->load_shape = kl_malloc(sizeof(int) * (size_t)(f->nloads > 0 ? f->nloads : 1));
    if (!p->load_shape)
        return KL_ENOMEM;
    for (int l = 0; l < f->nloads; l++)
        p->load_shape[l] = -1;
    return KL_OK;
}

void kl_series_plan_free(kl_series_plan *p)
{
    if (!p)
        return;
    kl_free(p->load_shape);
    kl_free(p->load_meter);
    kl_free(p->meter_w);
    kl_free(p->meter_var);
    kl_free(p->cap_ctl);
    memset(p, 0, sizeof *p);
}

static double load_p(const kl_load *ld)
{
    return creal(ld->s_va[0]) + creal(ld->s_va[1]) + creal(ld->s_va[2]);
}

/* A kW shape sets the load's real power: it needs some to share out. */
static int fits(const kl_series_plan *p, const kl_feeder *f, int l, int k)
{
    return !p->shapes->absolute[k] || load_p(&f->loads[l]) > 0;
}

kl_status kl_series_plan_default(kl_series_plan *p, const kl_feeder *f, const char *name,
                                 kl_errors *err)
{
    int k = kl_shapes_find(p->shapes, name);
    if (k < 0) {
        kl_errors_add(err, p->shapes->file, p->shapes->header_line, 1, name,
                      "no such shape in the header: name one of its columns");
        return KL_EINPUT;
    }
    for (int l = 0; l < p->nloads; l++) {
        if (p->load_shape[l] >= 0)
            continue;
        if (!fits(p, f, l, k)) {
            kl_errors_add(err, f->path, f->loads[l].loc.line, f->loads[l].loc.col, f->loads[l].name,
                          "the shape '%s' is in kW, but the load has no real power to share it "
                          "among its phases: give it a power, or a per-unit shape", name);
            return KL_EINPUT;
        }
        p->load_shape[l] = k;
    }
    return KL_OK;
}

/* One row `load,shape`: into shape[], or a located message. */
static int assign_row(const kl_series_plan *p, const kl_feeder *f, const kl_csv_stream *c, int *shape,
                      int *line_of, int *feeder_shape)
{
    if (c->nfields != 2) {
        kl_errors_add(c->err, c->file, c->line, c->f[0].col, NULL,
                      "%d fields: expected a load name and a shape name", c->nfields);
        return -1;
    }
    int k = kl_shapes_find(p->shapes, c->f[1].text);
    if (k < 0) {
        kl_errors_add(c->err, c->file, c->line, c->f[1].col, c->f[1].text,
                      "no such shape in %s: name one of its columns", p->shapes->file);
        return -1;
    }
    int l = kl_feeder_find_load(f, c->f[0].text);
    if (l < 0 && strcmp(c->f[0].text, "feeder") == 0) {
        if (*feeder_shape >= 0) {
            kl_errors_add(c->err, c->file, c->line, c->f[0].col, "feeder",
                          "the feeder-wide shape is given twice: keep one row `feeder,SHAPE`");
            return -1;
        }
        *feeder_shape = k;
        return 0;
    }
    if (l < 0) {
        kl_errors_add(c->err, c->file, c->line, c->f[0].col, c->f[0].text,
                      "no load of that name in %s: name a load of the feeder, or write `feeder` "
                      "for every load not named", f->path);
        return -1;
    }
    if (shape[l] >= 0) {
        kl_errors_add(c->err, c->file, c->line, c->f[0].col, c->f[0].text,
                      "the load is given a shape twice (also line %d): keep one row", line_of[l]);
        return -1;
    }
    if (!fits(p, f, l, k)) {
        kl_errors_add(c->err, c->file, c->line, c->f[1].col, c->f[0].text,
                      "the shape is in kW, but the load has no real power to share it among its "
                      "phases: give it a power, or a per-unit shape");
        return -1;
    }
    shape[l] = k;
    line_of[l] = c->line;
    return 0;
}

static int header_ok(kl_csv_stream *c)
{
    int r = kl_csv_stream_row(c);
    if (r == 0)
        kl_errors_add(c->err, c->file, 1, 1, NULL, "the file is empty: expected a header `load,shape`");
    if (r <= 0)
        return 0;
    if (c->nfields != 2 || strcasecmp(c->f[0].text, "load") || strcasecmp(c->f[1].text, "shape")) {
        kl_errors_add(c->err, c->file, c->line, c->f[0].col, NULL,
                      "expected the header `load,shape`");
        return 0;
    }
    return 1;
}

kl_status kl_series_plan_read_buffer(kl_series_plan *p, const kl_feeder *f, const char *text,
                                     size_t len, const char *name, kl_errors *err)
{
    kl_csv_stream c;
    int nerr0 = err->count, feeder_shape = -1, r;
    size_t n = (size_t)(p->nloads > 0 ? p->nloads : 1);
    int *shape = kl_malloc(sizeof(int) * n), *line_of = kl_malloc(sizeof(int) * n);
    if (!shape || !line_of) {
        kl_free(shape);
        kl_free(line_of);
        return KL_ENOMEM;
    }
    for (int l = 0; l < p->nloads; l++)
        shape[l] = -1;
    kl_csv_stream_init(&c, text, len, name, err);
    if (header_ok(&c))
        while ((r = kl_csv_stream_row(&c)) > 0 && err->count - nerr0 < 20)
            assign_row(p, f, &c, shape, line_of, &feeder_shape);
    kl_status st = err->count != nerr0 ? KL_EINPUT : KL_OK;
    if (!st) {
        for (int l = 0; l < p->nloads; l++)
            if (shape[l] >= 0)
                p->load_shape[l] = shape[l];
        if (feeder_shape >= 0)
            st = kl_series_plan_default(p, f, p->shapes->name[feeder_shape], err);
    }
    kl_free(shape);
    kl_free(line_of);
    return st;
}

kl_status kl_series_plan_read(kl_series_plan *p, const kl_feeder *f, const char *path,
                              kl_errors *err)
{
    char *text;
    size_t len;
    kl_status st = kl_csv_stream_file(path, (size_t)1 << 28, &text, &len, err);
    if (st)
        return st;
    st = kl_series_plan_read_buffer(p, f, text, len, path, err);
    kl_free(text);
    return st;
}
