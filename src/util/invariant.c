/* invariant.c - the one place a broken invariant stops a test build
 * (invariant.h).  A breakpoint target, like rigmat_error_set. */
#include "invariant.h"

#include <stdio.h>
#include <stdlib.h>

void rigmat_invariant_failed(const char *expr, const char *file, int line)
{
    fprintf(stderr, "rigmat: invariant broken: %s (%s:%d)\n", expr, file, line);
    fflush(stderr);
    abort();
}
