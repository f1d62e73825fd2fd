/* expm.c - scaling and squaring with Pade approximants (Higham 2005).
 *
 * The coefficient tables and the evaluation schemes follow Higham (2005),
 * Algorithm 2.3; the degree-13 scheme needs 6 products:
 *     A2 = A^2, A4 = A2^2, A6 = A2 A4,
 *     U = A [A6 (b13 A6 + b11 A4 + b9 A2) + b7 A6 + b5 A4 + b3 A2 + b1 I],
 *     V = A6 (b12 A6 + b10 A4 + b8 A2) + b6 A6 + b4 A4 + b2 A2 + b0 I,
 * and r_13 = (V - U)^-1 (V + U).
 */
#include "invariant.h"
#include "expm.h"
#include "fastblas.h"
#include "sizes.h"

#include <limits.h>
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>

/* Products and the LU of the Pade denominator go to OpenBLAS, opened on
 * first large use (src/util/fastblas.h), from the sizes measured there;
 * below them GSL's CBLAS and GSL's LU.  Earlier measurements with OpenBLAS
 * linked at build time: at n = 2000 on the shared build machine, one
 * thread, dgetrf 0.95 s against gsl_linalg_LU_decomp 1.46 s; with both
 * cores 0.57 s against 3.4 s (GSL's is serial). */

/* theta_m for m = 3, 5, 7, 9, 13: Higham (2005), Table 2.3, u = 2^-53. */
static const double theta3 = 1.495585217958292e-2;
static const double theta5 = 2.539398330063230e-1;
static const double theta7 = 9.504178996162932e-1;
static const double theta9 = 2.097847961257068e0;
static const double theta13 = 5.371920351148152e0;

/* b_j = c_j / c_m of p_m, c_j = (2m-j)! m! / ((2m)! j! (m-j)!): Higham (2005)
 * section 2; every value is an exact double. */
static const double b3[] = { 120.0, 60.0, 12.0, 1.0 };
static const double b5[] = { 30240.0, 15120.0, 3360.0, 420.0, 30.0, 1.0 };
static const double b7[] = {
    17297280.0, 8648640.0, 1995840.0, 277200.0, 25200.0, 1512.0, 56.0, 1.0
};
static const double b9[] = { 17643225600.0, 8821612800.0, 2075673600.0, 302702400.0, 30270240.0,
                             2162160.0,     110880.0,     3960.0,       90.0,        1.0 };
static const double b13[] = { 64764752532480000.0,
                              32382376266240000.0,
                              7771770303897600.0,
                              1187353796428800.0,
                              129060195264000.0,
                              10559470521600.0,
                              670442572800.0,
                              33522128640.0,
                              1323241920.0,
                              40840800.0,
                              960960.0,
                              16380.0,
                              182.0,
                              1.0 };

double rigmat_expm_norm1(const gsl_matrix *A)
{
    double best = 0.0;
    size_t i, j;

    /* by columns through the raw storage: gsl_matrix_get's range check per
     * entry cost about 3% of the whole exponential at n = 64 (callgrind) */
    for (j = 0; j < A->size2; j++) {
        const double *a = A->data + j;
        double s = 0.0;
        for (i = 0; i < A->size1; i++)
            s += fabs(a[i * A->tda]);
        if (s > best || isnan(s))
            best = s;
    }
    return best;
}

static void ell_constants(double *l2c);

static gsl_matrix *alloc_or_flag(size_t n, int *bad)
{
    gsl_matrix *m = rigmat_matrix_alloc(n, n);

    if (m == NULL)
        *bad = 1;
    return m;
}

rigmat_expm_ws *rigmat_expm_ws_alloc(size_t nmax)
{
    rigmat_expm_ws *w;
    int bad = 0;

    if (nmax == 0)
        return NULL;
    w = calloc(1, sizeof *w);
    if (w == NULL)
        return NULL;
    w->nmax = nmax;
    rigmat_fastblas_init(&w->blas);
    ell_constants(w->l2c);
    w->As = alloc_or_flag(nmax, &bad);
    w->A2 = alloc_or_flag(nmax, &bad);
    w->A4 = alloc_or_flag(nmax, &bad);
    w->A6 = alloc_or_flag(nmax, &bad);
    w->A8 = alloc_or_flag(nmax, &bad);
    w->U = alloc_or_flag(nmax, &bad);
    w->V = alloc_or_flag(nmax, &bad);
    w->T = alloc_or_flag(nmax, &bad);
    w->perm = gsl_permutation_alloc(nmax);
    w->scale = gsl_vector_alloc(nmax);
    if (bad || w->perm == NULL || w->scale == NULL) {
        rigmat_expm_ws_free(w);
        return NULL;
    }
    return w;
}

void rigmat_expm_ws_free(rigmat_expm_ws *w)
{
    size_t i;

    if (w == NULL)
        return;
    {
        gsl_matrix *const m[] = { w->As, w->A2, w->A4, w->A6, w->A8, w->U, w->V, w->T };
        for (i = 0; i < sizeof m / sizeof m[0]; i++)
            if (m[i] != NULL)
                gsl_matrix_free(m[i]);
    }
    if (w->perm != NULL)
        gsl_permutation_free(w->perm);
    if (w->scale != NULL)
        gsl_vector_free(w->scale);
    rigmat_fastblas_release(&w->blas);
    free(w);
}

/* The leading n x n block of a workspace buffer. */
static gsl_matrix_view block(gsl_matrix *m, size_t n)
{
    return gsl_matrix_submatrix(m, 0, 0, n, n);
}

/* d1 = sum_k c1[k] M[k] + c10 I and d2 = sum_k c2[k] M[k] + c20 I in one
 * pass over the powers M[k] (no products). */
static void lincomb2(gsl_matrix *d1, double c10, const double *c1, gsl_matrix *d2, double c20,
                     const double *c2, gsl_matrix *const *M, size_t count)
{
    const size_t n = d1->size1;
    size_t i, j, k;

    for (i = 0; i < n; i++) {
        double *p = gsl_matrix_ptr(d1, i, 0);
        double *q = gsl_matrix_ptr(d2, i, 0);
        for (j = 0; j < n; j++) {
            p[j] = 0.0;
            q[j] = 0.0;
        }
        for (k = 0; k < count; k++) {
            const double *s = gsl_matrix_const_ptr(M[k], i, 0);
            const double a = c1[k], b = c2[k];
            for (j = 0; j < n; j++) {
                p[j] += a * s[j];
                q[j] += b * s[j];
            }
        }
        p[i] += c10;
        q[i] += c20;
    }
}

static rigmat_status mul(rigmat_fastblas *fb, gsl_matrix *C, const gsl_matrix *A,
                         const gsl_matrix *B, rigmat_error *err)
{
    const int gs = rigmat_dgemm(fb, CblasNoTrans, CblasNoTrans, 1.0, A, B, 0.0, C);

    if (RIGMAT_NEVER(gs != GSL_SUCCESS)) /* only for sizes that disagree */
        return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "matrix product failed: %s", gsl_strerror(gs));
    return RIGMAT_OK;
}

/* Form U and V of r_m(A) for m <= 9 into U, V, adding the products to
 * *products.  The powers A^2 .. A^have (have = 0, 2, 4 or 6) are already in
 * A2, A4, A6. */
static rigmat_status pade_low(unsigned m, unsigned have, gsl_matrix *A, gsl_matrix *A2,
                              gsl_matrix *A4, gsl_matrix *A6, gsl_matrix *A8, gsl_matrix *U,
                              gsl_matrix *V, gsl_matrix *T, unsigned *products, rigmat_fastblas *fb,
                              rigmat_error *err)
{
    const double *b = m == 3 ? b3 : m == 5 ? b5 : m == 7 ? b7 : b9;
    gsl_matrix *pw[4];
    double codd[4], ceven[4];
    size_t k, npw;
    rigmat_status rc;

    rc = RIGMAT_OK;
    if (have < 2) {
        rc = mul(fb, A2, A, A, err);
        (*products)++;
    }
    if (rc == RIGMAT_OK && m >= 5 && have < 4) {
        rc = mul(fb, A4, A2, A2, err);
        (*products)++;
    }
    if (rc == RIGMAT_OK && m >= 7 && have < 6) {
        rc = mul(fb, A6, A2, A4, err);
        (*products)++;
    }
    if (rc == RIGMAT_OK && m >= 9) {
        rc = mul(fb, A8, A4, A4, err);
        (*products)++;
    }
    if (rc != RIGMAT_OK)
        return rc;
    pw[0] = A2;
    pw[1] = A4;
    pw[2] = A6;
    pw[3] = A8;
    npw = (m - 1) / 2; /* A^2 .. A^(m-1) */
    for (k = 0; k < npw; k++) {
        codd[k] = b[2 * k + 3];
        ceven[k] = b[2 * k + 2];
    }
    lincomb2(T, b[1], codd, V, b[0], ceven, pw, npw);
    rc = mul(fb, U, A, T, err);
    (*products)++;
    return rc;
}

/* U and V of r_13(A); A2, A4, A6 already hold the powers when have. */
static rigmat_status pade13(int have, gsl_matrix *A, gsl_matrix *A2, gsl_matrix *A4, gsl_matrix *A6,
                            gsl_matrix *U, gsl_matrix *V, gsl_matrix *T, unsigned *products,
                            rigmat_fastblas *fb, rigmat_error *err)
{
    gsl_matrix *const pw[3] = { A2, A4, A6 };
    const double ui[3] = { b13[9], b13[11], b13[13] };
    const double uo[3] = { b13[3], b13[5], b13[7] };
    const double vi[3] = { b13[8], b13[10], b13[12] };
    const double vo[3] = { b13[2], b13[4], b13[6] };
    rigmat_status rc;

    if (!have) {
        rc = mul(fb, A2, A, A, err);
        if (rc == RIGMAT_OK)
            rc = mul(fb, A4, A2, A2, err);
        if (rc == RIGMAT_OK)
            rc = mul(fb, A6, A2, A4, err);
        if (rc != RIGMAT_OK)
            return rc;
        *products += 3;
    }
    /* U: T = b13 A6 + b11 A4 + b9 A2; V = A6 T + (b7 A6 + b5 A4 + b3 A2 + b1 I); U = A V */
    lincomb2(T, 0.0, ui, V, b13[1], uo, pw, 3);
    rc = !RIGMAT_NEVER(rigmat_dgemm(fb, CblasNoTrans, CblasNoTrans, 1.0, A6, T, 1.0, V) !=
                       GSL_SUCCESS)
                 ? RIGMAT_OK
                 : RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "matrix product failed");
    if (rc == RIGMAT_OK)
        rc = mul(fb, U, A, V, err);
    if (rc != RIGMAT_OK)
        return rc;
    /* V = A6 (b12 A6 + b10 A4 + b8 A2) + b6 A6 + b4 A4 + b2 A2 + b0 I */
    lincomb2(T, 0.0, vi, V, b13[0], vo, pw, 3);
    if (RIGMAT_NEVER(rigmat_dgemm(fb, CblasNoTrans, CblasNoTrans, 1.0, A6, T, 1.0, V) !=
                     GSL_SUCCESS))
        return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "matrix product failed");
    *products += 3;
    return RIGMAT_OK;
}

/* X = P^-1 V by dgetrf, without transposing P.  LAPACK reads the row-major
 * buffer by columns, that is as P^T, and factors P^T = Pm L U (row
 * interchanges Pm, so partial pivoting on the columns of P: a backward
 * stable factorization of P all the same).  Read row-major again, the
 * factored buffer holds U^T on and below the diagonal and L^T (unit
 * diagonal) above it, and P = U^T L^T Pm^T, so
 *     X = Pm (L^T)^-1 (U^T)^-1 V:
 * two triangular solves on the row-major view, then the interchanges in
 * reverse order (Pm = P_1 P_2 ... P_n).  The in-place transpose this
 * replaces cost about 3% of the exponential at n = 256 (perf). */
static rigmat_status lapack_solve(rigmat_fastblas *fb, rigmat_dgetrf_fn dgetrf, gsl_matrix *V,
                                  gsl_matrix *P, gsl_matrix *X, int *ipiv, rigmat_error *err)
{
    const size_t n = P->size1;
    const int ni = (int)n, lda = (int)P->tda;
    size_t i;
    int info = 0, gs;

    dgetrf(&ni, &ni, P->data, &lda, ipiv, &info);
    if (RIGMAT_NEVER(info < 0))
        return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "dgetrf: argument %d is wrong", -info);
    for (i = 0; i < n; i++) {
        const double d = gsl_matrix_get(P, i, i);
        if (d == 0.0 || !isfinite(d))
            return RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                               "the Pade denominator of the matrix exponential is singular");
    }
    gs = gsl_matrix_memcpy(X, V);
    if (gs == GSL_SUCCESS)
        gs = rigmat_dtrsm(fb, CblasLeft, CblasLower, CblasNoTrans, CblasNonUnit, 1.0, P, X);
    if (gs == GSL_SUCCESS)
        gs = rigmat_dtrsm(fb, CblasLeft, CblasUpper, CblasNoTrans, CblasUnit, 1.0, P, X);
    for (i = n; i-- > 0 && gs == GSL_SUCCESS;) {
        const size_t k = (size_t)(ipiv[i] - 1);
        if (k != i)
            gs = gsl_matrix_swap_rows(X, i, k);
    }
    if (RIGMAT_NEVER(gs != GSL_SUCCESS))
        return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "triangular solve failed: %s", gsl_strerror(gs));
    return RIGMAT_OK;
}

/* LU with partial pivoting of the small n x n row-major a (row stride
 * tda), in place, P a = L U, the permutation into perm (perm[i] = the
 * original row now at i): GSL's gsl_linalg_LU_decomp bit for bit up to
 * RIGMAT_EXPM_SMALL_LU (its unblocked loop: pivot on the first largest
 * |a_ij|, rows swapped whole, the column below scaled by 1/a_jj, or
 * divided by it when |a_jj| < DBL_MIN, then the rank-one update of the
 * rest; tests/check_expm.c), without its per-call allocation and BLAS
 * calls.  Returns 0, or -1 for a zero pivot (left as is, as GSL does). */
int rigmat_expm_small_lu(double *a, size_t n, size_t tda, size_t *perm)
{
    size_t i, j, k, r;
    int zero = 0;

    for (i = 0; i < n; i++)
        perm[i] = i;
    for (j = 0; j < n; j++) {
        double big = fabs(a[j * tda + j]), ajj;
        size_t piv = j;
        for (i = j + 1; i < n; i++)
            if (fabs(a[i * tda + j]) > big) {
                big = fabs(a[i * tda + j]);
                piv = i;
            }
        if (piv != j) {
            for (k = 0; k < n; k++) {
                const double t = a[j * tda + k];
                a[j * tda + k] = a[piv * tda + k];
                a[piv * tda + k] = t;
            }
            r = perm[j];
            perm[j] = perm[piv];
            perm[piv] = r;
        }
        ajj = a[j * tda + j];
        if (ajj == 0.0)
            zero = 1;
        if (fabs(ajj) >= DBL_MIN) {
            const double inv = 1.0 / ajj;
            for (i = j + 1; i < n; i++)
                a[i * tda + j] *= inv;
        } else {
            for (i = j + 1; i < n; i++)
                a[i * tda + j] /= ajj;
        }
        for (i = j + 1; i < n; i++) {
            /* GSL adds rj[k] (-l); subtracting rj[k] l is the same bits
             * (and keeps a NaN's sign, which a negated l would flip) */
            const double l = a[i * tda + j];
            double *restrict ri = a + i * tda;
            const double *restrict rj = a + j * tda;
            for (k = j + 1; k < n; k++)
                ri[k] -= rj[k] * l;
        }
    }
    return zero ? -1 : 0;
}

/* X = (V - U)^-1 (V + U).  P receives V - U and its LU factors; X must be
 * distinct from U, V and P.  ipiv has n entries (LAPACK's pivots). */
static rigmat_status pade_solve(gsl_matrix *U, gsl_matrix *V, gsl_matrix *P, gsl_matrix *X,
                                gsl_permutation *perm, int *ipiv, rigmat_fastblas *fb,
                                rigmat_error *err)
{
    const size_t n = U->size1;
    rigmat_dgetrf_fn dgetrf;
    size_t i, j;
    int signum, gs;

    for (i = 0; i < n; i++) {
        const double *u = gsl_matrix_const_ptr(U, i, 0);
        double *v = gsl_matrix_ptr(V, i, 0);
        double *p = gsl_matrix_ptr(P, i, 0);
        for (j = 0; j < n; j++) {
            p[j] = v[j] - u[j];
            v[j] += u[j]; /* V + U overwrites V */
        }
    }
    dgetrf = P->tda <= (size_t)INT_MAX ? rigmat_fastblas_dgetrf(fb, n) : NULL;
    if (dgetrf != NULL)
        return lapack_solve(fb, dgetrf, V, P, X, ipiv, err);
    if (n <= RIGMAT_EXPM_SMALL_LU) {
        (void)rigmat_expm_small_lu(P->data, n, P->tda, perm->data); /* GSL's bits, checked
                                                                     * below as GSL's are */
    } else {
        gs = gsl_linalg_LU_decomp(P, perm, &signum);
        if (gs != GSL_SUCCESS)
            return RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "LU of the Pade denominator failed: %s",
                               gsl_strerror(gs));
    }
    for (i = 0; i < n; i++) {
        const double d = gsl_matrix_get(P, i, i);
        if (d == 0.0 || !isfinite(d))
            return RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                               "the Pade denominator of the matrix exponential is singular");
    }
    /* X = P^T-permuted rows of V + U, then L \ and U \ */
    for (i = 0; i < n; i++) {
        gsl_vector_const_view src = gsl_matrix_const_row(V, gsl_permutation_get(perm, i));
        gsl_vector_view dst = gsl_matrix_row(X, i);
        gs = gsl_vector_memcpy(&dst.vector, &src.vector);
        if (RIGMAT_NEVER(gs != GSL_SUCCESS))
            return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "row copy failed: %s", gsl_strerror(gs));
    }
    gs = rigmat_dtrsm(fb, CblasLeft, CblasLower, CblasNoTrans, CblasUnit, 1.0, P, X);
    if (gs == GSL_SUCCESS)
        gs = rigmat_dtrsm(fb, CblasLeft, CblasUpper, CblasNoTrans, CblasNonUnit, 1.0, P, X);
    if (RIGMAT_NEVER(gs != GSL_SUCCESS))
        return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "triangular solve failed: %s", gsl_strerror(gs));
    return RIGMAT_OK;
}

/* Balance the n x n row-major matrix a (row stride tda) in place by a
 * diagonal similarity D^-1 a D with powers of two, d receiving D: the
 * Parlett-Reinsch iteration (B. N. Parlett, C. Reinsch, "Balancing a
 * matrix for calculation of eigenvalues and eigenvectors", Numer. Math.
 * 13, 1969), in the form and order of GSL's gsl_linalg_balance_matrix, so
 * its result bit for bit (tests/check_expm.c), without its per-entry
 * range-checked accessors and library calls, which took about a third of
 * an 8 x 8 exponential's time.  One difference: a row whose norms
 * overflow is left alone (the library would loop on it forever). */
void rigmat_expm_balance(double *a, size_t n, size_t tda, double *d)
{
    int again = 1;
    size_t i, j;

    for (i = 0; i < n; i++)
        d[i] = 1.0;
    while (again) {
        again = 0;
        for (i = 0; i < n; i++) {
            double rn = 0.0, cn = 0.0, g, f = 1.0, s;
            for (j = 0; j < n; j++)
                if (j != i) {
                    cn += fabs(a[j * tda + i]);
                    rn += fabs(a[i * tda + j]);
                }
            if (cn == 0.0 || rn == 0.0 || !isfinite(cn + rn))
                continue;
            g = rn / 2.0;
            s = cn + rn;
            while (cn < g) {
                f *= 2.0;
                cn *= 4.0;
            }
            g = rn * 2.0;
            while (cn > g) {
                f /= 2.0;
                cn /= 4.0;
            }
            if (rn + cn < 0.95 * s * f) {
                again = 1;
                g = 1.0 / f;
                for (j = 0; j < n; j++) /* row i by 1/f, then column i by f */
                    a[i * tda + j] *= g;
                for (j = 0; j < n; j++)
                    a[j * tda + i] *= f;
                d[i] *= f;
            }
        }
    }
}

/* ceil(log2(x)) for x > 1, exact at powers of two (frexp, not log2). */
static unsigned ceil_log2(double x)
{
    int e;
    const double f = frexp(x, &e); /* x = f 2^e, f in [0.5, 1) */

    if (f == 0.5)
        e--;
    return e > 0 ? (unsigned)e : 0u;
}

/* log2 ||B^p||_1 of a nonnegative B (B = |A|, formed by the caller) by p
 * products of B^T with a vector (for a nonnegative matrix the 1-norm is
 * the largest entry of e^T B^p), by dgemv, rescaled at every step so that
 * nothing overflows; -HUGE_VAL when it is zero.  v and t hold n entries
 * each.  Cost O(p n^2): with p = 27 the whole choice from the powers
 * costs about 7% of the exponential at n = 256 with dgemv, against about
 * 25% with the same products as a plain C loop (CPU time, busy machine). */
static double log2_abs_power_norm(rigmat_fastblas *fb, const gsl_matrix *B, unsigned p, double *v,
                                  double *t)
{
    const size_t n = B->size1;
    gsl_vector_view vv = gsl_vector_view_array(v, n), tv = gsl_vector_view_array(t, n);
    double l = 0.0;
    size_t j;
    unsigned k;

    for (j = 0; j < n; j++)
        v[j] = 1.0;
    for (k = 0; k < p; k++) {
        double big = 0.0;
        if (RIGMAT_NEVER(rigmat_dgemv(fb, CblasTrans, 1.0, B, &vv.vector, 0.0, &tv.vector) !=
                         GSL_SUCCESS))
            return HUGE_VAL; /* sizes agree: never */
        for (j = 0; j < n; j++)
            if (t[j] > big)
                big = t[j];
        if (big == 0.0)
            return -HUGE_VAL;
        l += log2(big);
        for (j = 0; j < n; j++)
            v[j] = t[j] / big;
    }
    return l;
}

/* ell(2^-s A, m) of Al-Mohy and Higham (2009), eq. (3.12)-(3.13): the extra
 * squarings that keep the rounding in r_m at the unit roundoff, from
 * alpha = |c_(2m+1)| ||(|A|)^(2m+1)||_1 / ||A||_1, c_(2m+1) =
 * (m!)^2 / ((2m)! (2m+1)!) the leading coefficient of the backward error
 * series (Higham 2005, eq. (2.6)).  Scaling A by 2^-s scales alpha by
 * 2^(-2ms).  l2 = log2 ||(|A|)^(2m+1)||_1, nrm = ||A||_1 (unscaled). */
/* log2 k! as a sum of logarithms: lgamma writes the global signgam, a
 * data race when two threads take it (ThreadSanitizer, make check-tsan) */
static double log2_factorial(unsigned k)
{
    double l = 0.0;
    unsigned i;

    for (i = 2; i <= k; i++)
        l += log2((double)i);
    return l;
}

/* log2 |c_(2m+1)| for m = 0..13 (entries 3, 5, 7, 9, 13 used), into l2c:
 * computed once per workspace, not per call (about 60 log2 calls an ell,
 * 3% of a small exponential) */
static void ell_constants(double *l2c)
{
    unsigned m;

    for (m = 0; m < RIGMAT_EXPM_NL2C; m++)
        l2c[m] = 2.0 * log2_factorial(m) - log2_factorial(2 * m) - log2_factorial(2 * m + 1);
}

static unsigned ell(const double *l2cs, unsigned m, unsigned s, double l2, double nrm)
{
    const double md = (double)m;
    const double l2c = l2cs[m];
    const double l2alpha = l2c + l2 - log2(nrm) - 2.0 * md * (double)s;
    const double q = ceil((l2alpha + 53.0) / (2.0 * md)); /* u = 2^-53 */

    if (!(q > 0.0) || l2 == -HUGE_VAL)
        return 0u;
    return q > 64.0 ? 64u : (unsigned)q;
}

rigmat_status rigmat_expm(const gsl_matrix *A, gsl_matrix *eA, unsigned flags, rigmat_expm_ws *w,
                          rigmat_expm_info *info, rigmat_error *err)
{
    rigmat_expm_info inf;
    size_t n, i, j;
    double nrm;
    unsigned m = 0, s, k, have;
    int by_norm;
    gsl_matrix_view As, A2, A4, A6, A8, U, V, T;
    gsl_matrix *X, *Y;
    gsl_permutation perm;
    rigmat_fastblas *fb;
    rigmat_status rc;
    int gs;

    memset(&inf, 0, sizeof inf);
    if (info != NULL)
        *info = inf;
    if (A == NULL || eA == NULL || w == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "matrix exponential: missing argument");
    n = A->size1;
    if (A->size2 != n)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "matrix exponential of a %zux%zu matrix: not square",
                           A->size1, A->size2);
    if (eA->size1 != n || eA->size2 != n)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE,
                           "matrix exponential: result is %zux%zu, expected %zux%zu", eA->size1,
                           eA->size2, n, n);
    if (n > w->nmax)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE,
                           "matrix exponential: workspace holds %zux%zu, matrix is %zux%zu",
                           w->nmax, w->nmax, n, n);
    fb = &w->blas;
    As = block(w->As, n);
    A2 = block(w->A2, n);
    A4 = block(w->A4, n);
    A6 = block(w->A6, n);
    A8 = block(w->A8, n);
    U = block(w->U, n);
    V = block(w->V, n);
    T = block(w->T, n);
    /* a permutation of length n over the workspace's storage */
    perm.size = n;
    perm.data = w->perm->data;
    /* rows through raw pointers here and below: per-entry gsl_matrix_get and
     * _set (range checks) with ldexp took about 20% of the instructions of
     * the whole exponential at n = 64 (callgrind, bench/RESULTS.md) */
    for (i = 0; i < n; i++) {
        const double *a = gsl_matrix_const_ptr(A, i, 0);
        double *d = gsl_matrix_ptr(&As.matrix, i, 0);
        for (j = 0; j < n; j++) {
            if (!isfinite(a[j]))
                return RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                                   "matrix exponential: entry (%zu, %zu) is not finite", i + 1,
                                   j + 1);
            d[j] = a[j];
        }
    }
    nrm = rigmat_expm_norm1(&As.matrix);
    if ((flags & RIGMAT_EXPM_BALANCE) && n > 1) {
        gsl_vector_view D = gsl_vector_subvector(w->scale, 0, n);
        gs = gsl_matrix_memcpy(&T.matrix, &As.matrix);
        if (RIGMAT_NEVER(gs != GSL_SUCCESS))
            return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "copy failed");
        rigmat_expm_balance(T.matrix.data, n, T.matrix.tda, D.vector.data);
        {
            const double nb = rigmat_expm_norm1(&T.matrix);
            if (nb < nrm) {
                gs = gsl_matrix_memcpy(&As.matrix, &T.matrix);
                if (RIGMAT_NEVER(gs != GSL_SUCCESS))
                    return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "copy failed");
                nrm = nb;
                inf.balanced = 1;
            }
        }
    }
    inf.norm1 = nrm;
    if (nrm == 0.0) {
        gsl_matrix_set_identity(eA);
        if (info != NULL)
            *info = inf;
        return RIGMAT_OK;
    }
    have = 0;
    s = 0;
    /* the norm rule for a 1x1 matrix (nothing to gain) and when a power of
     * the unscaled matrix overflows */
    by_norm = !(flags & RIGMAT_EXPM_POWERS) || n < 2;
    if (!by_norm) {
        /* Al-Mohy and Higham (2009), Algorithm 3.1, with the upper bounds
         * of expm.h for the norms of the powers not formed; ell() only for
         * a degree whose eta passes (O(m n^2) each) */
        const unsigned degs[] = { 3, 5, 7, 9 };
        const double ths[] = { theta3, theta5, theta7, theta9 };
        double *v = gsl_matrix_ptr(&T.matrix, 0, 0), *t = v + n; /* 2n <= n^2 for n >= 2 */
        const gsl_matrix *absA = &U.matrix; /* |A|, free until the approximant */
        double n2, n4, n6, eta[4], d8, d10, eta5;
        size_t q;
        unsigned d;

        for (i = 0; i < n; i++) {
            const double *a = gsl_matrix_const_ptr(&As.matrix, i, 0);
            double *r = gsl_matrix_ptr(&U.matrix, i, 0);
            for (j = 0; j < n; j++)
                r[j] = fabs(a[j]);
        }
        rc = mul(fb, &A2.matrix, &As.matrix, &As.matrix, err);
        if (rc != RIGMAT_OK)
            return rc;
        inf.products++;
        have = 2;
        n2 = rigmat_expm_norm1(&A2.matrix);
        eta[0] = sqrt(n2); /* bounds d_4 and d_6 */
        m = 0;
        if (eta[0] <= theta3 &&
            ell(w->l2c, 3, 0, log2_abs_power_norm(fb, absA, 7, v, t), nrm) == 0)
            m = 3;
        if (m == 0) {
            rc = mul(fb, &A4.matrix, &A2.matrix, &A2.matrix, err);
            if (rc != RIGMAT_OK)
                return rc;
            inf.products++;
            have = 4;
            n4 = rigmat_expm_norm1(&A4.matrix);
            eta[1] = fmax(pow(n4, 0.25), pow(n4 * n2, 1.0 / 6.0));
            if (eta[1] <= theta5 &&
                ell(w->l2c, 5, 0, log2_abs_power_norm(fb, absA, 11, v, t), nrm) == 0)
                m = 5;
        }
        if (m == 0) {
            rc = mul(fb, &A6.matrix, &A2.matrix, &A4.matrix, err);
            if (rc != RIGMAT_OK)
                return rc;
            inf.products++;
            have = 6;
            n6 = rigmat_expm_norm1(&A6.matrix);
            d8 = pow(fmin(n4 * n4, n6 * n2), 0.125);
            eta[2] = fmax(pow(n6, 1.0 / 6.0), d8);
            for (d = 2; d < 4 && m == 0; d++)
                if (eta[2] <= ths[d] &&
                    ell(w->l2c, degs[d], 0,
                        log2_abs_power_norm(fb, absA, 2 * degs[d] + 1, v, t), nrm) == 0)
                    m = degs[d];
            if (!isfinite(n2 * n4 * n6)) {
                by_norm = 1; /* a power overflowed: A2, A4, A6 are not usable */
                have = 0;
            } else if (m == 0) {
                d10 = pow(n4 * n6, 0.1);
                eta[3] = fmax(d8, d10);
                eta5 = fmin(eta[2], eta[3]);
                m = 13;
                if (eta5 > theta13)
                    s = ceil_log2(eta5 / theta13);
                s += ell(w->l2c, 13, s, log2_abs_power_norm(fb, absA, 27, v, t), nrm);
            }
        }
        if (!by_norm && m == 13 && s > 0) {
            /* 2^-s A and its powers: exact factors */
            gsl_matrix *const pw[4] = { &As.matrix, &A2.matrix, &A4.matrix, &A6.matrix };
            for (q = 0; q < 4; q++) {
                const double f = ldexp(1.0, -(int)(s * (q == 0 ? 1u : 2u * (unsigned)q)));
                for (i = 0; i < n; i++) {
                    double *r = gsl_matrix_ptr(pw[q], i, 0);
                    for (j = 0; j < n; j++)
                        r[j] *= f;
                }
            }
        }
    }
    if (by_norm) {
        m = 0;
        s = 0;
        /* Higham (2005), Algorithm 2.3: the lowest degree whose theta covers ||A||_1 */
        if (nrm <= theta3)
            m = 3;
        else if (nrm <= theta5)
            m = 5;
        else if (nrm <= theta7)
            m = 7;
        else if (nrm <= theta9)
            m = 9;
        else {
            m = 13;
            if (nrm > theta13)
                s = ceil_log2(nrm / theta13);
            if (s > 0) {
                /* 2^-s is exact and so is every product, up to underflow, where
                 * it rounds as ldexp does */
                const double f = ldexp(1.0, -(int)s);
                for (i = 0; i < n; i++) {
                    double *d = gsl_matrix_ptr(&As.matrix, i, 0);
                    for (j = 0; j < n; j++)
                        d[j] *= f;
                }
            }
        }
    }
    inf.degree = m;
    inf.squarings = s;
    if (m == 13)
        rc = pade13(have != 0, &As.matrix, &A2.matrix, &A4.matrix, &A6.matrix, &U.matrix, &V.matrix,
                    &T.matrix, &inf.products, fb, err);
    else
        rc = pade_low(m, have, &As.matrix, &A2.matrix, &A4.matrix, &A6.matrix, &A8.matrix,
                      &U.matrix, &V.matrix, &T.matrix, &inf.products, fb, err);
    if (rc != RIGMAT_OK)
        return rc;
    /* X = r_m in A2 (free now); P = V - U in A4 */
    /* LAPACK's int pivots live in the permutation's storage (allocated
     * memory, nmax size_t: room for nmax int), unused by that path */
    rc = pade_solve(&U.matrix, &V.matrix, &A4.matrix, &A2.matrix, &perm,
                    (int *)(void *)w->perm->data, fb, err);
    if (rc != RIGMAT_OK)
        return rc;
    X = &A2.matrix;
    Y = &A6.matrix;
    for (k = 0; k < s; k++) {
        gsl_matrix *const t = X;
        rc = mul(fb, Y, X, X, err);
        if (rc != RIGMAT_OK)
            return rc;
        X = Y;
        Y = t;
        inf.products++;
    }
    if (inf.balanced) {
        /* e^A = D e^A' D^-1 */
        for (i = 0; i < n; i++) {
            const double di = gsl_vector_get(w->scale, i);
            double *x = gsl_matrix_ptr(X, i, 0);
            for (j = 0; j < n; j++)
                x[j] = x[j] * di / gsl_vector_get(w->scale, j);
        }
    }
    for (i = 0; i < n; i++) {
        const double *x = gsl_matrix_const_ptr(X, i, 0);
        for (j = 0; j < n; j++)
            if (!isfinite(x[j]))
                return RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                                   "matrix exponential overflows (||A||_1 = %.3g)", nrm);
    }
    for (i = 0; i < n; i++)
        memcpy(gsl_matrix_ptr(eA, i, 0), gsl_matrix_const_ptr(X, i, 0), n * sizeof(double));
    if (info != NULL)
        *info = inf;
    return RIGMAT_OK;
}
