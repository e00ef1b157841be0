/* kilter: name -> index table (open addressing, linear probing; FNV-1a hash,
 * numbered names kept together, see name_hash).
 *
 * Looking a bus up by name is the loader's hot path on a million-bus file,
 * and at that size every probe of a random slot is a cache miss.  A slot is
 * therefore only the name's 32-bit hash and its element's index (8 bytes, a
 * 1,000,000-name table is 16 MiB): a probe that meets another name almost
 * always stops at the hash, and the name itself is read (from the element,
 * whose first member it is) only to confirm a hash that matches.  The table
 * stays at most half full so that a probe sequence stays short. */
#include <stdlib.h>
#include <string.h>
#include "kl_base.h"

/* A slot is the hash and the index, nothing else (the figure above). */
_Static_assert(sizeof(kl_name_slot) == 8, "kl_name_slot: 8 bytes (hash and index)");

static unsigned fnv1a(const char *s, size_t len)
{
    unsigned h = 2166136261u; /* FNV-1a, 32 bit (Fowler, Noll, Vo) */
    size_t i;
    for (i = 0; i < len; i++) {
        h ^= (unsigned char)s[i];
        h *= 16777619u;
    }
    return h;
}

/* MurmurHash3's 32-bit finalizer (Appleby, public domain): every input bit
 * moves every output bit. */
static unsigned fmix32(unsigned h)
{
    h ^= h >> 16;
    h *= 0x85ebca6bu;
    h ^= h >> 13;
    h *= 0xc2b2ae35u;
    h ^= h >> 16;
    return h;
}

/* Names are mostly a stem and a number ("b1041", "ld17", "n_2203"), and files
 * mostly name their elements in runs of consecutive numbers.  Hashed whole,
 * each of those names lands on a random slot: a cache and TLB miss per
 * look-up at a million names.  So a trailing number n of 1 to 9 digits keeps
 * its low 4 bits as the low bits of the hash: names n = 16k .. 16k + 15 of a
 * stem sit in 16 neighbouring slots (two cache lines), and the runs of 16
 * are scattered by fmix32 over the stem's FNV-1a hash and k.  Other names
 * are hashed with FNV-1a alone.  ("b1" and "b01" share a hash; the look-up
 * compares the names.)  One pass: h is FNV-1a of the text so far, hs of the
 * text before the current run of digits. */
static unsigned name_hash(const char *s, size_t len)
{
    unsigned h = 2166136261u, hs = h, n = 0, nd = 0;
    size_t i;
    for (i = 0; i < len; i++) {
        unsigned c = (unsigned char)s[i], d = c - '0';
        if (d <= 9) {
            if (!nd)
                hs = h;
            n = n * 10 + d;
            nd++;
        } else {
            nd = 0;
            n = 0;
        }
        h = (h ^ c) * 16777619u;
    }
    if (nd == 0 || nd > 9)
        return h;
    return (fmix32(hs + (n >> 4)) & ~15u) | (n & 15u);
}

void kl_names_init(kl_names *t, void *const *elems, size_t stride)
{
    /* name_of reads element i's name at *elems + i * stride: the stride is
     * a whole element, which starts with (and is aligned for) its name */
    KL_ASSERT(elems && stride >= sizeof(const char *) && stride % _Alignof(const char *) == 0);
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

const char *kl_names_name(const kl_names *t, int index)
{
    return name_of(t, index);
}

const char *kl_names_slot_name(const kl_names *t, unsigned i)
{
    return i < t->cap && t->slots[i].ref ? name_of(t, t->slots[i].ref - 1) : NULL;
}

int kl_names_find_hint(const kl_names *t, const char *s, size_t len, kl_name_hint *hint)
{
    unsigned h, i;
    hint->table = NULL; /* no hint unless the probe below ends on a free slot */
    hint->cap = 0;
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
    hint->table = t;
    hint->hash = h;
    hint->slot = i;
    hint->cap = t->cap;
    hint->count = t->count;
    hint->len = len;
    return -1;
}

int kl_names_find(const kl_names *t, const char *s, size_t len)
{
    kl_name_hint hint;
    return kl_names_find_hint(t, s, len, &hint);
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
        if (t->slots[i].ref) {
            /* the element array, read at the stride, still holds the name
             * the slot was filled with (its first member, names.c) */
            KL_ASSERT(name_hash(name_of(t, t->slots[i].ref - 1),
                                strlen(name_of(t, t->slots[i].ref - 1))) == t->slots[i].hash);
            put(s, cap, t->slots[i]);
        }
    kl_free(t->slots);
    t->slots = s;
    t->cap = cap;
    return KL_OK;
}

/* The name added for element `index` is the one the table will read back
 * from the element array at the stride: its first member holds that very
 * string, or is still NULL (the loader names a load after adding it).  A
 * wrong stride reads another member and fails here, at the second element. */
static int names_match(const kl_names *t, const char *name, int index)
{
    const char *held = name_of(t, index);
    return !held || held == name;
}

kl_status kl_names_add(kl_names *t, const char *name, int index)
{
    kl_name_slot v;
    KL_ASSERT(names_match(t, name, index));
    if ((unsigned)(t->count + 1) * 2 > t->cap && rehash(t) != KL_OK)
        return KL_ENOMEM;
    v.hash = name_hash(name, strlen(name));
    v.ref = index + 1;
    put(t->slots, t->cap, v);
    t->count++;
    return KL_OK;
}

static int cmp_int(const void *a, const void *b)
{
    int x = *(const int *)a, y = *(const int *)b;
    return (x > y) - (x < y);
}

/* Slot order of a table keyed by FNV-1a of the whole name and filled in
 * index order, the layout the table had before numbered names were kept
 * together: a caller that scans the names and keeps the first of equally
 * good candidates (the suggestion for a misspelt name) gives the answer it
 * always gave.  Small tables only (the caller scans them whole). */
int kl_names_scan_order(const kl_names *t, int *order)
{
    unsigned cap = 0, i, k, n = 0, *hash = NULL;
    int *ref = NULL, m = 0;
    for (i = 0; i < t->cap; i++)
        if (t->slots[i].ref)
            order[m++] = t->slots[i].ref - 1;
    qsort(order, (size_t)m, sizeof *order, cmp_int);
    for (k = 0; k < (unsigned)m; k++, n++) {
        const char *name = name_of(t, order[k]);
        unsigned h = fnv1a(name, strlen(name));
        if ((n + 1) * 2 > cap) {
            unsigned nc = cap ? cap * 2 : 64, *nh = kl_calloc(nc, sizeof *nh);
            int *nr = kl_calloc(nc, sizeof *nr);
            if (!nh || !nr) {
                kl_free(nh);
                kl_free(nr);
                m = -1;
                goto done;
            }
            for (i = 0; i < cap; i++) /* re-inserted in slot order, as rehash does */
                if (ref[i]) {
                    unsigned j = hash[i] & (nc - 1);
                    while (nr[j])
                        j = (j + 1) & (nc - 1);
                    nr[j] = ref[i];
                    nh[j] = hash[i];
                }
            kl_free(hash);
            kl_free(ref);
            hash = nh;
            ref = nr;
            cap = nc;
        }
        for (i = h & (cap - 1); ref[i]; i = (i + 1) & (cap - 1))
            ;
        ref[i] = order[k] + 1;
        hash[i] = h;
    }
    for (i = 0, k = 0; i < cap; i++)
        if (ref[i])
            order[k++] = ref[i] - 1;
done:
    kl_free(hash);
    kl_free(ref);
    return m;
}

/* The probe of the look-up that missed ended at the slot the name goes to,
 * as long as nothing was added since and the table need not grow. */
kl_status kl_names_add_hint(kl_names *t, const char *name, int index, const kl_name_hint *hint)
{
    KL_ASSERT(names_match(t, name, index));
    if (hint->cap && hint->table == t && hint->cap == t->cap && hint->count == t->count &&
        (unsigned)(t->count + 1) * 2 <= t->cap && !t->slots[hint->slot].ref &&
        strlen(name) == hint->len) {
        t->slots[hint->slot].hash = hint->hash;
        t->slots[hint->slot].ref = index + 1;
        t->count++;
        return KL_OK;
    }
    return kl_names_add(t, name, index);
}
