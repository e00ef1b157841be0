/* kilter: the unbalance study of a solved feeder.  Per bus: Fortescue of the
 * phase and line voltages (AIEE Trans. 37, 1918), VUF, V0/V1, LVUR, PVUR
 * (unbalance.c), ANSI C84.1 service classes and unbalance levels (limits.c),
 * NEMA MG 1 derating at motor buses (derating.c).  Per section: Fortescue of
 * the currents, I2/I1, I0/I1, the neutral (neutral_sizing.c).  At the head:
 * residual 3I0 against the ground-relay pickup.  Then contributors. */
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "kilter/flow.h"
#include "kilter/study.h"
#include "kl_study.h"

#define NAN_C CMPLX(NAN, NAN)

void kl_study_options_default(kl_study_options *opt)
{
    kl_limits_default(&opt->limits);
    /* Size a neutral for 125 % of its worst current: common practice for
     * continuously loaded conductors (the NEC's 125 % continuous-load rule,
     * from memory), leaving room for load growth and unseen harmonics. */
    opt->sizing_margin = 0.25;
    opt->max_contributors = 10;
    opt->at_bus = -1;
}

void kl_study_free(kl_study *s)
{
    if (!s)
        return;
    void *arrays[] = {
        s->vbus, s->vll012, s->unb, s->v_pu, s->service, s->vuf_flags, s->motor,
        s->derate_zone, s->derate_factor, s->isec, s->iunb, s->i_n1, s->i_e,
        s->i3, s->i_n3, s->i_n_rms, s->neutral_ratio, s->neutral_flag, s->run,
        s->loading, s->loading_emerg, s->loading_flag,
        s->run_construction, s->run_first, s->run_sections, s->run_worst,
        s->run_current, s->run_required, s->run_installed, s->run_conductor,
        s->cbus, s->cstart, s->ckind, s->cid, s->cshare, s->c_unbal_total,
        s->c_three_phase, s->c_remainder
    };
    for (size_t k = 0; k < sizeof arrays / sizeof arrays[0]; k++)
        kl_free(arrays[k]);
    kl_free(s);
}

/* Allocates the per-bus and per-section arrays (runs and contributors are
 * sized later, by the steps that know their counts). */
static kl_study *study_alloc(int nb, int ns, int nl)
{
    kl_study *s = kl_calloc(1, sizeof *s);
    size_t b = (size_t)(nb > 0 ? nb : 1), c = (size_t)(ns > 0 ? ns : 1);
    if (!s)
        return NULL;
    s->nbuses = nb;
    s->nsections = ns;
    s->nloads = nl;
    s->vbus = kl_calloc(b, sizeof *s->vbus);
    s->vll012 = kl_calloc(3 * b, sizeof *s->vll012);
    s->unb = kl_calloc(b, sizeof *s->unb);
    s->v_pu = kl_calloc(3 * b, sizeof *s->v_pu);
    s->service = kl_calloc(3 * b, sizeof *s->service);
    s->vuf_flags = kl_calloc(b, sizeof *s->vuf_flags);
    s->motor = kl_calloc(b, sizeof *s->motor);
    s->derate_zone = kl_calloc(b, sizeof *s->derate_zone);
    s->derate_factor = kl_calloc(b, sizeof *s->derate_factor);
    s->isec = kl_calloc(c, sizeof *s->isec);
    s->iunb = kl_calloc(c, sizeof *s->iunb);
    s->i_n1 = kl_calloc(c, sizeof *s->i_n1);
    s->i_e = kl_calloc(c, sizeof *s->i_e);
    s->i3 = kl_calloc(3 * c, sizeof *s->i3);
    s->i_n3 = kl_calloc(c, sizeof *s->i_n3);
    s->i_n_rms = kl_calloc(c, sizeof *s->i_n_rms);
    s->neutral_ratio = kl_calloc(c, sizeof *s->neutral_ratio);
    s->neutral_flag = kl_calloc(c, sizeof *s->neutral_flag);
    s->run = kl_calloc(c, sizeof *s->run);
    s->loading = kl_calloc(c, sizeof *s->loading);
    s->loading_emerg = kl_calloc(c, sizeof *s->loading_emerg);
    s->loading_flag = kl_calloc(c, sizeof *s->loading_flag);
    if (!s->vbus || !s->vll012 || !s->unb || !s->v_pu || !s->service || !s->vuf_flags
        || !s->loading || !s->loading_emerg || !s->loading_flag
        || !s->motor || !s->derate_zone || !s->derate_factor || !s->isec || !s->iunb
        || !s->i_n1 || !s->i_e || !s->i3 || !s->i_n3 || !s->i_n_rms || !s->neutral_ratio
        || !s->neutral_flag || !s->run) {
        kl_study_free(s);
        return NULL;
    }
    return s;
}

static int bus_phases(const kl_feeder *f, const kl_study_phases *ph, int b)
{
    return ph->bus_phases ? ph->bus_phases[b] : f->buses[b].phases;
}

static int sec_live(const kl_feeder *f, const kl_study_phases *ph, int k)
{
    if (ph->sec_solved)
        return ph->sec_solved[k] != 0;
    return f->sections[k].closed;
}

static kl_status check_inputs(const kl_feeder *f, const kl_study_phases *ph,
                              const kl_study_options *opt, kl_errors *err)
{
    if (!f || !ph || !opt || !ph->v || !ph->v_base_ln || (f->nsections > 0 && !ph->i)
        || (f->nloads > 0 && !ph->s_load)) {
        kl_errors_add(err, NULL, 0, 0, "study",
                      "the study needs a feeder and the solved voltages, bases, "
                      "section currents and load powers (a solved load flow)");
        return KL_EARG;
    }
    if (opt->max_contributors < 0 || !(opt->sizing_margin >= 0) || !isfinite(opt->sizing_margin)) {
        kl_errors_add(err, NULL, 0, 0, "study options",
                      "sizing margin %g and contributor count %d: expected a "
                      "margin >= 0 (e.g. 0.25) and a count >= 0",
                      opt->sizing_margin, opt->max_contributors);
        return KL_EARG;
    }
    return kl_limits_check(&opt->limits, err);
}

/* Adds the bus name to the error the transform just recorded. */
static void name_last_error(kl_errors *err, const char *kind, const char *name)
{
    if (err && err->count > 0)
        snprintf(err->items[err->count - 1].element,
                 sizeof err->items[0].element, "%s %s", kind, name);
}

static void bus_motor(kl_study *s, int b)
{
    kl_derate_zone zone;
    double factor;
    s->derate_zone[b] = -1;
    s->derate_factor[b] = NAN;
    if (!s->motor[b] || !s->unb[b].defined)
        return;
    if (kl_derating_factor(s->unb[b].lvur, &zone, &factor, NULL) == KL_OK) {
        s->derate_zone[b] = (int)zone;
        s->derate_factor[b] = factor;
    }
}

static kl_status eval_bus(const kl_feeder *f, const kl_study_phases *ph,
                          const kl_study_options *opt, kl_study *s, int b, kl_errors *err)
{
    int mask = bus_phases(f, ph, b);
    const kl_complex *v = &ph->v[3 * b];
    /* Beyond an open switch the flow leaves every voltage at exactly zero:
     * a de-energized bus has no indices, and no service class to break. */
    if (v[0] == 0 && v[1] == 0 && v[2] == 0)
        mask = 0;
    for (int p = 0; p < 3; p++) {
        s->vll012[3 * b + p] = NAN_C;
        s->v_pu[3 * b + p] = NAN;
        s->service[3 * b + p] = -1;
    }
    s->unb[b].defined = 0;
    s->unb[b].vuf = s->unb[b].v0_v1 = s->unb[b].vuf_ll = s->unb[b].lvur = s->unb[b].pvur = NAN;
    s->vuf_flags[b] = -1;
    if (mask == 0) { /* dead or unreached bus: nothing is defined */
        memset(&s->vbus[b], 0, sizeof s->vbus[b]);
        bus_motor(s, b);
        return KL_OK;
    }
    if (kl_seq_point_from_phase(mask, v, &s->vbus[b], err) != KL_OK) {
        name_last_error(err, "bus", f->buses[b].name);
        return KL_EARG;
    }
    for (int p = 0; p < 3; p++) {
        if (!(mask & (1 << p)) || !(ph->v_base_ln[b] > 0))
            continue;
        s->v_pu[3 * b + p] = cabs(v[p]) / ph->v_base_ln[b];
        s->service[3 * b + p] = (int)kl_limits_service(&opt->limits, s->v_pu[3 * b + p]);
    }
    if (mask == KL_PH_ABC) {
        kl_seq_from_phase(s->vbus[b].xll, &s->vll012[3 * b]);
        kl_unb_voltage_eval(v, &s->unb[b], NULL);
        s->vuf_flags[b] = kl_limits_vuf(&opt->limits, s->unb[b].vuf);
    }
    bus_motor(s, b);
    return KL_OK;
}

static kl_status eval_section(const kl_feeder *f, const kl_study_phases *ph,
                              kl_study *s, int k, kl_errors *err)
{
    const kl_section *sec = &f->sections[k];
    s->iunb[k].defined = 0;
    s->iunb[k].i2_i1 = s->iunb[k].i0_i1 = NAN;
    s->i_n1[k] = NAN_C;
    s->i_e[k] = NAN_C;
    if (!sec_live(f, ph, k) || sec->phases == 0) {
        memset(&s->isec[k], 0, sizeof s->isec[k]);
        return KL_OK;
    }
    if (kl_seq_point_from_phase(sec->phases, &ph->i[3 * k], &s->isec[k], err) != KL_OK) {
        name_last_error(err, "section", sec->name);
        return KL_EARG;
    }
    if (sec->phases == KL_PH_ABC)
        kl_unb_current_eval(&ph->i[3 * k], &s->iunb[k], NULL);
    /* The neutral exists where the construction kept one (tn rows) or states
     * an ampacity for it; the earth current is known where the flow gave it. */
    if (sec->kind == KL_SEC_LINE && ph->i_neutral) {
        const kl_construction *c = &f->constructions[sec->construction];
        if (c->ntn > 0 || c->nneutrals > 0 || c->neutral_ampacity_a > 0)
            s->i_n1[k] = ph->i_neutral[k];
    }
    if (ph->i_earth)
        s->i_e[k] = ph->i_earth[k];
    return KL_OK;
}

/* Residual and sequence currents leaving the source bus (all head sections). */
static void eval_head(const kl_feeder *f, const kl_study_phases *ph,
                      const kl_study_options *opt, kl_study *s)
{
    kl_complex sum[3] = { 0, 0, 0 };
    int mask = 0;
    s->head_3i0 = 0;
    for (int k = 0; k < f->nsections; k++) {
        const kl_section *sec = &f->sections[k];
        if (kl_sec_up(sec) != f->source.bus || !sec_live(f, ph, k))
            continue;
        for (int p = 0; p < 3; p++)
            if (sec->phases & (1 << p))
                sum[p] += ph->i[3 * k + p];
        mask |= sec->phases;
        s->head_3i0 += s->isec[k].sum;
    }
    for (int p = 0; p < 3; p++)
        s->head_i012[p] = NAN_C;
    if (mask == KL_PH_ABC)
        kl_seq_from_phase(sum, s->head_i012);
    s->relay_flag = kl_limits_share(cabs(s->head_3i0), f->source.relay_pickup_a,
                                    opt->limits.relay_share, &s->relay_ratio);
}

/* Keeps the index of the larger value; NAN never wins. */
static void keep_max(double x, int id, double *best, int *best_id)
{
    if (!isnan(x) && (*best_id < 0 || x > *best)) {
        *best = x;
        *best_id = id;
    }
}

static void summarise_buses(kl_study *s)
{
    double w[4] = { 0, 0, 0, 0 }, lo = 0, hi = 0;
    s->worst_vuf = s->worst_v0 = s->worst_lvur = s->worst_pvur = -1;
    s->lowest_v = s->highest_v = -1;
    s->lowest_ph = s->highest_ph = -1;
    for (int b = 0; b < s->nbuses; b++) {
        keep_max(s->unb[b].vuf, b, &w[0], &s->worst_vuf);
        keep_max(s->unb[b].v0_v1, b, &w[1], &s->worst_v0);
        keep_max(s->unb[b].lvur, b, &w[2], &s->worst_lvur);
        keep_max(s->unb[b].pvur, b, &w[3], &s->worst_pvur);
        if (s->vuf_flags[b] > 0) {
            s->n_vuf_compat += (s->vuf_flags[b] & KL_VUF_OVER_COMPAT) != 0;
            s->n_vuf_supply += (s->vuf_flags[b] & KL_VUF_OVER_SUPPLY) != 0;
        }
        s->n_motor_derate += s->derate_zone[b] == KL_DERATE_CURVE;
        s->n_motor_not_rec += s->derate_zone[b] == KL_DERATE_NOT_RECOMMENDED;
        for (int p = 0; p < 3; p++) {
            double v = s->v_pu[3 * b + p];
            int c = s->service[3 * b + p];
            if (isnan(v))
                continue;
            if (s->lowest_v < 0 || v < lo) { lo = v; s->lowest_v = b; s->lowest_ph = p; }
            if (s->highest_v < 0 || v > hi) { hi = v; s->highest_v = b; s->highest_ph = p; }
            s->n_outside_a += c != KL_SERVICE_A && c != KL_SERVICE_UNDEFINED;
            s->n_outside_b += c == KL_SERVICE_BELOW_B || c == KL_SERVICE_ABOVE_B;
        }
    }
}

static void summarise_sections(kl_study *s)
{
    double wr = 0, wa = 0, wi = 0, wl = 0;
    int by_amps = -1;
    s->worst_neutral = s->worst_i2 = s->worst_loading = -1;
    for (int k = 0; k < s->nsections; k++) {
        keep_max(s->loading[k], k, &wl, &s->worst_loading);
        s->n_loading_over += s->loading_flag[k] == KL_LOADING_OVER;
        s->n_loading_note += s->loading_flag[k] == KL_LOADING_NOTE;
        keep_max(s->iunb[k].i2_i1, k, &wi, &s->worst_i2);
        keep_max(s->neutral_ratio[k], k, &wr, &s->worst_neutral);
        keep_max(s->i_n_rms[k], k, &wa, &by_amps);
        s->n_neutral_over += s->neutral_flag[k] == 1;
    }
    /* Without any neutral ampacity the most loaded neutral is the one
     * carrying the most current. */
    if (s->worst_neutral < 0)
        s->worst_neutral = by_amps;
}

/* Each section's loading against its ratings (kl_loading_section, the
 * flow layer's one definition) and its class against the limits. */
static void eval_loading(const kl_feeder *f, const kl_study_phases *ph, const kl_study_options *opt,
                         kl_study *s)
{
    kl_loading_currents c = {ph->i, ph->i_recv, ph->s_in, ph->sec_solved};
    for (int k = 0; k < f->nsections; k++) {
        kl_loading l;
        kl_loading_section(f, &c, k, &l);
        s->loading[k] = l.worst;
        s->loading_emerg[k] = l.worst_emerg;
        s->loading_flag[k] = kl_limits_loading(&opt->limits, l.worst);
    }
}

static kl_status eval_all(const kl_feeder *f, const kl_study_phases *ph,
                          const kl_study_options *opt, kl_study *s, kl_errors *err)
{
    kl_status st = KL_OK;
    for (int k = 0; k < f->nloads; k++)
        if (f->loads[k].motor && f->loads[k].bus >= 0)
            s->motor[f->loads[k].bus] = 1;
    for (int b = 0; b < f->nbuses; b++)
        if (eval_bus(f, ph, opt, s, b, err) != KL_OK)
            st = KL_EARG;
    for (int k = 0; k < f->nsections; k++)
        if (eval_section(f, ph, s, k, err) != KL_OK)
            st = KL_EARG;
    eval_loading(f, ph, opt, s);
    return st;
}

kl_status kl_study_run(const kl_feeder *f, const kl_study_phases *ph,
                       const kl_study_paths *paths, const kl_study_options *opt,
                       kl_study **out, kl_errors *err)
{
    kl_study *s = NULL;
    const kl_feeder_tree *t = NULL; /* the feeder's, shared by the neutral sizing and
                                     * the contributor ranking */
    kl_feeder_tree *own = NULL;
    kl_status st;
    *out = NULL;
    st = check_inputs(f, ph, opt, err);
    if (st != KL_OK)
        return st;
    s = study_alloc(f->nbuses, f->nsections, f->nloads);
    if (!s) {
        kl_errors_add(err, NULL, 0, 0, "study", "out of memory for the study arrays");
        return KL_ENOMEM;
    }
    st = eval_all(f, ph, opt, s, err);
    if (st == KL_OK && kl_feeder_tree_of(f, &t, &own, NULL) == KL_ENOMEM) {
        kl_errors_add(err, NULL, 0, 0, "study", "out of memory for the feeder tree");
        st = KL_ENOMEM;
    }
    if (st == KL_OK)
        st = kl_neutral_size_on(f, ph, t, opt, s, err);
    if (st != KL_OK)
        goto fail;
    eval_head(f, ph, opt, s);
    summarise_buses(s);
    summarise_sections(s);
    if (paths) {
        st = kl_contrib_rank_on(f, ph, t, paths, opt, s, err);
        if (st != KL_OK)
            goto fail;
    }
    kl_feeder_tree_free(own);
    *out = s;
    return KL_OK;
fail:
    kl_feeder_tree_free(own);
    kl_study_free(s);
    return st;
}
