/* affine.c - the sampled affine term fd (see affine.h). */
#include "affine.h"
#include "expm.h"

#include <math.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_math.h>

size_t rigmat_affine_largest(const gsl_vector *f0, double *value)
{
    size_t k, best = 0;

    *value = 0.0;
    if (f0 == NULL)
        return 0;
    for (k = 0; k < f0->size; k++)
        if (fabs(gsl_vector_get(f0, k)) > fabs(*value)) {
            *value = gsl_vector_get(f0, k);
            best = k;
        }
    return best;
}

/* fd = (I - A h c)^-1 h f0, c = 1 (backward Euler) or 1/2 (Tustin). */
static rigmat_status solve_implicit(const gsl_matrix *A, const gsl_vector *f0, double h, double c,
        gsl_vector *out, rigmat_error *err)
{
    const size_t n = A->size1;
    gsl_matrix *M = gsl_matrix_alloc(n, n);
    gsl_permutation *p = gsl_permutation_alloc(n);
    rigmat_status st = RIGMAT_OK;
    int sg, gs;

    if (M == NULL || p == NULL) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        goto done;
    }
    gsl_matrix_memcpy(M, A);
    gsl_matrix_scale(M, -h * c);
    gsl_matrix_add_diagonal(M, 1.0);
    gs = gsl_linalg_LU_decomp(M, p, &sg);
    if (gs == GSL_SUCCESS && fabs(gsl_linalg_LU_det(M, sg)) > 0.0) {
        gs = gsl_linalg_LU_solve(M, p, f0, out);
    } else {
        gs = GSL_ESING;
    }
    if (gs != GSL_SUCCESS) {
        st = RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "the affine term: I - A T%s is singular",
                c == 1.0 ? "" : "/2");
        goto done;
    }
    gsl_vector_scale(out, h);
done:
    gsl_matrix_free(M);
    gsl_permutation_free(p);
    return st;
}

rigmat_status rigmat_discretize_affine(const rigmat_lti *s, const rigmat_discretize_opts *o,
        const rigmat_dlti *d, gsl_vector *fd, rigmat_error *err)
{
    const size_t n = s->nx;
    const double T = o->period_s;
    gsl_vector_view top;
    rigmat_status st = RIGMAT_OK;
    double big;
    size_t r, c;

    gsl_vector_set_zero(fd);
    (void)rigmat_affine_largest(s->f0, &big);
    if (n == 0 || big == 0.0 || fd->size < n || (d != NULL && d->nx_plant != n))
        return RIGMAT_OK; /* exactly zero at a steady state */
    top = gsl_vector_subvector(fd, 0, n);
    switch (o->method) {
    case RIGMAT_METHOD_ZOH:
    case RIGMAT_METHOD_FOH: {
        /* exp([[A T, f0 T], [0, 0]]): its last column above the corner */
        gsl_matrix *M = gsl_matrix_calloc(n + 1, n + 1), *E = gsl_matrix_alloc(n + 1, n + 1);
        rigmat_expm_ws *w = rigmat_expm_ws_alloc(n + 1);
        if (M == NULL || E == NULL || w == NULL) {
            st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        } else {
            for (r = 0; r < n; r++) {
                for (c = 0; c < n; c++)
                    gsl_matrix_set(M, r, c, gsl_matrix_get(s->A, r, c) * T);
                gsl_matrix_set(M, r, n, gsl_vector_get(s->f0, r) * T);
            }
            st = rigmat_expm(M, E, o->expm_flags, w, NULL, err);
            for (r = 0; r < n && st == RIGMAT_OK; r++)
                gsl_vector_set(&top.vector, r, gsl_matrix_get(E, r, n));
        }
        gsl_matrix_free(M);
        gsl_matrix_free(E);
        rigmat_expm_ws_free(w);
        break;
    }
    case RIGMAT_METHOD_EULER:
        gsl_vector_memcpy(&top.vector, s->f0);
        gsl_vector_scale(&top.vector, T);
        break;
    case RIGMAT_METHOD_BACKWARD_EULER:
        st = solve_implicit(s->A, s->f0, T, 1.0, &top.vector, err);
        break;
    case RIGMAT_METHOD_TUSTIN: {
        double h = T;
        if (o->prewarp_hz > 0.0) {
            const double w1 = 2.0 * M_PI * o->prewarp_hz;
            h = 2.0 * tan(w1 * T / 2.0) / w1;
        }
        st = solve_implicit(s->A, s->f0, h, 0.5, &top.vector, err);
        break;
    }
    }
    for (r = 0; r < n && st == RIGMAT_OK; r++)
        if (!isfinite(gsl_vector_get(fd, r)))
            st = RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "the affine term fd is not finite");
    return st;
}
