/* scale_bench.c - time linearize and discretize (ZOH) of one model file as
 * the library does them, with the entry and joint limits raised so that
 * the chains of bench/chains.py load at any size; and, with --dgemm N, one
 * N x N DGEMM (the unit of the scaling target, issue 14).
 *
 *   scale_bench FILE RATE_HZ   prints: states linearize_s discretize_s
 *   scale_bench --dgemm N      prints: seconds of one N x N DGEMM (best of 3)
 *                              by OpenBLAS (opened as the library does,
 *                              src/util/fastblas.h; GSL's CBLAS without it)
 *   scale_bench --expm N       prints: seconds of rigmat_expm on an N x N
 *                              matrix with ||A||_1 = 20, of its matrix
 *                              products alone (as the library makes them),
 *                              of GSL's LU and of LAPACK's dgetrf (0 when
 *                              OpenBLAS did not open), and the number of
 *                              products
 *   scale_bench --blas         prints a table: square DGEMM and LU at
 *                              n = 8 .. 256 by GSL's CBLAS and GSL's LU
 *                              against OpenBLAS's, seconds per call (the
 *                              measurement behind fastblas.h's thresholds)
 *
 * Part of `make bench` (bench/scale.sh); never fails on time. */
#include "rigmat_internal.h"
#include "discretize.h"
#include "expm.h"
#include "fastblas.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_linalg.h>

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
    rigmat_fastblas fb;
    size_t i;
    int r;

    if (A == NULL || B == NULL || C == NULL)
        return 4;
    for (i = 0; i < n * n; i++) {
        A->data[i] = (double)(i % 7) - 3.0;
        B->data[i] = (double)(i % 5) - 2.0;
    }
    rigmat_fastblas_init(&fb);
    for (r = 0; r < 3; r++) {
        const double t0 = now_s();
        rigmat_dgemm(&fb, CblasNoTrans, CblasNoTrans, 1.0, A, B, 0.0, C);
        if (now_s() - t0 < best)
            best = now_s() - t0;
    }
    printf("%.6g\n", best);
    rigmat_fastblas_release(&fb);
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
    rigmat_fastblas fb;
    rigmat_dgetrf_fn dgetrf;
    unsigned k;

    if (A == NULL || E == NULL || C == NULL || p == NULL || w == NULL || ipiv == NULL)
        return 4;
    fill(A);
    gsl_matrix_scale(A, 20.0 / rigmat_expm_norm1(A));
    t0 = now_s();
    if (rigmat_expm(A, E, 0, w, &info, NULL) != RIGMAT_OK)
        return 3;
    te = now_s() - t0;
    rigmat_fastblas_init(&fb);
    t0 = now_s();
    for (k = 0; k < info.products; k++)
        rigmat_dgemm(&fb, CblasNoTrans, CblasNoTrans, 1.0, A, k % 2 ? C : E, 0.0, k % 2 ? E : C);
    tp = now_s() - t0;
    gsl_matrix_memcpy(C, A);
    t0 = now_s();
    gsl_linalg_LU_decomp(C, p, &signum);
    tg = now_s() - t0;
    dgetrf = rigmat_fastblas_load(&fb, NULL) ? fb.dgetrf : NULL;
    if (dgetrf != NULL) {
        const int ni = (int)n;
        int inf = 0;
        gsl_matrix_memcpy(C, A);
        t0 = now_s();
        dgetrf(&ni, &ni, C->data, &ni, ipiv, &inf);
        tl = now_s() - t0;
    }
    rigmat_fastblas_release(&fb);
    printf("%.6g %.6g %.6g %.6g %u\n", te, tp, tg, tl, info.products);
    gsl_matrix_free(A);
    gsl_matrix_free(E);
    gsl_matrix_free(C);
    gsl_permutation_free(p);
    rigmat_expm_ws_free(w);
    free(ipiv);
    return 0;
}

/* best of `reps` batches of calls lasting >= 20 ms each: seconds per call */
static double per_call(int which, rigmat_fastblas *fb, gsl_matrix *A, gsl_matrix *B, gsl_matrix *C,
                       gsl_permutation *p, int *ipiv)
{
    const size_t n = A->size1;
    const int ni = (int)n;
    double best = 1e300;
    int r;

    for (r = 0; r < 5; r++) {
        const double t0 = now_s();
        long calls = 0;
        double t;
        do {
            int sg = 0, inf = 0;
            switch (which) {
            case 0:
                gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, 1.0, A, B, 0.0, C);
                break;
            case 1:
                fb->dgemm((int)CblasRowMajor, (int)CblasNoTrans, (int)CblasNoTrans, ni, ni, ni, 1.0,
                          A->data, ni, B->data, ni, 0.0, C->data, ni);
                break;
            case 2:
                gsl_matrix_memcpy(C, A);
                gsl_linalg_LU_decomp(C, p, &sg);
                break;
            default:
                gsl_matrix_memcpy(C, A);
                fb->dgetrf(&ni, &ni, C->data, &ni, ipiv, &inf);
                break;
            }
            calls++;
            t = now_s() - t0;
        } while (t < 0.02);
        if (t / (double)calls < best)
            best = t / (double)calls;
    }
    return best;
}

static int blas_table(void)
{
    static const size_t ns[] = { 8, 16, 32, 48, 64, 96, 128, 192, 256 };
    rigmat_fastblas fb;
    size_t q;

    rigmat_fastblas_init(&fb);
    if (!rigmat_fastblas_load(&fb, NULL) || fb.dgetrf == NULL) {
        fprintf(stderr, "scale_bench: OpenBLAS did not open\n");
        return 3;
    }
    printf("%6s %12s %12s %8s %12s %12s %8s\n", "n", "gsl dgemm", "openblas", "ratio", "gsl LU",
           "dgetrf", "ratio");
    for (q = 0; q < sizeof ns / sizeof ns[0]; q++) {
        const size_t n = ns[q];
        gsl_matrix *A = gsl_matrix_alloc(n, n), *B = gsl_matrix_alloc(n, n);
        gsl_matrix *C = gsl_matrix_alloc(n, n);
        gsl_permutation *p = gsl_permutation_alloc(n);
        int *ipiv = malloc(n * sizeof *ipiv);
        double t[4];
        int k;
        if (A == NULL || B == NULL || C == NULL || p == NULL || ipiv == NULL)
            return 4;
        fill(A);
        fill(B);
        for (k = 0; k < 4; k++)
            t[k] = per_call(k, &fb, A, B, C, p, ipiv);
        printf("%6zu %12.4g %12.4g %8.2f %12.4g %12.4g %8.2f\n", n, t[0], t[1], t[0] / t[1], t[2],
               t[3], t[2] / t[3]);
        gsl_matrix_free(A);
        gsl_matrix_free(B);
        gsl_matrix_free(C);
        gsl_permutation_free(p);
        free(ipiv);
    }
    rigmat_fastblas_release(&fb);
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
    if (argc == 2 && strcmp(argv[1], "--blas") == 0)
        return blas_table();
    if (argc != 3) {
        fprintf(stderr, "usage: scale_bench FILE RATE_HZ | --dgemm N | --expm N | --blas\n");
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
