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
#include "kl_base.h"

#define PREFAULT_MIN (256u * 1024u) /* smaller ranges are not worth a call */
#define HUGE_PAGE ((uintptr_t)2 << 20)  /* x86-64 transparent huge page */

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

/* Large arrays read in random order (name tables, bus and section records at
 * a million buses: 16 to 130 MB) miss the TLB on most reads with 4 KiB pages;
 * a transparent huge page covers 2 MiB with one entry.  Where the system
 * gives huge pages only on request (transparent_hugepage = madvise), ask for
 * them on the whole 2 MiB pages inside [p, p + n).  A hint again. */
void kl_hugepage(void *p, size_t n)
{
#ifdef MADV_HUGEPAGE
    uintptr_t a = (uintptr_t)p, b = a + n;
    a = (a + HUGE_PAGE - 1) & ~(HUGE_PAGE - 1);
    b &= ~(HUGE_PAGE - 1);
    if (b > a)
        (void)madvise((void *)a, b - a, MADV_HUGEPAGE);
#else
    (void)p;
    (void)n;
#endif
}
