/* kilter: every fault type at every bus (kilter/fault.h, kl_fault_study).
 *
 * For each bus studied, in tree order: three-phase (three-phase buses),
 * line-line and line-line-ground on each pair of phases present,
 * line-ground on each phase, each through every fault impedance given; the
 * bus's sequence impedances, X0/X1, R0/X1 and the effectively-grounded test
 * (IEEE Std C62.92.1 ratios), and the earth-fault factor from the bolted
 * line-ground faults (IEC 60071-1: the largest sound-phase voltage during
 * the fault over its value without it). */
#include <math.h>
#include <string.h>
#include "kilter/fault.h"
#include "kl_flow.h"

static const double ZF_EARTH[2] = {0.0, 40.0};
static const double ZF_PHASE[1] = {0.0};

void kl_fault_options_default(kl_fault_options *o)
{
    memset(o, 0, sizeof *o);
    o->zf_earth = ZF_EARTH;
    o->nzf_earth = 2;
    o->zf_phase = ZF_PHASE;
    o->nzf_phase = 1;
}

void kl_fault_result_free(kl_fault_result *r)
{
    if (!r)
        return;
    kl_free(r->bus);
    kl_free(r->cases);
    kl_free(r->order);
    kl_free(r);
}

/* The faults of one bus into out[].spec (NULL: count only). */
static int bus_specs(int mask, const kl_fault_options *o, kl_fault_case *out)
{
    int n = 0;
    if (mask == KL_PH_ABC)
        for (int z = 0; z < o->nzf_phase; z++, n++)
            if (out)
                out[n].spec = (kl_fault_spec){KL_FAULT_3PH, 0, 0, o->zf_phase[z]};
    for (int p = 0; p < 3; p++) {
        int q = (p + 1) % 3;
        if (!(mask & (1 << p)) || !(mask & (1 << q)))
            continue;
        for (int z = 0; z < o->nzf_phase; z++, n++)
            if (out)
                out[n].spec = (kl_fault_spec){KL_FAULT_LL, p, q, o->zf_phase[z]};
        for (int z = 0; z < o->nzf_earth; z++, n++)
            if (out)
                out[n].spec = (kl_fault_spec){KL_FAULT_DLG, p, q, o->zf_earth[z]};
    }
    for (int p = 0; p < 3; p++)
        if (mask & (1 << p))
            for (int z = 0; z < o->nzf_earth; z++, n++)
                if (out)
                    out[n].spec = (kl_fault_spec){KL_FAULT_SLG, p, 0, o->zf_earth[z]};
    return n;
}

static int studied(const kl_network *n, const kl_fault_options *o, int b)
{
    return b < n->nfeeder_buses && n->phases[b] && (!o->at || o->at[b]);
}

/* The feeding section's neutral (sum of the t_n rows) and earth currents. */
static void return_split(const kl_network *n, const kl_fault_thevenin *t, kl_fault_case *c)
{
    int k = n->parent[c->bus];
    c->i_neutral = c->i_earth = NAN + NAN * I;
    if (k < 0 || !c->solved)
        return;
    kl_complex feed[3];
    kl_fault_feed_current(t, c->bus, c->i, c->v, feed);
    const kl_section *sc = &n->feeder->sections[n->br_section[k]];
    if (sc->kind != KL_SEC_LINE)
        return;
    const kl_construction *cn = &n->feeder->constructions[sc->construction];
    kl_complex in = 0;
    for (int r = 0; cn->derived && r < cn->ntn; r++)
        for (int p = 0; p < 3; p++)
            in += cn->tn[r][p] * feed[p];
    c->i_earth = -(feed[0] + feed[1] + feed[2] + in);
    c->i_neutral = cn->derived && cn->ntn > 0 ? in : NAN + NAN * I; /* no neutral conductor */
}

/* Case c, its spec set: solves it and fills the figures. */
static void one_case(const kl_network *n, const kl_fault_thevenin *t, int b, kl_fault_case *c)
{
    kl_fault_spec s = c->spec;
    memset(c, 0, sizeof *c);
    c->bus = b;
    c->spec = s;
    memcpy(c->vpre, t->vpre + 3 * (size_t)b, sizeof c->vpre);
    c->solved = kl_fault_solve(t, n, b, &s, c->i, c->v) == 0;
    c->i_fault = NAN;
    if (c->solved) {
        int faulted = s.kind == KL_FAULT_3PH ? KL_PH_ABC
                      : s.kind == KL_FAULT_SLG ? 1 << s.p : (1 << s.p) | (1 << s.q);
        c->i_fault = 0;
        for (int p = 0; p < 3; p++)
            if (faulted & (1 << p))
                c->i_fault = fmax(c->i_fault, cabs(c->i[p]));
    }
    return_split(n, t, c);
}

/* Sequence impedances, ratios, the effectively-grounded test, the
 * earth-fault factor and the extreme cases of bus b. */
static void bus_figures(const kl_network *n, const kl_fault_thevenin *t, kl_fault_result *r, int b)
{
    kl_fault_bus *fb = &r->bus[b];
    fb->base_ln = n->v_base_ln[b];
    fb->x0_x1 = fb->r0_x1 = fb->earth_fault_factor = NAN;
    fb->effectively_grounded = -1;
    fb->earth_path = !t->open[b];
    if (kl_fault_z01(t, n, b, &fb->z0, &fb->z1) == 0 && cimag(fb->z1) > 0) {
        if (fb->earth_path) {
            fb->x0_x1 = cimag(fb->z0) / cimag(fb->z1);
            fb->r0_x1 = creal(fb->z0) / cimag(fb->z1);
        }
        fb->effectively_grounded = fb->earth_path && fb->x0_x1 > 0 &&
                                   fb->x0_x1 <= KL_FAULT_X0X1_MAX && fb->r0_x1 >= 0 &&
                                   fb->r0_x1 <= KL_FAULT_R0X1_MAX;
    }
    fb->case_max = fb->case_min = -1;
    int unlimited = 0;
    for (int c = fb->first; c < fb->first + fb->ncases; c++) {
        const kl_fault_case *k = &r->cases[c];
        if (!k->solved) {
            unlimited = 1; /* a bolted fault at an ideal source: no largest current */
            continue;
        }
        if (fb->case_max < 0 || k->i_fault > r->cases[fb->case_max].i_fault)
            fb->case_max = c;
        /* without an earth path a line-ground fault draws only the charging
         * current (not modelled): the smallest fault is then a phase fault */
        int earth_only = k->spec.kind == KL_FAULT_SLG && !fb->earth_path;
        if (!earth_only && (fb->case_min < 0 || k->i_fault < r->cases[fb->case_min].i_fault))
            fb->case_min = c;
        if (k->spec.kind != KL_FAULT_SLG || k->spec.zf != 0)
            continue;
        for (int q = 0; q < 3; q++)
            if (q != k->spec.p && (n->phases[b] & (1 << q)) && cabs(k->vpre[q]) > 0) {
                double e = cabs(k->v[q]) / cabs(k->vpre[q]);
                fb->earth_fault_factor = isnan(fb->earth_fault_factor)
                                             ? e : fmax(fb->earth_fault_factor, e);
            }
    }
    if (unlimited)
        fb->case_max = -1;
}

kl_status kl_fault_study(const kl_network *n, const kl_fault_thevenin *t,
                         const kl_fault_options *o, kl_fault_result **out, kl_errors *err)
{
    (void)err;
    *out = NULL;
    kl_fault_result *r = kl_calloc(1, sizeof *r);
    int nf = n->nfeeder_buses, ncases = 0, nstud = 0;
    for (int i = 0; i < n->nbuses; i++)
        if (studied(n, o, n->order[i])) {
            ncases += bus_specs(n->phases[n->order[i]], o, NULL);
            nstud++;
        }
    if (r) {
        r->nbuses = nf;
        r->bus = kl_calloc((size_t)nf, sizeof *r->bus);
        r->cases = kl_calloc((size_t)ncases + 1, sizeof *r->cases);
        r->order = kl_calloc((size_t)nstud + 1, sizeof *r->order);
    }
    if (!r || !r->bus || !r->cases || !r->order) {
        kl_fault_result_free(r);
        return KL_ENOMEM;
    }
    for (int i = 0; i < n->nbuses; i++) {
        int b = n->order[i];
        if (!studied(n, o, b))
            continue;
        int m = bus_specs(n->phases[b], o, r->cases + r->ncases);
        r->order[r->nstudied++] = b;
        r->bus[b].first = r->ncases;
        r->bus[b].ncases = m;
        for (int c = 0; c < m; c++, r->ncases++)
            one_case(n, t, b, &r->cases[r->ncases]);
        bus_figures(n, t, r, b);
    }
    *out = r;
    return KL_OK;
}
