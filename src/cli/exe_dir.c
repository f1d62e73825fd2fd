/* exe_dir.c - the folder holding the running program, so that the catalog
 * beside it (EXEDIR/../catalog: the repository's catalog/ for build/rigmat)
 * is found for a model kept anywhere, installed or not (README.md, "Rules
 * worth knowing", gives the whole lookup order). */
/* realpath() is an XSI function, outside _POSIX_C_SOURCE alone */
#define _XOPEN_SOURCE 700
#include "cli.h"

#include <limits.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

const char *cli_exe_dir(const char *argv0, char *buf, size_t len)
{
    char real[PATH_MAX];
    ssize_t n;
    char *slash;

    if (len < 2)
        return NULL;
    /* Linux names the program's own file here, whatever the caller's PATH */
    n = readlink("/proc/self/exe", buf, len - 1);
    if (n > 0 && (size_t)n < len - 1) {
        buf[n] = '\0';
    } else if (argv0 != NULL && strchr(argv0, '/') != NULL && realpath(argv0, real) != NULL &&
            strlen(real) < len) {
        /* elsewhere: argv[0] when it names a path (not a bare name found on PATH) */
        strcpy(buf, real);
    } else {
        return NULL;
    }
    slash = strrchr(buf, '/');
    if (slash == NULL)
        return NULL;
    if (slash == buf)
        slash[1] = '\0';
    else
        *slash = '\0';
    return buf;
}
