/* libFuzzer target: bytes -> kl_feeder_load_buffer (the YAML reader and the
 * loader's checks).  Built with KILTER_FUZZ=ON under clang; run by
 * scripts/fuzz.sh. */
#include "fuzz_run.h"

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    fuzz_run_load(data, size);
    return 0;
}
