/* fuzz.h - what the fuzz targets share: the entry point libFuzzer calls,
 * a property check that turns a broken contract into a crash, a
 * NUL-terminated copy of the input, and the model file the loading
 * targets write their input to.
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
#include <unistd.h>

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

/* The model file: model.yaml in a private folder under /tmp, made once per
 * process (so part lookups beside the model find nothing); "" until
 * fuzz_model_setup succeeds. */
#define FUZZ_MODEL_PATH_MAX 64
static inline char *fuzz_model_path(void)
{
    static char path[FUZZ_MODEL_PATH_MAX];

    return path;
}

/* Remove the model file and its folder when the process ends. */
static inline void fuzz_model_cleanup(void)
{
    const char *path = fuzz_model_path();
    char dir[FUZZ_MODEL_PATH_MAX];
    char *slash;

    remove(path);
    memcpy(dir, path, sizeof dir);
    slash = strrchr(dir, '/');
    if (slash != NULL) {
        *slash = '\0';
        rmdir(dir);
    }
}

/* Make the folder on the first call; 0 when it exists, -1 when it cannot
 * be made. */
static inline int fuzz_model_setup(void)
{
    char *path = fuzz_model_path();
    char dir[] = "/tmp/rigmat-fuzz-XXXXXX";

    if (path[0] != '\0')
        return 0;
    if (mkdtemp(dir) == NULL)
        return -1;
    snprintf(path, FUZZ_MODEL_PATH_MAX, "%s/model.yaml", dir);
    atexit(fuzz_model_cleanup);
    return 0;
}

/* Write data to the model file; 0 on success, -1 on failure. */
static inline int fuzz_model_write(const uint8_t *data, size_t size)
{
    FILE *f = fopen(fuzz_model_path(), "wb");
    int ok;

    if (f == NULL)
        return -1;
    ok = (size == 0 || fwrite(data, 1, size, f) == size);
    return (fclose(f) == 0 && ok) ? 0 : -1;
}

#endif /* RIGMAT_FUZZ_H */
