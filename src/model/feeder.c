/* kilter: the feeder model's own functions: free, look-ups, phase names. */
#include <string.h>
#include "kl_model.h"

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
