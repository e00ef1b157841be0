/* kilter: single-phase rooftop photovoltaic systems in a series
 * (kilter/series.h), each a negative load on its phase with its own shape.
 *
 *   name,bus,phase,kw,power_factor,shape,control
 *   pv-larkspur-4,kestrel-3,b,5,1,solar,constant-pf
 *   pv-larkspur-9,kestrel-5,c,6.6,0.95 absorbing,solar,volt-var
 *
 * `kw` is the inverter's ac nameplate (taken as its apparent-power rating
 * too); the shape gives the output per unit of it (or in kW for a [kW]
 * shape).  constant-pf holds the power factor, absorbing (the inverter draws
 * vars, as a voltage-rise setting does) or injecting; volt-var sets the
 * reactive power from the voltage at the inverter's terminals on the default
 * curve of IEEE Std 1547-2018 for Category B (Table 8, from memory):
 *   V1 0.92 pu  Q1 +44 %   V2 0.98 pu  Q2 0   V3 1.02 pu  Q3 0   V4 1.08 pu  Q4 -44 %
 * (Q in per cent of the nameplate apparent power, + injecting), linear
 * between the points and held beyond them. */
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <strings.h>
#include "kilter/series.h"
#include "kl_io.h"
#include "kl_study.h"

/* IEEE Std 1547-2018 Table 8, Category B default volt-var settings (from memory). */
static const double VV_V[4] = {0.92, 0.98, 1.02, 1.08};
static const double VV_Q[4] = {0.44, 0.0, 0.0, -0.44};

double kl_series_volt_var(double v_pu)
{
    if (!(v_pu > VV_V[0]))
        return VV_Q[0];
    for (int k = 1; k < 4; k++)
        if (v_pu <= VV_V[k])
            return VV_Q[k - 1] + (VV_Q[k] - VV_Q[k - 1]) * (v_pu - VV_V[k - 1]) / (VV_V[k] - VV_V[k - 1]);
    return VV_Q[3];
}

void kl_series_generators_free(kl_series_generators *g)
{
    if (!g)
        return;
    for (int k = 0; k < g->n; k++)
        kl_free(g->name[k]);
    kl_free(g->name);
    kl_free(g->load);
    kl_free(g->shape);
    kl_free(g->kva);
    kl_free(g->volt_var);
    memset(g, 0, sizeof *g);
}

static int grow(kl_series_generators *g, int *cap)
{
    if (g->n < *cap)
        return 0;
    int nc = *cap ? 2 * *cap : 16;
    char **nm = kl_realloc(g->name, sizeof *nm * (size_t)nc);
    if (nm)
        g->name = nm;
    int *ld = nm ? kl_realloc(g->load, sizeof *ld * (size_t)nc) : NULL;
    if (ld)
        g->load = ld;
    int *sh = ld ? kl_realloc(g->shape, sizeof *sh * (size_t)nc) : NULL;
    if (sh)
        g->shape = sh;
    double *kv = sh ? kl_realloc(g->kva, sizeof *kv * (size_t)nc) : NULL;
    if (kv)
        g->kva = kv;
    unsigned char *vv = kv ? kl_realloc(g->volt_var, (size_t)nc) : NULL;
    if (!vv)
        return -1;
    g->volt_var = vv;
    *cap = nc;
    return 0;
}

/* "0.95 absorbing", "0.9 injecting" or "1": the tangent of the angle, +
 * when the inverter draws vars. */
static int power_factor(const kl_csv_stream *c, int k, double *tan_phi)
{
    const char *s = c->f[k].text;
    char *end;
    double pf = strtod(s, &end);
    while (*end == ' ')
        end++;
    int sign = 0;
    if (strcasecmp(end, "absorbing") == 0)
        sign = 1;
    else if (strcasecmp(end, "injecting") == 0)
        sign = -1;
    if (end == s || !(pf > 0 && pf <= 1) || (*end && !sign) || (pf < 1 && !sign)) {
        kl_errors_add(c->err, c->file, c->line, c->f[k].col, NULL,
                      "'%s': expected a power factor above 0 up to 1, below 1 followed by "
                      "absorbing or injecting (e.g. 0.95 absorbing)", s);
        return -1;
    }
    *tan_phi = sign * sqrt(1 - pf * pf) / pf;
    return 0;
}

static int gen_row(kl_series_generators *g, kl_feeder *f, const kl_shapes *sh,
                   const kl_csv_stream *c, double *tan_phi, int *phase, int *bus)
{
    if (c->nfields != 7) {
        kl_errors_add(c->err, c->file, c->line, c->f[0].col, NULL,
                      "%d fields: expected name,bus,phase,kw,power_factor,shape,control", c->nfields);
        return -1;
    }
    const char *nm = c->f[0].text;
    *bus = kl_feeder_find_bus(f, c->f[1].text);
    if (*bus < 0) {
        kl_errors_add(c->err, c->file, c->line, c->f[1].col, nm, "no bus '%s' in %s", c->f[1].text,
                      f->path);
        return -1;
    }
    const char *ph = c->f[2].text;
    *phase = strlen(ph) == 1 && ph[0] >= 'a' && ph[0] <= 'c' ? ph[0] - 'a' : -1;
    if (*phase < 0 || !(f->buses[*bus].phases & (1 << *phase)) || kl_deenergized_bus(f, *bus)) {
        kl_errors_add(c->err, c->file, c->line, c->f[2].col, nm,
                      "'%s': expected one phase (a, b or c) that the energized bus %s has", ph,
                      f->buses[*bus].name);
        return -1;
    }
    char *end;
    double kw = strtod(c->f[3].text, &end);
    if (end == c->f[3].text || *end || !(kw > 0 && kw < 1e5)) {
        kl_errors_add(c->err, c->file, c->line, c->f[3].col, nm,
                      "'%s': expected the ac nameplate in kW, above 0", c->f[3].text);
        return -1;
    }
    int k = kl_shapes_find(sh, c->f[5].text);
    if (k < 0) {
        kl_errors_add(c->err, c->file, c->line, c->f[5].col, nm, "no shape '%s' in %s",
                      c->f[5].text, sh->file);
        return -1;
    }
    int vv = strcasecmp(c->f[6].text, "volt-var") == 0;
    if (!vv && strcasecmp(c->f[6].text, "constant-pf")) {
        kl_errors_add(c->err, c->file, c->line, c->f[6].col, nm,
                      "unknown control '%s': expected constant-pf or volt-var", c->f[6].text);
        return -1;
    }
    if (power_factor(c, 4, tan_phi))
        return -1;
    size_t n = strlen(nm);
    if (!(g->name[g->n] = kl_malloc(n + 1)))
        return -2;
    memcpy(g->name[g->n], nm, n + 1);
    g->shape[g->n] = k;
    g->kva[g->n] = kw * 1e3;
    g->volt_var[g->n] = (unsigned char)vv;
    return 0;
}

/* Appends generator i as a wye constant-power load of -P (+ j P tan phi). */
static kl_status append_load(kl_feeder *f, kl_series_generators *g, int i, int bus, int phase,
                             double tan_phi, int line)
{
    kl_load *ld = kl_realloc(f->loads, sizeof *ld * (size_t)(f->nloads + 1));
    if (!ld)
        return KL_ENOMEM;
    f->loads = ld;
    kl_load *x = &f->loads[f->nloads];
    memset(x, 0, sizeof *x);
    x->name = g->name[i];
    x->bus = bus;
    x->section = -1;
    x->conn = KL_CONN_WYE;
    x->model = KL_LOAD_PQ;
    x->phases = (uint8_t)(1 << phase); /* 1, 2 or 4 */
    x->pinned = 1;
    x->zip[2] = 1;
    x->s_va[phase] = CMPLX(-g->kva[i], g->kva[i] * tan_phi);
    x->loc.line = line;
    x->loc.col = 1;
    g->load[i] = f->nloads++;
    return KL_OK;
}

kl_status kl_series_generators_read_buffer(kl_series_generators *g, kl_feeder *f,
                                           const kl_shapes *sh, const char *text, size_t len,
                                           const char *name, kl_errors *err)
{
    kl_csv_stream c;
    int nerr0 = err->count, cap = 0, r, nloads0 = f->nloads;
    kl_status st = KL_OK;
    memset(g, 0, sizeof *g);
    kl_csv_stream_init(&c, text, len, name, err);
    r = kl_csv_stream_row(&c);
    static const char *const H[7] = {"name", "bus", "phase", "kw", "power_factor", "shape", "control"};
    int hdr = r > 0 && c.nfields == 7;
    for (int k = 0; hdr && k < 7; k++)
        hdr = strcasecmp(c.f[k].text, H[k]) == 0;
    if (!hdr && r >= 0)
        kl_errors_add(err, name, r > 0 ? c.line : 1, 1, NULL,
                      "expected the header `name,bus,phase,kw,power_factor,shape,control`");
    while (!st && hdr && (r = kl_csv_stream_row(&c)) > 0 && err->count - nerr0 < 20) {
        double tan_phi;
        int phase, bus;
        if (grow(g, &cap)) {
            st = KL_ENOMEM;
            break;
        }
        int got = gen_row(g, f, sh, &c, &tan_phi, &phase, &bus);
        if (got == -2)
            st = KL_ENOMEM;
        else if (got == 0 && err->count == nerr0)
            st = append_load(f, g, g->n++, bus, phase, tan_phi, c.line);
        else if (got == 0)
            kl_free(g->name[g->n]); /* an earlier row failed: nothing appended any more */
    }
    if (!st && err->count != nerr0)
        st = KL_EINPUT;
    if (st) {
        f->nloads = nloads0; /* the feeder as it was */
        kl_series_generators_free(g);
    }
    return st;
}

kl_status kl_series_generators_read(kl_series_generators *g, kl_feeder *f, const kl_shapes *sh,
                                    const char *path, kl_errors *err)
{
    char *text;
    size_t len;
    memset(g, 0, sizeof *g);
    kl_status st = kl_csv_stream_file(path, (size_t)1 << 26, &text, &len, err);
    if (st)
        return st;
    st = kl_series_generators_read_buffer(g, f, sh, text, len, path, err);
    kl_free(text);
    return st;
}

kl_status kl_series_plan_generators(kl_series_plan *p, const kl_series_generators *g)
{
    for (int k = 0; k < g->n; k++) {
        if (g->load[k] >= p->nloads)
            return KL_EARG;
        p->load_shape[g->load[k]] = g->shape[k];
    }
    p->gens = g;
    return KL_OK;
}
