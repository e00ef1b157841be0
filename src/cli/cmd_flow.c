/* kilter flow: the three-phase unbalanced load flow of a feeder, printed as
 * a table (default), CSV (bus or section table) or JSON (everything).  The
 * machine-readable forms are documented in docs/flow.md. */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/flow.h"
#include "kilter/lines.h"
#include "kilter/network.h"
#include "kilter/table.h"
#include "cli.h"
#include "cli_alloc.h"
#include "kilter/units.h"

static const char PH[3] = {'a', 'b', 'c'};

enum { OPT_TABLE, OPT_SOLVER, OPT_EARTH_RETURN, OPT_SCALE, OPT_WORKBOOK, OPT_GEOJSON, OPT_ALLOC, NOPTS = OPT_ALLOC + KL_CLI_ALLOC_NOPTS };

static const kl_cli_opt opts[NOPTS] = {
    {"table", 1, "buses|sections|regulators", "which table to print (default buses; JSON holds all)"},
    {"solver", 1, "sweep|nodal", "backward/forward sweep (default) or the nodal solver"},
    KL_CLI_EARTH_RETURN_OPT,
    {"load-scale", 1, "X", "multiply every load by X (default 1)"},
    {"workbook", 1, "FILE", KL_CLI_WORKBOOK_HELP},
    {"geojson", 1, "FILE", KL_CLI_GEOJSON_HELP},
    KL_CLI_ALLOC_OPTS,
};

typedef struct {
    const kl_feeder *f;
    const kl_flow_result *r;
    const char *solver;
    kl_flow_rows rows;  /* the tables' row record: f and r again */
} view;

/* The table --table names: 0 buses, 1 sections, 2 regulators. */
static const kl_table *flow_table(int which)
{
    return which == 2 ? &kl_table_flow_regulators : which ? &kl_table_flow_sections : &kl_table_flow_buses;
}

static void table_totals(FILE *o, const view *w, int regulators)
{
    const kl_flow_result *r = w->r;
    fprintf(o, "\n%-22s %10s %10s %10s %10s\n", "totals", "phase a", "phase b", "phase c", "total");
    const char *lbl[4] = {"input kW", "input kvar", "losses kW", "losses kvar"};
    for (int k = 0; k < 4; k++) {
        const kl_complex *x = k < 2 ? r->s_head : r->s_losses;
        double v[3], t = 0;
        for (int p = 0; p < 3; p++) {
            v[p] = (k % 2 ? cimag(x[p]) : creal(x[p])) / 1e3;
            t += v[p];
        }
        fprintf(o, "%-22s %10.3f %10.3f %10.3f %10.3f\n", lbl[k], v[0], v[1], v[2], t);
    }
    if (w->f->nregulators && regulators) {
        fputc('\n', o);
        kl_table_text(o, &kl_table_flow_regulators, &w->rows);
    }
}

static void print_table(FILE *o, const view *w, int sections)
{
    fprintf(o, "load flow: %s (%s solver, %d iterations, %d regulator rounds, largest last "
            "change %.2g pu)\n", w->f->name, w->solver, w->r->total_iterations,
            w->r->reg_rounds, w->r->mismatch_pu);
    fprintf(o, "caution: planning estimates from the feeder model as given; check against "
            "measurements before acting on them.\n\n");
    kl_table_text(o, flow_table(sections), &w->rows);
    table_totals(o, w, sections != 2);
}

static void json_elements(FILE *o, const view *w)
{
    static const char *const wye[3] = {"a", "b", "c"}, *const dl[3] = {"ab", "bc", "ca"};
    fprintf(o, "  \"loads\": [\n");
    for (int l = 0; l < w->f->nloads; l++) {
        const kl_load *ld = &w->f->loads[l];
        fprintf(o, "    {\"name\": ");
        kl_cli_json_str(o, ld->name);
        fprintf(o, ", \"connection\": \"%s\", \"power\": {",
                ld->conn == KL_CONN_DELTA ? "delta" : "wye");
        for (int k = 0, first = 1; k < 3; k++) {
            if (!(ld->phases & (1 << k)))
                continue;
            kl_complex s = w->r->s_load[3 * l + k];
            fprintf(o, "%s\"%s\": {\"kw\": %.8g, \"kvar\": %.8g}", first ? "" : ", ",
                    ld->conn == KL_CONN_DELTA ? dl[k] : wye[k], creal(s) / 1e3, cimag(s) / 1e3);
            first = 0;
        }
        fprintf(o, "}}%s\n", l + 1 < w->f->nloads ? "," : "");
    }
    fprintf(o, "  ],\n  \"capacitors\": [\n");
    for (int c = 0; c < w->f->ncapacitors; c++) {
        fprintf(o, "    {\"name\": ");
        kl_cli_json_str(o, w->f->capacitors[c].name);
        fprintf(o, ", \"kvar\": {\"a\": %.8g, \"b\": %.8g, \"c\": %.8g}}%s\n",
                w->r->q_cap[3 * c] / 1e3, w->r->q_cap[3 * c + 1] / 1e3, w->r->q_cap[3 * c + 2] / 1e3,
                c + 1 < w->f->ncapacitors ? "," : "");
    }
    fprintf(o, "  ],\n");
    kl_table_json(o, &kl_table_flow_regulators, &w->rows);
    fputs(",\n", o);
}

static void json_triple(FILE *o, const char *key, const kl_complex x[3], int comma)
{
    fprintf(o, "    \"%s\": {", key);
    for (int p = 0; p < 3; p++)
        fprintf(o, "\"%c\": {\"kw\": %.8g, \"kvar\": %.8g}%s", PH[p], creal(x[p]) / 1e3,
                cimag(x[p]) / 1e3, p < 2 ? ", " : "");
    fprintf(o, "}%s\n", comma ? "," : "");
}

static void print_json(FILE *o, const view *w)
{
    fprintf(o, "{\n  \"feeder\": ");
    kl_cli_json_str(o, w->f->name);
    fprintf(o, ",\n  \"solver\": \"%s\",\n  \"converged\": %s,\n  \"iterations\": %d,\n"
            "  \"regulator_rounds\": %d,\n  \"mismatch_pu\": %.3g,\n", w->solver,
            w->r->converged ? "true" : "false", w->r->total_iterations, w->r->reg_rounds,
            w->r->mismatch_pu);
    kl_table_json(o, &kl_table_flow_buses, &w->rows);
    fputs(",\n", o);
    kl_table_json(o, &kl_table_flow_sections, &w->rows);
    fputs(",\n", o);
    json_elements(o, w);
    fprintf(o, "  \"totals\": {\n");
    json_triple(o, "input", w->r->s_head, 1);
    json_triple(o, "losses", w->r->s_losses, 1);
    json_triple(o, "loads", w->r->s_loads, 0);
    fprintf(o, "  }\n}\n");
}

/* Reads the options into the flow options; 0 or an exit code. */
static int read_options(const kl_cli_args *a, kl_flow_options *o, kl_carson_form *form,
                        int *sections)
{
    kl_flow_options_default(o);
    *sections = 0;
    const char *t = a->val[OPT_TABLE], *s = a->val[OPT_SOLVER], *c = a->val[OPT_EARTH_RETURN];
    if (t && strcmp(t, "buses") && strcmp(t, "sections") && strcmp(t, "regulators")) {
        kl_cli_error("flow: unknown table '%s': expected buses, sections or regulators", t);
        return KL_EXIT_USAGE;
    }
    *sections = !t ? 0 : strcmp(t, "sections") == 0 ? 1 : strcmp(t, "regulators") == 0 ? 2 : 0;
    if (s && strcmp(s, "sweep") && strcmp(s, "nodal")) {
        kl_cli_error("flow: unknown solver '%s': expected sweep or nodal", s);
        return KL_EXIT_USAGE;
    }
    o->solver = s && strcmp(s, "nodal") == 0 ? KL_SOLVER_NODAL : KL_SOLVER_SWEEP;
    if (kl_cli_carson_form("flow", c, form))
        return KL_EXIT_USAGE;
    if (a->val[OPT_SCALE]) {
        char *end;
        o->load_scale = strtod(a->val[OPT_SCALE], &end);
        if (end == a->val[OPT_SCALE] || *end || !(o->load_scale >= 0) || !isfinite(o->load_scale)) {
            kl_cli_error("flow: --load-scale needs a number of 0 or more, not '%s'",
                         a->val[OPT_SCALE]);
            return KL_EXIT_USAGE;
        }
    }
    return 0;
}

static int emit(const kl_cli_args *a, const view *w, int sections)
{
    kl_cli_out out;
    int rc = kl_cli_out_open(&out, a->output);
    if (rc)
        return rc;
    if (a->format == KL_FMT_JSON)
        print_json(out.f, w);
    else if (a->format == KL_FMT_CSV)
        kl_table_csv(out.f, flow_table(sections), &w->rows);
    else
        print_table(out.f, w, sections);
    return kl_cli_out_close(&out);
}

int kl_cmd_flow(int argc, char **argv)
{
    kl_cli_args a;
    kl_feeder *f = NULL;
    kl_network *net = NULL;
    kl_flow_result *res = NULL;
    kl_flow_options o;
    kl_carson_form form;
    kl_errors e;
    int sections;
    int rc = kl_cli_parse(&a, argc, argv, "Solves the three-phase unbalanced load flow "
                          "(backward/forward sweep) and prints bus voltages, or section currents "
                          "with neutral and earth-return current, and the feeder totals.",
                          opts, NOPTS);
    if (rc >= 0)
        return rc;
    if ((rc = read_options(&a, &o, &form, &sections)))
        return rc;
    if ((rc = kl_cli_load(&a, &f)))
        return rc;
    if ((rc = kl_cli_alloc_from_args("flow", &a, OPT_ALLOC, f, form, o.solver))) {
        kl_feeder_free(f);
        return rc;
    }
    kl_errors_init(&e);
    kl_status st = kl_lines_derive(f, form, &e);
    if (!st)
        st = kl_network_build(f, &net, &e);
    if (!st)
        st = kl_flow_result_alloc(net, &res, &e);
    if (!st)
        st = kl_flow_solve(net, &o, res, &e);
    kl_cli_print_errors(&e);
    rc = kl_cli_exit_code(st);
    if (!st) {
        view w = {f, res, o.solver == KL_SOLVER_NODAL ? "nodal" : "sweep", {f, res}};
        kl_cli_regulator_warnings(f, res);
        rc = emit(&a, &w, sections);
        if (!rc && a.val[OPT_WORKBOOK]) {
            const kl_table_sheet sheet[3] = { { &kl_table_flow_buses, &w.rows, "buses" },
                                              { &kl_table_flow_sections, &w.rows, "sections" },
                                              { &kl_table_flow_regulators, &w.rows, "regulators" } };
            rc = kl_cli_workbook(a.val[OPT_WORKBOOK], sheet, 3);
        }
        if (!rc && a.val[OPT_GEOJSON]) {
            kl_geojson_props buses = { &kl_table_flow_buses, &w.rows };
            kl_geojson_props secs = { &kl_table_flow_sections, &w.rows };
            rc = kl_cli_geojson(a.val[OPT_GEOJSON], f, &buses, &secs, NULL, NULL, NULL, NULL);
        }
    } else if (st == KL_ENOMEM && e.count == 0) {
        kl_cli_error("flow: out of memory");
    }
    kl_errors_free(&e);
    kl_flow_result_free(res);
    kl_network_free(net);
    kl_feeder_free(f);
    return rc;
}
