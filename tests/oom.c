/* oom.c - out of memory at every allocation of a full run (`make check-oom`).
 *
 *     oom CATALOG MODEL.yaml...
 *
 * For each model, run the pipeline of tests/pipeline.c (load, trim,
 * linearize, discretize, noise, advice) with the n-th allocation failing,
 * for n = 1, 2, ... until a run reaches its end without meeting the failure.
 * Every run that met it must return RIGMAT_ENOMEM (the program's exit 4),
 * not another status, not a crash, and must leave nothing allocated:
 * LeakSanitizer checks after every run (__lsan_do_recoverable_leak_check).
 * The runs go on in a child process, and a new child takes over after a
 * leak or a crash, so each is reported once, by the run that caused it,
 * and cannot stop the others.
 *
 * The failure is injected by link-time wrapping (-Wl,--wrap=SYMBOL, see
 * OOM_WRAP in the Makefile) of malloc, calloc, realloc, GSL's allocation
 * entry points and libyaml's parser: every call from librigmat to one of
 * them goes through __wrap_SYMBOL below.  Only this test program is linked
 * that way; the library and the program are untouched.  Allocations inside
 * GSL, libyaml and the C library themselves (fopen's buffer, realpath's
 * scratch) are not counted; libyaml's are stood in for by failing the
 * parser call that would have made them, as libyaml reports a memory error.
 */
#include "pipeline.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_eigen.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_permutation.h>
#include <gsl/gsl_vector.h>
#include <sanitizer/lsan_interface.h>
#include <sys/types.h>
#include <sys/wait.h>
#include <unistd.h>
#include <yaml.h>

static unsigned long calls;   /* allocations counted in this run */
static unsigned long fail_at; /* the one that fails (1-based); 0 = none */

/* Count one allocation; 1 when it is the one to fail. */
static int fail_now(void)
{
    return ++calls == fail_at;
}

#define WRAP_DECL(ret, name, params) ret __real_##name params; ret __wrap_##name params;

WRAP_DECL(void *, malloc, (size_t n))
WRAP_DECL(void *, calloc, (size_t n, size_t size))
WRAP_DECL(void *, realloc, (void *p, size_t n))
WRAP_DECL(gsl_matrix *, gsl_matrix_alloc, (size_t n1, size_t n2))
WRAP_DECL(gsl_matrix *, gsl_matrix_calloc, (size_t n1, size_t n2))
WRAP_DECL(gsl_matrix_complex *, gsl_matrix_complex_alloc, (size_t n1, size_t n2))
WRAP_DECL(gsl_vector *, gsl_vector_alloc, (size_t n))
WRAP_DECL(gsl_vector *, gsl_vector_calloc, (size_t n))
WRAP_DECL(gsl_vector_complex *, gsl_vector_complex_alloc, (size_t n))
WRAP_DECL(gsl_permutation *, gsl_permutation_alloc, (size_t n))
WRAP_DECL(gsl_eigen_nonsymmv_workspace *, gsl_eigen_nonsymmv_alloc, (size_t n))
WRAP_DECL(int, yaml_parser_initialize, (yaml_parser_t *parser))
WRAP_DECL(int, yaml_parser_parse, (yaml_parser_t *parser, yaml_event_t *event))

void *__wrap_malloc(size_t n)
{
    if (fail_now()) {
        errno = ENOMEM;
        return NULL;
    }
    return __real_malloc(n);
}

void *__wrap_calloc(size_t n, size_t size)
{
    if (fail_now()) {
        errno = ENOMEM;
        return NULL;
    }
    return __real_calloc(n, size);
}

void *__wrap_realloc(void *p, size_t n)
{
    if (fail_now()) {
        errno = ENOMEM;
        return NULL; /* p stays allocated, as realloc leaves it */
    }
    return __real_realloc(p, n);
}

/* GSL returns NULL (after its error handler, which is off). */
#define WRAP_GSL2(type, name)                                                                      \
    type *__wrap_##name(size_t n1, size_t n2)                                                      \
    {                                                                                              \
        return fail_now() ? NULL : __real_##name(n1, n2);                                          \
    }
#define WRAP_GSL1(type, name)                                                                      \
    type *__wrap_##name(size_t n)                                                                  \
    {                                                                                              \
        return fail_now() ? NULL : __real_##name(n);                                               \
    }
WRAP_GSL2(gsl_matrix, gsl_matrix_alloc)
WRAP_GSL2(gsl_matrix, gsl_matrix_calloc)
WRAP_GSL2(gsl_matrix_complex, gsl_matrix_complex_alloc)
WRAP_GSL1(gsl_vector, gsl_vector_alloc)
WRAP_GSL1(gsl_vector, gsl_vector_calloc)
WRAP_GSL1(gsl_vector_complex, gsl_vector_complex_alloc)
WRAP_GSL1(gsl_permutation, gsl_permutation_alloc)
WRAP_GSL1(gsl_eigen_nonsymmv_workspace, gsl_eigen_nonsymmv_alloc)

/* libyaml: a failed initialisation leaves the parser zeroed with
 * YAML_MEMORY_ERROR; a failed parse step does the same to the event. */
int __wrap_yaml_parser_initialize(yaml_parser_t *parser)
{
    if (fail_now()) {
        memset(parser, 0, sizeof *parser);
        parser->error = YAML_MEMORY_ERROR;
        return 0;
    }
    return __real_yaml_parser_initialize(parser);
}

int __wrap_yaml_parser_parse(yaml_parser_t *parser, yaml_event_t *event)
{
    if (fail_now()) {
        memset(event, 0, sizeof *event);
        parser->error = YAML_MEMORY_ERROR;
        return 0;
    }
    return __real_yaml_parser_parse(parser, event);
}

/* What a run reports to the parent. */
struct outcome {
    unsigned long n;     /* the allocation that failed */
    unsigned long calls; /* allocations counted */
    rigmat_status st;
    int leaked;
    char where[32];
};

/* In a child process, run the pipeline on file with allocation n failing
 * for n = start, start + 1, ..., writing an outcome per run to fd, until a
 * run leaks (later leak checks would report the same blocks again) or
 * reaches its end without meeting the failure. */
static void child_runs(const char *file, const char *catalog, unsigned long start, int fd)
{
    unsigned long n;

    for (n = start;; n++) {
        const char *where = "";
        struct outcome r;
        memset(&r, 0, sizeof r);
        r.n = n;
        calls = 0;
        fail_at = n;
        r.st = pipe_run(file, catalog, NULL, NULL, &where);
        fail_at = 0;
        r.calls = calls;
        snprintf(r.where, sizeof r.where, "%s", where);
        r.leaked = __lsan_do_recoverable_leak_check() != 0;
        if (write(fd, &r, sizeof r) != (ssize_t)sizeof r)
            _exit(3);
        if (r.leaked || r.calls < n)
            _exit(0);
    }
}

/* Every allocation of one model's run failed in turn; returns the failures
 * found and sets *allocations to the count of a run without a failure. */
static unsigned long one_model(const char *file, const char *catalog, unsigned long *allocations,
        unsigned long *runs)
{
    unsigned long failures = 0, next = 1;
    int done = 0;

    *allocations = 0;
    while (!done && failures <= 40) {
        int fds[2], cs = 0;
        unsigned long last = next - 1;
        struct outcome o;
        pid_t pid;

        if (pipe(fds) != 0) {
            perror("oom: pipe");
            return failures + 1;
        }
        fflush(stdout);
        fflush(stderr);
        pid = fork();
        if (pid < 0) {
            perror("oom: fork");
            return failures + 1;
        }
        if (pid == 0) {
            close(fds[0]);
            child_runs(file, catalog, next, fds[1]);
            _exit(0);
        }
        close(fds[1]);
        while (read(fds[0], &o, sizeof o) == (ssize_t)sizeof o) {
            (*runs)++;
            last = o.n;
            if (o.leaked) {
                fprintf(stderr, "oom: %s: allocation %lu failed: leak (report above), "
                        "status '%s' at %s\n", file, o.n, rigmat_status_name(o.st), o.where);
                failures++;
            }
            if (o.calls < o.n) { /* the run never reached the n-th allocation */
                *allocations = o.calls;
                if (o.st != RIGMAT_OK) {
                    fprintf(stderr, "oom: %s: the run without a failure gives %s at %s\n", file,
                            rigmat_status_name(o.st), o.where);
                    failures++;
                }
                done = 1;
            } else if (o.st != RIGMAT_ENOMEM) {
                fprintf(stderr, "oom: %s: allocation %lu of %lu failed: status '%s' at %s, "
                        "want 'out of memory'\n", file, o.n, o.calls, rigmat_status_name(o.st),
                        o.where);
                failures++;
            }
        }
        close(fds[0]);
        waitpid(pid, &cs, 0);
        if (!done && (!WIFEXITED(cs) || WEXITSTATUS(cs) != 0)) {
            /* the run after the last one reported crashed */
            (*runs)++;
            fprintf(stderr, "oom: %s: allocation %lu failed: the run crashed (%s %d)\n", file,
                    last + 1, WIFSIGNALED(cs) ? "signal" : "exit",
                    WIFSIGNALED(cs) ? WTERMSIG(cs) : WEXITSTATUS(cs));
            failures++;
            last++;
        }
        next = last + 1;
    }
    return failures;
}

int main(int argc, char **argv)
{
    unsigned long failures = 0, runs = 0;
    int a;

    if (argc < 3) {
        fprintf(stderr, "usage: oom CATALOG MODEL.yaml...\n");
        return 2;
    }
    gsl_set_error_handler_off();
    for (a = 2; a < argc; a++) {
        unsigned long allocations;
        const unsigned long f = one_model(argv[a], argv[1], &allocations, &runs);
        printf("oom: %s: %lu allocations, each failed in turn: %s\n", argv[a], allocations,
                f ? "FAILURES above" : "out of memory every time, nothing leaked");
        failures += f;
    }
    printf("oom: %lu runs, %lu failures\n", runs, failures);
    return failures == 0 ? 0 : 1;
}
