/* kilter study: load flow + the unbalance study (symmetrical components,
 * indices, compliance, neutral sizing, contributors), or with --at BUS the
 * complaint check for one service point.  Optional HTML report. */
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/flow.h"
#include "kilter/lines.h"
#include "kilter/network.h"
#include "kilter/report.h"
#include "kilter/study.h"
#include "cli.h"
#include "cli_alloc.h"
#include "cli_progress.h"
#include "study_print.h"

enum { OPT_AT, OPT_MPHASE, OPT_MLINE, OPT_TOL, OPT_VUFTOL, OPT_LIMIT, OPT_LEVEL, OPT_RANGE,
       OPT_RELAY, OPT_NSHARE, OPT_NMARGIN, OPT_TOP, OPT_TABLE, OPT_HTML, OPT_WORKBOOK, OPT_GEOJSON, OPT_SCALE, OPT_MAP,
       OPT_EARTH_RETURN, OPT_LOADWARN, OPT_ALLOC, NOPTS = OPT_ALLOC + KL_CLI_ALLOC_NOPTS };

static const kl_cli_opt opts[NOPTS] = {
    { "at", 1, "BUS", "complaint check: a focused report for this bus" },
    { "measured-phase", 1, "VA,VB,VC", "with --at: measured phase-to-neutral magnitudes, volts" },
    { "measured-line", 1, "VAB,VBC,VCA", "with --at: measured line-to-line magnitudes, volts" },
    { "tolerance", 1, "PCT", "with --at: magnitude agreement, % of nominal (default 2)" },
    { "vuf-tolerance", 1, "PCT", "with --at: VUF agreement, percentage points (default 0.5)" },
    { "limit-unbalance", 1, "PCT", "voltage unbalance limit (default 3, ANSI C84.1)" },
    { "level-unbalance", 1, "PCT", "voltage unbalance compatibility level (default 2, EN 50160)" },
    { "range", 1, "A|B", "service-voltage range that counts as broken (default A)" },
    { "relay-share", 1, "PCT", "flag head 3I0 above this % of the ground pickup (default 50)" },
    { "neutral-share", 1, "PCT", "flag neutral current above this % of ampacity (default 100)" },
    { "neutral-margin", 1, "PCT", "neutral sizing margin over the worst current (default 25)" },
    { "contributors", 1, "N", "contributors listed per bus (default 10)" },
    { "table", 1, "NAME", "CSV table: " KL_STUDY_TABLE_NAMES },
    { "html", 1, "FILE", "also write the HTML report to FILE" },
    { "workbook", 1, "FILE", KL_CLI_WORKBOOK_HELP },
    { "geojson", 1, "FILE", KL_CLI_GEOJSON_HELP },
    { "load-scale", 1, "X", "multiply every load by X (default 1)" },
    { "map", 1, "vuf|neutral|voltage|loading", "what colours the HTML report's feeder map (default vuf)" },
    KL_CLI_EARTH_RETURN_OPT,
    { "loading-warning", 1, "PCT", "note sections loaded above this % of their rating (default 80; "
      "over 100 is a violation)" },
    KL_CLI_ALLOC_OPTS,
};

typedef struct {
    kl_study_options so;
    kl_flow_options fo;
    kl_complaint_input ci;
    int range_b;
    kl_study_table table;
    int map_index;     /* --map: kl_map_index of the HTML report */
    kl_carson_form carson; /* --earth-return */
} study_args;

/* A positive finite number; pct: a percentage turned into a fraction. */
static int read_num(const char *s, const char *opt, int pct, double *out)
{
    char *end;
    double x = strtod(s, &end);
    if (end == s || *end || !isfinite(x) || !(x > 0)) {
        kl_cli_error("study: --%s needs a positive number%s, not '%s'", opt,
                     pct ? " (percent, e.g. 2.5)" : "", s);
        return KL_EXIT_USAGE;
    }
    *out = pct ? x / 100.0 : x;
    return 0;
}

/* "V1,V2,V3" in volts. */
static int read_triple(const char *s, const char *opt, double v[3])
{
    const char *p = s;
    for (int k = 0; k < 3; k++) {
        char *end;
        v[k] = strtod(p, &end);
        while (*end == ' ')
            end++;
        if (end == p || !isfinite(v[k]) || !(v[k] > 0) || (k < 2 && *end != ',') || (k == 2 && *end)) {
            kl_cli_error("study: --%s needs three positive voltages in volts separated by "
                         "commas, e.g. \"7150,7230,7080\"; got '%s'", opt, s);
            return KL_EXIT_USAGE;
        }
        p = end + 1;
    }
    return 0;
}

static int read_table(const char *t, kl_study_table *out)
{
    *out = KL_TAB_BUSES;
    if (!t)
        return 0;
    int k = kl_study_table_parse(t);
    if (k >= 0) {
        *out = (kl_study_table)k;
        return 0;
    }
    kl_cli_error("study: unknown table '%s': expected " KL_STUDY_TABLE_NAMES, t);
    return KL_EXIT_USAGE;
}

static int read_limits(const kl_cli_args *a, study_args *x)
{
    kl_limits *l = &x->so.limits;
    int rc = 0;
    if (!rc && a->val[OPT_LIMIT]) rc = read_num(a->val[OPT_LIMIT], "limit-unbalance", 1, &l->vuf_supply);
    if (!rc && a->val[OPT_LEVEL]) rc = read_num(a->val[OPT_LEVEL], "level-unbalance", 1, &l->vuf_compat);
    if (!rc && a->val[OPT_RELAY]) rc = read_num(a->val[OPT_RELAY], "relay-share", 1, &l->relay_share);
    if (!rc && a->val[OPT_NSHARE]) rc = read_num(a->val[OPT_NSHARE], "neutral-share", 1, &l->neutral_share);
    if (!rc && a->val[OPT_LOADWARN]) {
        rc = read_num(a->val[OPT_LOADWARN], "loading-warning", 1, &l->loading_warning);
        if (!rc && l->loading_warning > 1.0) {
            kl_cli_error("study: --loading-warning is a level below the rating: at most 100 (%%), not '%s'",
                         a->val[OPT_LOADWARN]);
            rc = KL_EXIT_USAGE;
        }
    }
    if (!rc && a->val[OPT_NMARGIN]) {
        rc = read_num(a->val[OPT_NMARGIN], "neutral-margin", 1, &x->so.sizing_margin);
    }
    if (!rc && a->val[OPT_RANGE]) {
        const char *r = a->val[OPT_RANGE];
        if (strcmp(r, "A") && strcmp(r, "B") && strcmp(r, "a") && strcmp(r, "b")) {
            kl_cli_error("study: --range needs A or B (ANSI C84.1 service-voltage range), not '%s'", r);
            return KL_EXIT_USAGE;
        }
        x->range_b = r[0] == 'B' || r[0] == 'b';
    }
    return rc;
}

static int read_complaint(const kl_cli_args *a, study_args *x)
{
    kl_complaint_input *ci = &x->ci;
    int rc = 0;
    ci->bus = -1;
    ci->kind = KL_MEAS_NONE;
    ci->tol_pu = 0.02;   /* 2 % of nominal: see docs/study.md */
    ci->tol_vuf = 0.005; /* 0.5 points of VUF: see docs/study.md */
    if ((a->val[OPT_MPHASE] || a->val[OPT_MLINE] || a->val[OPT_TOL] || a->val[OPT_VUFTOL])
        && !a->val[OPT_AT]) {
        kl_cli_error("study: --measured-phase, --measured-line and the tolerances need --at BUS");
        return KL_EXIT_USAGE;
    }
    if (a->val[OPT_MPHASE] && a->val[OPT_MLINE]) {
        kl_cli_error("study: give either --measured-phase or --measured-line, not both");
        return KL_EXIT_USAGE;
    }
    if (a->val[OPT_MPHASE]) {
        ci->kind = KL_MEAS_PHASE;
        rc = read_triple(a->val[OPT_MPHASE], "measured-phase", ci->mag);
    } else if (a->val[OPT_MLINE]) {
        ci->kind = KL_MEAS_LINE;
        rc = read_triple(a->val[OPT_MLINE], "measured-line", ci->mag);
    }
    if (!rc && a->val[OPT_TOL]) rc = read_num(a->val[OPT_TOL], "tolerance", 1, &ci->tol_pu);
    if (!rc && a->val[OPT_VUFTOL]) rc = read_num(a->val[OPT_VUFTOL], "vuf-tolerance", 1, &ci->tol_vuf);
    return rc;
}

static int read_options(const kl_cli_args *a, study_args *x)
{
    int rc;
    memset(x, 0, sizeof *x);
    kl_study_options_default(&x->so);
    kl_flow_options_default(&x->fo);
    if ((rc = read_limits(a, x)) || (rc = read_complaint(a, x)) || (rc = read_table(a->val[OPT_TABLE], &x->table)))
        return rc;
    if (a->val[OPT_SCALE] && (rc = read_num(a->val[OPT_SCALE], "load-scale", 0, &x->fo.load_scale)))
        return rc;
    if ((rc = kl_cli_carson_form("study", a->val[OPT_EARTH_RETURN], &x->carson)))
        return rc;
    x->map_index = a->val[OPT_MAP] ? kl_map_index_parse(a->val[OPT_MAP]) : KL_MAP_BY_VUF;
    if (x->map_index < 0) {
        kl_cli_error("study: --map needs vuf, neutral, voltage or loading, not '%s'", a->val[OPT_MAP]);
        return KL_EXIT_USAGE;
    }
    if (a->val[OPT_TOP]) {
        double n;
        if ((rc = read_num(a->val[OPT_TOP], "contributors", 0, &n)))
            return rc;
        x->so.max_contributors = n > 1000 ? 1000 : (int)n;
    }
    return 0;
}

/* What the feeder file sets, after it is loaded: its loading warning level
 * (the option wins), and the bus named by --at. */
static int resolve_at(const kl_cli_args *a, const kl_feeder *f, study_args *x)
{
    if (!a->val[OPT_LOADWARN] && f->loading_warning > 0)
        x->so.limits.loading_warning = f->loading_warning;
    if (!a->val[OPT_AT])
        return 0;
    x->ci.bus = kl_feeder_find_bus(f, a->val[OPT_AT]);
    if (x->ci.bus < 0) {
        kl_cli_error("%s: study: --at %s: no bus of that name in the feeder (names are "
                     "case-sensitive; `kilter check` lists the feeder)", f->path, a->val[OPT_AT]);
        return KL_EXIT_INPUT;
    }
    x->so.at_bus = x->ci.bus;
    return 0;
}

static int write_html(const char *path, const kl_feeder *f, const kl_flow_result *res,
                      const kl_study *s, const study_args *x)
{
    kl_report_input in;
    kl_progress prog;
    kl_cli_out out;
    kl_errors e;
    int rc;
    memset(&in, 0, sizeof in);
    in.feeder = f;
    in.ph.v = res->v;
    in.ph.v_base_ln = res->v_base_ln;
    in.ph.i = res->i;
    in.ph.i_neutral = res->i_neutral;
    in.study = s; /* the tables then show the study's own figures, as its CSV */
    in.flow = res;
    kl_cli_progress_init(&prog);
    in.progress = &prog;
    kl_report_options_default(&in.opt);
    in.opt.limits = x->so.limits;
    in.opt.load_scale = x->fo.load_scale;
    in.opt.map_index = (kl_map_index)x->map_index;
    if (x->ci.bus >= 0)
        in.opt.phasor_bus = x->ci.bus;
    if ((rc = kl_cli_out_open(&out, path)))
        return rc;
    kl_errors_init(&e);
    kl_status st = kl_report_html_write(out.f, &in, &e);
    kl_cli_progress_done(&prog);
    kl_cli_print_errors(&e);
    kl_errors_free(&e);
    if (st != KL_OK) {
        kl_cli_out_abandon(&out); /* nothing written: the report is dropped whole */
        return kl_cli_exit_code(st);
    }
    return kl_cli_out_close(&out);
}

static int emit(const kl_cli_args *a, const kl_study_print *p, const study_args *x)
{
    kl_cli_out out;
    int rc = kl_cli_out_open(&out, a->output);
    if (rc)
        return rc;
    if (a->format == KL_FMT_JSON)
        kl_study_print_json(out.f, p);
    else if (a->format == KL_FMT_CSV)
        kl_study_print_csv(out.f, p, x->table);
    else if (p->ci)
        kl_study_print_at(out.f, p);
    else
        kl_study_print_table(out.f, p);
    return kl_cli_out_close(&out);
}

typedef struct {
    kl_feeder *f;
    kl_network *net;
    kl_flow_result *res;
    kl_study_view view;
    kl_study *s;
} pipeline;

static kl_status run(pipeline *q, study_args *x, kl_complaint_result *cr, kl_errors *e)
{
    kl_status st = kl_lines_derive(q->f, x->carson, e);
    if (!st)
        st = kl_network_build(q->f, &q->net, e);
    if (!st)
        st = kl_flow_result_alloc(q->net, &q->res, e);
    if (!st)
        st = kl_flow_solve(q->net, &x->fo, q->res, e);
    if (!st)
        st = kl_study_view_init(&q->view, q->net, q->res, e);
    if (!st)
        st = kl_study_run(q->f, &q->view.ph, &q->view.paths, &x->so, &q->s, e);
    if (!st && x->ci.bus >= 0)
        st = kl_complaint_check(q->f, q->s, &q->view.ph, &x->ci, cr, e);
    return st;
}

int kl_cmd_study(int argc, char **argv)
{
    kl_cli_args a;
    study_args x;
    pipeline q;
    kl_complaint_result cr;
    kl_errors e;
    int rc = kl_cli_parse(&a, argc, argv, "Unbalance study: solves the load flow, then reports "
                          "sequence voltages and currents, unbalance indices (VUF, V0/V1, LVUR, PVUR),\n"
                          "compliance with service-voltage and unbalance limits, neutral currents and "
                          "sizes, and the loads behind the\nnegative-sequence voltage.  With --at BUS: "
                          "the complaint check for one service point.", opts, NOPTS);
    if (rc >= 0)
        return rc;
    if ((rc = read_options(&a, &x)))
        return rc;
    memset(&q, 0, sizeof q);
    if ((rc = kl_cli_load(&a, &q.f)))
        return rc;
    if ((rc = kl_cli_alloc_from_args("study", &a, OPT_ALLOC, q.f, x.carson, KL_SOLVER_SWEEP))) {
        kl_feeder_free(q.f);
        return rc;
    }
    if ((rc = resolve_at(&a, q.f, &x))) {
        kl_feeder_free(q.f);
        return rc;
    }
    kl_errors_init(&e);
    kl_status st = run(&q, &x, &cr, &e);
    kl_cli_print_errors(&e);
    if (st == KL_ENOMEM && e.count == 0)
        kl_cli_error("study: out of memory");
    rc = kl_cli_exit_code(st);
    if (!st) {
        kl_study_print p = { q.f, q.s, q.res, &q.view.ph, &x.so, q.res->total_iterations, x.range_b,
                             x.ci.bus >= 0 ? &cr : NULL, x.ci.bus >= 0 ? &x.ci : NULL };
        kl_cli_regulator_warnings(q.f, q.res);
        rc = emit(&a, &p, &x);
        if (!rc && a.val[OPT_HTML])
            rc = write_html(a.val[OPT_HTML], q.f, q.res, q.s, &x);
        if (!rc && a.val[OPT_WORKBOOK]) {
            kl_study_rows rows;
            kl_flow_rows flow;
            kl_table_sheet sheet[KL_TAB_COUNT];
            kl_study_sheets(&p, &rows, &flow, sheet);
            rc = kl_cli_workbook(a.val[OPT_WORKBOOK], sheet, KL_TAB_COUNT);
        }
        if (!rc && a.val[OPT_GEOJSON]) {
            /* every bus (not only --at's) and section with the study's figures */
            kl_study_rows rows = { q.f, q.s, &q.view.ph, -1, &x.so, x.range_b };
            kl_geojson_props buses = { &kl_table_study_buses, &rows };
            kl_geojson_props sections = { &kl_table_study_sections, &rows };
            rc = kl_cli_geojson(a.val[OPT_GEOJSON], q.f, &buses, &sections, NULL, NULL, NULL, KL_STUDY_CAUTION);
        }
    }
    kl_errors_free(&e);
    kl_study_free(q.s);
    kl_study_view_free(&q.view);
    kl_flow_result_free(q.res);
    kl_network_free(q.net);
    kl_feeder_free(q.f);
    return rc;
}
