/* kilter: the feeder model's own functions: free, look-ups, phase names. */
#include <string.h>
#include "kl_model.h"

/* The memory target (docs/performance.md) counts on the size of these
 * records on a 64-bit machine (feeder.h orders their members and keeps flags
 * in bytes for it): a million-bus feeder holds a million of each.  A new
 * member changes the figures: measure again (scripts/bench.sh) and update the
 * sizes here. */
#define LP64 (sizeof(void *) == 8 && sizeof(double) == 8 && sizeof(int) == 4)
_Static_assert(!LP64 || sizeof(kl_section) == 48, "kl_section: 48 bytes, no padding");
_Static_assert(!LP64 || sizeof(kl_bus) == 56, "kl_bus: 56 bytes");
_Static_assert(!LP64 || sizeof(kl_load) == 136, "kl_load: 136 bytes, no padding");

void kl_feeder_free(kl_feeder *f)
{
    if (!f)
        return;
    kl_free(f->conductors);
    kl_free(f->cables);
    kl_free(f->layouts);
    kl_free(f->constructions);
    kl_free(f->buses);
    kl_free(f->sections);
    kl_free(f->loads);
    kl_free(f->load_nameplate);
    kl_free(f->capacitors);
    kl_free(f->transformers);
    kl_free(f->regulators);
    kl_arena_free(f->arena);
    kl_feeder_tree_free(f->tree);
    kl_free(f);
}

/* Linear: look-ups by name happen once per command-line argument, not in
 * any loop over the network. */
int kl_feeder_find_bus(const kl_feeder *f, const char *name)
{
    int i;
    for (i = 0; i < f->nbuses; i++)
        if (f->buses[i].name && strcmp(f->buses[i].name, name) == 0)
            return i;
    return -1;
}

int kl_feeder_find_section(const kl_feeder *f, const char *name)
{
    int i;
    for (i = 0; i < f->nsections; i++)
        if (f->sections[i].name && strcmp(f->sections[i].name, name) == 0)
            return i;
    return -1;
}

int kl_feeder_find_load(const kl_feeder *f, const char *name)
{
    int i;
    for (i = 0; i < f->nloads; i++)
        if (f->loads[i].name && strcmp(f->loads[i].name, name) == 0)
            return i;
    return -1;
}
