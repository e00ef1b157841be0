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
#include "cli.h"
#include "kilter/units.h"

static const double RAD2DEG = KL_DEG_PER_RAD;
static const char PH[3] = {'a', 'b', 'c'};

enum { OPT_TABLE, OPT_SOLVER, OPT_CARSON, OPT_SCALE, NOPTS };

static const kl_cli_opt opts[NOPTS] = {
    {"table", 1, "buses|sections", "which table to print (default buses; JSON holds both)"},
    {"solver", 1, "sweep|nodal", "backward/forward sweep (default) or the nodal solver"},
    KL_CLI_CARSON_OPT,
    {"load-scale", 1, "X", "multiply every load by X (default 1)"},
};

typedef struct {
    const kl_feeder *f;
    const kl_flow_result *r;
    const char *solver;
} view;

static double deg(kl_complex z)
{
    return cabs(z) > 0 ? carg(z) * RAD2DEG : 0.0;
}

/* Phases to print for a section: its own mask, or the sending bus's. */
static int section_phases(const view *w, int s)
{
    const kl_section *sc = &w->f->sections[s];
    int up = sc->reversed ? sc->to : sc->from;
    return sc->phases ? sc->phases : w->r->phases[up];
}

static void table_buses(FILE *o, const view *w)
{
    fprintf(o, "%-16s %-5s %12s %9s %9s\n", "bus", "phase", "volts", "pu", "angle");
    for (int b = 0; b < w->f->nbuses; b++)
        for (int p = 0; p < 3; p++) {
            if (!(w->r->phases[b] & (1 << p)))
                continue;
            kl_complex v = w->r->v[3 * b + p];
            fprintf(o, "%-16s %-5c %12.1f %9.4f %9.2f\n", w->f->buses[b].name, PH[p], cabs(v),
                    cabs(v) / w->r->v_base_ln[b], deg(v));
        }
}

static void table_sections(FILE *o, const view *w)
{
    fprintf(o, "%-16s %-5s %10s %9s %11s %11s %10s\n", "section", "phase", "amps", "angle",
            "in kW", "in kvar", "loss kW");
    for (int s = 0; s < w->f->nsections; s++) {
        if (!w->r->sec_solved[s]) {
            fprintf(o, "%-16s (open)\n", w->f->sections[s].name);
            continue;
        }
        int m = section_phases(w, s);
        for (int p = 0; p < 3; p++) {
            if (!(m & (1 << p)))
                continue;
            kl_complex i = w->r->i[3 * s + p], si = w->r->s_in[3 * s + p];
            fprintf(o, "%-16s %-5c %10.2f %9.2f %11.2f %11.2f %10.3f\n", w->f->sections[s].name,
                    PH[p], cabs(i), deg(i), creal(si) / 1e3, cimag(si) / 1e3,
                    creal(w->r->s_loss[3 * s + p]) / 1e3);
        }
        if (w->f->sections[s].kind == KL_SEC_LINE)
            fprintf(o, "%-16s %-5s %10.2f %9.2f   (earth return %.2f A)\n", w->f->sections[s].name,
                    "n", cabs(w->r->i_neutral[s]), deg(w->r->i_neutral[s]),
                    cabs(w->r->i_earth[s]));
    }
}

static void table_totals(FILE *o, const view *w)
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
    for (int g = 0; g < w->f->nregulators; g++)
        fprintf(o, "regulator %-12s taps a %d, b %d, c %d\n", w->f->regulators[g].name,
                r->tap[3 * g], r->tap[3 * g + 1], r->tap[3 * g + 2]);
}

static void print_table(FILE *o, const view *w, int sections)
{
    fprintf(o, "load flow: %s (%s solver, %d iterations, %d regulator rounds, largest last "
            "change %.2g pu)\n", w->f->name, w->solver, w->r->total_iterations,
            w->r->reg_rounds, w->r->mismatch_pu);
    fprintf(o, "caution: planning estimates from the feeder model as given; check against "
            "measurements before acting on them.\n\n");
    if (sections)
        table_sections(o, w);
    else
        table_buses(o, w);
    table_totals(o, w);
}

static void csv_buses(FILE *o, const view *w)
{
    fprintf(o, "bus,phase,v_volts,v_pu,angle_deg,base_ln_volts\n");
    for (int b = 0; b < w->f->nbuses; b++)
        for (int p = 0; p < 3; p++) {
            if (!(w->r->phases[b] & (1 << p)))
                continue;
            kl_complex v = w->r->v[3 * b + p];
            kl_cli_csv_str(o, w->f->buses[b].name);
            fprintf(o, ",%c,%.6f,%.8f,%.6f,%.6f\n", PH[p], cabs(v), cabs(v) / w->r->v_base_ln[b],
                    deg(v), w->r->v_base_ln[b]);
        }
}

static void csv_sections(FILE *o, const view *w)
{
    fprintf(o, "section,phase,i_amps,i_angle_deg,p_in_kw,q_in_kvar,p_loss_kw,q_loss_kvar,"
               "i_neutral_amps,i_neutral_angle_deg,i_earth_amps,i_earth_angle_deg\n");
    for (int s = 0; s < w->f->nsections; s++) {
        if (!w->r->sec_solved[s])
            continue;
        int m = section_phases(w, s);
        kl_complex in = w->r->i_neutral[s], ie = w->r->i_earth[s];
        for (int p = 0; p < 3; p++) {
            if (!(m & (1 << p)))
                continue;
            kl_complex i = w->r->i[3 * s + p], si = w->r->s_in[3 * s + p];
            kl_complex sl = w->r->s_loss[3 * s + p];
            kl_cli_csv_str(o, w->f->sections[s].name);
            fprintf(o, ",%c,%.6f,%.6f,%.6f,%.6f,%.6f,%.6f,%.6f,%.6f,%.6f,%.6f\n", PH[p], cabs(i),
                    deg(i), creal(si) / 1e3, cimag(si) / 1e3, creal(sl) / 1e3, cimag(sl) / 1e3,
                    cabs(in), deg(in), cabs(ie), deg(ie));
        }
    }
}

static void json_phasor(FILE *o, const char *key, kl_complex z, const char *unit, int comma)
{
    fprintf(o, "\"%s\": {\"%s\": %.8g, \"angle_deg\": %.6f}%s", key, unit, cabs(z), deg(z),
            comma ? ", " : "");
}

static void json_buses(FILE *o, const view *w)
{
    fprintf(o, "  \"buses\": [\n");
    for (int b = 0; b < w->f->nbuses; b++) {
        fprintf(o, "    {\"name\": ");
        kl_cli_json_str(o, w->f->buses[b].name);
        fprintf(o, ", \"base_ln_volts\": %.8g, \"phases\": {", w->r->v_base_ln[b]);
        int first = 1;
        for (int p = 0; p < 3; p++) {
            if (!(w->r->phases[b] & (1 << p)))
                continue;
            kl_complex v = w->r->v[3 * b + p];
            fprintf(o, "%s\"%c\": {\"volts\": %.8g, \"pu\": %.8g, \"angle_deg\": %.6f}",
                    first ? "" : ", ", PH[p], cabs(v), cabs(v) / w->r->v_base_ln[b], deg(v));
            first = 0;
        }
        fprintf(o, "}}%s\n", b + 1 < w->f->nbuses ? "," : "");
    }
    fprintf(o, "  ],\n");
}

static void json_sections(FILE *o, const view *w)
{
    fprintf(o, "  \"sections\": [\n");
    for (int s = 0; s < w->f->nsections; s++) {
        const kl_section *sc = &w->f->sections[s];
        fprintf(o, "    {\"name\": ");
        kl_cli_json_str(o, sc->name);
        fprintf(o, ", \"solved\": %s, \"phases\": {", w->r->sec_solved[s] ? "true" : "false");
        int m = w->r->sec_solved[s] ? section_phases(w, s) : 0, first = 1;
        for (int p = 0; p < 3; p++) {
            if (!(m & (1 << p)))
                continue;
            kl_complex si = w->r->s_in[3 * s + p], sl = w->r->s_loss[3 * s + p];
            fprintf(o, "%s\"%c\": {", first ? "" : ", ", PH[p]);
            json_phasor(o, "current", w->r->i[3 * s + p], "amps", 1);
            json_phasor(o, "current_receiving", w->r->i_recv[3 * s + p], "amps", 1);
            fprintf(o, "\"p_in_kw\": %.8g, \"q_in_kvar\": %.8g, \"p_loss_kw\": %.8g, "
                    "\"q_loss_kvar\": %.8g}", creal(si) / 1e3, cimag(si) / 1e3, creal(sl) / 1e3,
                    cimag(sl) / 1e3);
            first = 0;
        }
        fprintf(o, "}, ");
        json_phasor(o, "neutral", w->r->i_neutral[s], "amps", 1);
        json_phasor(o, "earth_return", w->r->i_earth[s], "amps", 0);
        fprintf(o, "}%s\n", s + 1 < w->f->nsections ? "," : "");
    }
    fprintf(o, "  ],\n");
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
    fprintf(o, "  ],\n  \"regulators\": [\n");
    for (int g = 0; g < w->f->nregulators; g++) {
        fprintf(o, "    {\"name\": ");
        kl_cli_json_str(o, w->f->regulators[g].name);
        fprintf(o, ", \"taps\": {\"a\": %d, \"b\": %d, \"c\": %d}}%s\n", w->r->tap[3 * g],
                w->r->tap[3 * g + 1], w->r->tap[3 * g + 2], g + 1 < w->f->nregulators ? "," : "");
    }
    fprintf(o, "  ],\n");
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
    json_buses(o, w);
    json_sections(o, w);
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
    const char *t = a->val[OPT_TABLE], *s = a->val[OPT_SOLVER], *c = a->val[OPT_CARSON];
    if (t && strcmp(t, "buses") && strcmp(t, "sections")) {
        kl_cli_error("flow: unknown table '%s': expected buses or sections", t);
        return KL_EXIT_USAGE;
    }
    *sections = t && strcmp(t, "sections") == 0;
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
    else if (a->format == KL_FMT_CSV && sections)
        csv_sections(out.f, w);
    else if (a->format == KL_FMT_CSV)
        csv_buses(out.f, w);
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
        view w = {f, res, o.solver == KL_SOLVER_NODAL ? "nodal" : "sweep"};
        rc = emit(&a, &w, sections);
    } else if (st == KL_ENOMEM && e.count == 0) {
        kl_cli_error("flow: out of memory");
    }
    kl_errors_free(&e);
    kl_flow_result_free(res);
    kl_network_free(net);
    kl_feeder_free(f);
    return rc;
}
