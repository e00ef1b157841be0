/* kilter faults: short-circuit currents at every bus (or the buses named)
 * for every fault type on the phases present, bolted and through fault
 * impedances, from the phase-frame Thevenin matrices (kilter/fault.h).
 * Text: the bus table (default) or the case table; CSV: one table; JSON:
 * both.  The machine-readable forms are documented in docs/faults.md. */
#include <complex.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/fault.h"
#include "kilter/flow.h"
#include "kilter/lines.h"
#include "kilter/network.h"
#include "kilter/relay.h"
#include "kilter/study.h"
#include "kilter/table.h"
#include "cli.h"

enum { OPT_TABLE, OPT_AT, OPT_ZE, OPT_ZP, OPT_PREFAULT, OPT_LEVELS, OPT_RLOAD, OPT_RFAULT,
       OPT_EARTH_RETURN, OPT_WORKBOOK, NOPTS };

static const kl_cli_opt opts[NOPTS] = {
    {"table", 1, "buses|cases|relay", "which table to print (default buses and, with a ground "
     "relay pickup, the relay window; JSON holds all)"},
    {"at", 1, "BUS[,BUS...]", "study these buses only (default every energized bus)"},
    {"earth-fault-ohms", 1, "Z[,Z...]", "fault impedances of earth faults, ohm (default 0,40)"},
    {"phase-fault-ohms", 1, "Z[,Z...]", "fault impedances of phase faults, ohm (default 0)"},
    {"prefault", 1, "no-load|flow", "voltages before the fault: the source's held voltage "
     "through the ideal ratios (default), or the load flow's"},
    {"load-levels", 1, "S[,S...]", "load scales the relay window's load residual is taken at "
     "(default 1)"},
    {"relay-load-margin", 1, "M", "pickup over the largest load residual asked for (default 2)"},
    {"relay-fault-margin", 1, "M", "smallest earth-fault residual over the pickup asked for "
     "(default 1.5)"},
    KL_CLI_EARTH_RETURN_OPT,
    {"workbook", 1, "FILE", KL_CLI_WORKBOOK_HELP},
};

#define MAX_ZF 8

static const char CAUTION[] =
    "caution: fault currents are planning estimates from the feeder model as given; protective "
    "settings and equipment fault duties are the protection engineer's to set and verify, "
    "under local codes, with a licensed engineer's review.";

/* "0,40" into z[] (impedances, load scales, margins); the count, or -1
 * with a message. */
static int read_ohms(const char *opt, const char *s, double *z)
{
    int n = 0;
    const char *p = s;
    while (*p) {
        char *end;
        double x = strtod(p, &end);
        if (end == p || (*end && *end != ',') || !(x >= 0) || !isfinite(x) || n == MAX_ZF) {
            kl_cli_error("faults: --%s needs up to %d numbers of 0 or more separated by "
                         "commas (such as 0,40), not '%s'", opt, MAX_ZF, s);
            return -1;
        }
        z[n++] = x;
        p = *end ? end + 1 : end;
    }
    if (n == 0) {
        kl_cli_error("faults: --%s needs at least one number", opt);
        return -1;
    }
    return n;
}

/* --at: marks the buses named; 0 or an exit code. */
static int read_at(const kl_feeder *f, const char *list, unsigned char *at)
{
    char name[256];
    const char *p = list;
    while (*p) {
        size_t n = strcspn(p, ",");
        if (n == 0 || n >= sizeof name) {
            kl_cli_error("faults: --at needs bus names separated by commas, not '%s'", list);
            return KL_EXIT_USAGE;
        }
        memcpy(name, p, n);
        name[n] = '\0';
        int b = kl_feeder_find_bus(f, name);
        if (b < 0) {
            kl_cli_error("faults: %s: no bus '%s' (names are case-sensitive; `kilter check` "
                         "lists the feeder)", f->path, name);
            return KL_EXIT_INPUT;
        }
        at[b] = 1;
        p += n;
        if (*p == ',')
            p++;
    }
    return 0;
}

static void print_text(FILE *o, const kl_feeder *f, const kl_fault_rows *rows, int cases,
                       const char *prefault)
{
    fprintf(o, "fault currents: %s (prefault voltages: %s)\n%s\n\n", f->name, prefault, CAUTION);
    if (!f->source.has_equivalent)
        fprintf(o, "note: the source has no equivalent (an ideal source): faults at the source "
                   "bus are unlimited and left blank; give source.equivalent for them.\n\n");
    if (cases == 2) {
        kl_table_text(o, &kl_table_fault_relay, rows);
        return;
    }
    kl_table_text(o, cases ? &kl_table_fault_cases : &kl_table_fault_buses, rows);
    if (!cases && kl_table_count(&kl_table_fault_relay, rows, KL_TABLE_TEXT) > 0) {
        fprintf(o, "\nground relay window at the head (load residual x margin <= pickup <= "
                   "smallest earth-fault residual / margin):\n");
        kl_table_text(o, &kl_table_fault_relay, rows);
    }
}

static void print_json(FILE *o, const kl_feeder *f, const kl_fault_rows *rows, const char *prefault)
{
    fprintf(o, "{\n  \"feeder\": ");
    kl_cli_json_str(o, f->name);
    fprintf(o, ",\n  \"prefault\": \"%s\",\n  \"caution\": ", prefault);
    kl_cli_json_str(o, CAUTION);
    fputs(",\n", o);
    kl_table_json(o, &kl_table_fault_buses, rows);
    fputs(",\n", o);
    kl_table_json(o, &kl_table_fault_cases, rows);
    fputs(",\n", o);
    kl_table_json(o, &kl_table_fault_relay, rows);
    fputs("\n}\n", o);
}

typedef struct {
    int cases, flow;     /* cases: 0 buses, 1 cases, 2 relay */
    double ze[MAX_ZF], zp[MAX_ZF];
    double levels[MAX_ZF];
    int nlevels;
    double rload, rfault;
    kl_fault_options fo;
    kl_carson_form form;
} settings;

static int read_options(const kl_cli_args *a, settings *s)
{
    const char *t = a->val[OPT_TABLE], *pf = a->val[OPT_PREFAULT];
    kl_fault_options_default(&s->fo);
    if (t && strcmp(t, "buses") && strcmp(t, "cases") && strcmp(t, "relay")) {
        kl_cli_error("faults: unknown table '%s': expected buses, cases or relay", t);
        return KL_EXIT_USAGE;
    }
    s->cases = !t ? 0 : strcmp(t, "cases") == 0 ? 1 : strcmp(t, "relay") == 0 ? 2 : 0;
    s->levels[0] = 1.0;
    s->nlevels = 1;
    if (a->val[OPT_LEVELS] &&
        (s->nlevels = read_ohms("load-levels", a->val[OPT_LEVELS], s->levels)) < 0)
        return KL_EXIT_USAGE;
    s->rload = KL_RELAY_LOAD_MARGIN;
    s->rfault = KL_RELAY_FAULT_MARGIN;
    double one[MAX_ZF];
    if (a->val[OPT_RLOAD]) {
        if (read_ohms("relay-load-margin", a->val[OPT_RLOAD], one) != 1 || !(one[0] > 0)) {
            kl_cli_error("faults: --relay-load-margin needs one number above 0");
            return KL_EXIT_USAGE;
        }
        s->rload = one[0];
    }
    if (a->val[OPT_RFAULT]) {
        if (read_ohms("relay-fault-margin", a->val[OPT_RFAULT], one) != 1 || !(one[0] > 0)) {
            kl_cli_error("faults: --relay-fault-margin needs one number above 0");
            return KL_EXIT_USAGE;
        }
        s->rfault = one[0];
    }
    if (pf && strcmp(pf, "no-load") && strcmp(pf, "flow")) {
        kl_cli_error("faults: unknown prefault '%s': expected no-load or flow", pf);
        return KL_EXIT_USAGE;
    }
    s->flow = pf && strcmp(pf, "flow") == 0;
    if (a->val[OPT_ZE]) {
        if ((s->fo.nzf_earth = read_ohms("earth-fault-ohms", a->val[OPT_ZE], s->ze)) < 0)
            return KL_EXIT_USAGE;
        s->fo.zf_earth = s->ze;
    }
    if (a->val[OPT_ZP]) {
        if ((s->fo.nzf_phase = read_ohms("phase-fault-ohms", a->val[OPT_ZP], s->zp)) < 0)
            return KL_EXIT_USAGE;
        s->fo.zf_phase = s->zp;
    }
    if (kl_cli_carson_form("faults", a->val[OPT_EARTH_RETURN], &s->form))
        return KL_EXIT_USAGE;
    return 0;
}

static int emit(const kl_cli_args *a, const kl_feeder *f, const kl_fault_rows *rows,
                const settings *s)
{
    kl_cli_out out;
    const char *pf = s->flow ? "load flow" : "no-load";
    int rc = kl_cli_out_open(&out, a->output);
    if (rc)
        return rc;
    if (a->format == KL_FMT_JSON)
        print_json(out.f, f, rows, s->flow ? "flow" : "no-load");
    else if (a->format == KL_FMT_CSV)
        kl_table_csv(out.f, s->cases == 2 ? &kl_table_fault_relay : s->cases ? &kl_table_fault_cases
                                                     : &kl_table_fault_buses, rows);
    else
        print_text(out.f, f, rows, s->cases, pf);
    rc = kl_cli_out_close(&out);
    if (!rc && a->val[OPT_WORKBOOK]) {
        const kl_table_sheet sheet[3] = {{&kl_table_fault_buses, rows, "buses"},
                                         {&kl_table_fault_cases, rows, "cases"},
                                         {&kl_table_fault_relay, rows, "relay"}};
        rc = kl_cli_workbook(a->val[OPT_WORKBOOK], sheet, 3);
    }
    return rc;
}

/* The head's load residual |3I0| at each load level, from the unbalance
 * study of a load flow at that scale (the study's own figure). */
static kl_status load_residuals(kl_feeder *f, kl_network *net, const settings *s, double *out,
                                kl_errors *e)
{
    kl_flow_result *fr = NULL;
    kl_status st = kl_flow_result_alloc(net, &fr, e);
    kl_study_options so;
    kl_study_options_default(&so);
    for (int l = 0; !st && l < s->nlevels; l++) {
        kl_flow_options o;
        kl_study_view w;
        kl_study *sd = NULL;
        kl_flow_options_default(&o);
        o.load_scale = s->levels[l];
        st = kl_flow_solve(net, &o, fr, e);
        if (!st)
            st = kl_study_view_init(&w, net, fr, e);
        if (!st) {
            st = kl_study_run(f, &w.ph, NULL, &so, &sd, e);
            kl_study_view_free(&w);
        }
        if (!st)
            out[l] = cabs(sd->head_3i0);
        kl_study_free(sd);
    }
    kl_flow_result_free(fr);
    return st;
}

/* The chain: lines, network, optionally the flow, the matrices, the study
 * and, with a pickup, the relay window. */
static kl_status run(kl_feeder *f, const settings *s, const unsigned char *at, kl_network **net,
                     kl_fault_result **res, kl_relay_window *rw, kl_errors *e)
{
    kl_fault_thevenin *t = NULL;
    kl_flow_result *fr = NULL;
    kl_fault_options fo = s->fo;
    fo.at = at;
    kl_status st = kl_lines_derive(f, s->form, e);
    if (!st)
        st = kl_network_build(f, net, e);
    if (!st && s->flow) {
        kl_flow_options o;
        kl_flow_options_default(&o);
        st = kl_flow_result_alloc(*net, &fr, e);
        if (!st)
            st = kl_flow_solve(*net, &o, fr, e);
    }
    if (!st)
        st = kl_fault_thevenin_build(*net, &t, e);
    if (!st && s->flow)
        kl_fault_thevenin_use_flow(t, *net);
    if (!st)
        st = kl_fault_study(*net, t, &fo, res, e);
    rw->pickup_a = 0;
    if (!st && f->source.relay_pickup_a > 0) {
        double load[MAX_ZF];
        st = load_residuals(f, *net, s, load, e);
        if (!st)
            st = kl_relay_window_eval(*net, t, *res, load, s->levels, s->nlevels,
                                      f->source.relay_pickup_a, s->rload, s->rfault, rw);
    }
    kl_fault_thevenin_free(t);
    kl_flow_result_free(fr);
    return st;
}

int kl_cmd_faults(int argc, char **argv)
{
    kl_cli_args a;
    kl_feeder *f = NULL;
    kl_network *net = NULL;
    kl_fault_result *res = NULL;
    unsigned char *at = NULL;
    settings s;
    kl_errors e;
    int rc = kl_cli_parse(&a, argc, argv, "Short-circuit currents at every bus for every fault "
                          "type on the phases present (three-phase, line-line, line-line-ground, "
                          "line-ground), bolted and through fault impedances, in the phase frame; "
                          "each bus's X0/X1, R0/X1, effective grounding and earth-fault factor, "
                          "and its largest and smallest fault current.", opts, NOPTS);
    if (rc >= 0)
        return rc;
    if ((rc = read_options(&a, &s)))
        return rc;
    if ((rc = kl_cli_load(&a, &f)))
        return rc;
    if (a.val[OPT_AT]) {
        at = calloc((size_t)f->nbuses + 1, 1);
        if (!at) {
            kl_cli_error("faults: out of memory");
            kl_feeder_free(f);
            return KL_EXIT_NOMEM;
        }
        if ((rc = read_at(f, a.val[OPT_AT], at))) {
            free(at);
            kl_feeder_free(f);
            return rc;
        }
    }
    kl_errors_init(&e);
    kl_relay_window rw;
    kl_status st = run(f, &s, at, &net, &res, &rw, &e);
    kl_cli_print_errors(&e);
    rc = kl_cli_exit_code(st);
    if (!st) {
        kl_fault_rows rows = {f, res, &rw};
        rc = emit(&a, f, &rows, &s);
    } else if (st == KL_ENOMEM && e.count == 0) {
        kl_cli_error("faults: out of memory");
    }
    kl_errors_free(&e);
    kl_fault_result_free(res);
    kl_network_free(net);
    free(at);
    kl_feeder_free(f);
    return rc;
}
