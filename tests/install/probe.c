/* A program outside kilter, built by tests/cli_install.sh against the
 * installed library with nothing but `pkg-config --cflags --libs kilter`:
 * loads a feeder, derives its lines, solves the load flow, and prints the bus
 * voltages as `kilter flow --format csv` prints its first three columns
 * (bus,phase,v_volts), for the test to compare with the installed program.
 *   probe FEEDER   (exit 0, or 1 with the errors on standard error) */
#include <complex.h>
#include <stdio.h>
#include <gsl/gsl_errno.h>
#include <kilter/error.h>
#include <kilter/feeder.h>
#include <kilter/flow.h>
#include <kilter/lines.h>
#include <kilter/network.h>
#include <kilter/version.h>

#if KL_VERSION_NUMBER != KL_VERSION_CODE(KL_VERSION_MAJOR, KL_VERSION_MINOR, KL_VERSION_PATCH)
#error "kilter/version.h: KL_VERSION_NUMBER disagrees with its parts"
#endif

static void print_errors(const kl_errors *e)
{
    char line[1400];
    for (int i = 0; i < e->count; i++) {
        kl_error_format(&e->items[i], line, sizeof line);
        fprintf(stderr, "probe: %s\n", line);
    }
}

int main(int argc, char **argv)
{
    kl_feeder *f = NULL;
    kl_network *net = NULL;
    kl_flow_result *res = NULL;
    kl_flow_options opt;
    kl_errors e;
    if (argc != 2) {
        fprintf(stderr, "usage: probe FEEDER\n");
        return 1;
    }
    gsl_set_error_handler_off(); /* as kilter/error.h asks of a program using libkilter */
    kl_errors_init(&e);
    kl_flow_options_default(&opt);
    kl_status st = kl_feeder_load(argv[1], &f, &e);
    if (!st)
        st = kl_lines_derive(f, KL_CARSON_FULL, &e);
    if (!st)
        st = kl_network_build(f, &net, &e);
    if (!st)
        st = kl_flow_result_alloc(net, &res, &e);
    if (!st)
        st = kl_flow_solve(net, &opt, res, &e);
    if (!st) {
        printf("# libkilter %s\n", KL_VERSION);
        printf("bus,phase,v_volts\n");
        for (int b = 0; b < f->nbuses; b++)
            for (int p = 0; p < 3; p++)
                if (res->phases[b] & (1 << p))
                    printf("%s,%c,%.6f\n", f->buses[b].name, "abc"[p], cabs(res->v[3 * b + p]));
    } else {
        print_errors(&e);
        fprintf(stderr, "probe: %s\n", kl_status_name(st));
    }
    kl_errors_free(&e);
    kl_flow_result_free(res);
    kl_network_free(net);
    kl_feeder_free(f);
    return st ? 1 : 0;
}
