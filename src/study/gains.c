/* gains.c - steady-state Kalman filter and LQR from the DARE (gains.h). */
#include "gains.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_complex_math.h>
#include <gsl/gsl_linalg.h>

rigmat_gains_ws *rigmat_gains_ws_alloc(size_t nx, size_t p)
{
    rigmat_gains_ws *w;

    if (nx == 0 || p == 0)
        return NULL;
    w = calloc(1, sizeof *w);
    if (w == NULL)
        return NULL;
    w->nx = nx;
    w->p = p;
    w->At = gsl_matrix_alloc(nx, nx);
    w->Ct = gsl_matrix_alloc(nx, p);
    w->PCt = gsl_matrix_alloc(nx, p);
    w->T = gsl_matrix_alloc(nx, p);
    w->Mt = gsl_matrix_alloc(p, nx);
    w->L = gsl_matrix_alloc(p, p);
    if (!w->At || !w->Ct || !w->PCt || !w->T || !w->Mt || !w->L) {
        rigmat_gains_ws_free(w);
        return NULL;
    }
    return w;
}

void rigmat_gains_ws_free(rigmat_gains_ws *w)
{
    if (w == NULL)
        return;
    if (w->At)
        gsl_matrix_free(w->At);
    if (w->Ct)
        gsl_matrix_free(w->Ct);
    if (w->PCt)
        gsl_matrix_free(w->PCt);
    if (w->T)
        gsl_matrix_free(w->T);
    if (w->Mt)
        gsl_matrix_free(w->Mt);
    if (w->L)
        gsl_matrix_free(w->L);
    free(w);
}

void rigmat_kalman_free(rigmat_kalman *k)
{
    if (k == NULL)
        return;
    if (k->gain)
        gsl_matrix_free(k->gain);
    if (k->predictor_gain)
        gsl_matrix_free(k->predictor_gain);
    if (k->prior)
        gsl_matrix_free(k->prior);
    if (k->posterior)
        gsl_matrix_free(k->posterior);
    if (k->innovation)
        gsl_matrix_free(k->innovation);
    if (k->output_sd)
        gsl_vector_free(k->output_sd);
    if (k->poles)
        gsl_vector_complex_free(k->poles);
    free(k);
}

void rigmat_lqr_free(rigmat_lqr *l)
{
    if (l == NULL)
        return;
    if (l->gain)
        gsl_matrix_free(l->gain);
    if (l->cost_to_go)
        gsl_matrix_free(l->cost_to_go);
    if (l->poles)
        gsl_vector_complex_free(l->poles);
    free(l);
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

/* Y <- (L L^T)^-1 Y, L lower (from gsl_linalg_cholesky_decomp1). */
static int chol_solve(const gsl_matrix *L, gsl_matrix *Y)
{
    int gs = gsl_blas_dtrsm(CblasLeft, CblasLower, CblasNoTrans, CblasNonUnit, 1.0, L, Y);
    if (gs == 0)
        gs = gsl_blas_dtrsm(CblasLeft, CblasLower, CblasTrans, CblasNonUnit, 1.0, L, Y);
    return gs;
}

rigmat_status rigmat_kalman_solve(const gsl_matrix *Ad, const gsl_matrix *Cd, const gsl_matrix *Qd,
                                  const gsl_matrix *Rd, const gsl_matrix *S,
                                  const rigmat_riccati_opts *o, rigmat_gains_ws *gw,
                                  rigmat_riccati_ws *rw, rigmat_kalman **out,
                                  rigmat_riccati_info *info, rigmat_error *err)
{
    rigmat_riccati_info local;
    rigmat_kalman *k;
    rigmat_status st;
    size_t n, p, i;
    int gs = 0;

    *out = NULL;
    if (info == NULL)
        info = &local;
    if (Ad == NULL || Cd == NULL || Qd == NULL || Rd == NULL || gw == NULL || rw == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "kalman: a required matrix is missing");
    n = Ad->size1;
    p = Cd->size1;
    if (Cd->size2 != n || gw->nx != n || gw->p < p || rw->n != n || rw->m != p)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE,
                           "kalman: sizes do not match the workspaces (%zu states, %zu outputs)", n,
                           p);
    {
        gsl_matrix_view Ct = gsl_matrix_submatrix(gw->Ct, 0, 0, n, p);
        gsl_matrix_view PCt = gsl_matrix_submatrix(gw->PCt, 0, 0, n, p);
        gsl_matrix_view T = gsl_matrix_submatrix(gw->T, 0, 0, n, p);
        gsl_matrix_view Mt = gsl_matrix_submatrix(gw->Mt, 0, 0, p, n);
        gsl_matrix_view L = gsl_matrix_submatrix(gw->L, 0, 0, p, p);

        k = calloc(1, sizeof *k);
        if (k == NULL)
            return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        k->nx = n;
        k->ny = p;
        k->gain = gsl_matrix_alloc(n, p);
        k->predictor_gain = gsl_matrix_alloc(n, p);
        k->prior = gsl_matrix_alloc(n, n);
        k->posterior = gsl_matrix_alloc(n, n);
        k->innovation = gsl_matrix_alloc(p, p);
        k->output_sd = gsl_vector_alloc(p);
        k->poles = gsl_vector_complex_alloc(n);
        if (!k->gain || !k->predictor_gain || !k->prior || !k->posterior || !k->innovation ||
            !k->output_sd || !k->poles) {
            rigmat_kalman_free(k);
            return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        }
        /* the dual DARE: A -> Ad^T, B -> Cd^T */
        gsl_matrix_transpose_memcpy(gw->At, Ad);
        gsl_matrix_transpose_memcpy(&Ct.matrix, Cd);
        st = rigmat_riccati_solve(gw->At, &Ct.matrix, Qd, Rd, S, o, rw, k->prior, NULL, k->poles,
                                  info, err);
        k->info = *info;
        if (st != RIGMAT_OK) {
            rigmat_kalman_free(k);
            return st;
        }
        /* Re = Cd P Cd^T + Rd */
        gs |= rigmat_dgemm(&rw->blas, CblasNoTrans, CblasNoTrans, 1.0, k->prior, &Ct.matrix, 0.0,
                           &PCt.matrix);
        gsl_matrix_memcpy(k->innovation, Rd);
        gs |= rigmat_dgemm(&rw->blas, CblasNoTrans, CblasNoTrans, 1.0, Cd, &PCt.matrix, 1.0,
                           k->innovation);
        symmetrize(k->innovation);
        gsl_matrix_memcpy(&L.matrix, k->innovation);
        if (gs != 0 || gsl_linalg_cholesky_decomp1(&L.matrix) != 0) {
            rigmat_kalman_free(k);
            return RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                               "kalman: the innovation covariance is not positive definite");
        }
        /* M = P Cd^T Re^-1 */
        gsl_matrix_transpose_memcpy(&Mt.matrix, &PCt.matrix);
        gs |= chol_solve(&L.matrix, &Mt.matrix);
        gsl_matrix_transpose_memcpy(k->gain, &Mt.matrix);
        /* P+ = P - P Cd^T Re^-1 Cd P */
        gsl_matrix_memcpy(k->posterior, k->prior);
        gs |= rigmat_dgemm(&rw->blas, CblasNoTrans, CblasNoTrans, -1.0, &PCt.matrix, &Mt.matrix,
                           1.0, k->posterior);
        symmetrize(k->posterior);
        /* Kp = (Ad P Cd^T + S) Re^-1 */
        gs |= rigmat_dgemm(&rw->blas, CblasNoTrans, CblasNoTrans, 1.0, Ad, &PCt.matrix, 0.0,
                           &T.matrix);
        if (S != NULL)
            gsl_matrix_add(&T.matrix, S);
        gsl_matrix_transpose_memcpy(&Mt.matrix, &T.matrix);
        gs |= chol_solve(&L.matrix, &Mt.matrix);
        gsl_matrix_transpose_memcpy(k->predictor_gain, &Mt.matrix);
        for (i = 0; i < p; i++)
            gsl_vector_set(k->output_sd, i, sqrt(gsl_matrix_get(k->innovation, i, i)));
        if (gs != 0) {
            rigmat_kalman_free(k);
            return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "kalman: a matrix product failed");
        }
    }
    *out = k;
    return RIGMAT_OK;
}

rigmat_status rigmat_lqr_solve(const gsl_matrix *Ad, const gsl_matrix *Bd, const gsl_matrix *Q,
                               const gsl_matrix *R, const rigmat_riccati_opts *o,
                               rigmat_riccati_ws *rw, rigmat_lqr **out, rigmat_riccati_info *info,
                               rigmat_error *err)
{
    rigmat_riccati_info local;
    rigmat_lqr *l;
    rigmat_status st;
    size_t n, m;

    *out = NULL;
    if (info == NULL)
        info = &local;
    if (Ad == NULL || Bd == NULL || Q == NULL || R == NULL || rw == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "lqr: a required matrix is missing");
    n = Ad->size1;
    m = Bd->size2;
    l = calloc(1, sizeof *l);
    if (l == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    l->nx = n;
    l->nu = m;
    l->gain = gsl_matrix_alloc(m, n);
    l->cost_to_go = gsl_matrix_alloc(n, n);
    l->poles = gsl_vector_complex_alloc(n);
    if (!l->gain || !l->cost_to_go || !l->poles) {
        rigmat_lqr_free(l);
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    }
    st = rigmat_riccati_solve(Ad, Bd, Q, R, NULL, o, rw, l->cost_to_go, l->gain, l->poles, info,
                              err);
    l->info = *info;
    if (st != RIGMAT_OK) {
        rigmat_lqr_free(l);
        return st;
    }
    *out = l;
    return RIGMAT_OK;
}

/* ------------------------------------------------------ names of signals */

static const rigmat_signal *signal_of(const rigmat_lti *l, rigmat_gains_group g, size_t i)
{
    if (l == NULL)
        return NULL;
    switch (g) {
    case RIGMAT_GAINS_STATE:
        return l->states != NULL && i < l->nx ? &l->states[i] : NULL;
    case RIGMAT_GAINS_INPUT:
        return l->inputs != NULL && i < l->nu ? &l->inputs[i] : NULL;
    case RIGMAT_GAINS_OUTPUT:
        return l->outputs != NULL && i < l->ny ? &l->outputs[i] : NULL;
    }
    return NULL;
}

const char *rigmat_gains_name(const rigmat_lti *l, rigmat_gains_group g, size_t i)
{
    const rigmat_signal *s = signal_of(l, g, i);
    return s != NULL && s->name != NULL ? s->name : "?";
}

const char *rigmat_gains_unit(const rigmat_lti *l, rigmat_gains_group g, size_t i)
{
    const rigmat_signal *s = signal_of(l, g, i);
    return s != NULL ? s->unit : "";
}

static void format_z(char *buf, size_t len, double re, double im)
{
    if (im == 0.0)
        snprintf(buf, len, "%.6g", re);
    else
        snprintf(buf, len, "%.6g +/- %.6gi (|z| = %.6g)", re, fabs(im), hypot(re, im));
}

void rigmat_gains_explain(const rigmat_lti *l, rigmat_gains_problem p,
                          const rigmat_riccati_info *info, const char *weights_file,
                          rigmat_error *err)
{
    const int kf = p == RIGMAT_GAINS_KALMAN;
    const char *wf = weights_file != NULL ? weights_file : "the weights file";
    /* the state the mode mostly lives in: the largest entry of its right
     * eigenvector in the original model, which for the filter's dual problem
     * (Ad^T in place of A) is the left eigenvector of the solver's matrix */
    const size_t at = kf ? info->left : info->right;
    const char *st = at != RIGMAT_NONE ? rigmat_gains_name(l, RIGMAT_GAINS_STATE, at) : "?";
    char z[96];
    rigmat_status status;

    if (err == NULL || info->defect == RIGMAT_RICCATI_FINE)
        return;
    status = err->status;
    format_z(z, sizeof z, info->re, info->im);
    switch (info->defect) {
    case RIGMAT_RICCATI_FINE:
        return;
    case RIGMAT_RICCATI_R_NOT_PD:
        if (kf) {
            RIGMAT_FAIL(err, status,
                        "the measurement noise Rd is not positive definite at sensor '%s'",
                        rigmat_gains_name(l, RIGMAT_GAINS_OUTPUT, info->index));
            rigmat_error_hint(err, "the steady-state filter needs noise on every reading: give "
                                   "the sensor `noise`, `density` or `resolution`");
        } else {
            RIGMAT_FAIL(err, status, "the weight of input '%s' is not positive definite",
                        rigmat_gains_name(l, RIGMAT_GAINS_INPUT, info->index));
        }
        break;
    case RIGMAT_RICCATI_Q_INDEFINITE:
        RIGMAT_FAIL(err, status, "%s is not positive semidefinite",
                    kf ? "the process noise Qd - S Rd^-1 S^T" : "the state weight Q");
        break;
    case RIGMAT_RICCATI_UNSTABILIZABLE:
        if (kf) {
            RIGMAT_FAIL(err, status,
                        "the mode at z = %s (mostly '%s') is not detectable: no sensor sees it "
                        "and it does not decay",
                        z, st);
            if (fabs(hypot(info->re, info->im) - 1.0) <= 1e-6)
                rigmat_error_hint(err,
                                  "add a sensor that reads '%s', or leave a cyclic "
                                  "coordinate out with a `states:` list",
                                  st);
            else
                rigmat_error_hint(err, "add a sensor that reads '%s'", st);
        } else {
            RIGMAT_FAIL(err, status,
                        "the mode at z = %s (mostly '%s') is not stabilizable: no control input "
                        "reaches it and it does not decay",
                        z, st);
            rigmat_error_hint(err, "the LQR needs every mode on or outside the unit circle "
                                   "reachable from the control inputs");
        }
        break;
    case RIGMAT_RICCATI_UNIT_CIRCLE:
        if (kf) {
            RIGMAT_FAIL(err, status,
                        "the mode at z = %s (mostly '%s') is on the unit circle and receives "
                        "no process noise: the filter would stop correcting it",
                        z, st);
            rigmat_error_hint(err,
                              "give a disturbance with a `density` that moves '%s', or "
                              "leave a cyclic coordinate out with a `states:` list",
                              st);
        } else {
            RIGMAT_FAIL(err, status,
                        "the mode at z = %s (mostly '%s') is on the unit circle and carries no "
                        "weight: no stabilizing gain minimizes the cost",
                        z, st);
            rigmat_error_hint(err, "give '%s' a weight under `states:` in %s", st, wf);
        }
        break;
    case RIGMAT_RICCATI_NO_CONVERGENCE:
        RIGMAT_FAIL(err, status, "the %s Riccati equation did not converge in %zu doubling steps",
                    kf ? "filter" : "regulator", info->iterations);
        break;
    case RIGMAT_RICCATI_NOT_STABILIZING:
        RIGMAT_FAIL(err, status, "the %s is not stable: a pole at z = %s (mostly '%s')",
                    kf ? "estimator" : "closed loop", z, st);
        break;
    case RIGMAT_RICCATI_RESIDUAL:
        RIGMAT_FAIL(err, status, "the %s Riccati equation's relative residual %.3g is too large",
                    kf ? "filter" : "regulator", info->residual);
        rigmat_error_hint(err, "the problem is badly conditioned; check the units of the weights");
        break;
    }
}
