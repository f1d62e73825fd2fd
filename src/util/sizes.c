/* sizes.c - overflow-checked size arithmetic (sizes.h). */
#include "sizes.h"

#include <stdint.h>

int rigmat_size_mul(size_t a, size_t b, size_t *out)
{
    if (a != 0 && b > SIZE_MAX / a) {
        *out = SIZE_MAX;
        return -1;
    }
    *out = a * b;
    return 0;
}

int rigmat_size_add(size_t a, size_t b, size_t *out)
{
    if (b > SIZE_MAX - a) {
        *out = SIZE_MAX;
        return -1;
    }
    *out = a + b;
    return 0;
}

size_t rigmat_size_mul_add(size_t a, size_t b, size_t c)
{
    size_t p, s;

    if (rigmat_size_mul(a, b, &p) != 0 || rigmat_size_add(p, c, &s) != 0)
        return SIZE_MAX;
    return s;
}

int rigmat_size_matrix_ok(size_t rows, size_t cols, size_t elem)
{
    size_t n, bytes;

    return rigmat_size_mul(rows, cols, &n) == 0 && rigmat_size_mul(n, elem, &bytes) == 0;
}

gsl_matrix *rigmat_matrix_alloc(size_t rows, size_t cols)
{
    if (!rigmat_size_matrix_ok(rows, cols, sizeof(double)))
        return NULL;
    return gsl_matrix_alloc(rows, cols);
}

gsl_matrix *rigmat_matrix_calloc(size_t rows, size_t cols)
{
    if (!rigmat_size_matrix_ok(rows, cols, sizeof(double)))
        return NULL;
    return gsl_matrix_calloc(rows, cols);
}
