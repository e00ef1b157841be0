/* kilter flow: placeholder until the command is built. */
#include <stdio.h>
#include "cli.h"

int kl_cmd_flow(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    fprintf(stderr, "kilter: flow: not built yet\n");
    return 1;
}
