/* kilter: the end of a failed KL_ASSERT (kl_base.h).  An assertion states an
 * invariant that a speed trick relies on (a field order, a stride, a sweep
 * order); its failure is a bug in kilter, never bad input, so it stops the
 * program where the sanitizers and the debugger see it, like assert(3). */
#include <stdio.h>
#include <stdlib.h>
#include "kl_base.h"

_Noreturn void kl_check_fail(const char *cond, const char *file, int line)
{
    fprintf(stderr, "kilter: internal check failed: %s (%s:%d)\n", cond, file, line);
    abort();
}
