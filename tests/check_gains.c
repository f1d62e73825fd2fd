/* check_gains.c - the steady-state Kalman filter and LQR (src/study/gains.c)
 * against scalar closed forms. */
#include "gains.h"
#include "weights.h"
#include "testutil.h"

#include <math.h>
#include <string.h>
#include <stdio.h>
#include <stdlib.h>
#include <gsl/gsl_complex_math.h>

/* A random walk x[k+1] = x[k] + w, y = x + v, E[w^2] = q, E[v^2] = r,
 * E[w v] = s.  The filter DARE P = P - (P + s)^2 / (P + r) + q gives
 * P^2 + (2 s - q) P + s^2 - q r = 0, so
 *     P = ((q - 2 s) + sqrt(q^2 - 4 q s + 4 q r)) / 2,
 * M = P / (P + r), P+ = P r / (P + r), Re = P + r, Kp = (P + s) / (P + r),
 * estimator pole 1 - Kp (the scalar forms of B. D. O. Anderson,
 * J. B. Moore, "Optimal Filtering", 1979, sections 3.3 and 5.5, worked
 * here by hand). */
static void random_walk(double q, double r, double s)
{
    gsl_matrix *A = gsl_matrix_alloc(1, 1), *C = gsl_matrix_alloc(1, 1);
    gsl_matrix *Q = gsl_matrix_alloc(1, 1), *R = gsl_matrix_alloc(1, 1);
    gsl_matrix *S = gsl_matrix_alloc(1, 1);
    rigmat_gains_ws *gw = rigmat_gains_ws_alloc(1, 1);
    rigmat_riccati_ws *rw = rigmat_riccati_ws_alloc(1, 1);
    rigmat_kalman *k = NULL;
    rigmat_error err;
    const double P = ((q - 2 * s) + sqrt(q * q - 4 * q * s + 4 * q * r)) / 2;

    memset(&err, 0, sizeof err);
    gsl_matrix_set(A, 0, 0, 1.0);
    gsl_matrix_set(C, 0, 0, 1.0);
    gsl_matrix_set(Q, 0, 0, q);
    gsl_matrix_set(R, 0, 0, r);
    gsl_matrix_set(S, 0, 0, s);
    ck_assert_int_eq(
            rigmat_kalman_solve(A, C, Q, R, s != 0.0 ? S : NULL, NULL, gw, rw, &k, NULL, &err),
            RIGMAT_OK);
    ck_assert_rel(gsl_matrix_get(k->prior, 0, 0), P, 1e-13);
    ck_assert_rel(gsl_matrix_get(k->gain, 0, 0), P / (P + r), 1e-13);
    ck_assert_rel(gsl_matrix_get(k->posterior, 0, 0), P * r / (P + r), 1e-13);
    ck_assert_rel(gsl_matrix_get(k->innovation, 0, 0), P + r, 1e-13);
    ck_assert_rel(gsl_vector_get(k->output_sd, 0), sqrt(P + r), 1e-13);
    ck_assert_rel(gsl_matrix_get(k->predictor_gain, 0, 0), (P + s) / (P + r), 1e-13);
    ck_assert_rel(GSL_REAL(gsl_vector_complex_get(k->poles, 0)), 1.0 - (P + s) / (P + r), 1e-12);
    ck_assert(k->info.residual <= 1e-15);
    rigmat_kalman_free(k);
    rigmat_gains_ws_free(gw);
    rigmat_riccati_ws_free(rw);
    gsl_matrix_free(A);
    gsl_matrix_free(C);
    gsl_matrix_free(Q);
    gsl_matrix_free(R);
    gsl_matrix_free(S);
}

START_TEST(random_walk_filter_matches_closed_form)
{
    random_walk(0.037, 0.81, 0.0);
}
END_TEST

START_TEST(random_walk_with_cross_covariance_matches_closed_form)
{
    /* [[q, s], [s, r]] positive definite: s^2 < q r */
    random_walk(0.037, 0.81, 0.113);
    random_walk(0.037, 0.81, -0.0917);
}
END_TEST

START_TEST(double_integrator_lqr_is_stabilizing_and_consistent)
{
    /* A sampled double integrator (T = 0.005 s) with Bryson weights: the
     * gain must satisfy its own definition K = (R + B^T X B)^-1 B^T X A
     * and place every closed-loop pole inside the unit circle, and the
     * cost-to-go of the initial state e_0 must equal the sum of the stage
     * costs along the closed-loop trajectory (dynamic programming; the
     * sum converges since the loop is stable). */
    const double T = 0.005;
    gsl_matrix *A = gsl_matrix_alloc(2, 2), *B = gsl_matrix_alloc(2, 1);
    gsl_matrix *Q = gsl_matrix_calloc(2, 2), *R = gsl_matrix_alloc(1, 1);
    rigmat_riccati_ws *rw = rigmat_riccati_ws_alloc(2, 1);
    rigmat_lqr *l = NULL;
    rigmat_error err;
    double x[2] = { 1.0, 0.0 }, cost = 0.0;
    size_t i, k;

    memset(&err, 0, sizeof err);
    gsl_matrix_set(A, 0, 0, 1.0);
    gsl_matrix_set(A, 0, 1, T);
    gsl_matrix_set(A, 1, 0, 0.0);
    gsl_matrix_set(A, 1, 1, 1.0);
    gsl_matrix_set(B, 0, 0, T * T / 2);
    gsl_matrix_set(B, 1, 0, T);
    gsl_matrix_set(Q, 0, 0, 1.0 / (0.02 * 0.02));
    gsl_matrix_set(Q, 1, 1, 1.0 / (0.3 * 0.3));
    gsl_matrix_set(R, 0, 0, 1.0 / (4.0 * 4.0));
    ck_assert_int_eq(rigmat_lqr_solve(A, B, Q, R, NULL, rw, &l, NULL, &err), RIGMAT_OK);
    for (i = 0; i < 2; i++)
        ck_assert(gsl_complex_abs(gsl_vector_complex_get(l->poles, i)) < 1.0);
    for (k = 0; k < 200000; k++) {
        const double u =
                -(gsl_matrix_get(l->gain, 0, 0) * x[0] + gsl_matrix_get(l->gain, 0, 1) * x[1]);
        const double x0 = x[0] + T * x[1] + T * T / 2 * u, x1 = x[1] + T * u;
        cost += gsl_matrix_get(Q, 0, 0) * x[0] * x[0] + gsl_matrix_get(Q, 1, 1) * x[1] * x[1] +
                gsl_matrix_get(R, 0, 0) * u * u;
        x[0] = x0;
        x[1] = x1;
    }
    ck_assert_rel(gsl_matrix_get(l->cost_to_go, 0, 0), cost, 1e-10);
    rigmat_lqr_free(l);
    rigmat_riccati_ws_free(rw);
    gsl_matrix_free(A);
    gsl_matrix_free(B);
    gsl_matrix_free(Q);
    gsl_matrix_free(R);
}
END_TEST


/* An input without a weight takes the room to its nearer limit from the
 * operating point (Bryson's rule on the deviation, README.md, "Gains: the Kalman filter and the LQR"):
 * u0 = 0.3 in [-1, 1] leaves 0.7, so R = 1/0.7^2. */
START_TEST(input_without_a_weight_takes_the_room_to_its_limit)
{
    rigmat_lti *l = rigmat_lti_alloc(2, 1, 0, 1);
    rigmat_signal st[2], in[1];
    char n0[] = "x.position", n1[] = "x.rate", n2[] = "push";
    rigmat_options opt = rigmat_options_default();
    rigmat_weights *w = NULL;
    rigmat_diags d;
    char path[] = "/tmp/rigmat-weights-XXXXXX";
    const int fd = mkstemp(path);
    FILE *f = fd >= 0 ? fdopen(fd, "w") : NULL;

    ck_assert_ptr_nonnull(l);
    ck_assert_ptr_nonnull(f);
    fputs("states: {x.position: 0.1 m}\n", f);
    ck_assert_int_eq(fclose(f), 0);
    memset(st, 0, sizeof st);
    memset(in, 0, sizeof in);
    st[0].name = n0;
    snprintf(st[0].unit, sizeof st[0].unit, "m");
    st[1].name = n1;
    snprintf(st[1].unit, sizeof st[1].unit, "m/s");
    in[0].name = n2;
    snprintf(in[0].unit, sizeof in[0].unit, "1");
    in[0].kind = RIGMAT_SIG_MOTOR;
    in[0].has_limit = 1;
    in[0].limit[0] = -1.0;
    in[0].limit[1] = 1.0;
    ck_assert_int_eq(rigmat_lti_set_signals(l, st, in, NULL), RIGMAT_OK);
    gsl_vector_set(l->u0, 0, 0.3);
    rigmat_diags_init(&d);
    ck_assert_int_eq(rigmat_weights_load(path, l, &opt, &w, &d), RIGMAT_OK);
    ck_assert_rel(w->u_max[0], 0.7, 1e-15);
    ck_assert_rel(gsl_matrix_get(w->R, 0, 0), 1.0 / (0.7 * 0.7), 1e-14);
    ck_assert_int_eq(w->u_from_limit[0], 1);
    rigmat_weights_free(w);
    /* without a limit the weight is missing: an error naming the input */
    l->inputs[0].has_limit = 0;
    rigmat_diags_release(&d);
    rigmat_diags_init(&d);
    ck_assert_int_eq(rigmat_weights_load(path, l, &opt, &w, &d), RIGMAT_EMODEL);
    ck_assert(d.count > 0 && strstr(d.items[0].message, "'push' has no weight") != NULL);
    rigmat_diags_release(&d);
    remove(path);
    rigmat_lti_free(l);
}
END_TEST

Suite *gains_suite(void);
Suite *gains_suite(void)
{
    Suite *s = suite_create("gains");
    TCase *t = tcase_create("closed_forms");

    tcase_add_test(t, random_walk_filter_matches_closed_form);
    tcase_add_test(t, random_walk_with_cross_covariance_matches_closed_form);
    tcase_add_test(t, double_integrator_lqr_is_stabilizing_and_consistent);
    tcase_add_test(t, input_without_a_weight_takes_the_room_to_its_limit);
    suite_add_tcase(s, t);
    return s;
}
