/* outfile.h - whole-or-nothing output of the program (see outfile.c for
 * the method).  Program code: it changes the process signal mask. */
#ifndef RIGMAT_OUTFILE_H
#define RIGMAT_OUTFILE_H

#include "rigmat_internal.h"

/* Write len bytes of data to path.  A regular (or new) file is replaced
 * atomically; anything else is written directly.  RIGMAT_EIO on failure,
 * with the existing file (if any) unchanged and no temporary left behind. */
rigmat_status cli_outfile_write(const char *path, const char *data, size_t len,
        rigmat_error *err);

/* Several regular files (or new names) whole or not at all: each is
 * written to a temporary beside it and flushed to disk, and only when all
 * are complete are they renamed over their targets, in order (a rename
 * writes no data, so a full disk cannot stop the second after the first).
 * A target that exists and is not a regular file is refused (RIGMAT_EIO)
 * before anything is written.  At most CLI_OUTFILE_MAX files. */
#define CLI_OUTFILE_MAX 8
rigmat_status cli_outfile_write_all(const char *const *paths, const char *const *data,
        const size_t *len, size_t n, rigmat_error *err);

#endif
