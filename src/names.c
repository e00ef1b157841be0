/* kilter: name -> index table (open addressing, linear probing, FNV-1a hash).
 *
 * Looking a bus up by name is the loader's hot path on a million-bus file,
 * and at that size every probe of a random slot is a cache miss.  A slot is
 * therefore only the name's 32-bit hash and its element's index (8 bytes, a
 * 1,000,000-name table is 16 MiB): a probe that meets another name almost
 * always stops at the hash, and the name itself is read (from the element,
 * whose first member it is) only to confirm a hash that matches.  The table
 * stays at most half full so that a probe sequence stays short. */
#include <string.h>
#include "kl_internal.h"

static unsigned name_hash(const char *s, size_t len)
{
    unsigned h = 2166136261u; /* FNV-1a, 32 bit */
    size_t i;
    for (i = 0; i < len; i++) {
        h ^= (unsigned char)s[i];
        h *= 16777619u;
    }
    return h;
}

void kl_names_init(kl_names *t, void *const *elems, size_t stride)
{
    memset(t, 0, sizeof *t);
    t->elems = elems;
    t->stride = stride;
}

void kl_names_free(kl_names *t)
{
    if (!t)
        return;
    kl_free(t->slots);
    t->slots = NULL;
    t->cap = 0;
    t->count = 0;
}

/* The name of element `index`: the first member of every element struct. */
static const char *name_of(const kl_names *t, int index)
{
    const char *const *p = (const char *const *)(const void *)((const char *)*t->elems +
                                                               (size_t)index * t->stride);
    return *p;
}

const char *kl_names_slot_name(const kl_names *t, unsigned i)
{
    return i < t->cap && t->slots[i].ref ? name_of(t, t->slots[i].ref - 1) : NULL;
}

int kl_names_find(const kl_names *t, const char *s, size_t len)
{
    unsigned h, i;
    if (!t->cap)
        return -1;
    h = name_hash(s, len);
    for (i = h & (t->cap - 1); t->slots[i].ref; i = (i + 1) & (t->cap - 1)) {
        const kl_name_slot *sl = &t->slots[i];
        const char *n;
        if (sl->hash != h)
            continue;
        n = name_of(t, sl->ref - 1);
        if (strncmp(n, s, len) == 0 && n[len] == '\0')
            return sl->ref - 1;
    }
    return -1;
}

/* Starts reading the slot where s[0..len) would be, so that the cache misses
 * of an element's several look-ups overlap instead of following each other. */
void kl_names_prefetch(const kl_names *t, const char *s, size_t len)
{
    if (t->cap)
        __builtin_prefetch(&t->slots[name_hash(s, len) & (t->cap - 1)]);
}

static void put(kl_name_slot *slots, unsigned cap, kl_name_slot v)
{
    unsigned i = v.hash & (cap - 1);
    while (slots[i].ref)
        i = (i + 1) & (cap - 1);
    slots[i] = v;
}

static kl_status rehash(kl_names *t)
{
    unsigned cap = t->cap ? t->cap * 2 : 64, i;
    kl_name_slot *s = kl_calloc(cap, sizeof *s);
    if (!s)
        return KL_ENOMEM;
    /* re-inserting the old entries fills a quarter of the new table, which
     * writes to every page of it: map them in one call (prefault.c) */
    kl_hugepage(s, (size_t)cap * sizeof *s);
    kl_prefault(s, (size_t)cap * sizeof *s);
    for (i = 0; i < t->cap; i++)
        if (t->slots[i].ref)
            put(s, cap, t->slots[i]);
    kl_free(t->slots);
    t->slots = s;
    t->cap = cap;
    return KL_OK;
}

kl_status kl_names_add(kl_names *t, const char *name, int index)
{
    kl_name_slot v;
    if ((unsigned)(t->count + 1) * 2 > t->cap && rehash(t) != KL_OK)
        return KL_ENOMEM;
    v.hash = name_hash(name, strlen(name));
    v.ref = index + 1;
    put(t->slots, t->cap, v);
    t->count++;
    return KL_OK;
}
