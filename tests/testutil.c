/* testutil.c - relative-tolerance checks and matrix helpers for the suites. */
#include "testutil.h"

#include <math.h>
#include <float.h>

void rigmat_test_rel(double got, double want, double rtol, const char *what, const char *file,
        int line)
{
    int ok;

    if (isnan(want))
        ok = isnan(got);
    else if (isinf(want))
        ok = isinf(got) && (got > 0) == (want > 0);
    else if (want == 0.0)
        ok = fabs(got) <= rtol;
    else
        ok = fabs(got - want) <= rtol * fabs(want);
    ck_assert_msg(ok, "%s:%d: %s = %.17g, want %.17g (rtol %.3g)", file, line, what, got, want,
            rtol);
}

double rigmat_test_matrix_reldiff(const gsl_matrix *got, const gsl_matrix *want)
{
    double num = 0.0, den = 0.0;
    size_t i, j;

    for (i = 0; i < want->size1; i++)
        for (j = 0; j < want->size2; j++) {
            const double w = gsl_matrix_get(want, i, j);
            const double d = gsl_matrix_get(got, i, j) - w;
            num += d * d;
            den += w * w;
        }
    if (den == 0.0)
        return sqrt(num);
    return sqrt(num / den);
}

void rigmat_test_matrix_rel(const gsl_matrix *got, const gsl_matrix *want, double rtol,
        const char *what, const char *file, int line)
{
    double r;

    ck_assert_msg(got->size1 == want->size1 && got->size2 == want->size2,
            "%s:%d: %s is %zux%zu, want %zux%zu", file, line, what, got->size1, got->size2,
            want->size1, want->size2);
    r = rigmat_test_matrix_reldiff(got, want);
    ck_assert_msg(r <= rtol && !isnan(r), "%s:%d: %s differs normwise by %.3g (rtol %.3g)", file,
            line, what, r, rtol);
}

void tu_fill(gsl_matrix *m, const double *v)
{
    size_t i, j;

    for (i = 0; i < m->size1; i++)
        for (j = 0; j < m->size2; j++)
            gsl_matrix_set(m, i, j, v[i * m->size2 + j]);
}

gsl_matrix *tu_mat(size_t r, size_t c, const double *v)
{
    gsl_matrix *m = gsl_matrix_alloc(r, c);

    ck_assert_ptr_nonnull(m);
    tu_fill(m, v);
    return m;
}

gsl_matrix *tu_read_mat(FILE *f, size_t r, size_t c)
{
    gsl_matrix *m = gsl_matrix_alloc(r, c);
    size_t i;

    ck_assert_ptr_nonnull(m);
    for (i = 0; i < r * c; i++)
        ck_assert_int_eq(fscanf(f, "%lf", &m->data[(i / c) * m->tda + i % c]), 1);
    return m;
}
