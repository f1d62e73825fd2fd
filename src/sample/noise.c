/* noise.c - Qd by Van Loan's block method with doubling or, when its error
 * bound is too large, by the eigen-decomposition with a residual bound, Rd from the sensor
 * figures, and the cross-covariance of a disturbance that reaches a
 * sensor directly (noise.h). */
#include "invariant.h"
#include "noise.h"
#include "sizes.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <float.h>
#include <stdio.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_complex_math.h>
#include <gsl/gsl_eigen.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_math.h>

rigmat_noise_opts rigmat_noise_opts_default(void)
{
    rigmat_noise_opts o;

    o.step_norm = 0.5;
    o.expm_flags = 0;
    o.rtol = 1e-6;
    return o;
}

/* The eigen route is tried when the doubling's bound exceeds this, and the
 * smaller of the two bounds wins: on the 1e-9 kg / 1e18 N/m oscillator the
 * doubling alone is certified to 6.4e-8 (and off by 6.3e-8), the eigen
 * route to 4e-12. */
static const double eigen_above = 1e-10;

static gsl_matrix *sq(size_t n, int *bad)
{
    gsl_matrix *m = rigmat_matrix_calloc(n, n);

    if (m == NULL)
        *bad = 1;
    return m;
}

rigmat_noise_ws *rigmat_noise_ws_alloc(size_t nx, size_t nw)
{
    rigmat_noise_ws *w;
    const size_t nb2 = rigmat_size_mul_add(nx, 2, 0), nbw = rigmat_size_mul_add(nx, 1, nw);
    const size_t nb = nb2 > nbw ? nb2 : nbw;
    int bad = 0;

    if (nx == 0)
        return NULL;
    w = calloc(1, sizeof *w);
    if (w == NULL)
        return NULL;
    w->nx = nx;
    w->nw = nw;
    if (nw == 0) {
        /* no disturbance: Qd is zero and nothing reads an exponential;
         * rigmat_noise_build needs T2 only (the doubling's workspace of a
         * 2000-state model was 1.3 GB of pages cleared and never used) */
        w->T2 = sq(nx, &bad);
        if (bad) {
            rigmat_noise_ws_free(w);
            return NULL;
        }
        return w;
    }
    w->expm = rigmat_expm_ws_alloc(nb);
    w->M = sq(nb, &bad);
    w->F = sq(nb, &bad);
    w->W = sq(nx, &bad);
    w->Phi = sq(nx, &bad);
    w->Q = sq(nx, &bad);
    w->T1 = sq(nx, &bad);
    w->T2 = sq(nx, &bad);
    w->Ab = sq(nx, &bad);
    w->Ad = sq(nx, &bad);
    w->D = gsl_vector_alloc(nx);
    if (w->D == NULL)
        bad = 1;
    if (nw > 0)
        w->G = rigmat_matrix_calloc(nx, nw);
    if (nw > 0 && w->G == NULL)
        bad = 1;
    if (bad || w->expm == NULL) {
        rigmat_noise_ws_free(w);
        return NULL;
    }
    return w;
}

void rigmat_noise_ws_free(rigmat_noise_ws *w)
{
    size_t i;

    if (w == NULL)
        return;
    rigmat_expm_ws_free(w->expm);
    {
        gsl_matrix *const m[] = { w->M, w->F, w->W, w->Phi, w->Q, w->T1, w->T2, w->G, w->Ab, w->Ad };
        for (i = 0; i < sizeof m / sizeof m[0]; i++)
            if (m[i] != NULL)
                gsl_matrix_free(m[i]);
    }
    if (w->D != NULL)
        gsl_vector_free(w->D);
    free(w);
}

static gsl_matrix_view lead(gsl_matrix *m, size_t r, size_t c)
{
    return gsl_matrix_submatrix(m, 0, 0, r, c);
}

/* Q = (Q + Q^T) / 2 */
static void symmetrize(gsl_matrix *Q)
{
    size_t i, j;

    for (i = 0; i < Q->size1; i++)
        for (j = i + 1; j < Q->size2; j++) {
            const double v = 0.5 * (gsl_matrix_get(Q, i, j) + gsl_matrix_get(Q, j, i));
            gsl_matrix_set(Q, i, j, v);
            gsl_matrix_set(Q, j, i, v);
        }
}

static rigmat_status gsl_fail(rigmat_error *err, const char *what, int gs)
{
    return RIGMAT_FAIL(err, gs == GSL_ENOMEM ? RIGMAT_ENOMEM : RIGMAT_EINTERNAL, "%s failed: %s",
                       what, gsl_strerror(gs));
}

/* max(||M||_1, ||M||_inf): both norms are submultiplicative, so this is a
 * bound for products with either side transposed. */
static double nrm(const gsl_matrix *M)
{
    double inf = 0.0;
    size_t i, j;

    for (i = 0; i < M->size1; i++) {
        double s = 0.0;
        for (j = 0; j < M->size2; j++)
            s += fabs(gsl_matrix_get(M, i, j));
        if (s > inf || isnan(s))
            inf = s;
    }
    return fmax(inf, rigmat_expm_norm1(M));
}

/* Why the doubling alone loses a stiff, lightly damped mode.  The number of
 * doublings s is set by ||A||_1 T, and an unbalanced A (a 1e-9 kg mass on a
 * 1e18 N/m spring with 1 N*s/m: the entry k/m = 1e27 next to 1) makes
 * ||A||_1 far larger than the modes: s = 81 for T = 1 ms, h = T / 2^81 =
 * 4e-28 s.  Over h the decay terms of the diagonal of Phi(h),
 * 1 - (c/m) h - w^2 h^2 / 2 (c/m h = 4e-19, w = 3.2e13 rad/s), are below the
 * rounding unit of 1, so the computed diagonal is exactly 1 and
 *     Phi(t) = [[1, t], [-w^2 t, 1]],  det = 1 + w^2 t^2 > 1,
 * a growing spiral where the true one decays (det = e^{-(c/m) t} < 1).  The
 * doublings keep the diagonal exactly 1 until w t reaches sqrt(u), at
 * t = 3e-22 s; an amplitude growth of about u/2 per such step, raised to
 * the power T / t = 3e18 by the remaining doublings, is about e^{167}, e^{333}
 * in a variance: Qd[0][0] = 1.9e132 instead of 5.0e-19 (a factor e^{347}).
 * With a 1 g mass on 1e16 N/m (s = 55, c/m h = 3e-17, w = 3.2e9 rad/s) the
 * same loss removes the damping (variance decay e^{-1} per period: 316
 * becomes an undamped 500) and adds a growth of a few per cent: 61 % too
 * large.  Balancing (A' = D^-1 A D) brings ||A'|| down to the size of the
 * modes (s = 37 and 24), so the decay per step is represented again, but an
 * error still grows like 2^s u along a mode that does not decay within h;
 * the bound below measures that growth, and the eigen route takes over when
 * it is too large. */
static rigmat_status vanloan_doubling(const gsl_matrix *A, const gsl_matrix *W, double T,
                                      const rigmat_noise_opts *o, rigmat_noise_ws *w,
                                      gsl_matrix *Q, unsigned *sout, double *bound,
                                      rigmat_error *err)
{
    const size_t n = A->size1;
    const double u = DBL_EPSILON / 2.0, gam = (double)n * u;
    gsl_matrix_view M = lead(w->M, 2 * n, 2 * n), F = lead(w->F, 2 * n, 2 * n);
    gsl_matrix_view Phi = lead(w->Phi, n, n), T1 = lead(w->T1, n, n);
    unsigned s = 0, it;
    double h, ratio, eP, eQ, p, q;
    size_t i, j;
    int gs;
    rigmat_status rc;

    *bound = HUGE_VAL;
    /* h = T / 2^s with ||A'||_1 h <= step_norm */
    ratio = rigmat_expm_norm1(A) * T / o->step_norm;
    if (!isfinite(ratio))
        return RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "process noise: A is not finite");
    if (ratio > 1.0) {
        int e;
        const double f = frexp(ratio, &e);
        s = (unsigned)(f == 0.5 ? e - 1 : e);
    }
    *sout = s;
    h = ldexp(T, -(int)s);
    /* M = [[-A h, W h], [0, A^T h]] */
    gsl_matrix_set_zero(&M.matrix);
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++) {
            gsl_matrix_set(&M.matrix, i, j, -h * gsl_matrix_get(A, i, j));
            gsl_matrix_set(&M.matrix, i, n + j, h * gsl_matrix_get(W, i, j));
            gsl_matrix_set(&M.matrix, n + i, n + j, h * gsl_matrix_get(A, j, i));
        }
    rc = rigmat_expm(&M.matrix, &F.matrix, o->expm_flags, w->expm, NULL, err);
    if (rc != RIGMAT_OK)
        return rc;
    /* Phi = F22^T, Q = F22^T F12 */
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++)
            gsl_matrix_set(&Phi.matrix, i, j, gsl_matrix_get(&F.matrix, n + j, n + i));
    {
        gsl_matrix_const_view F22 = gsl_matrix_const_submatrix(&F.matrix, n, n, n, n);
        gsl_matrix_const_view F12 = gsl_matrix_const_submatrix(&F.matrix, 0, n, n, n);
        gs = rigmat_dgemm(&w->expm->blas, CblasTrans, CblasNoTrans, 1.0, &F22.matrix, &F12.matrix,
                          0.0, Q);
        p = nrm(&Phi.matrix);
        eP = 8.0 * (double)(2 * n) * u * p;
        eQ = 8.0 * (double)(2 * n) * u * p * nrm(&F12.matrix) + gam * nrm(Q);
    }
    if (gs != GSL_SUCCESS)
        return gsl_fail(err, "matrix product", gs);
    symmetrize(Q);
    for (it = 0; it < s; it++) {
        p = nrm(&Phi.matrix);
        q = nrm(Q);
        eQ = (1.0 + p * p) * eQ + 2.0 * p * q * eP + gam * (2.0 * p * p + 1.0) * q;
        eP = 2.0 * p * eP + gam * p * p;
        /* Q <- Q + Phi Q Phi^T; Phi <- Phi^2 */
        gs = rigmat_dgemm(&w->expm->blas, CblasNoTrans, CblasNoTrans, 1.0, &Phi.matrix, Q, 0.0,
                          &T1.matrix);
        if (gs == GSL_SUCCESS)
            gs = rigmat_dgemm(&w->expm->blas, CblasNoTrans, CblasTrans, 1.0, &T1.matrix,
                              &Phi.matrix, 1.0, Q);
        if (gs == GSL_SUCCESS)
            gs = rigmat_dgemm(&w->expm->blas, CblasNoTrans, CblasNoTrans, 1.0, &Phi.matrix,
                              &Phi.matrix, 0.0, &T1.matrix);
        if (gs == GSL_SUCCESS)
            gs = gsl_matrix_memcpy(&Phi.matrix, &T1.matrix);
        if (gs != GSL_SUCCESS)
            return gsl_fail(err, "matrix product", gs);
        symmetrize(Q);
    }
    q = nrm(Q);
    if (isfinite(q) && isfinite(eQ))
        *bound = q > 0.0 ? eQ / q : (eQ > 0.0 ? HUGE_VAL : 0.0);
    return RIGMAT_OK;
}

/* (e^z - 1) / z for complex z = x + i y, without cancellation:
 * e^z - 1 = expm1(x) cos y - 2 sin^2(y/2) + i e^x sin y. */
static gsl_complex phi1(double x, double y)
{
    gsl_complex num, z;

    if (hypot(x, y) < 1e-3) {
        /* 1 + z/2 + z^2/6 + z^3/24 + z^4/120; the next term is below 2e-18 */
        gsl_complex t = gsl_complex_rect(1.0 / 120.0, 0.0);
        const double c[] = { 1.0 / 24.0, 1.0 / 6.0, 0.5, 1.0 };
        size_t k;
        z = gsl_complex_rect(x, y);
        for (k = 0; k < 4; k++)
            t = gsl_complex_add_real(gsl_complex_mul(t, z), c[k]);
        return t;
    }
    {
        const double sh = sin(0.5 * y);
        num = gsl_complex_rect(expm1(x) * cos(y) - 2.0 * sh * sh, exp(x) * sin(y));
    }
    return gsl_complex_div(num, gsl_complex_rect(x, y));
}

/* C = op(X) Y op(Z) for complex n x n (op: NoTrans or ConjTrans). */
static int zprod3(CBLAS_TRANSPOSE_t tx, const gsl_matrix_complex *X, const gsl_matrix_complex *Y,
                  CBLAS_TRANSPOSE_t tz, const gsl_matrix_complex *Z, gsl_matrix_complex *tmp,
                  gsl_matrix_complex *C)
{
    const gsl_complex one = gsl_complex_rect(1.0, 0.0), zero = gsl_complex_rect(0.0, 0.0);
    int gs = gsl_blas_zgemm(tx, CblasNoTrans, one, X, Y, zero, tmp);

    if (gs == GSL_SUCCESS)
        gs = gsl_blas_zgemm(CblasNoTrans, tz, one, tmp, Z, zero, C);
    return gs;
}

static double znrm(const gsl_matrix_complex *M)
{
    double r = 0.0, c = 0.0;
    size_t i, j;

    for (i = 0; i < M->size1; i++) {
        double s = 0.0, t = 0.0;
        for (j = 0; j < M->size2; j++) {
            s += gsl_complex_abs(gsl_matrix_complex_get(M, i, j));
            t += gsl_complex_abs(gsl_matrix_complex_get(M, j, i));
        }
        r = fmax(r, s);
        c = fmax(c, t);
    }
    return fmax(r, c);
}

/* Route 2 (noise.h): Q = Re(V X V^H) and its a posteriori bound (HUGE_VAL
 * when the Lyapunov operator is singular or the decomposition fails). */
static rigmat_status eigen_route(const gsl_matrix *A, const gsl_matrix *W, double T,
                                 const rigmat_noise_opts *o, rigmat_noise_ws *w, gsl_matrix *Q,
                                 double *bound, rigmat_error *err)
{
    const size_t n = A->size1;
    const double u = DBL_EPSILON / 2.0, gam = (double)n * u;
    gsl_matrix *Ac = rigmat_matrix_alloc(n, n);
    gsl_vector_complex *lam = gsl_vector_complex_alloc(n);
    gsl_matrix_complex *V = gsl_matrix_complex_alloc(n, n), *Vi = gsl_matrix_complex_alloc(n, n);
    gsl_matrix_complex *X = gsl_matrix_complex_alloc(n, n), *Y = gsl_matrix_complex_alloc(n, n);
    gsl_matrix_complex *Z = gsl_matrix_complex_alloc(n, n);
    gsl_permutation *perm = gsl_permutation_alloc(n);
    gsl_eigen_nonsymmv_workspace *ew = gsl_eigen_nonsymmv_alloc(n);
    gsl_matrix_view Ad = lead(w->Ad, n, n), R = lead(w->T1, n, n), S = lead(w->Phi, n, n);
    rigmat_status rc = RIGMAT_OK;
    double mumin = HUGE_VAL, kap, dAd, res, rnd, qn, an, wn, adn;
    size_t i, j;
    int gs, sgn;

    *bound = HUGE_VAL;
    if (!rigmat_size_matrix_ok(n, n, 2 * sizeof(double)) || Ac == NULL || lam == NULL || V == NULL || Vi == NULL || X == NULL || Y == NULL ||
        Z == NULL || perm == NULL || ew == NULL) {
        rc = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        goto done;
    }
    gsl_matrix_memcpy(Ac, A);
    gs = gsl_eigen_nonsymmv(Ac, lam, V, ew);
    if (gs != GSL_SUCCESS)
        goto done; /* no decomposition: no bound */
    /* Vi = V^-1 (Y holds the LU factors) */
    gsl_matrix_complex_memcpy(Y, V);
    gs = gsl_linalg_complex_LU_decomp(Y, perm, &sgn);
    for (i = 0; i < n && gs == GSL_SUCCESS; i++)
        if (gsl_complex_abs(gsl_matrix_complex_get(Y, i, i)) == 0.0)
            goto done; /* defective: no bound */
    if (gs == GSL_SUCCESS)
        gs = gsl_linalg_complex_LU_invert(Y, perm, Vi);
    if (gs != GSL_SUCCESS)
        goto done;
    kap = znrm(V) * znrm(Vi);
    /* X = Vi W Vi^H, then X_ij *= T phi1(mu_ij T) */
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++)
            gsl_matrix_complex_set(Z, i, j, gsl_complex_rect(gsl_matrix_get(W, i, j), 0.0));
    gs = zprod3(CblasNoTrans, Vi, Z, CblasConjTrans, Vi, Y, X);
    if (gs != GSL_SUCCESS) {
        rc = gsl_fail(err, "matrix product", gs);
        goto done;
    }
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++) {
            const gsl_complex li = gsl_vector_complex_get(lam, i);
            const gsl_complex lj = gsl_vector_complex_get(lam, j);
            const double mr = GSL_REAL(li) + GSL_REAL(lj), mi = GSL_IMAG(li) - GSL_IMAG(lj);
            const gsl_complex f = gsl_complex_mul_real(phi1(mr * T, mi * T), T);
            mumin = fmin(mumin, hypot(mr, mi));
            gsl_matrix_complex_set(X, i, j, gsl_complex_mul(gsl_matrix_complex_get(X, i, j), f));
        }
    gs = zprod3(CblasNoTrans, V, X, CblasConjTrans, V, Y, Z);
    if (gs != GSL_SUCCESS) {
        rc = gsl_fail(err, "matrix product", gs);
        goto done;
    }
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++)
            gsl_matrix_set(Q, i, j, GSL_REAL(gsl_matrix_complex_get(Z, i, j)));
    symmetrize(Q);
    if (!(mumin > 0.0) || !isfinite(kap))
        goto done; /* a singular Lyapunov operator: no bound */
    /* Ad = e^{A T} by the exponential, and its disagreement with V e^{L T} V^-1 */
    {
        gsl_matrix_view M = lead(w->M, n, n);
        gsl_matrix_memcpy(&M.matrix, A);
        gsl_matrix_scale(&M.matrix, T);
        rc = rigmat_expm(&M.matrix, &Ad.matrix, o->expm_flags, w->expm, NULL, err);
        if (rc != RIGMAT_OK)
            goto done;
    }
    for (i = 0; i < n; i++) {
        const gsl_complex li = gsl_vector_complex_get(lam, i);
        const gsl_complex e = gsl_complex_exp(gsl_complex_mul_real(li, T));
        for (j = 0; j < n; j++)
            gsl_matrix_complex_set(X, i, j,
                                   i == j ? e : gsl_complex_rect(0.0, 0.0));
    }
    gs = zprod3(CblasNoTrans, V, X, CblasNoTrans, Vi, Y, Z);
    if (gs != GSL_SUCCESS) {
        rc = gsl_fail(err, "matrix product", gs);
        goto done;
    }
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++)
            gsl_matrix_set(&R.matrix, i, j,
                           gsl_matrix_get(&Ad.matrix, i, j) - GSL_REAL(gsl_matrix_complex_get(Z, i, j)));
    dAd = nrm(&R.matrix);
    /* R = A Q + Q A^T - Ad W Ad^T + W */
    gsl_matrix_memcpy(&R.matrix, W);
    gs = rigmat_dgemm(&w->expm->blas, CblasNoTrans, CblasNoTrans, 1.0, A, Q, 1.0, &R.matrix);
    if (gs == GSL_SUCCESS)
        gs = rigmat_dgemm(&w->expm->blas, CblasNoTrans, CblasTrans, 1.0, Q, A, 1.0, &R.matrix);
    if (gs == GSL_SUCCESS)
        gs = rigmat_dgemm(&w->expm->blas, CblasNoTrans, CblasNoTrans, 1.0, &Ad.matrix, W, 0.0,
                          &S.matrix);
    if (gs == GSL_SUCCESS)
        gs = rigmat_dgemm(&w->expm->blas, CblasNoTrans, CblasTrans, -1.0, &S.matrix, &Ad.matrix,
                          1.0, &R.matrix);
    if (gs != GSL_SUCCESS) {
        rc = gsl_fail(err, "matrix product", gs);
        goto done;
    }
    res = nrm(&R.matrix);
    qn = nrm(Q);
    an = nrm(A);
    wn = nrm(W);
    adn = nrm(&Ad.matrix);
    /* rounding of R itself (each product gamma, the sums u), and the
     * uncertainty of Ad, taken as its disagreement between the two ways */
    rnd = (gam + u) * (2.0 * an * qn + adn * adn * wn + wn) + 2.0 * adn * dAd * wn;
    if (qn > 0.0 && isfinite(res) && isfinite(rnd))
        *bound = kap * kap * (res + rnd) / mumin / qn;
done:
    if (Ac != NULL)
        gsl_matrix_free(Ac);
    if (lam != NULL)
        gsl_vector_complex_free(lam);
    {
        gsl_matrix_complex *const c[] = { V, Vi, X, Y, Z };
        for (i = 0; i < sizeof c / sizeof c[0]; i++)
            if (c[i] != NULL)
                gsl_matrix_complex_free(c[i]);
    }
    if (perm != NULL)
        gsl_permutation_free(perm);
    if (ew != NULL)
        gsl_eigen_nonsymmv_free(ew);
    return rc;
}

rigmat_status rigmat_noise_qd(const gsl_matrix *A, const gsl_matrix *G, const double *intensity,
                              double period_s, const rigmat_noise_opts *o, rigmat_noise_ws *w,
                              gsl_matrix *Qd, unsigned *doublings, rigmat_error *err)
{
    size_t n, nw, i, j, k;
    unsigned s = 0, pass;
    int any = 0, gs;
    gsl_matrix_view W, Q, Ab;
    gsl_vector_view D;
    rigmat_status rc;

    if (doublings != NULL)
        *doublings = 0;
    if (A == NULL || Qd == NULL || w == NULL || o == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "process noise: missing argument");
    w->route = RIGMAT_QD_NONE;
    w->bound = 0.0;
    w->bound_vanloan = 0.0;
    w->bound_eigen = -1.0;
    n = A->size1;
    nw = G != NULL ? G->size2 : 0;
    if (A->size2 != n || Qd->size1 != n || Qd->size2 != n || (G != NULL && G->size1 != n))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "process noise: inconsistent sizes");
    if (n > w->nx)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE,
                           "process noise: workspace is for %zu states, model has %zu", w->nx, n);
    if (w->expm == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE,
                           "process noise: the workspace was made for no disturbance");
    if (!(period_s > 0.0) || !isfinite(period_s))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the sample period must be positive, got %g s",
                           period_s);
    if (!(o->step_norm > 0.0))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "process noise: step_norm must be positive");
    if (!(o->rtol > 0.0))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "process noise: rtol must be positive");
    for (k = 0; k < nw; k++) {
        if (!(intensity[k] >= 0.0) || !isfinite(intensity[k]))
            return RIGMAT_FAIL(err, RIGMAT_EUSAGE,
                               "noise intensity of disturbance %zu is %g; it must be >= 0", k + 1,
                               intensity[k]);
        if (intensity[k] > 0.0)
            any = 1;
    }
    gsl_matrix_set_zero(Qd);
    if (!any)
        return RIGMAT_OK;
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++)
            if (!isfinite(gsl_matrix_get(A, i, j)))
                return RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "process noise: A is not finite");
    W = lead(w->W, n, n);
    Q = lead(w->Q, n, n);
    Ab = lead(w->Ab, n, n);
    D = gsl_vector_subvector(w->D, 0, n);
    /* A' = D^-1 A D (D powers of two: exact) */
    gs = gsl_matrix_memcpy(&Ab.matrix, A);
    if (gs == GSL_SUCCESS)
        gs = gsl_linalg_balance_matrix(&Ab.matrix, &D.vector);
    if (gs != GSL_SUCCESS)
        return gsl_fail(err, "balancing", gs);
    /* W' = D^-1 G diag(Qc) G^T D^-1; a balancing that would push an entry of W
     * below the normal range (losing it) is dropped: D = I */
    for (pass = 0; pass < 2; pass++) {
        int lost = 0;
        for (i = 0; i < n; i++)
            for (j = 0; j < n; j++) {
                double v = 0.0, vs;
                for (k = 0; k < nw; k++)
                    v += gsl_matrix_get(G, i, k) * intensity[k] * gsl_matrix_get(G, j, k);
                vs = v / gsl_vector_get(&D.vector, i) / gsl_vector_get(&D.vector, j);
                if (v != 0.0 && !(fabs(vs) >= DBL_MIN))
                    lost = 1;
                gsl_matrix_set(&W.matrix, i, j, vs);
            }
        if (!lost)
            break;
        gsl_matrix_memcpy(&Ab.matrix, A);
        gsl_vector_set_all(&D.vector, 1.0);
    }
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++)
            if (!isfinite(gsl_matrix_get(&W.matrix, i, j)))
                return RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                                   "the process-noise intensity G Qc G^T overflows");
    rc = vanloan_doubling(&Ab.matrix, &W.matrix, period_s, o, w, &Q.matrix, &s, &w->bound_vanloan,
                          err);
    if (rc != RIGMAT_OK)
        return rc;
    if (w->bound_vanloan <= eigen_above) {
        w->route = RIGMAT_QD_VANLOAN;
        w->bound = w->bound_vanloan;
    } else {
        /* keep the doubling's result in F (unused by the eigen route) */
        gsl_matrix_view Qv = lead(w->F, n, n);
        gsl_matrix_memcpy(&Qv.matrix, &Q.matrix);
        rc = eigen_route(&Ab.matrix, &W.matrix, period_s, o, w, &Q.matrix, &w->bound_eigen, err);
        if (rc != RIGMAT_OK)
            return rc;
        if (!(w->bound_eigen < w->bound_vanloan)) {
            gsl_matrix_memcpy(&Q.matrix, &Qv.matrix);
            w->route = RIGMAT_QD_VANLOAN;
            w->bound = w->bound_vanloan;
        } else {
            w->route = RIGMAT_QD_EIGEN;
            w->bound = w->bound_eigen;
        }
        if (!(w->bound <= o->rtol)) {
            char vb[32], eb[64];
            rigmat_status st;
            if (isfinite(w->bound_vanloan))
                snprintf(vb, sizeof vb, "%.2g", w->bound_vanloan);
            else
                snprintf(vb, sizeof vb, "unbounded (overflow)");
            if (isfinite(w->bound_eigen))
                snprintf(eb, sizeof eb, "%.2g", w->bound_eigen);
            else
                snprintf(eb, sizeof eb, "none (an integrator, an undamped mode or a defective A)");
            w->route = RIGMAT_QD_NONE;
            st = RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                             "the process noise Qd cannot be computed within the relative error "
                             "%g over %g s: error bound of the doubling %s, of the eigen route %s",
                             o->rtol, period_s, vb, eb);
            rigmat_error_hint(err, "a fast mode that barely decays within the period (a stiff "
                                   "spring with little damping) defeats both; add damping, "
                                   "soften the spring, or sample faster");
            return st;
        }
    }
    /* Qd = D Q' D */
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++) {
            const double v = gsl_vector_get(&D.vector, i) * gsl_matrix_get(&Q.matrix, i, j) *
                             gsl_vector_get(&D.vector, j);
            if (!isfinite(v))
                return RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                                   "the process-noise covariance overflows over %g s", period_s);
            gsl_matrix_set(Qd, i, j, v);
        }
    if (doublings != NULL)
        *doublings = s;
    return RIGMAT_OK;
}

rigmat_sensor_noise rigmat_noise_sensor(double sd, double density, double bandwidth_hz,
                                        double resolution, double period_s)
{
    rigmat_sensor_noise r;

    r.noise_var = sd * sd;
    r.density_var = 0.0;
    if (density != 0.0)
        r.density_var = bandwidth_hz > 0.0 ? density * density * M_PI * bandwidth_hz
                                           : density * density / period_s;
    r.resolution_var = resolution * resolution / 12.0;
    r.total_var = r.noise_var + r.density_var + r.resolution_var;
    return r;
}

double rigmat_noise_sample_sd(double intensity, double period_s)
{
    return sqrt(intensity / period_s);
}

/* The variance of b' = -b/tau + w (intensity 2 sd^2/tau) from b(0) = 0 is
 * sd^2 (1 - e^{-2t/tau}); with b' = w (intensity walk^2) it is walk^2 t
 * (R. G. Brown, P. Y. C. Hwang, Introduction to Random Signals and Applied
 * Kalman Filtering, 4th ed. 2012, sec. 2.9 (Wiener process) and 3.9
 * (first-order Gauss-Markov)). */
double rigmat_noise_bias_sd(double walk, double sd, double tau_s, double t_s)
{
    if (tau_s > 0.0)
        return sd * sqrt(-expm1(-2.0 * t_s / tau_s));
    return walk * sqrt(t_s);
}

void rigmat_noise_free(rigmat_noise *n)
{
    if (n == NULL)
        return;
    if (n->Qd != NULL)
        gsl_matrix_free(n->Qd);
    if (n->Rd != NULL)
        gsl_matrix_free(n->Rd);
    if (n->S != NULL)
        gsl_matrix_free(n->S);
    free(n->sensor);
    free(n->direct_var);
    free(n->disturbance_sd);
    free(n);
}

/* Gamma_G = int_0^T e^{A s} ds G, left in w->F[0:n, n:n+nw] and viewed by *Gam. */
static rigmat_status gamma_g(const gsl_matrix *A, const gsl_matrix *G, double T,
                             const rigmat_noise_opts *o, rigmat_noise_ws *w, gsl_matrix_view *Gam,
                             rigmat_error *err)
{
    const size_t n = A->size1, nw = G->size2;
    gsl_matrix_view M = lead(w->M, n + nw, n + nw), F = lead(w->F, n + nw, n + nw);
    size_t i, j;
    rigmat_status rc;

    gsl_matrix_set_zero(&M.matrix);
    for (i = 0; i < n; i++) {
        for (j = 0; j < n; j++)
            gsl_matrix_set(&M.matrix, i, j, T * gsl_matrix_get(A, i, j));
        for (j = 0; j < nw; j++)
            gsl_matrix_set(&M.matrix, i, n + j, T * gsl_matrix_get(G, i, j));
    }
    rc = rigmat_expm(&M.matrix, &F.matrix, o->expm_flags, w->expm, NULL, err);
    if (rc == RIGMAT_OK)
        *Gam = gsl_matrix_submatrix(&F.matrix, 0, n, n, nw);
    return rc;
}

/* A variance that overflowed (a gain of 1e308 squared) must stop here, not
 * reach a printed Rd: name the first output or state it hits. */
static rigmat_status check_finite(const rigmat_noise *r, const rigmat_signal *outputs,
                                  rigmat_error *err)
{
    size_t i, j;

    for (i = 0; i < r->ny; i++)
        for (j = 0; j < r->ny; j++)
            if (!isfinite(gsl_matrix_get(r->Rd, i, j))) {
                rigmat_status st = RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                        "the measurement noise of output '%s' is not finite",
                        outputs != NULL ? outputs[i].name : "?");
                rigmat_error_hint(err, "its variance overflows: check the sensor's gain, "
                                       "noise, density and resolution");
                return st;
            }
    for (i = 0; r->Qd != NULL && i < r->Qd->size1; i++)
        for (j = 0; j < r->Qd->size2; j++)
            if (!isfinite(gsl_matrix_get(r->Qd, i, j)))
                return RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                        "the process noise Qd is not finite (row %zu)", i + 1);
    for (i = 0; r->S != NULL && i < r->S->size1; i++)
        for (j = 0; j < r->S->size2; j++)
            if (!isfinite(gsl_matrix_get(r->S, i, j)))
                return RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                        "the process/measurement cross-covariance is not finite");
    return RIGMAT_OK;
}

rigmat_status rigmat_noise_build(const rigmat_lti *s, const rigmat_dlti *d,
                                 const rigmat_noise_opts *o, rigmat_noise_ws *w, rigmat_noise **out,
                                 rigmat_error *err)
{
    rigmat_noise *r = NULL;
    gsl_matrix_view Gv, Qv;
    gsl_matrix *G = NULL, *Qp;
    const double *Qc;
    size_t n, nw, ny, mc, i, j, k;
    double T;
    rigmat_status rc = RIGMAT_OK;

    if (out == NULL || s == NULL || d == NULL || o == NULL || w == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "noise model: missing argument");
    *out = NULL;
    n = s->nx;
    ny = s->ny;
    mc = s->nu_control;
    nw = s->nu - mc;
    T = d->period_s;
    Qc = s->input_intensity != NULL ? s->input_intensity + mc : NULL;
    if (d->nx_plant != n || d->ny != ny || d->nw != nw || n == 0)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "noise model: sampled and continuous models differ");
    if (nw > w->nw || n > w->nx)
        return RIGMAT_FAIL(
                err, RIGMAT_EUSAGE,
                "noise model: workspace is for %zu states and %zu disturbances, model has %zu and %zu",
                w->nx, w->nw, n, nw);
    r = calloc(1, sizeof *r);
    if (r == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    r->nx = d->nx;
    r->ny = ny;
    r->nw = nw;
    r->period_s = T;
    r->qd_exact = d->method == RIGMAT_METHOD_ZOH;
    r->Qd = rigmat_matrix_calloc(d->nx, d->nx);
    r->sensor = calloc(ny ? ny : 1, sizeof *r->sensor);
    r->direct_var = calloc(ny ? ny : 1, sizeof *r->direct_var);
    r->disturbance_sd = calloc(nw ? nw : 1, sizeof *r->disturbance_sd);
    if (ny > 0)
        r->Rd = rigmat_matrix_calloc(ny, ny);
    Qv = lead(w->T2, n, n);
    Qp = &Qv.matrix;
    if (nw > 0) {
        Gv = lead(w->G, n, nw);
        G = &Gv.matrix;
    }
    if (r->Qd == NULL || r->sensor == NULL || r->direct_var == NULL || r->disturbance_sd == NULL ||
        (ny > 0 && r->Rd == NULL)) {
        rc = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        goto done;
    }
    for (k = 0; k < nw; k++) {
        for (i = 0; i < n; i++)
            gsl_matrix_set(G, i, k, gsl_matrix_get(s->B, i, mc + k));
        r->disturbance_sd[k] = rigmat_noise_sample_sd(Qc != NULL ? Qc[k] : 0.0, T);
    }
    if (nw > 0 && Qc != NULL) {
        rc = rigmat_noise_qd(s->A, G, Qc, T, o, w, Qp, &r->doublings, err);
        if (rc != RIGMAT_OK)
            goto done;
        r->qd_route = w->route;
        r->qd_bound = w->bound;
        for (i = 0; i < n; i++)
            for (j = 0; j < n; j++)
                gsl_matrix_set(r->Qd, i, j, gsl_matrix_get(Qp, i, j));
    }
    /* Rd: the sensors' own terms on the diagonal */
    for (i = 0; i < ny; i++) {
        r->sensor[i] = rigmat_noise_sensor(s->output_noise_sd ? s->output_noise_sd[i] : 0.0,
                                           s->output_density ? s->output_density[i] : 0.0,
                                           s->output_bandwidth_hz ? s->output_bandwidth_hz[i] : 0.0,
                                           s->output_resolution ? s->output_resolution[i] : 0.0, T);
        gsl_matrix_set(r->Rd, i, i, r->sensor[i].total_var);
    }
    /* direct paths: Rd += E diag(Qc/T) E^T, S = Gamma_G diag(Qc) E^T / T */
    if (ny > 0 && nw > 0 && Qc != NULL) {
        for (i = 0; i < ny; i++)
            for (k = 0; k < nw; k++)
                if (Qc[k] > 0.0 && gsl_matrix_get(s->D, i, mc + k) != 0.0)
                    r->ndirect++;
    }
    if (r->ndirect > 0) {
        gsl_matrix_view Gam;
        rc = gamma_g(s->A, G, T, o, w, &Gam, err);
        if (rc != RIGMAT_OK)
            goto done;
        r->S = rigmat_matrix_calloc(d->nx, ny);
        if (r->S == NULL) {
            rc = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
            goto done;
        }
        for (i = 0; i < ny; i++) {
            for (j = 0; j < ny; j++) {
                double v = 0.0;
                for (k = 0; k < nw; k++)
                    v += gsl_matrix_get(s->D, i, mc + k) * Qc[k] / T *
                         gsl_matrix_get(s->D, j, mc + k);
                gsl_matrix_set(r->Rd, i, j, gsl_matrix_get(r->Rd, i, j) + v);
                if (i == j)
                    r->direct_var[i] = v;
            }
        }
        for (i = 0; i < n; i++)
            for (j = 0; j < ny; j++) {
                double v = 0.0;
                for (k = 0; k < nw; k++)
                    v += gsl_matrix_get(&Gam.matrix, i, k) * Qc[k] *
                         gsl_matrix_get(s->D, j, mc + k);
                gsl_matrix_set(r->S, i, j, v / T);
            }
    }
    rc = check_finite(r, s->outputs, err);
done:
    if (rc != RIGMAT_OK)
        rigmat_noise_free(r);
    else
        *out = r;
    return rc;
}
