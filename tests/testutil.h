/* testutil.h - helpers shared by the Check suites. */
#ifndef RIGMAT_TESTUTIL_H
#define RIGMAT_TESTUTIL_H

#include <check.h>
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

#endif
