/* kilter: command-line entry point; dispatches to kl_cmd_NAME. */
#include <stdio.h>
#include <string.h>
#include <gsl/gsl_errno.h>
#include "kilter/version.h"
#include "cli.h"

typedef struct {
    const char *name;
    int (*run)(int, char **);
    const char *summary;
} command;

static const command commands[] = {
    {"check", kl_cmd_check, "validate a feeder file and summarise it"},
    {"lines", kl_cmd_lines, "phase impedance and admittance of every construction"},
    {"allocate", kl_cmd_allocate, "set the loads from the demand metered at the feeder head"},
    {"flow", kl_cmd_flow, "unbalanced three-phase load flow"},
    {"study", kl_cmd_study, "unbalance study: sequence quantities, neutral current, limits"},
    {"rebalance", kl_cmd_rebalance, "suggest phase reassignments of loads"},
    {"faults", kl_cmd_faults, "fault currents at every bus, earth-fault factor, grounding"},
    {"import", kl_cmd_import, "build a feeder file from CSV tables (GIS exports) and a library"},
    {"series", kl_cmd_series, "unbalance over time: a load flow per step of the load shapes"},
};
#define NCOMMANDS (int)(sizeof commands / sizeof commands[0])

static void usage(FILE *f)
{
    int i;
    fprintf(f, "usage: kilter COMMAND [options] [FEEDER]\n\n"
               "Unbalance studies of radial distribution feeders.\n\ncommands:\n");
    for (i = 0; i < NCOMMANDS; i++)
        fprintf(f, "  %-10s %s\n", commands[i].name, commands[i].summary);
    fprintf(f, "\nFEEDER is a feeder file (see feeders/README.md); without it the demo feeder is used.\n"
               "`kilter COMMAND --help` lists the command's options.\n\n"
               "exit codes:\n"
               "  0   success\n"
               "  2   bad input (feeder file or value)\n"
               "  3   a calculation did not converge\n"
               "  4   a file cannot be read or written\n"
               "  5   out of memory\n"
               "  64  bad command-line usage\n");
}

int main(int argc, char **argv)
{
    int i;
    /* GSL's default handler aborts; the library checks every GSL result and
     * does not change this process-wide switch itself (kilter/error.h). */
    gsl_set_error_handler_off();
    if (argc < 2) {
        usage(stderr);
        return KL_EXIT_USAGE;
    }
    /* Every path out checks standard output (a --help into a full disk fails
     * like any output) and puts the command's files in place, or drops them. */
    if (strcmp(argv[1], "--help") == 0 || strcmp(argv[1], "-h") == 0) {
        usage(stdout);
        return kl_cli_outputs_finish(KL_EXIT_OK);
    }
    if (strcmp(argv[1], "--version") == 0) {
        printf("kilter %s\n", KL_VERSION);
        return kl_cli_outputs_finish(KL_EXIT_OK);
    }
    for (i = 0; i < NCOMMANDS; i++)
        if (strcmp(argv[1], commands[i].name) == 0)
            return kl_cli_outputs_finish(commands[i].run(argc - 1, argv + 1));
    fprintf(stderr, "kilter: unknown command '%s' (try 'kilter --help')\n", argv[1]);
    return KL_EXIT_USAGE;
}
