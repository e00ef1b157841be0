/* kilter: the string arena.
 *
 * Every name in a feeder lives here: strings are packed into large blocks, so a
 * million-bus feeder costs a few hundred allocations for its names rather than
 * a million, and the whole arena is released in one pass by kl_arena_free. */
#include <string.h>
#include "kl_base.h"

#define ARENA_BLOCK (256u * 1024u)

typedef struct block {
    struct block *prev;
    size_t used, size;
    char data[];
} block;

struct kl_arena {
    block *top;
    size_t bytes; /* total payload handed out, for the memory report */
};

kl_arena *kl_arena_new(void)
{
    return kl_calloc(1, sizeof(kl_arena));
}

void kl_arena_free(kl_arena *a)
{
    block *b, *prev;
    if (!a)
        return;
    for (b = a->top; b; b = prev) {
        prev = b->prev;
        kl_free(b);
    }
    kl_free(a);
}

/* A string longer than a block gets a block of its own. */
static block *arena_block(kl_arena *a, size_t need)
{
    size_t size = need > ARENA_BLOCK ? need : ARENA_BLOCK;
    block *b = kl_malloc(sizeof(block) + size);
    if (!b)
        return NULL;
    b->prev = a->top;
    b->used = 0;
    b->size = size;
    a->top = b;
    return b;
}

const char *kl_arena_strndup(kl_arena *a, const char *s, size_t len)
{
    block *b = a->top;
    char *p;
    if (!b || b->size - b->used < len + 1) {
        b = arena_block(a, len + 1);
        if (!b)
            return NULL;
    }
    p = b->data + b->used;
    memcpy(p, s, len);
    p[len] = '\0';
    b->used += len + 1;
    a->bytes += len + 1;
    return p;
}

const char *kl_arena_strdup(kl_arena *a, const char *s)
{
    return kl_arena_strndup(a, s, strlen(s));
}

size_t kl_arena_bytes(const kl_arena *a)
{
    return a ? a->bytes : 0;
}
