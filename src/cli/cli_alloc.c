/* kilter program: allocating the metered head demand to the feeder's loads
 * before a command solves it (kilter allocate, and --head on the commands
 * that solve a load flow).  The feeder's loads are set in place; the network
 * built here for the allocation is dropped, so the command goes on as with a
 * feeder file that gave those powers. */
#include <complex.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include "kilter/allocate.h"
#include "kilter/flow.h"
#include "kilter/lines.h"
#include "kilter/network.h"
#include "cli_alloc.h"

/* The options' values into a->opt; 0 or an exit code. */
int kl_cli_alloc_options(const char *cmd, const char *tol, kl_cli_alloc *a)
{
    kl_alloc_options_default(&a->opt);
    if (tol) {
        char *end;
        double x = strtod(tol, &end);
        if (end == tol || *end || !(x > 0) || !(x <= 10)) {
            kl_cli_error("%s: --head-tolerance needs a percentage above 0 and at most 10 (e.g. 0.1), not '%s'",
                         cmd, tol);
            return KL_EXIT_USAGE;
        }
        a->opt.tol = x / 100;
    }
    return 0;
}

const char *kl_cli_alloc_basis_name(const kl_cli_alloc *a)
{
    return a->energy_path ? "customer energy" : "connected kVA";
}

/* The basis: connected kVA, or the customers' energy through their classes
 * and the diversity table. */
static kl_status basis_of(const char *cmd, kl_feeder *f, kl_cli_alloc *a, kl_errors *e, int *rc)
{
    int n = 0;
    kl_status st;
    if (!a->energy_path) {
        if (kl_alloc_basis_kva(f, a->basis) > 0)
            return KL_OK;
        kl_errors_add(e, f->path, 0, 0, NULL, "no load has connected_kva to allocate by: give the loads "
                      "(distribution transformers) their nameplate kVA, or allocate by energy (--energy)");
        return KL_EINPUT;
    }
    if (!a->classes_path) {
        kl_cli_error("%s: --energy needs --classes FILE (each customer class's kWh-to-kW relation)", cmd);
        *rc = KL_EXIT_USAGE;
        return KL_EARG;
    }
    kl_cli_input(a->energy_path);
    kl_cli_input(a->classes_path);
    kl_cli_input(a->diversity_path);
    st = kl_class_read(a->classes_path, &a->classes, e);
    if (!st && a->diversity_path)
        st = kl_diversity_read(a->diversity_path, &a->diversity, e);
    if (!st)
        st = kl_energy_read(a->energy_path, f, &a->classes, a->period, &a->energy, e);
    if (!st)
        st = kl_alloc_basis_energy(f, &a->energy, &a->classes, a->diversity_path ? &a->diversity : NULL,
                                   a->basis, &n, e);
    if (!st && !n) {
        kl_errors_add(e, a->energy_path, 0, 0, NULL, "no customer with energy above 0 on an energized load: "
                      "nothing to allocate by");
        st = KL_EINPUT;
    }
    return st;
}

/* The reading called `at` (the only one of a snapshot); -1 after a message. */
static int find_step(const char *cmd, const kl_head_series *h, const char *at)
{
    if (!at)
        return h->series && h->n > 1 ? -2 : 0;
    if (!h->series) {
        kl_cli_error("%s: --reading %s: %s is a snapshot (one row per phase), not a series", cmd, at, h->file);
        return -1;
    }
    for (int k = 0; k < h->n; k++)
        if (strcmp(h->r[k].time, at) == 0)
            return k;
    kl_cli_error("%s: --reading %s: no such time in %s (it runs from %s to %s)", cmd, at, h->file, h->r[0].time,
                 h->r[h->n - 1].time);
    return -1;
}

static kl_status solve_steps(kl_feeder *f, kl_cli_alloc *a, kl_solver solver, int first, int last,
                             kl_errors *e)
{
    kl_network *net = NULL;
    kl_flow_result *res = NULL;
    a->opt.flow.solver = solver;
    kl_status st = kl_network_build(f, &net, e);
    if (!st)
        st = kl_flow_result_alloc(net, &res, e);
    for (int k = first; !st && k <= last; k++) {
        st = kl_alloc_solve(f, net, a->basis, &a->head.r[k], &a->opt, res, &a->res[k], e);
        if (st && a->head.series)
            kl_errors_add(e, a->head.file, a->head.r[k].loc[0].line ? a->head.r[k].loc[0].line : 0, 0, NULL,
                          "(the reading of %s)", a->head.r[k].time);
    }
    kl_flow_result_free(res);
    kl_network_free(net);
    return st;
}

int kl_cli_alloc_run(const char *cmd, kl_feeder *f, kl_carson_form form, kl_solver solver, int every,
                     kl_cli_alloc *a)
{
    kl_errors e;
    kl_errors_init(&e);
    kl_cli_input(a->head_path);
    kl_status st = kl_head_read(a->head_path, &a->head, &e);
    int rc = 0;
    if (!st)
        st = kl_lines_derive(f, form, &e);
    if (!st) {
        int k = find_step(cmd, &a->head, a->at);
        if (k == -2 && !every) {
            kl_cli_error("%s: %s is a series of %d readings: pick one with --reading TIME (from %s to %s)", cmd,
                         a->head.file, a->head.n, a->head.r[0].time, a->head.r[a->head.n - 1].time);
            rc = KL_EXIT_USAGE;
        } else if (k == -1) {
            rc = KL_EXIT_USAGE;
        } else {
            a->first = k >= 0 ? k : 0;
            a->last = k >= 0 ? k : a->head.n - 1;
            a->basis = malloc((3 * (size_t)f->nloads + 1) * sizeof *a->basis);
            a->res = calloc((size_t)a->head.n, sizeof *a->res);
            if (!a->basis || !a->res)
                st = KL_ENOMEM;
            else if (!(st = basis_of(cmd, f, a, &e, &rc)))
                st = solve_steps(f, a, solver, a->first, a->last, &e);
        }
    }
    kl_cli_print_errors(&e);
    if (st == KL_ENOMEM && e.count == 0)
        kl_cli_error("%s: out of memory while allocating", cmd);
    kl_errors_free(&e);
    return rc ? rc : kl_cli_exit_code(st);
}

void kl_cli_alloc_free(kl_cli_alloc *a)
{
    kl_head_series_free(&a->head);
    kl_class_table_free(&a->classes);
    kl_diversity_table_free(&a->diversity);
    kl_energy_table_free(&a->energy);
    free(a->basis);
    free(a->res);
    a->basis = NULL;
    a->res = NULL;
}

int kl_cli_alloc_from_args(const char *cmd, const kl_cli_args *c, int first, kl_feeder *f, kl_carson_form form,
                           kl_solver solver)
{
    kl_cli_alloc a;
    const char *const *v = c->val + first;
    memset(&a, 0, sizeof a);
    if (!v[0]) {
        for (int k = 1; k < KL_CLI_ALLOC_NOPTS; k++)
            if (v[k]) {
                kl_cli_error("%s: the allocation options (--head-tolerance, --reading, --energy ...) go with "
                             "--head FILE", cmd);
                return KL_EXIT_USAGE;
            }
        return 0;
    }
    a.head_path = v[0];
    a.at = v[2];
    a.energy_path = v[3];
    a.classes_path = v[4];
    a.diversity_path = v[5];
    a.period = v[6];
    if (!a.energy_path && (a.classes_path || a.diversity_path || a.period)) {
        kl_cli_error("%s: --classes, --diversity and --period go with --energy FILE", cmd);
        return KL_EXIT_USAGE;
    }
    int rc = kl_cli_alloc_options(cmd, v[1], &a);
    if (!rc)
        rc = kl_cli_alloc_run(cmd, f, form, solver, 0, &a);
    if (!rc) {
        /* the one line that says the loads are not the file's */
        const kl_alloc_result *r = &a.res[a.first];
        fprintf(stderr, "kilter: note: loads allocated by %s to %s%s%s (%d load flows):", kl_cli_alloc_basis_name(&a),
                a.head.file, a.head.series ? " at " : "", a.head.series ? a.head.r[a.first].time : "",
                r->iterations);
        for (int p = 0; p < 3; p++)
            if (r->phases & (1 << p))
                fprintf(stderr, " %c %.4f%+.4fj", 'a' + p, creal(r->factor[p]), cimag(r->factor[p]));
        fputc('\n', stderr);
    }
    kl_cli_alloc_free(&a);
    return rc;
}
