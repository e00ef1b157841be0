/* kilter program: the unbalance study as tables, CSV and JSON.  Volts and
 * amperes as computed; ratios printed in percent; NAN printed as "-" in
 * tables, an empty field in CSV and null in JSON (never a zero). */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <string.h>
#include "kilter/limits.h"
#include "kilter/table.h"
#include "cli.h"
#include "study_print.h"
#include "kilter/units.h"

#define SQRT3 KL_SQRT3
#define RAD2DEG KL_DEG_PER_RAD
#define MAX_LIST 8 /* names listed per broken limit in the summary */

static const char PH[3] = { 'a', 'b', 'c' };

/* ---- small formatters */

static double pct(double x) { return 100.0 * x; }

/* The study's tables read this record (kilter/table.h). */
static kl_study_rows rows_of(const kl_study_print *p)
{
    return (kl_study_rows){p->f, p->s, p->ph, p->ci ? p->ci->bus : -1, p->opt, p->range_b};
}

/* The bus table's text of a column (the figures are the tables'). */
static const char *bus_text(const kl_study_print *p, const char *key, int b, kl_cell *v)
{
    kl_study_rows rows = rows_of(p);
    kl_table_get(&kl_table_study_buses, &rows, key, KL_TABLE_TEXT, b, -1, v);
    return v->str ? v->str : "";
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
            PH[ph], pu, 120.0 * pu, kl_service_class_str((kl_service_class)s->service[3 * b + ph]));
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

static void summary_loading(FILE *o, const kl_study_print *p)
{
    const kl_study *s = p->s;
    int k = s->worst_loading;
    fprintf(o, "  %-38s", "most-loaded section");
    if (k < 0) {
        fprintf(o, "none (no section with a rating in the feeder file)\n");
        return;
    }
    fprintf(o, "%-16s %.1f %% of its rating", p->f->sections[k].name, pct(s->loading[k]));
    if (isfinite(s->loading_emerg[k]))
        fprintf(o, ", %.0f %% of its emergency rating", pct(s->loading_emerg[k]));
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
    summary_loading(o, p);
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

/* Sections whose loading class is `flag` (KL_LOADING_OVER or _NOTE). */
static void list_loading(FILE *o, const kl_study_print *p, int flag, int n, const char *what)
{
    const kl_study *s = p->s;
    int shown = 0;
    if (n == 0)
        return;
    fprintf(o, "  %s: %d section%s:", what, n, n == 1 ? "" : "s");
    for (int k = 0; k < s->nsections && shown < MAX_LIST; k++)
        if (s->loading_flag[k] == flag) {
            fprintf(o, " %s (%.1f %%", p->f->sections[k].name, pct(s->loading[k]));
            if (flag == KL_LOADING_OVER && isfinite(s->loading_emerg[k]))
                fprintf(o, "; %.0f %% of emergency", pct(s->loading_emerg[k]));
            fputc(')', o);
            shown++;
        }
    fprintf(o, "%s\n", n > shown ? " ..." : "");
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
    list_loading(o, p, KL_LOADING_OVER, s->n_loading_over, "loading over 100 % of the continuous rating");
    if (s->n_motor_derate || s->n_motor_not_rec)
        fprintf(o, "  motor buses (NEMA MG 1): %d need derating, %d where operation is not recommended\n",
                s->n_motor_derate, s->n_motor_not_rec);
    if (s->relay_flag == 1)
        fprintf(o, "  feeder-head 3I0 %.1f A is over %.0f %% of the %.0f A ground-relay pickup\n",
                cabs(s->head_3i0), pct(l->relay_share), p->f->source.relay_pickup_a);
    if (!s->n_vuf_compat && !s->n_vuf_supply && !s->n_neutral_over && !s->n_motor_derate
        && !s->n_motor_not_rec && s->relay_flag != 1 && !s->n_loading_over) {
        int any = 0;
        for (int e = 0; e < 3 * s->nbuses; e++)
            any |= service_broken(p, s->service[e]);
        if (!any)
            fprintf(o, "  none\n");
    }
    if (s->n_loading_note) {
        char what[96];
        snprintf(what, sizeof what, "note: loading over %.0f %% of the rating (planning margin)",
                 pct(l->loading_warning));
        list_loading(o, p, KL_LOADING_NOTE, s->n_loading_note, what);
    }
}

/* ---- contributors */

static void print_contrib_bus(FILE *o, const kl_study_print *p, int c)
{
    const kl_study *s = p->s;
    kl_study_rows rows = rows_of(p);
    int b = s->cbus[c];
    fprintf(o, "  at bus %s (VUF %.2f %%):\n", p->f->buses[b].name, pct(s->unb[b].vuf));
    for (int j = s->cstart[c]; j < s->cstart[c + 1]; j++)
        kl_table_text_line(o, &kl_table_study_contributors, &rows, c, j);
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

/* ---- detail tables (kilter/table.h: the study's tables) */

static void print_buses(FILE *o, const kl_study_print *p)
{
    kl_study_rows rows = rows_of(p);
    fprintf(o, "\nThree-phase buses (per unit of the line-to-neutral base; %% of V1)\n");
    kl_table_text(o, &kl_table_study_buses, &rows);
    if (kl_table_count(&kl_table_study_small_buses, &rows, KL_TABLE_TEXT) == 0)
        return;
    fprintf(o, "\nSingle- and two-phase buses (per unit; no sequence components)\n");
    kl_table_text(o, &kl_table_study_small_buses, &rows);
}

static void print_sections(FILE *o, const kl_study_print *p)
{
    kl_study_rows rows = rows_of(p);
    fprintf(o, "\nSection currents, A (sending end; I2/I1 and I0/I1 in %%)\n");
    kl_table_text(o, &kl_table_study_sections, &rows);
    fprintf(o, "\nNeutral current, A (fundamental, triplen, combined RMS; earth return)\n");
    kl_table_text(o, &kl_table_study_neutrals, &rows);
    if (p->s->nruns == 0)
        return;
    fprintf(o, "\nNeutral runs (sections of one construction; required = %.0f %% of the worst current)\n",
            100.0 * (1.0 + p->opt->sizing_margin));
    kl_table_text(o, &kl_table_study_runs, &rows);
}

/* The regulators' taps and control; a unit held at a limit says so. */
static void print_regulators(FILE *o, const kl_study_print *p)
{
    kl_flow_rows flow = {p->f, p->flow};
    if (!p->f->nregulators)
        return;
    fprintf(o, "\nRegulators (relay voltages on the 120 V base)\n");
    kl_table_text(o, &kl_table_flow_regulators, &flow);
}

void kl_study_print_table(FILE *o, const kl_study_print *p)
{
    fprintf(o, "Unbalance study of %s (%s)\nLoad flow converged in %d iterations.\n\n",
            p->f->name ? p->f->name : "feeder", p->f->path ? p->f->path : "", p->iterations);
    print_summary(o, p);
    print_broken(o, p);
    print_contributors(o, p);
    print_buses(o, p);
    print_sections(o, p);
    print_regulators(o, p);
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
                120.0 * s->v_pu[3 * b + q], kl_service_class_str((kl_service_class)s->service[3 * b + q]));
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
    kl_cell v;
    if (!s->unb[b].defined)
        return;
    fprintf(o, "\nUnbalance\n  VUF %.2f %%  V0/V1 %.2f %%  LVUR %.2f %%  PVUR %.2f %%\n",
            pct(s->unb[b].vuf), pct(s->unb[b].v0_v1), pct(s->unb[b].lvur), pct(s->unb[b].pvur));
    fprintf(o, "  against %.1f %% (ANSI C84.1 recommendation): %s\n", pct(l->vuf_supply),
            s->vuf_flags[b] & KL_VUF_OVER_SUPPLY ? "OVER" : "within");
    fprintf(o, "  against %.1f %% (EN 50160 / IEC 61000-2-2): %s\n", pct(l->vuf_compat),
            s->vuf_flags[b] & KL_VUF_OVER_COMPAT ? "OVER" : "within");
    if (s->derate_zone[b] >= 0)
        fprintf(o, "  motor derating (NEMA MG 1): %s\n", bus_text(p, "motor_derating", b, &v));
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

static const kl_table *const study_tables[KL_TAB_COUNT] = {
    [KL_TAB_BUSES] = &kl_table_study_buses, [KL_TAB_SECTIONS] = &kl_table_study_sections,
    [KL_TAB_NEUTRALS] = &kl_table_study_neutrals, [KL_TAB_RUNS] = &kl_table_study_runs,
    [KL_TAB_CONTRIB] = &kl_table_study_contributors, [KL_TAB_SUMMARY] = &kl_table_study_summary,
    [KL_TAB_COMPLIANCE] = &kl_table_study_compliance,
    [KL_TAB_REGULATORS] = &kl_table_flow_regulators, /* reads kl_flow_rows */
};

int kl_study_table_parse(const char *name)
{
    for (int k = 0; k < KL_TAB_COUNT; k++)
        if (strcmp(name, study_tables[k]->name) == 0)
            return k;
    return -1;
}

void kl_study_print_csv(FILE *o, const kl_study_print *p, kl_study_table t)
{
    kl_study_rows rows = rows_of(p);
    kl_flow_rows flow = {p->f, p->flow};
    if (t == KL_TAB_REGULATORS)
        kl_table_csv(o, &kl_table_flow_regulators, &flow);
    else
        kl_table_csv(o, study_tables[(unsigned)t < KL_TAB_COUNT ? t : KL_TAB_BUSES], &rows);
}

/* ---- workbook */

void kl_study_sheets(const kl_study_print *p, kl_study_rows *rows, kl_flow_rows *flow,
                     kl_table_sheet sheet[KL_TAB_COUNT])
{
    static const kl_study_table order[KL_TAB_COUNT] = {
        KL_TAB_SUMMARY, KL_TAB_COMPLIANCE, KL_TAB_BUSES, KL_TAB_SECTIONS, KL_TAB_NEUTRALS,
        KL_TAB_RUNS, KL_TAB_CONTRIB, KL_TAB_REGULATORS,
    };
    *rows = rows_of(p);
    *flow = (kl_flow_rows){p->f, p->flow};
    for (int k = 0; k < KL_TAB_COUNT; k++) {
        const kl_table *t = study_tables[order[k]];
        sheet[k] = (kl_table_sheet){ t, order[k] == KL_TAB_REGULATORS ? (const void *)flow : rows, t->name };
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
    json_key_num(o, "loading_warning_pct", pct(l->loading_warning), 1);
    json_key_num(o, "sizing_margin_pct", pct(p->opt->sizing_margin), 0);
    fputs("},\n  \"summary\": {", o);
    json_name_or_null(o, "worst_vuf_bus", BUSNAME(s->worst_vuf), 1);
    json_name_or_null(o, "worst_v0_v1_bus", BUSNAME(s->worst_v0), 1);
    json_name_or_null(o, "worst_lvur_bus", BUSNAME(s->worst_lvur), 1);
    json_name_or_null(o, "worst_pvur_bus", BUSNAME(s->worst_pvur), 1);
    json_name_or_null(o, "lowest_voltage_bus", BUSNAME(s->lowest_v), 1);
    json_name_or_null(o, "highest_voltage_bus", BUSNAME(s->highest_v), 1);
    json_name_or_null(o, "most_loaded_neutral", s->worst_neutral >= 0 ? f->sections[s->worst_neutral].name : NULL, 1);
    json_name_or_null(o, "most_loaded_section", s->worst_loading >= 0 ? f->sections[s->worst_loading].name : NULL, 1);
    fprintf(o, "\"sections_over_rating\": %d, \"sections_over_loading_warning\": %d, ", s->n_loading_over,
            s->n_loading_note);
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
    kl_study_rows rows = rows_of(p);
    kl_flow_rows flow = {p->f, p->flow};
    fputs("{\n  ", o);
    json_name_or_null(o, "feeder", p->f->name, 0);
    fprintf(o, ",\n  \"flow\": {\"converged\": true, \"iterations\": %d},\n", p->iterations);
    json_summary(o, p);
    json_complaint(o, p);
    kl_table_json(o, &kl_table_study_buses, &rows);
    fputs(",\n", o);
    kl_table_json(o, &kl_table_study_sections, &rows);
    fputs(",\n", o);
    kl_table_json(o, &kl_table_study_runs, &rows);
    fputs(",\n", o);
    kl_table_json(o, &kl_table_study_contributors, &rows);
    fputs(",\n", o);
    kl_table_json(o, &kl_table_flow_regulators, &flow);
    fputs(",\n", o);
    fprintf(o, "  \"caution\": \"%s\"\n}\n", KL_STUDY_CAUTION);
}
