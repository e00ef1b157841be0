/* kilter: prefaulting memory the loader is about to fill (Linux).
 *
 * Faulting fresh anonymous memory in one page at a time costs a trap per
 * 4 KiB; on the virtual machines this project is measured on that was
 * about 16 us a page, a quarter of the time to load a million-bus feeder.
 * madvise(MADV_POPULATE_WRITE) (Linux 5.14) maps a whole range in one call.
 * It is only a hint: where it is unknown or refused nothing changes. */
#define _DEFAULT_SOURCE
#include <stdint.h>
#include <sys/mman.h>
#include <unistd.h>
#include "kl_internal.h"

#define PREFAULT_MIN (256u * 1024u) /* smaller ranges are not worth a call */

void kl_prefault(void *p, size_t n)
{
#ifdef MADV_POPULATE_WRITE
    long s = sysconf(_SC_PAGESIZE);
    uintptr_t page = s > 0 ? (uintptr_t)s : 4096, a = (uintptr_t)p, b = a + n;
    a = (a + page - 1) & ~(page - 1); /* whole pages inside [p, p + n) */
    b &= ~(page - 1);
    if (b > a && b - a >= PREFAULT_MIN)
        (void)madvise((void *)a, b - a, MADV_POPULATE_WRITE);
#else
    (void)p;
    (void)n;
#endif
}
