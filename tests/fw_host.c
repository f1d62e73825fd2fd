/* fw_host.c - the host test of generated firmware (tests/firmware.sh).
 *
 * Built per model and scalar type from the generated fwm.c (`rigmat
 * firmware MODEL --name fwm`) and linked with librigmat, so the generated
 * code is held against the library it came from:
 *
 *   fw_host jac MODEL RATE   fwm_f, fwm_h and fwm_jacobians against
 *                            rigmat_system_eval and rigmat_system_jacobians
 *                            (complex step, src/mech/mechanics.h) at the
 *                            operating point and at 40 seeded random points
 *                            (every state and input moved by up to 0.5 SI);
 *                            the largest difference relative to the largest
 *                            entry of the function's Jacobian ([A B] for f,
 *                            A and B; [C D] for h, C and D; for f and h times
 *                            max(1, |x|, |u|), or |f|, |h| when larger: the
 *                            size of the terms whose cancellation leaves its
 *                            rounding, as f = 0 at a steady state) is below
 *                            1e-12 in double and 1e-5 in float (the library
 *                            evaluated at the float-rounded point)
 *   fw_host kf IN OUT        the steady-state filter on the rows of IN (u
 *                            then y per step): OUT gets the estimate after
 *                            each update and after each predict, for
 *                            tests/ref/test_firmware_kf.py (numpy)
 *   fw_host ekf MODEL RATE   the NEES test of the EKF (below)
 *
 * The NEES test (Y. Bar-Shalom, X. R. Li, T. Kirubarajan, Estimation with
 * Applications to Tracking and Navigation, Wiley 2001, sec. 5.4.2): M
 * Monte Carlo runs of the nonlinear model, each starting at the operating
 * point with the tilt at 10 deg plus an initial error drawn from the
 * filter's initial covariance, the true state held near upright by an LQR
 * on the true state (so only the estimator is under test).  The truth is
 * fwm_f integrated by classical RK4 at 8 times the filter's substeps, with
 * each disturbance input of the model white at its declared density:
 * N(0, Qc / h) held over each step h of length T / (8 k), Qc = density^2
 * (the convention of README.md, "Noise"); the measurements are fwm_h plus
 * N(0, Rd).  The filter runs fwm_ekf_update and fwm_ekf_predict.  With
 * eps = e^T P^-1 e (posterior error and covariance) averaged over the runs
 * and the N steps, N M eps_bar is chi-square with N M nx degrees of
 * freedom for a consistent filter; the test passes when eps_bar lies in
 * the two-sided 95% interval [chi2_0.025 / (N M), chi2_0.975 / (N M)].
 * The share of single steps whose run average lies inside its own 95%
 * interval is printed too (about 0.95 expected).
 */
#include "fwm.h"

#include "rigmat_internal.h"
#include "gains.h"
#include "riccati.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_cdf.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_matrix.h>
#include <gsl/gsl_randist.h>
#include <gsl/gsl_rng.h>

#define NX FWM_NX
#define NU FWM_NU
#define NC FWM_NC
#define NY FWM_NY
#define NU1 (NU > 0 ? NU : 1)
#define NY1 (NY > 0 ? NY : 1)

#ifdef FW_FLOAT
#define TOL 1e-5
#else
#define TOL 1e-12
#endif

static int load(const char *file, rigmat_model **m, rigmat_system **s, rigmat_lti **l)
{
    rigmat_options opt = rigmat_options_default();
    rigmat_diags d;
    rigmat_error e;

    rigmat_diags_init(&d);
    memset(&e, 0, sizeof e);
    if (rigmat_model_load(file, NULL, 0, &opt, m, &d) != RIGMAT_OK ||
            rigmat_model_check_equations(*m, &d) != RIGMAT_OK) {
        rigmat_diags_print(&d, stderr);
        rigmat_diags_release(&d);
        return 1;
    }
    rigmat_diags_release(&d);
    if (rigmat_system_alloc(*m, s, &e) != RIGMAT_OK ||
            rigmat_linearize(*m, &opt, l, NULL, &e) != RIGMAT_OK) {
        fprintf(stderr, "fw_host: %s\n", e.message);
        return 1;
    }
    return 0;
}

/* the largest |value| of n values */
static double maxabs(const double *v, size_t n)
{
    double m = 0.0;
    size_t i;
    for (i = 0; i < n; i++)
        m = fmax(m, fabs(v[i]));
    return m;
}

/* got against ref (n values): the largest difference relative to scale */
static int compare(const char *what, int point, const double *ref, const fwm_real *got, size_t n,
        double scale, double *worst, int *failed)
{
    double r = 0.0;
    size_t i;

    for (i = 0; i < n; i++)
        r = fmax(r, fabs((double)got[i] - ref[i]));
    r = scale > 0.0 ? r / scale : r;
    *worst = fmax(*worst, r);
    if (!(r <= TOL)) {
        printf("FAIL %s at point %d: relative error %.3g > %.0e\n", what, point, r, TOL);
        (*failed)++;
        return 1;
    }
    return 0;
}

static int run_jac(const char *file)
{
    rigmat_model *m = NULL;
    rigmat_system *s = NULL;
    rigmat_lti *l = NULL;
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    int p, failed = 0, passed = 0;
    double worst = 0.0;

    if (rng == NULL || load(file, &m, &s, &l))
        return 2;
    gsl_rng_set(rng, 20261202);
    for (p = 0; p <= 40; p++) {
        fwm_real x[NX], u[NU1], f[NX], y[NY1];
        fwm_real A[NX * NX], B[NX * NU1], C[NY1 * NX], D[NY1 * NU1];
        double xd[NX], ud[NU1], fr[NX], yr[NY1];
        double Ar[NX * NX], Br[NX * NU1], Cr[NY1 * NX], Dr[NY1 * NU1];
        gsl_matrix_view Av = gsl_matrix_view_array(Ar, NX, NX);
        gsl_matrix_view Bv = gsl_matrix_view_array(Br, NX, NU1);
        gsl_matrix_view Cv = gsl_matrix_view_array(Cr, NY1, NX);
        gsl_matrix_view Dv = gsl_matrix_view_array(Dr, NY1, NU1);
        rigmat_error e;
        double sf, sh, sz;
        size_t i;
        int before = failed;

        memset(&e, 0, sizeof e);
        /* the operating point, then points around it: every state and
         * input moved by up to 0.5 in its SI unit (angles: rad) */
        for (i = 0; i < NX; i++) {
            const double v = gsl_vector_get(l->x0, i) + (p ? gsl_rng_uniform(rng) - 0.5 : 0.0);
            x[i] = (fwm_real)v;
            xd[i] = (double)x[i];
        }
        for (i = 0; i < NU; i++) {
            const double v = gsl_vector_get(l->u0, i) + (p ? gsl_rng_uniform(rng) - 0.5 : 0.0);
            u[i] = (fwm_real)v;
            ud[i] = (double)u[i];
        }
        if (rigmat_system_eval(s, xd, ud, fr, yr, &e) != RIGMAT_OK) {
            printf("FAIL library f, h at point %d: %s\n", p, e.message);
            failed++;
            continue;
        }
        if (rigmat_system_jacobians(s, xd, ud, &Av.matrix, NU ? &Bv.matrix : NULL,
                    NY ? &Cv.matrix : NULL, NY && NU ? &Dv.matrix : NULL, &e) != RIGMAT_OK) {
            printf("FAIL library Jacobians at point %d: %s\n", p, e.message);
            failed++;
            continue;
        }
        /* scales: the largest entry of the function's Jacobian ([A B] for f,
         * [C D] for h), and for the values that times the size of the
         * point: the size of the terms a cancellation leaves its rounding
         * in (a steady state has f = 0 from terms of the size of gravity) */
        sf = fmax(maxabs(Ar, NX * NX), NU ? maxabs(Br, NX * NU) : 0.0);
        sh = NY ? fmax(maxabs(Cr, NY * NX), NU ? maxabs(Dr, NY * NU) : 0.0) : 0.0;
        sz = fmax(1.0, fmax(maxabs(xd, NX), NU ? maxabs(ud, NU) : 0.0));
        fwm_f(x, u, f);
        compare("f", p, fr, f, NX, fmax(maxabs(fr, NX), sf * sz), &worst, &failed);
        if (NY > 0) {
            fwm_h(x, u, y);
            compare("h", p, yr, y, NY, fmax(maxabs(yr, NY), sh * sz), &worst, &failed);
        }
        fwm_jacobians(x, u, A, NU ? B : NULL, NY ? C : NULL, NY && NU ? D : NULL);
        compare("A", p, Ar, A, NX * NX, sf, &worst, &failed);
        if (NU > 0)
            compare("B", p, Br, B, NX * NU, sf, &worst, &failed);
        if (NY > 0)
            compare("C", p, Cr, C, NY * NX, sh, &worst, &failed);
        if (NY > 0 && NU > 0)
            compare("D", p, Dr, D, NY * NU, sh, &worst, &failed);
        if (failed == before)
            passed++;
    }
    printf("fw_host jac %s: 41 points, largest relative error %.3g (tolerance %.0e)\n", file,
            worst, TOL);
    printf("%d passed, %d failed\n", passed, failed);
    gsl_rng_free(rng);
    rigmat_lti_free(l);
    rigmat_system_free(s);
    rigmat_model_free(m);
    return failed != 0;
}

#if FWM_HAS_FILTERS
static int run_kf(const char *in, const char *out)
{
    FILE *fi = fopen(in, "r"), *fo = fopen(out, "w");
    fwm_kf kf;
    int k;

    if (fi == NULL || fo == NULL)
        return 2;
    fwm_kf_init(&kf);
    for (;;) {
        fwm_real u[NC > 0 ? NC : 1], y[NY];
        double v;
        int got = 1;
        for (k = 0; k < NC + NY && got; k++) {
            got = fscanf(fi, "%lf", &v) == 1;
            if (k < NC)
                u[k] = (fwm_real)v;
            else
                y[k - NC] = (fwm_real)v;
        }
        if (!got)
            break;
        fwm_kf_update(&kf, u, y);
        for (k = 0; k < NX; k++)
            fprintf(fo, "%s%.17g", k ? " " : "", (double)kf.x[k]);
        fputc('\n', fo);
        fwm_kf_predict(&kf, u);
        for (k = 0; k < NX; k++)
            fprintf(fo, "%s%.17g", k ? " " : "", (double)kf.x[k]);
        fputc('\n', fo);
    }
    fclose(fi);
    return fclose(fo) != 0;
}

#if defined(FW_EKF) && !defined(FW_FLOAT)
/* y = L n with L the lower Cholesky factor of the n x n matrix a */
static int sample(gsl_rng *rng, const double *a, size_t n, double *y)
{
    double L[NX * NX > NY * NY ? NX * NX : NY * NY], z[NX > NY ? NX : NY];
    gsl_matrix_view Lv = gsl_matrix_view_array(L, n, n);
    size_t i, j;

    memcpy(L, a, n * n * sizeof *L);
    for (i = 0; i < n; i++) /* a semidefinite matrix: a little on the diagonal */
        L[i * n + i] += 1e-300 + 1e-14 * fabs(L[i * n + i]);
    if (gsl_linalg_cholesky_decomp1(&Lv.matrix) != GSL_SUCCESS)
        return 1;
    for (i = 0; i < n; i++)
        z[i] = gsl_ran_gaussian(rng, 1.0);
    for (i = 0; i < n; i++) {
        y[i] = 0.0;
        for (j = 0; j <= i; j++)
            y[i] += gsl_matrix_get(&Lv.matrix, i, j) * z[j];
    }
    return 0;
}

static void truth_f(const double *x, const fwm_real *u, double *dx)
{
    fwm_real xs[NX], f[NX];
    size_t i;
    for (i = 0; i < NX; i++)
        xs[i] = (fwm_real)x[i];
    fwm_f(xs, u, f);
    for (i = 0; i < NX; i++)
        dx[i] = (double)f[i];
}

/* One Monte Carlo test; the truth's measurement noise is vscale times what
 * the filter assumes (1: the test proper; 3: the negative control, which
 * the test must reject).  Returns 0 when the filter passes, 1 when it
 * fails, 2 when the run itself fails. */
static int ekf_test(const char *file, double rate_hz, double vscale, int steps)
{
    const int runs = 50, fine = 8 * FWM_EKF_SUBSTEPS;
    const double T = 1.0 / rate_hz, h = T / fine;
    rigmat_model *m = NULL;
    rigmat_system *s = NULL;
    rigmat_lti *l = NULL;
    gsl_rng *rng = gsl_rng_alloc(gsl_rng_mt19937);
    gsl_matrix *Q = gsl_matrix_calloc(NX, NX), *R = gsl_matrix_calloc(NC, NC);
    gsl_matrix_const_view Ad = gsl_matrix_const_view_array(&fwm_Ad[0][0], NX, NX);
    gsl_matrix_const_view Bd = gsl_matrix_const_view_array(&fwm_Bd[0][0], NX, NC);
    rigmat_riccati_ws *rw = rigmat_riccati_ws_alloc(NX, NC);
    rigmat_lqr *lq = NULL;
    rigmat_error e;
    double sum = 0.0, x0[NX], stepsum[400], dbg[NX] = { 0 };
    size_t tilt = NX, i, j;
    int r, k, inside = 0, bad = 0;

    memset(&e, 0, sizeof e);
    if (rng == NULL || Q == NULL || R == NULL || rw == NULL || load(file, &m, &s, &l))
        return 2;
    gsl_rng_set(rng, 5402);
    for (i = 0; i < NX; i++) {
        x0[i] = gsl_vector_get(l->x0, i);
        if (strcmp(fwm_state_names[i], "tilt.angle") == 0)
            tilt = i;
    }
    if (tilt == NX) {
        printf("FAIL ekf: the model has no state tilt.angle\n");
        return 2;
    }
    /* the LQR that holds the truth up: Bryson's rule, 0.05 rad of tilt, 0.5 m
     * of travel, 1 m/s, 1 rad/s, 5 A, full duty (common practice) */
    for (i = 0; i < NX; i++) {
        const char *nm = fwm_state_names[i];
        const double xmax = strstr(nm, "tilt.angle") ? 0.05 : strstr(nm, "position") ? 0.5 :
                            strstr(nm, "rate") || strstr(nm, "velocity") ? 1.0 :
                            strstr(nm, "current") ? 5.0 : 1e3;
        gsl_matrix_set(Q, i, i, 1.0 / (xmax * xmax));
    }
    for (i = 0; i < NC; i++)
        gsl_matrix_set(R, i, i, 1.0);
    if (rigmat_lqr_solve(&Ad.matrix, &Bd.matrix, Q, R, NULL, rw, &lq, NULL, &e) != RIGMAT_OK) {
        printf("FAIL ekf: LQR: %s\n", e.message);
        return 2;
    }
    for (k = 0; k < steps; k++)
        stepsum[k] = 0.0;
    for (r = 0; r < runs && !bad; r++) {
        fwm_ekf ekf;
        double x[NX], dx0[NX];
        fwm_ekf_init(&ekf);
        ekf.x[tilt] = (fwm_real)(x0[tilt] + 10.0 * 3.14159265358979323846 / 180.0);
        for (i = 0; i < NX; i++)
            x[i] = (double)ekf.x[i];
        {
            double P0[NX * NX];
            for (i = 0; i < NX * NX; i++)
                P0[i] = (double)ekf.P[i];
            bad |= sample(rng, P0, NX, dx0);
            for (i = 0; i < NX; i++)
                x[i] += dx0[i];
        }
        for (k = 0; k < steps && !bad; k++) {
            fwm_real uc[NC > 0 ? NC : 1], uf[NU1], y[NY], xs[NX];
            double v[NY], Rd[NY * NY], ee[NX], Pinv[NX * NX], eps = 0.0;
            gsl_matrix_view Pv = gsl_matrix_view_array(Pinv, NX, NX);
            int n;
            /* measure, update */
            for (i = 0; i < NX; i++)
                xs[i] = (fwm_real)x[i];
            for (i = 0; i < NC; i++) {
                double c = gsl_vector_get(l->u0, i);
                for (j = 0; j < NX; j++)
                    c -= gsl_matrix_get(lq->gain, i, j) * (x[j] - x0[j]);
                uc[i] = (fwm_real)c;
                if (fwm_input_limited[i])
                    uc[i] = (fwm_real)fmin(fmax((double)uc[i], (double)fwm_input_limit[i][0]),
                            (double)fwm_input_limit[i][1]);
            }
            for (i = 0; i < NU; i++)
                uf[i] = i < NC ? uc[i] : (fwm_real)gsl_vector_get(l->u0, i);
            fwm_h(xs, uf, y);
            for (i = 0; i < NY * NY; i++)
                Rd[i] = (double)(&fwm_Rd[0][0])[i];
            bad |= sample(rng, Rd, NY, v);
            for (i = 0; i < NY; i++)
                y[i] = (fwm_real)((double)y[i] + vscale * v[i]);
            if (fwm_ekf_update(&ekf, uc, y) != 0) {
                printf("FAIL ekf: innovation covariance not positive definite\n");
                bad = 1;
                break;
            }
            /* NEES of the posterior */
            for (i = 0; i < NX; i++)
                ee[i] = x[i] - (double)ekf.x[i];
            for (i = 0; i < NX * NX; i++)
                Pinv[i] = (double)ekf.P[i];
            if (gsl_linalg_cholesky_decomp1(&Pv.matrix) != GSL_SUCCESS) {
                printf("FAIL ekf: the covariance is not positive definite\n");
                bad = 1;
                break;
            }
            {
                gsl_vector_view ev = gsl_vector_view_array(ee, NX);
                double z[NX];
                gsl_vector_view zv = gsl_vector_view_array(z, NX);
                gsl_linalg_cholesky_solve(&Pv.matrix, &ev.vector, &zv.vector);
                for (i = 0; i < NX; i++)
                    eps += ee[i] * z[i];
            }
            sum += eps;
            stepsum[k] += eps;
            for (i = 0; i < NX; i++)
                dbg[i] += ee[i] * ee[i] / (double)ekf.P[i * NX + i];
            /* the truth over one period, noise held over each fine step */
            for (n = 0; n < fine; n++) {
                fwm_real un[NU1];
                double k1[NX], k2[NX], k3[NX], k4[NX], xt[NX];
                for (i = 0; i < NU; i++) {
                    double w = 0.0;
                    if (i >= NC && l->input_intensity[i] > 0.0)
                        w = gsl_ran_gaussian(rng, sqrt(l->input_intensity[i] / h));
                    un[i] = (fwm_real)((double)uf[i] + w);
                }
                truth_f(x, un, k1);
                for (i = 0; i < NX; i++)
                    xt[i] = x[i] + h / 2 * k1[i];
                truth_f(xt, un, k2);
                for (i = 0; i < NX; i++)
                    xt[i] = x[i] + h / 2 * k2[i];
                truth_f(xt, un, k3);
                for (i = 0; i < NX; i++)
                    xt[i] = x[i] + h * k3[i];
                truth_f(xt, un, k4);
                for (i = 0; i < NX; i++)
                    x[i] += h / 6 * (k1[i] + 2 * k2[i] + 2 * k3[i] + k4[i]);
            }
            fwm_ekf_predict(&ekf, uc);
        }
    }
    if (!bad) {
        const double lo1 = gsl_cdf_chisq_Pinv(0.025, (double)runs * NX) / runs;
        const double hi1 = gsl_cdf_chisq_Pinv(0.975, (double)runs * NX) / runs;
        const double avg = sum / (steps * runs);
        unsigned need = 0;
        for (k = 0; k < steps; k++)
            inside += stepsum[k] / runs >= lo1 && stepsum[k] / runs <= hi1;
        /* a consistent filter puts each step inside with probability 0.95:
         * the count is binomial(steps, 0.95); fail below its 0.1% quantile */
        while (gsl_cdf_binomial_P(need, 0.95, (unsigned)steps) < 1e-3)
            need++;
        printf("fw_host ekf: %d runs of %d steps from 10 deg of tilt, RK4 %d substeps (truth "
               "%d), measurement noise %g times Rd\n",
                runs, steps, FWM_EKF_SUBSTEPS, fine, vscale);
        printf("  steps whose %d-run average NEES lies in the 95%% interval [%.3f, %.3f] of "
               "chi2(%d)/%d: %d of %d (at least %u needed; Bar-Shalom, Li, Kirubarajan 2001, "
               "sec. 5.4.2); average NEES %.3f for %d states\n",
                runs, lo1, hi1, runs * NX, runs, inside, steps, need, avg, NX);
        bad = inside < (int)need;
        if (getenv("FW_DEBUG") != NULL) {
            for (i = 0; i < NX; i++)
                printf("  %s: mean e^2/P %.3f\n", fwm_state_names[i], dbg[i] / (steps * runs));
            for (k = 0; k < steps; k++)
                printf("%.3f%s", stepsum[k] / runs, k % 20 == 19 ? "\n" : " ");
        }
    } else {
        bad = 2;
    }
    rigmat_lqr_free(lq);
    rigmat_riccati_ws_free(rw);
    gsl_matrix_free(Q);
    gsl_matrix_free(R);
    gsl_rng_free(rng);
    rigmat_lti_free(l);
    rigmat_system_free(s);
    rigmat_model_free(m);
    return bad;
}

static int run_ekf(const char *file, double rate_hz)
{
    const int proper = ekf_test(file, rate_hz, 1.0, 200);
    const int control = ekf_test(file, rate_hz, 3.0, 100);
    int passed = 0, failed = 0;

    if (proper == 0)
        passed++;
    else
        failed++, printf("FAIL ekf: the filter is not consistent\n");
    if (control == 1)
        passed++;
    else
        failed++, printf("FAIL ekf: the negative control passed: the test cannot fail\n");
    printf("%d passed, %d failed\n", passed, failed);
    return failed != 0;
}
#endif /* FW_EKF */
#endif /* FWM_HAS_FILTERS */

int main(int argc, char **argv)
{
    gsl_set_error_handler_off();
    if (argc == 3 && strcmp(argv[1], "jac") == 0)
        return run_jac(argv[2]);
#if FWM_HAS_FILTERS
    if (argc == 4 && strcmp(argv[1], "kf") == 0)
        return run_kf(argv[2], argv[3]);
#if defined(FW_EKF) && !defined(FW_FLOAT)
    if (argc == 4 && strcmp(argv[1], "ekf") == 0)
        return run_ekf(argv[2], atof(argv[3]));
#endif
#endif
    fprintf(stderr, "usage: fw_host jac MODEL | kf IN OUT | ekf MODEL RATE_HZ\n");
    return 2;
}
