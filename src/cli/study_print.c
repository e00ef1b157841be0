/* kilter program: the unbalance study as tables, CSV and JSON.  Volts and
 * amperes as computed; ratios printed in percent; NAN printed as "-" in
 * tables, an empty field in CSV and null in JSON (never a zero). */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include "kilter/limits.h"
#include "cli.h"
#include "study_print.h"
#include "kilter/units.h"

#define SQRT3 KL_SQRT3
#define RAD2DEG KL_DEG_PER_RAD
#define MAX_LIST 8 /* names listed per broken limit in the summary */

static const char PH[3] = { 'a', 'b', 'c' };

/* ---- small formatters */

static void num(FILE *o, const char *fmt, double x, int width)
{
    if (isnan(x))
        fprintf(o, "%*s", width, "-");
    else
        fprintf(o, fmt, width, x);
}

static void csv_num(FILE *o, double x)
{
    if (!isnan(x))
        fprintf(o, "%.6f", x);
}


static double pct(double x) { return 100.0 * x; }

static double seq_pu(const kl_study_print *p, int b, int q)
{
    const kl_seq_point *v = &p->s->vbus[b];
    if (!(v->defined & KL_SEQ_DEF_SEQUENCE) || !(p->ph->v_base_ln[b] > 0))
        return NAN;
    return cabs(v->x012[q]) / p->ph->v_base_ln[b];
}

static const char *vuf_level_str(int flags)
{
    if (flags < 0)
        return "";
    if (flags & KL_VUF_OVER_SUPPLY)
        return "over supply limit";
    if (flags & KL_VUF_OVER_COMPAT)
        return "over compatibility level";
    return "within";
}

static const char *derate_str(const kl_study *s, int b, char *buf, size_t n)
{
    if (s->derate_zone[b] < 0)
        return "";
    if (s->derate_zone[b] == KL_DERATE_NOT_RECOMMENDED)
        return "not recommended";
    snprintf(buf, n, "%.2f", s->derate_factor[b]);
    return buf;
}

/* A service class counts as broken under the chosen range. */
static int service_broken(const kl_study_print *p, int c)
{
    if (c < 0 || c == KL_SERVICE_UNDEFINED)
        return 0;
    if (p->range_b)
        return c == KL_SERVICE_BELOW_B || c == KL_SERVICE_ABOVE_B;
    return c != KL_SERVICE_A;
}

/* ---- summary */

static void summary_worst(FILE *o, const kl_study_print *p, const char *what, int b, double x)
{
    fprintf(o, "  %-38s", what);
    if (b < 0) {
        fprintf(o, "none (no three-phase bus)\n");
        return;
    }
    fprintf(o, "%-16s %6.2f %%\n", p->f->buses[b].name, pct(x));
}

static void summary_voltage(FILE *o, const kl_study_print *p, const char *what, int b, int ph)
{
    const kl_study *s = p->s;
    if (b < 0)
        return;
    double pu = s->v_pu[3 * b + ph];
    fprintf(o, "  %-38s%-14s %c %7.4f pu  %6.1f V on 120 V  %s\n", what, p->f->buses[b].name,
            PH[ph], pu, 120.0 * pu, kl_service_class_str(s->service[3 * b + ph]));
}

static void summary_head(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    fprintf(o, "  %-38s", "feeder-head sequence currents");
    if (isnan(creal(s->head_i012[1])))
        fprintf(o, "- (head is not three-phase)");
    else
        fprintf(o, "I0 %.1f A  I1 %.1f A  I2 %.1f A", cabs(s->head_i012[0]),
                cabs(s->head_i012[1]), cabs(s->head_i012[2]));
    fprintf(o, "\n  %-38s%.1f A", "feeder-head residual 3I0", cabs(s->head_3i0));
    if (s->relay_flag >= 0)
        fprintf(o, " = %.0f %% of the %.0f A ground-relay pickup", pct(s->relay_ratio),
                p->f->source.relay_pickup_a);
    else
        fprintf(o, " (no ground-relay pickup given)");
    fputc('\n', o);
}

static void summary_neutral(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    int k = s->worst_neutral;
    fprintf(o, "  %-38s", "most-loaded neutral");
    if (k < 0) {
        fprintf(o, "none (no section with a neutral)\n");
        return;
    }
    fprintf(o, "%-16s %.1f A", p->f->sections[k].name, s->i_n_rms[k]);
    if (!isnan(s->neutral_ratio[k]))
        fprintf(o, " = %.0f %% of its ampacity", pct(s->neutral_ratio[k]));
    fputc('\n', o);
}

static void print_summary(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    fprintf(o, "Summary\n");
    summary_worst(o, p, "worst voltage unbalance VUF", s->worst_vuf,
                  s->worst_vuf >= 0 ? s->unb[s->worst_vuf].vuf : NAN);
    summary_worst(o, p, "worst zero-sequence factor V0/V1", s->worst_v0,
                  s->worst_v0 >= 0 ? s->unb[s->worst_v0].v0_v1 : NAN);
    summary_worst(o, p, "worst line-voltage unbalance (LVUR)", s->worst_lvur,
                  s->worst_lvur >= 0 ? s->unb[s->worst_lvur].lvur : NAN);
    summary_worst(o, p, "worst phase-voltage unbalance (PVUR)", s->worst_pvur,
                  s->worst_pvur >= 0 ? s->unb[s->worst_pvur].pvur : NAN);
    summary_voltage(o, p, "lowest phase voltage", s->lowest_v, s->lowest_ph);
    summary_voltage(o, p, "highest phase voltage", s->highest_v, s->highest_ph);
    if (s->worst_i2 >= 0)
        fprintf(o, "  %-38s%-16s %6.2f %%\n", "worst current unbalance I2/I1",
                p->f->sections[s->worst_i2].name, pct(s->iunb[s->worst_i2].i2_i1));
    summary_head(o, p);
    summary_neutral(o, p);
}

/* ---- limits broken */

static void list_vuf(FILE *o, const kl_study_print *p, int bit, double limit, const char *src)
{
    const kl_study *s = p->s;
    int n = bit == KL_VUF_OVER_SUPPLY ? s->n_vuf_supply : s->n_vuf_compat, shown = 0;
    if (n == 0)
        return;
    fprintf(o, "  voltage unbalance over %.1f %% (%s): %d bus%s:", pct(limit), src, n,
            n == 1 ? "" : "es");
    for (int b = 0; b < s->nbuses && shown < MAX_LIST; b++)
        if (s->vuf_flags[b] > 0 && (s->vuf_flags[b] & bit)) {
            fprintf(o, " %s (%.2f %%)", p->f->buses[b].name, pct(s->unb[b].vuf));
            shown++;
        }
    fprintf(o, "%s\n", n > shown ? " ..." : "");
}

static void list_service(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    int n = 0, shown = 0;
    for (int e = 0; e < 3 * s->nbuses; e++)
        n += service_broken(p, s->service[e]);
    if (n == 0)
        return;
    fprintf(o, "  service voltage outside Range %c (ANSI C84.1, 120 V base): %d bus-phase%s:",
            p->range_b ? 'B' : 'A', n, n == 1 ? "" : "s");
    for (int e = 0; e < 3 * s->nbuses && shown < MAX_LIST; e++)
        if (service_broken(p, s->service[e])) {
            fprintf(o, " %s.%c (%.1f V)", p->f->buses[e / 3].name, PH[e % 3], 120.0 * s->v_pu[e]);
            shown++;
        }
    fprintf(o, "%s\n", n > shown ? " ..." : "");
}

static void list_neutrals(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    int shown = 0;
    if (s->n_neutral_over == 0)
        return;
    fprintf(o, "  neutral current over %.0f %% of ampacity: %d section%s:",
            pct(p->opt->limits.neutral_share), s->n_neutral_over, s->n_neutral_over == 1 ? "" : "s");
    for (int k = 0; k < s->nsections && shown < MAX_LIST; k++)
        if (s->neutral_flag[k] == 1) {
            fprintf(o, " %s (%.0f %%)", p->f->sections[k].name, pct(s->neutral_ratio[k]));
            shown++;
        }
    fprintf(o, "%s\n", s->n_neutral_over > shown ? " ..." : "");
}

static void print_broken(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    const kl_limits *l = &p->opt->limits;
    fprintf(o, "\nLimits broken\n");
    list_vuf(o, p, KL_VUF_OVER_SUPPLY, l->vuf_supply, "ANSI C84.1 recommendation");
    list_vuf(o, p, KL_VUF_OVER_COMPAT, l->vuf_compat, "EN 50160 / IEC 61000-2-2 level");
    list_service(o, p);
    list_neutrals(o, p);
    if (s->n_motor_derate || s->n_motor_not_rec)
        fprintf(o, "  motor buses (NEMA MG 1): %d need derating, %d where operation is not recommended\n",
                s->n_motor_derate, s->n_motor_not_rec);
    if (s->relay_flag == 1)
        fprintf(o, "  feeder-head 3I0 %.1f A is over %.0f %% of the %.0f A ground-relay pickup\n",
                cabs(s->head_3i0), pct(l->relay_share), p->f->source.relay_pickup_a);
    if (!s->n_vuf_compat && !s->n_vuf_supply && !s->n_neutral_over && !s->n_motor_derate
        && !s->n_motor_not_rec && s->relay_flag != 1) {
        int any = 0;
        for (int e = 0; e < 3 * s->nbuses; e++)
            any |= service_broken(p, s->service[e]);
        if (!any)
            fprintf(o, "  none\n");
    }
}

/* ---- contributors */

static void contrib_name(const kl_study_print *p, int j, const char **kind, const char **name,
                         int *phases)
{
    const kl_study *s = p->s;
    if (s->ckind[j] == KL_CONTRIB_TAP) {
        *kind = "tap";
        *name = p->f->sections[s->cid[j]].name;
        *phases = p->f->sections[s->cid[j]].phases;
    } else {
        *kind = "load";
        *name = p->f->loads[s->cid[j]].name;
        *phases = p->f->loads[s->cid[j]].phases;
    }
}

static void print_contrib_bus(FILE *o, const kl_study_print *p, int c)
{
    const kl_study *s = p->s;
    int b = s->cbus[c];
    char buf[4];
    fprintf(o, "  at bus %s (VUF %.2f %%):\n", p->f->buses[b].name, pct(s->unb[b].vuf));
    for (int j = s->cstart[c]; j < s->cstart[c + 1]; j++) {
        const char *kind, *name;
        int phases;
        contrib_name(p, j, &kind, &name, &phases);
        fprintf(o, "    %2d  %-4s  %-24s %-3s %7.1f %%\n", j - s->cstart[c] + 1, kind, name,
                kl_phases_str(phases, buf), pct(s->cshare[j]));
    }
    fprintf(o, "    all single- and two-phase loads %.1f %%, three-phase loads %.1f %%, "
               "remainder %.1f %% (regulator taps, capacitors, line charging, nonlinearity)\n",
            pct(s->c_unbal_total[c]), pct(s->c_three_phase[c]), pct(s->c_remainder[c]));
}

static void print_contributors(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    if (!s->contrib_done || s->ncbus == 0)
        return;
    fprintf(o, "\nContributors to the negative-sequence voltage (share of V2, docs/study.md)\n");
    for (int c = 0; c < s->ncbus && c < MAX_LIST; c++)
        print_contrib_bus(o, p, c);
    if (s->ncbus > MAX_LIST)
        fprintf(o, "  ... %d more buses (--format csv --table contributors lists all)\n",
                s->ncbus - MAX_LIST);
}

/* ---- detail tables */

static void print_buses(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    char buf[32];
    fprintf(o, "\nThree-phase buses (per unit of the line-to-neutral base; %% of V1)\n");
    fprintf(o, "  %-14s %7s %7s %7s  %7s %7s %7s  %6s %6s %6s %6s  %-24s %s\n", "bus", "Va", "Vb",
            "Vc", "V0", "V1", "V2", "VUF", "V0/V1", "LVUR", "PVUR", "unbalance", "motor derating");
    for (int b = 0; b < s->nbuses; b++) {
        if (!s->unb[b].defined)
            continue;
        fprintf(o, "  %-14s", p->f->buses[b].name);
        for (int q = 0; q < 3; q++)
            num(o, " %*.4f", s->v_pu[3 * b + q], 7);
        fputc(' ', o);
        for (int q = 0; q < 3; q++)
            num(o, " %*.4f", seq_pu(p, b, q), 7);
        fputc(' ', o);
        num(o, " %*.2f", pct(s->unb[b].vuf), 6);
        num(o, " %*.2f", pct(s->unb[b].v0_v1), 6);
        num(o, " %*.2f", pct(s->unb[b].lvur), 6);
        num(o, " %*.2f", pct(s->unb[b].pvur), 6);
        fprintf(o, "  %-24s %s\n", vuf_level_str(s->vuf_flags[b]), derate_str(s, b, buf, sizeof buf));
    }
}

static void print_small_buses(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    char buf[4];
    int any = 0;
    for (int b = 0; b < s->nbuses; b++) {
        int m = s->vbus[b].phases;
        if (m == 0 || m == KL_PH_ABC)
            continue;
        if (!any++)
            fprintf(o, "\nSingle- and two-phase buses (per unit; no sequence components)\n"
                       "  %-14s %-3s %7s %7s %7s\n", "bus", "ph", "Va", "Vb", "Vc");
        fprintf(o, "  %-14s %-3s", p->f->buses[b].name, kl_phases_str(m, buf));
        for (int q = 0; q < 3; q++)
            num(o, " %*.4f", s->v_pu[3 * b + q], 7);
        fputc('\n', o);
    }
}

static void print_sections(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    char buf[4];
    fprintf(o, "\nSection currents, A (sending end; I2/I1 and I0/I1 in %%)\n");
    fprintf(o, "  %-16s %-3s %8s %8s %8s  %8s %8s %8s  %6s %6s %8s\n", "section", "ph", "Ia", "Ib",
            "Ic", "I0", "I1", "I2", "I2/I1", "I0/I1", "3I0");
    for (int k = 0; k < s->nsections; k++) {
        const kl_seq_point *x = &s->isec[k];
        if (x->phases == 0)
            continue;
        fprintf(o, "  %-16s %-3s", p->f->sections[k].name, kl_phases_str(x->phases, buf));
        for (int q = 0; q < 3; q++)
            num(o, " %*.1f", (x->phases >> q & 1) ? cabs(x->x[q]) : NAN, 8);
        fputc(' ', o);
        for (int q = 0; q < 3; q++)
            num(o, " %*.1f", (x->defined & KL_SEQ_DEF_SEQUENCE) ? cabs(x->x012[q]) : NAN, 8);
        num(o, " %*.2f", pct(s->iunb[k].i2_i1), 6);
        num(o, " %*.2f", pct(s->iunb[k].i0_i1), 6);
        num(o, " %*.1f", cabs(x->sum), 8);
        fputc('\n', o);
    }
}

static double installed(const kl_study_print *p, int k)
{
    const kl_section *sec = &p->f->sections[k];
    double a = sec->kind == KL_SEC_LINE ? p->f->constructions[sec->construction].neutral_ampacity_a : 0;
    return a > 0 ? a : NAN;
}

static void print_neutrals(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    fprintf(o, "\nNeutral current, A (fundamental, triplen, combined RMS; earth return)\n");
    fprintf(o, "  %-16s %8s %8s %8s %8s %9s %8s\n", "section", "In1", "In3", "In rms", "Iearth",
            "ampacity", "loading");
    for (int k = 0; k < s->nsections; k++) {
        if (isnan(s->i_n_rms[k]))
            continue;
        fprintf(o, "  %-16s", p->f->sections[k].name);
        num(o, " %*.1f", cabs(s->i_n1[k]), 8);
        num(o, " %*.1f", s->i_n3[k], 8);
        num(o, " %*.1f", s->i_n_rms[k], 8);
        num(o, " %*.1f", cabs(s->i_e[k]), 8);
        num(o, " %*.0f", installed(p, k), 9);
        num(o, " %*.0f%%", pct(s->neutral_ratio[k]), 7);
        fprintf(o, "%s\n", s->neutral_flag[k] == 1 ? "  OVER" : "");
    }
}

static void print_runs(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    if (s->nruns == 0)
        return;
    fprintf(o, "\nNeutral runs (sections of one construction; required = %.0f %% of the worst current)\n",
            100.0 * (1.0 + p->opt->sizing_margin));
    fprintf(o, "  %-4s %-16s %-16s %4s %8s %9s %9s  %s\n", "run", "construction", "first section",
            "secs", "worst A", "needed A", "fitted A", "smallest library conductor that carries it");
    for (int r = 0; r < s->nruns; r++) {
        int c = s->run_conductor[r];
        fprintf(o, "  %-4d %-16s %-16s %4d", r + 1, p->f->constructions[s->run_construction[r]].name,
                p->f->sections[s->run_first[r]].name, s->run_sections[r]);
        num(o, " %*.1f", s->run_current[r], 8);
        num(o, " %*.1f", s->run_required[r], 9);
        num(o, " %*.0f", s->run_installed[r], 9);
        fprintf(o, "  %s", c >= 0 ? p->f->conductors[c].name : "none in the library");
        if (!isnan(s->run_installed[r]) && s->run_installed[r] < s->run_required[r])
            fprintf(o, "  (fitted neutral too small)");
        fputc('\n', o);
    }
}

void kl_study_print_table(FILE *o, const kl_study_print *p)
{
    fprintf(o, "Unbalance study of %s (%s)\nLoad flow converged in %d iterations.\n\n",
            p->f->name ? p->f->name : "feeder", p->f->path ? p->f->path : "", p->iterations);
    print_summary(o, p);
    print_broken(o, p);
    print_contributors(o, p);
    print_buses(o, p);
    print_small_buses(o, p);
    print_sections(o, p);
    print_neutrals(o, p);
    print_runs(o, p);
    fprintf(o, "\nCaution: %s.\n", KL_STUDY_CAUTION);
}

/* ---- the focused report for one bus (--at) */

static void at_voltages(FILE *o, const kl_study_print *p, int b)
{
    const kl_study *s = p->s;
    const kl_seq_point *v = &s->vbus[b];
    double base = p->ph->v_base_ln[b];
    static const char *const seq[3] = { "V0", "V1", "V2" };
    fprintf(o, "Modelled voltages (line-to-neutral base %.1f V)\n", base);
    for (int q = 0; q < 3; q++) {
        if (!(v->phases >> q & 1))
            continue;
        fprintf(o, "  V%c  %9.1f V /%8.2f deg  %7.4f pu  %6.1f V on 120 V  %s\n", PH[q],
                cabs(v->x[q]), carg(v->x[q]) * RAD2DEG, s->v_pu[3 * b + q],
                120.0 * s->v_pu[3 * b + q], kl_service_class_str(s->service[3 * b + q]));
    }
    if (!(v->defined & KL_SEQ_DEF_SEQUENCE)) {
        fprintf(o, "  (fewer than three phases: no sequence components or unbalance indices)\n");
        return;
    }
    for (int q = 0; q < 3; q++)
        fprintf(o, "  %s  %9.1f V /%8.2f deg  %7.4f pu\n", seq[q], cabs(v->x012[q]),
                carg(v->x012[q]) * RAD2DEG, cabs(v->x012[q]) / base);
    for (int q = 0; q < 3; q++)
        fprintf(o, "  V%c%c %9.1f V (%.4f pu of %.1f V)\n", PH[q], PH[(q + 1) % 3], cabs(v->xll[q]),
                cabs(v->xll[q]) / (SQRT3 * base), SQRT3 * base);
}

static void at_indices(FILE *o, const kl_study_print *p, int b)
{
    const kl_study *s = p->s;
    const kl_limits *l = &p->opt->limits;
    char buf[32];
    if (!s->unb[b].defined)
        return;
    fprintf(o, "\nUnbalance\n  VUF %.2f %%  V0/V1 %.2f %%  LVUR %.2f %%  PVUR %.2f %%\n",
            pct(s->unb[b].vuf), pct(s->unb[b].v0_v1), pct(s->unb[b].lvur), pct(s->unb[b].pvur));
    fprintf(o, "  against %.1f %% (ANSI C84.1 recommendation): %s\n", pct(l->vuf_supply),
            s->vuf_flags[b] & KL_VUF_OVER_SUPPLY ? "OVER" : "within");
    fprintf(o, "  against %.1f %% (EN 50160 / IEC 61000-2-2): %s\n", pct(l->vuf_compat),
            s->vuf_flags[b] & KL_VUF_OVER_COMPAT ? "OVER" : "within");
    if (s->derate_zone[b] >= 0)
        fprintf(o, "  motor derating (NEMA MG 1): %s\n", derate_str(s, b, buf, sizeof buf));
}

static void at_measurement(FILE *o, const kl_study_print *p)
{
    const kl_complaint_result *r = p->cr;
    const kl_complaint_input *in = p->ci;
    const char *const *nm = in->kind == KL_MEAS_LINE ? (const char *const[]){ "Vab", "Vbc", "Vca" }
                                                     : (const char *const[]){ "Va", "Vb", "Vc" };
    fprintf(o, "\nMeasurement against the model (readings on %s, nominal %.1f V)\n",
            r->on_120 ? "the 120 V base" : "the bus's own base", r->base_v);
    for (int q = 0; q < 3; q++)
        fprintf(o, "  %-4s measured %8.1f V = %.4f pu   model %.4f pu   difference %+.4f pu\n", nm[q],
                in->mag[q], r->meas_pu[q], r->model_pu[q], r->meas_pu[q] - r->model_pu[q]);
    fprintf(o, "  unbalance rate (%s): measured %.2f %%, model %.2f %%\n",
            in->kind == KL_MEAS_LINE ? "LVUR" : "PVUR", pct(r->meas_rate), pct(r->model_rate));
    if (r->vuf_agree >= 0)
        fprintf(o, "  VUF from the line magnitudes (closed form): measured %.2f %%, model %.2f %%\n",
                pct(r->meas_vuf), pct(r->model_vuf));
    fprintf(o, "  magnitudes %s within %.1f %% (largest difference %.2f %%)\n",
            r->mags_agree ? "AGREE" : "DO NOT AGREE", pct(in->tol_pu), pct(r->worst_dev_pu));
    if (r->vuf_agree >= 0)
        fprintf(o, "  VUF %s within %.2f points\n", r->vuf_agree ? "AGREES" : "DOES NOT AGREE",
                pct(in->tol_vuf));
    fprintf(o, "  %s\n", r->mags_agree && r->vuf_agree != 0
                             ? "The model explains the reading: look at the contributors below."
                             : "The model does not explain the reading: check the load data, the "
                               "phasing of the loads, the meter, and the service drop.");
}

void kl_study_print_at(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    int b = p->ci->bus;
    fprintf(o, "Complaint check at bus %s of %s\n\n", p->f->buses[b].name,
            p->f->name ? p->f->name : "feeder");
    at_voltages(o, p, b);
    at_indices(o, p, b);
    if (p->ci->kind != KL_MEAS_NONE)
        at_measurement(o, p);
    for (int c = 0; c < s->ncbus; c++)
        if (s->cbus[c] == b) {
            fprintf(o, "\nTop contributors to the negative-sequence voltage here\n");
            print_contrib_bus(o, p, c);
        }
    fprintf(o, "\nCaution: %s.\n", KL_STUDY_CAUTION);
}

/* ---- CSV (contract in docs/study.md) */

static void csv_buses(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    char buf[32];
    fprintf(o, "bus,phases,va_pu,vb_pu,vc_pu,v0_pu,v1_pu,v2_pu,vuf_pct,v0_v1_pct,lvur_pct,pvur_pct,"
               "service_a,service_b,service_c,unbalance,motor_derating\n");
    for (int b = 0; b < s->nbuses; b++) {
        if (s->vbus[b].phases == 0 || (p->ci && p->ci->bus != b))
            continue;
        kl_cli_csv_str(o, p->f->buses[b].name);
        fprintf(o, ",%s", kl_phases_str(s->vbus[b].phases, buf));
        for (int q = 0; q < 3; q++) { fputc(',', o); csv_num(o, s->v_pu[3 * b + q]); }
        for (int q = 0; q < 3; q++) { fputc(',', o); csv_num(o, seq_pu(p, b, q)); }
        fputc(',', o); csv_num(o, pct(s->unb[b].vuf));
        fputc(',', o); csv_num(o, pct(s->unb[b].v0_v1));
        fputc(',', o); csv_num(o, pct(s->unb[b].lvur));
        fputc(',', o); csv_num(o, pct(s->unb[b].pvur));
        for (int q = 0; q < 3; q++)
            fprintf(o, ",%s", s->service[3 * b + q] >= 0 ? kl_service_class_str(s->service[3 * b + q]) : "");
        fprintf(o, ",%s,%s\n", vuf_level_str(s->vuf_flags[b]), derate_str(s, b, buf, sizeof buf));
    }
}

static void csv_sections(FILE *o, const kl_study_print *p, int neutrals)
{
    const kl_study *s = p->s;
    char buf[4];
    fprintf(o, neutrals ? "section,neutral_a,triplen_a,neutral_rms_a,earth_a,neutral_ampacity_a,"
                          "neutral_loading_pct,run\n"
                        : "section,phases,ia_a,ib_a,ic_a,i0_a,i1_a,i2_a,i2_i1_pct,i0_i1_pct,residual_a\n");
    for (int k = 0; k < s->nsections; k++) {
        const kl_seq_point *x = &s->isec[k];
        if (x->phases == 0 || (neutrals && isnan(s->i_n_rms[k])))
            continue;
        kl_cli_csv_str(o, p->f->sections[k].name);
        if (neutrals) {
            double v[6] = { cabs(s->i_n1[k]), s->i_n3[k], s->i_n_rms[k], cabs(s->i_e[k]),
                            installed(p, k), pct(s->neutral_ratio[k]) };
            for (int q = 0; q < 6; q++) { fputc(',', o); csv_num(o, v[q]); }
            fprintf(o, ",%d\n", s->run[k] + 1);
            continue;
        }
        fprintf(o, ",%s", kl_phases_str(x->phases, buf));
        for (int q = 0; q < 3; q++) { fputc(',', o); csv_num(o, (x->phases >> q & 1) ? cabs(x->x[q]) : NAN); }
        for (int q = 0; q < 3; q++) {
            fputc(',', o);
            csv_num(o, (x->defined & KL_SEQ_DEF_SEQUENCE) ? cabs(x->x012[q]) : NAN);
        }
        fputc(',', o); csv_num(o, pct(s->iunb[k].i2_i1));
        fputc(',', o); csv_num(o, pct(s->iunb[k].i0_i1));
        fputc(',', o); csv_num(o, cabs(x->sum));
        fputc('\n', o);
    }
}

static void csv_runs(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    fprintf(o, "run,construction,first_section,sections,worst_section,current_a,required_a,"
               "installed_a,suggested_conductor\n");
    for (int r = 0; r < s->nruns; r++) {
        fprintf(o, "%d,", r + 1);
        kl_cli_csv_str(o, p->f->constructions[s->run_construction[r]].name);
        fputc(',', o);
        kl_cli_csv_str(o, p->f->sections[s->run_first[r]].name);
        fprintf(o, ",%d,", s->run_sections[r]);
        kl_cli_csv_str(o, p->f->sections[s->run_worst[r]].name);
        fputc(',', o); csv_num(o, s->run_current[r]);
        fputc(',', o); csv_num(o, s->run_required[r]);
        fputc(',', o); csv_num(o, s->run_installed[r]);
        fputc(',', o);
        if (s->run_conductor[r] >= 0)
            kl_cli_csv_str(o, p->f->conductors[s->run_conductor[r]].name);
        fputc('\n', o);
    }
}

static void csv_contrib(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    char buf[4];
    fprintf(o, "bus,vuf_pct,rank,kind,name,phases,share_pct\n");
    for (int c = 0; c < s->ncbus; c++)
        for (int j = s->cstart[c]; j < s->cstart[c + 1]; j++) {
            const char *kind, *name;
            int phases;
            contrib_name(p, j, &kind, &name, &phases);
            kl_cli_csv_str(o, p->f->buses[s->cbus[c]].name);
            fputc(',', o);
            csv_num(o, pct(s->unb[s->cbus[c]].vuf));
            fprintf(o, ",%d,%s,", j - s->cstart[c] + 1, kind);
            kl_cli_csv_str(o, name);
            fprintf(o, ",%s,", kl_phases_str(phases, buf));
            csv_num(o, pct(s->cshare[j]));
            fputc('\n', o);
        }
}

void kl_study_print_csv(FILE *o, const kl_study_print *p, kl_study_table t)
{
    switch (t) {
    case KL_TAB_SECTIONS: csv_sections(o, p, 0); break;
    case KL_TAB_NEUTRALS: csv_sections(o, p, 1); break;
    case KL_TAB_RUNS: csv_runs(o, p); break;
    case KL_TAB_CONTRIB: csv_contrib(o, p); break;
    case KL_TAB_BUSES: default: csv_buses(o, p); break;
    }
}

/* ---- JSON (contract in docs/study.md) */

static void json_key_num(FILE *o, const char *key, double x, int comma)
{
    fprintf(o, "\"%s\": ", key);
    kl_cli_json_num(o, x);
    if (comma)
        fputs(", ", o);
}

static void json_name_or_null(FILE *o, const char *key, const char *name, int comma)
{
    fprintf(o, "\"%s\": ", key);
    if (name)
        kl_cli_json_str(o, name);
    else
        fputs("null", o);
    if (comma)
        fputs(", ", o);
}

static void json_bus(FILE *o, const kl_study_print *p, int b)
{
    const kl_study *s = p->s;
    char buf[32];
    fputs("    {", o);
    json_name_or_null(o, "bus", p->f->buses[b].name, 1);
    fprintf(o, "\"phases\": \"%s\", ", kl_phases_str(s->vbus[b].phases, buf));
    json_key_num(o, "va_pu", s->v_pu[3 * b], 1);
    json_key_num(o, "vb_pu", s->v_pu[3 * b + 1], 1);
    json_key_num(o, "vc_pu", s->v_pu[3 * b + 2], 1);
    json_key_num(o, "v0_pu", seq_pu(p, b, 0), 1);
    json_key_num(o, "v1_pu", seq_pu(p, b, 1), 1);
    json_key_num(o, "v2_pu", seq_pu(p, b, 2), 1);
    json_key_num(o, "vuf_pct", pct(s->unb[b].vuf), 1);
    json_key_num(o, "v0_v1_pct", pct(s->unb[b].v0_v1), 1);
    json_key_num(o, "lvur_pct", pct(s->unb[b].lvur), 1);
    json_key_num(o, "pvur_pct", pct(s->unb[b].pvur), 1);
    fputs("\"service\": [", o);
    for (int q = 0; q < 3; q++) {
        int c = s->service[3 * b + q];
        if (c >= 0)
            fprintf(o, "\"%s\"", kl_service_class_str(c));
        else
            fputs("null", o);
        fputs(q < 2 ? ", " : "], ", o);
    }
    fprintf(o, "\"unbalance\": \"%s\", ", vuf_level_str(s->vuf_flags[b]));
    json_key_num(o, "motor_derating", s->derate_factor[b], 0);
    fputs("}", o);
}

static void json_section(FILE *o, const kl_study_print *p, int k)
{
    const kl_study *s = p->s;
    const kl_seq_point *x = &s->isec[k];
    char buf[4];
    int seq = (x->defined & KL_SEQ_DEF_SEQUENCE) != 0;
    fputs("    {", o);
    json_name_or_null(o, "section", p->f->sections[k].name, 1);
    fprintf(o, "\"phases\": \"%s\", ", kl_phases_str(x->phases, buf));
    json_key_num(o, "ia_a", (x->phases & 1) ? cabs(x->x[0]) : NAN, 1);
    json_key_num(o, "ib_a", (x->phases & 2) ? cabs(x->x[1]) : NAN, 1);
    json_key_num(o, "ic_a", (x->phases & 4) ? cabs(x->x[2]) : NAN, 1);
    json_key_num(o, "i0_a", seq ? cabs(x->x012[0]) : NAN, 1);
    json_key_num(o, "i1_a", seq ? cabs(x->x012[1]) : NAN, 1);
    json_key_num(o, "i2_a", seq ? cabs(x->x012[2]) : NAN, 1);
    json_key_num(o, "i2_i1_pct", pct(s->iunb[k].i2_i1), 1);
    json_key_num(o, "i0_i1_pct", pct(s->iunb[k].i0_i1), 1);
    json_key_num(o, "residual_a", cabs(x->sum), 1);
    json_key_num(o, "neutral_a", cabs(s->i_n1[k]), 1);
    json_key_num(o, "triplen_a", isnan(s->i_n_rms[k]) ? NAN : s->i_n3[k], 1);
    json_key_num(o, "neutral_rms_a", s->i_n_rms[k], 1);
    json_key_num(o, "earth_a", cabs(s->i_e[k]), 1);
    json_key_num(o, "neutral_loading_pct", pct(s->neutral_ratio[k]), 0);
    fputs("}", o);
}

static void json_runs(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    fputs("  \"neutral_runs\": [", o);
    for (int r = 0; r < s->nruns; r++) {
        fputs(r ? ",\n    {" : "\n    {", o);
        json_name_or_null(o, "construction", p->f->constructions[s->run_construction[r]].name, 1);
        json_name_or_null(o, "first_section", p->f->sections[s->run_first[r]].name, 1);
        fprintf(o, "\"sections\": %d, ", s->run_sections[r]);
        json_key_num(o, "current_a", s->run_current[r], 1);
        json_key_num(o, "required_a", s->run_required[r], 1);
        json_key_num(o, "installed_a", s->run_installed[r], 1);
        json_name_or_null(o, "suggested_conductor",
                          s->run_conductor[r] >= 0 ? p->f->conductors[s->run_conductor[r]].name : NULL, 0);
        fputs("}", o);
    }
    fputs(s->nruns ? "\n  ],\n" : "],\n", o);
}

static void json_contrib(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    char buf[4];
    fputs("  \"contributors\": [", o);
    for (int c = 0; c < s->ncbus; c++) {
        fputs(c ? ",\n    {" : "\n    {", o);
        json_name_or_null(o, "bus", p->f->buses[s->cbus[c]].name, 1);
        json_key_num(o, "vuf_pct", pct(s->unb[s->cbus[c]].vuf), 1);
        json_key_num(o, "single_two_phase_pct", pct(s->c_unbal_total[c]), 1);
        json_key_num(o, "three_phase_pct", pct(s->c_three_phase[c]), 1);
        json_key_num(o, "remainder_pct", pct(s->c_remainder[c]), 1);
        fputs("\"ranked\": [", o);
        for (int j = s->cstart[c]; j < s->cstart[c + 1]; j++) {
            const char *kind, *name;
            int phases;
            contrib_name(p, j, &kind, &name, &phases);
            fprintf(o, "%s{\"kind\": \"%s\", ", j > s->cstart[c] ? ", " : "", kind);
            json_name_or_null(o, "name", name, 1);
            fprintf(o, "\"phases\": \"%s\", ", kl_phases_str(phases, buf));
            json_key_num(o, "share_pct", pct(s->cshare[j]), 0);
            fputs("}", o);
        }
        fputs("]}", o);
    }
    fputs(s->ncbus ? "\n  ],\n" : "],\n", o);
}

static void json_summary(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    const kl_feeder *f = p->f;
    const kl_limits *l = &p->opt->limits;
#define BUSNAME(b) ((b) >= 0 ? f->buses[b].name : NULL)
    fputs("  \"limits\": {", o);
    json_key_num(o, "vuf_supply_pct", pct(l->vuf_supply), 1);
    json_key_num(o, "vuf_compat_pct", pct(l->vuf_compat), 1);
    fprintf(o, "\"service_range\": \"%c\", ", p->range_b ? 'B' : 'A');
    json_key_num(o, "relay_share_pct", pct(l->relay_share), 1);
    json_key_num(o, "neutral_share_pct", pct(l->neutral_share), 1);
    json_key_num(o, "sizing_margin_pct", pct(p->opt->sizing_margin), 0);
    fputs("},\n  \"summary\": {", o);
    json_name_or_null(o, "worst_vuf_bus", BUSNAME(s->worst_vuf), 1);
    json_name_or_null(o, "worst_v0_v1_bus", BUSNAME(s->worst_v0), 1);
    json_name_or_null(o, "worst_lvur_bus", BUSNAME(s->worst_lvur), 1);
    json_name_or_null(o, "worst_pvur_bus", BUSNAME(s->worst_pvur), 1);
    json_name_or_null(o, "lowest_voltage_bus", BUSNAME(s->lowest_v), 1);
    json_name_or_null(o, "highest_voltage_bus", BUSNAME(s->highest_v), 1);
    json_name_or_null(o, "most_loaded_neutral", s->worst_neutral >= 0 ? f->sections[s->worst_neutral].name : NULL, 1);
    fprintf(o, "\"buses_over_vuf_supply\": %d, \"buses_over_vuf_compat\": %d, "
               "\"bus_phases_outside_range_a\": %d, \"bus_phases_outside_range_b\": %d, "
               "\"neutrals_over\": %d, \"motor_buses_derate\": %d, \"motor_buses_not_recommended\": %d},\n",
            s->n_vuf_supply, s->n_vuf_compat, s->n_outside_a, s->n_outside_b, s->n_neutral_over,
            s->n_motor_derate, s->n_motor_not_rec);
    fputs("  \"head\": {", o);
    json_key_num(o, "i0_a", cabs(s->head_i012[0]), 1);
    json_key_num(o, "i1_a", cabs(s->head_i012[1]), 1);
    json_key_num(o, "i2_a", cabs(s->head_i012[2]), 1);
    json_key_num(o, "residual_3i0_a", cabs(s->head_3i0), 1);
    json_key_num(o, "relay_pickup_share_pct", pct(s->relay_ratio), 0);
    fputs("},\n", o);
#undef BUSNAME
}

static void json_complaint(FILE *o, const kl_study_print *p)
{
    const kl_complaint_result *r = p->cr;
    if (!r || p->ci->kind == KL_MEAS_NONE)
        return;
    fprintf(o, "  \"complaint\": {\"bus\": ");
    kl_cli_json_str(o, p->f->buses[r->bus].name);
    fprintf(o, ", \"kind\": \"%s\", \"on_120v_base\": %s, ", p->ci->kind == KL_MEAS_LINE ? "line" : "phase",
            r->on_120 ? "true" : "false");
    json_key_num(o, "base_v", r->base_v, 1);
    json_key_num(o, "worst_difference_pu", r->worst_dev_pu, 1);
    json_key_num(o, "measured_rate_pct", pct(r->meas_rate), 1);
    json_key_num(o, "model_rate_pct", pct(r->model_rate), 1);
    json_key_num(o, "measured_vuf_pct", pct(r->meas_vuf), 1);
    json_key_num(o, "model_vuf_pct", pct(r->model_vuf), 1);
    fprintf(o, "\"magnitudes_agree\": %s, \"vuf_agree\": %s},\n", r->mags_agree ? "true" : "false",
            r->vuf_agree < 0 ? "null" : r->vuf_agree ? "true" : "false");
}

void kl_study_print_json(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    int first = 1;
    fputs("{\n  ", o);
    json_name_or_null(o, "feeder", p->f->name, 0);
    fprintf(o, ",\n  \"flow\": {\"converged\": true, \"iterations\": %d},\n", p->iterations);
    json_summary(o, p);
    json_complaint(o, p);
    fputs("  \"buses\": [", o);
    for (int b = 0; b < s->nbuses; b++) {
        if (s->vbus[b].phases == 0 || (p->ci && p->ci->bus != b))
            continue;
        fputs(first ? "\n" : ",\n", o);
        json_bus(o, p, b);
        first = 0;
    }
    fputs("\n  ],\n  \"sections\": [", o);
    first = 1;
    for (int k = 0; k < s->nsections; k++) {
        if (s->isec[k].phases == 0)
            continue;
        fputs(first ? "\n" : ",\n", o);
        json_section(o, p, k);
        first = 0;
    }
    fputs("\n  ],\n", o);
    json_runs(o, p);
    json_contrib(o, p);
    fprintf(o, "  \"caution\": \"%s\"\n}\n", KL_STUDY_CAUTION);
}
