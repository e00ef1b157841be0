/* kilter: progress of long runs, reported through a caller's callback.
 *
 * The library never prints.  A long computation (a large feeder, a
 * rebalancing search, a report over many buses) calls kl_progress_step now
 * and then; the callback the caller supplied decides what to show.  The
 * command-line program prints a one-line indicator on stderr when stderr is a
 * terminal and nothing otherwise (src/cli/cli_progress.c). */
#ifndef KILTER_PROGRESS_H
#define KILTER_PROGRESS_H

/* stage: short plain words ("drawing the feeder map"); done of total units
 * (total 0 when unknown).  Called from the computing thread. */
typedef void (*kl_progress_fn)(void *ctx, const char *stage, long done, long total);

typedef struct {
    kl_progress_fn fn; /* NULL: no reporting */
    void *ctx;         /* handed back to fn */
    long every;        /* call fn at most once per `every` units (0: each call) */
    long last;         /* internal: units at the last call; start at 0 */
} kl_progress;

/* Sets fn/ctx; `every` 0 means report each step. p may be NULL to get nothing. */
void kl_progress_init(kl_progress *p, kl_progress_fn fn, void *ctx, long every);
/* Reports `done` of `total` when p has a callback and enough units passed
 * since the last call (always at done == total).  p may be NULL. */
void kl_progress_step(kl_progress *p, const char *stage, long done, long total);

#endif
