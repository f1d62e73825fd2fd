/* bigmem.c - huge-page advice for large result buffers (bigmem.h). */
#define _DEFAULT_SOURCE /* madvise and MADV_HUGEPAGE (Linux) */
#include "bigmem.h"

#include <stdint.h>
#include <sys/mman.h>

void rigmat_bigmem_advise(void *p, size_t bytes)
{
#if defined(MADV_HUGEPAGE)
    const uintptr_t huge = (uintptr_t)2 << 20, start = (uintptr_t)p;
    const uintptr_t lo = (start + huge - 1) & ~(huge - 1);
    const uintptr_t hi = (start + bytes) & ~(huge - 1);

    if (p != NULL && hi > lo)
        (void)madvise((void *)lo, (size_t)(hi - lo), MADV_HUGEPAGE); /* advice: a refusal
                                                                       * changes nothing */
#else
    (void)p;
    (void)bytes;
#endif
}
