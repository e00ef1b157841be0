/* kilter program: one-line progress indicator on stderr (cli_progress.h).
 * Redrawn at most ten times a second so a fast loop is not slowed by the
 * terminal; "\r" returns to the start of the line and ESC [ K (ECMA-48 EL,
 * erase in line) clears what a longer earlier message left behind. */
#include <stdio.h>
#include <time.h>
#include <unistd.h>
#include "cli_progress.h"

static double last_draw = -1; /* seconds, monotonic clock */
static int drawn;             /* something is on the line now */

static double now(void)
{
    struct timespec ts;
    clock_gettime(CLOCK_MONOTONIC, &ts);
    return (double)ts.tv_sec + (double)ts.tv_nsec * 1e-9;
}

static void draw(void *ctx, const char *stage, long done, long total)
{
    (void)ctx;
    double t = now();
    if (done != total && last_draw >= 0 && t - last_draw < 0.1)
        return;
    last_draw = t;
    if (total > 0)
        fprintf(stderr, "\r\033[Kkilter: %s: %3.0f %% (%ld of %ld)", stage,
                100.0 * (double)done / (double)total, done, total);
    else
        fprintf(stderr, "\r\033[Kkilter: %s: %ld", stage, done);
    fflush(stderr);
    drawn = 1;
}

void kl_cli_progress_init(kl_progress *p)
{
    if (isatty(STDERR_FILENO))
        kl_progress_init(p, draw, NULL, 0);
    else
        kl_progress_init(p, NULL, NULL, 0);
}

void kl_cli_progress_done(kl_progress *p)
{
    if (p && p->fn && drawn) {
        fputs("\r\033[K", stderr);
        fflush(stderr);
    }
    drawn = 0;
    last_draw = -1;
}
