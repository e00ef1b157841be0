/* kilter: the one allocator (SQLite/Lua habit): every allocation in the
 * library passes here.
 *
 * The library keeps no mutable state of its own (several threads may each
 * load, solve and study their own feeders), so the allocator is a plain
 * wrapper of malloc.  Failure injection needs a counter, which is state: it
 * lives only in the test build of this file (KILTER_ALLOC_INJECT, compiled
 * into the tests' copy of the library, libkilter_test, never into the
 * installed libkilter).  There, tests make the n-th allocation fail and
 * check that each caller reports KL_ENOMEM and frees what it holds. */
#include <stdlib.h>
#include "kl_base.h"

#ifdef KILTER_ALLOC_INJECT
static long fail_at = -1; /* allocation index that starts failing; -1 = never */
static long count;        /* allocations attempted */

static int should_fail(void)
{
    long k = count++;
    return fail_at >= 0 && k >= fail_at;
}

void kl_alloc_fail_after(long n)
{
    fail_at = n < 0 ? -1 : count + n;
}

long kl_alloc_count(void)
{
    return count;
}
#else
static int should_fail(void)
{
    return 0;
}
#endif

void *kl_malloc(size_t n)
{
    if (should_fail())
        return NULL;
    return malloc(n ? n : 1);
}

void *kl_calloc(size_t count_, size_t size)
{
    if (should_fail())
        return NULL;
    return calloc(count_ ? count_ : 1, size ? size : 1);
}

void *kl_realloc(void *p, size_t n)
{
    if (should_fail())
        return NULL;
    return realloc(p, n ? n : 1);
}

void kl_free(void *p)
{
    free(p);
}
