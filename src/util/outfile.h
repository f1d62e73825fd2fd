/* outfile.h - whole-or-nothing output (see outfile.c for the method). */
#ifndef RIGMAT_OUTFILE_H
#define RIGMAT_OUTFILE_H

#include "rigmat.h"

#define RIGMAT_OUTFILE_NO_FAULT ((size_t)-1)

/* Write len bytes of data to path.  A regular (or new) file is replaced
 * atomically; anything else is written directly.  fail_after is a test
 * hook: when not RIGMAT_OUTFILE_NO_FAULT, the write fails with ENOSPC after
 * that many bytes.  RIGMAT_EIO on failure, with the existing file (if any)
 * unchanged and no temporary left behind. */
rigmat_status rigmat_outfile_write(const char *path, const char *data, size_t len,
        size_t fail_after, rigmat_error *err);

#endif
