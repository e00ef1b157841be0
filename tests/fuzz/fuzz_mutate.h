/* A mutator that knows what a feeder file looks like (feeders/README.md):
 * it changes the values, names and list entries of a valid feeder rather than
 * its bytes, so the mutated file still loads often enough to reach the line
 * constants, the network, the solver and the study. */
#ifndef KILTER_FUZZ_MUTATE_H
#define KILTER_FUZZ_MUTATE_H
#include <stddef.h>
#include <stdint.h>

/* Mutates data[0 .. size) in place, within max_size bytes; returns the new
 * size.  Falls back to libFuzzer's byte mutations (LLVMFuzzerMutate) now and
 * then, and whenever the structured change does not fit. */
size_t fuzz_mutate_feeder(uint8_t *data, size_t size, size_t max_size, unsigned seed);
#endif
