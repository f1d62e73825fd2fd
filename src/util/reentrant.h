/* reentrant.h - thread-safe, locale-blind stand-ins for the two C library
 * calls the library would otherwise share process-wide state through.
 *
 * strtod reads the decimal point of the calling thread's LC_NUMERIC, so a
 * program that calls setlocale(LC_ALL, "") in a comma-decimal locale would
 * read "0.8 kg" as 0.  strerror may return a buffer shared by all threads.
 * Library code calls these instead (DEVELOPERS.md, "Thread safety").
 */
#ifndef RIGMAT_REENTRANT_H
#define RIGMAT_REENTRANT_H

#include <stddef.h>

/* strtod as in the "C" locale, whatever the thread's or process's locale:
 * the decimal point is always '.'.  Same contract as strtod (leading
 * space, sign, hex, inf and nan accepted; *end set when end is not NULL;
 * errno = ERANGE on overflow or underflow).  A plain decimal whose digits
 * fit 2^53 and whose power of ten is at most 22 is converted exactly here
 * (one correctly rounded IEEE operation); anything else goes to strtod
 * with the thread switched to the "C" locale by uselocale for the call.
 * Should the "C" locale object be unobtainable (glibc's is static; another
 * C library may allocate it), returns 0 with *end = s and errno = ENOMEM
 * rather than read the number in the thread's own locale. */
double rigmat_strtod_c(const char *s, char **end);

/* The message of errnum in buf (always NUL-terminated; len > 0), from the
 * XSI strerror_r; "error N" when the system has no message.  Returns buf. */
const char *rigmat_strerror(int errnum, char *buf, size_t len);

/* A buffer large enough for rigmat_strerror's messages. */
#define RIGMAT_STRERROR_LEN 128

#endif /* RIGMAT_REENTRANT_H */
