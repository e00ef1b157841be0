/* kilter: the quasi-static series (kilter/series.h): one load flow per time
 * step, every load at its shape's value for the step.
 *
 * Between steps only values change: the loads' powers are written into the
 * feeder and the load model's records refilled in place
 * (kl_load_parts_repower), the network's voltages and regulator taps stay
 * as the previous step left them, so each solve starts warm and each
 * regulator is re-controlled from where it stood (its tap moves are
 * counted).  Nothing is allocated per step.  A step that does not converge
 * is listed with its time and the load flow's reason, and the next starts
 * from a flat voltage profile. */
#include <math.h>
#include <string.h>
#include "kilter/series.h"
#include "kl_study.h"

void kl_series_options_default(kl_series_options *o)
{
    memset(o, 0, sizeof *o);
    kl_flow_options_default(&o->flow);
    kl_limits_default(&o->limits);
    o->heating_window_s = 3600; /* one hour: common practice for a conductor's heating */
}

/* What one step needs beside the network: the feeder's own powers, kept to
 * be multiplied and given back. */
typedef struct {
    kl_complex *base;   /* [3*nloads] the loads' powers as the feeder file gives them */
    int *scratch;       /* [nbuses + 1] kl_load_parts_repower's workspace */
    int *tap_before;    /* [3*nregulators] */
    double *q_base;     /* [3*ncapacitors] the banks' ratings as the feeder file gives them */
    unsigned char *on;  /* [ncapacitors] 1 in service (every bank at the start) */
    kl_time *since;     /* [ncapacitors] start of the step its controller first wanted the
                           other state at, -1 when it does not */
    unsigned char *done;/* [ncapacitors] switched at this step */
} work;

static void work_free(work *w)
{
    kl_free(w->base);
    kl_free(w->scratch);
    kl_free(w->tap_before);
    kl_free(w->q_base);
    kl_free(w->on);
    kl_free(w->since);
    kl_free(w->done);
}

static kl_status work_alloc(work *w, const kl_feeder *f, const kl_network *net)
{
    memset(w, 0, sizeof *w);
    w->base = kl_malloc(sizeof(kl_complex) * 3 * (size_t)(f->nloads + 1));
    w->scratch = kl_malloc(sizeof(int) * ((size_t)net->nbuses + 1));
    w->tap_before = kl_malloc(sizeof(int) * 3 * (size_t)(f->nregulators + 1));
    w->q_base = kl_malloc(sizeof(double) * 3 * (size_t)(f->ncapacitors + 1));
    w->on = kl_malloc((size_t)f->ncapacitors + 1);
    w->since = kl_malloc(sizeof(kl_time) * (size_t)(f->ncapacitors + 1));
    w->done = kl_malloc((size_t)f->ncapacitors + 1);
    if (!w->base || !w->scratch || !w->tap_before || !w->q_base || !w->on || !w->since || !w->done) {
        work_free(w);
        return KL_ENOMEM;
    }
    for (int l = 0; l < f->nloads; l++)
        memcpy(w->base + 3 * (size_t)l, f->loads[l].s_va, sizeof f->loads[l].s_va);
    for (int c = 0; c < f->ncapacitors; c++) {
        memcpy(w->q_base + 3 * (size_t)c, f->capacitors[c].q_var, sizeof f->capacitors[c].q_var);
        w->on[c] = 1;
        w->since[c] = -1;
    }
    return KL_OK;
}

/* The multiplier of load l's power at step i: its shape's value per unit,
 * or for a kW shape the value over the load's real power (its power factor
 * and its split among its phases kept). */
static double load_factor(const kl_series_plan *p, const work *w, int l, int i)
{
    int k = p->load_shape[l];
    if (k < 0)
        return 1.0;
    const kl_shapes *s = p->shapes;
    double v = s->value[(size_t)i * (size_t)s->nshapes + (size_t)k];
    if (!s->absolute[k])
        return v;
    const kl_complex *b = w->base + 3 * (size_t)l;
    /* not zero: kl_series_plan checks a load, a generator has its nameplate
     * (negative: a generator's power as a load) */
    return v / fabs(creal(b[0]) + creal(b[1]) + creal(b[2]));
}

/* A metered load: its meters' power, split among its entries as the feeder
 * file splits it (equally when the file gives it none); without a reactive
 * reading, the file's power factor per entry. */
static void set_metered(kl_feeder *f, const kl_series_plan *p, const work *w, int l, int i)
{
    const kl_complex *b = w->base + 3 * (size_t)l;
    size_t at = (size_t)i * (size_t)p->nmetered + (size_t)p->load_meter[l];
    double pw = p->meter_w[at], qv = p->meter_var ? p->meter_var[at] : 0;
    double pb = creal(b[0]) + creal(b[1]) + creal(b[2]), qb = cimag(b[0]) + cimag(b[1]) + cimag(b[2]);
    int n = kl_phases_count(f->loads[l].phases);
    for (int e = 0; e < 3; e++) {
        if (!(f->loads[l].phases & (1 << e)) || n == 0)
            continue;
        double sp = pb != 0 ? creal(b[e]) / pb : 1.0 / n;
        double P = pw * sp, Q;
        if (p->meter_has_q)
            Q = qv * (qb != 0 ? cimag(b[e]) / qb : sp);
        else
            Q = creal(b[e]) != 0 ? P * cimag(b[e]) / creal(b[e]) : 0;
        f->loads[l].s_va[e] = CMPLX(P, Q);
    }
}

static void set_loads(kl_feeder *f, const kl_series_plan *p, const work *w, int i)
{
    for (int l = 0; l < f->nloads; l++) {
        if (p->load_meter && p->load_meter[l] >= 0) {
            set_metered(f, p, w, l, i);
            continue;
        }
        double m = load_factor(p, w, l, i);
        for (int e = 0; e < 3; e++)
            f->loads[l].s_va[e] = w->base[3 * (size_t)l + (size_t)e] * m;
    }
}

static void set_bank(kl_feeder *f, const work *w, int c)
{
    for (int e = 0; e < 3; e++)
        f->capacitors[c].q_var[e] = w->on[c] ? w->q_base[3 * (size_t)c + (size_t)e] : 0;
}

static void restore_loads(kl_feeder *f, const work *w)
{
    for (int l = 0; l < f->nloads; l++)
        memcpy(f->loads[l].s_va, w->base + 3 * (size_t)l, sizeof f->loads[l].s_va);
    for (int c = 0; c < f->ncapacitors; c++)
        memcpy(f->capacitors[c].q_var, w->q_base + 3 * (size_t)c, sizeof f->capacitors[c].q_var);
}

/* The controllers of the switched banks at the solved step i: a bank whose
 * controller has wanted the other state for its delay switches (once a
 * step).  Returns the number switched; their ratings are set in the feeder. */
static int control_banks(kl_feeder *f, const kl_series_plan *p, work *w, kl_series_stats *s,
                         const kl_flow_result *res, int i)
{
    const kl_shapes *sh = p->shapes;
    kl_time t = sh->t[i];
    int n = 0;
    for (int c = 0; c < f->ncapacitors; c++) {
        const kl_series_cap_control *x = &p->cap_ctl[c];
        if (x->kind == KL_CAP_FIXED || w->done[c])
            continue;
        int want = kl_series_cap_wants(x, w->on[c], f, res, c, t, sh->offset_s);
        if (want == w->on[c]) {
            w->since[c] = -1;
            continue;
        }
        if (w->since[c] < 0)
            w->since[c] = t;
        if ((double)(t - w->since[c]) < x->delay_s)
            continue;
        w->on[c] = (unsigned char)want;
        w->since[c] = -1;
        w->done[c] = 1;
        set_bank(f, w, c);
        s->cap_switches[c]++;
        n++;
    }
    return n;
}

static void count_taps(kl_series_stats *s, const kl_network *net, const work *w, int nreg)
{
    for (int k = 0; k < 3 * nreg; k++) {
        int d = net->tap[k] - w->tap_before[k];
        s->reg_ops[k] += d < 0 ? -d : d;
    }
}

/* Volt-var inverters: each one's reactive power set from its terminal
 * voltage on the curve, solved again until none changes by more than 1e-4
 * of its nameplate (half of each change applied, so that a steep curve
 * against a weak feeder settles rather than swings). */
static kl_status settle_volt_var(kl_feeder *f, kl_network *net, const kl_series_plan *p,
                                 const kl_series_options *o, kl_flow_result *res, work *w,
                                 kl_errors *step_err)
{
    const kl_series_generators *g = p->gens;
    kl_status st = KL_OK;
    for (int round = 0; round < 40 && !st; round++) {
        double worst = 0;
        for (int pass = 0; pass < 2; pass++) /* the largest change, then the changes */
            for (int k = 0; k < g->n; k++) {
                if (!g->volt_var[k])
                    continue;
                kl_load *ld = &f->loads[g->load[k]];
                int ph = ld->phases == 1 ? 0 : ld->phases == 2 ? 1 : 2;
                double v = cabs(res->v[3 * ld->bus + ph]) / res->v_base_ln[ld->bus];
                double q = -kl_series_volt_var(v) * g->kva[k]; /* injecting: a negative load var */
                double dq = q - cimag(ld->s_va[ph]);
                if (pass == 0)
                    worst = fmax(worst, fabs(dq) / g->kva[k]);
                else if (worst >= 1e-4)
                    ld->s_va[ph] += I * 0.5 * dq;
            }
        if (worst < 1e-4)
            return KL_OK;
        kl_load_parts_repower(net, w->scratch);
        st = kl_flow_solve(net, &o->flow, res, step_err);
    }
    return st;
}

/* One step: loads set, solved; the statistics told either way. */
static kl_status run_step(kl_feeder *f, kl_network *net, const kl_series_plan *p,
                          const kl_series_options *o, kl_flow_result *res, work *w,
                          kl_series_stats *s, int i, kl_errors *step_err)
{
    const kl_shapes *sh = p->shapes;
    set_loads(f, p, w, i);
    if (o->before_step) {
        kl_status hs = o->before_step(o->before_ctx, i, sh->t[i], f, net, step_err);
        if (hs)
            return hs;
    }
    kl_load_parts_repower(net, w->scratch);
    memcpy(w->tap_before, net->tap, sizeof(int) * 3 * (size_t)f->nregulators);
    kl_errors_clear(step_err);
    kl_status st = kl_flow_solve(net, &o->flow, res, step_err);
    if (!st && p->cap_ctl) {
        /* a bank switched changes the voltages the others see: solve again
         * until none switches (each bank at most once a step) */
        memset(w->done, 0, (size_t)f->ncapacitors + 1);
        while (!st && control_banks(f, p, w, s, res, i) > 0) {
            kl_load_parts_repower(net, w->scratch);
            st = kl_flow_solve(net, &o->flow, res, step_err);
        }
    }
    if (!st && p->gens)
        st = settle_volt_var(f, net, p, o, res, w, step_err);
    if (st == KL_ENOCONV) {
        char why[480] = "did not converge";
        if (step_err->count > 0)
            kl_error_format(&step_err->items[0], why, sizeof why);
        kl_series_stats_step(s, f, sh->t[i], sh->interval_s, NULL, &o->limits, why);
        net->v_valid = 0; /* the next step from a flat start, not from a diverged state */
        memcpy(net->tap, w->tap_before, sizeof(int) * 3 * (size_t)f->nregulators);
        for (int r = 0; r < f->nregulators; r++)
            kl_regulator_update(net, r);
        if (o->on_step)
            o->on_step(o->ctx, i, sh->t[i], res, 0);
        return KL_OK;
    }
    if (st)
        return st;
    for (int c = 0; c < f->ncapacitors; c++)
        if (w->on[c])
            s->cap_on_s[c] += sh->interval_s;
    if (i > 0) /* the first step settles from the file's taps: the position
                * before the series is not known, so no operation is counted */
        count_taps(s, net, w, f->nregulators);
    kl_series_stats_step(s, f, sh->t[i], sh->interval_s, res, &o->limits, NULL);
    if (o->on_step)
        o->on_step(o->ctx, i, sh->t[i], res, 1);
    return KL_OK;
}

kl_status kl_series_run(kl_feeder *f, kl_network *net, const kl_series_plan *plan,
                        const kl_series_options *o, kl_flow_result *res, kl_series_stats **out,
                        kl_errors *err)
{
    work w;
    kl_errors step_err;
    *out = NULL;
    if (plan->nloads != f->nloads || !plan->shapes || net->feeder != f) {
        kl_errors_add(err, f->path, 0, 0, NULL,
                      "the series plan was made for another feeder or network (%d loads planned, "
                      "%d in the feeder)", plan->nloads, f->nloads);
        return KL_EARG;
    }
    if (o->heating_window_s < 60) {
        kl_errors_add(err, NULL, 0, 0, "heating window",
                      "%d s: expected at least one minute", o->heating_window_s);
        return KL_EINPUT;
    }
    kl_status st = kl_limits_check(&o->limits, err);
    if (st)
        return st;
    if ((st = work_alloc(&w, f, net)))
        return st;
    if ((st = kl_series_stats_alloc(f, o, plan->shapes->offset_s, out))) {
        work_free(&w);
        return st;
    }
    for (int c = 0; plan->cap_ctl && c < f->ncapacitors; c++)
        (*out)->cap_kind[c] = (unsigned char)plan->cap_ctl[c].kind; /* 0-3 */
    kl_errors_init(&step_err);
    for (int i = 0; i < plan->shapes->nsteps && !st; i++)
        st = run_step(f, net, plan, o, res, &w, *out, i, &step_err);
    if (st)
        for (int k = 0; k < step_err.count; k++) {
            const kl_error_item *it = &step_err.items[k];
            kl_errors_add(err, it->file, it->line, it->col, it->element, "%s", it->message);
        }
    kl_errors_free(&step_err);
    restore_loads(f, &w);
    kl_load_parts_repower(net, w.scratch);
    work_free(&w);
    if (st) {
        kl_series_stats_free(*out);
        *out = NULL;
        return st;
    }
    kl_series_stats_finish(*out);
    return KL_OK;
}
