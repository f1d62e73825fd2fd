/* fastblas.h - an optimized BLAS loaded only for large problems.
 *
 * rigmat links GSL with GSL's own CBLAS (libgslcblas), which the dynamic
 * loader maps in a fraction of the time a large optimized BLAS takes: at
 * start the loader relocated OpenBLAS's ~12k symbols in 37 M cycles
 * against 7.9 M with GSL's CBLAS (LD_DEBUG=statistics; bench/RESULTS.md).
 * Small models, the common case, never need more.  For a large product or
 * LU this module opens OpenBLAS with dlopen on first use and calls its
 * cblas_dgemm and LAPACK dgetrf_ through function pointers.
 *
 * State: a rigmat_fastblas lives inside the workspace that needs it (no
 * global).  The first large call opens the library (RTLD_NOW |
 * RTLD_LOCAL | RTLD_NODELETE: the loader keeps it mapped after the last
 * dlclose, so a sweep that allocates a workspace per point pays the load
 * once per process and OpenBLAS's thread pool is never torn down under a
 * running thread); rigmat_fastblas_release closes the handle.  dlopen,
 * dlsym and dlclose are thread-safe and reference-counted, so separate
 * workspaces on separate threads need no lock.  When no library opens
 * (not installed), the object remembers it and every call takes GSL's
 * CBLAS or GSL's LU: the same results up to rounding, slower, silent.
 *
 * Sizes: rigmat_dgemm takes the loaded BLAS when m n k >= RIGMAT_FASTBLAS_GEMM_MIN^3;
 * rigmat_fastblas_dgetrf returns dgetrf_ from n >= RIGMAT_FASTBLAS_LU_MIN.
 * Both thresholds are measured (fastblas.c says how).
 */
#ifndef RIGMAT_FASTBLAS_H
#define RIGMAT_FASTBLAS_H

#include <stddef.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_matrix.h>

/* OpenBLAS's cblas_dgemm (32-bit integers; CBLAS enum values as GSL's) */
typedef void (*rigmat_cblas_dgemm_fn)(int order, int transa, int transb, int m, int n, int k,
                                      double alpha, const double *a, int lda, const double *b,
                                      int ldb, double beta, double *c, int ldc);
/* LAPACK's dgetrf_ (column-major LU with partial pivoting) */
typedef void (*rigmat_dgetrf_fn)(const int *m, const int *n, double *a, const int *lda, int *ipiv,
                                 int *info);

typedef struct rigmat_fastblas {
    void *handle; /* dlopen handle; NULL until loaded, or when none opened */
    int tried;    /* 1 once a load was attempted (a failure is not retried) */
    rigmat_cblas_dgemm_fn dgemm;
    rigmat_dgetrf_fn dgetrf; /* NULL when the library has no LAPACK */
} rigmat_fastblas;

/* Nothing loaded yet. */
void rigmat_fastblas_init(rigmat_fastblas *fb);

/* Close the handle (when loaded) and return to the state of init. */
void rigmat_fastblas_release(rigmat_fastblas *fb);

/* Open the optimized BLAS on first call (the sonames of
 * rigmat_fastblas_names, in order); 1 when its dgemm is available.  names:
 * a NULL-terminated list of sonames to try instead (tests), or NULL. */
int rigmat_fastblas_load(rigmat_fastblas *fb, const char *const *names);

/* The sonames tried, in order, NULL-terminated. */
extern const char *const rigmat_fastblas_names[];

/* C = alpha op(A) op(B) + beta C, as gsl_blas_dgemm (same checks, same
 * GSL status), by the loaded BLAS when fb is not NULL and the product is
 * large, else by gsl_blas_dgemm. */
int rigmat_dgemm(rigmat_fastblas *fb, CBLAS_TRANSPOSE_t ta, CBLAS_TRANSPOSE_t tb, double alpha,
                 const gsl_matrix *A, const gsl_matrix *B, double beta, gsl_matrix *C);

/* dgetrf_ of the loaded BLAS for an n x n LU when n is large enough and
 * the library has one (loading it if need be); NULL otherwise (use GSL's
 * LU).  fb may be NULL. */
rigmat_dgetrf_fn rigmat_fastblas_dgetrf(rigmat_fastblas *fb, size_t n);

enum {
    RIGMAT_FASTBLAS_GEMM_MIN = 96, /* n of the smallest square product sent to the loaded BLAS */
    RIGMAT_FASTBLAS_LU_MIN = 96    /* n of the smallest LU sent to dgetrf_ */
};

#endif /* RIGMAT_FASTBLAS_H */
