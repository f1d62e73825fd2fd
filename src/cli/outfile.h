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

#endif
