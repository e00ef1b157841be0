/* kilter: switched capacitor banks in a series (kilter/series.h): their
 * controls read from CSV, and the controller's decision at each step.
 *
 *   capacitor,control,on,off,delay_s
 *   cap-gannet,voltage,118,125,60        switch on below 118 V, off above 125 V (120 V base)
 *   cap-kestrel,var,150,-50,30           on above 150 kvar flowing in, off below -50 kvar
 *   cap-tern,time,07:00,19:30,0          on from 07:00 to 19:30 local time
 *
 * The band between the on and off levels is the controller's bandwidth: a
 * voltage bank's `on` must lie below its `off`, a var bank's `on` above its
 * `off` (and their difference above the bank's own kvar, or it hunts).  The
 * condition must hold for the delay, timed from the start of the first step
 * it is seen at, before the bank switches (common practice for capacitor
 * controllers: a time delay rides through transients). */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include "kilter/series.h"
#include "kl_io.h"
#include "kl_study.h"

static int find_cap(const kl_feeder *f, const char *name)
{
    for (int c = 0; c < f->ncapacitors; c++)
        if (strcmp(f->capacitors[c].name, name) == 0)
            return c;
    return -1;
}

static int num(const kl_csv_stream *c, int k, double *v, const char *what)
{
    char *end;
    *v = strtod(c->f[k].text, &end);
    if (end == c->f[k].text || *end || !isfinite(*v)) {
        kl_errors_add(c->err, c->file, c->line, c->f[k].col, NULL, "'%s': expected %s",
                      c->f[k].text, what);
        return -1;
    }
    return 0;
}

/* "HH:MM" local time of day, in seconds. */
static int clock_time(const kl_csv_stream *c, int k, double *v)
{
    const char *s = c->f[k].text;
    if (strlen(s) == 5 && s[2] == ':' && s[0] >= '0' && s[0] <= '2' && s[1] >= '0' && s[1] <= '9'
        && s[3] >= '0' && s[3] <= '5' && s[4] >= '0' && s[4] <= '9') {
        int h = (s[0] - '0') * 10 + s[1] - '0', m = (s[3] - '0') * 10 + s[4] - '0';
        if (h < 24) {
            *v = h * 3600 + m * 60;
            return 0;
        }
    }
    kl_errors_add(c->err, c->file, c->line, c->f[k].col, NULL,
                  "'%s': expected a local time of day HH:MM (e.g. 07:00)", s);
    return -1;
}

static int control_row(kl_series_plan *p, const kl_feeder *f, const kl_csv_stream *c, int *line_of)
{
    if (c->nfields != 5) {
        kl_errors_add(c->err, c->file, c->line, c->f[0].col, NULL,
                      "%d fields: expected capacitor,control,on,off,delay_s", c->nfields);
        return -1;
    }
    int k = find_cap(f, c->f[0].text);
    if (k < 0) {
        kl_errors_add(c->err, c->file, c->line, c->f[0].col, c->f[0].text,
                      "no capacitor of that name in %s", f->path);
        return -1;
    }
    if (line_of[k]) {
        kl_errors_add(c->err, c->file, c->line, c->f[0].col, c->f[0].text,
                      "the bank's control is given twice (also line %d): keep one", line_of[k]);
        return -1;
    }
    kl_series_cap_control *x = &p->cap_ctl[k];
    const char *kind = c->f[1].text;
    if (strcasecmp(kind, "voltage") == 0)
        x->kind = KL_CAP_VOLTAGE;
    else if (strcasecmp(kind, "var") == 0)
        x->kind = KL_CAP_VAR;
    else if (strcasecmp(kind, "time") == 0)
        x->kind = KL_CAP_TIME;
    else {
        kl_errors_add(c->err, c->file, c->line, c->f[1].col, c->f[0].text,
                      "unknown control '%s': expected voltage, var or time", kind);
        return -1;
    }
    int bad = 0;
    if (x->kind == KL_CAP_TIME)
        bad = clock_time(c, 2, &x->on) || clock_time(c, 3, &x->off);
    else
        bad = num(c, 2, &x->on, x->kind == KL_CAP_VOLTAGE ? "volts on the 120 V base" : "kvar")
              || num(c, 3, &x->off, x->kind == KL_CAP_VOLTAGE ? "volts on the 120 V base" : "kvar");
    if (bad || num(c, 4, &x->delay_s, "a delay in seconds"))
        return -1;
    if (x->delay_s < 0 || x->delay_s > 86400) {
        kl_errors_add(c->err, c->file, c->line, c->f[4].col, c->f[0].text,
                      "a delay of %g s: expected 0 to 86400", x->delay_s);
        return -1;
    }
    if (x->kind == KL_CAP_VOLTAGE && !(x->on > 0 && x->on < x->off)) {
        kl_errors_add(c->err, c->file, c->line, c->f[2].col, c->f[0].text,
                      "switch-on voltage %g V must be positive and below the switch-off voltage "
                      "%g V (the band between them is the bandwidth)", x->on, x->off);
        return -1;
    }
    if (x->kind == KL_CAP_VAR && !(x->on > x->off)) {
        kl_errors_add(c->err, c->file, c->line, c->f[2].col, c->f[0].text,
                      "switch-on level %g kvar must be above the switch-off level %g kvar (the "
                      "band between them is the bandwidth)", x->on, x->off);
        return -1;
    }
    if (x->kind == KL_CAP_TIME && x->on == x->off) {
        kl_errors_add(c->err, c->file, c->line, c->f[3].col, c->f[0].text,
                      "switch-on and switch-off times are the same: give two times");
        return -1;
    }
    if (x->kind == KL_CAP_VAR) {
        x->on *= 1e3;
        x->off *= 1e3;
    }
    line_of[k] = c->line;
    return 0;
}

kl_status kl_series_controls_read_buffer(kl_series_plan *p, const kl_feeder *f, const char *text,
                                         size_t len, const char *name, kl_errors *err)
{
    kl_csv_stream c;
    int nerr0 = err->count, r;
    size_t n = (size_t)(f->ncapacitors > 0 ? f->ncapacitors : 1);
    kl_free(p->cap_ctl);
    p->cap_ctl = kl_calloc(n, sizeof *p->cap_ctl);
    int *line_of = kl_calloc(n, sizeof(int));
    if (!p->cap_ctl || !line_of) {
        kl_free(line_of);
        return KL_ENOMEM;
    }
    kl_csv_stream_init(&c, text, len, name, err);
    r = kl_csv_stream_row(&c);
    if (r == 0)
        kl_errors_add(err, name, 1, 1, NULL,
                      "the file is empty: expected the header `capacitor,control,on,off,delay_s`");
    else if (r > 0 && (c.nfields != 5 || strcasecmp(c.f[0].text, "capacitor")
                       || strcasecmp(c.f[1].text, "control") || strcasecmp(c.f[2].text, "on")
                       || strcasecmp(c.f[3].text, "off") || strcasecmp(c.f[4].text, "delay_s")))
        kl_errors_add(err, name, c.line, 1, NULL,
                      "expected the header `capacitor,control,on,off,delay_s`");
    else if (r > 0)
        while (kl_csv_stream_row(&c) > 0 && err->count - nerr0 < 20)
            control_row(p, f, &c, line_of);
    kl_free(line_of);
    if (err->count != nerr0) {
        kl_free(p->cap_ctl);
        p->cap_ctl = NULL;
        return KL_EINPUT;
    }
    return KL_OK;
}

kl_status kl_series_controls_read(kl_series_plan *p, const kl_feeder *f, const char *path,
                                  kl_errors *err)
{
    char *text;
    size_t len;
    kl_status st = kl_csv_stream_file(path, (size_t)1 << 24, &text, &len, err);
    if (st)
        return st;
    st = kl_series_controls_read_buffer(p, f, text, len, path, err);
    kl_free(text);
    return st;
}

/* ---- the controller at a solved step */

/* The bank's voltage: the mean of its phases' magnitudes on the 120 V base. */
static double bank_volts(const kl_feeder *f, const kl_flow_result *res, int c)
{
    const kl_capacitor *cp = &f->capacitors[c];
    double sum = 0;
    int n = 0;
    for (int p = 0; p < 3; p++)
        if (cp->phases & (1 << p) && res->v_base_ln[cp->bus] > 0) {
            sum += cabs(res->v[3 * cp->bus + p]) / res->v_base_ln[cp->bus];
            n++;
        }
    return n ? KL_SERVICE_BASE_V * sum / n : NAN;
}

/* Reactive power flowing toward the bank: into the section that feeds its
 * bus (all phases), or into the feeder at the source bus. */
static double bank_var(const kl_feeder *f, const kl_flow_result *res, int c)
{
    int bus = f->capacitors[c].bus;
    const kl_feeder_tree *t = f->tree;
    int s = t ? kl_feeder_tree_psec(t, bus) : -1;
    const kl_complex *x = s >= 0 ? res->s_in + 3 * s : res->s_head;
    return cimag(x[0]) + cimag(x[1]) + cimag(x[2]);
}

int kl_series_cap_wants(const kl_series_cap_control *x, int on, const kl_feeder *f,
                        const kl_flow_result *res, int c, kl_time t, int offset_s)
{
    switch (x->kind) {
    case KL_CAP_VOLTAGE: {
        double v = bank_volts(f, res, c);
        return on ? !(v > x->off) : v < x->on;
    }
    case KL_CAP_VAR: {
        double q = bank_var(f, res, c);
        return on ? !(q < x->off) : q > x->on;
    }
    case KL_CAP_TIME: {
        kl_time_parts tp;
        kl_time_local(t, offset_s, &tp);
        double s = tp.hour * 3600 + tp.minute * 60 + tp.second;
        return x->on < x->off ? (s >= x->on && s < x->off) : (s >= x->on || s < x->off);
    }
    default:
        return on;
    }
}
