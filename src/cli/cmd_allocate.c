/* kilter allocate: sets the feeder's loads from the demand metered at its
 * head, by connected kVA, and prints the factors, the head match and the
 * allocated load of every element (table, CSV or JSON: docs/allocate.md);
 * --write-feeder writes the allocated feeder for later studies. */
#include <stdio.h>
#include <string.h>
#include "kilter/table.h"
#include "cli.h"
#include "cli_alloc.h"

enum { OPT_HEAD, OPT_TOL, OPT_AT, OPT_ENERGY, OPT_CLASSES, OPT_DIVERSITY, OPT_PERIOD, OPT_WRITE, OPT_TABLE,
       OPT_SOLVER, OPT_EARTH_RETURN, NOPTS };

static const kl_cli_opt opts[NOPTS] = {
    KL_CLI_HEAD_OPT,
    KL_CLI_HEAD_TOLERANCE_OPT,
    KL_CLI_READING_OPT,
    KL_CLI_ENERGY_OPTS,
    {"write-feeder", 1, "FILE", "write the allocated feeder file (one reading: a snapshot, or --reading)"},
    {"table", 1, "phases|loads", "CSV: which table (default phases; JSON holds both)"},
    {"solver", 1, "sweep|nodal", "load flow solver (default sweep)"},
    KL_CLI_EARTH_RETURN_OPT,
};

static int one_reading(const kl_cli_alloc *a)
{
    return a->first == a->last;
}

static void print_text(FILE *o, const kl_feeder *f, const kl_cli_alloc *a, const kl_alloc_rows *rows)
{
    int flows = 0;
    for (int k = a->first; k <= a->last; k++)
        flows += a->res[k].iterations;
    fprintf(o, "allocation: %s to the head measurement %s, by %s\n", f->name, a->head.file,
            kl_cli_alloc_basis_name(a));
    if (a->energy_path)
        fprintf(o, "basis: the customers' peak-demand estimates of %s (period %s), kW, by the classes of %s%s%s\n",
                a->energy.file, a->energy.period, a->classes.file, a->diversity_path ? " and the diversity factors of " : "",
                a->diversity_path ? a->diversity.file : "");
    fprintf(o, "%d reading%s, %d load flows, every measured phase within %.3g %%\n", a->last - a->first + 1,
            a->last > a->first ? "s" : "", flows, 100 * a->opt.tol);
    fprintf(o, "caution: allocated loads are estimates that share the head demand in proportion to the "
               "basis; check them against load surveys or customer meters before acting on them.\n\n");
    for (int k = 0; k < rows->nsteps; k++) {
        kl_alloc_rows one = *rows;
        one.head += k;
        one.alloc += k;
        one.nsteps = 1;
        if (one.head->time[0])
            fprintf(o, "%s%s\n", k ? "\n" : "", one.head->time);
        if (k == 0 || one.head->time[0])
            kl_table_text_head(o, &kl_table_alloc_phases);
        kl_table_text_rows(o, &kl_table_alloc_phases, &one);
    }
    if (one_reading(a)) {
        fputs("\nallocated loads (power at nominal voltage)\n", o);
        kl_table_text(o, &kl_table_alloc_loads, rows);
    }
}

static void print_json(FILE *o, const kl_feeder *f, const kl_cli_alloc *a, const kl_alloc_rows *rows)
{
    fprintf(o, "{\n  \"feeder\": ");
    kl_cli_json_str(o, f->name);
    fprintf(o, ",\n  \"measurement\": ");
    kl_cli_json_str(o, a->head.file);
    fprintf(o, ",\n  \"basis\": \"%s\",\n", a->energy_path ? "customer_energy" : "connected_kva");
    if (a->energy_path) {
        fprintf(o, "  \"period\": ");
        kl_cli_json_str(o, a->energy.period);
        fprintf(o, ",\n");
    }
    fprintf(o, "  \"tolerance_pct\": %.8g,\n", 100 * a->opt.tol);
    kl_table_json(o, &kl_table_alloc_phases, rows);
    if (one_reading(a)) {
        fputs(",\n", o);
        kl_table_json(o, &kl_table_alloc_loads, rows);
    }
    fputs("\n}\n", o);
}

static int emit(const kl_cli_args *c, const kl_feeder *f, const kl_cli_alloc *a, int loads)
{
    kl_alloc_rows rows = {f, a->head.r + a->first, a->res + a->first, a->last - a->first + 1, a->basis};
    kl_cli_out out;
    int rc = kl_cli_out_open(&out, c->output);
    if (rc)
        return rc;
    if (c->format == KL_FMT_JSON)
        print_json(out.f, f, a, &rows);
    else if (c->format == KL_FMT_CSV)
        kl_table_csv(out.f, loads ? &kl_table_alloc_loads : &kl_table_alloc_phases, &rows);
    else
        print_text(out.f, f, a, &rows);
    return kl_cli_out_close(&out);
}

static int write_feeder(const char *path, const kl_feeder *f)
{
    kl_cli_out out;
    kl_errors e;
    int rc = kl_cli_out_open(&out, path);
    if (rc)
        return rc;
    kl_errors_init(&e);
    kl_status st = kl_feeder_write_stream(f, NULL, NULL, out.f, &e);
    kl_cli_print_errors(&e);
    kl_errors_free(&e);
    if (st) {
        kl_cli_out_abandon(&out);
        return kl_cli_exit_code(st);
    }
    return kl_cli_out_close(&out);
}

static int read_options(const kl_cli_args *c, kl_cli_alloc *a, kl_carson_form *form, kl_solver *solver,
                        int *loads)
{
    const char *t = c->val[OPT_TABLE], *s = c->val[OPT_SOLVER];
    memset(a, 0, sizeof *a);
    a->head_path = c->val[OPT_HEAD];
    a->at = c->val[OPT_AT];
    a->energy_path = c->val[OPT_ENERGY];
    a->classes_path = c->val[OPT_CLASSES];
    a->diversity_path = c->val[OPT_DIVERSITY];
    a->period = c->val[OPT_PERIOD];
    if (!a->energy_path && (a->classes_path || a->diversity_path || a->period)) {
        kl_cli_error("allocate: --classes, --diversity and --period go with --energy FILE");
        return KL_EXIT_USAGE;
    }
    if (!a->head_path) {
        kl_cli_error("allocate: give the head measurement with --head FILE (a CSV file: phase,kw,kvar ...)");
        return KL_EXIT_USAGE;
    }
    if (t && strcmp(t, "phases") && strcmp(t, "loads")) {
        kl_cli_error("allocate: unknown table '%s': expected phases or loads", t);
        return KL_EXIT_USAGE;
    }
    *loads = t && strcmp(t, "loads") == 0;
    if (s && strcmp(s, "sweep") && strcmp(s, "nodal")) {
        kl_cli_error("allocate: unknown solver '%s': expected sweep or nodal", s);
        return KL_EXIT_USAGE;
    }
    *solver = s && strcmp(s, "nodal") == 0 ? KL_SOLVER_NODAL : KL_SOLVER_SWEEP;
    if (kl_cli_carson_form("allocate", c->val[OPT_EARTH_RETURN], form))
        return KL_EXIT_USAGE;
    return kl_cli_alloc_options("allocate", c->val[OPT_TOL], a);
}

int kl_cmd_allocate(int argc, char **argv)
{
    kl_cli_args c;
    kl_cli_alloc a;
    kl_feeder *f = NULL;
    kl_carson_form form;
    kl_solver solver;
    int loads;
    int rc = kl_cli_parse(&c, argc, argv, "Sets the loads from the demand metered at the feeder head: "
                          "each load gets its share by its connected_kva (or, with --energy, by its "
                          "customers' energy), one factor per phase, found by "
                          "load flows (losses included) until the head matches the measurement.",
                          opts, NOPTS);
    if (rc >= 0)
        return rc;
    memset(&a, 0, sizeof a);
    if ((rc = read_options(&c, &a, &form, &solver, &loads)))
        return rc;
    if ((rc = kl_cli_load(&c, &f)))
        return rc;
    rc = kl_cli_alloc_run("allocate", f, form, solver, 1, &a);
    if (!rc && c.val[OPT_WRITE] && !one_reading(&a)) {
        kl_cli_error("allocate: --write-feeder writes one allocation: pick the reading of the series with "
                     "--reading TIME");
        rc = KL_EXIT_USAGE;
    }
    if (!rc && loads && !one_reading(&a)) {
        kl_cli_error("allocate: --table loads lists one allocation: pick the reading with --reading TIME");
        rc = KL_EXIT_USAGE;
    }
    if (!rc)
        rc = emit(&c, f, &a, loads);
    if (!rc && c.val[OPT_WRITE])
        rc = write_feeder(c.val[OPT_WRITE], f);
    kl_cli_alloc_free(&a);
    kl_feeder_free(f);
    return rc;
}
