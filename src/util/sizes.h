/* sizes.h - overflow-checked size arithmetic: every product or sum that
 * sizes an allocation in the library goes through these, so a huge count
 * (a delay of 5e8 samples on four inputs makes 2^31 states, and
 * 2^31 * 2^31 * 8 wraps to 0 in size_t) fails as out of memory instead of
 * allocating a wrapped, too small block.  gsl_matrix_alloc multiplies its
 * dimensions unchecked, so matrices are allocated through the wrappers
 * below. */
#ifndef RIGMAT_SIZES_H
#define RIGMAT_SIZES_H

#include <stddef.h>
#include <gsl/gsl_matrix.h>

/* *out = a * b and 0, or *out = SIZE_MAX and -1 when that overflows. */
int rigmat_size_mul(size_t a, size_t b, size_t *out);
/* *out = a + b and 0, or *out = SIZE_MAX and -1 when that overflows. */
int rigmat_size_add(size_t a, size_t b, size_t *out);
/* a * b + c, or SIZE_MAX on overflow (which no allocation can satisfy). */
size_t rigmat_size_mul_add(size_t a, size_t b, size_t c);

/* gsl_matrix_alloc / gsl_matrix_calloc, or NULL when rows * cols * sizeof
 * (double) overflows or memory runs out. */
gsl_matrix *rigmat_matrix_alloc(size_t rows, size_t cols);
gsl_matrix *rigmat_matrix_calloc(size_t rows, size_t cols);
/* 1 when a rows x cols matrix of elements of elem bytes has a size that
 * fits in size_t, else 0. */
int rigmat_size_matrix_ok(size_t rows, size_t cols, size_t elem);

#endif /* RIGMAT_SIZES_H */
