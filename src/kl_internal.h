/* kilter: declarations shared inside the library (not part of the public API).
 * Each area appends its own block, headed by a comment naming its files. */
#ifndef KILTER_INTERNAL_H
#define KILTER_INTERNAL_H

#include <stddef.h>
#include "kilter/error.h"
#include "kilter/feeder.h"

/* ---- alloc.c: the one allocator every library allocation goes through.
 * Tests inject failures with kl_alloc_fail_after(n): the n-th allocation from
 * now (0 = the next one) and every later one fails, until kl_alloc_fail_after(-1). */
void *kl_malloc(size_t n);
void *kl_calloc(size_t count, size_t size);
void *kl_realloc(void *p, size_t n);
void kl_free(void *p);
void kl_alloc_fail_after(long n);
long kl_alloc_count(void); /* allocations made so far (for the injection tests) */

#endif
