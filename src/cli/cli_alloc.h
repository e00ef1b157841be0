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

int kl_cli_alloc_options(const char *cmd, const char *tol, kl_cli_alloc *a);
/* Reads a->head_path, allocates f's loads (connected kVA basis) to the
 * reading --reading names (every reading when `every` and no --reading; the feeder is
 * left at the last), printing any message.  0 or an exit code. */
int kl_cli_alloc_run(const char *cmd, kl_feeder *f, kl_carson_form form, kl_solver solver, int every,
                     kl_cli_alloc *a);
void kl_cli_alloc_free(kl_cli_alloc *a);

#endif
