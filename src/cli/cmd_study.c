/* kilter study: placeholder until the command is built. */
#include <stdio.h>
#include "cli.h"

int kl_cmd_study(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    fprintf(stderr, "kilter: study: not built yet\n");
    return 1;
}
