/* expm.h - the matrix exponential by scaling and squaring with Pade
 * approximants.
 *
 * Method: N. J. Higham, "The scaling and squaring method for the matrix
 * exponential revisited", SIAM J. Matrix Anal. Appl. 26(4):1179-1193, 2005,
 * Algorithm 2.3.  The diagonal Pade approximant r_m = p_m(A)/p_m(-A) of
 * degree m in {3, 5, 7, 9} is used when ||A||_1 <= theta_m; otherwise m = 13
 * on A/2^s with s = ceil(log2(||A||_1/theta_13)), and the result is squared
 * s times.  The theta_m bound the backward error by the unit roundoff
 * u = 2^-53 (Higham 2005, Table 2.3).  With RIGMAT_EXPM_POWERS (the
 * default of discretization) the degree and s come instead from
 * ||A^k||_1^(1/k) of the powers A^2, A^4, A^6 the approximant needs anyway,
 * plus the extra squarings ell() for rounding in r_m: Al-Mohy and Higham,
 * "A new scaling and squaring algorithm for the matrix exponential", SIAM
 * J. Matrix Anal. Appl. 31(3):970-989, 2009, Algorithm 3.1; a non-normal
 * matrix whose powers shrink is then not overscaled.  The numerator and denominator are
 * formed with rigmat_dgemm (src/util/fastblas.h: OpenBLAS for large n); (V - U) X = V + U is solved by one LU
 * factorization and two triangular solves with n right-hand sides.
 *
 * Optional balancing (RIGMAT_EXPM_BALANCE) applies the diagonal similarity
 * A' = D^-1 A D of gsl_linalg_balance_matrix (powers of two, so exact) and
 * returns D e^A' D^-1; it is kept only when it lowers ||A||_1, which saves
 * squarings on badly scaled matrices.
 *
 * Accuracy: the backward error is at the level of u; the forward error is
 * about u times the condition number of the exponential, which grows with
 * ||A|| (tests/check_expm.c measures it against 40-digit values).
 *
 * Memory: every call works inside a workspace allocated once for a largest
 * size; a call on an n x n matrix with n <= nmax allocates nothing.
 */
#ifndef RIGMAT_EXPM_H
#define RIGMAT_EXPM_H

#include "rigmat_internal.h"
#include "fastblas.h"

#include <gsl/gsl_permutation.h>

enum rigmat_expm_flags {
    RIGMAT_EXPM_BALANCE = 1 << 0, /* try a diagonal balancing first */
    /* choose the degree and the squarings from ||A^k||_1^(1/k) of the
     * powers the approximant needs anyway (Al-Mohy and Higham, SIAM J.
     * Matrix Anal. Appl. 31(3), 2009, Algorithm 3.1) instead of ||A||_1:
     * fewer squarings for non-normal matrices whose powers shrink (no
     * overscaling).  Where the paper estimates ||A^8|| and ||A^10|| this
     * uses the upper bounds ||A^4||^2 and ||A^4|| ||A^6|| (so never fewer
     * squarings than the paper) and ||(|A|)^(2m+1)||_1 exactly by vector
     * products. */
    RIGMAT_EXPM_POWERS = 1 << 1
};

/* Scratch space for matrices up to nmax x nmax: eight n x n buffers, a
 * permutation, a scaling vector and the handle of the optimized BLAS once
 * a large call opened it (closed by rigmat_expm_ws_free).  Opaque to
 * callers; one thread at a time. */
#define RIGMAT_EXPM_NL2C 14

typedef struct rigmat_expm_ws {
    size_t nmax;
    gsl_matrix *As, *A2, *A4, *A6, *A8, *U, *V, *T; /* nmax x nmax each */
    gsl_permutation *perm;                          /* nmax */
    gsl_vector *scale;                              /* nmax: balancing D */
    rigmat_fastblas blas; /* OpenBLAS, opened by the first large product or LU */
    double l2c[RIGMAT_EXPM_NL2C]; /* log2 |c_(2m+1)| by degree m (expm.c, ell) */
} rigmat_expm_ws;

/* What one call did, for tests, the benchmark and diagnostics. */
typedef struct rigmat_expm_info {
    unsigned degree;    /* Pade degree m: 3, 5, 7, 9 or 13 (0 for n = 0 or A = 0) */
    unsigned squarings; /* s */
    unsigned products;  /* n x n matrix products performed (pi_m + s) */
    int balanced;       /* 1 when the balanced matrix was used */
    double norm1;       /* ||A||_1 of the matrix the approximant saw (before 2^-s) */
} rigmat_expm_info;

/* A new workspace for matrices of size up to nmax (>= 1), owned by the
 * caller; free with rigmat_expm_ws_free.  NULL when out of memory. */
rigmat_expm_ws *rigmat_expm_ws_alloc(size_t nmax);
void rigmat_expm_ws_free(rigmat_expm_ws *w);

/* eA = e^A for a square A of size n <= w->nmax.  eA must be n x n; it may be
 * the same matrix as A.  flags: rigmat_expm_flags.  info may be NULL.
 * Returns RIGMAT_EUSAGE for bad shapes (message gives expected vs actual),
 * RIGMAT_ENUMERIC for a non-finite entry in A, a singular Pade denominator or
 * an overflow of the result, RIGMAT_OK otherwise. */
rigmat_status rigmat_expm(const gsl_matrix *A, gsl_matrix *eA, unsigned flags, rigmat_expm_ws *w,
                          rigmat_expm_info *info, rigmat_error *err);

/* The 1-norm (largest column sum of absolute values) of a matrix. */
double rigmat_expm_norm1(const gsl_matrix *A);

/* Balance the n x n row-major a (row stride tda) in place, a <- D^-1 a D
 * with D = diag(d) of powers of two (the Parlett-Reinsch iteration, GSL's
 * gsl_linalg_balance_matrix bit for bit; see expm.c). */
void rigmat_expm_balance(double *a, size_t n, size_t tda, double *d);

/* LU with partial pivoting of a small row-major a in place (GSL's
 * gsl_linalg_LU_decomp bit for bit for n <= RIGMAT_EXPM_SMALL_LU; see
 * expm.c); perm[i] = the original row at i.  0, or -1 for a zero pivot. */
#define RIGMAT_EXPM_SMALL_LU 16
int rigmat_expm_small_lu(double *a, size_t n, size_t tda, size_t *perm);

#endif /* RIGMAT_EXPM_H */
