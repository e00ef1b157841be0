/* kilter rebalance: placeholder until the command is built. */
#include <stdio.h>
#include "cli.h"

int kl_cmd_rebalance(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    fprintf(stderr, "kilter: rebalance: not built yet\n");
    return 1;
}
