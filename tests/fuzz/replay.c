/* replay.c - run a fuzz target's entry point once on each file named on the
 * command line (a folder stands for every file in it), without libFuzzer.
 * Linked with the sanitizer build, this is how `make check` replays the
 * regression corpus and the seeds with the project's own compiler.  Exit 0
 * when every input ran; a broken contract or a sanitizer report aborts
 * (the Makefile sets abort_on_error=1 for both sanitizers), and a handler
 * for SIGABRT names the input that was running before the process dies. */
#include "fuzz.h"

#include <dirent.h>
#include <errno.h>
#include <signal.h>
#include <sys/stat.h>
#include <unistd.h>

/* The input being run, for the abort handler. */
static const char *running;

static void on_abort(int sig)
{
    static const char head[] = "replay: the input that failed: ";

    if (running != NULL) {
        ssize_t w = write(2, head, sizeof head - 1);
        w = write(2, running, strlen(running));
        w = write(2, "\n", 1);
        (void)w;
    }
    signal(sig, SIG_DFL);
    raise(sig);
}

static int run_file(const char *path, size_t *count)
{
    FILE *f = fopen(path, "rb");
    uint8_t *buf = NULL;
    size_t len = 0, cap = 0, n;

    if (f == NULL) {
        fprintf(stderr, "replay: cannot open '%s': %s\n", path, strerror(errno));
        return -1;
    }
    for (;;) {
        if (len == cap) {
            uint8_t *p;
            cap = cap ? 2 * cap : 4096;
            p = realloc(buf, cap);
            if (p == NULL) {
                fclose(f);
                free(buf);
                fprintf(stderr, "replay: out of memory on '%s'\n", path);
                return -1;
            }
            buf = p;
        }
        n = fread(buf + len, 1, cap - len, f);
        len += n;
        if (n == 0)
            break;
    }
    fclose(f);
    running = path;
    LLVMFuzzerTestOneInput(buf, len);
    running = NULL;
    free(buf);
    (*count)++;
    return 0;
}

static int run_path(const char *path, size_t *count)
{
    struct stat sb;
    DIR *d;
    struct dirent *de;
    int rc = 0;

    if (stat(path, &sb) != 0) {
        fprintf(stderr, "replay: '%s': %s\n", path, strerror(errno));
        return -1;
    }
    if (!S_ISDIR(sb.st_mode))
        return S_ISREG(sb.st_mode) ? run_file(path, count) : 0;
    d = opendir(path);
    if (d == NULL) {
        fprintf(stderr, "replay: cannot list '%s': %s\n", path, strerror(errno));
        return -1;
    }
    while ((de = readdir(d)) != NULL) {
        char *sub;
        size_t n;

        if (de->d_name[0] == '.')
            continue;
        n = strlen(path) + strlen(de->d_name) + 2;
        sub = malloc(n);
        if (sub == NULL) {
            rc = -1;
            break;
        }
        snprintf(sub, n, "%s/%s", path, de->d_name);
        if (stat(sub, &sb) == 0 && S_ISREG(sb.st_mode) && run_file(sub, count) != 0)
            rc = -1;
        free(sub);
    }
    closedir(d);
    return rc;
}

int main(int argc, char **argv)
{
    size_t count = 0;
    int i, rc = 0;

    signal(SIGABRT, on_abort);
    for (i = 1; i < argc; i++)
        if (run_path(argv[i], &count) != 0)
            rc = 1;
    fprintf(stderr, "replay: %zu inputs\n", count);
    return rc;
}
