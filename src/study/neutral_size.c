/* kilter: neutral current and neutral sizing.
 *
 *   I_n3(section) = sum over wye loads downstream, over their phases p, of
 *                   h3 * |I_p|                         (triplen, arithmetic)
 *   I_n,rms       = sqrt(|I_n1|^2 + I_n3^2)            (fundamental + triplen)
 *
 * Third-harmonic currents of the three phases are displaced by 3 x 120 deg =
 * 360 deg, i.e. in phase, so they add arithmetically in the neutral instead
 * of cancelling (common practice).  Assumptions (docs/study.md): all of the
 * triplen returns by the metallic neutral (conservative for sizing); delta-
 * connected loads circulate their triplens inside the delta and add none;
 * a transformer passes them up only between two grounded-wye windings
 * (scaled by the voltage ratio), any other winding traps them.
 *
 * A neutral run is a connected chain (or subtree) of sections of one
 * construction; it is sized for its worst section. */
#include <math.h>
#include "kilter/study.h"
#include "kl_study.h"

/* Triplen current a load puts into the neutral at its own point. */
static double load_triplen(const kl_feeder *f, const kl_study_phases *ph, int L)
{
    const kl_load *ld = &f->loads[L];
    int bus = ld->bus >= 0 ? ld->bus : kl_sec_down(&f->sections[ld->section]);
    double sum = 0;
    if (!(ld->third_harmonic > 0) || ld->conn != KL_CONN_WYE)
        return 0;
    for (int p = 0; p < 3; p++) {
        double vm = cabs(ph->v[3 * bus + p]);
        if ((ld->phases & (1 << p)) && vm > 0)
            sum += cabs(ph->s_load[3 * L + p]) / vm;
    }
    return ld->third_harmonic * sum;
}

/* Share of the triplen current on the low side of section k that appears on
 * its high side: 1 for lines, switches and regulators; the voltage ratio for
 * a grounded-wye/grounded-wye transformer; 0 for any other transformer. */
static double pass_up(const kl_feeder *f, int k)
{
    const kl_section *sec = &f->sections[k];
    const kl_transformer *t;
    if (sec->kind != KL_SEC_TRANSFORMER)
        return 1.0;
    if (sec->device < 0 || sec->device >= f->ntransformers)
        return 0.0;
    t = &f->transformers[sec->device];
    if (t->high != KL_WINDING_GRD_WYE || t->low != KL_WINDING_GRD_WYE || !(t->kv_high > 0))
        return 0.0;
    return t->kv_low / t->kv_high;
}

/* Sums triplens from the leaves up: children follow parents in the tree. */
static void triplen_sum(const kl_feeder *f, const kl_study_phases *ph,
                        const kl_feeder_tree *t, double *at_bus, kl_study *s)
{
    for (int k = 0; k < f->nsections; k++)
        s->i_n3[k] = 0;
    for (int L = 0; L < f->nloads; L++) {
        double h = load_triplen(f, ph, L);
        if (f->loads[L].bus >= 0)
            at_bus[f->loads[L].bus] += h;
        else
            s->i_n3[f->loads[L].section] += h;
    }
    for (int n = t->nlive - 1; n >= 1; n--) {
        int k = t->sec[n], from = t->order[t->up[n]], up;
        s->i_n3[k] += at_bus[t->order[n]];
        up = t->sec[t->up[n]];
        if (up >= 0)
            at_bus[from] += pass_up(f, k) * s->i_n3[k];
    }
}

static void combine(const kl_feeder *f, const kl_study_options *opt, kl_study *s)
{
    for (int k = 0; k < f->nsections; k++) {
        const kl_section *sec = &f->sections[k];
        double amp = 0;
        s->i_n_rms[k] = NAN;
        s->neutral_ratio[k] = NAN;
        s->neutral_flag[k] = -1;
        if (isnan(creal(s->i_n1[k])))
            continue;
        s->i_n_rms[k] = hypot(cabs(s->i_n1[k]), s->i_n3[k]);
        if (sec->kind == KL_SEC_LINE)
            amp = f->constructions[sec->construction].neutral_ampacity_a;
        s->neutral_flag[k] = kl_limits_share(s->i_n_rms[k], amp,
                                             opt->limits.neutral_share,
                                             &s->neutral_ratio[k]);
    }
}

/* Run ids: a section joins the run of the section feeding it when both have
 * a neutral and share the construction. */
static int assign_runs(const kl_feeder *f, const kl_feeder_tree *t, kl_study *s)
{
    int nruns = 0;
    for (int k = 0; k < f->nsections; k++)
        s->run[k] = -1;
    for (int n = 1; n < t->nlive; n++) {
        int k = t->sec[n], up = t->sec[t->up[n]];
        if (isnan(s->i_n_rms[k]))
            continue;
        if (up >= 0 && s->run[up] >= 0
            && f->sections[up].kind == KL_SEC_LINE
            && f->sections[up].construction == f->sections[k].construction)
            s->run[k] = s->run[up];
        else
            s->run[k] = nruns++;
    }
    return nruns;
}

/* Smallest conductor of the library (by ampacity) carrying `need`. */
static int smallest_carrying(const kl_feeder *f, double need)
{
    int best = -1;
    for (int c = 0; c < f->nconductors; c++) {
        double a = f->conductors[c].ampacity_a;
        if (a >= need && a > 0 && (best < 0 || a < f->conductors[best].ampacity_a))
            best = c;
    }
    return best;
}

static kl_status runs_alloc(kl_study *s, int nruns)
{
    size_t n = (size_t)(nruns > 0 ? nruns : 1);
    s->nruns = nruns;
    s->run_construction = kl_calloc(n, sizeof(int));
    s->run_first = kl_calloc(n, sizeof(int));
    s->run_sections = kl_calloc(n, sizeof(int));
    s->run_worst = kl_calloc(n, sizeof(int));
    s->run_current = kl_calloc(n, sizeof(double));
    s->run_required = kl_calloc(n, sizeof(double));
    s->run_installed = kl_calloc(n, sizeof(double));
    s->run_conductor = kl_calloc(n, sizeof(int));
    if (!s->run_construction || !s->run_first || !s->run_sections || !s->run_worst
        || !s->run_current || !s->run_required || !s->run_installed || !s->run_conductor)
        return KL_ENOMEM;
    for (int r = 0; r < nruns; r++)
        s->run_first[r] = s->run_worst[r] = -1;
    return KL_OK;
}

static void runs_fill(const kl_feeder *f, const kl_feeder_tree *t,
                      const kl_study_options *opt, kl_study *s)
{
    for (int n = 1; n < t->nlive; n++) {
        int k = t->sec[n], r = s->run[k];
        if (r < 0)
            continue;
        if (s->run_first[r] < 0) {
            s->run_first[r] = k;
            s->run_construction[r] = f->sections[k].construction;
        }
        s->run_sections[r]++;
        if (s->run_worst[r] < 0 || s->i_n_rms[k] > s->run_current[r]) {
            s->run_worst[r] = k;
            s->run_current[r] = s->i_n_rms[k];
        }
    }
    for (int r = 0; r < s->nruns; r++) {
        double amp = f->constructions[s->run_construction[r]].neutral_ampacity_a;
        s->run_required[r] = (1.0 + opt->sizing_margin) * s->run_current[r];
        s->run_installed[r] = amp > 0 ? amp : NAN;
        s->run_conductor[r] = smallest_carrying(f, s->run_required[r]);
    }
}

kl_status kl_neutral_size(const kl_feeder *f, const kl_study_phases *ph,
                          const kl_study_options *opt, kl_study *s, kl_errors *err)
{
    const kl_feeder_tree *t;
    kl_feeder_tree *own;
    kl_status st = kl_feeder_tree_of(f, &t, &own, NULL);
    if (st == KL_ENOMEM)
        kl_errors_add(err, NULL, 0, 0, "study", "out of memory sizing the neutrals");
    else
        st = kl_neutral_size_on(f, ph, t, opt, s, err);
    kl_feeder_tree_free(own);
    return st;
}

kl_status kl_neutral_size_on(const kl_feeder *f, const kl_study_phases *ph,
                             const kl_feeder_tree *t, const kl_study_options *opt, kl_study *s,
                             kl_errors *err)
{
    double *at_bus = kl_calloc((size_t)f->nbuses + 1, sizeof *at_bus);
    kl_status st = KL_ENOMEM;
    if (!at_bus)
        goto done;
    triplen_sum(f, ph, t, at_bus, s);
    combine(f, opt, s);
    st = runs_alloc(s, assign_runs(f, t, s));
    if (st == KL_OK)
        runs_fill(f, t, opt, s);
done:
    if (st == KL_ENOMEM)
        kl_errors_add(err, NULL, 0, 0, "study", "out of memory sizing the neutrals");
    kl_free(at_bus);
    return st;
}
