/* riccati.c - the discrete algebraic Riccati equation by the
 * structure-preserving doubling algorithm, with PBH refusals and a Newton
 * (Hewer) fallback for pairs the weights do not make detectable.  Method,
 * sources, stopping rule and accuracy: riccati.h.
 */
#include "riccati.h"

#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_complex_math.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>

/* Below this relative change a rise of Newton's change means round-off
 * has been reached (quadratic convergence from 1e-6 takes one more step to
 * reach 1e-12). */
static const double NEWTON_STALL = 1e-6;

rigmat_riccati_opts rigmat_riccati_opts_default(void)
{
    rigmat_riccati_opts o;

    o.rtol = 1e-15;
    o.max_iter = 64;
    o.newton_rtol = 1e-13;
    o.newton_max = 30;
    o.pbh_rtol = 1e-10;
    o.pbh_rtol_late = 1e-6;
    o.circle_tol = 1e-6;
    o.residual_max = 1e-8;
    return o;
}

void rigmat_riccati_ws_free(rigmat_riccati_ws *w)
{
    gsl_matrix **mats[19];
    size_t i;

    if (w == NULL)
        return;
    mats[0] = &w->Ab;
    mats[1] = &w->Qb;
    mats[2] = &w->G;
    mats[3] = &w->Ak;
    mats[4] = &w->Gk;
    mats[5] = &w->Hk;
    mats[6] = &w->W;
    mats[7] = &w->Y1;
    mats[8] = &w->Y2;
    mats[9] = &w->T1;
    mats[10] = &w->T2;
    mats[11] = &w->X2;
    mats[12] = &w->F;
    mats[13] = &w->Bt;
    mats[14] = &w->St;
    mats[15] = &w->Kt;
    mats[16] = &w->L;
    mats[17] = &w->Rx;
    mats[18] = &w->XB;
    for (i = 0; i < sizeof mats / sizeof mats[0]; i++)
        if (*mats[i] != NULL)
            gsl_matrix_free(*mats[i]);
    if (w->Nt)
        gsl_matrix_free(w->Nt);
    if (w->bs)
        gsl_vector_free(w->bs);
    if (w->P)
        gsl_matrix_free(w->P);
    if (w->V)
        gsl_matrix_free(w->V);
    if (w->perm)
        gsl_permutation_free(w->perm);
    if (w->sv)
        gsl_vector_free(w->sv);
    if (w->svw)
        gsl_vector_free(w->svw);
    if (w->ev)
        gsl_vector_free(w->ev);
    if (w->sw)
        gsl_eigen_symmv_free(w->sw);
    if (w->nw)
        gsl_eigen_nonsymmv_free(w->nw);
    if (w->z)
        gsl_vector_complex_free(w->z);
    if (w->Z)
        gsl_matrix_complex_free(w->Z);
    rigmat_fastblas_release(&w->blas);
    free(w);
}

rigmat_riccati_ws *rigmat_riccati_ws_alloc(size_t n, size_t m)
{
    rigmat_riccati_ws *w;
    const size_t prow = 2 * (n + m > 2 * n ? n + m : 2 * n);

    if (n == 0 || m == 0)
        return NULL;
    w = calloc(1, sizeof *w);
    if (w == NULL)
        return NULL;
    w->n = n;
    w->m = m;
    rigmat_fastblas_init(&w->blas);
    w->Ab = gsl_matrix_alloc(n, n);
    w->Qb = gsl_matrix_alloc(n, n);
    w->G = gsl_matrix_alloc(n, n);
    w->Ak = gsl_matrix_alloc(n, n);
    w->Gk = gsl_matrix_alloc(n, n);
    w->Hk = gsl_matrix_alloc(n, n);
    w->W = gsl_matrix_alloc(n, n);
    w->Y1 = gsl_matrix_alloc(n, n);
    w->Y2 = gsl_matrix_alloc(n, n);
    w->T1 = gsl_matrix_alloc(n, n);
    w->T2 = gsl_matrix_alloc(n, n);
    w->X2 = gsl_matrix_alloc(n, n);
    w->F = gsl_matrix_alloc(n, n);
    w->Bt = gsl_matrix_alloc(m, n);
    w->St = gsl_matrix_alloc(m, n);
    w->Kt = gsl_matrix_alloc(m, n);
    w->Nt = gsl_matrix_alloc(m, n);
    w->L = gsl_matrix_alloc(m, m);
    w->Rx = gsl_matrix_alloc(m, m);
    w->XB = gsl_matrix_alloc(n, m);
    w->perm = gsl_permutation_alloc(n);
    w->P = gsl_matrix_alloc(prow, 2 * n);
    w->V = gsl_matrix_alloc(2 * n, 2 * n);
    w->sv = gsl_vector_alloc(2 * n);
    w->svw = gsl_vector_alloc(2 * n);
    w->ev = gsl_vector_alloc(n);
    w->bs = gsl_vector_alloc(m);
    w->sw = gsl_eigen_symmv_alloc(n);
    w->nw = gsl_eigen_nonsymmv_alloc(n);
    w->z = gsl_vector_complex_alloc(n);
    w->Z = gsl_matrix_complex_alloc(n, n);
    if (!w->Ab || !w->Qb || !w->G || !w->Ak || !w->Gk || !w->Hk || !w->W || !w->Y1 || !w->Y2 ||
        !w->T1 || !w->T2 || !w->X2 || !w->F || !w->Bt || !w->St || !w->Kt || !w->Nt || !w->L ||
        !w->Rx || !w->XB || !w->perm || !w->P || !w->V || !w->sv || !w->svw || !w->ev || !w->bs ||
        !w->sw || !w->nw || !w->z || !w->Z) {
        rigmat_riccati_ws_free(w);
        return NULL;
    }
    return w;
}

/* ------------------------------------------------------------ helpers */

static double fro(const gsl_matrix *M)
{
    double s = 0.0;
    size_t i, j;

    for (i = 0; i < M->size1; i++)
        for (j = 0; j < M->size2; j++)
            s += gsl_matrix_get(M, i, j) * gsl_matrix_get(M, i, j);
    return sqrt(s);
}

static double norm1(const gsl_matrix *M)
{
    double best = 0.0;
    size_t i, j;

    for (j = 0; j < M->size2; j++) {
        double s = 0.0;
        for (i = 0; i < M->size1; i++)
            s += fabs(gsl_matrix_get(M, i, j));
        if (s > best || isnan(s))
            best = s;
    }
    return best;
}

static void symmetrize(gsl_matrix *M)
{
    size_t i, j;

    for (i = 0; i < M->size1; i++)
        for (j = i + 1; j < M->size2; j++) {
            const double v = 0.5 * (gsl_matrix_get(M, i, j) + gsl_matrix_get(M, j, i));
            gsl_matrix_set(M, i, j, v);
            gsl_matrix_set(M, j, i, v);
        }
}

/* In-place Cholesky M = L L^T of a symmetric matrix (lower triangle read);
 * the upper triangle is zeroed.  Returns RIGMAT_NONE, or the column where a
 * pivot is not positive (the matrix is not positive definite). */
static size_t cholesky(gsl_matrix *M)
{
    const size_t n = M->size1;
    size_t i, j, k;

    for (j = 0; j < n; j++) {
        double d = gsl_matrix_get(M, j, j);
        for (k = 0; k < j; k++)
            d -= gsl_matrix_get(M, j, k) * gsl_matrix_get(M, j, k);
        if (!(d > 0.0) || !isfinite(d))
            return j;
        d = sqrt(d);
        gsl_matrix_set(M, j, j, d);
        for (i = j + 1; i < n; i++) {
            double s = gsl_matrix_get(M, i, j);
            for (k = 0; k < j; k++)
                s -= gsl_matrix_get(M, i, k) * gsl_matrix_get(M, j, k);
            gsl_matrix_set(M, i, j, s / d);
        }
        for (i = 0; i < j; i++)
            gsl_matrix_set(M, i, j, 0.0);
    }
    return RIGMAT_NONE;
}

/* Solve L L^T Y = Y in place (Y m x n) with L from cholesky(). */
static int chol_solve(const gsl_matrix *L, gsl_matrix *Y)
{
    int gs = gsl_blas_dtrsm(CblasLeft, CblasLower, CblasNoTrans, CblasNonUnit, 1.0, L, Y);
    if (gs == 0)
        gs = gsl_blas_dtrsm(CblasLeft, CblasLower, CblasTrans, CblasNonUnit, 1.0, L, Y);
    return gs;
}

static size_t argmax_complex(const gsl_vector *v, size_t n)
{
    size_t i, best = 0;
    double bv = -1.0;

    /* v holds [a; b] for the complex vector a + i b */
    for (i = 0; i < n; i++) {
        const double a = gsl_vector_get(v, i), b = gsl_vector_get(v, n + i);
        if (a * a + b * b > bv) {
            bv = a * a + b * b;
            best = i;
        }
    }
    return best;
}

/* The gain Kt = (R + B^T X B)^-1 (B^T X Aop + S^T) (m x n) for the given X,
 * with Nt = B^T X Aop + S^T kept (S may be NULL).  Returns RIGMAT_NONE, or
 * the column where R + B^T X B is not positive definite; *gs receives a
 * BLAS status. */
static size_t gain(rigmat_riccati_ws *w, const gsl_matrix *Aop, const gsl_matrix *B,
                   const gsl_matrix *R, const gsl_matrix *S, const gsl_matrix *X, int *gs)
{
    size_t bad;

    *gs = rigmat_dgemm(&w->blas, CblasNoTrans, CblasNoTrans, 1.0, X, B, 0.0, w->XB);
    gsl_matrix_memcpy(w->Rx, R);
    symmetrize(w->Rx);
    *gs |= rigmat_dgemm(&w->blas, CblasTrans, CblasNoTrans, 1.0, B, w->XB, 1.0, w->Rx);
    symmetrize(w->Rx);
    *gs |= rigmat_dgemm(&w->blas, CblasTrans, CblasNoTrans, 1.0, w->XB, Aop, 0.0, w->Nt);
    if (S != NULL) {
        size_t i, j;
        for (i = 0; i < w->m; i++)
            for (j = 0; j < w->n; j++)
                gsl_matrix_set(w->Nt, i, j, gsl_matrix_get(w->Nt, i, j) + gsl_matrix_get(S, j, i));
    }
    bad = cholesky(w->Rx);
    if (bad != RIGMAT_NONE)
        return bad;
    gsl_matrix_memcpy(w->Kt, w->Nt);
    *gs |= chol_solve(w->Rx, w->Kt);
    return RIGMAT_NONE;
}

double rigmat_riccati_residual(const gsl_matrix *A, const gsl_matrix *B, const gsl_matrix *Q,
                               const gsl_matrix *R, const gsl_matrix *S, const gsl_matrix *X,
                               rigmat_riccati_ws *w)
{
    double num, den;
    int gs = 0;

    if (gain(w, A, B, R, S, X, &gs) != RIGMAT_NONE || gs != 0)
        return (double)NAN;
    /* T2 = A^T X A; W = Nt^T K = (A^T X B + S) K */
    gs |= rigmat_dgemm(&w->blas, CblasNoTrans, CblasNoTrans, 1.0, X, A, 0.0, w->T1);
    gs |= rigmat_dgemm(&w->blas, CblasTrans, CblasNoTrans, 1.0, A, w->T1, 0.0, w->T2);
    gs |= rigmat_dgemm(&w->blas, CblasTrans, CblasNoTrans, 1.0, w->Nt, w->Kt, 0.0, w->W);
    if (gs != 0)
        return (double)NAN;
    den = fro(X) + fro(w->T2) + fro(w->W) + fro(Q);
    gsl_matrix_memcpy(w->T1, w->T2);
    gsl_matrix_sub(w->T1, X);
    gsl_matrix_sub(w->T1, w->W);
    gsl_matrix_add(w->T1, Q);
    num = fro(w->T1);
    return den > 0.0 ? num / den : num;
}

/* Overwrite Y (n x k) with W^-1 Y, W factored in w->W / w->perm. */
static int lu_solve_cols(rigmat_riccati_ws *w, gsl_matrix *Y)
{
    size_t j;
    int gs = 0;

    for (j = 0; j < Y->size2; j++) {
        gsl_vector_view c = gsl_matrix_column(Y, j);
        gs |= gsl_linalg_LU_svx(w->W, w->perm, &c.vector);
    }
    return gs;
}

/* SDA on (A0, G0, H0) -> w->Hk.  Returns 0 when converged, 1 when not
 * (max_iter, a singular I + G H or a non-finite update). */
static int sda(rigmat_riccati_ws *w, const gsl_matrix *A0, const gsl_matrix *G0,
               const gsl_matrix *H0, const rigmat_riccati_opts *o, size_t *iters, double *update)
{
    const size_t n = w->n;
    size_t k, i;
    int signum, gs = 0;

    gsl_matrix_memcpy(w->Ak, A0);
    gsl_matrix_memcpy(w->Gk, G0);
    gsl_matrix_memcpy(w->Hk, H0);
    symmetrize(w->Gk);
    symmetrize(w->Hk);
    *update = (double)NAN;
    for (k = 1; k <= o->max_iter; k++) {
        double upd, h;
        *iters = k;
        gs |= rigmat_dgemm(&w->blas, CblasNoTrans, CblasNoTrans, 1.0, w->Gk, w->Hk, 0.0, w->W);
        for (i = 0; i < n; i++)
            gsl_matrix_set(w->W, i, i, gsl_matrix_get(w->W, i, i) + 1.0);
        gs |= gsl_linalg_LU_decomp(w->W, w->perm, &signum);
        for (i = 0; i < n; i++)
            if (gsl_matrix_get(w->W, i, i) == 0.0)
                return 1;
        gsl_matrix_memcpy(w->Y1, w->Ak);
        gsl_matrix_memcpy(w->Y2, w->Gk);
        gs |= lu_solve_cols(w, w->Y1);
        gs |= lu_solve_cols(w, w->Y2);
        /* H += A^T H W^-1 A */
        gs |= rigmat_dgemm(&w->blas, CblasNoTrans, CblasNoTrans, 1.0, w->Hk, w->Y1, 0.0, w->T1);
        gs |= rigmat_dgemm(&w->blas, CblasTrans, CblasNoTrans, 1.0, w->Ak, w->T1, 0.0, w->T2);
        upd = norm1(w->T2);
        gsl_matrix_add(w->Hk, w->T2);
        symmetrize(w->Hk);
        /* G += A W^-1 G A^T */
        gs |= rigmat_dgemm(&w->blas, CblasNoTrans, CblasTrans, 1.0, w->Y2, w->Ak, 0.0, w->T1);
        gs |= rigmat_dgemm(&w->blas, CblasNoTrans, CblasNoTrans, 1.0, w->Ak, w->T1, 0.0, w->T2);
        gsl_matrix_add(w->Gk, w->T2);
        symmetrize(w->Gk);
        /* A = A W^-1 A */
        gs |= rigmat_dgemm(&w->blas, CblasNoTrans, CblasNoTrans, 1.0, w->Ak, w->Y1, 0.0, w->T1);
        gsl_matrix_memcpy(w->Ak, w->T1);
        if (gs != 0)
            return 1;
        h = norm1(w->Hk);
        *update = h > 0.0 ? upd / h : (upd > 0.0 ? HUGE_VAL : 0.0);
        if (!isfinite(*update) || !isfinite(norm1(w->Gk)))
            return 1;
        if (*update <= o->rtol)
            return 0;
    }
    return 1;
}

/* Smith's doubling for the Stein equation X = Ac^T X Ac + Qk (Ac in Y1, Qk
 * in Y2) into Hk; Ak, T1, T2 scratch.  0 when converged. */
static int stein(rigmat_riccati_ws *w, const rigmat_riccati_opts *o)
{
    size_t k;
    int gs = 0;

    gsl_matrix_memcpy(w->Hk, w->Y2);
    gsl_matrix_memcpy(w->Ak, w->Y1);
    for (k = 0; k < o->max_iter; k++) {
        double upd, h;
        gs |= rigmat_dgemm(&w->blas, CblasNoTrans, CblasNoTrans, 1.0, w->Hk, w->Ak, 0.0, w->T1);
        gs |= rigmat_dgemm(&w->blas, CblasTrans, CblasNoTrans, 1.0, w->Ak, w->T1, 0.0, w->T2);
        upd = norm1(w->T2);
        gsl_matrix_add(w->Hk, w->T2);
        symmetrize(w->Hk);
        gs |= rigmat_dgemm(&w->blas, CblasNoTrans, CblasNoTrans, 1.0, w->Ak, w->Ak, 0.0, w->T1);
        gsl_matrix_memcpy(w->Ak, w->T1);
        h = norm1(w->Hk);
        if (gs != 0 || !isfinite(upd) || !isfinite(h))
            return 1;
        if (upd <= o->rtol * h || h == 0.0)
            return 0;
    }
    return 1;
}

/* Newton's method in Hewer's form on the transformed problem (Ab, B, R,
 * Qb), from the gain in w->Kt, into w->Hk.  0 when converged. */
static int newton(rigmat_riccati_ws *w, const gsl_matrix *B, const gsl_matrix *R,
                  const rigmat_riccati_opts *o, size_t *steps)
{
    double prev = HUGE_VAL;
    size_t i;
    int gs = 0;

    gsl_matrix_set_zero(w->X2);
    for (i = 1; i <= o->newton_max; i++) {
        double change;
        *steps = i;
        /* Ac = Ab - B K; Qk = Qb + K^T R K */
        gsl_matrix_memcpy(w->Y1, w->Ab);
        gs |= rigmat_dgemm(&w->blas, CblasNoTrans, CblasNoTrans, -1.0, B, w->Kt, 1.0, w->Y1);
        gs |= rigmat_dgemm(&w->blas, CblasNoTrans, CblasNoTrans, 1.0, R, w->Kt, 0.0, w->Nt);
        gsl_matrix_memcpy(w->Y2, w->Qb);
        gs |= rigmat_dgemm(&w->blas, CblasTrans, CblasNoTrans, 1.0, w->Kt, w->Nt, 1.0, w->Y2);
        symmetrize(w->Y2);
        if (gs != 0 || stein(w, o) != 0)
            return 1;
        gsl_matrix_memcpy(w->T1, w->Hk);
        gsl_matrix_sub(w->T1, w->X2);
        change = norm1(w->T1) / (norm1(w->Hk) > 0.0 ? norm1(w->Hk) : 1.0);
        gsl_matrix_memcpy(w->X2, w->Hk);
        if (gain(w, w->Ab, B, R, NULL, w->X2, &gs) != RIGMAT_NONE || gs != 0)
            return 1;
        /* converged, or stalled at round-off (Newton's change can rise while far off) */
        if (change <= o->newton_rtol || (change >= prev && prev <= NEWTON_STALL))
            return 0;
        prev = change;
    }
    return 1;
}

/* Smallest singular value (relative to scale) of the complex p x q matrix
 * X + i Y (p >= q), written into w->P by the caller as the real form
 * [[X, -Y], [Y, X]] (2p x 2q); the right singular vector is left in
 * column 2q - 1 of w->V (as [a; b], a + i b).  -1 when the SVD fails. */
static double pbh_smin(rigmat_riccati_ws *w, size_t p, size_t q, double scale)
{
    gsl_matrix_view Pv = gsl_matrix_submatrix(w->P, 0, 0, 2 * p, 2 * q);
    gsl_matrix_view Vv = gsl_matrix_submatrix(w->V, 0, 0, 2 * q, 2 * q);
    gsl_vector_view sv = gsl_vector_subvector(w->sv, 0, 2 * q);
    gsl_vector_view wk = gsl_vector_subvector(w->svw, 0, 2 * q);

    if (gsl_linalg_SV_decomp(&Pv.matrix, &Vv.matrix, &sv.vector, &wk.vector) != 0)
        return -1.0;
    return gsl_vector_get(&sv.vector, 2 * q - 1) / scale;
}

static void put_block(gsl_matrix *P, size_t p, size_t q, size_t i, size_t j, double x, double y)
{
    /* entry (i, j) of X + i Y into the real form [[X, -Y], [Y, X]] */
    gsl_matrix_set(P, i, j, x);
    gsl_matrix_set(P, i, q + j, -y);
    gsl_matrix_set(P, p + i, j, y);
    gsl_matrix_set(P, p + i, q + j, x);
}

/* The PBH refusals of riccati.h on (Ab, B) and (F = Qb^1/2, Ab).  Fills
 * info; returns 0 (none), 1 (a defect), -1 (a GSL failure). */
/* Fill info->right (from eigenvector column k of w->Z) and info->left (the
 * null vector of (Ab - z I)^H) for the eigenvalue z = re + i im of Ab. */
static int eigvec_sides(rigmat_riccati_ws *w, size_t k, double re, double im,
                        rigmat_riccati_info *info)
{
    const size_t n = w->n;
    double best = -1.0;
    size_t i, j;

    info->right = 0;
    for (i = 0; i < n; i++) {
        const double a = gsl_complex_abs(gsl_matrix_complex_get(w->Z, i, k));
        if (a > best) {
            best = a;
            info->right = i;
        }
    }
    gsl_matrix_set_zero(w->P);
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++)
            put_block(w->P, n, n, i, j, gsl_matrix_get(w->Ab, j, i) - (i == j ? re : 0.0),
                      i == j ? im : 0.0);
    if (pbh_smin(w, n, n, 1.0) < 0.0)
        return -1;
    {
        gsl_vector_view v = gsl_matrix_column(w->V, 2 * n - 1);
        info->left = argmax_complex(&v.vector, n);
    }
    return 0;
}

static int pbh(rigmat_riccati_ws *w, const gsl_matrix *B, const rigmat_riccati_opts *o,
               double thresh, rigmat_riccati_info *info)
{
    const size_t n = w->n, m = w->m;
    const double na = fro(w->Ab) > 1.0 ? fro(w->Ab) : 1.0;
    const double nf = fro(w->F);
    size_t i, j, k;

    gsl_matrix_memcpy(w->T1, w->Ab);
    if (gsl_eigen_nonsymmv(w->T1, w->z, w->Z, w->nw) != 0)
        return -1;
    for (j = 0; j < m; j++) {
        gsl_vector_const_view c = gsl_matrix_const_column(B, j);
        const double cn = gsl_blas_dnrm2(&c.vector);
        gsl_vector_set(w->bs, j, cn > 0.0 ? na / cn : 0.0);
    }
    info->margin = HUGE_VAL;
    for (k = 0; k < n; k++) {
        const gsl_complex zk = gsl_vector_complex_get(w->z, k);
        const double re = GSL_REAL(zk), im = GSL_IMAG(zk), mag = gsl_complex_abs(zk);
        double s;
        if (mag >= 1.0 - o->circle_tol) {
            /* M^H = [Ab^T - conj(z) I; Bs^T], (n + m) x n */
            const size_t p = n + m;
            gsl_matrix_set_zero(w->P);
            for (i = 0; i < n; i++)
                for (j = 0; j < n; j++)
                    put_block(w->P, p, n, i, j, gsl_matrix_get(w->Ab, j, i) - (i == j ? re : 0.0),
                              i == j ? im : 0.0);
            for (i = 0; i < m; i++)
                for (j = 0; j < n; j++)
                    put_block(w->P, p, n, n + i, j,
                              gsl_matrix_get(B, j, i) * gsl_vector_get(w->bs, i), 0.0);
            s = pbh_smin(w, p, n, na);
            if (s < 0.0)
                return -1;
            if (s < info->margin)
                info->margin = s;
            if (s <= thresh) {
                gsl_vector_view v = gsl_matrix_column(w->V, 2 * n - 1);
                info->defect = RIGMAT_RICCATI_UNSTABILIZABLE;
                info->re = re;
                info->im = im;
                info->index = argmax_complex(&v.vector, n);
                return eigvec_sides(w, k, re, im, info) < 0 ? -1 : 1;
            }
        }
        if (fabs(mag - 1.0) <= o->circle_tol) {
            /* [Ab - z I; F], 2n x n */
            const size_t p = 2 * n;
            const double fs = nf > 0.0 ? na / nf : 0.0;
            gsl_matrix_set_zero(w->P);
            for (i = 0; i < n; i++)
                for (j = 0; j < n; j++) {
                    put_block(w->P, p, n, i, j, gsl_matrix_get(w->Ab, i, j) - (i == j ? re : 0.0),
                              i == j ? -im : 0.0);
                    put_block(w->P, p, n, n + i, j, gsl_matrix_get(w->F, i, j) * fs, 0.0);
                }
            s = pbh_smin(w, p, n, na);
            if (s < 0.0)
                return -1;
            if (s <= thresh) {
                gsl_vector_view v = gsl_matrix_column(w->V, 2 * n - 1);
                info->defect = RIGMAT_RICCATI_UNIT_CIRCLE;
                info->re = re;
                info->im = im;
                info->margin = s;
                info->index = argmax_complex(&v.vector, n);
                return eigvec_sides(w, k, re, im, info) < 0 ? -1 : 1;
            }
        }
    }
    return 0;
}

/* Eigenvalues of A - B K (K in w->Kt) into w->z (vectors w->Z); the
 * spectral radius and the index of its largest eigenvector entry. */
static int closed_loop(rigmat_riccati_ws *w, const gsl_matrix *A, const gsl_matrix *B, double *rho,
                       size_t *at, double *re, double *im)
{
    size_t k, i, best = 0;
    double r = 0.0;

    gsl_matrix_memcpy(w->T1, A);
    if (rigmat_dgemm(&w->blas, CblasNoTrans, CblasNoTrans, -1.0, B, w->Kt, 1.0, w->T1) != 0)
        return -1;
    if (gsl_eigen_nonsymmv(w->T1, w->z, w->Z, w->nw) != 0)
        return -1;
    for (k = 0; k < w->n; k++) {
        const double a = gsl_complex_abs(gsl_vector_complex_get(w->z, k));
        if (a > r || isnan(a)) {
            r = a;
            best = k;
        }
    }
    *rho = r;
    *re = GSL_REAL(gsl_vector_complex_get(w->z, best));
    *im = GSL_IMAG(gsl_vector_complex_get(w->z, best));
    *at = 0;
    r = -1.0;
    for (i = 0; i < w->n; i++) {
        const double a = gsl_complex_abs(gsl_matrix_complex_get(w->Z, i, best));
        if (a > r) {
            r = a;
            *at = i;
        }
    }
    return 0;
}

static const char *defect_words(rigmat_riccati_defect d)
{
    switch (d) {
    case RIGMAT_RICCATI_FINE:
        return "no defect";
    case RIGMAT_RICCATI_R_NOT_PD:
        return "R is not positive definite";
    case RIGMAT_RICCATI_Q_INDEFINITE:
        return "Q - S R^-1 S^T is not positive semidefinite";
    case RIGMAT_RICCATI_UNSTABILIZABLE:
        return "a mode on or outside the unit circle is not stabilizable";
    case RIGMAT_RICCATI_UNIT_CIRCLE:
        return "a mode on the unit circle is not seen by Q";
    case RIGMAT_RICCATI_NO_CONVERGENCE:
        return "the doubling iteration did not converge";
    case RIGMAT_RICCATI_NOT_STABILIZING:
        return "the solution found is not stabilizing";
    case RIGMAT_RICCATI_RESIDUAL:
        return "the residual is too large";
    }
    return "unknown defect";
}

static rigmat_status refuse(rigmat_error *err, rigmat_riccati_info *info, rigmat_riccati_defect d)
{
    info->defect = d;
    if (d == RIGMAT_RICCATI_UNSTABILIZABLE || d == RIGMAT_RICCATI_UNIT_CIRCLE ||
        d == RIGMAT_RICCATI_NOT_STABILIZING)
        return RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "riccati: %s (z = %.6g%+.6gi, state %zu)",
                           defect_words(d), info->re, info->im, info->index);
    if (d == RIGMAT_RICCATI_R_NOT_PD)
        return RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "riccati: %s (column %zu)", defect_words(d),
                           info->index);
    if (d == RIGMAT_RICCATI_RESIDUAL)
        return RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "riccati: %s (%.3g)", defect_words(d),
                           info->residual);
    return RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "riccati: %s", defect_words(d));
}

/* A refusal after the iteration: name the likely culprit when the PBH
 * tests find one at the looser threshold pbh_rtol_late (a defective
 * eigenvalue is computed only to about sqrt(eps), so its rank defect can
 * hide from the strict test); otherwise refuse with d. */
static rigmat_status late_refusal(rigmat_riccati_ws *w, const gsl_matrix *B,
                                  const rigmat_riccati_opts *o, rigmat_riccati_info *info,
                                  rigmat_riccati_defect d, rigmat_error *err)
{
    rigmat_riccati_info probe = *info;

    if (pbh(w, B, o, o->pbh_rtol_late, &probe) > 0) {
        probe.iterations = info->iterations;
        probe.newton_steps = info->newton_steps;
        *info = probe;
        return refuse(err, info, info->defect);
    }
    return refuse(err, info, d);
}

rigmat_status rigmat_riccati_solve(const gsl_matrix *A, const gsl_matrix *B, const gsl_matrix *Q,
                                   const gsl_matrix *R, const gsl_matrix *S,
                                   const rigmat_riccati_opts *o, rigmat_riccati_ws *w,
                                   gsl_matrix *X, gsl_matrix *K, gsl_vector_complex *poles,
                                   rigmat_riccati_info *info_out, rigmat_error *err)
{
    rigmat_riccati_info local;
    rigmat_riccati_info *info = info_out != NULL ? info_out : &local;
    const rigmat_riccati_opts def = rigmat_riccati_opts_default();
    size_t n, m, i, j, bad;
    double qscale, qmin = HUGE_VAL, rho, re, im;
    int gs = 0, r, stab;

    info->iterations = 0;
    info->newton_steps = 0;
    info->update = (double)NAN;
    info->residual = (double)NAN;
    info->rho = (double)NAN;
    info->defect = RIGMAT_RICCATI_FINE;
    info->re = info->im = 0.0;
    info->margin = (double)NAN;
    info->index = info->right = info->left = RIGMAT_NONE;
    if (o == NULL)
        o = &def;
    if (w == NULL || A == NULL || B == NULL || Q == NULL || R == NULL || X == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "riccati: a required matrix is missing");
    n = w->n;
    m = w->m;
    if (A->size1 != n || A->size2 != n || B->size1 != n || B->size2 != m || Q->size1 != n ||
        Q->size2 != n || R->size1 != m || R->size2 != m || X->size1 != n || X->size2 != n ||
        (S != NULL && (S->size1 != n || S->size2 != m)) ||
        (K != NULL && (K->size1 != m || K->size2 != n)) || (poles != NULL && poles->size != n))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE,
                           "riccati: sizes do not match the workspace (%zu states, %zu inputs)", n,
                           m);

    /* R = L L^T; Bt = L^-1 B^T, St = L^-1 S^T */
    gsl_matrix_memcpy(w->L, R);
    symmetrize(w->L);
    bad = cholesky(w->L);
    if (bad != RIGMAT_NONE) {
        info->index = bad;
        return refuse(err, info, RIGMAT_RICCATI_R_NOT_PD);
    }
    gsl_matrix_transpose_memcpy(w->Bt, B);
    gs |= gsl_blas_dtrsm(CblasLeft, CblasLower, CblasNoTrans, CblasNonUnit, 1.0, w->L, w->Bt);
    if (S != NULL) {
        gsl_matrix_transpose_memcpy(w->St, S);
        gs |= gsl_blas_dtrsm(CblasLeft, CblasLower, CblasNoTrans, CblasNonUnit, 1.0, w->L, w->St);
    } else {
        gsl_matrix_set_zero(w->St);
    }
    /* G = B R^-1 B^T, Ab = A - B R^-1 S^T, Qb = Q - S R^-1 S^T */
    gs |= rigmat_dgemm(&w->blas, CblasTrans, CblasNoTrans, 1.0, w->Bt, w->Bt, 0.0, w->G);
    symmetrize(w->G);
    gsl_matrix_memcpy(w->Ab, A);
    gs |= rigmat_dgemm(&w->blas, CblasTrans, CblasNoTrans, -1.0, w->Bt, w->St, 1.0, w->Ab);
    gs |= rigmat_dgemm(&w->blas, CblasTrans, CblasNoTrans, 1.0, w->St, w->St, 0.0, w->T2);
    gsl_matrix_memcpy(w->Qb, Q);
    symmetrize(w->Qb);
    qscale = fro(w->Qb) + fro(w->T2);
    gsl_matrix_sub(w->Qb, w->T2);
    symmetrize(w->Qb);
    if (gs != 0)
        return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "riccati: a matrix product failed");

    /* Qb >= 0, and F = diag(sqrt(ev)) V^T, a square root up to rotation */
    gsl_matrix_memcpy(w->T1, w->Qb);
    if (gsl_eigen_symmv(w->T1, w->ev, w->X2, w->sw) != 0)
        return RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "riccati: the eigenvalues of Q did not converge");
    for (i = 0; i < n; i++)
        if (gsl_vector_get(w->ev, i) < qmin)
            qmin = gsl_vector_get(w->ev, i);
    if (qmin < -100.0 * (double)n * DBL_EPSILON * qscale)
        return refuse(err, info, RIGMAT_RICCATI_Q_INDEFINITE);
    for (i = 0; i < n; i++) {
        const double e = gsl_vector_get(w->ev, i);
        const double s = e > 0.0 ? sqrt(e) : 0.0;
        for (j = 0; j < n; j++)
            gsl_matrix_set(w->F, i, j, s * gsl_matrix_get(w->X2, j, i));
    }

    r = pbh(w, B, o, o->pbh_rtol, info);
    if (r < 0)
        return RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "riccati: an eigenvalue or SVD step failed");
    if (r > 0)
        return refuse(err, info, info->defect);

    /* SDA on the true Qb; accept when the result stabilizes */
    stab = 0;
    if (sda(w, w->Ab, w->G, w->Qb, o, &info->iterations, &info->update) == 0) {
        gsl_matrix_memcpy(X, w->Hk);
        bad = gain(w, A, B, R, S, X, &gs);
        if (bad == RIGMAT_NONE && gs == 0) {
            if (closed_loop(w, A, B, &rho, &info->index, &re, &im) != 0)
                return RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "riccati: closed-loop eigenvalues failed");
            stab = rho < 1.0 - o->circle_tol;
        }
    }
    if (!stab) {
        /* SDA on Qb + delta I for a stabilizing gain, then Newton on Qb */
        const double qn = fro(w->Qb), gn = fro(w->G);
        const double delta = qn > 0.0 ? 1e-3 * qn : (gn > 0.0 ? 1.0 / gn : 1.0);
        gsl_matrix_memcpy(X, w->Qb);
        for (i = 0; i < n; i++)
            gsl_matrix_set(X, i, i, gsl_matrix_get(X, i, i) + delta);
        if (sda(w, w->Ab, w->G, X, o, &info->iterations, &info->update) != 0)
            return late_refusal(w, B, o, info, RIGMAT_RICCATI_NO_CONVERGENCE, err);
        gsl_matrix_memcpy(X, w->Hk);
        if (gain(w, w->Ab, B, R, NULL, X, &gs) != RIGMAT_NONE || gs != 0)
            return late_refusal(w, B, o, info, RIGMAT_RICCATI_NO_CONVERGENCE, err);
        if (newton(w, B, R, o, &info->newton_steps) != 0)
            return late_refusal(w, B, o, info, RIGMAT_RICCATI_NO_CONVERGENCE, err);
        gsl_matrix_memcpy(X, w->X2);
        bad = gain(w, A, B, R, S, X, &gs);
        if (bad == RIGMAT_NONE && gs == 0 &&
            closed_loop(w, A, B, &rho, &info->index, &re, &im) != 0)
            return RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "riccati: closed-loop eigenvalues failed");
    }
    if (bad != RIGMAT_NONE || gs != 0) {
        info->index = bad;
        return refuse(err, info, RIGMAT_RICCATI_R_NOT_PD);
    }
    info->rho = rho;
    if (!(rho < 1.0 - o->circle_tol)) {
        info->re = re;
        info->im = im;
        info->right = info->left = info->index;
        return late_refusal(w, B, o, info, RIGMAT_RICCATI_NOT_STABILIZING, err);
    }
    info->index = RIGMAT_NONE;
    if (K != NULL)
        gsl_matrix_memcpy(K, w->Kt);
    if (poles != NULL)
        gsl_vector_complex_memcpy(poles, w->z);
    info->residual = rigmat_riccati_residual(A, B, Q, R, S, X, w);
    if (!(info->residual <= o->residual_max))
        return refuse(err, info, RIGMAT_RICCATI_RESIDUAL);
    return RIGMAT_OK;
}
