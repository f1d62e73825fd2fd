/* bigmem.h - advice for large result buffers (stage: util).
 *
 * A sweep of 20000 points stores 25 MB of results and touches every page
 * once, as it fills them.  With 4 KiB pages that is one page fault per
 * 4 KiB, and on a virtual machine a fault costs microseconds: 7034
 * faults were a fifth of a whole `rigmat sweep` run of the demo (perf
 * stat; bench/RESULTS.md).  rigmat_bigmem_advise asks the kernel for
 * transparent huge pages over the buffer's 2 MiB-aligned interior, so it
 * faults in 2 MiB steps.  Advice only: where the system has no such pages
 * (not Linux, or disabled) nothing changes, and the contents never do.
 */
#ifndef RIGMAT_BIGMEM_H
#define RIGMAT_BIGMEM_H

#include <stddef.h>

/* Advise huge pages for the 2 MiB-aligned part of [p, p + bytes) when it
 * holds at least one such page; p from malloc, untouched so far. */
void rigmat_bigmem_advise(void *p, size_t bytes);

#endif /* RIGMAT_BIGMEM_H */
