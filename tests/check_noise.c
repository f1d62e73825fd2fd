/* check_noise.c - Qd, Rd and the cross-covariance (src/sample/noise.c) against
 * closed forms, 60-digit references and the conventions of README.md ("Noise
 * convention"). */
#include "noise.h"
#include "testutil.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <float.h>
#include <gsl/gsl_eigen.h>
#include <gsl/gsl_math.h>
#include <gsl/gsl_rng.h>
#include <gsl/gsl_randist.h>

/* Qd of x' = A x + G w over T with the default options. */
static gsl_matrix *qd_of(const gsl_matrix *A, const gsl_matrix *G, const double *qc, double T,
                         double step_norm, unsigned *doublings, rigmat_status *st)
{
    rigmat_noise_opts o = rigmat_noise_opts_default();
    rigmat_noise_ws *w = rigmat_noise_ws_alloc(A->size1, G->size2);
    gsl_matrix *Q = gsl_matrix_alloc(A->size1, A->size1);
    rigmat_error err;
    rigmat_status rc;

    ck_assert_ptr_nonnull(w);
    memset(&err, 0, sizeof err);
    if (step_norm > 0.0)
        o.step_norm = step_norm;
    rc = rigmat_noise_qd(A, G, qc, T, &o, w, Q, doublings, &err);
    if (st != NULL)
        *st = rc;
    else
        ck_assert_msg(rc == RIGMAT_OK, "noise_qd failed: %s", err.message);
    rigmat_noise_ws_free(w);
    return Q;
}

/* Fail unless Q is exactly symmetric and its smallest eigenvalue is above
 * -n u max|eig| (positive semi-definite up to rounding). */
static void assert_psd(const gsl_matrix *Q, const char *what)
{
    const size_t n = Q->size1;
    gsl_matrix *C = gsl_matrix_alloc(n, n);
    gsl_vector *ev = gsl_vector_alloc(n);
    gsl_eigen_symm_workspace *w = gsl_eigen_symm_alloc(n);
    double lo, hi;
    size_t i, j;

    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++)
            ck_assert_msg(gsl_matrix_get(Q, i, j) == gsl_matrix_get(Q, j, i),
                          "%s not symmetric at (%zu, %zu)", what, i, j);
    gsl_matrix_memcpy(C, Q);
    ck_assert_int_eq(gsl_eigen_symm(C, ev, w), 0);
    lo = gsl_vector_min(ev);
    hi = fmax(fabs(lo), fabs(gsl_vector_max(ev)));
    ck_assert_msg(lo >= -(double)n * DBL_EPSILON * hi, "%s indefinite: eigenvalue %.3g of %.3g",
                  what, lo, hi);
    gsl_matrix_free(C);
    gsl_vector_free(ev);
    gsl_eigen_symm_free(w);
}

START_TEST(double_integrator_closed_form)
{
    /* Bar-Shalom, Li, Kirubarajan, "Estimation with Applications to Tracking and
     * Navigation", Wiley 2001, section 6.2.2: white acceleration noise of intensity q,
     * Qd = q [[T^3/3, T^2/2], [T^2/2, T]]; q = 2, T = 0.1 gives
     * [[6.666666666666667e-4, 0.01], [0.01, 0.2]] */
    const double a[] = { 0, 1, 0, 0 }, g[] = { 0, 1 };
    const double Ts[] = { 0.1, 0.005, 3.3 };
    gsl_matrix *A = tu_mat(2, 2, a), *G = tu_mat(2, 1, g);
    size_t k;

    for (k = 0; k < 3; k++) {
        const double T = Ts[k], q = 2.0;
        const double want[] = { q * T * T * T / 3, q * T * T / 2, q * T * T / 2, q * T };
        gsl_matrix *Q = qd_of(A, G, &q, T, 0, NULL, NULL), *W = tu_mat(2, 2, want);
        ck_assert_matrix_rel(Q, W, 1e-14);
        assert_psd(Q, "Qd");
        if (k == 0) {
            ck_assert_rel(gsl_matrix_get(Q, 0, 0), 6.666666666666667e-4, 1e-14);
            ck_assert_rel(gsl_matrix_get(Q, 1, 1), 0.2, 1e-14);
        }
        gsl_matrix_free(Q);
        gsl_matrix_free(W);
    }
    gsl_matrix_free(A);
    gsl_matrix_free(G);
}
END_TEST

START_TEST(reference_two_state_value)
{
    /* the integral of e^(A s) G q G^T e^(A^T s) over [0, T] by direct quadrature
     * (scipy.integrate.quad_vec), equal to Van Loan's value:
     * A = [[0, 1], [-2, -3]], G = [0; 1], q = 1, T = 0.1 */
    const double a[] = { 0, 1, -2, -3 }, g[] = { 0, 1 }, q = 1.0;
    const double want[] = { 2.667590732444895e-4, 3.707178875092714e-3, 3.707178875092714e-3,
                            0.07473887166766026 };
    gsl_matrix *A = tu_mat(2, 2, a), *G = tu_mat(2, 1, g), *W = tu_mat(2, 2, want);
    gsl_matrix *Q = qd_of(A, G, &q, 0.1, 0, NULL, NULL);

    ck_assert_matrix_rel(Q, W, 1e-13);
    gsl_matrix_free(Q);
    gsl_matrix_free(A);
    gsl_matrix_free(G);
    gsl_matrix_free(W);
}
END_TEST

START_TEST(stiff_motor_matches_mpmath)
{
    /* tests/ref/noise_cases.txt: states [angle, rate, current], inputs [voltage,
     * load torque (disturbance, 3e-3 N*m/sqrt(Hz))]; R 2.4 ohm, L/R = 0.1 ms,
     * Kt = Ke = 0.036, J 1.5e-5 kg*m^2; Ad, Gamma, Qd from the eigen-decomposition
     * in mpmath at 60 digits (tests/ref/gen_discretize_cases.py) */
    FILE *f = fopen("ref/noise_cases.txt", "r");
    char line[512];
    size_t cases = 0;

    ck_assert_ptr_nonnull(f);
    while (fgets(line, sizeof line, f) != NULL) {
        double T, qc, agree;
        gsl_matrix *A, *B, *Ad, *Gam, *Qd;
        rigmat_lti *s = rigmat_lti_alloc(3, 2, 1, 1);
        rigmat_discretize_opts o = rigmat_discretize_opts_default();
        rigmat_discretize_ws *dw = rigmat_discretize_ws_alloc(3, 2, 1);
        rigmat_noise_opts no = rigmat_noise_opts_default();
        rigmat_noise_ws *nw = rigmat_noise_ws_alloc(3, 1);
        rigmat_dlti *d = NULL;
        rigmat_noise *nz = NULL;
        rigmat_error err;

        if (line[0] == '#' || line[0] == '\n') {
            rigmat_lti_free(s);
            rigmat_discretize_ws_free(dw);
            rigmat_noise_ws_free(nw);
            continue;
        }
        ck_assert_int_eq(sscanf(line, "motor %lf %lf %lf", &T, &qc, &agree), 3);
        A = tu_read_mat(f, 3, 3);
        B = tu_read_mat(f, 3, 2);
        Ad = tu_read_mat(f, 3, 3);
        Gam = tu_read_mat(f, 3, 2);
        Qd = tu_read_mat(f, 3, 3);
        gsl_matrix_memcpy(s->A, A);
        gsl_matrix_memcpy(s->B, B);
        gsl_matrix_set(s->C, 0, 0, 1.0);
        s->input_intensity[1] = qc;
        o.period_s = T;
        memset(&err, 0, sizeof err);
        ck_assert_int_eq(rigmat_discretize(s, &o, dw, &d, &err), RIGMAT_OK);
        ck_assert_int_eq(rigmat_noise_build(s, d, &no, nw, &nz, &err), RIGMAT_OK);
        gsl_matrix_const_view g0 = gsl_matrix_const_submatrix(Gam, 0, 0, 3, 1);
        gsl_matrix_const_view g1 = gsl_matrix_const_submatrix(Gam, 0, 1, 3, 1);
        ck_assert_matrix_rel(d->Ad, Ad, 1e-12);
        ck_assert_matrix_rel(d->Bd, &g0.matrix, 1e-12);
        ck_assert_matrix_rel(d->Gd, &g1.matrix, 1e-12);
        ck_assert_matrix_rel(nz->Qd, Qd, 1e-12);
        assert_psd(nz->Qd, "stiff Qd");
        ck_assert_uint_gt(nz->doublings, 5);
        ck_assert_int_eq(nz->qd_exact, 1);
        /* the doubling, certified (an eigenvalue at 0: the eigen route has no bound) */
        ck_assert_int_eq(nz->qd_route, RIGMAT_QD_VANLOAN);
        ck_assert(nz->qd_bound > 0.0 && nz->qd_bound <= no.rtol);
        {
            /* the bound holds: each entry's error relative to sqrt(Qii Qjj) */
            double worst = 0.0;
            size_t i, j;
            for (i = 0; i < 3; i++)
                for (j = 0; j < 3; j++)
                    worst = fmax(worst, fabs(gsl_matrix_get(nz->Qd, i, j) - gsl_matrix_get(Qd, i, j)) /
                                                sqrt(gsl_matrix_get(Qd, i, i) * gsl_matrix_get(Qd, j, j)));
            if (getenv("RIGMAT_TEST_VERBOSE") != NULL)
                fprintf(stderr, "stiff motor T = %g s: Qd entry error %.3g, bound %.3g\n", T, worst,
                        nz->qd_bound);
            ck_assert_double_le(worst, nz->qd_bound);
        }
        ck_assert_ptr_null(nz->S);
        if (getenv("RIGMAT_TEST_VERBOSE") != NULL)
            fprintf(stderr,
                    "stiff motor T = %g s: Ad %.3g, Bd %.3g, Gd %.3g, Qd %.3g (%u doublings, "
                    "bound %.3g)\n", T,
                    rigmat_test_matrix_reldiff(d->Ad, Ad),
                    rigmat_test_matrix_reldiff(d->Bd, &g0.matrix),
                    rigmat_test_matrix_reldiff(d->Gd, &g1.matrix),
                    rigmat_test_matrix_reldiff(nz->Qd, Qd), nz->doublings, nz->qd_bound);
        {
            /* the plain block form over the whole period is what the doubling
             * avoids: e^{-A T} reaches e^498 at 50 ms and the product cancels */
            gsl_matrix *G = gsl_matrix_alloc(3, 1);
            gsl_matrix *Qp;
            rigmat_status st;
            gsl_matrix_const_view bw = gsl_matrix_const_submatrix(B, 0, 1, 3, 1);
            gsl_matrix_memcpy(G, &bw.matrix);
            Qp = qd_of(A, G, &qc, T, 1e300, NULL, &st);
            if (T > 0.02)
                ck_assert(st != RIGMAT_OK || rigmat_test_matrix_reldiff(Qp, Qd) > 1e-3);
            gsl_matrix_free(Qp);
            gsl_matrix_free(G);
        }
        gsl_matrix_free(A);
        gsl_matrix_free(B);
        gsl_matrix_free(Ad);
        gsl_matrix_free(Gam);
        gsl_matrix_free(Qd);
        rigmat_noise_free(nz);
        rigmat_dlti_free(d);
        rigmat_lti_free(s);
        rigmat_discretize_ws_free(dw);
        rigmat_noise_ws_free(nw);
        cases++;
    }
    fclose(f);
    ck_assert_uint_eq(cases, 2);
}
END_TEST

START_TEST(stiff_oscillators_right_or_refused)
{
    /* issue 10, item 4: tests/ref/stiff_noise_cases.txt, from
     * tests/ref/gen_stiff_noise.py (mpmath at 50 digits: the stationary covariance
     * P = diag(q/(2ck), q/(2cm)) and Qd = P - Ad P Ad^T, Van Loan 1978, checked
     * against the block exponential at 120 digits).  Before, the first case gave
     * Qd[0][0] = 1.9e132 and the second was 61 % too large, both as exact. */
    FILE *f = fopen("ref/stiff_noise_cases.txt", "r");
    char line[512];
    size_t cases = 0, refused = 0, eigen = 0;

    ck_assert_ptr_nonnull(f);
    while (fgets(line, sizeof line, f) != NULL) {
        double m, k, c, q, T, want[4];
        gsl_matrix *A = gsl_matrix_calloc(2, 2), *G = gsl_matrix_calloc(2, 1);
        gsl_matrix *Q = gsl_matrix_alloc(2, 2);
        rigmat_noise_opts o = rigmat_noise_opts_default();
        rigmat_noise_ws *w = rigmat_noise_ws_alloc(2, 1);
        rigmat_error err;
        rigmat_status st;
        size_t i, j;

        if (line[0] == '#') {
            gsl_matrix_free(A);
            gsl_matrix_free(G);
            gsl_matrix_free(Q);
            rigmat_noise_ws_free(w);
            continue;
        }
        ck_assert_int_eq(sscanf(line, "oscillator %lf %lf %lf %lf %lf", &m, &k, &c, &q, &T), 5);
        ck_assert_ptr_nonnull(fgets(line, sizeof line, f));
        gsl_matrix_set(A, 0, 1, 1.0);
        gsl_matrix_set(A, 1, 0, -k / m);
        gsl_matrix_set(A, 1, 1, -c / m);
        gsl_matrix_set(G, 1, 0, 1.0 / m);
        memset(&err, 0, sizeof err);
        st = rigmat_noise_qd(A, G, &q, T, &o, w, Q, NULL, &err);
        if (strncmp(line, "refuse", 6) == 0) {
            /* at 3e13 rad/s undamped, or nearly (c/m = 1e3 1/s): the doubling's
             * bound is far above rtol, and the eigen route has none (l + conj(l) = 0)
             * or one above rtol: refused, not printed */
            ck_assert_int_eq(st, RIGMAT_ENUMERIC);
            ck_assert_ptr_nonnull(strstr(err.message, "cannot be computed within"));
            ck_assert_double_gt(w->bound_vanloan, o.rtol);
            ck_assert_double_gt(w->bound_eigen, o.rtol);
            ck_assert(c > 0.0 || isinf(w->bound_eigen));
            refused++;
        } else {
            double worst = 0.0;
            ck_assert_int_eq(sscanf(line, "%lf %lf %lf %lf", &want[0], &want[1], &want[2],
                                    &want[3]), 4);
            ck_assert_msg(st == RIGMAT_OK, "m = %g: %s", m, err.message);
            ck_assert(w->bound > 0.0 && w->bound <= o.rtol);
            /* what the bound promises (noise.h): the normwise error
             * ||Q'_computed - Q'|| / ||Q'|| in the balanced coordinates
             * Q' = D^-1 Q D^-1 (w->D, powers of two: exact), with the norm
             * max(||.||_1, ||.||_inf) (one norm: both matrices are symmetric).
             * An entrywise error relative to sqrt(Qii Qjj), checked here
             * before, is not promised: it exceeds the normwise one where the
             * balanced variances differ (the m = 1e-9, c = 1e3 case with GSL's
             * CBLAS: 2.05e-11 entrywise against a normwise bound of 1.41e-11) */
            {
                double den = 0.0, num = 0.0;
                for (i = 0; i < 2; i++) {
                    double rn = 0.0, rd = 0.0;
                    for (j = 0; j < 2; j++) {
                        const double dd = gsl_vector_get(w->D, i) * gsl_vector_get(w->D, j);
                        rn += fabs(gsl_matrix_get(Q, i, j) - want[2 * i + j]) / dd;
                        rd += fabs(want[2 * i + j]) / dd;
                    }
                    num = fmax(num, rn);
                    den = fmax(den, rd);
                }
                worst = num / den;
            }
            ck_assert_msg(worst <= w->bound, "m = %g: error %.3g above its bound %.3g", m, worst,
                          w->bound);
            ck_assert_rel(gsl_matrix_get(Q, 0, 0), want[0], 1e-9);
            ck_assert_rel(gsl_matrix_get(Q, 1, 1), want[3], 1e-9);
            assert_psd(Q, "stiff oscillator Qd");
            if (w->route == RIGMAT_QD_EIGEN) {
                /* chosen because the doubling's own bound is worse */
                ck_assert_double_gt(w->bound_vanloan, w->bound);
                eigen++;
            } else {
                ck_assert_int_eq(w->route, RIGMAT_QD_VANLOAN);
            }
            if (getenv("RIGMAT_TEST_VERBOSE") != NULL)
                fprintf(stderr, "oscillator m = %g k = %g: route %d, error %.3g, bound %.3g "
                                "(doubling %.3g, eigen %.3g)\n",
                        m, k, (int)w->route, worst, w->bound, w->bound_vanloan, w->bound_eigen);
        }
        gsl_matrix_free(A);
        gsl_matrix_free(G);
        gsl_matrix_free(Q);
        rigmat_noise_ws_free(w);
        cases++;
    }
    fclose(f);
    ck_assert_uint_eq(cases, 9);
    ck_assert_uint_eq(refused, 2);
    ck_assert_uint_ge(eigen, 2);
}
END_TEST

START_TEST(random_qd_symmetric_psd_and_doubling_exact)
{
    /* on well-scaled random systems the doubling and the plain block form
     * (step_norm large, s = 0) agree; both symmetric PSD */
    gsl_rng *r = gsl_rng_alloc(gsl_rng_mt19937);
    size_t k, i, j;
    double worst = 0.0;

    gsl_rng_set(r, 11);
    for (k = 0; k < 30; k++) {
        const size_t n = 1 + k % 7, m = 1 + k % 3;
        const double T = 0.01 + 0.3 * gsl_rng_uniform(r);
        gsl_matrix *A = gsl_matrix_alloc(n, n), *G = gsl_matrix_alloc(n, m), *Q1, *Q2;
        double qc[3];
        unsigned s1, s2;
        for (i = 0; i < n; i++)
            for (j = 0; j < n; j++)
                gsl_matrix_set(A, i, j, 4.0 * gsl_ran_gaussian(r, 1.0) - (i == j ? 3.0 : 0.0));
        for (i = 0; i < n; i++)
            for (j = 0; j < m; j++)
                gsl_matrix_set(G, i, j, gsl_ran_gaussian(r, 1.0));
        for (j = 0; j < m; j++)
            qc[j] = j == 1 ? 0.0 : 0.1 + gsl_rng_uniform(r);
        Q1 = qd_of(A, G, qc, T, 0, &s1, NULL);
        Q2 = qd_of(A, G, qc, T, 1e300, &s2, NULL);
        ck_assert_uint_eq(s2, 0);
        assert_psd(Q1, "Qd");
        ck_assert_matrix_rel(Q1, Q2, 1e-12);
        if (rigmat_test_matrix_reldiff(Q1, Q2) > worst)
            worst = rigmat_test_matrix_reldiff(Q1, Q2);
        gsl_matrix_free(A);
        gsl_matrix_free(G);
        gsl_matrix_free(Q1);
        gsl_matrix_free(Q2);
    }
    if (getenv("RIGMAT_TEST_VERBOSE") != NULL)
        fprintf(stderr, "Qd doubling vs plain block form: worst %.3g\n", worst);
    gsl_rng_free(r);
}
END_TEST

START_TEST(sensor_variances_follow_the_convention)
{
    /* README.md, "Noise convention": density N (intensity N^2):
     * sample average over T -> N^2 / T; first-order bandwidth f_c -> N^2 pi f_c;
     * resolution q -> q^2 / 12 (Widrow, Kollar, Liu 1996); noise sd -> sd^2 */
    const double deg = M_PI / 180.0, T = 0.005;
    /* a gyro of 0.01 deg/s/sqrt(Hz) behind 42 Hz */
    const double Ng = 0.01 * deg;
    rigmat_sensor_noise g = rigmat_noise_sensor(0, Ng, 42.0, 0, T);
    /* the same density averaged over the 5 ms sample */
    rigmat_sensor_noise a = rigmat_noise_sensor(0, Ng, 0, 0, T);
    /* an encoder of 48 counts per motor turn: q = 2 pi / 48 */
    rigmat_sensor_noise e = rigmat_noise_sensor(0, 0, 0, 2 * M_PI / 48, T);
    rigmat_sensor_noise c = rigmat_noise_sensor(0.02, Ng, 0, 1e-3, T);

    ck_assert_rel(g.density_var, Ng * Ng * M_PI * 42.0, 1e-15);
    /* python3: 0.01*math.pi/180*math.sqrt(42*math.pi) */
    ck_assert_rel(sqrt(g.total_var), 0.002004827215063954, 1e-15);
    ck_assert_rel(a.density_var, Ng * Ng / T, 1e-15);
    /* python3: 0.01*math.pi/180/math.sqrt(0.005) */
    ck_assert_rel(sqrt(a.total_var), 0.00246826829897687, 1e-15);
    ck_assert_rel(e.resolution_var, (2 * M_PI / 48) * (2 * M_PI / 48) / 12, 1e-15);
    /* B. Widrow, I. Kollar, M.-C. Liu, IEEE Trans. Instrum. Meas. 45(2), 1996: sigma =
     * q/sqrt(12); a 4096-count encoder, q = 2 pi/4096: 4.428221104087446e-4 rad (mpmath) */
    ck_assert_rel(sqrt(rigmat_noise_sensor(0, 0, 0, 2 * M_PI / 4096, T).total_var),
                  4.428221104087446e-4, 1e-15);
    ck_assert_rel(c.total_var, 0.02 * 0.02 + Ng * Ng / T + 1e-6 / 12, 1e-15);
    ck_assert_rel(rigmat_noise_sample_sd(0.64, 0.005), sqrt(0.64 / 0.005), 1e-15);
}
END_TEST

START_TEST(direct_disturbance_adds_to_rd_and_cross_covariance)
{
    /* closed form: x' = -a x + g w, y1 = x + e w (w reaches y1 directly), y2 = x;
     * white w of intensity Qc; averaged over the period:
     * Rd11 += e^2 Qc / T, S = Gamma_G Qc e / T with Gamma_G = g (1 - e^{-a T}) / a,
     * Qd = g^2 Qc (1 - e^{-2 a T}) / (2 a) */
    const double a = 3.7, g = 1.9, e = 0.45, qc = 0.81, T = 0.02, sd = 0.013;
    rigmat_lti *s = rigmat_lti_alloc(1, 2, 2, 1);
    rigmat_discretize_opts o = rigmat_discretize_opts_default();
    rigmat_discretize_ws *dw = rigmat_discretize_ws_alloc(1, 2, 2);
    rigmat_noise_opts no = rigmat_noise_opts_default();
    rigmat_noise_ws *nw = rigmat_noise_ws_alloc(1, 1);
    rigmat_dlti *d = NULL;
    rigmat_noise *nz = NULL;
    const double gam = -g * expm1(-a * T) / a;

    gsl_matrix_set(s->A, 0, 0, -a);
    gsl_matrix_set(s->B, 0, 0, 1.0);
    gsl_matrix_set(s->B, 0, 1, g);
    gsl_matrix_set(s->C, 0, 0, 1.0);
    gsl_matrix_set(s->C, 1, 0, 1.0);
    gsl_matrix_set(s->D, 0, 1, e);
    s->input_intensity[1] = qc;
    s->output_noise_sd[0] = sd;
    o.period_s = T;
    o.delay_samples = 1.5; /* delay states carry no noise */
    ck_assert_int_eq(rigmat_discretize(s, &o, dw, &d, NULL), RIGMAT_OK);
    ck_assert_int_eq(rigmat_noise_build(s, d, &no, nw, &nz, NULL), RIGMAT_OK);
    ck_assert_uint_eq(nz->nx, 3);
    ck_assert_uint_eq(nz->ndirect, 1);
    ck_assert_rel(gsl_matrix_get(nz->Qd, 0, 0), -g * g * qc * expm1(-2 * a * T) / (2 * a), 1e-14);
    ck_assert(gsl_matrix_get(nz->Qd, 1, 1) == 0.0 && gsl_matrix_get(nz->Qd, 0, 2) == 0.0);
    ck_assert_rel(gsl_matrix_get(nz->Rd, 0, 0), sd * sd + e * e * qc / T, 1e-14);
    ck_assert_rel(nz->direct_var[0], e * e * qc / T, 1e-14);
    ck_assert(gsl_matrix_get(nz->Rd, 1, 1) == 0.0 && gsl_matrix_get(nz->Rd, 0, 1) == 0.0);
    ck_assert_ptr_nonnull(nz->S);
    ck_assert_rel(gsl_matrix_get(nz->S, 0, 0), gam * qc * e / T, 1e-14);
    ck_assert(gsl_matrix_get(nz->S, 0, 1) == 0.0 && gsl_matrix_get(nz->S, 1, 0) == 0.0);
    ck_assert_rel(nz->disturbance_sd[0], sqrt(qc / T), 1e-15);
    rigmat_noise_free(nz);
    /* coloured instead (no direct path): no S */
    gsl_matrix_set(s->D, 0, 1, 0.0);
    ck_assert_int_eq(rigmat_noise_build(s, d, &no, nw, &nz, NULL), RIGMAT_OK);
    ck_assert_ptr_null(nz->S);
    ck_assert_uint_eq(nz->ndirect, 0);
    rigmat_noise_free(nz);
    rigmat_dlti_free(d);
    /* Tustin: the same Qd, not labelled exact */
    o.method = RIGMAT_METHOD_TUSTIN;
    o.delay_samples = 0;
    ck_assert_int_eq(rigmat_discretize(s, &o, dw, &d, NULL), RIGMAT_OK);
    ck_assert_int_eq(rigmat_noise_build(s, d, &no, nw, &nz, NULL), RIGMAT_OK);
    ck_assert_int_eq(nz->qd_exact, 0);
    ck_assert_rel(gsl_matrix_get(nz->Qd, 0, 0), -g * g * qc * expm1(-2 * a * T) / (2 * a), 1e-14);
    rigmat_noise_free(nz);
    rigmat_dlti_free(d);
    rigmat_lti_free(s);
    rigmat_discretize_ws_free(dw);
    rigmat_noise_ws_free(nw);
}
END_TEST

/* A workspace for no disturbance holds only what the zero Qd needs: the
 * doubling's exponential refuses it instead of running on missing room. */
START_TEST(workspace_without_disturbance_is_small_and_refuses_qd)
{
    rigmat_noise_opts o = rigmat_noise_opts_default();
    rigmat_noise_ws *w = rigmat_noise_ws_alloc(3, 0);
    gsl_matrix *A = gsl_matrix_calloc(3, 3), *G = gsl_matrix_calloc(3, 1);
    gsl_matrix *Q = gsl_matrix_alloc(3, 3);
    const double qc[] = { 1.0 };
    rigmat_error err;

    ck_assert_ptr_nonnull(w);
    ck_assert_ptr_nonnull(w->T2);
    ck_assert_ptr_null(w->expm);
    ck_assert_ptr_null(w->M);
    memset(&err, 0, sizeof err);
    ck_assert_int_eq(rigmat_noise_qd(A, G, qc, 0.01, &o, w, Q, NULL, &err), RIGMAT_EUSAGE);
    ck_assert_ptr_nonnull(strstr(err.message, "no disturbance"));
    rigmat_noise_ws_free(w);
    gsl_matrix_free(A);
    gsl_matrix_free(G);
    gsl_matrix_free(Q);
}
END_TEST

START_TEST(bad_intensity_is_refused)
{
    const double a[] = { -1 }, g[] = { 1 }, q = -0.5;
    gsl_matrix *A = tu_mat(1, 1, a), *G = tu_mat(1, 1, g), *Q;
    rigmat_status st;

    Q = qd_of(A, G, &q, 0.01, 0, NULL, &st);
    ck_assert_int_eq(st, RIGMAT_EUSAGE);
    gsl_matrix_free(Q);
    Q = qd_of(A, G, &g[0], -0.01, 0, NULL, &st);
    ck_assert_int_eq(st, RIGMAT_EUSAGE);
    gsl_matrix_free(Q);
    /* no intensity: Qd = 0 */
    {
        const double z = 0.0;
        Q = qd_of(A, G, &z, 0.01, 0, NULL, NULL);
        ck_assert(gsl_matrix_get(Q, 0, 0) == 0.0);
        gsl_matrix_free(Q);
    }
    gsl_matrix_free(A);
    gsl_matrix_free(G);
    rigmat_noise_ws_free(NULL);
    rigmat_noise_free(NULL);
}
END_TEST

Suite *noise_suite(void);
Suite *noise_suite(void)
{
    Suite *s = suite_create("noise");
    TCase *tq = tcase_create("process");
    TCase *tr = tcase_create("measurement");

    tcase_add_test(tq, double_integrator_closed_form);
    tcase_add_test(tq, reference_two_state_value);
    tcase_add_test(tq, stiff_motor_matches_mpmath);
    tcase_add_test(tq, stiff_oscillators_right_or_refused);
    tcase_add_test(tq, random_qd_symmetric_psd_and_doubling_exact);
    tcase_add_test(tq, bad_intensity_is_refused);
    tcase_add_test(tq, workspace_without_disturbance_is_small_and_refuses_qd);
    suite_add_tcase(s, tq);
    tcase_add_test(tr, sensor_variances_follow_the_convention);
    tcase_add_test(tr, direct_disturbance_adds_to_rd_and_cross_covariance);
    suite_add_tcase(s, tr);
    return s;
}
