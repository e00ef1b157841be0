/* libFuzzer target: bytes -> load -> derive -> build -> solve -> study, with a
 * structure-aware mutator (fuzz_mutate.c) so that most inputs stay loadable
 * feeders and reach the solver.  Built with KILTER_FUZZ=ON under clang; run by
 * scripts/fuzz.sh.  With KILTER_FUZZ_STATS set in the environment it prints,
 * at exit, how many inputs reached each step (scripts/fuzz.sh reports it). */
#include <stdio.h>
#include <stdlib.h>
#include "fuzz_mutate.h"
#include "fuzz_run.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);
size_t LLVMFuzzerCustomMutator(uint8_t *data, size_t size, size_t max_size, unsigned int seed);
int LLVMFuzzerInitialize(int *argc, char ***argv);

static long reached[FUZZ_STUDIED + 1]; /* a fuzz program's own tally */

static void print_stats(void)
{
    long n = 0;
    for (int k = 0; k <= FUZZ_STUDIED; k++)
        n += reached[k];
    fprintf(stderr, "fuzz_pipeline: %ld inputs; loaded %ld, derived %ld, built %ld, solved %ld, studied %ld\n", n,
            n - reached[0], n - reached[0] - reached[1], reached[3] + reached[4] + reached[5],
            reached[4] + reached[5], reached[5]);
}

int LLVMFuzzerInitialize(int *argc, char ***argv)
{
    (void)argc;
    (void)argv;
    if (getenv("KILTER_FUZZ_STATS"))
        atexit(print_stats);
    return 0;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    reached[fuzz_run_pipeline(data, size)]++;
    return 0;
}

size_t LLVMFuzzerCustomMutator(uint8_t *data, size_t size, size_t max_size, unsigned int seed)
{
    return fuzz_mutate_feeder(data, size, max_size, seed);
}
