/* outmode.c - the mode and the temporary name of a new output file (see
 * outmode.h).  The umask can only be read by setting it, so it is set and
 * put back at once; the program is single-threaded. */
#include "outmode.h"

#include <stdlib.h>
#include <string.h>
#include <sys/stat.h>
#include <sys/types.h>

static unsigned current_umask(void)
{
    const mode_t old = umask(077);

    umask(old);
    return (unsigned)old;
}

unsigned rigmat_outmode_file(void)
{
    return 0666u & ~current_umask();
}

unsigned rigmat_outmode_folder(void)
{
    return 0777u & ~current_umask();
}

char *rigmat_outmode_temp(const char *path)
{
    static const char tail[] = "rigmat.tmp-XXXXXX";
    const char *slash = strrchr(path, '/');
    const size_t dir = slash != NULL ? (size_t)(slash - path) + 1 : 0;
    char *t = malloc(dir + sizeof tail);

    if (t == NULL)
        return NULL;
    memcpy(t, path, dir);
    memcpy(t + dir, tail, sizeof tail);
    return t;
}
