/* noise.c - Qd by Van Loan's block method with doubling, Rd from the sensor
 * figures, and the cross-covariance of a disturbance that reaches a
 * sensor directly (noise.h). */
#include "noise.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_math.h>

rigmat_noise_opts rigmat_noise_opts_default(void)
{
    rigmat_noise_opts o;

    o.step_norm = 0.5;
    o.expm_flags = 0;
    return o;
}

static gsl_matrix *sq(size_t n, int *bad)
{
    gsl_matrix *m = gsl_matrix_calloc(n, n);

    if (m == NULL)
        *bad = 1;
    return m;
}

rigmat_noise_ws *rigmat_noise_ws_alloc(size_t nx, size_t nw)
{
    rigmat_noise_ws *w;
    const size_t nb = 2 * nx > nx + nw ? 2 * nx : nx + nw;
    int bad = 0;

    if (nx == 0)
        return NULL;
    w = calloc(1, sizeof *w);
    if (w == NULL)
        return NULL;
    w->nx = nx;
    w->nw = nw;
    w->expm = rigmat_expm_ws_alloc(nb);
    w->M = sq(nb, &bad);
    w->F = sq(nb, &bad);
    w->W = sq(nx, &bad);
    w->Phi = sq(nx, &bad);
    w->Q = sq(nx, &bad);
    w->T1 = sq(nx, &bad);
    w->T2 = sq(nx, &bad);
    if (nw > 0)
        w->G = gsl_matrix_calloc(nx, nw);
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
        gsl_matrix *const m[] = { w->M, w->F, w->W, w->Phi, w->Q, w->T1, w->T2, w->G };
        for (i = 0; i < sizeof m / sizeof m[0]; i++)
            if (m[i] != NULL)
                gsl_matrix_free(m[i]);
    }
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

rigmat_status rigmat_noise_qd(const gsl_matrix *A, const gsl_matrix *G, const double *intensity,
                              double period_s, const rigmat_noise_opts *o, rigmat_noise_ws *w,
                              gsl_matrix *Qd, unsigned *doublings, rigmat_error *err)
{
    size_t n, nw, i, j, k;
    unsigned s = 0, it;
    double h, ratio;
    int any = 0, gs = GSL_SUCCESS;
    gsl_matrix_view M, F, W, Phi, Q, T1;
    rigmat_status rc;

    if (doublings != NULL)
        *doublings = 0;
    if (A == NULL || Qd == NULL || w == NULL || o == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "process noise: missing argument");
    n = A->size1;
    nw = G != NULL ? G->size2 : 0;
    if (A->size2 != n || Qd->size1 != n || Qd->size2 != n || (G != NULL && G->size1 != n))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "process noise: inconsistent sizes");
    if (n > w->nx)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE,
                           "process noise: workspace is for %zu states, model has %zu", w->nx, n);
    if (!(period_s > 0.0) || !isfinite(period_s))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the sample period must be positive, got %g s",
                           period_s);
    if (!(o->step_norm > 0.0))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "process noise: step_norm must be positive");
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
    W = lead(w->W, n, n);
    Phi = lead(w->Phi, n, n);
    Q = lead(w->Q, n, n);
    T1 = lead(w->T1, n, n);
    M = lead(w->M, 2 * n, 2 * n);
    F = lead(w->F, 2 * n, 2 * n);
    /* W = G diag(Qc) G^T */
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++) {
            double v = 0.0;
            for (k = 0; k < nw; k++)
                v += gsl_matrix_get(G, i, k) * intensity[k] * gsl_matrix_get(G, j, k);
            gsl_matrix_set(&W.matrix, i, j, v);
        }
    /* h = T / 2^s with ||A||_1 h <= step_norm */
    ratio = rigmat_expm_norm1(A) * period_s / o->step_norm;
    if (!isfinite(ratio))
        return RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "process noise: A is not finite");
    if (ratio > 1.0) {
        int e;
        const double f = frexp(ratio, &e);
        s = (unsigned)(f == 0.5 ? e - 1 : e);
    }
    h = ldexp(period_s, -(int)s);
    /* M = [[-A h, W h], [0, A^T h]] */
    gsl_matrix_set_zero(&M.matrix);
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++) {
            gsl_matrix_set(&M.matrix, i, j, -h * gsl_matrix_get(A, i, j));
            gsl_matrix_set(&M.matrix, i, n + j, h * gsl_matrix_get(&W.matrix, i, j));
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
        gs = gsl_blas_dgemm(CblasTrans, CblasNoTrans, 1.0, &F22.matrix, &F12.matrix, 0.0,
                            &Q.matrix);
    }
    if (gs != GSL_SUCCESS)
        return gsl_fail(err, "matrix product", gs);
    symmetrize(&Q.matrix);
    for (it = 0; it < s; it++) {
        /* Q <- Q + Phi Q Phi^T; Phi <- Phi^2 */
        gs = gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, 1.0, &Phi.matrix, &Q.matrix, 0.0,
                            &T1.matrix);
        if (gs == GSL_SUCCESS)
            gs = gsl_blas_dgemm(CblasNoTrans, CblasTrans, 1.0, &T1.matrix, &Phi.matrix, 1.0,
                                &Q.matrix);
        if (gs == GSL_SUCCESS)
            gs = gsl_blas_dgemm(CblasNoTrans, CblasNoTrans, 1.0, &Phi.matrix, &Phi.matrix, 0.0,
                                &T1.matrix);
        if (gs == GSL_SUCCESS)
            gs = gsl_matrix_memcpy(&Phi.matrix, &T1.matrix);
        if (gs != GSL_SUCCESS)
            return gsl_fail(err, "matrix product", gs);
        symmetrize(&Q.matrix);
    }
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++) {
            const double v = gsl_matrix_get(&Q.matrix, i, j);
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
    r->Qd = gsl_matrix_calloc(d->nx, d->nx);
    r->sensor = calloc(ny ? ny : 1, sizeof *r->sensor);
    r->direct_var = calloc(ny ? ny : 1, sizeof *r->direct_var);
    r->disturbance_sd = calloc(nw ? nw : 1, sizeof *r->disturbance_sd);
    if (ny > 0)
        r->Rd = gsl_matrix_calloc(ny, ny);
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
        r->S = gsl_matrix_calloc(d->nx, ny);
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
