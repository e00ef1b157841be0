/* kilter rebalance: suggests moves of single-phase laterals, spot loads and
 * two-phase taps between phases, each judged by a full load flow, and prints
 * the ordered plan with the objectives after every step (table, CSV, JSON).
 * Options and the plan's fields are documented in docs/rebalance.md. */
#include <ctype.h>
#include <errno.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/flow.h"
#include "kilter/lines.h"
#include "kilter/network.h"
#include "kilter/rebalance.h"
#include "kilter/report.h"
#include "kilter/study.h"
#include "kilter/table.h"
#include "cli.h"
#include "cli_alloc.h"
#include "cli_progress.h"

enum { OPT_OBJ, OPT_AT, OPT_MOVES, OPT_BUDGET, OPT_LEVELS, OPT_RANGE, OPT_SEARCH, OPT_TIME,
       OPT_SEED, OPT_PIN, OPT_FORBID, OPT_COST, OPT_RULES, OPT_WRITE, OPT_ITEMS, OPT_HTML,
       OPT_EARTH_RETURN, OPT_WORKBOOK, OPT_GEOJSON, OPT_ALLOC, NOPTS = OPT_ALLOC + KL_CLI_ALLOC_NOPTS };

static const kl_cli_opt opts[NOPTS] = {
    {"objective", 1, "NAME[=W],...", "neutral, vuf, losses, current, drop; weighted with =W "
     "(default neutral)"},
    {"at", 1, "SECTION", "judge the neutral current at this section instead of the head"},
    {"max-moves", 1, "K", "at most K moves (default 10)"},
    {"budget", 1, "COST", "at most this total move cost (default none)"},
    {"levels", 1, "S:W,...", "load levels as scale:weight, e.g. 1:1,0.4:0.5 (default 1:1)"},
    {"voltage-range", 1, "LO:HI", "service voltage range in pu (default 0.95:1.05)"},
    {"search", 1, "auto|heuristic|exhaustive", "search method (default auto)"},
    {"time-limit", 1, "SECONDS", "bound on the search time (default 30)"},
    {"seed", 1, "N", "seed of the annealing's random generator (default 1)"},
    {"pin", 1, "ITEM,...", "never move these items (tap section or load names)"},
    {"forbid", 1, "ITEM=PHASES,...", "never move an item onto these phases"},
    {"cost", 1, "ITEM=X,...", "cost of moving an item"},
    {"rules", 1, "FILE", "pins, forbidden phases and costs, one per line (docs/rebalance.md)"},
    {"write-feeder", 1, "FILE", "write the rebalanced feeder file (atomically)"},
    {"items", 0, NULL, "list the movable items and stop"},
    {"html", 1, "FILE", "also write the HTML study report with the plan to FILE"},
    KL_CLI_EARTH_RETURN_OPT,
    {"workbook", 1, "FILE", KL_CLI_WORKBOOK_HELP},
    {"geojson", 1, "FILE", "also write the feeder with the plan's moves as GeoJSON (WGS 84 "
     "longitude/latitude; needs the feeder's 'coordinates')"},
    KL_CLI_ALLOC_OPTS,
};

static const char *CAUTION =
    "caution: rephasing is field work on energized equipment; do it only under the utility's "
    "switching and safety procedures, local codes and licensed engineering review. These "
    "figures are planning estimates from the feeder model as given.";

/* ------------------------------------------------------------ options */

static int parse_double(const char *s, double *x)
{
    char *end;
    errno = 0;
    *x = strtod(s, &end);
    return end != s && *end == '\0' && !errno && isfinite(*x) ? 0 : -1;
}

static int usage(const char *what, const char *v, const char *expect)
{
    kl_cli_error("rebalance: %s '%s': %s", what, v, expect);
    return KL_EXIT_USAGE;
}

static int read_objectives(const char *v, kl_rebalance_options *o)
{
    char buf[256];
    snprintf(buf, sizeof buf, "%s", v);
    for (int k = 0; k < KL_OBJ_COUNT; k++)
        o->weight[k] = 0;
    for (char *tok = strtok(buf, ","); tok; tok = strtok(NULL, ",")) {
        char *eq = strchr(tok, '=');
        double w = 1;
        if (eq) {
            *eq = '\0';
            if (parse_double(eq + 1, &w) || w < 0)
                return usage("--objective", v, "a weight after = must be a number of 0 or more");
        }
        int k = kl_objective_parse(tok);
        if (k < 0)
            return usage("--objective", v, "expected names neutral, vuf, losses, current, drop");
        o->weight[k] = w;
    }
    return 0;
}

static int read_levels(const char *v, kl_rebalance_options *o)
{
    char buf[256];
    snprintf(buf, sizeof buf, "%s", v);
    o->nlevels = 0;
    for (char *tok = strtok(buf, ","); tok; tok = strtok(NULL, ",")) {
        char *c = strchr(tok, ':');
        double s, w = 1;
        if (c)
            *c = '\0';
        if (o->nlevels == KL_REBAL_MAX_LEVELS || parse_double(tok, &s) || !(s > 0) ||
            (c && (parse_double(c + 1, &w) || w < 0)))
            return usage("--levels", v, "expected up to 8 scale:weight pairs like 1:1,0.4:0.5 "
                         "(scale above 0, weight 0 or more)");
        o->level[o->nlevels++] = (kl_load_level){s, w};
    }
    return o->nlevels ? 0 : usage("--levels", v, "give at least one level");
}

static int read_numbers(const kl_cli_args *a, kl_rebalance_options *o)
{
    double x;
    if (a->val[OPT_MOVES]) {
        if (parse_double(a->val[OPT_MOVES], &x) || x < 0 || x > 1000 || x != floor(x))
            return usage("--max-moves", a->val[OPT_MOVES], "expected a whole number 0..1000");
        o->max_moves = (int)x;
    }
    if (a->val[OPT_BUDGET] && (parse_double(a->val[OPT_BUDGET], &o->max_cost) || o->max_cost <= 0))
        return usage("--budget", a->val[OPT_BUDGET], "expected a number above 0");
    if (a->val[OPT_TIME] &&
        (parse_double(a->val[OPT_TIME], &o->time_limit_s) || !(o->time_limit_s > 0)))
        return usage("--time-limit", a->val[OPT_TIME], "expected seconds above 0");
    if (a->val[OPT_SEED]) {
        if (parse_double(a->val[OPT_SEED], &x) || x < 0 || x != floor(x) || x > 4e9)
            return usage("--seed", a->val[OPT_SEED], "expected a whole number 0..4000000000");
        o->seed = (unsigned long)x;
    }
    if (a->val[OPT_RANGE]) {
        double lo, hi;
        char buf[64], *c;
        snprintf(buf, sizeof buf, "%s", a->val[OPT_RANGE]);
        if (!(c = strchr(buf, ':')) || (*c = '\0', parse_double(buf, &lo)) ||
            parse_double(c + 1, &hi) || !(lo > 0) || !(hi > lo))
            return usage("--voltage-range", a->val[OPT_RANGE], "expected LO:HI in pu, like 0.95:1.05");
        o->vmin_pu = lo;
        o->vmax_pu = hi;
    }
    return 0;
}

static int read_options(const kl_cli_args *a, kl_rebalance_options *o)
{
    int rc;
    kl_rebalance_options_default(o);
    if (a->val[OPT_OBJ] && (rc = read_objectives(a->val[OPT_OBJ], o)))
        return rc;
    if (a->val[OPT_LEVELS] && (rc = read_levels(a->val[OPT_LEVELS], o)))
        return rc;
    if ((rc = read_numbers(a, o)))
        return rc;
    if (a->val[OPT_SEARCH]) {
        const char *s = a->val[OPT_SEARCH];
        if (strcmp(s, "auto") == 0)
            o->mode = KL_SEARCH_AUTO;
        else if (strcmp(s, "heuristic") == 0)
            o->mode = KL_SEARCH_HEURISTIC;
        else if (strcmp(s, "exhaustive") == 0)
            o->mode = KL_SEARCH_EXHAUSTIVE;
        else
            return usage("--search", s, "expected auto, heuristic or exhaustive");
    }
    return 0;
}

/* ------------------------------------------------- pins, forbids, costs */

static int phases_parse(const char *s)
{
    int m = 0;
    for (; *s; s++) {
        char c = (char)tolower((unsigned char)*s);
        if (c < 'a' || c > 'c')
            return -1;
        m |= 1 << (c - 'a');
    }
    return m ? m : -1;
}

/* One rule: kind 0 pin, 1 forbid (arg phases), 2 cost (arg number).
 * where: "--pin" or "FILE:LINE:COL" for messages. */
static int rule_apply(kl_rephaser *rp, int kind, const char *item, const char *arg,
                      const char *where)
{
    int i = kl_rephaser_find(rp, item);
    if (i < 0) {
        kl_cli_error("%s: '%s' is not a movable item: give a tap section or a single-phase "
                     "load's name (kilter rebalance --items lists them)", where, item);
        return KL_EXIT_INPUT;
    }
    kl_rephase_item *it = &rp->items[i];
    if (kind == 0) {
        it->pinned = 1;
    } else if (kind == 1) {
        int m = arg ? phases_parse(arg) : -1;
        if (m < 0) {
            kl_cli_error("%s: '%s': expected phase letters like 'c' or 'bc'", where, arg ? arg : "");
            return KL_EXIT_INPUT;
        }
        it->forbidden |= m;
    } else {
        double c;
        if (!arg || parse_double(arg, &c) || c < 0) {
            kl_cli_error("%s: '%s': expected a cost of 0 or more", where, arg ? arg : "");
            return KL_EXIT_INPUT;
        }
        it->cost = c;
    }
    return 0;
}

static int rules_from_list(kl_rephaser *rp, int kind, const char *list, const char *where)
{
    char buf[1024];
    snprintf(buf, sizeof buf, "%s", list);
    char *save = NULL;
    for (char *tok = strtok_r(buf, ",", &save); tok; tok = strtok_r(NULL, ",", &save)) {
        char *eq = strchr(tok, '=');
        if (kind && !eq) {
            kl_cli_error("%s '%s': expected ITEM=%s", where, tok, kind == 1 ? "PHASES" : "COST");
            return KL_EXIT_USAGE;
        }
        if (eq)
            *eq = '\0';
        int rc = rule_apply(rp, kind, tok, eq ? eq + 1 : NULL, where);
        if (rc)
            return rc;
    }
    return 0;
}

/* Rules file: lines `pin ITEM`, `forbid ITEM PHASES`, `cost ITEM X`; # comments. */
static int rules_from_file(kl_rephaser *rp, const char *path)
{
    kl_cli_input(path);
    FILE *fp = fopen(path, "r");
    if (!fp) {
        kl_cli_error("%s: cannot read the rules file: %s", path, strerror(errno));
        return KL_EXIT_IO;
    }
    char line[1024], where[1100];
    int rc = 0;
    for (int ln = 1; !rc && fgets(line, sizeof line, fp); ln++) {
        char *h = strchr(line, '#');
        if (h)
            *h = '\0';
        char *w[4] = {0};
        int n = 0;
        for (char *t = strtok(line, " \t\r\n"); t && n < 4; t = strtok(NULL, " \t\r\n"))
            w[n++] = t;
        if (!n)
            continue;
        int kind = strcmp(w[0], "pin") == 0 ? 0 : strcmp(w[0], "forbid") == 0 ? 1
                 : strcmp(w[0], "cost") == 0 ? 2 : -1;
        snprintf(where, sizeof where, "%s:%d:1", path, ln);
        if (kind < 0 || n != (kind ? 3 : 2)) {
            kl_cli_error("%s: expected `pin ITEM`, `forbid ITEM PHASES` or `cost ITEM X`", where);
            rc = KL_EXIT_INPUT;
            break;
        }
        rc = rule_apply(rp, kind, w[1], kind ? w[2] : NULL, where);
    }
    fclose(fp);
    return rc;
}

static int apply_rules(const kl_cli_args *a, kl_rephaser *rp)
{
    int rc = 0;
    if (a->val[OPT_RULES] && (rc = rules_from_file(rp, a->val[OPT_RULES])))
        return rc;
    if (a->val[OPT_PIN] && (rc = rules_from_list(rp, 0, a->val[OPT_PIN], "--pin")))
        return rc;
    if (a->val[OPT_FORBID] && (rc = rules_from_list(rp, 1, a->val[OPT_FORBID], "--forbid")))
        return rc;
    if (a->val[OPT_COST] && (rc = rules_from_list(rp, 2, a->val[OPT_COST], "--cost")))
        return rc;
    return 0;
}

/* ------------------------------------------------------------- output */

typedef struct {
    const kl_feeder *f;
    const kl_rephaser *rp;
    const kl_rebalance_plan *p;
} view;

static const char *bus_name(const kl_feeder *f, int b)
{
    return b >= 0 && b < f->nbuses ? f->buses[b].name : "-";
}

/* The plan's tables (kilter/table.h) at one load level, or every level (-1). */
static kl_plan_rows rows_of(const view *w, int level)
{
    return (kl_plan_rows){w->f, w->rp, w->p, level, NULL};
}

static void table_plan(FILE *o, const view *w, int l)
{
    kl_plan_rows rows = rows_of(w, l);
    fprintf(o, "\nplan at load level %g x (weight %g); stop after any step:\n",
            w->p->level[l].scale, w->p->level[l].weight);
    kl_table_text(o, &kl_table_plan_steps, &rows);
}

static void table_summary(FILE *o, const view *w, int l)
{
    const kl_rebalance_summary *b = &w->p->before[l], *a = &w->p->after[l];
    fprintf(o, "\nbefore / after at load level %g x:\n", w->p->level[l].scale);
    const char *ph = "abc";
    for (int p = 0; p < 3; p++)
        fprintf(o, "  head current phase %c      %10.2f A   %10.2f A\n", ph[p], b->i_head[p],
                a->i_head[p]);
    fprintf(o, "  head neutral (residual)    %10.2f A   %10.2f A\n", b->i_residual, a->i_residual);
    if (w->p->neutral_section >= 0)
        fprintf(o, "  residual at %-14s %10.2f A   %10.2f A\n",
                w->f->sections[w->p->neutral_section].name, b->i_residual_at, a->i_residual_at);
    fprintf(o, "  worst VUF                  %10.3f %%   %10.3f %%   (bus %s -> %s)\n",
            100 * b->vuf_max, 100 * a->vuf_max, bus_name(w->f, b->vuf_bus), bus_name(w->f, a->vuf_bus));
    fprintf(o, "  losses                     %10.2f kW  %10.2f kW\n", b->losses_w / 1e3,
            a->losses_w / 1e3);
    fprintf(o, "  lowest voltage             %10.4f pu  %10.4f pu  (bus %s -> %s)\n", b->v_min_pu,
            a->v_min_pu, bus_name(w->f, b->v_min_bus), bus_name(w->f, a->v_min_bus));
}

static void print_table(FILE *o, const view *w)
{
    const kl_rebalance_plan *p = w->p;
    fprintf(o, "rebalance: %s\n", w->f->name);
    fprintf(o, "search: %s, %d movable items, %ld load flows, %.2f s", p->method ==
            KL_SEARCH_EXHAUSTIVE ? "exhaustive" : "greedy + annealing + descent", p->nmovable,
            p->evaluations, p->seconds);
    if (p->method != KL_SEARCH_EXHAUSTIVE)
        fprintf(o, " (greedy plan after %.2f s)", p->seconds_greedy);
    fprintf(o, "%s\n", p->timed_out ? "\n  stopped by the time limit: a longer search may "
            "find a better plan" : "");
    fprintf(o, "objective:");
    for (int k = 0; k < KL_OBJ_COUNT; k++)
        if (p->weight[k] > 0)
            fprintf(o, " %s (weight %g)", kl_objective_name((kl_objective)k), p->weight[k]);
    fprintf(o, "; score 1 = the feeder as given\n%s\n", CAUTION);
    for (int l = 0; l < p->nlevels; l++) {
        table_plan(o, w, l);
        table_summary(o, w, l);
    }
    if (!p->nsteps)
        fprintf(o, "\nno move improves the objective within the limits.\n");
}

static void print_csv(FILE *o, const view *w)
{
    kl_plan_rows rows = rows_of(w, -1);
    kl_table_csv(o, &kl_table_plan_steps, &rows);
}

/* [{summary}, ...]: one per load level. */
static void json_levels(FILE *o, const view *w, const kl_rebalance_summary *s)
{
    kl_plan_rows rows = rows_of(w, -1);
    rows.levels = s;
    fputc('[', o);
    for (int l = 0; l < w->p->nlevels; l++) {
        fputs(l ? ", {" : "{", o);
        kl_table_json_members(o, &kl_table_plan_levels, &rows, l);
        fputc('}', o);
    }
    fputc(']', o);
}

static void print_json(FILE *o, const view *w)
{
    const kl_rebalance_plan *p = w->p;
    fputs("{\"feeder\": ", o);
    kl_cli_json_str(o, w->f->name);
    fprintf(o, ", \"method\": \"%s\", \"movable_items\": %d, \"load_flows\": %ld, "
            "\"seconds\": %.3f, \"seconds_greedy\": %.3f, \"timed_out\": %s,\n "
            "\"objective_weights\": {", p->method == KL_SEARCH_EXHAUSTIVE ? "exhaustive" :
            "heuristic", p->nmovable, p->evaluations, p->seconds, p->seconds_greedy,
            p->timed_out ? "true" : "false");
    for (int k = 0; k < KL_OBJ_COUNT; k++)
        fprintf(o, "%s\"%s\": %g", k ? ", " : "", kl_objective_name((kl_objective)k), p->weight[k]);
    fputs("},\n \"levels\": [", o);
    for (int l = 0; l < p->nlevels; l++)
        fprintf(o, "%s{\"scale\": %g, \"weight\": %g}", l ? ", " : "", p->level[l].scale,
                p->level[l].weight);
    fputs("],\n \"caution\": ", o);
    kl_cli_json_str(o, CAUTION);
    fprintf(o, ",\n \"score_before\": %.8f, \"score_after\": %.8f,\n \"before\": ",
            p->score_before, p->score_after);
    json_levels(o, w, p->before);
    fputs(",\n \"after\": ", o);
    json_levels(o, w, p->after);
    fputs(",\n", o);
    kl_plan_rows rows = rows_of(w, -1);
    kl_table_json(o, &kl_table_plan_steps, &rows);
    fputs("\n}\n", o);
}

static void print_items(FILE *o, const view *w)
{
    kl_plan_rows rows = rows_of(w, -1);
    kl_table_text(o, &kl_table_plan_items, &rows);
    for (int k = 0; k < w->rp->nskipped; k++)
        fprintf(o, "not movable: %s\n", w->rp->skipped[k]);
}
/* ---- GeoJSON: the plan's moves on the map.  A lateral's move is a property
 * of its tap section, a load's of its bus: the step's JSON members (the plan's
 * steps table), under "move" (a section moves once) or in "moves" (a bus may
 * hold several moved loads). */
typedef struct {
    const view *w;
    kl_plan_rows rows;
} map_moves;

static void step_members(FILE *o, const map_moves *m, int s)
{
    fputc('{', o);
    kl_table_json_members(o, &kl_table_plan_steps, &m->rows, s + 1); /* row 0: before any move */
    fputc('}', o);
}

static void section_moves(FILE *o, const void *ctx, int k)
{
    const map_moves *m = ctx;
    const kl_rebalance_plan *p = m->w->p;
    for (int s = 0; s < p->nsteps; s++) {
        const kl_rephase_item *it = &m->w->rp->items[p->steps[s].item];
        if (it->kind == KL_ITEM_LATERAL && it->section == k) {
            fputs(", \"move\": ", o);
            step_members(o, m, s);
            return;
        }
    }
}

static void bus_moves(FILE *o, const void *ctx, int b)
{
    const map_moves *m = ctx;
    const kl_rebalance_plan *p = m->w->p;
    int n = 0;
    for (int s = 0; s < p->nsteps; s++) {
        const kl_rephase_item *it = &m->w->rp->items[p->steps[s].item];
        if (it->kind != KL_ITEM_LOAD || it->load < 0 || m->w->f->loads[it->load].bus != b)
            continue;
        fputs(n++ ? ", " : ", \"moves\": [", o);
        step_members(o, m, s);
    }
    if (n)
        fputc(']', o);
}

static int write_geojson(const char *path, const view *w)
{
    map_moves m = { w, rows_of(w, -1) };
    kl_geojson_props none = { NULL, NULL };
    return kl_cli_geojson(path, w->f, &none, &none, section_moves, bus_moves, &m, CAUTION);
}

static int emit(const kl_cli_args *a, const view *w, int items)
{
    kl_cli_out out;
    int rc = kl_cli_out_open(&out, a->output);
    if (rc)
        return rc;
    if (items)
        print_items(out.f, w);
    else if (a->format == KL_FMT_JSON)
        print_json(out.f, w);
    else if (a->format == KL_FMT_CSV)
        print_csv(out.f, w);
    else
        print_table(out.f, w);
    return kl_cli_out_close(&out);
}

/* ------------------------------------------------------------- driver */

static void progress_adapter(void *ctx, const char *stage, long done, long total)
{
    kl_progress_step((kl_progress *)ctx, stage, done, total);
}

static kl_status write_feeder(const char *path, kl_rephaser *rp, const kl_rebalance_plan *p,
                              kl_errors *e)
{
    const kl_feeder *f = rp->net->feeder;
    int *sr = calloc((size_t)f->nsections + 1, sizeof(int));
    int *lr = calloc((size_t)f->nloads + 1, sizeof(int));
    kl_status st = KL_ENOMEM;
    kl_cli_out out;
    if (sr && lr) {
        kl_rephase_feeder_rotations(rp, p->rot, sr, lr);
        /* one of the command's outputs, put in place with the others */
        if (kl_cli_out_open(&out, path))
            st = KL_EIO; /* said by kl_cli_out_open */
        else if ((st = kl_feeder_write_stream(f, sr, lr, out.f, e)) != KL_OK)
            kl_cli_out_abandon(&out);
        else if (kl_cli_out_close(&out))
            st = KL_EIO;
    }
    free(sr);
    free(lr);
    return st;
}

/* --html: the study report of the feeder as given (first load level), with
 * the plan's moves; written whole or not at all. */
static int write_html(const char *path, const kl_feeder *f, kl_network *net,
                      const kl_rephaser *rp, const kl_rebalance_plan *plan,
                      const kl_rebalance_options *o, kl_errors *e)
{
    kl_flow_result *res = NULL;
    kl_study *s = NULL;
    kl_study_view w = {0};
    kl_study_options so;
    kl_flow_options fo;
    kl_cli_out out;
    int rc = 0;
    kl_study_options_default(&so);
    if (f->loading_warning > 0) /* the feeder file's planning margin */
        so.limits.loading_warning = f->loading_warning;
    kl_flow_options_default(&fo);
    fo.load_scale = o->level[0].scale;
    kl_status st = kl_flow_result_alloc(net, &res, e);
    if (!st)
        st = kl_flow_solve(net, &fo, res, e);
    if (!st)
        st = kl_study_view_init(&w, net, res, e);
    if (!st)
        st = kl_study_run(f, &w.ph, &w.paths, &so, &s, e);
    if (!st && !(rc = kl_cli_out_open(&out, path))) {
        kl_report_input in = {.feeder = f, .ph = kl_report_phases_of(res), .study = s,
                              .plan = plan, .rephaser = rp};
        kl_report_options_default(&in.opt);
        in.opt.limits = so.limits;
        in.opt.load_scale = fo.load_scale;
        st = kl_report_html_write(out.f, &in, e);
        if (st) {
            kl_cli_out_abandon(&out); /* nothing written: the report is dropped whole */
        } else {
            rc = kl_cli_out_close(&out);
        }
    }
    if (st)
        rc = kl_cli_exit_code(st);
    kl_study_free(s);
    kl_study_view_free(&w);
    kl_flow_result_free(res);
    return rc;
}

static int run(const kl_cli_args *a, kl_feeder *f, kl_rebalance_options *o, kl_errors *e)
{
    kl_network *net = NULL;
    kl_rephaser *rp = NULL;
    kl_rebalance_plan *plan = NULL;
    kl_progress prog;
    kl_carson_form carson;
    int rc = kl_cli_carson_form("rebalance", a->val[OPT_EARTH_RETURN], &carson);
    if (rc)
        return rc;
    kl_status st = kl_lines_derive(f, carson, e);
    if (!st)
        st = kl_network_build(f, &net, e);
    if (!st)
        st = kl_rephaser_alloc(net, &rp, e);
    if (!st && a->val[OPT_AT] && (o->neutral_section = kl_feeder_find_section(f, a->val[OPT_AT])) < 0) {
        kl_cli_error("rebalance: --at '%s': no section of that name in %s", a->val[OPT_AT], f->path);
        rc = KL_EXIT_INPUT;
    }
    if (!st && !rc)
        rc = apply_rules(a, rp);
    if (!st && !rc && a->val[OPT_ITEMS]) {
        view w = {f, rp, NULL};
        rc = emit(a, &w, 1);
        goto done;
    }
    if (!st && !rc)
        st = kl_rebalance_plan_alloc(rp->nitems, o->max_moves, &plan);
    if (!st && !rc) {
        kl_cli_progress_init(&prog);
        o->progress = prog.fn ? progress_adapter : NULL;
        o->progress_ctx = &prog;
        st = kl_rebalance_run(rp, o, plan, e);
        kl_cli_progress_done(&prog);
    }
    if (!st && !rc && a->val[OPT_WRITE])
        st = write_feeder(a->val[OPT_WRITE], rp, plan, e);
    if (!st && !rc && a->val[OPT_HTML])
        rc = write_html(a->val[OPT_HTML], f, net, rp, plan, o, e);
    kl_cli_print_errors(e);
    if (st)
        rc = kl_cli_exit_code(st);
    if (!st && !rc) {
        view w = {f, rp, plan};
        rc = emit(a, &w, 0);
        if (!rc && a->val[OPT_WORKBOOK]) {
            kl_plan_rows rows = rows_of(&w, -1);
            const kl_table_sheet sheet[1] = { { &kl_table_plan_steps, &rows, "steps" } };
            rc = kl_cli_workbook(a->val[OPT_WORKBOOK], sheet, 1);
        }
        if (!rc && a->val[OPT_GEOJSON])
            rc = write_geojson(a->val[OPT_GEOJSON], &w);
    }
done:
    kl_rebalance_plan_free(plan);
    kl_rephaser_free(rp);
    kl_network_free(net);
    return rc;
}

int kl_cmd_rebalance(int argc, char **argv)
{
    kl_cli_args a;
    kl_feeder *f = NULL;
    kl_rebalance_options o;
    kl_errors e;
    int rc = kl_cli_parse(&a, argc, argv, "Suggests moves of single-phase laterals, single-phase "
                          "spot loads and two-phase taps between phases, each judged by a full "
                          "load flow, and prints the ordered plan with the objectives after "
                          "every step.", opts, NOPTS);
    if (rc >= 0)
        return rc;
    if ((rc = read_options(&a, &o)))
        return rc;
    if ((rc = kl_cli_load(&a, &f)))
        return rc;
    kl_carson_form carson;
    if ((rc = kl_cli_carson_form("rebalance", a.val[OPT_EARTH_RETURN], &carson)) ||
        (rc = kl_cli_alloc_from_args("rebalance", &a, OPT_ALLOC, f, carson, KL_SOLVER_SWEEP))) {
        kl_feeder_free(f);
        return rc;
    }
    kl_errors_init(&e);
    rc = run(&a, f, &o, &e);
    kl_errors_free(&e);
    kl_feeder_free(f);
    return rc;
}
