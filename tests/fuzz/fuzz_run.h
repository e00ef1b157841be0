/* The two things the fuzz targets run, shared with the corpus replay
 * (tests/test_fuzz_corpus.c) so that a finding replays exactly as found.
 *
 * fuzz_run_load: bytes -> kl_feeder_load_buffer.
 * fuzz_run_pipeline: bytes -> load -> derive the lines -> build the network ->
 * solve the flow -> study.
 *
 * Each checks the library's contract on the way and calls fuzz_fail (which
 * aborts: a finding) when it is broken: a status outside the step's set, a
 * failure without a located message, a message without text, a solved flow or
 * a study with a non-finite figure where the phase is present.  Crashes,
 * leaks and undefined behaviour are the sanitizers' to find.  Both return the
 * furthest step reached (0 load failed .. 5 studied), which the replay test
 * counts. */
#ifndef KILTER_FUZZ_RUN_H
#define KILTER_FUZZ_RUN_H
#include <stddef.h>
#include <stdint.h>

enum { FUZZ_LOADED = 1, FUZZ_DERIVED = 2, FUZZ_BUILT = 3, FUZZ_SOLVED = 4, FUZZ_STUDIED = 5 };

int fuzz_run_load(const uint8_t *data, size_t size);
int fuzz_run_pipeline(const uint8_t *data, size_t size);
#endif
