/* scale_bench.c - time linearize and discretize (ZOH) of one model file as
 * the library does them, with the entry and joint limits raised so that
 * the chains of bench/chains.py load at any size; and, with --dgemm N, one
 * N x N DGEMM (the unit of the scaling target, issue 14).
 *
 *   scale_bench FILE RATE_HZ   prints: states linearize_s discretize_s
 *   scale_bench --dgemm N      prints: seconds of one N x N DGEMM (best of 3)
 *   scale_bench --expm N       prints: seconds of rigmat_expm on an N x N
 *                              matrix with ||A||_1 = 20, of its matrix
 *                              products alone, of GSL's LU and of LAPACK's
 *                              dgetrf (0 when the BLAS has no LAPACK), and
 *                              the number of products
 *
 * Part of `make bench` (bench/scale.sh); never fails on time. */
#include "rigmat_internal.h"
#include "discretize.h"
#include "expm.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_linalg.h>

#if defined(RIGMAT_HAVE_LAPACK) && defined(__GNUC__)
extern void dgetrf_(const int *m, const int *n, double *a, const int *lda, int *ipiv,
                    int *info) __attribute__((weak));
#endif

static double now_s(void)
{
    struct timespec t;

    clock_gettime(CLOCK_MONOTONIC, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static int dgemm(size_t n)
{
    gsl_matrix *A = gsl_matrix_alloc(n, n), *B = gsl_matrix_alloc(n, n), *C = gsl_matrix_alloc(n, n);
    double best = 1e300;
    size_t i;
    int r;

    if (A == NULL || B == NULL || C == NULL)
        return 4;
    for (i = 0; i < n * n; i++) {
        A->data[i] = (double)(i % 7) - 3.0;
        B->data[i] = (double)(i % 5) - 2.0;
    }
    for (r = 0; r < 3; r++) {
        const double t0 = now_s();
        gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, 1.0, A, B, 0.0, C);
        if (now_s() - t0 < best)
            best = now_s() - t0;
    }
    printf("%.6g\n", best);
    gsl_matrix_free(A);
    gsl_matrix_free(B);
    gsl_matrix_free(C);
    return 0;
}

/* a reproducible matrix with entries in [-1, 1) (a 64-bit LCG, common
 * practice: D. E. Knuth's MMIX constants) */
static void fill(gsl_matrix *A)
{
    unsigned long long st = 2005;
    size_t i;
    for (i = 0; i < A->size1 * A->size2; i++) {
        st = st * 6364136223846793005ULL + 1442695040888963407ULL;
        A->data[i] = 2.0 * (double)(st >> 11) / 9007199254740992.0 - 1.0;
    }
}

static int expm_parts(size_t n)
{
    gsl_matrix *A = gsl_matrix_alloc(n, n), *E = gsl_matrix_alloc(n, n), *C = gsl_matrix_alloc(n, n);
    gsl_permutation *p = gsl_permutation_alloc(n);
    rigmat_expm_ws *w = rigmat_expm_ws_alloc(n);
    int *ipiv = malloc(n * sizeof *ipiv), signum;
    rigmat_expm_info info;
    double t0, te, tp, tg, tl = 0.0;
    unsigned k;

    if (A == NULL || E == NULL || C == NULL || p == NULL || w == NULL || ipiv == NULL)
        return 4;
    fill(A);
    gsl_matrix_scale(A, 20.0 / rigmat_expm_norm1(A));
    t0 = now_s();
    if (rigmat_expm(A, E, 0, w, &info, NULL) != RIGMAT_OK)
        return 3;
    te = now_s() - t0;
    t0 = now_s();
    for (k = 0; k < info.products; k++)
        gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, 1.0, A, k % 2 ? C : E, 0.0, k % 2 ? E : C);
    tp = now_s() - t0;
    gsl_matrix_memcpy(C, A);
    t0 = now_s();
    gsl_linalg_LU_decomp(C, p, &signum);
    tg = now_s() - t0;
#if defined(RIGMAT_HAVE_LAPACK) && defined(__GNUC__)
    if (dgetrf_ != NULL) {
        const int ni = (int)n;
        int inf = 0;
        gsl_matrix_memcpy(C, A);
        t0 = now_s();
        dgetrf_(&ni, &ni, C->data, &ni, ipiv, &inf);
        tl = now_s() - t0;
    }
#endif
    printf("%.6g %.6g %.6g %.6g %u\n", te, tp, tg, tl, info.products);
    gsl_matrix_free(A);
    gsl_matrix_free(E);
    gsl_matrix_free(C);
    gsl_permutation_free(p);
    rigmat_expm_ws_free(w);
    free(ipiv);
    return 0;
}

int main(int argc, char **argv)
{
    rigmat_options opt = rigmat_options_default();
    rigmat_discretize_opts dopt = rigmat_discretize_opts_default();
    rigmat_diags diags;
    rigmat_model *m = NULL;
    rigmat_lti *lti = NULL;
    rigmat_dlti *d = NULL;
    rigmat_discretize_ws *w = NULL;
    rigmat_error err = { 0 };
    double t0, t1, t2;
    int rc = 0;

    if (argc == 3 && strcmp(argv[1], "--dgemm") == 0)
        return dgemm((size_t)strtoul(argv[2], NULL, 10));
    if (argc == 3 && strcmp(argv[1], "--expm") == 0)
        return expm_parts((size_t)strtoul(argv[2], NULL, 10));
    if (argc != 3) {
        fprintf(stderr, "usage: scale_bench FILE RATE_HZ | --dgemm N | --expm N\n");
        return 2;
    }
    opt.max_entries = opt.max_joints = 100000;
    opt.max_nodes = 10000000;
    rigmat_diags_init(&diags);
    if (rigmat_model_load(argv[1], NULL, 0, &opt, &m, &diags) != RIGMAT_OK ||
            rigmat_model_check_equations(m, &diags) != RIGMAT_OK) {
        rigmat_diags_print(&diags, stderr);
        rc = 1;
        goto done;
    }
    t0 = now_s();
    if (rigmat_linearize(m, &opt, &lti, NULL, &err) != RIGMAT_OK) {
        fprintf(stderr, "linearize: %s\n", err.message);
        rc = 3;
        goto done;
    }
    t1 = now_s();
    dopt.period_s = 1.0 / strtod(argv[2], NULL);
    dopt.max_states = 100000;
    w = rigmat_discretize_ws_alloc(lti->nx, lti->nu, lti->ny);
    if (w == NULL || rigmat_discretize(lti, &dopt, w, &d, &err) != RIGMAT_OK) {
        fprintf(stderr, "discretize: %s\n", w == NULL ? "out of memory" : err.message);
        rc = 3;
        goto done;
    }
    t2 = now_s();
    printf("%zu %.6g %.6g\n", lti->nx, t1 - t0, t2 - t1);
done:
    rigmat_dlti_free(d);
    rigmat_discretize_ws_free(w);
    rigmat_lti_free(lti);
    rigmat_model_free(m);
    rigmat_diags_release(&diags);
    return rc;
}
