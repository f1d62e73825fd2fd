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
 * Sizes: the rule is the call's own size, never what ran before, so a
 * result does not depend on the history of its workspace (a sweep's
 * bytes do not depend on how points fall to threads).  rigmat_dgemm and
 * rigmat_dtrsm take the loaded BLAS when the multiply-adds m n k reach
 * RIGMAT_FASTBLAS_MIN_N^3, rigmat_fastblas_dgetrf from n >=
 * RIGMAT_FASTBLAS_LU_MIN_N; below, GSL.  The thresholds are measured
 * (below).
 */
#ifndef RIGMAT_FASTBLAS_H
#define RIGMAT_FASTBLAS_H

#include <stddef.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_vector_complex.h>
#include <gsl/gsl_matrix_complex_double.h>

/* OpenBLAS's cblas_dgemm (32-bit integers; the CBLAS enum values, the
 * same as GSL's) */
typedef void (*rigmat_cblas_dgemm_fn)(int order, int transa, int transb, int m, int n, int k,
                                      double alpha, const double *a, int lda, const double *b,
                                      int ldb, double beta, double *c, int ldc);
/* OpenBLAS's cblas_dtrsm */
typedef void (*rigmat_cblas_dtrsm_fn)(int order, int side, int uplo, int transa, int diag, int m,
                                      int n, double alpha, const double *a, int lda, double *b,
                                      int ldb);
/* OpenBLAS's cblas_dgemv */
typedef void (*rigmat_cblas_dgemv_fn)(int order, int trans, int m, int n, double alpha,
                                      const double *a, int lda, const double *x, int incx,
                                      double beta, double *y, int incy);
/* LAPACK's dgetrf_ (column-major LU with partial pivoting) */
typedef void (*rigmat_dgetrf_fn)(const int *m, const int *n, double *a, const int *lda, int *ipiv,
                                 int *info);

/* LAPACK's dgeev_ (column-major eigenvalues and eigenvectors of a general
 * real matrix), with the two hidden lengths of its character arguments
 * that Fortran compilers pass after the others */
typedef void (*rigmat_dgeev_fn)(const char *jobvl, const char *jobvr, const int *n, double *a,
                                const int *lda, double *wr, double *wi, double *vl,
                                const int *ldvl, double *vr, const int *ldvr, double *work,
                                const int *lwork, int *info, size_t len_jobvl, size_t len_jobvr);

typedef struct rigmat_fastblas {
    void *handle; /* dlopen handle; NULL until loaded, or when none opened */
    int tried;    /* 1 once a load was attempted (a failure is not retried) */
    rigmat_cblas_dgemm_fn dgemm;
    rigmat_cblas_dtrsm_fn dtrsm;
    rigmat_cblas_dgemv_fn dgemv;
    rigmat_dgetrf_fn dgetrf; /* NULL when the library has no LAPACK */
    rigmat_dgeev_fn dgeev;   /* NULL when the library has no LAPACK */
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

/* B = alpha op(A)^-1 B (side left) or alpha B op(A)^-1 (right), A
 * triangular, as gsl_blas_dtrsm, by the loaded BLAS when fb is not NULL
 * and the solve is large (n^2 right-hand-side entries, as a product). */
int rigmat_dtrsm(rigmat_fastblas *fb, CBLAS_SIDE_t side, CBLAS_UPLO_t uplo, CBLAS_TRANSPOSE_t ta,
                 CBLAS_DIAG_t diag, double alpha, const gsl_matrix *A, gsl_matrix *B);

/* y = alpha op(A) x + beta y, as gsl_blas_dgemv, by the loaded BLAS when
 * fb is not NULL and A has at least RIGMAT_FASTBLAS_MIN_N^2 entries (the
 * matrix of a call whose products take that BLAS too). */
int rigmat_dgemv(rigmat_fastblas *fb, CBLAS_TRANSPOSE_t ta, double alpha, const gsl_matrix *A,
                 const gsl_vector *x, double beta, gsl_vector *y);

/* dgetrf_ of the loaded BLAS for an n x n LU when n is large enough and
 * the library has one (loading it if need be); NULL otherwise (use GSL's
 * LU).  fb may be NULL. */
rigmat_dgetrf_fn rigmat_fastblas_dgetrf(rigmat_fastblas *fb, size_t n);

/* The eigenvalues and right eigenvectors of a general square A, as
 * gsl_eigen_nonsymmv (A destroyed; eigenvector k in column k of V, unit
 * Euclidean norm; a GSL status: GSL_EMAXITER when the iteration does not
 * converge, GSL_ENOMEM).  From RIGMAT_FASTBLAS_EIG_MIN_N states by the
 * loaded library's dgeev_ when it has one (blocked Hessenberg reduction
 * and multishift QR), else by gsl_eigen_nonsymmv on a workspace it
 * allocates.  The order of the eigenvalues is the method's own: callers
 * must not depend on it.  fb may be NULL (GSL). */
int rigmat_eigen_nonsymmv(rigmat_fastblas *fb, gsl_matrix *A, gsl_vector_complex *ev,
                          gsl_matrix_complex *V);

/* The thresholds, measured on the 2-core build machine, shared
 * (build/bench/scale_bench --blas; bench/RESULTS.md, "lazyblas"), seconds
 * per square call, GSL's CBLAS / OpenBLAS (one thread):
 *     n = 8: 2.9e-7 / 1.7e-7     n = 16: 1.8e-6 / 4.2e-7    n = 32: 1.5e-5 / 2.5e-6
 *     n = 48: 4.1e-5 / 6.9e-6    n = 64: 9.9e-5 / 1.3e-5    n = 128: 7.3e-4 / 1.7e-4
 *     n = 256: 7.9e-3 / 1.0e-3; LU n = 48: 2.5e-5 / 1.4e-5, n = 256: 3.0e-3 / 5.1e-4.
 * OpenBLAS wins every call, by 4 times and more from n = 16, but opening
 * it costs 8-13 ms of CPU once per process (dlopen + first call, measured
 * the same day).  Products from 16^3 multiply-adds take it: the
 * exponential at n = 16 with GSL's products took 1.7 times scipy's
 * (bench/expm.sh: 40 us against 23 us of CPU), and every product of the
 * demo stays below (its largest, Van Loan's 12 x 12 blocks, is 12^3), so
 * the demo never opens it (tests/cli.sh).  A model between 16 and 48
 * states pays the load in a one-shot run, as every process did when
 * OpenBLAS was linked.  LAPACK's LU from n = 48: below, the call overhead
 * lost inside the whole exponential (0.26 ms with dgetrf against 0.18 ms
 * with GSL's LU at n = 32, 0.87 against 1.21 at n = 48; src/sample/expm.c
 * before this module). */
enum { RIGMAT_FASTBLAS_MIN_N = 16, RIGMAT_FASTBLAS_LU_MIN_N = 48, RIGMAT_FASTBLAS_EIG_MIN_N = 64 };

#endif /* RIGMAT_FASTBLAS_H */
