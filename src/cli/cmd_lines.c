/* kilter lines: placeholder until the command is built. */
#include <stdio.h>
#include "cli.h"

int kl_cmd_lines(int argc, char **argv)
{
    (void)argc;
    (void)argv;
    fprintf(stderr, "kilter: lines: not built yet\n");
    return 1;
}
