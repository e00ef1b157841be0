/* kilter: name -> index table (open addressing, linear probing, FNV-1a hash).
 *
 * Looking a bus up by name is the loader's hot path on a million-bus file;
 * the table stays at most half full so a probe sequence stays short. */
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

void kl_names_init(kl_names *t)
{
    memset(t, 0, sizeof *t);
}

void kl_names_free(kl_names *t)
{
    if (!t)
        return;
    kl_free(t->slots);
    memset(t, 0, sizeof *t);
}

int kl_names_find(const kl_names *t, const char *s, size_t len)
{
    unsigned h, i;
    if (!t->cap)
        return -1;
    h = name_hash(s, len);
    for (i = h & (t->cap - 1); t->slots[i].name; i = (i + 1) & (t->cap - 1)) {
        const kl_name_slot *sl = &t->slots[i];
        if (sl->hash == h && strncmp(sl->name, s, len) == 0 && sl->name[len] == '\0')
            return sl->index;
    }
    return -1;
}

static void put(kl_name_slot *slots, unsigned cap, kl_name_slot v)
{
    unsigned i = v.hash & (cap - 1);
    while (slots[i].name)
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
    kl_prefault(s, (size_t)cap * sizeof *s);
    for (i = 0; i < t->cap; i++)
        if (t->slots[i].name)
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
    v.name = name;
    v.hash = name_hash(name, strlen(name));
    v.index = index;
    put(t->slots, t->cap, v);
    t->count++;
    return KL_OK;
}
