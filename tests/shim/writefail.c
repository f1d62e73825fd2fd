/* writefail.c - a write fault for tests, loaded with LD_PRELOAD; never
 * linked into the product.
 *
 *     LD_PRELOAD=build/shim/writefail.so RIGMAT_SHIM_WRITE_FAIL=N rigmat ...
 *
 * makes write(2) on any descriptor above 2 (the -o file or its temporary,
 * not the standard streams) fail with ENOSPC once N bytes have gone
 * through it, after writing what fits below N.  tests/cli.sh uses it: root
 * can write anywhere, so permission bits cannot provoke the failure.  With
 * RIGMAT_SHIM_WRITE_FAIL unset the shim passes every call through.
 *
 * dlsym(RTLD_NEXT, ...) is a GNU/BSD extension, hence _GNU_SOURCE.
 */
#define _GNU_SOURCE
#include <dlfcn.h>
#include <errno.h>
#include <stdlib.h>
#include <unistd.h>

ssize_t write(int fd, const void *buf, size_t count);

typedef ssize_t (*write_fn)(int, const void *, size_t);

static size_t written; /* bytes passed through on descriptors > 2 */

ssize_t write(int fd, const void *buf, size_t count)
{
    static write_fn real;
    const char *limit_text = getenv("RIGMAT_SHIM_WRITE_FAIL");
    size_t limit;
    ssize_t n;

    if (real == NULL) {
        void *sym = dlsym(RTLD_NEXT, "write");
        if (sym == NULL) {
            errno = ENOSYS;
            return -1;
        }
        /* POSIX guarantees a function pointer round-trips through void *
         * for dlsym; C99 does not, hence the copy through an object. */
        *(void **)&real = sym;
    }
    if (fd <= 2 || limit_text == NULL || *limit_text == '\0')
        return real(fd, buf, count);
    limit = (size_t)strtoul(limit_text, NULL, 10);
    if (written >= limit) {
        errno = ENOSPC;
        return -1;
    }
    if (count > limit - written)
        count = limit - written;
    n = real(fd, buf, count);
    if (n > 0)
        written += (size_t)n;
    return n;
}
