/* check_fastblas.c - OpenBLAS opened only for large calls
 * (src/util/fastblas.c), the products, solves and LU it serves, and the
 * silent fallback to GSL when it does not open. */
#include "fastblas.h"
#include "expm.h"
#include "testutil.h"

#include <gsl/gsl_complex_math.h>
#include <gsl/gsl_linalg.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* integer entries in [-3, 3]: every product of size <= 100 is exact in
 * double, so any correct dgemm returns the same bits as the definition
 * sum_k a_ik b_kj */
static gsl_matrix *int_matrix(size_t r, size_t c, unsigned seed)
{
    gsl_matrix *m = gsl_matrix_alloc(r, c);
    size_t i;

    ck_assert_ptr_nonnull(m);
    for (i = 0; i < r * c; i++)
        m->data[i] = (double)((i * 7u + seed * 13u + i / 5u) % 7u) - 3.0;
    return m;
}

/* C = op(A) op(B) by the definition of the product */
static double defined_entry(CBLAS_TRANSPOSE_t ta, CBLAS_TRANSPOSE_t tb, const gsl_matrix *A,
                            const gsl_matrix *B, size_t i, size_t j, size_t k)
{
    double s = 0.0;
    size_t q;

    for (q = 0; q < k; q++)
        s += (ta == CblasNoTrans ? gsl_matrix_get(A, i, q) : gsl_matrix_get(A, q, i)) *
             (tb == CblasNoTrans ? gsl_matrix_get(B, q, j) : gsl_matrix_get(B, j, q));
    return s;
}

static void check_product(rigmat_fastblas *fb, CBLAS_TRANSPOSE_t ta, CBLAS_TRANSPOSE_t tb,
                          size_t m, size_t n, size_t k)
{
    gsl_matrix *A = ta == CblasNoTrans ? int_matrix(m, k, 1) : int_matrix(k, m, 1);
    gsl_matrix *B = tb == CblasNoTrans ? int_matrix(k, n, 2) : int_matrix(n, k, 2);
    gsl_matrix *C = int_matrix(m, n, 3);
    size_t i, j;

    /* C = 2 op(A) op(B) - C */
    ck_assert_int_eq(rigmat_dgemm(fb, ta, tb, 2.0, A, B, -1.0, C), GSL_SUCCESS);
    for (i = 0; i < m; i++)
        for (j = 0; j < n; j++) {
            const double c0 = (double)(((i * n + j) * 7u + 39u + (i * n + j) / 5u) % 7u) - 3.0;
            ck_assert_double_eq(gsl_matrix_get(C, i, j),
                                2.0 * defined_entry(ta, tb, A, B, i, j, k) - c0);
        }
    gsl_matrix_free(A);
    gsl_matrix_free(B);
    gsl_matrix_free(C);
}

/* y = A^T x, A 64 x 64 (4096 >= 16^2 entries), exact integer values */
static void check_gemv(rigmat_fastblas *fb)
{
    gsl_matrix *A = int_matrix(64, 64, 5);
    gsl_vector *x = gsl_vector_alloc(64), *y = gsl_vector_alloc(64);
    size_t i, q;

    ck_assert(x != NULL && y != NULL);
    for (i = 0; i < 64; i++)
        gsl_vector_set(x, i, (double)(i % 5) - 2.0);
    ck_assert_int_eq(rigmat_dgemv(fb, CblasTrans, 1.0, A, x, 0.0, y), GSL_SUCCESS);
    for (i = 0; i < 64; i++) {
        double s = 0.0;
        for (q = 0; q < 64; q++)
            s += gsl_matrix_get(A, q, i) * gsl_vector_get(x, q);
        ck_assert_double_eq(gsl_vector_get(y, i), s);
    }
    gsl_matrix_free(A);
    gsl_vector_free(x);
    gsl_vector_free(y);
}

/* a random double with a random exponent in [-40, 40], or (one in six) an
 * exact zero, so the kernels' zero-multiplier skip is exercised */
static double rand_entry(unsigned *state)
{
    double u;

    *state = *state * 1103515245u + 12345u;
    if ((*state >> 16) % 6u == 0)
        return 0.0;
    u = (double)((*state >> 8) & 0xffffu) / 65536.0 - 0.5;
    *state = *state * 1103515245u + 12345u;
    return ldexp(u, (int)((*state >> 16) % 81u) - 40);
}

static void fill_random(gsl_matrix *m, unsigned *state)
{
    size_t i, j;

    for (i = 0; i < m->size1; i++)
        for (j = 0; j < m->size2; j++)
            gsl_matrix_set(m, i, j, rand_entry(state));
}

/* The small kernels (products, A^T x, triangular solves) that replace
 * GSL's CBLAS below the threshold (fastblas.c) must give its bits
 * exactly, not merely close values: the sweep's points equal single runs
 * byte for byte, and results before and after the kernels were added are
 * the same files.  Random sizes 1..15, rounding-sensitive entries over 80
 * binary orders, zeros, and every alpha/beta case the kernels branch on;
 * the reference is GSL's own gsl_blas_dgemm, gsl_blas_dgemv and
 * gsl_blas_dtrsm on the same inputs. */
START_TEST(small_kernels_give_gsl_cblas_bits)
{
    const double alphas[] = { 1.0, -0.7, 0.0 }, betas[] = { 0.0, 1.0, 0.3 };
    unsigned state = 12345u, trial;
    rigmat_fastblas fb;

    rigmat_fastblas_init(&fb);
    for (trial = 0; trial < 400; trial++) {
        const size_t m = 1 + trial % 15, n = 1 + (trial / 3) % 15, k = 1 + (trial / 7) % 15;
        const double alpha = alphas[trial % 3], beta = betas[(trial / 3) % 3];
        gsl_matrix *A = gsl_matrix_alloc(m, k), *B = gsl_matrix_alloc(k, n);
        gsl_matrix *C1 = gsl_matrix_alloc(m, n), *C2 = gsl_matrix_alloc(m, n);
        gsl_matrix *G = gsl_matrix_alloc(m, n);
        gsl_vector *x = gsl_vector_alloc(m), *y1 = gsl_vector_alloc(n), *y2 = gsl_vector_alloc(n);
        size_t i;

        fill_random(A, &state);
        fill_random(B, &state);
        fill_random(C1, &state);
        fill_random(G, &state);
        gsl_matrix_memcpy(C2, C1);
        ck_assert_int_eq(rigmat_dgemm(&fb, CblasNoTrans, CblasNoTrans, alpha, A, B, beta, C1),
                         GSL_SUCCESS);
        ck_assert_int_eq(gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, alpha, A, B, beta, C2),
                         GSL_SUCCESS);
        ck_assert_msg(memcmp(C1->data, C2->data, m * n * sizeof(double)) == 0,
                      "dgemm %zux%zux%zu alpha %g beta %g: bits differ from GSL's CBLAS", m, k, n,
                      alpha, beta);
        for (i = 0; i < m; i++)
            gsl_vector_set(x, i, rand_entry(&state));
        for (i = 0; i < n; i++)
            gsl_vector_set(y1, i, rand_entry(&state));
        gsl_vector_memcpy(y2, y1);
        ck_assert_int_eq(rigmat_dgemv(&fb, CblasTrans, alpha, G, x, beta, y1), GSL_SUCCESS);
        ck_assert_int_eq(gsl_blas_dgemv(CblasTrans, alpha, G, x, beta, y2), GSL_SUCCESS);
        ck_assert_msg(memcmp(y1->data, y2->data, n * sizeof(double)) == 0,
                      "dgemv^T %zux%zu alpha %g beta %g: bits differ from GSL's CBLAS", m, n,
                      alpha, beta);
        gsl_matrix_free(A);
        gsl_matrix_free(B);
        gsl_matrix_free(C1);
        gsl_matrix_free(C2);
        gsl_matrix_free(G);
        gsl_vector_free(x);
        gsl_vector_free(y1);
        gsl_vector_free(y2);
    }
    /* triangular solves on the left, no transpose: both triangles, unit
     * and not, alpha 1 and not */
    for (trial = 0; trial < 240; trial++) {
        const size_t m = 1 + trial % 15, n = 1 + (trial / 5) % 15;
        const CBLAS_UPLO_t uplo = trial % 2 ? CblasUpper : CblasLower;
        const CBLAS_DIAG_t diag = (trial / 2) % 2 ? CblasUnit : CblasNonUnit;
        const double alpha = (trial / 4) % 3 ? 1.0 : -0.5;
        gsl_matrix *T = gsl_matrix_alloc(m, m), *X1 = gsl_matrix_alloc(m, n);
        gsl_matrix *X2 = gsl_matrix_alloc(m, n);
        size_t i;

        fill_random(T, &state);
        for (i = 0; i < m; i++) /* a diagonal away from zero */
            gsl_matrix_set(T, i, i, 1.5 + (double)i);
        fill_random(X1, &state);
        gsl_matrix_memcpy(X2, X1);
        ck_assert_int_eq(rigmat_dtrsm(&fb, CblasLeft, uplo, CblasNoTrans, diag, alpha, T, X1),
                         GSL_SUCCESS);
        ck_assert_int_eq(gsl_blas_dtrsm(CblasLeft, uplo, CblasNoTrans, diag, alpha, T, X2),
                         GSL_SUCCESS);
        ck_assert_msg(memcmp(X1->data, X2->data, m * n * sizeof(double)) == 0,
                      "dtrsm %zux%zu %s %s alpha %g: bits differ from GSL's CBLAS", m, n,
                      uplo == CblasUpper ? "upper" : "lower",
                      diag == CblasUnit ? "unit" : "non-unit", alpha);
        gsl_matrix_free(T);
        gsl_matrix_free(X1);
        gsl_matrix_free(X2);
    }
    ck_assert(!fb.tried); /* all below the threshold: nothing opened */
    rigmat_fastblas_release(&fb);
}
END_TEST

START_TEST(small_products_do_not_open_the_library)
{
    rigmat_fastblas fb;

    rigmat_fastblas_init(&fb);
    check_product(&fb, CblasNoTrans, CblasNoTrans, 15, 15, 15);
    check_product(&fb, CblasTrans, CblasNoTrans, 60, 60, 1); /* many entries, little work */
    ck_assert_int_eq(fb.tried, 0);
    ck_assert_ptr_null(fb.handle);
    rigmat_fastblas_release(&fb);
}
END_TEST

START_TEST(large_products_open_openblas_and_agree_exactly)
{
    static const CBLAS_TRANSPOSE_t t[2] = { CblasNoTrans, CblasTrans };
    rigmat_fastblas fb;
    int a, b;

    rigmat_fastblas_init(&fb);
    for (a = 0; a < 2; a++)
        for (b = 0; b < 2; b++)
            check_product(&fb, t[a], t[b], 17, 13, 19); /* 4199 >= 16^3 multiply-adds */
    check_gemv(&fb);
    /* the build installs libopenblas0 (Makefile BUILD_PKGS): a silent
     * fallback here would be a broken soname or symbol */
    ck_assert_msg(fb.tried == 1 && fb.handle != NULL && fb.dgemm != NULL,
                  "OpenBLAS did not open (is libopenblas0 installed?)");
    ck_assert(fb.dtrsm != NULL);
    ck_assert(fb.dgemv != NULL);
    ck_assert(fb.dgetrf != NULL);
    ck_assert(rigmat_fastblas_dgetrf(&fb, RIGMAT_FASTBLAS_LU_MIN_N) != NULL);
    ck_assert(rigmat_fastblas_dgetrf(&fb, RIGMAT_FASTBLAS_LU_MIN_N - 1) == NULL);
    rigmat_fastblas_release(&fb);
    ck_assert_ptr_null(fb.handle);
    ck_assert_int_eq(fb.tried, 0);
}
END_TEST

START_TEST(a_library_that_does_not_open_falls_back_silently)
{
    static const char *const none[] = { "librigmat-no-such-blas.so.0", NULL };
    rigmat_fastblas fb;

    rigmat_fastblas_init(&fb);
    ck_assert_int_eq(rigmat_fastblas_load(&fb, none), 0);
    ck_assert_int_eq(fb.tried, 1);
    ck_assert_ptr_null(fb.handle);
    /* not retried: the large product and the LU go to GSL */
    check_product(&fb, CblasNoTrans, CblasTrans, 64, 64, 64);
    check_gemv(&fb);
    ck_assert(rigmat_fastblas_dgetrf(&fb, 200) == NULL);
    ck_assert_ptr_null(fb.handle);
    rigmat_fastblas_release(&fb);
}
END_TEST

/* e^A of A = P^T diag(w_i J) P, J = [[0, 1], [-1, 0]], P a permutation:
 * e^(w J) = [[cos w, sin w], [-sin w, cos w]] (the rotation by -w), so
 * e^A[p(2i), p(2i)] = cos w_i, e^A[p(2i), p(2i+1)] = sin w_i, ... */
static void rotation_exponential(size_t n, int fast)
{
    gsl_matrix *A = gsl_matrix_calloc(n, n), *E = gsl_matrix_alloc(n, n);
    rigmat_expm_ws *w = rigmat_expm_ws_alloc(n);
    rigmat_expm_info info;
    rigmat_error err = { 0 };
    size_t *p = malloc(n * sizeof *p), i, j;
    double worst = 0.0;

    ck_assert(A != NULL && E != NULL && w != NULL && p != NULL);
    for (i = 0; i < n; i++)
        p[i] = (i * 37u + 11u) % n; /* 37 is prime to the even n used */
    for (i = 0; i < n / 2; i++) {
        const double wi = 0.05 * (double)(i + 1);
        gsl_matrix_set(A, p[2 * i], p[2 * i + 1], wi);
        gsl_matrix_set(A, p[2 * i + 1], p[2 * i], -wi);
    }
    if (!fast)
        w->blas.tried = 1; /* as when OpenBLAS is not installed */
    ck_assert_int_eq(rigmat_expm(A, E, RIGMAT_EXPM_POWERS, w, &info, &err), RIGMAT_OK);
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++) {
            double want = 0.0, got = gsl_matrix_get(E, i, j);
            size_t b;
            for (b = 0; b < n / 2; b++) {
                const double wb = 0.05 * (double)(b + 1);
                const size_t r = p[2 * b], s = p[2 * b + 1];
                if (i == r && j == r)
                    want = cos(wb);
                else if (i == s && j == s)
                    want = cos(wb);
                else if (i == r && j == s)
                    want = sin(wb);
                else if (i == s && j == r)
                    want = -sin(wb);
            }
            if (fabs(got - want) > worst)
                worst = fabs(got - want);
        }
    ck_assert_msg(worst < 1e-13, "n = %zu, fast = %d: largest error %g", n, fast, worst);
    ck_assert_int_eq(w->blas.handle != NULL, fast);
    free(p);
    gsl_matrix_free(A);
    gsl_matrix_free(E);
    rigmat_expm_ws_free(w);
}

START_TEST(exponential_through_openblas_and_without_it)
{
    rotation_exponential(120, 1); /* products, dgetrf and dtrsm by OpenBLAS */
    rotation_exponential(120, 0); /* GSL's CBLAS and LU */
}
END_TEST

START_TEST(a_small_exponential_does_not_open_the_library)
{
    gsl_matrix *A = int_matrix(10, 10, 4), *E = gsl_matrix_alloc(10, 10);
    rigmat_expm_ws *w = rigmat_expm_ws_alloc(10);
    rigmat_error err = { 0 };

    ck_assert(E != NULL && w != NULL);
    ck_assert_int_eq(rigmat_expm(A, E, RIGMAT_EXPM_POWERS, w, NULL, &err), RIGMAT_OK);
    ck_assert_int_eq(w->blas.tried, 0);
    gsl_matrix_free(A);
    gsl_matrix_free(E);
    rigmat_expm_ws_free(w);
}
END_TEST

/* Eigenvalues and eigenvectors (rigmat_eigen_nonsymmv) of A = S T S^-1,
 * T block diagonal with 2 x 2 blocks [[a, b], [-b, a]] (eigenvalues
 * a +- b i) and 1 x 1 blocks (real ones), S = I + a small random matrix:
 * a similarity keeps the eigenvalues (so they are known by construction).
 * Each computed eigenvalue is matched to a distinct known one, each
 * vector has unit norm and a residual |A v - lambda v| at rounding. */
static void check_eigen(rigmat_fastblas *fb, size_t n, unsigned seed)
{
    gsl_matrix *T = gsl_matrix_calloc(n, n), *S = gsl_matrix_alloc(n, n);
    gsl_matrix *Si = gsl_matrix_alloc(n, n), *A = gsl_matrix_alloc(n, n);
    gsl_matrix *W = gsl_matrix_alloc(n, n), *LU = gsl_matrix_alloc(n, n);
    gsl_permutation *p = gsl_permutation_alloc(n);
    gsl_vector_complex *ev = gsl_vector_complex_alloc(n);
    gsl_matrix_complex *V = gsl_matrix_complex_alloc(n, n);
    double *kre = malloc(n * sizeof *kre), *kim = malloc(n * sizeof *kim), anorm = 0.0;
    int *used = calloc(n, sizeof *used), sg;
    unsigned st = seed;
    size_t i, j, k;

    for (i = 0; i < n; i++) {
        const double a = -1.0 - (double)(i % 7) * 3.0 - (double)i / (double)n;
        if (i + 1 < n && i % 3 != 2) {
            const double b = 2.0 + (double)i;
            gsl_matrix_set(T, i, i, a);
            gsl_matrix_set(T, i + 1, i + 1, a);
            gsl_matrix_set(T, i, i + 1, b);
            gsl_matrix_set(T, i + 1, i, -b);
            kre[i] = kre[i + 1] = a;
            kim[i] = b;
            kim[i + 1] = -b;
            i++;
        } else {
            gsl_matrix_set(T, i, i, a);
            kre[i] = a;
            kim[i] = 0.0;
        }
    }
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++) {
            st = st * 1103515245u + 12345u;
            gsl_matrix_set(S, i, j, (i == j ? 1.0 : 0.0) +
                    ((double)((st >> 8) & 0xffffu) / 65536.0 - 0.5) / (double)n);
        }
    gsl_matrix_memcpy(LU, S);
    ck_assert_int_eq(gsl_linalg_LU_decomp(LU, p, &sg), 0);
    ck_assert_int_eq(gsl_linalg_LU_invert(LU, p, Si), 0);
    gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, 1.0, S, T, 0.0, W);
    gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, 1.0, W, Si, 0.0, A);
    for (j = 0; j < n; j++) {
        double c = 0.0;
        for (i = 0; i < n; i++)
            c += fabs(gsl_matrix_get(A, i, j));
        anorm = fmax(anorm, c);
    }
    gsl_matrix_memcpy(W, A);
    ck_assert_int_eq(rigmat_eigen_nonsymmv(fb, W, ev, V), 0);
    for (k = 0; k < n; k++) {
        const gsl_complex z = gsl_vector_complex_get(ev, k);
        size_t best = n;
        double dbest = HUGE_VAL, vn = 0.0, rn = 0.0;
        for (j = 0; j < n; j++) {
            const double d = hypot(GSL_REAL(z) - kre[j], GSL_IMAG(z) - kim[j]);
            if (!used[j] && d < dbest) {
                dbest = d;
                best = j;
            }
        }
        ck_assert_msg(best < n && dbest <= 1e-9 * anorm, "n %zu: eigenvalue %zu (%g, %g) "
                "is %g from the nearest unused known one", n, k, GSL_REAL(z), GSL_IMAG(z), dbest);
        used[best] = 1;
        for (i = 0; i < n; i++) {
            double rr = -GSL_REAL(z) * GSL_REAL(gsl_matrix_complex_get(V, i, k)) +
                        GSL_IMAG(z) * GSL_IMAG(gsl_matrix_complex_get(V, i, k));
            double ri = -GSL_REAL(z) * GSL_IMAG(gsl_matrix_complex_get(V, i, k)) -
                        GSL_IMAG(z) * GSL_REAL(gsl_matrix_complex_get(V, i, k));
            vn += gsl_complex_abs2(gsl_matrix_complex_get(V, i, k));
            for (j = 0; j < n; j++) {
                rr += gsl_matrix_get(A, i, j) * GSL_REAL(gsl_matrix_complex_get(V, j, k));
                ri += gsl_matrix_get(A, i, j) * GSL_IMAG(gsl_matrix_complex_get(V, j, k));
            }
            rn += rr * rr + ri * ri;
        }
        ck_assert_msg(fabs(sqrt(vn) - 1.0) <= 1e-12, "n %zu: vector %zu has norm %.17g", n, k,
                sqrt(vn));
        ck_assert_msg(sqrt(rn) <= 1e-11 * anorm, "n %zu: residual of vector %zu is %g (|A| %g)",
                n, k, sqrt(rn), anorm);
    }
    gsl_matrix_free(T);
    gsl_matrix_free(S);
    gsl_matrix_free(Si);
    gsl_matrix_free(A);
    gsl_matrix_free(W);
    gsl_matrix_free(LU);
    gsl_permutation_free(p);
    gsl_vector_complex_free(ev);
    gsl_matrix_complex_free(V);
    free(kre);
    free(kim);
    free(used);
}

START_TEST(eigenvalues_by_lapack_and_by_gsl)
{
    static const char *const none[] = { "librigmat-no-such-blas.so.0", NULL };
    rigmat_fastblas fb, off;

    rigmat_fastblas_init(&fb);
    check_eigen(&fb, 20, 7u); /* below the threshold: GSL, the library stays closed */
    ck_assert_ptr_null(fb.handle);
    check_eigen(&fb, RIGMAT_FASTBLAS_EIG_MIN_N, 11u);
    check_eigen(&fb, 150, 13u);
    ck_assert_ptr_nonnull(fb.handle);
    ck_assert(fb.dgeev != NULL);
    rigmat_fastblas_release(&fb);
    rigmat_fastblas_init(&off);
    ck_assert_int_eq(rigmat_fastblas_load(&off, none), 0);
    check_eigen(&off, 150, 13u); /* no library: GSL at any size */
    check_eigen(NULL, 90, 17u);
    rigmat_fastblas_release(&off);
}
END_TEST

Suite *fastblas_suite(void);
Suite *fastblas_suite(void)
{
    Suite *s = suite_create("fastblas");
    TCase *t = tcase_create("fastblas");

    tcase_add_test(t, small_kernels_give_gsl_cblas_bits);
    tcase_add_test(t, small_products_do_not_open_the_library);
    tcase_add_test(t, large_products_open_openblas_and_agree_exactly);
    tcase_add_test(t, a_library_that_does_not_open_falls_back_silently);
    tcase_add_test(t, exponential_through_openblas_and_without_it);
    tcase_add_test(t, a_small_exponential_does_not_open_the_library);
    tcase_add_test(t, eigenvalues_by_lapack_and_by_gsl);
    suite_add_tcase(s, t);
    return s;
}
