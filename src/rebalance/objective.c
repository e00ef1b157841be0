/* kilter: the names of the rebalancing objectives (kl_objective), as the
 * command line and the reports spell them. */
#include <string.h>
#include "kilter/rebalance.h"
#include "kl_rebalance.h"

static const char *const OBJ_NAME[KL_OBJ_COUNT] = {"neutral", "vuf", "losses", "current", "drop"};

const char *kl_objective_name(kl_objective o)
{
    return (o >= 0 && o < KL_OBJ_COUNT) ? OBJ_NAME[o] : "?";
}

int kl_objective_parse(const char *s)
{
    for (int o = 0; s && o < KL_OBJ_COUNT; o++)
        if (strcmp(s, OBJ_NAME[o]) == 0)
            return o;
    return -1;
}
