/* fastblas.c - OpenBLAS opened with dlopen for large products and LUs
 * (fastblas.h: the rule and its measured threshold). */
#include "fastblas.h"

#include <dlfcn.h>
#include <gsl/gsl_complex_math.h>
#include <gsl/gsl_eigen.h>
#include <gsl/gsl_errno.h>
#include <limits.h>
#include <stdlib.h>
#include <string.h>

const char *const rigmat_fastblas_names[] = { "libopenblas.so.0", "libopenblas.so", NULL };

void rigmat_fastblas_init(rigmat_fastblas *fb)
{
    memset(fb, 0, sizeof *fb);
}

void rigmat_fastblas_release(rigmat_fastblas *fb)
{
    if (fb == NULL)
        return;
    if (fb->handle != NULL)
        (void)dlclose(fb->handle);
    rigmat_fastblas_init(fb);
}

int rigmat_fastblas_load(rigmat_fastblas *fb, const char *const *names)
{
    const char *const *p;

    if (fb == NULL)
        return 0;
    if (fb->tried)
        return fb->dgemm != NULL;
    fb->tried = 1;
    for (p = names != NULL ? names : rigmat_fastblas_names; *p != NULL; p++) {
        void *h = dlopen(*p, RTLD_NOW | RTLD_LOCAL | RTLD_NODELETE);
        void *g, *f, *t, *v, *e;
        if (h == NULL)
            continue;
        g = dlsym(h, "cblas_dgemm");
        if (g == NULL) {
            (void)dlclose(h);
            continue;
        }
        f = dlsym(h, "dgetrf_");
        t = dlsym(h, "cblas_dtrsm");
        v = dlsym(h, "cblas_dgemv");
        e = dlsym(h, "dgeev_");
        fb->handle = h;
        /* ISO C has no conversion from void * to a function pointer; POSIX
         * guarantees the representation, so the bytes are copied */
        memcpy(&fb->dgemm, &g, sizeof fb->dgemm);
        if (f != NULL)
            memcpy(&fb->dgetrf, &f, sizeof fb->dgetrf);
        if (t != NULL)
            memcpy(&fb->dtrsm, &t, sizeof fb->dtrsm);
        if (v != NULL)
            memcpy(&fb->dgemv, &v, sizeof fb->dgemv);
        if (e != NULL)
            memcpy(&fb->dgeev, &e, sizeof fb->dgeev);
        return 1;
    }
    (void)dlerror(); /* the failure is data (tried, no dgemm), not a message */
    return 0;
}

static int fits_int(size_t v)
{
    return v <= (size_t)INT_MAX;
}

/* 1 when the storage of a and b may share memory (then the small kernel,
 * which writes as it reads, is not used: GSL's CBLAS neither promises
 * anything there) */
static int overlaps(const gsl_matrix *a, const gsl_matrix *b)
{
    const double *a0 = a->data, *a1 = a->data + (a->size1 - 1) * a->tda + a->size2;
    const double *b0 = b->data, *b1 = b->data + (b->size1 - 1) * b->tda + b->size2;

    if (a->size1 == 0 || a->size2 == 0 || b->size1 == 0 || b->size2 == 0)
        return 0;
    return !(a1 <= b0 || b1 <= a0);
}

/* a call of m n k multiply-adds is large enough for the loaded BLAS */
static int large(double m, double n, double k)
{
    const double lim = (double)RIGMAT_FASTBLAS_MIN_N;

    return m * n * k >= lim * lim * lim;
}

/* C = alpha A B + beta C for small row-major matrices (m x k times k x n),
 * without the library call: GSL's CBLAS takes a few hundred nanoseconds
 * of argument checks and strided indexing for an 8 x 8 product.  The
 * arithmetic is GSL CBLAS's, operation for operation (C scaled by beta
 * first, then for each k in turn C(i, :) += (alpha A(i, k)) B(k, :),
 * skipping a zero multiplier), so the results are its bits
 * (tests/check_fastblas.c); the innermost loop runs along a row, which
 * the compiler vectorizes without reordering any sum. */
static void small_dgemm(size_t m, size_t n, size_t k, double alpha, const double *A, size_t lda,
                        const double *B, size_t ldb, double beta, double *C, size_t ldc)
{
    size_t i, j, l;

    if (alpha == 0.0 && beta == 1.0)
        return;
    for (i = 0; i < m; i++) {
        double *c = C + i * ldc;
        if (beta == 0.0)
            for (j = 0; j < n; j++)
                c[j] = 0.0;
        else if (beta != 1.0)
            for (j = 0; j < n; j++)
                c[j] *= beta;
    }
    if (alpha == 0.0)
        return;
    /* C's rows are independent: row i takes the k-ordered updates that
     * GSL's k-outer loop gives it, in the same order */
    for (i = 0; i < m; i++) {
        double *restrict c = C + i * ldc; /* C is apart from A and B (the caller checks) */
        for (l = 0; l < k; l++) {
            const double t = alpha * A[i * lda + l];
            const double *restrict b = B + l * ldb;
            if (t == 0.0)
                continue;
            /* four independent updates a step (the elements' operations
             * stay in order); built with VECTORIZE (Makefile) the
             * compiler puts them in vector registers */
            for (j = 0; j + 4 <= n; j += 4) {
                c[j] += t * b[j];
                c[j + 1] += t * b[j + 1];
                c[j + 2] += t * b[j + 2];
                c[j + 3] += t * b[j + 3];
            }
            for (; j < n; j++)
                c[j] += t * b[j];
        }
    }
}

int rigmat_dgemm(rigmat_fastblas *fb, CBLAS_TRANSPOSE_t ta, CBLAS_TRANSPOSE_t tb, double alpha,
                 const gsl_matrix *A, const gsl_matrix *B, double beta, gsl_matrix *C)
{
    const size_t m = C->size1, n = C->size2;
    const size_t k = ta == CblasNoTrans ? A->size2 : A->size1;
    const size_t am = ta == CblasNoTrans ? A->size1 : A->size2;
    const size_t bk = tb == CblasNoTrans ? B->size1 : B->size2;
    const size_t bn = tb == CblasNoTrans ? B->size2 : B->size1;

    if (fb == NULL || am != m || bk != k || bn != n || k == 0 ||
        !large((double)m, (double)n, (double)k) || !fits_int(m) || !fits_int(n) || !fits_int(k) ||
        !fits_int(A->tda) || !fits_int(B->tda) || !fits_int(C->tda) ||
        !rigmat_fastblas_load(fb, NULL)) {
        if (ta == CblasNoTrans && tb == CblasNoTrans && am == m && bk == k && bn == n &&
            !large((double)m, (double)n, (double)k) && !overlaps(C, A) && !overlaps(C, B)) {
            small_dgemm(m, n, k, alpha, A->data, A->tda, B->data, B->tda, beta, C->data, C->tda);
            return GSL_SUCCESS;
        }
        return gsl_blas_dgemm(ta, tb, alpha, A, B, beta, C);
    }
    fb->dgemm((int)CblasRowMajor, (int)ta, (int)tb, (int)m, (int)n, (int)k, alpha, A->data,
              (int)A->tda, B->data, (int)B->tda, beta, C->data, (int)C->tda);
    return GSL_SUCCESS;
}

/* B = alpha op(A)^-1 B for a small triangular A on the left, no
 * transpose: GSL CBLAS's operations in its order (B scaled by alpha, then
 * row by row, each row divided by its diagonal entry unless unit, and
 * eliminated from the rows still to do), so its bits. */
static void small_dtrsm_left(int upper, int unit, size_t m, size_t n, double alpha,
                             const double *A, size_t lda, double *B, size_t ldb)
{
    size_t i, j, k, r;

    if (alpha != 1.0)
        for (i = 0; i < m; i++)
            for (j = 0; j < n; j++)
                B[i * ldb + j] *= alpha;
    for (r = 0; r < m; r++) {
        double *restrict bi;
        i = upper ? m - 1 - r : r;
        bi = B + i * ldb;
        if (!unit) {
            const double aii = A[i * lda + i];
            for (j = 0; j < n; j++)
                bi[j] /= aii;
        }
        for (k = upper ? 0 : i + 1; k < (upper ? i : m); k++) {
            const double aki = A[k * lda + i];
            double *restrict bk = B + k * ldb;
            for (j = 0; j < n; j++)
                bk[j] -= aki * bi[j];
        }
    }
}

int rigmat_dtrsm(rigmat_fastblas *fb, CBLAS_SIDE_t side, CBLAS_UPLO_t uplo, CBLAS_TRANSPOSE_t ta,
                 CBLAS_DIAG_t diag, double alpha, const gsl_matrix *A, gsl_matrix *B)
{
    const size_t m = B->size1, n = B->size2, na = side == CblasLeft ? m : n;

    if (side == CblasLeft && ta == CblasNoTrans && A->size1 == na && A->size2 == na && na > 0 &&
        n > 0 && !large((double)m, (double)n, (double)na) && !overlaps(B, A)) {
        small_dtrsm_left(uplo == CblasUpper, diag == CblasUnit, m, n, alpha, A->data, A->tda,
                         B->data, B->tda);
        return GSL_SUCCESS;
    }

    if (fb == NULL || A->size1 != na || A->size2 != na || na == 0 ||
        !large((double)m, (double)n, (double)na) || !fits_int(m) || !fits_int(n) ||
        !fits_int(A->tda) || !fits_int(B->tda) || !rigmat_fastblas_load(fb, NULL) ||
        fb->dtrsm == NULL)
        return gsl_blas_dtrsm(side, uplo, ta, diag, alpha, A, B);
    fb->dtrsm((int)CblasRowMajor, (int)side, (int)uplo, (int)ta, (int)diag, (int)m, (int)n, alpha,
              A->data, (int)A->tda, B->data, (int)B->tda);
    return GSL_SUCCESS;
}

/* y = alpha A^T x + beta y for a small row-major m x n A, unit strides:
 * GSL CBLAS's arithmetic and order (y scaled by beta, then for each row j
 * of A in turn y += (alpha x_j) A(j, :), skipping a zero multiplier), so
 * its bits, without the call's overhead. */
static void small_dgemv_t(size_t m, size_t n, double alpha, const double *A, size_t lda,
                          const double *x, double beta, double *y)
{
    size_t i, j;

    if (beta == 0.0)
        for (i = 0; i < n; i++)
            y[i] = 0.0;
    else if (beta != 1.0)
        for (i = 0; i < n; i++)
            y[i] *= beta;
    if (alpha == 0.0)
        return;
    for (j = 0; j < m; j++) {
        const double t = alpha * x[j];
        const double *a = A + j * lda;
        if (t != 0.0)
            for (i = 0; i < n; i++)
                y[i] += t * a[i];
    }
}

int rigmat_dgemv(rigmat_fastblas *fb, CBLAS_TRANSPOSE_t ta, double alpha, const gsl_matrix *A,
                 const gsl_vector *x, double beta, gsl_vector *y)
{
    const size_t m = A->size1, n = A->size2;
    const size_t nx = ta == CblasNoTrans ? n : m, ny = ta == CblasNoTrans ? m : n;
    const double lim = (double)RIGMAT_FASTBLAS_MIN_N;

    if (ta == CblasTrans && x->size == nx && y->size == ny && x->stride == 1 && y->stride == 1 &&
        (double)m * (double)n < lim * lim && m > 0 && n > 0 && !(alpha == 0.0 && beta == 1.0) &&
        (y->data + n <= A->data || y->data >= A->data + (m - 1) * A->tda + n) &&
        (y->data + n <= x->data || y->data >= x->data + m)) {
        small_dgemv_t(m, n, alpha, A->data, A->tda, x->data, beta, y->data);
        return GSL_SUCCESS;
    }
    if (fb == NULL || x->size != nx || y->size != ny || (double)m * (double)n < lim * lim ||
        !fits_int(m) || !fits_int(n) || !fits_int(A->tda) || !fits_int(x->stride) ||
        !fits_int(y->stride) || !rigmat_fastblas_load(fb, NULL) || fb->dgemv == NULL)
        return gsl_blas_dgemv(ta, alpha, A, x, beta, y);
    fb->dgemv((int)CblasRowMajor, (int)ta, (int)m, (int)n, alpha, A->data, (int)A->tda, x->data,
              (int)x->stride, beta, y->data, (int)y->stride);
    return GSL_SUCCESS;
}

rigmat_dgetrf_fn rigmat_fastblas_dgetrf(rigmat_fastblas *fb, size_t n)
{
    if (fb == NULL || n < (size_t)RIGMAT_FASTBLAS_LU_MIN_N || !fits_int(n) ||
        !rigmat_fastblas_load(fb, NULL))
        return NULL;
    return fb->dgetrf;
}

/* dgeev_ on a column-major copy of A (n >= 1): eigenvalues into ev and
 * eigenvectors into V in GSL's form (a complex pair's columns j, j + 1 of
 * VR are the real and imaginary parts of the first vector; the second is
 * its conjugate).  LAPACK scales each vector to unit Euclidean norm, as
 * GSL does.  A GSL status. */
static int lapack_eigen(rigmat_dgeev_fn dgeev, gsl_matrix *A, gsl_vector_complex *ev,
                        gsl_matrix_complex *V)
{
    const size_t n = A->size1;
    const int ni = (int)n;
    double *a = malloc(n * n * sizeof *a), *vr = malloc(n * n * sizeof *vr);
    double *wr = malloc(n * sizeof *wr), *wi = malloc(n * sizeof *wi), *work = NULL;
    double query = 0.0, dummy = 0.0;
    int lwork = -1, info = 0, one = 1, rc = GSL_SUCCESS;
    size_t i, j;

    if (a == NULL || vr == NULL || wr == NULL || wi == NULL) {
        rc = GSL_ENOMEM;
        goto done;
    }
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++)
            a[j * n + i] = gsl_matrix_get(A, i, j);
    dgeev("N", "V", &ni, a, &ni, wr, wi, &dummy, &one, vr, &ni, &query, &lwork, &info, 1, 1);
    if (info != 0 || !(query >= 1.0) || query > (double)INT_MAX) {
        rc = GSL_EFAILED;
        goto done;
    }
    lwork = (int)query;
    work = malloc((size_t)lwork * sizeof *work);
    if (work == NULL) {
        rc = GSL_ENOMEM;
        goto done;
    }
    dgeev("N", "V", &ni, a, &ni, wr, wi, &dummy, &one, vr, &ni, work, &lwork, &info, 1, 1);
    if (info != 0) {
        rc = info > 0 ? GSL_EMAXITER : GSL_EFAILED; /* > 0: the QR did not converge */
        goto done;
    }
    for (j = 0; j < n; j++) {
        gsl_vector_complex_set(ev, j, gsl_complex_rect(wr[j], wi[j]));
        if (wi[j] != 0.0 && j + 1 < n) {
            /* the pair's first vector is column j + i column j + 1 */
            gsl_vector_complex_set(ev, j + 1, gsl_complex_rect(wr[j + 1], wi[j + 1]));
            for (i = 0; i < n; i++) {
                const double re = vr[j * n + i], im = vr[(j + 1) * n + i];
                gsl_matrix_complex_set(V, i, j, gsl_complex_rect(re, im));
                gsl_matrix_complex_set(V, i, j + 1, gsl_complex_rect(re, -im));
            }
            j++;
        } else {
            for (i = 0; i < n; i++)
                gsl_matrix_complex_set(V, i, j, gsl_complex_rect(vr[j * n + i], 0.0));
        }
    }
done:
    free(a);
    free(vr);
    free(wr);
    free(wi);
    free(work);
    return rc;
}

int rigmat_eigen_nonsymmv(rigmat_fastblas *fb, gsl_matrix *A, gsl_vector_complex *ev,
                          gsl_matrix_complex *V)
{
    const size_t n = A->size1;
    gsl_eigen_nonsymmv_workspace *w;
    int gs;

    if (A->size2 != n || ev->size != n || V->size1 != n || V->size2 != n)
        return GSL_EBADLEN;
    if (n == 0)
        return GSL_SUCCESS;
    if (fb != NULL && n >= (size_t)RIGMAT_FASTBLAS_EIG_MIN_N && fits_int(n) &&
        n <= (size_t)INT_MAX / n && rigmat_fastblas_load(fb, NULL) && fb->dgeev != NULL)
        return lapack_eigen(fb->dgeev, A, ev, V);
    w = gsl_eigen_nonsymmv_alloc(n);
    if (w == NULL)
        return GSL_ENOMEM;
    gs = gsl_eigen_nonsymmv(A, ev, V, w);
    gsl_eigen_nonsymmv_free(w);
    return gs;
}
