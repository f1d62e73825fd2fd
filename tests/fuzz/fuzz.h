/* fuzz.h - what the fuzz targets share: the entry point libFuzzer calls,
 * a property check that turns a broken contract into a crash, and a
 * NUL-terminated copy of the input.
 *
 * Each target is built twice: with clang's -fsanitize=fuzzer for `make
 * fuzz`, and with the project's compiler and sanitizers, linked to
 * replay.c, so `make check` replays the regression corpus on any machine.
 */
#ifndef RIGMAT_FUZZ_H
#define RIGMAT_FUZZ_H

#include <stddef.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size);

/* A contract the library states in a header does not hold: print it and
 * abort, which both libFuzzer and the replay driver report as a crash. */
#define FUZZ_REQUIRE(cond, ...)                                                         \
    do {                                                                                \
        if (!(cond)) {                                                                  \
            fprintf(stderr, "%s:%d: contract broken: %s: ", __FILE__, __LINE__, #cond); \
            fprintf(stderr, __VA_ARGS__);                                               \
            fputc('\n', stderr);                                                        \
            abort();                                                                    \
        }                                                                               \
    } while (0)

/* A malloc'd copy of data with a NUL after it, or NULL when out of memory. */
static inline char *fuzz_text(const uint8_t *data, size_t size)
{
    char *s = malloc(size + 1);

    if (s != NULL) {
        if (size > 0)
            memcpy(s, data, size);
        s[size] = '\0';
    }
    return s;
}

#endif /* RIGMAT_FUZZ_H */
