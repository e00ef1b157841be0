/* kilter: progress reporting through the caller's callback (progress.h).
 * Rate limiting lives here so that kernels can call kl_progress_step at every
 * unit of work without making the callback (and the terminal) the bottleneck. */
#include <stddef.h>
#include "kilter/progress.h"

void kl_progress_init(kl_progress *p, kl_progress_fn fn, void *ctx, long every)
{
    if (!p)
        return;
    p->fn = fn;
    p->ctx = ctx;
    p->every = every > 0 ? every : 0;
    p->last = 0;
}

void kl_progress_step(kl_progress *p, const char *stage, long done, long total)
{
    if (!p || !p->fn)
        return;
    /* done may restart at 0 for a new stage: treat a step backwards as a new start */
    if (done < p->last)
        p->last = 0;
    if (done != total && done != 0 && p->every > 0 && done - p->last < p->every)
        return;
    p->last = done;
    p->fn(p->ctx, stage ? stage : "", done, total);
}
