/* kilter, base layer (src/base): the allocator, the string arena, the name
 * table, page hints.  Visible to every layer; includes nothing of kilter but
 * the public error record. */
#ifndef KILTER_BASE_INTERNAL_H
#define KILTER_BASE_INTERNAL_H

#include <stddef.h>
#include "kilter/error.h"
#include "kilter/types.h"

/* C11 7.3.9.3 CMPLX(x, y): a complex from its parts without the x + y*I
 * product (which turns an infinite or NaN part into NaN + NaN i).  glibc's
 * <complex.h> defines it only for GCC 4.7 and later (it tests __GNUC_PREREQ),
 * so clang, which claims GCC 4.2, gets it from its own builtin here. */
#ifndef CMPLX
#define CMPLX(x, y) __builtin_complex((double)(x), (double)(y))
#endif

/* ---- check.c: KL_ASSERT(cond) states an invariant that a speed trick relies
 * on (a struct's field order an accessor depends on, a stride, the sweep
 * order of an array).  Checked in the debug and sanitizer builds (KILTER_CHECKS,
 * set by CMakeLists.txt); compiled out, unevaluated, in the release build.  A
 * failure is a bug in kilter, not bad input: it aborts, as assert(3) does. */
#ifdef KILTER_CHECKS
#define KL_ASSERT(cond) ((cond) ? (void)0 : kl_check_fail(#cond, __FILE__, __LINE__))
#else
#define KL_ASSERT(cond) ((void)sizeof(!(cond)))
#endif
_Noreturn void kl_check_fail(const char *cond, const char *file, int line);

/* ---- alloc.c: the one allocator every library allocation goes through.
 * In the tests' build of the library (KILTER_ALLOC_INJECT, libkilter_test)
 * tests inject failures with kl_alloc_fail_after(n): the n-th allocation from
 * now (0 = the next one) and every later one fails, until kl_alloc_fail_after(-1).
 * The installed library has no such counter (it keeps no mutable state), so
 * library code cannot call these two. */
void *kl_malloc(size_t n);
void *kl_calloc(size_t count, size_t size);
void *kl_realloc(void *p, size_t n);
void kl_free(void *p);
#ifdef KILTER_ALLOC_INJECT
void kl_alloc_fail_after(long n);
long kl_alloc_count(void); /* allocations made so far (for the injection tests) */
#endif


/* ---- arena.c, names.c: the string arena that owns every name of a
 * feeder, and an open-addressing table from name to element index. */
kl_arena *kl_arena_new(void);
void kl_arena_free(kl_arena *a);
const char *kl_arena_strndup(kl_arena *a, const char *s, size_t len); /* NULL: out of memory */
const char *kl_arena_strdup(kl_arena *a, const char *s);
size_t kl_arena_bytes(const kl_arena *a);
/* prefault.c: maps the whole pages of [p, p + n) for writing in one call
 * (a hint: ignored where the system does not offer it). */
void kl_prefault(void *p, size_t n);
/* Asks for transparent huge pages on the 2 MiB pages inside [p, p + n)
 * (a hint, for large arrays read in random order). */
void kl_hugepage(void *p, size_t n);

typedef struct {
    unsigned hash; /* FNV-1a of the name */
    int ref;       /* element index + 1; 0: empty slot */
} kl_name_slot;

/* The names themselves are not copied: entry `index` is the name of element
 * `index` of the array *elems (elements `stride` bytes apart, the name their
 * first member), so the table follows the array when it is reallocated. */
typedef struct {
    kl_name_slot *slots; /* [cap], cap a power of two, at most half full */
    unsigned cap;
    int count;
    void *const *elems;  /* address of the element array's pointer */
    size_t stride;       /* sizeof one element */
} kl_names;

void kl_names_init(kl_names *t, void *const *elems, size_t stride);
void kl_names_free(kl_names *t); /* the slots only: the table can be used again */
/* Index stored for s[0..len), or -1. */
int kl_names_find(const kl_names *t, const char *s, size_t len);
/* Where a look-up that missed stopped, for adding the same name after it
 * without probing again (kl_names_add_hint). */
typedef struct {
    const kl_names *table; /* the table looked in */
    unsigned hash, slot, cap;
    int count;
    size_t len;
} kl_name_hint;
int kl_names_find_hint(const kl_names *t, const char *s, size_t len, kl_name_hint *hint);
/* kl_names_add, straight into the hinted slot when the table is unchanged
 * since the look-up (and `name` is its s[0..len)). */
kl_status kl_names_add_hint(kl_names *t, const char *name, int index, const kl_name_hint *hint);
/* Adds name -> index; `name` must be element index's name (an arena
 * string).  The caller checks for duplicates with kl_names_find first. */
kl_status kl_names_add(kl_names *t, const char *name, int index);
/* The element indices of the table's count names into order[count], in a
 * fixed order independent of the hash (names.c); count, or -1 when out of
 * memory. */
int kl_names_scan_order(const kl_names *t, int *order);
const char *kl_names_name(const kl_names *t, int index); /* element index's name */
/* The name held in slot i (0 <= i < cap), NULL for an empty slot. */
const char *kl_names_slot_name(const kl_names *t, unsigned i);

#endif
