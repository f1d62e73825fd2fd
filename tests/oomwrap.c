/* oomwrap.c - fail the n-th allocation, for tests/oom.c and the
 * out-of-memory build of the program (tests/oom-cli.sh).
 *
 * Link-time wrapping (-Wl,--wrap=SYMBOL, OOM_WRAP in the Makefile) sends
 * every call that librigmat and the program make to malloc, calloc,
 * realloc, GSL's allocation entry points and libyaml's parser through
 * __wrap_SYMBOL below.  Only the two test executables are linked that
 * way; the library and the shipped program are untouched.  Allocations
 * inside GSL, libyaml and the C library themselves (fopen's buffer,
 * open_memstream's, realpath's scratch) are not counted; libyaml's are
 * stood in for by failing the parser call that would have made them, as
 * libyaml then reports a memory error.
 *
 * The program build reads RIGMAT_OOM_FAIL_AT=N (fail the N-th; unset or 0:
 * none) and, with RIGMAT_OOM_COUNT=FILE, writes the number of allocations
 * it counted to FILE at exit.
 */
#include "oomwrap.h"

#include <errno.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_eigen.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_permutation.h>
#include <gsl/gsl_vector.h>
#include <yaml.h>

static unsigned long calls;   /* allocations counted since armed */
static unsigned long fail_at; /* the one that fails (1-based); 0 = none */
static int env_read;

void oom_arm(unsigned long n)
{
    env_read = 1;
    calls = 0;
    fail_at = n;
}

unsigned long oom_calls(void)
{
    return calls;
}

static void report_count(void)
{
    const char *path = getenv("RIGMAT_OOM_COUNT");
    FILE *f = path != NULL ? fopen(path, "w") : NULL;

    if (f != NULL) {
        fprintf(f, "%lu\n", calls);
        fclose(f);
    }
}

/* Count one allocation; 1 when it is the one to fail. */
static int fail_now(void)
{
    if (!env_read) {
        const char *n = getenv("RIGMAT_OOM_FAIL_AT");
        env_read = 1;
        fail_at = n != NULL ? strtoul(n, NULL, 10) : 0;
        if (getenv("RIGMAT_OOM_COUNT") != NULL)
            atexit(report_count);
    }
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

