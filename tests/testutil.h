/* testutil.h - helpers shared by the Check suites. */
#ifndef RIGMAT_TESTUTIL_H
#define RIGMAT_TESTUTIL_H

#include <check.h>
#include <stdio.h>
#include <gsl/gsl_matrix.h>

/* Fail unless got is within rtol of want, relatively (absolutely when want
 * is 0).  NaN and Inf aware, modelled on gsl_test_rel; prints %.17g. */
#define ck_assert_rel(got, want, rtol) \
    rigmat_test_rel((got), (want), (rtol), #got, __FILE__, __LINE__)
void rigmat_test_rel(double got, double want, double rtol, const char *what, const char *file,
        int line);

/* Normwise relative difference ||got - want||_F / max(||want||_F, tiny). */
double rigmat_test_matrix_reldiff(const gsl_matrix *got, const gsl_matrix *want);
#define ck_assert_matrix_rel(got, want, rtol) \
    rigmat_test_matrix_rel((got), (want), (rtol), #got, __FILE__, __LINE__)
void rigmat_test_matrix_rel(const gsl_matrix *got, const gsl_matrix *want, double rtol,
        const char *what, const char *file, int line);

/* Matrix helpers for the suites (tu_: test utility; not in librigmat.a).
 * tu_fill sets m from v, row-major, m->size1 * m->size2 values.
 * tu_mat returns a new r x c matrix filled from v; free with gsl_matrix_free.
 * tu_read_mat reads r * c numbers, row-major, from f into a new matrix
 * (free with gsl_matrix_free), failing the test on a short read. */
void tu_fill(gsl_matrix *m, const double *v);
gsl_matrix *tu_mat(size_t r, size_t c, const double *v);
gsl_matrix *tu_read_mat(FILE *f, size_t r, size_t c);

#endif
