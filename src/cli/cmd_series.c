/* kilter series: unbalance over time.  One load flow per time step of the
 * load shapes, and the statistics the standards judge on (EN 50160 weekly
 * 95 % of 10-minute VUF values, service voltage time outside the ANSI C84.1
 * ranges, neutral current over a heating window, losses, tap operations).
 * The contract of the outputs is docs/series.md. */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/flow.h"
#include "kilter/lines.h"
#include "kilter/network.h"
#include "kilter/sequence.h"
#include "kilter/series.h"
#include "kilter/table.h"
#include "cli.h"
#include "study_print.h"

enum {
    OPT_SHAPES, OPT_ASSIGN, OPT_SHAPE, OPT_METERS, OPT_GENS, OPT_CAPS, OPT_TABLE, OPT_RECORD, OPT_RECORD_FILE, OPT_WINDOW,
    OPT_SOLVER, OPT_EARTH_RETURN, OPT_SCALE, OPT_HTML, NOPTS
};

static const kl_cli_opt opts[NOPTS] = {
    {"shapes", 1, "FILE", "load shapes CSV: a time column (ISO 8601 with UTC offset) and a column "
     "per shape (required)"},
    {"assign", 1, "FILE", "which shape drives each load: CSV `load,shape` (`feeder` for every "
     "load not named)"},
    {"shape", 1, "NAME", "the shape of every load not otherwise given one"},
    {"meters", 1, "FILE", "interval meter data CSV: meter,load,time,kwh (or kw), optionally kvarh "
     "(or kvar); a metered load follows its meters"},
    {"generators", 1, "FILE", "single-phase rooftop PV: CSV name,bus,phase,kw,power_factor,shape,"
     "control (constant-pf or volt-var, IEEE Std 1547-2018 Category B default curve)"},
    {"capacitor-control", 1, "FILE", "switched banks: CSV capacitor,control,on,off,delay_s "
     "(control voltage, var or time)"},
    {"table", 1, "unbalance|voltage|sections|regulators|capacitors|failures",
     "CSV: which table (default unbalance; text and JSON hold them all)"},
    {"record", 1, "BUS[,BUS...]", "write every step's voltages and VUF at these buses "
     "(with --record-file)"},
    {"record-file", 1, "FILE", "the CSV the step-by-step record goes to"},
    {"heating-window", 1, "MINUTES", "window of the neutral's RMS current (default 60)"},
    {"solver", 1, "sweep|nodal", "backward/forward sweep (default) or the nodal solver"},
    KL_CLI_EARTH_RETURN_OPT,
    {"load-scale", 1, "X", "multiply every load by X at every step (default 1)"},
    {"html", 1, "FILE", "also write the tables as an HTML page"},
};

static const struct {
    const char *name;
    const kl_table *t;
} tables[] = {
    {"unbalance", &kl_table_series_unbalance}, {"voltage", &kl_table_series_voltage},
    {"sections", &kl_table_series_sections},   {"regulators", &kl_table_series_regulators},
    {"capacitors", &kl_table_series_capacitors}, {"failures", &kl_table_series_failures},
};
#define NTABLES (int)(sizeof tables / sizeof tables[0])

typedef struct {
    kl_series_options so;
    kl_carson_form form;
    const kl_table *csv_table;
    int *record;       /* [nrecord] bus ids */
    int nrecord;
    FILE *rec;
    const kl_feeder *f;
    const kl_shapes *shapes;
} series_args;

static int number(const char *opt, const char *v, double lo, double hi, double *x)
{
    char *end;
    *x = strtod(v, &end);
    if (end == v || *end || !(*x >= lo && *x <= hi)) {
        kl_cli_error("series: --%s needs a number from %g to %g, not '%s'", opt, lo, hi, v);
        return KL_EXIT_USAGE;
    }
    return 0;
}

static int read_options(const kl_cli_args *a, series_args *x)
{
    kl_series_options_default(&x->so);
    const char *t = a->val[OPT_TABLE], *s = a->val[OPT_SOLVER];
    x->csv_table = &kl_table_series_unbalance;
    if (t) {
        int k = 0;
        while (k < NTABLES && strcmp(t, tables[k].name))
            k++;
        if (k == NTABLES) {
            kl_cli_error("series: unknown table '%s': expected unbalance, voltage, sections, "
                         "regulators, capacitors or failures", t);
            return KL_EXIT_USAGE;
        }
        x->csv_table = tables[k].t;
    }
    if (s && strcmp(s, "sweep") && strcmp(s, "nodal")) {
        kl_cli_error("series: unknown solver '%s': expected sweep or nodal", s);
        return KL_EXIT_USAGE;
    }
    x->so.flow.solver = s && strcmp(s, "nodal") == 0 ? KL_SOLVER_NODAL : KL_SOLVER_SWEEP;
    if (kl_cli_carson_form("series", a->val[OPT_EARTH_RETURN], &x->form))
        return KL_EXIT_USAGE;
    double v;
    if (a->val[OPT_SCALE]) {
        if (number("load-scale", a->val[OPT_SCALE], 0, 1e6, &v))
            return KL_EXIT_USAGE;
        x->so.flow.load_scale = v;
    }
    if (a->val[OPT_WINDOW]) {
        if (number("heating-window", a->val[OPT_WINDOW], 1, 10080, &v))
            return KL_EXIT_USAGE;
        x->so.heating_window_s = (int)lround(v * 60); /* 60 .. 604800 s */
    }
    if (!a->val[OPT_SHAPES]) {
        kl_cli_error("series: give the load shapes with --shapes FILE (a time column and one "
                     "column per shape)");
        return KL_EXIT_USAGE;
    }
    if (!a->val[OPT_RECORD] != !a->val[OPT_RECORD_FILE]) {
        kl_cli_error("series: --record BUSES and --record-file FILE go together");
        return KL_EXIT_USAGE;
    }
    return 0;
}

/* --record: bus names, comma-separated, each a bus of the feeder. */
static int read_record(const char *list, const kl_feeder *f, series_args *x)
{
    size_t n = strlen(list);
    x->record = malloc(sizeof(int) * (n + 1));
    if (!x->record)
        return KL_EXIT_NOMEM;
    char name[256];
    for (const char *p = list; *p;) {
        size_t k = strcspn(p, ",");
        if (k == 0 || k >= sizeof name) {
            kl_cli_error("series: --record: expected bus names separated by commas");
            return KL_EXIT_USAGE;
        }
        memcpy(name, p, k);
        name[k] = 0;
        int b = kl_feeder_find_bus(f, name);
        if (b < 0) {
            kl_cli_error("series: --record: no bus '%s' in %s", name, f->path);
            return KL_EXIT_USAGE;
        }
        x->record[x->nrecord++] = b;
        p += k + (p[k] == ',');
    }
    return 0;
}

/* The step-by-step record of the chosen buses: a CSV line per bus and phase. */
static void record_step(void *ctx, int step, kl_time t, const kl_flow_result *res, int solved)
{
    series_args *x = ctx;
    char ts[32];
    (void)step;
    kl_time_format(t, x->shapes->offset_s, ts);
    for (int i = 0; i < x->nrecord; i++) {
        int b = x->record[i];
        double vuf = NAN;
        if (solved && res->phases[b] == KL_PH_ABC) {
            kl_complex s012[3];
            kl_seq_from_phase(res->v + 3 * b, s012);
            vuf = cabs(s012[1]) > 0 ? cabs(s012[2]) / cabs(s012[1]) : NAN;
        }
        for (int p = 0; p < 3; p++) {
            if (!(x->f->buses[b].phases & (1 << p)))
                continue;
            fprintf(x->rec, "%s,", ts);
            kl_cli_csv_str(x->rec, x->f->buses[b].name);
            if (!solved) {
                fprintf(x->rec, ",%c,,,,0\n", 'a' + p);
                continue;
            }
            double mag = cabs(res->v[3 * b + p]);
            fprintf(x->rec, ",%c,%.3f,%.6f,", 'a' + p, mag, mag / res->v_base_ln[b]);
            if (vuf == vuf)
                fprintf(x->rec, "%.6f", 100 * vuf);
            fputs(",1\n", x->rec);
        }
    }
}

static void summary_text(FILE *o, const kl_feeder *f, const kl_shapes *sh, const kl_series_stats *s)
{
    char t0[32], t1[32];
    kl_time_format(s->t_first, s->offset_s, t0);
    kl_time_format(s->t_end, s->offset_s, t1);
    fprintf(o, "series: %s, shapes %s\n", f->name, sh->file);
    fprintf(o, "%d steps of %d min from %s to %s; %d solved, %d did not converge\n", s->nsteps,
            sh->interval_s / 60, t0, t1, s->nsolved, s->nfailed);
    fprintf(o, "%d week(s) of 10-minute values%s\n", s->nweeks,
            s->last_week_partial ? " (the last one short of a full week: EN 50160 judges whole "
                                   "weeks, so read its figures as indicative)" : "");
    fprintf(o, "%-22s %12s %12s %12s %12s\n", "energy", "phase a", "phase b", "phase c", "total");
    const double *rows[3] = {s->head_wh, s->head_varh, s->losses_wh};
    const char *lbl[3] = {"input kWh", "input kvarh", "losses kWh"};
    for (int k = 0; k < 3; k++)
        fprintf(o, "%-22s %12.1f %12.1f %12.1f %12.1f\n", lbl[k], rows[k][0] / 1e3, rows[k][1] / 1e3,
                rows[k][2] / 1e3, (rows[k][0] + rows[k][1] + rows[k][2]) / 1e3);
    if (s->losses_wh[0] < 0 || s->losses_wh[1] < 0 || s->losses_wh[2] < 0)
        fprintf(o, "note: a phase's losses are negative where the mutual coupling of the lines "
                "passes energy between phases; the total is the feeder's loss\n");
    fprintf(o, "caution: %s.\n", KL_STUDY_CAUTION);
}

static void print_text(FILE *o, const kl_feeder *f, const kl_shapes *sh, const kl_series_stats *s,
                       const kl_series_rows *rows)
{
    summary_text(o, f, sh, s);
    fprintf(o, "\nvoltage unbalance (VUF), EN 50160 limit %.1f %% for 95 %% of each week's "
            "10-minute values (IEC 61000-4-30 aggregation)\n", 100 * s->vuf_limit);
    kl_table_text(o, &kl_table_series_unbalance, rows);
    fprintf(o, "\nservice voltage, ANSI C84.1 ranges on the 120 V base\n");
    kl_table_text(o, &kl_table_series_voltage, rows);
    fprintf(o, "\nneutral and earth current (heating window %d min), energy losses\n",
            s->heating_window_s / 60);
    kl_table_text(o, &kl_table_series_sections, rows);
    if (f->nregulators) {
        fputc('\n', o);
        kl_table_text(o, &kl_table_series_regulators, rows);
    }
    if (f->ncapacitors) {
        fputc('\n', o);
        kl_table_text(o, &kl_table_series_capacitors, rows);
    }
    if (s->nfailed) {
        fprintf(o, "\n%d step(s) did not converge (their time left out of the statistics)%s\n",
                s->nfailed, s->nfailed > s->nfail_kept ? "; the first ones:" : ":");
        kl_table_text(o, &kl_table_series_failures, rows);
    }
}

static void print_json(FILE *o, const kl_feeder *f, const kl_shapes *sh, const kl_series_stats *s,
                       const kl_series_rows *rows)
{
    char t0[32], t1[32];
    kl_time_format(s->t_first, s->offset_s, t0);
    kl_time_format(s->t_end, s->offset_s, t1);
    fputs("{\n  \"feeder\": ", o);
    kl_cli_json_str(o, f->name);
    fputs(",\n  \"shapes\": ", o);
    kl_cli_json_str(o, sh->file);
    fprintf(o, ",\n  \"summary\": {\"steps\": %d, \"interval_s\": %d, \"start\": \"%s\", "
            "\"end\": \"%s\", \"solved\": %d, \"not_converged\": %d, \"weeks\": %d, "
            "\"last_week_partial\": %s, \"vuf_limit_pct\": ", s->nsteps, sh->interval_s, t0, t1,
            s->nsolved, s->nfailed, s->nweeks, s->last_week_partial ? "true" : "false");
    kl_cli_json_num(o, 100 * s->vuf_limit);
    fprintf(o, ", \"heating_window_s\": %d", s->heating_window_s);
    const char *keys[3] = {"input_kwh", "input_kvarh", "losses_kwh"};
    const double *vals[3] = {s->head_wh, s->head_varh, s->losses_wh};
    for (int k = 0; k < 3; k++) {
        fprintf(o, ", \"%s\": [", keys[k]);
        for (int p = 0; p < 3; p++) {
            kl_cli_json_num(o, vals[k][p] / 1e3);
            fputs(p < 2 ? ", " : "]", o);
        }
    }
    fputs("},\n", o);
    for (int k = 0; k < NTABLES; k++) {
        kl_table_json(o, tables[k].t, rows);
        fputs(",\n", o);
    }
    fprintf(o, "  \"caution\": \"%s\"\n}\n", KL_STUDY_CAUTION);
}

static void print_html(FILE *o, const kl_feeder *f, const kl_series_stats *s,
                       const kl_series_rows *rows, kl_errors *e, kl_status *st)
{
    fputs("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\"><title>kilter series"
          "</title></head><body>\n<h1>Unbalance over time</h1>\n<p>", o);
    fprintf(o, "%d steps, %d solved, %d did not converge; EN 50160 limit %.1f %%.</p>\n",
            s->nsteps, s->nsolved, s->nfailed, 100 * s->vuf_limit);
    (void)f;
    static const char *const title[NTABLES] = {
        "Voltage unbalance, worst buses first", "Service voltage, most time outside Range A first",
        "Neutral current, worst heating window first", "Regulator operations",
        "Capacitor switching", "Steps that did not converge"};
    for (int k = 0; k < NTABLES && !*st; k++) {
        kl_table_shown sh;
        if ((*st = kl_table_html_select(tables[k].t, rows, 30, &sh, e)))
            break;
        fprintf(o, "<h2>%s</h2>\n", title[k]);
        kl_table_html(o, tables[k].t, rows, "series", &sh);
        kl_table_shown_free(&sh);
    }
    fprintf(o, "<p>Caution: %s.</p>\n</body></html>\n", KL_STUDY_CAUTION);
}

static int emit(const kl_cli_args *a, const kl_feeder *f, const kl_shapes *sh,
                const kl_series_stats *s, const series_args *x)
{
    kl_series_rows rows = {f, s};
    kl_cli_out out;
    int rc = kl_cli_out_open(&out, a->output);
    if (rc)
        return rc;
    if (a->format == KL_FMT_JSON)
        print_json(out.f, f, sh, s, &rows);
    else if (a->format == KL_FMT_CSV)
        kl_table_csv(out.f, x->csv_table, &rows);
    else
        print_text(out.f, f, sh, s, &rows);
    if ((rc = kl_cli_out_close(&out)))
        return rc;
    if (!a->val[OPT_HTML])
        return 0;
    if ((rc = kl_cli_out_open(&out, a->val[OPT_HTML])))
        return rc;
    kl_errors e;
    kl_status st = KL_OK;
    kl_errors_init(&e);
    print_html(out.f, f, s, &rows, &e, &st);
    kl_cli_print_errors(&e);
    kl_errors_free(&e);
    if (st) {
        kl_cli_out_abandon(&out);
        return kl_cli_exit_code(st);
    }
    return kl_cli_out_close(&out);
}

/* Shapes and the plan; 0 or an exit code (errors printed). */
static kl_status read_inputs(const kl_cli_args *a, kl_feeder *f, kl_shapes *sh, kl_series_plan *p,
                             kl_series_generators *g, kl_errors *e)
{
    kl_cli_input(a->val[OPT_SHAPES]);
    kl_status st = kl_shapes_read(a->val[OPT_SHAPES], sh, e);
    if (!st && a->val[OPT_GENS]) {
        kl_cli_input(a->val[OPT_GENS]);
        st = kl_series_generators_read(g, f, sh, a->val[OPT_GENS], e);
    }
    if (!st)
        st = kl_series_plan_init(p, f, sh, e);
    if (!st)
        st = kl_series_plan_generators(p, g);
    if (!st && a->val[OPT_ASSIGN]) {
        kl_cli_input(a->val[OPT_ASSIGN]);
        st = kl_series_plan_read(p, f, a->val[OPT_ASSIGN], e);
    }
    if (!st && a->val[OPT_SHAPE])
        st = kl_series_plan_default(p, f, a->val[OPT_SHAPE], e);
    if (!st && a->val[OPT_METERS]) {
        kl_cli_input(a->val[OPT_METERS]);
        st = kl_series_meters_read(p, f, a->val[OPT_METERS], e);
    }
    if (!st && a->val[OPT_CAPS]) {
        kl_cli_input(a->val[OPT_CAPS]);
        st = kl_series_controls_read(p, f, a->val[OPT_CAPS], e);
    }
    return st;
}

int kl_cmd_series(int argc, char **argv)
{
    kl_cli_args a;
    kl_feeder *f = NULL;
    kl_network *net = NULL;
    kl_flow_result *res = NULL;
    kl_series_stats *s = NULL;
    kl_shapes sh = {0};
    kl_series_plan plan = {0};
    kl_series_generators gens = {0};
    series_args x = {0};
    kl_cli_out rec = {0};
    kl_errors e;
    int rc = kl_cli_parse(&a, argc, argv, "Runs one load flow per time step of the load shapes "
                          "and reports unbalance over time as the standards judge it: EN 50160 "
                          "weekly 95 % of 10-minute VUF values, time outside the service-voltage "
                          "ranges, neutral current over a heating window, losses, tap operations.",
                          opts, NOPTS);
    if (rc >= 0)
        return rc;
    if ((rc = read_options(&a, &x)) || (rc = kl_cli_load(&a, &f)))
        return rc;
    if (a.val[OPT_RECORD] && (rc = read_record(a.val[OPT_RECORD], f, &x)))
        goto done;
    kl_errors_init(&e);
    kl_status st = read_inputs(&a, f, &sh, &plan, &gens, &e);
    if (!st)
        st = kl_lines_derive(f, x.form, &e);
    if (!st)
        st = kl_network_build(f, &net, &e);
    if (!st)
        st = kl_flow_result_alloc(net, &res, &e);
    if (!st && x.nrecord) {
        if ((rc = kl_cli_out_open(&rec, a.val[OPT_RECORD_FILE]))) {
            kl_errors_free(&e);
            goto done;
        }
        fputs("time,bus,phase,volts,pu,vuf_pct,solved\n", rec.f);
        x.rec = rec.f;
        x.f = f;
        x.shapes = &sh;
        x.so.on_step = record_step;
        x.so.ctx = &x;
    }
    if (!st)
        st = kl_series_run(f, net, &plan, &x.so, res, &s, &e);
    kl_cli_print_errors(&e);
    kl_errors_free(&e);
    rc = kl_cli_exit_code(st);
    if (x.rec) {
        if (st)
            kl_cli_out_abandon(&rec);
        else if ((rc = kl_cli_out_close(&rec)))
            goto done;
    }
    if (!st)
        rc = emit(&a, f, &sh, s, &x);
    else if (st == KL_ENOMEM)
        kl_cli_error("series: out of memory");
done:
    free(x.record);
    kl_series_stats_free(s);
    kl_series_plan_free(&plan);
    kl_shapes_free(&sh);
    kl_flow_result_free(res);
    kl_network_free(net);
    kl_feeder_free(f);
    kl_series_generators_free(&gens); /* after the feeder: its appended loads name them */
    return rc;
}
