/* expm_bench.c - time rigmat_expm on seeded random matrices of sizes 4, 8,
 * 16, 64, 256, 512 and 1024, and the matrix products it performs on their own (how
 * close to the BLAS limit the exponential runs).  Writes each matrix to
 * DIR/expm_<n>.bin (raw row-major doubles) for bench/expm_scipy.py, which
 * times scipy.linalg.expm on the same matrices; bench/expm.sh runs both.
 * Every time is measured twice, as wall time and as the process's CPU time
 * (one BLAS thread: CPU time is the robust figure on a shared machine).
 * Output, one line per size: n expm_wall products_wall products degree
 * squarings expm_cpu products_cpu (seconds per call).  The products are
 * made as the exponential makes them (rigmat_dgemm with its workspace's
 * BLAS: OpenBLAS from src/util/fastblas.h's threshold, GSL's CBLAS below). */
#include "expm.h"

#include <stdio.h>
#include <stdlib.h>
#include <time.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

/* every timing repeats its work for at least this long, best of `rounds` */
static const double min_batch_s = 0.05;
static int rounds = 5; /* 2 from n = 512 on: one call is then a second */
/* the flags of the ZOH discretization's exponentials, less balancing (the
 * random matrices are well scaled): degree and squarings from the powers,
 * as scipy.linalg.expm chooses them */
static const unsigned flags = RIGMAT_EXPM_POWERS;
/* ||A||_1 of the test matrices: Pade degree 13 with two squarings */
static const double norm_target = 20.0;

static double clock_s(clockid_t id)
{
    struct timespec t;

    clock_gettime(id, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static double now_s(void)
{
    return clock_s(CLOCK_MONOTONIC);
}

static double cpu_s(void)
{
    return clock_s(CLOCK_PROCESS_CPUTIME_ID);
}

static int time_expm(const gsl_matrix *A, gsl_matrix *E, rigmat_expm_ws *w, double *best,
                     double *best_cpu)
{
    int r;
    long k, reps = 1;

    *best = *best_cpu = 1e300;
    for (r = 0; r < rounds; r++) {
        double t0, c0, dt, dc;
        for (;;) {
            t0 = now_s();
            c0 = cpu_s();
            for (k = 0; k < reps; k++)
                if (rigmat_expm(A, E, flags, w, NULL, NULL) != RIGMAT_OK)
                    return -1;
            dt = now_s() - t0;
            dc = cpu_s() - c0;
            if (dt >= min_batch_s)
                break;
            reps *= 2;
        }
        if (dt / (double)reps < *best)
            *best = dt / (double)reps;
        if (dc / (double)reps < *best_cpu)
            *best_cpu = dc / (double)reps;
    }
    return 0;
}

static int time_products(rigmat_fastblas *fb, const gsl_matrix *A, gsl_matrix *B, gsl_matrix *C,
                         unsigned products, double *best, double *best_cpu)
{
    int r;
    long k, reps = 1;
    unsigned p;

    *best = *best_cpu = 1e300;
    for (r = 0; r < rounds; r++) {
        double t0, c0, dt, dc;
        for (;;) {
            t0 = now_s();
            c0 = cpu_s();
            for (k = 0; k < reps; k++)
                for (p = 0; p < products; p++)
                    if (rigmat_dgemm(fb, CblasNoTrans, CblasNoTrans, 1.0, A, p % 2 ? C : B, 0.0,
                                     p % 2 ? B : C) != GSL_SUCCESS)
                        return -1;
            dt = now_s() - t0;
            dc = cpu_s() - c0;
            if (dt >= min_batch_s)
                break;
            reps *= 2;
        }
        if (dt / (double)reps < *best)
            *best = dt / (double)reps;
        if (dc / (double)reps < *best_cpu)
            *best_cpu = dc / (double)reps;
    }
    return 0;
}

int main(int argc, char **argv)
{
    static const size_t sizes[] = { 4, 8, 16, 64, 256, 512, 1024 };
    gsl_rng *rng;
    size_t k, i;

    gsl_set_error_handler_off();
    if (argc != 2) {
        fprintf(stderr, "usage: expm_bench DIR\n");
        return 2;
    }
    rng = gsl_rng_alloc(gsl_rng_mt19937);
    if (rng == NULL)
        return 4;
    gsl_rng_set(rng, 2005);
    for (k = 0; k < sizeof sizes / sizeof sizes[0]; k++) {
        const size_t n = sizes[k];
        gsl_matrix *A = gsl_matrix_alloc(n, n), *E = gsl_matrix_alloc(n, n);
        gsl_matrix *C = gsl_matrix_alloc(n, n);
        rigmat_expm_ws *w = rigmat_expm_ws_alloc(n);
        rigmat_expm_info info;
        double te, tp, tec, tpc, scale;
        char path[4096];
        FILE *f;

        if (A == NULL || E == NULL || C == NULL || w == NULL)
            return 4;
        rounds = n >= 512 ? 2 : 5;
        for (i = 0; i < n * n; i++)
            A->data[i] = gsl_ran_gaussian(rng, 1.0);
        scale = norm_target / rigmat_expm_norm1(A);
        gsl_matrix_scale(A, scale);
        snprintf(path, sizeof path, "%s/expm_%zu.bin", argv[1], n);
        f = fopen(path, "wb");
        if (f == NULL || fwrite(A->data, sizeof(double), n * n, f) != n * n || fclose(f) != 0) {
            fprintf(stderr, "expm_bench: cannot write %s\n", path);
            return 4;
        }
        if (rigmat_expm(A, E, flags, w, &info, NULL) != RIGMAT_OK ||
            time_expm(A, E, w, &te, &tec) != 0 ||
            time_products(&w->blas, A, E, C, info.products, &tp, &tpc) != 0) {
            fprintf(stderr, "expm_bench: failed at n = %zu\n", n);
            return 3;
        }
        printf("%zu %.6e %.6e %u %u %u %.6e %.6e\n", n, te, tp, info.products, info.degree,
               info.squarings, tec, tpc);
        gsl_matrix_free(A);
        gsl_matrix_free(E);
        gsl_matrix_free(C);
        rigmat_expm_ws_free(w);
    }
    gsl_rng_free(rng);
    return 0;
}
