/* kilter program: allocation of the metered head demand before a solve
 * (cli_alloc.c), shared by `kilter allocate` and the commands that take
 * --head. */
#ifndef KILTER_CLI_ALLOC_H
#define KILTER_CLI_ALLOC_H

#include "kilter/allocate.h"
#include "cli.h"

typedef struct {
    const char *head_path;  /* --head FILE */
    const char *at;         /* --reading TIME: the reading of a series; NULL */
    const char *energy_path;    /* --energy FILE: allocate by customer energy; NULL: by connected kVA */
    const char *classes_path;   /* --classes FILE */
    const char *diversity_path; /* --diversity FILE; NULL: none */
    const char *period;         /* --period P; NULL: the energy file's only one */
    kl_class_table classes;     /* (owned) */
    kl_diversity_table diversity;
    kl_energy_table energy;
    kl_alloc_options opt;
    kl_head_series head;    /* read by kl_cli_alloc_run (owned) */
    double *basis;          /* [3 * nloads] (owned) */
    kl_alloc_result *res;   /* [head.n] the readings allocated: first .. last (owned) */
    int first, last;
} kl_cli_alloc;

/* --head, --head-tolerance and --reading, as every command that allocates lists them. */
#define KL_CLI_HEAD_OPT {"head", 1, "FILE", "allocate the loads to the demand metered at the feeder head (CSV, docs/allocate.md)"}
#define KL_CLI_HEAD_TOLERANCE_OPT {"head-tolerance", 1, "PCT", "allocation: head match per phase, percent (default 0.1)"}
#define KL_CLI_READING_OPT {"reading", 1, "TIME", "allocation: the reading (time stamp) of a measured series to allocate to"}

#define KL_CLI_ENERGY_OPTS \
    {"energy", 1, "FILE", "allocation by energy: customers' billed kWh per load (CSV: customer,load,kwh,period,class)"}, \
    {"classes", 1, "FILE", "with --energy: each customer class's kWh-to-kW relation (CSV)"}, \
    {"diversity", 1, "FILE", "with --energy: diversity factor by number of customers (CSV)"}, \
    {"period", 1, "P", "with --energy: the billing period to use (default: the file's only one)"}

/* The allocation options of a command that solves a load flow, last in its
 * option list, in this order: --head, --head-tolerance, --reading, --energy,
 * --classes, --diversity, --period. */
#define KL_CLI_ALLOC_NOPTS 7
#define KL_CLI_ALLOC_OPTS KL_CLI_HEAD_OPT, KL_CLI_HEAD_TOLERANCE_OPT, KL_CLI_READING_OPT, KL_CLI_ENERGY_OPTS
/* With --head (a->val[first] on), allocates f's loads to the measurement
 * before the command solves, and notes the factors on standard error;
 * without it, refuses the other allocation options.  0 or an exit code. */
int kl_cli_alloc_from_args(const char *cmd, const kl_cli_args *a, int first, kl_feeder *f, kl_carson_form form,
                           kl_solver solver);

int kl_cli_alloc_options(const char *cmd, const char *tol, kl_cli_alloc *a);
/* "connected kVA" or "customer energy". */
const char *kl_cli_alloc_basis_name(const kl_cli_alloc *a);
/* Reads a->head_path, allocates f's loads (by connected kVA, or by energy) to the
 * reading --reading names (every reading when `every` and no --reading; the feeder is
 * left at the last), printing any message.  0 or an exit code. */
int kl_cli_alloc_run(const char *cmd, kl_feeder *f, kl_carson_form form, kl_solver solver, int every,
                     kl_cli_alloc *a);
void kl_cli_alloc_free(kl_cli_alloc *a);

#endif
