/* check_expm.c - the matrix exponential (src/sample/expm.c) against exact values,
 * closed forms and 40-digit references. */
#include "expm.h"
#include "testutil.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <float.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_math.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_randist.h>

/* Tolerance model of the reference comparisons.  Truncation leaves a
 * backward error of at most u ||A|| (Higham 2005, section 2).  Rounding
 * in forming the Pade numerator and denominator at the scaled norm
 * nu = ||A||_1 / 2^s <= theta_13 = 5.37 costs up to about u e^nu relative
 * (the alternating terms of p_m(-A) cancel: for the scalar 5.37 a plain
 * evaluation of r_13 is 25 u off), a backward error of about u e^nu / nu
 * relative to A, which the s squarings carry along.  The forward error is
 * then bounded by kappa times the backward error, kappa the relative
 * condition number of the exponential:
 *     EXPM_TOL_FACTOR * u * (kappa e^nu / nu + n).
 * For A = -151.4 (1x1, s = 5) this predicts the 3800 u actually seen: the
 * error of e^(A/32) doubles with each squaring.  The factor is set from the
 * measured worst ratio (printed by random_matrices_match_mpmath when
 * RIGMAT_TEST_VERBOSE is set) with a margin for other BLAS builds. */
#define EXPM_TOL_FACTOR 16.0

static double expm_tol(double kappa, size_t n, double nu)
{
    const double g = nu > 0.0 ? exp(nu) / nu : 1.0;

    return EXPM_TOL_FACTOR * DBL_EPSILON / 2.0 * (kappa * g + (double)n);
}

/* nu of the call rigmat_expm makes on A */
static double scaled_norm(const gsl_matrix *A, unsigned flags);

/* e^A with a fresh workspace; asserts success. */
static gsl_matrix *expm_of(const gsl_matrix *A, unsigned flags, rigmat_expm_info *info)
{
    rigmat_expm_ws *w = rigmat_expm_ws_alloc(A->size1);
    gsl_matrix *E = gsl_matrix_alloc(A->size1, A->size1);
    rigmat_error err;
    rigmat_status st;

    ck_assert_ptr_nonnull(w);
    ck_assert_ptr_nonnull(E);
    memset(&err, 0, sizeof err);
    st = rigmat_expm(A, E, flags, w, info, &err);
    ck_assert_msg(st == RIGMAT_OK, "rigmat_expm failed: %s", err.message);
    rigmat_expm_ws_free(w);
    return E;
}

static double scaled_norm(const gsl_matrix *A, unsigned flags)
{
    rigmat_expm_info info;
    gsl_matrix *E = expm_of(A, flags, &info);

    gsl_matrix_free(E);
    return ldexp(info.norm1, -(int)info.squarings);
}

/* A cheap condition estimate of the exponential for the fixed cases: the
 * Frechet derivative L(A, E) is the upper right block of
 * exp([[A, E], [0, A]]) (Higham, "Functions of Matrices", SIAM 2008,
 * theorem 3.6); kappa >= ||L(A, E)||_F ||A||_F / (||e^A||_F ||E||_F) for any E,
 * maximized here over E = A and a few seeded random directions. */
static double fro(const gsl_matrix *m)
{
    double s = 0.0;
    size_t i, j;

    for (i = 0; i < m->size1; i++)
        for (j = 0; j < m->size2; j++)
            s += gsl_matrix_get(m, i, j) * gsl_matrix_get(m, i, j);
    return sqrt(s);
}

static double kappa_estimate(const gsl_matrix *A)
{
    const size_t n = A->size1;
    gsl_matrix *M = gsl_matrix_calloc(2 * n, 2 * n), *F = gsl_matrix_alloc(2 * n, 2 * n);
    gsl_matrix *eA = expm_of(A, 0, NULL);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    rigmat_expm_ws *w = rigmat_expm_ws_alloc(2 * n);
    double best = 1.0;
    size_t i, j, k;

    gsl_rng_set(r, 7);
    for (k = 0; k < 6; k++) {
        double ne = 0.0;
        gsl_matrix_view L;
        gsl_matrix_set_zero(M);
        for (i = 0; i < n; i++)
            for (j = 0; j < n; j++) {
                const double e = k == 0 ? gsl_matrix_get(A, i, j) : gsl_ran_gaussian(r, 1.0);
                gsl_matrix_set(M, i, j, gsl_matrix_get(A, i, j));
                gsl_matrix_set(M, n + i, n + j, gsl_matrix_get(A, i, j));
                gsl_matrix_set(M, i, n + j, e);
                ne += e * e;
            }
        ck_assert_int_eq(rigmat_expm(M, F, 0, w, NULL, NULL), RIGMAT_OK);
        L = gsl_matrix_submatrix(F, 0, n, n, n);
        if (ne > 0.0) {
            const double kk = fro(&L.matrix) * fro(A) / (fro(eA) * sqrt(ne));
            if (kk > best)
                best = kk;
        }
    }
    gsl_matrix_free(M);
    gsl_matrix_free(F);
    gsl_matrix_free(eA);
    gsl_rng_free(r);
    rigmat_expm_ws_free(w);
    return best;
}

static void check_against(const gsl_matrix *A, const gsl_matrix *want, unsigned flags)
{
    gsl_matrix *E = expm_of(A, flags, NULL);
    const double k = kappa_estimate(A);
    const double d = rigmat_test_matrix_reldiff(E, want);

    const double tol = expm_tol(k, A->size1, scaled_norm(A, flags));

    ck_assert_msg(d <= tol, "normwise error %.3g > tol %.3g (kappa ~ %.3g)", d, tol, k);
    gsl_matrix_free(E);
}

/* rigmat_expm_balance must give GSL's gsl_linalg_balance_matrix bits
 * (the exponentials before and after it replaced the library call are
 * the same files): random n = 1..12 matrices with rows and columns scaled
 * over 2^-30..2^30 (so the iteration has work to do), zeros, and a zero
 * row; D and the balanced matrix compared bit for bit. */
/* rigmat_expm_small_lu must give GSL's gsl_linalg_LU_decomp bits (factors
 * and permutation) for every n up to RIGMAT_EXPM_SMALL_LU: random
 * matrices over 20 binary orders, some with zeros and a repeated row (so
 * ties and tiny pivots occur). */
START_TEST(small_lu_gives_the_library_bits)
{
    unsigned state = 4242u, trial;

    for (trial = 0; trial < 800; trial++) {
        const size_t n = 1 + trial % RIGMAT_EXPM_SMALL_LU;
        gsl_matrix *a = gsl_matrix_alloc(n, n), *b = gsl_matrix_alloc(n, n);
        gsl_permutation *p = gsl_permutation_alloc(n);
        size_t perm[RIGMAT_EXPM_SMALL_LU], i, j;
        int signum;
        for (i = 0; i < n; i++)
            for (j = 0; j < n; j++) {
                double v;
                state = state * 1103515245u + 12345u;
                v = (double)((state >> 8) & 0xffffu) / 65536.0 - 0.5;
                if ((state >> 24) % 7u == 0)
                    v = 0.0;
                gsl_matrix_set(a, i, j, ldexp(v, (int)((state >> 4) % 21u) - 10));
            }
        if (trial % 5 == 0 && n > 2)
            for (j = 0; j < n; j++)
                gsl_matrix_set(a, 2, j, gsl_matrix_get(a, 0, j));
        gsl_matrix_memcpy(b, a);
        (void)rigmat_expm_small_lu(a->data, n, a->tda, perm);
        ck_assert_int_eq(gsl_linalg_LU_decomp(b, p, &signum), GSL_SUCCESS);
        ck_assert_msg(memcmp(a->data, b->data, n * n * sizeof(double)) == 0,
                      "trial %u (n = %zu): the factors differ from GSL's", trial, n);
        for (i = 0; i < n; i++)
            ck_assert_msg(perm[i] == gsl_permutation_get(p, i),
                          "trial %u (n = %zu): the permutation differs from GSL's", trial, n);
        gsl_matrix_free(a);
        gsl_matrix_free(b);
        gsl_permutation_free(p);
    }
}
END_TEST

START_TEST(balancing_gives_the_library_bits)
{
    unsigned state = 99u, trial;

    for (trial = 0; trial < 600; trial++) {
        const size_t n = 1 + trial % 12;
        gsl_matrix *a = gsl_matrix_alloc(n, n), *b = gsl_matrix_alloc(n, n);
        gsl_vector *d1 = gsl_vector_alloc(n), *d2 = gsl_vector_alloc(n);
        size_t i, j;
        for (i = 0; i < n; i++)
            for (j = 0; j < n; j++) {
                double v;
                state = state * 1103515245u + 12345u;
                v = (double)((state >> 8) & 0xffffu) / 65536.0 - 0.5;
                if ((state >> 24) % 5u == 0)
                    v = 0.0;
                gsl_matrix_set(a, i, j, ldexp(v, (int)((i * 7u + trial) % 61u) - 30 -
                                                      (int)((j * 3u + trial) % 41u) + 20));
            }
        if (trial % 9 == 0 && n > 2)
            for (j = 0; j < n; j++)
                gsl_matrix_set(a, 1, j, 0.0);
        gsl_matrix_memcpy(b, a);
        rigmat_expm_balance(a->data, n, a->tda, d1->data);
        ck_assert_int_eq(gsl_linalg_balance_matrix(b, d2), GSL_SUCCESS);
        ck_assert_msg(memcmp(a->data, b->data, n * n * sizeof(double)) == 0 &&
                              memcmp(d1->data, d2->data, n * sizeof(double)) == 0,
                      "trial %u (n = %zu): the balancing differs from GSL's", trial, n);
        gsl_matrix_free(a);
        gsl_matrix_free(b);
        gsl_vector_free(d1);
        gsl_vector_free(d2);
    }
}
END_TEST

START_TEST(moler_van_loan_2x2)
{
    /* Moler and Van Loan, SIAM Review 45(1):3-49, 2003, section 3:
     * A = [[-49, 24], [-64, 31]], e^A = e^-1 [[-2, 1.5], [-4, 3]] + e^-17 [[3, -1.5], [4, -2]] */
    const double a[] = { -49, 24, -64, 31 };
    const double e1 = exp(-1.0), e17 = exp(-17.0);
    const double x[] = { -2 * e1 + 3 * e17, 1.5 * e1 - 1.5 * e17, -4 * e1 + 4 * e17,
                         3 * e1 - 2 * e17 };
    /* mpmath.expm at 40 digits (the matrix of C. Moler, C. Van Loan, SIAM Review
     * 45(1), 2003, section 3) */
    const double mp[] = { -0.73575875814475308, 0.5518190996580977, -1.4715175990882605,
                          1.1036382407155726 };
    gsl_matrix *A = tu_mat(2, 2, a), *X = tu_mat(2, 2, x), *M = tu_mat(2, 2, mp), *E;
    rigmat_expm_info info;

    check_against(A, X, 0);
    check_against(A, M, 0);
    check_against(A, X, RIGMAT_EXPM_BALANCE);
    E = expm_of(A, 0, &info);
    ck_assert_uint_eq(info.degree, 13);
    /* ||A||_1 = 113: s = ceil(log2(113 / 5.37)) = 5 */
    ck_assert_uint_eq(info.squarings, 5);
    ck_assert_uint_eq(info.products, 6 + 5);
    gsl_matrix_free(A);
    gsl_matrix_free(X);
    gsl_matrix_free(M);
    gsl_matrix_free(E);
}
END_TEST

START_TEST(rotation_generator_gives_cos_sin)
{
    /* closed form: exp(theta [[0, -1], [1, 0]]) = [[cos, -sin], [sin, cos]] */
    const double thetas[] = { 1.0, 0.0137, 2.385, 31.7, 250.0 };
    size_t k;

    for (k = 0; k < sizeof thetas / sizeof thetas[0]; k++) {
        const double t = thetas[k];
        const double a[] = { 0, -t, t, 0 };
        const double x[] = { cos(t), -sin(t), sin(t), cos(t) };
        gsl_matrix *A = tu_mat(2, 2, a), *X = tu_mat(2, 2, x);
        check_against(A, X, 0);
        gsl_matrix_free(A);
        gsl_matrix_free(X);
    }
    {
        /* closed form [[cos 1, -sin 1], [sin 1, cos 1]], mpmath to 17 digits */
        const double a[] = { 0, -1, 1, 0 };
        gsl_matrix *A = tu_mat(2, 2, a), *E = expm_of(A, 0, NULL);
        ck_assert_rel(gsl_matrix_get(E, 0, 0), 0.54030230586813972, 4e-16);
        ck_assert_rel(gsl_matrix_get(E, 1, 0), 0.84147098480789651, 4e-16);
        gsl_matrix_free(A);
        gsl_matrix_free(E);
    }
}
END_TEST

START_TEST(jordan_block_and_nilpotent)
{
    /* closed form: exp([[l, 1], [0, l]]) = e^l [[1, 1], [0, 1]]; l = -2 gives
     * e^-2 = 0.13533528323661269 (mpmath) */
    const double a[] = { -2, 1, 0, -2 };
    const double x[] = { 0.13533528323661269, 0.13533528323661269, 0, 0.13533528323661269 };
    /* closed form: N with ones on the superdiagonal, e^N = I + N + N^2/2 */
    const double n3[] = { 0, 1, 0, 0, 0, 1, 0, 0, 0 };
    const double xn[] = { 1, 1, 0.5, 0, 1, 1, 0, 0, 1 };
    /* closed form: 4x4 Jordan block, l = 0.73: e^l [1, 1, 1/2, 1/6] on the diagonals */
    double j4[16] = { 0 }, x4[16] = { 0 };
    const double l = 0.73, c[] = { 1.0, 1.0, 0.5, 1.0 / 6.0 };
    gsl_matrix *A, *X, *E;
    size_t i, k;

    A = tu_mat(2, 2, a);
    X = tu_mat(2, 2, x);
    check_against(A, X, 0);
    gsl_matrix_free(A);
    gsl_matrix_free(X);
    A = tu_mat(3, 3, n3);
    X = tu_mat(3, 3, xn);
    E = expm_of(A, 0, NULL);
    ck_assert_matrix_rel(E, X, 4 * DBL_EPSILON);
    gsl_matrix_free(A);
    gsl_matrix_free(X);
    gsl_matrix_free(E);
    for (i = 0; i < 4; i++) {
        j4[i * 4 + i] = l;
        if (i < 3)
            j4[i * 4 + i + 1] = 1.0;
        for (k = i; k < 4; k++)
            x4[i * 4 + k] = exp(l) * c[k - i];
    }
    A = tu_mat(4, 4, j4);
    X = tu_mat(4, 4, x4);
    check_against(A, X, 0);
    gsl_matrix_free(A);
    gsl_matrix_free(X);
}
END_TEST

START_TEST(diagonalizable_closed_form)
{
    /* closed form for [[0, 1], [-2, -3]] t (eigenvalues -1, -2), by diagonalization */
    const double ts[] = { 1.0, 0.1, 3.7, 0.0041 };
    size_t k;

    for (k = 0; k < sizeof ts / sizeof ts[0]; k++) {
        const double t = ts[k], e1 = exp(-t), e2 = exp(-2 * t);
        const double a[] = { 0, t, -2 * t, -3 * t };
        const double x[] = { 2 * e1 - e2, e1 - e2, -2 * e1 + 2 * e2, -e1 + 2 * e2 };
        gsl_matrix *A = tu_mat(2, 2, a), *X = tu_mat(2, 2, x);
        check_against(A, X, 0);
        gsl_matrix_free(A);
        gsl_matrix_free(X);
    }
    {
        /* mpmath.expm at 40 digits, t = 0.1 */
        const double a[] = { 0, 0.1, -0.2, -0.30000000000000004 };
        const double x[] = { 0.99094408299393729, 0.086106664957977714, -0.17221332991595543,
                             0.73262408812000414 };
        gsl_matrix *A = tu_mat(2, 2, a), *X = tu_mat(2, 2, x), *E = expm_of(A, 0, NULL);
        ck_assert_matrix_rel(E, X, 1e-15);
        gsl_matrix_free(A);
        gsl_matrix_free(X);
        gsl_matrix_free(E);
    }
}
END_TEST

START_TEST(badly_scaled_with_balancing)
{
    /* closed form: [[-1, 1], [0, -100]] has e^A = [[e^-1, (e^-1 - e^-100)/99], [0, e^-100]];
     * values from mpmath at 40 digits */
    const double a[] = { -1, 1, 0, -100 };
    const double x[] = { 0.36787944117144232, 0.0037159539512266901, 0, 3.720075976020836e-44 };
    gsl_matrix *A = tu_mat(2, 2, a), *X = tu_mat(2, 2, x), *E;
    rigmat_expm_info info;
    /* closed form: D B D^-1 with B = [[0, 1], [-2, -3]] and D = diag(1e6, 1e-6):
     * e^(D B D^-1) = D e^B D^-1, entrywise */
    const double e1 = exp(-1.0), e2 = exp(-2.0), d = 1e6;
    const double g[] = { 0, d * d, -2 / (d * d), -3 };
    const double xg[] = { 2 * e1 - e2, (e1 - e2) * d * d, (-2 * e1 + 2 * e2) / (d * d),
                          -e1 + 2 * e2 };
    size_t i;

    check_against(A, X, 0);
    gsl_matrix_free(A);
    gsl_matrix_free(X);
    A = tu_mat(2, 2, g);
    X = tu_mat(2, 2, xg);
    E = expm_of(A, RIGMAT_EXPM_BALANCE, &info);
    ck_assert_int_eq(info.balanced, 1);
    ck_assert_uint_eq(info.squarings, 0);
    for (i = 0; i < 4; i++)
        ck_assert_rel(E->data[i], X->data[i], 1e-14);
    gsl_matrix_free(E);
    /* without balancing the 1e12 entry forces about 38 squarings */
    E = expm_of(A, 0, &info);
    ck_assert_int_eq(info.balanced, 0);
    ck_assert_uint_ge(info.squarings, 30);
    gsl_matrix_free(E);
    gsl_matrix_free(A);
    gsl_matrix_free(X);
}
END_TEST

START_TEST(large_norm_ones_matrix)
{
    /* closed form: exp(c ones(n)) = I + ((e^(n c) - 1)/n) ones; c = 0.9, n = 20:
     * diagonal 3282999.4068665256, off-diagonal 3282998.4068665256 (mpmath) */
    double a[400];
    gsl_matrix *A, *E;
    rigmat_expm_info info;
    size_t i, j;

    for (i = 0; i < 400; i++)
        a[i] = 0.9;
    A = tu_mat(20, 20, a);
    E = expm_of(A, 0, &info);
    ck_assert_uint_eq(info.degree, 13);
    ck_assert_uint_gt(info.squarings, 0);
    for (i = 0; i < 20; i++)
        for (j = 0; j < 20; j++)
            ck_assert_rel(gsl_matrix_get(E, i, j), i == j ? 3282999.4068665256 : 3282998.4068665256,
                          expm_tol(kappa_estimate(A), 20, scaled_norm(A, 0)));
    gsl_matrix_free(A);
    gsl_matrix_free(E);
}
END_TEST

/* n >= 48 takes LAPACK's dgetrf where the BLAS has it (src/sample/expm.c);
 * closed forms at n = 64 and 96.  Rotation blocks: exp([[a, -b], [b, a]]) =
 * e^a [[cos b, -sin b], [sin b, cos b]] (common practice), scattered by a
 * permutation similarity P R P^T, which moves the pivots about; and the
 * ones matrix as above: exp(c ones(n)) = I + ((e^(n c) - 1)/n) ones. */
START_TEST(large_closed_forms_take_the_blocked_lu)
{
    const size_t n = 96, n1 = 64;
    gsl_matrix *A = gsl_matrix_calloc(n, n), *X = gsl_matrix_calloc(n, n);
    gsl_matrix *B = gsl_matrix_alloc(n1, n1), *Y = gsl_matrix_alloc(n1, n1);
    size_t perm[96], i, j, k;
    const double c = 0.05, d = (exp((double)n1 * c) - 1.0) / (double)n1;

    for (i = 0; i < n; i++)
        perm[i] = (i * 37 + 11) % n; /* 37 is prime to 96: a permutation */
    for (k = 0; k < n / 2; k++) {
        const double a = -0.5 + 0.02 * (double)k, b = 0.3 + 0.17 * (double)k;
        const size_t p = perm[2 * k], q = perm[2 * k + 1];
        gsl_matrix_set(A, p, p, a);
        gsl_matrix_set(A, p, q, -b);
        gsl_matrix_set(A, q, p, b);
        gsl_matrix_set(A, q, q, a);
        gsl_matrix_set(X, p, p, exp(a) * cos(b));
        gsl_matrix_set(X, p, q, -exp(a) * sin(b));
        gsl_matrix_set(X, q, p, exp(a) * sin(b));
        gsl_matrix_set(X, q, q, exp(a) * cos(b));
    }
    check_against(A, X, 0);
    for (i = 0; i < n1; i++)
        for (j = 0; j < n1; j++) {
            gsl_matrix_set(B, i, j, c);
            gsl_matrix_set(Y, i, j, (i == j ? 1.0 : 0.0) + d);
        }
    check_against(B, Y, 0);
    gsl_matrix_free(A);
    gsl_matrix_free(X);
    gsl_matrix_free(B);
    gsl_matrix_free(Y);
}
END_TEST

START_TEST(scalar_matches_libm)
{
    /* closed form: exp of a 1x1 matrix is exp() */
    const double xs[] = { 1e-300, -3.1e-5, 0.0149, 0.2539, 0.95, 2.09,
                          5.37,   -17.3,   44.0,   -700.0, 709.0 };
    size_t k;

    for (k = 0; k < sizeof xs / sizeof xs[0]; k++) {
        gsl_matrix *A = tu_mat(1, 1, &xs[k]), *E = expm_of(A, 0, NULL);
        /* error grows like |x| u through the squarings: kappa = |x| */
        ck_assert_rel(gsl_matrix_get(E, 0, 0), exp(xs[k]),
                      expm_tol(fabs(xs[k]), 1, scaled_norm(A, 0)));
        gsl_matrix_free(A);
        gsl_matrix_free(E);
    }
}
END_TEST

START_TEST(degree_follows_theta_table)
{
    /* Higham (2005), Table 2.3: theta_3, theta_5, theta_7, theta_9, theta_13 */
    const double th[] = { 1.495585217958292e-2, 2.539398330063230e-1, 9.504178996162932e-1,
                          2.097847961257068e0, 5.371920351148152e0 };
    const unsigned deg[] = { 3, 5, 7, 9, 13 };
    const unsigned prod[] = { 2, 3, 4, 5, 6 };
    size_t k;

    for (k = 0; k < 5; k++) {
        /* A = [[0, x], [0, 0]] has ||A||_1 = x exactly */
        double a[] = { 0, th[k], 0, 0 };
        gsl_matrix *A = tu_mat(2, 2, a), *E;
        rigmat_expm_info info;
        E = expm_of(A, 0, &info);
        ck_assert_uint_eq(info.degree, deg[k]);
        ck_assert_uint_eq(info.squarings, 0);
        ck_assert_uint_eq(info.products, prod[k]);
        ck_assert_rel(gsl_matrix_get(E, 0, 1), th[k], 2 * DBL_EPSILON);
        gsl_matrix_free(E);
        /* just above theta_m: the next degree */
        a[1] = th[k] * (1 + 4 * DBL_EPSILON);
        gsl_matrix_free(A);
        A = tu_mat(2, 2, a);
        E = expm_of(A, 0, &info);
        ck_assert_uint_eq(info.degree, k < 4 ? deg[k + 1] : 13);
        ck_assert_uint_eq(info.squarings, k < 4 ? 0 : 1);
        gsl_matrix_free(A);
        gsl_matrix_free(E);
    }
    {
        /* an exact power of two times theta_13 needs exactly that many squarings */
        double a[] = { 0, 8 * th[4], 0, 0 };
        gsl_matrix *A = tu_mat(2, 2, a), *E;
        rigmat_expm_info info;
        E = expm_of(A, 0, &info);
        ck_assert_uint_eq(info.squarings, 3);
        gsl_matrix_free(A);
        gsl_matrix_free(E);
    }
}
END_TEST

START_TEST(errors_are_reported)
{
    rigmat_expm_ws *w = rigmat_expm_ws_alloc(3);
    gsl_matrix *A = gsl_matrix_calloc(2, 3), *B = gsl_matrix_calloc(3, 3);
    gsl_matrix *C = gsl_matrix_calloc(4, 4), *E2 = gsl_matrix_calloc(2, 2);
    rigmat_error err;

    ck_assert_ptr_null(rigmat_expm_ws_alloc(0));
    memset(&err, 0, sizeof err);
    ck_assert_int_eq(rigmat_expm(A, B, 0, w, NULL, &err), RIGMAT_EUSAGE);
    ck_assert_ptr_nonnull(strstr(err.message, "not square"));
    ck_assert_int_eq(rigmat_expm(B, E2, 0, w, NULL, &err), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_expm(C, C, 0, w, NULL, &err), RIGMAT_EUSAGE);
    ck_assert_ptr_nonnull(strstr(err.message, "workspace"));
    gsl_matrix_set(B, 1, 2, NAN);
    ck_assert_int_eq(rigmat_expm(B, B, 0, w, NULL, &err), RIGMAT_ENUMERIC);
    /* e^1000 overflows */
    gsl_matrix_set_identity(B);
    gsl_matrix_scale(B, 1000.0);
    ck_assert_int_eq(rigmat_expm(B, B, 0, w, NULL, &err), RIGMAT_ENUMERIC);
    ck_assert_ptr_nonnull(strstr(err.message, "overflow"));
    /* a zero matrix gives I; NULL err is allowed */
    gsl_matrix_set_zero(B);
    ck_assert_int_eq(rigmat_expm(B, B, 0, w, NULL, NULL), RIGMAT_OK);
    ck_assert(gsl_matrix_get(B, 0, 0) == 1.0 && gsl_matrix_get(B, 0, 1) == 0.0);
    rigmat_expm_ws_free(w);
    rigmat_expm_ws_free(NULL);
    gsl_matrix_free(A);
    gsl_matrix_free(B);
    gsl_matrix_free(C);
    gsl_matrix_free(E2);
}
END_TEST

START_TEST(workspace_reuse_and_aliasing)
{
    /* one workspace of size 9 serves sizes 1..9, in place and out of place,
     * with the same bits as a fresh workspace of the exact size */
    rigmat_expm_ws *w = rigmat_expm_ws_alloc(9);
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    size_t n, i, j;

    gsl_rng_set(r, 31);
    for (n = 9; n >= 1; n--) {
        gsl_matrix *A = gsl_matrix_alloc(n, n), *E = gsl_matrix_alloc(n, n), *F;
        for (i = 0; i < n; i++)
            for (j = 0; j < n; j++)
                gsl_matrix_set(A, i, j, 2.3 * gsl_ran_gaussian(r, 1.0));
        ck_assert_int_eq(rigmat_expm(A, E, 0, w, NULL, NULL), RIGMAT_OK);
        F = expm_of(A, 0, NULL);
        for (i = 0; i < n * n; i++)
            ck_assert(gsl_matrix_get(E, i / n, i % n) == gsl_matrix_get(F, i / n, i % n));
        ck_assert_int_eq(rigmat_expm(A, A, 0, w, NULL, NULL), RIGMAT_OK);
        for (i = 0; i < n * n; i++)
            ck_assert(gsl_matrix_get(A, i / n, i % n) == gsl_matrix_get(F, i / n, i % n));
        gsl_matrix_free(A);
        gsl_matrix_free(E);
        gsl_matrix_free(F);
    }
    gsl_rng_free(r);
    rigmat_expm_ws_free(w);
}
END_TEST

START_TEST(agrees_with_gsl_taylor_on_small_norms)
{
    /* gsl_linalg_exponential_ss (a scaled Taylor series; GSL 2.7 manual, linear
     * algebra, matrix exponential) as an independent cross-check where it is accurate */
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    size_t k, i, j;

    gsl_rng_set(r, 5);
    for (k = 0; k < 20; k++) {
        const size_t n = 1 + k % 6;
        gsl_matrix *A = gsl_matrix_alloc(n, n), *G = gsl_matrix_alloc(n, n), *E;
        for (i = 0; i < n; i++)
            for (j = 0; j < n; j++)
                gsl_matrix_set(A, i, j, 0.3 * gsl_ran_gaussian(r, 1.0));
        ck_assert_int_eq(gsl_linalg_exponential_ss(A, G, GSL_PREC_DOUBLE), GSL_SUCCESS);
        E = expm_of(A, 0, NULL);
        ck_assert_matrix_rel(E, G, 1e-13);
        gsl_matrix_free(A);
        gsl_matrix_free(G);
        gsl_matrix_free(E);
    }
    gsl_rng_free(r);
}
END_TEST

/* ------------------------------------------------------------ data file */

struct expm_case {
    char name[64];
    size_t n;
    double kappa;
    gsl_matrix *A, *exact;
};

/* Next case of tests/ref/expm_cases.txt; 0 at the end. */
static int read_case(FILE *f, struct expm_case *c)
{
    char line[256];

    while (fgets(line, sizeof line, f) != NULL) {
        if (line[0] == '#' || line[0] == '\n')
            continue;
        ck_assert_int_eq(sscanf(line, "case %63s %zu %lf", c->name, &c->n, &c->kappa), 3);
        c->A = tu_read_mat(f, c->n, c->n);
        c->exact = tu_read_mat(f, c->n, c->n);
        return 1;
    }
    return 0;
}

static void free_case(struct expm_case *c)
{
    gsl_matrix_free(c->A);
    gsl_matrix_free(c->exact);
}

START_TEST(random_matrices_match_mpmath)
{
    /* tests/ref/expm_cases.txt: 110 seeded random matrices of sizes 1-40,
     * mpmath.expm at 40 digits, kappa = scipy.linalg.expm_cond (generated
     * by tests/ref/gen_expm_cases.py) */
    FILE *f = fopen("ref/expm_cases.txt", "r");
    rigmat_expm_ws *w = rigmat_expm_ws_alloc(40);
    gsl_matrix *E = gsl_matrix_alloc(40, 40);
    struct expm_case c;
    size_t count = 0;
    double worst = 0.0, worst_err = 0.0;
    char worst_name[64] = "";

    ck_assert_msg(f != NULL, "cannot open ref/expm_cases.txt (run from tests/)");
    while (read_case(f, &c)) {
        gsl_matrix_view Ev = gsl_matrix_submatrix(E, 0, 0, c.n, c.n);
        const double tol = expm_tol(c.kappa, c.n, scaled_norm(c.A, 0));
        const double scale = expm_tol(c.kappa, c.n, scaled_norm(c.A, 0)) / EXPM_TOL_FACTOR;
        double d;
        unsigned flags;
        /* the degree and squarings from the powers (RIGMAT_EXPM_POWERS) must
         * meet the same tolerance as the norm rule, the 2005 one */
        for (flags = 0; flags <= (RIGMAT_EXPM_BALANCE | RIGMAT_EXPM_POWERS); flags++) {
            ck_assert_int_eq(rigmat_expm(c.A, &Ev.matrix, flags, w, NULL, NULL), RIGMAT_OK);
            d = rigmat_test_matrix_reldiff(&Ev.matrix, c.exact);
            ck_assert_msg(d <= tol, "%s (flags %u): error %.3g > tol %.3g (kappa %.3g)", c.name,
                          flags, d, tol, c.kappa);
            if (d / scale > worst) {
                worst = d / scale;
                snprintf(worst_name, sizeof worst_name, "%s", c.name);
            }
            if (d > worst_err)
                worst_err = d;
        }
        free_case(&c);
        count++;
    }
    fclose(f);
    ck_assert_uint_ge(count, 100);
    if (getenv("RIGMAT_TEST_VERBOSE") != NULL)
        fprintf(stderr,
                "expm: %zu cases, worst error / (u (kappa e^nu / nu + n)) = %.3g (%s); "
                "worst normwise error %.3g\n",
                count, worst, worst_name, worst_err);
    gsl_matrix_free(E);
    rigmat_expm_ws_free(w);
}
END_TEST

START_TEST(tolerance_model_can_fail)
{
    /* the comparison must reject a result perturbed by 1000 tolerances */
    const double a[] = { -49, 24, -64, 31 };
    gsl_matrix *A = tu_mat(2, 2, a), *E = expm_of(A, 0, NULL), *P = expm_of(A, 0, NULL);
    const double tol = expm_tol(kappa_estimate(A), 2, scaled_norm(A, 0));

    gsl_matrix_set(P, 0, 0, gsl_matrix_get(P, 0, 0) * (1 + 1000 * tol));
    ck_assert(rigmat_test_matrix_reldiff(P, E) > tol);
    gsl_matrix_free(A);
    gsl_matrix_free(E);
    gsl_matrix_free(P);
}
END_TEST

/* Overscaling: A = [[1, b], [0, -1]] (Al-Mohy and Higham 2009, section 1,
 * from memory) has ||A||_1 = 1 + b, so the norm rule squares about
 * log2(b) times, yet A^2 = I.  Closed form (common practice: a 2x2 upper
 * triangular matrix with distinct eigenvalues 1 and -1, divided
 * difference): e^A = [[e, b sinh 1], [0, e^-1]].  The choice from the
 * powers takes no squarings and must be at least as accurate, to a few
 * units of roundoff. */
START_TEST(powers_avoid_overscaling)
{
    const double bs[] = { 1e2, 1e4, 1e6, 1e8 };
    size_t k, i;

    for (k = 0; k < sizeof bs / sizeof bs[0]; k++) {
        const double a[] = { 1.0, bs[k], 0.0, -1.0 };
        const double x[] = { exp(1.0), bs[k] * sinh(1.0), 0.0, exp(-1.0) };
        gsl_matrix *A = tu_mat(2, 2, a), *E0, *E1;
        rigmat_expm_info i0, i1;
        double e0 = 0.0, e1 = 0.0;

        E0 = expm_of(A, 0, &i0);
        E1 = expm_of(A, RIGMAT_EXPM_POWERS, &i1);
        for (i = 0; i < 4; i++) {
            const double w = x[i] != 0.0 ? fabs(x[i]) : 1.0;
            e0 = fmax(e0, fabs(gsl_matrix_get(E0, i / 2, i % 2) - x[i]) / w);
            e1 = fmax(e1, fabs(gsl_matrix_get(E1, i / 2, i % 2) - x[i]) / w);
        }
        ck_assert_uint_eq(i1.squarings, 0);
        ck_assert_uint_ge(i0.squarings, 5);
        ck_assert_uint_lt(i1.products, i0.products);
        ck_assert_msg(e1 <= 4 * DBL_EPSILON, "b = %g: error %.3g with the powers", bs[k], e1);
        ck_assert_msg(e1 <= fmax(e0, 4 * DBL_EPSILON), "b = %g: %.3g > %.3g", bs[k], e1, e0);
        gsl_matrix_free(A);
        gsl_matrix_free(E0);
        gsl_matrix_free(E1);
    }
    {
        /* A = -1e60 I: A^6 overflows before any scaling, so the powers are
         * unusable and the norm rule must take over; e^A = e^-1e60 I
         * underflows to the zero matrix (closed form, common practice) */
        const double a[] = { -1e60, 0.0, 0.0, -1e60 };
        gsl_matrix *A = tu_mat(2, 2, a), *E0, *E1;
        rigmat_expm_info i0, i1;

        E0 = expm_of(A, 0, &i0);
        E1 = expm_of(A, RIGMAT_EXPM_POWERS, &i1);
        ck_assert_uint_eq(i1.squarings, i0.squarings);
        for (i = 0; i < 4; i++)
            ck_assert(gsl_matrix_get(E1, i / 2, i % 2) == 0.0);
        gsl_matrix_free(A);
        gsl_matrix_free(E0);
        gsl_matrix_free(E1);
    }
}
END_TEST

Suite *expm_suite(void);
Suite *expm_suite(void)
{
    Suite *s = suite_create("expm");
    TCase *tc = tcase_create("exact");
    TCase *tr = tcase_create("reference");
    tcase_add_test(tc, balancing_gives_the_library_bits);
    tcase_add_test(tc, small_lu_gives_the_library_bits);

    tcase_add_test(tc, moler_van_loan_2x2);
    tcase_add_test(tc, rotation_generator_gives_cos_sin);
    tcase_add_test(tc, jordan_block_and_nilpotent);
    tcase_add_test(tc, diagonalizable_closed_form);
    tcase_add_test(tc, badly_scaled_with_balancing);
    tcase_add_test(tc, large_norm_ones_matrix);
    tcase_add_test(tc, scalar_matches_libm);
    tcase_add_test(tc, degree_follows_theta_table);
    tcase_add_test(tc, errors_are_reported);
    tcase_add_test(tc, workspace_reuse_and_aliasing);
    tcase_add_test(tc, agrees_with_gsl_taylor_on_small_norms);
    tcase_add_test(tc, large_closed_forms_take_the_blocked_lu);
    tcase_add_test(tc, tolerance_model_can_fail);
    tcase_add_test(tc, powers_avoid_overscaling);
    suite_add_tcase(s, tc);
    tcase_add_test(tr, random_matrices_match_mpmath);
    tcase_set_timeout(tr, 60);
    suite_add_tcase(s, tr);
    return s;
}
