/* check_discretize.c - sampled models (src/sample/discretize.c) against closed
 * forms, check values computed with mpmath and scipy (named beside each), and an
 * integration of a delayed system. */
#include "discretize.h"
#include "affine.h"
#include "testutil.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <float.h>
#include <gsl/gsl_complex.h>
#include <gsl/gsl_complex_math.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_math.h>

/* tolerances (common practice, measured here against mpmath at 40 digits):
 * 1e-13 relative for expm-based results, 1e-12 after two or more factorizations */
#define TOL_EXPM  1e-13
#define TOL_SCIPY 1e-12

/* the 2-state system x'' + 3 x' + 2 x = u (eigenvalues -1, -2) */
static rigmat_lti *ref2(void)
{
    const double a[] = { 0, 1, -2, -3 }, b[] = { 0, 1 }, c[] = { 1, 0 };
    rigmat_lti *s = rigmat_lti_alloc(2, 1, 1, 1);

    ck_assert_ptr_nonnull(s);
    tu_fill(s->A, a);
    tu_fill(s->B, b);
    tu_fill(s->C, c);
    return s;
}

static rigmat_dlti *run(const rigmat_lti *s, rigmat_method m, double T, double prewarp_hz,
                        double delay)
{
    rigmat_discretize_opts o = rigmat_discretize_opts_default();
    rigmat_discretize_ws *w = rigmat_discretize_ws_alloc(s->nx, s->nu, s->ny);
    rigmat_dlti *d = NULL;
    rigmat_error err;
    rigmat_status st;

    ck_assert_ptr_nonnull(w);
    memset(&err, 0, sizeof err);
    o.method = m;
    o.period_s = T;
    o.prewarp_hz = prewarp_hz;
    o.delay_samples = delay;
    st = rigmat_discretize(s, &o, w, &d, &err);
    ck_assert_msg(st == RIGMAT_OK, "discretize failed: %s", err.message);
    rigmat_discretize_ws_free(w);
    return d;
}

static void expect(const gsl_matrix *got, size_t r, size_t c, const double *want, double tol)
{
    gsl_matrix *W = tu_mat(r, c, want);

    ck_assert_ptr_nonnull(got);
    ck_assert_matrix_rel(got, W, tol);
    gsl_matrix_free(W);
}

START_TEST(reference_check_values)
{
    /* check values of scipy.signal.cont2discrete (scipy 1.10) for each method,
     * confirmed with mpmath.expm at 40 digits for zoh and foh:
     * A = [[0, 1], [-2, -3]], B = [0; 1], C = [1 0], D = 0, T = 0.1 */
    rigmat_lti *s = ref2();
    rigmat_dlti *d;
    const double zoh_a[] = { 0.99094408299393729, 0.086106664957977714, -0.17221332991595543,
                             0.73262408812000414 };
    const double zoh_b[] = { 4.5279585030313562e-3, 0.086106664957977714 };
    const double foh_b[] = { 8.4128203614381649e-3, 0.073733529337750794 };
    const double tus_a[] = { 0.99134199134199134, 0.08658008658008658, -0.17316017316017316,
                             0.7316017316017316 };
    const double tus_b[] = { 4.329004329004329e-3, 0.08658008658008658 };
    const double tus_c[] = { 0.99567099567099567, 0.04329004329004329 };
    const double tw_a[] = { 0.99099470877649868, 0.088168945980729772, -0.17633789196145954,
                            0.72648787083430936 };
    const double tw_b[] = { 4.5026456117506607e-3, 0.088168945980729772 };
    const double tw_c[] = { 0.99549735438824934, 0.044084472990364886 };
    const double eu_a[] = { 1, 0.1, -0.2, 0.7 }, eu_b[] = { 0, 0.1 }, c1[] = { 1, 0 };
    const double be_a[] = { 0.98484848484848485, 0.075757575757575758, -0.15151515151515152,
                            0.75757575757575758 };
    const double be_b[] = { 7.5757575757575758e-3, 0.075757575757575758 };
    const double be_c[] = { 0.98484848484848485, 0.075757575757575758 };

    d = run(s, RIGMAT_METHOD_ZOH, 0.1, 0, 0);
    expect(d->Ad, 2, 2, zoh_a, TOL_EXPM);
    expect(d->Bd, 2, 1, zoh_b, TOL_EXPM);
    expect(d->Cd, 1, 2, c1, 0);
    ck_assert(gsl_matrix_get(d->Dd, 0, 0) == 0.0);
    ck_assert_ptr_null(d->Gd);
    rigmat_dlti_free(d);
    d = run(s, RIGMAT_METHOD_FOH, 0.1, 0, 0);
    expect(d->Ad, 2, 2, zoh_a, TOL_EXPM);
    expect(d->Bd, 2, 1, foh_b, TOL_EXPM);
    expect(d->Cd, 1, 2, c1, 0);
    ck_assert_rel(gsl_matrix_get(d->Dd, 0, 0), 1.547297664641085e-3, TOL_EXPM);
    rigmat_dlti_free(d);
    d = run(s, RIGMAT_METHOD_TUSTIN, 0.1, 0, 0);
    expect(d->Ad, 2, 2, tus_a, TOL_EXPM);
    expect(d->Bd, 2, 1, tus_b, TOL_EXPM);
    expect(d->Cd, 1, 2, tus_c, TOL_EXPM);
    ck_assert_rel(gsl_matrix_get(d->Dd, 0, 0), 2.1645021645021645e-3, TOL_EXPM);
    rigmat_dlti_free(d);
    /* prewarped at w1 = 5 rad/s */
    d = run(s, RIGMAT_METHOD_TUSTIN, 0.1, 5.0 / (2 * M_PI), 0);
    expect(d->Ad, 2, 2, tw_a, TOL_EXPM);
    expect(d->Bd, 2, 1, tw_b, TOL_EXPM);
    expect(d->Cd, 1, 2, tw_c, TOL_EXPM);
    ck_assert_rel(gsl_matrix_get(d->Dd, 0, 0), 2.2513228058753304e-3, TOL_EXPM);
    rigmat_dlti_free(d);
    d = run(s, RIGMAT_METHOD_EULER, 0.1, 0, 0);
    expect(d->Ad, 2, 2, eu_a, 2 * DBL_EPSILON);
    expect(d->Bd, 2, 1, eu_b, 2 * DBL_EPSILON);
    rigmat_dlti_free(d);
    d = run(s, RIGMAT_METHOD_BACKWARD_EULER, 0.1, 0, 0);
    expect(d->Ad, 2, 2, be_a, TOL_EXPM);
    expect(d->Bd, 2, 1, be_b, TOL_EXPM);
    expect(d->Cd, 1, 2, be_c, TOL_EXPM);
    ck_assert_rel(gsl_matrix_get(d->Dd, 0, 0), 7.5757575757575758e-3, TOL_EXPM);
    rigmat_dlti_free(d);
    rigmat_lti_free(s);
}
END_TEST

START_TEST(prewarped_tustin_is_exact_at_its_frequency)
{
    /* mpmath at 40 digits, C (j5 I - A)^-1 B:
     * G_c(j5) = -0.030503978779840849 - 0.019893899204244032j,
     * and the prewarped map matches it at w1 = 5 rad/s */
    rigmat_lti *s = ref2();
    const double T = 0.1, w1 = 5.0;
    rigmat_dlti *d = run(s, RIGMAT_METHOD_TUSTIN, T, w1 / (2 * M_PI), 0);
    gsl_matrix_complex *M = gsl_matrix_complex_alloc(2, 2);
    gsl_vector_complex *b = gsl_vector_complex_alloc(2), *x = gsl_vector_complex_alloc(2);
    gsl_permutation *p = gsl_permutation_alloc(2);
    const gsl_complex z = gsl_complex_polar(1.0, w1 * T);
    gsl_complex g;
    size_t i, j;
    int sg;

    /* G_d(z) = Cd (z I - Ad)^-1 Bd + Dd */
    for (i = 0; i < 2; i++) {
        for (j = 0; j < 2; j++) {
            gsl_complex e = gsl_complex_rect(-gsl_matrix_get(d->Ad, i, j), 0.0);
            if (i == j)
                e = gsl_complex_add(e, z);
            gsl_matrix_complex_set(M, i, j, e);
        }
        gsl_vector_complex_set(b, i, gsl_complex_rect(gsl_matrix_get(d->Bd, i, 0), 0.0));
    }
    ck_assert_int_eq(gsl_linalg_complex_LU_decomp(M, p, &sg), 0);
    ck_assert_int_eq(gsl_linalg_complex_LU_solve(M, p, b, x), 0);
    g = gsl_complex_rect(gsl_matrix_get(d->Dd, 0, 0), 0.0);
    for (j = 0; j < 2; j++)
        g = gsl_complex_add(
                g, gsl_complex_mul_real(gsl_vector_complex_get(x, j), gsl_matrix_get(d->Cd, 0, j)));
    ck_assert_rel(GSL_REAL(g), -0.030503978779840849, 1e-13);
    ck_assert_rel(GSL_IMAG(g), -0.019893899204244032, 1e-13);
    gsl_matrix_complex_free(M);
    gsl_vector_complex_free(b);
    gsl_vector_complex_free(x);
    gsl_permutation_free(p);
    rigmat_dlti_free(d);
    rigmat_lti_free(s);
}
END_TEST

START_TEST(first_order_lag_closed_form)
{
    /* closed form: x' = -x/tau + (K/tau) u under ZOH: a = exp(-T/tau), b = K (1 - a);
     * K = 2, tau = 0.5, T = 0.1 gives 0.81873075307798186 and 0.36253849384403628
     * (mpmath at 40 digits) */
    const double taus[] = { 0.5, 3.1e-4, 47.0 }, Ts[] = { 0.1, 0.01, 0.0023 };
    size_t i, k;

    for (i = 0; i < 3; i++)
        for (k = 0; k < 3; k++) {
            const double K = 2.0, tau = taus[i], T = Ts[k];
            rigmat_lti *s = rigmat_lti_alloc(1, 1, 1, 1);
            rigmat_dlti *d;
            gsl_matrix_set(s->A, 0, 0, -1.0 / tau);
            gsl_matrix_set(s->B, 0, 0, K / tau);
            gsl_matrix_set(s->C, 0, 0, 1.0);
            d = run(s, RIGMAT_METHOD_ZOH, T, 0, 0);
            ck_assert_rel(gsl_matrix_get(d->Ad, 0, 0), exp(-T / tau), TOL_EXPM);
            ck_assert_rel(gsl_matrix_get(d->Bd, 0, 0), -K * expm1(-T / tau), TOL_EXPM);
            if (i == 0 && k == 0) {
                ck_assert_rel(gsl_matrix_get(d->Ad, 0, 0), 0.81873075307798186, 1e-15);
                ck_assert_rel(gsl_matrix_get(d->Bd, 0, 0), 0.36253849384403628, 1e-15);
            }
            rigmat_dlti_free(d);
            rigmat_lti_free(s);
        }
}
END_TEST

START_TEST(double_integrator_zoh_closed_form)
{
    /* closed form (FPW 1998, chapter 4): A = [[0, 1], [0, 0]], B = [0; 1]:
     * Ad = [[1, T], [0, 1]], Bd = [T^2/2; T] (A singular: no A^-1 anywhere) */
    const double Ts[] = { 0.005, 0.1, 2.7 };
    size_t k;

    for (k = 0; k < 3; k++) {
        const double T = Ts[k];
        const double a[] = { 0, 1, 0, 0 }, b[] = { 0, 1 };
        const double ad[] = { 1, T, 0, 1 }, bd[] = { T * T / 2, T };
        rigmat_lti *s = rigmat_lti_alloc(2, 1, 0, 1);
        rigmat_dlti *d;
        tu_fill(s->A, a);
        tu_fill(s->B, b);
        d = run(s, RIGMAT_METHOD_ZOH, T, 0, 0);
        expect(d->Ad, 2, 2, ad, 4 * DBL_EPSILON);
        expect(d->Bd, 2, 1, bd, 4 * DBL_EPSILON);
        ck_assert_ptr_null(d->Cd);
        rigmat_dlti_free(d);
        rigmat_lti_free(s);
    }
}
END_TEST

/* ------------------------------------------------------------ scipy */

/* Columns [c0, c0 + nc) of M against columns of W, normwise. */
static double coldiff(const gsl_matrix *M, const gsl_matrix *W, size_t c0, size_t nc)
{
    gsl_matrix_const_view a = gsl_matrix_const_submatrix(W, 0, c0, W->size1, nc);

    return rigmat_test_matrix_reldiff(M, &a.matrix);
}

START_TEST(every_method_matches_scipy)
{
    /* tests/ref/discretize_cases.txt: scipy.signal.cont2discrete((A, B, C, D), T, method)
     * for zoh, foh, bilinear, euler, backward_diff, and bilinear at T_w for the
     * prewarped Tustin (generated by tests/ref/gen_discretize_cases.py) */
    FILE *f = fopen("ref/discretize_cases.txt", "r");
    char line[256], name[64], meth[64];
    size_t systems = 0, compared = 0;
    double worst = 0.0;

    ck_assert_msg(f != NULL, "cannot open ref/discretize_cases.txt (run from tests/)");
    while (fgets(line, sizeof line, f) != NULL) {
        size_t n, m, p, k, nuc;
        double T, f1;
        rigmat_lti *s;
        if (line[0] == '#' || line[0] == '\n')
            continue;
        ck_assert_int_eq(sscanf(line, "system %63s %zu %zu %zu %lf %lf", name, &n, &m, &p, &T, &f1),
                         6);
        /* with two or more inputs the last one is a disturbance: Bd | Gd, Dd | Ed */
        nuc = m >= 2 ? m - 1 : m;
        s = rigmat_lti_alloc(n, m, p, nuc);
        {
            gsl_matrix *A = tu_read_mat(f, n, n), *B = tu_read_mat(f, n, m),
                       *C = tu_read_mat(f, p, n), *D = tu_read_mat(f, p, m);
            gsl_matrix_memcpy(s->A, A);
            gsl_matrix_memcpy(s->B, B);
            gsl_matrix_memcpy(s->C, C);
            gsl_matrix_memcpy(s->D, D);
            gsl_matrix_free(A);
            gsl_matrix_free(B);
            gsl_matrix_free(C);
            gsl_matrix_free(D);
        }
        for (k = 0; k < 6; k++) {
            rigmat_method me;
            rigmat_dlti *d;
            gsl_matrix *Ad, *Bd, *Cd, *Dd;
            double e[6];
            size_t i;
            ck_assert_ptr_nonnull(fgets(line, sizeof line, f)); /* rest of the line */
            if (line[0] == '\n' || line[0] == ' ')
                ck_assert_ptr_nonnull(fgets(line, sizeof line, f));
            ck_assert_int_eq(sscanf(line, "method %63s", meth), 1);
            if (strcmp(meth, "tustin-prewarp") == 0)
                me = RIGMAT_METHOD_TUSTIN;
            else
                ck_assert_int_eq(rigmat_method_parse(meth, &me), 0);
            Ad = tu_read_mat(f, n, n);
            Bd = tu_read_mat(f, n, m);
            Cd = tu_read_mat(f, p, n);
            Dd = tu_read_mat(f, p, m);
            d = run(s, me, T, k == 5 ? f1 : 0.0, 0);
            e[0] = rigmat_test_matrix_reldiff(d->Ad, Ad);
            e[1] = coldiff(d->Bd, Bd, 0, nuc);
            e[2] = nuc < m ? coldiff(d->Gd, Bd, nuc, m - nuc) : 0.0;
            e[3] = rigmat_test_matrix_reldiff(d->Cd, Cd);
            /* an all-zero D (and Dd) compares absolutely */
            e[4] = coldiff(d->Dd, Dd, 0, nuc);
            e[5] = nuc < m ? coldiff(d->Ed, Dd, nuc, m - nuc) : 0.0;
            for (i = 0; i < 6; i++) {
                ck_assert_msg(e[i] <= TOL_SCIPY, "%s %s: matrix %zu differs by %.3g", name, meth, i,
                              e[i]);
                if (e[i] > worst)
                    worst = e[i];
            }
            gsl_matrix_free(Ad);
            gsl_matrix_free(Bd);
            gsl_matrix_free(Cd);
            gsl_matrix_free(Dd);
            rigmat_dlti_free(d);
            compared++;
        }
        rigmat_lti_free(s);
        systems++;
    }
    fclose(f);
    ck_assert_uint_ge(systems, 40);
    if (getenv("RIGMAT_TEST_VERBOSE") != NULL)
        fprintf(stderr,
                "discretize: %zu systems, %zu method runs, worst normwise difference "
                "from scipy %.3g\n",
                systems, compared, worst);
}
END_TEST

/* ------------------------------------------------------------ delay */

START_TEST(delay_gammas_of_the_lag)
{
    /* closed form (G. F. Franklin, J. D. Powell, M. L. Workman, Digital Control of
     * Dynamic Systems, 1998, section 4.3, from memory), evaluated with mpmath at 40
     * digits: lag K = 2, tau = 0.5, T = 0.1, delay 1.3 samples:
     * Gamma0 = 0.26128352920238836 (u[k-1]), Gamma1 = 0.10125496464164792 (u[k-2]) */
    rigmat_lti *s = rigmat_lti_alloc(1, 1, 1, 1);
    rigmat_dlti *d;

    gsl_matrix_set(s->A, 0, 0, -2.0);
    gsl_matrix_set(s->B, 0, 0, 4.0);
    gsl_matrix_set(s->C, 0, 0, 1.0);
    gsl_matrix_set(s->D, 0, 0, 0.25);
    d = run(s, RIGMAT_METHOD_ZOH, 0.1, 0, 1.3);
    ck_assert_uint_eq(d->nx, 3);
    ck_assert_uint_eq(d->ndelay, 2);
    ck_assert_rel(gsl_matrix_get(d->Ad, 0, 0), 0.81873075307798186, 1e-15);
    ck_assert_rel(gsl_matrix_get(d->Ad, 0, 1), 0.26128352920238836, TOL_EXPM);
    ck_assert_rel(gsl_matrix_get(d->Ad, 0, 2), 0.10125496464164792, TOL_EXPM);
    /* the chain: u[k-1]+ = u[k], u[k-2]+ = u[k-1] */
    ck_assert(gsl_matrix_get(d->Bd, 0, 0) == 0.0 && gsl_matrix_get(d->Bd, 1, 0) == 1.0 &&
              gsl_matrix_get(d->Bd, 2, 0) == 0.0);
    ck_assert(gsl_matrix_get(d->Ad, 2, 1) == 1.0 && gsl_matrix_get(d->Ad, 1, 2) == 0.0);
    /* D reads the input in effect at the sampling instant, u[k-2] */
    ck_assert(gsl_matrix_get(d->Cd, 0, 2) == 0.25 && gsl_matrix_get(d->Dd, 0, 0) == 0.0);
    ck_assert_str_eq(d->delay_states[0].name, "u1.delayed1");
    ck_assert_int_eq(d->delay_states[1].kind, RIGMAT_SIG_DELAY);
    rigmat_dlti_free(d);
    rigmat_lti_free(s);
}
END_TEST

START_TEST(delayed_recursion_matches_integration)
{
    /* tests/ref/delay_cases.txt: x' = A x + B u(t - tau) integrated by scipy
     * solve_ivp(method="DOP853", rtol=1e-13, atol=1e-15) between input changes */
    FILE *f = fopen("ref/delay_cases.txt", "r");
    char line[256];
    size_t n, m, p, K, cases = 0;
    double T, worst = 0.0;
    gsl_matrix *A, *B, *C, *D, *x0, *u;
    rigmat_lti *s;

    ck_assert_ptr_nonnull(f);
    do
        ck_assert_ptr_nonnull(fgets(line, sizeof line, f));
    while (line[0] == '#');
    ck_assert_int_eq(sscanf(line, "plant %zu %zu %zu %lf %zu", &n, &m, &p, &T, &K), 5);
    A = tu_read_mat(f, n, n);
    B = tu_read_mat(f, n, m);
    C = tu_read_mat(f, p, n);
    D = tu_read_mat(f, p, m);
    x0 = tu_read_mat(f, 1, n);
    u = tu_read_mat(f, K, m);
    s = rigmat_lti_alloc(n, m, p, m);
    gsl_matrix_memcpy(s->A, A);
    gsl_matrix_memcpy(s->B, B);
    gsl_matrix_memcpy(s->C, C);
    gsl_matrix_memcpy(s->D, D);
    for (;;) {
        size_t dd, k, i, j;
        double fr;
        rigmat_dlti *d;
        gsl_matrix *xs, *ys;
        double *z, *zn;
        if (fscanf(f, " delay %zu %lf", &dd, &fr) != 2)
            break;
        xs = tu_read_mat(f, K, n);
        ys = tu_read_mat(f, K, p);
        d = run(s, RIGMAT_METHOD_ZOH, T, 0, (double)dd + fr);
        ck_assert_uint_eq(d->ndelay, fr > 0 ? dd + 1 : dd);
        z = calloc(d->nx, sizeof *z);
        zn = calloc(d->nx, sizeof *zn);
        for (i = 0; i < n; i++)
            z[i] = gsl_matrix_get(x0, 0, i);
        for (k = 0; k < K; k++) {
            /* y[k] = Cd z + Dd u[k]; compare, then step */
            for (i = 0; i < p; i++) {
                double y = 0.0;
                for (j = 0; j < d->nx; j++)
                    y += gsl_matrix_get(d->Cd, i, j) * z[j];
                for (j = 0; j < m; j++)
                    y += gsl_matrix_get(d->Dd, i, j) * gsl_matrix_get(u, k, j);
                ck_assert_msg(fabs(y - gsl_matrix_get(ys, k, i)) <= 1e-12,
                              "delay %zu+%g: y[%zu][%zu] = %.17g, want %.17g", dd, fr, k, i, y,
                              gsl_matrix_get(ys, k, i));
                if (fabs(y - gsl_matrix_get(ys, k, i)) > worst)
                    worst = fabs(y - gsl_matrix_get(ys, k, i));
            }
            for (i = 0; i < n; i++)
                ck_assert_msg(fabs(z[i] - gsl_matrix_get(xs, k, i)) <= 1e-12,
                              "delay %zu+%g: x[%zu][%zu] = %.17g, want %.17g", dd, fr, k, i, z[i],
                              gsl_matrix_get(xs, k, i));
            for (i = 0; i < d->nx; i++) {
                double v = 0.0;
                for (j = 0; j < d->nx; j++)
                    v += gsl_matrix_get(d->Ad, i, j) * z[j];
                for (j = 0; j < m; j++)
                    v += gsl_matrix_get(d->Bd, i, j) * gsl_matrix_get(u, k, j);
                zn[i] = v;
            }
            memcpy(z, zn, d->nx * sizeof *z);
        }
        free(z);
        free(zn);
        gsl_matrix_free(xs);
        gsl_matrix_free(ys);
        rigmat_dlti_free(d);
        cases++;
    }
    fclose(f);
    ck_assert_uint_eq(cases, 5);
    if (getenv("RIGMAT_TEST_VERBOSE") != NULL)
        fprintf(stderr, "delay: %zu cases, worst output difference %.3g\n", cases, worst);
    gsl_matrix_free(A);
    gsl_matrix_free(B);
    gsl_matrix_free(C);
    gsl_matrix_free(D);
    gsl_matrix_free(x0);
    gsl_matrix_free(u);
    rigmat_lti_free(s);
}
END_TEST

START_TEST(delay_states_are_named_after_inputs)
{
    /* two control inputs and a disturbance, 2 whole samples: stage-major
     * names, the disturbance neither delayed nor named */
    static char n_drive[] = "drive", n_steer[] = "steer", n_push[] = "push";
    rigmat_signal inputs[3];
    rigmat_lti *s = ref2(), *s3 = rigmat_lti_alloc(2, 3, 1, 2);
    rigmat_dlti *d;
    const char *want[] = { "drive.delayed1", "steer.delayed1", "drive.delayed2", "steer.delayed2" };
    size_t i;

    memset(inputs, 0, sizeof inputs);
    inputs[0].name = n_drive;
    strcpy(inputs[0].unit, "V");
    inputs[1].name = n_steer;
    strcpy(inputs[1].unit, "rad");
    inputs[2].name = n_push;
    strcpy(inputs[2].unit, "N");
    inputs[2].role = RIGMAT_ROLE_DISTURBANCE;
    gsl_matrix_memcpy(s3->A, s->A);
    gsl_matrix_set(s3->B, 1, 0, 1.0);
    gsl_matrix_set(s3->B, 0, 1, 0.5);
    gsl_matrix_set(s3->B, 1, 2, 0.3);
    gsl_matrix_set(s3->C, 0, 0, 1.0);
    gsl_matrix_set(s3->D, 0, 2, 0.7);
    ck_assert_int_eq(rigmat_lti_set_signals(s3, NULL, inputs, NULL), RIGMAT_OK);
    d = run(s3, RIGMAT_METHOD_ZOH, 0.05, 0, 2.0);
    ck_assert_uint_eq(d->nx, 2 + 2 * 2);
    ck_assert_uint_eq(d->nw, 1);
    for (i = 0; i < 4; i++)
        ck_assert_str_eq(d->delay_states[i].name, want[i]);
    ck_assert_str_eq(d->delay_states[0].unit, "V");
    ck_assert_str_eq(d->delay_states[3].unit, "rad");
    /* the disturbance enters x directly, not through the chain, and keeps its feedthrough */
    ck_assert(gsl_matrix_get(d->Gd, 1, 0) != 0.0 && gsl_matrix_get(d->Gd, 2, 0) == 0.0);
    ck_assert(gsl_matrix_get(d->Ed, 0, 0) == 0.7);
    /* x+ gets Gamma from u[k-2], the second stage */
    ck_assert(gsl_matrix_get(d->Ad, 1, 4) != 0.0 && gsl_matrix_get(d->Ad, 1, 2) == 0.0);
    rigmat_dlti_free(d);
    rigmat_lti_free(s);
    rigmat_lti_free(s3);
}
END_TEST

/* ------------------------------------------------------------ errors, advice */

START_TEST(misuse_is_reported)
{
    rigmat_lti *s = ref2();
    rigmat_discretize_ws *w = rigmat_discretize_ws_alloc(2, 1, 1), *small;
    rigmat_discretize_opts o = rigmat_discretize_opts_default();
    rigmat_dlti *d = NULL;
    rigmat_error err;
    rigmat_method me;

    memset(&err, 0, sizeof err);
    o.period_s = 0.0;
    ck_assert_int_eq(rigmat_discretize(s, &o, w, &d, &err), RIGMAT_EUSAGE);
    ck_assert_ptr_null(d);
    o.period_s = 0.01;
    o.method = RIGMAT_METHOD_TUSTIN;
    o.delay_samples = 1.5;
    ck_assert_int_eq(rigmat_discretize(s, &o, w, &d, &err), RIGMAT_EUSAGE);
    ck_assert_ptr_nonnull(strstr(err.message, "zoh"));
    o.delay_samples = 0.0;
    o.prewarp_hz = 49.9; /* just below Nyquist (50 Hz): fine */
    ck_assert_int_eq(rigmat_discretize(s, &o, w, &d, &err), RIGMAT_OK);
    rigmat_dlti_free(d);
    o.prewarp_hz = 50.0; /* tan(pi/2) */
    ck_assert_int_eq(rigmat_discretize(s, &o, w, &d, &err), RIGMAT_EUSAGE);
    o.method = RIGMAT_METHOD_ZOH;
    o.prewarp_hz = 3.0;
    ck_assert_int_eq(rigmat_discretize(s, &o, w, &d, &err), RIGMAT_EUSAGE);
    o.prewarp_hz = 0.0;
    o.delay_samples = -1.0;
    ck_assert_int_eq(rigmat_discretize(s, &o, w, &d, &err), RIGMAT_EUSAGE);
    /* I - A T/2 singular: A = (2/T) I */
    o.delay_samples = 0.0;
    o.method = RIGMAT_METHOD_TUSTIN;
    gsl_matrix_set_identity(s->A);
    gsl_matrix_scale(s->A, 2.0 / 0.01);
    ck_assert_int_eq(rigmat_discretize(s, &o, w, &d, &err), RIGMAT_ENUMERIC);
    ck_assert_ptr_nonnull(strstr(err.message, "singular"));
    /* a workspace too small */
    small = rigmat_discretize_ws_alloc(1, 1, 1);
    ck_assert_int_eq(rigmat_discretize(s, &o, small, &d, &err), RIGMAT_EUSAGE);
    ck_assert_ptr_nonnull(strstr(err.message, "workspace"));
    ck_assert_int_eq(rigmat_method_parse("backward-euler", &me), 0);
    ck_assert_int_eq(me, RIGMAT_METHOD_BACKWARD_EULER);
    ck_assert_int_eq(rigmat_method_parse("bilinear", &me), -1);
    ck_assert_str_eq(rigmat_method_name(RIGMAT_METHOD_FOH), "foh");
    rigmat_discretize_ws_free(small);
    rigmat_discretize_ws_free(w);
    rigmat_discretize_ws_free(NULL);
    rigmat_dlti_free(NULL);
    rigmat_lti_free(s);
}
END_TEST

static size_t advice(const rigmat_lti *s, rigmat_method m, double T, rigmat_advice *items,
                     size_t cap)
{
    rigmat_discretize_opts o = rigmat_discretize_opts_default();
    const rigmat_sampling_limits lim = rigmat_sampling_limits_default();
    size_t count = 0;

    o.method = m;
    o.period_s = T;
    ck_assert_int_eq(rigmat_sampling_advice(s, &o, &lim, items, cap, &count, NULL), RIGMAT_OK);
    return count;
}

START_TEST(advice_fires_only_where_it_matters)
{
    /* a stiff motor [rate, current]: poles near -36 and -9964 1/s; at 100 Hz the
     * electrical pole is fast (|lambda| T = 100) and lives in the current */
    static char n_rate[] = "shaft.rate", n_cur[] = "drive.current";
    rigmat_signal states[2];
    rigmat_lti *s = rigmat_lti_alloc(2, 1, 0, 1);
    const double a[] = { 0, 2400, -150, -10000 };
    rigmat_advice it[8];
    size_t c;

    memset(states, 0, sizeof states);
    states[0].name = n_rate;
    states[0].kind = RIGMAT_SIG_RATE;
    states[1].name = n_cur;
    states[1].kind = RIGMAT_SIG_CURRENT;
    ck_assert_int_eq(rigmat_lti_set_signals(s, states, NULL, NULL), RIGMAT_OK);
    tu_fill(s->A, a);
    c = advice(s, RIGMAT_METHOD_ZOH, 0.01, it, 8);
    ck_assert_uint_eq(c, 1);
    ck_assert_int_eq(it[0].kind, RIGMAT_ADVICE_NEGLECT_L);
    ck_assert_uint_eq(it[0].state, 1);
    /* at 100 kHz the pole is slow: nothing to say */
    ck_assert_uint_eq(advice(s, RIGMAT_METHOD_ZOH, 1e-5, it, 8), 0);
    /* forward Euler at 100 Hz: -9964 T = -99.6, far outside the unit circle */
    c = advice(s, RIGMAT_METHOD_EULER, 0.01, it, 8);
    ck_assert_uint_eq(c, 2);
    ck_assert(it[0].kind == RIGMAT_ADVICE_EULER || it[1].kind == RIGMAT_ADVICE_EULER);
    /* an undamped 30 Hz mode sampled at 100 Hz: w T = 1.88 > pi/2 */
    {
        const double w = 2 * M_PI * 30.0;
        const double b[] = { 0, 1, -w * w, 0 };
        ck_assert_int_eq(rigmat_lti_set_signals(s, NULL, NULL, NULL), RIGMAT_OK);
        tu_fill(s->A, b);
        c = advice(s, RIGMAT_METHOD_ZOH, 0.01, it, 8);
        ck_assert_uint_eq(c, 1);
        ck_assert_int_eq(it[0].kind, RIGMAT_ADVICE_NYQUIST);
        ck_assert_rel(fabs(it[0].im), w, 1e-12);
        /* ... and at 1 kHz it is fine, but forward Euler makes it unstable */
        ck_assert_uint_eq(advice(s, RIGMAT_METHOD_ZOH, 0.001, it, 8), 0);
    }
    /* an unstable pole at +40 1/s (an inverted pendulum): fine at 1 kHz, not at 50 Hz */
    {
        const double b[] = { 0, 1, 1600, 0 };
        tu_fill(s->A, b);
        ck_assert_uint_eq(advice(s, RIGMAT_METHOD_ZOH, 0.001, it, 8), 0);
        c = advice(s, RIGMAT_METHOD_ZOH, 0.02, it, 8);
        ck_assert_uint_eq(c, 1);
        ck_assert_int_eq(it[0].kind, RIGMAT_ADVICE_UNSTABLE);
        ck_assert_rel(it[0].re, 40.0, 1e-12);
    }
    rigmat_lti_free(s);
}
END_TEST


/* The affine term of a first-order lag x' = a x + f0 (a = -2 1/s, f0 =
 * 3 per s, T = 0.1 s), scalar closed forms worked by hand:
 * zoh and foh (e^{aT} - 1)/a f0; euler T f0; backward Euler T f0/(1 - a T);
 * Tustin T f0/(1 - a T/2).  Zero f0 gives exactly zero. */
START_TEST(affine_term_of_a_lag_matches_closed_forms)
{
    const double a = -2.0, f = 3.0, T = 0.1;
    const rigmat_method methods[] = { RIGMAT_METHOD_ZOH, RIGMAT_METHOD_FOH, RIGMAT_METHOD_EULER,
        RIGMAT_METHOD_BACKWARD_EULER, RIGMAT_METHOD_TUSTIN };
    const double want[] = { (exp(a * T) - 1.0) / a * f, (exp(a * T) - 1.0) / a * f, T * f,
        T * f / (1.0 - a * T), T * f / (1.0 - a * T / 2.0) };
    rigmat_lti *l = rigmat_lti_alloc(1, 1, 0, 1);
    rigmat_discretize_opts o = rigmat_discretize_opts_default();
    gsl_vector *fd = gsl_vector_alloc(1);
    rigmat_error e;
    double big;
    size_t i;

    memset(&e, 0, sizeof e);
    gsl_matrix_set(l->A, 0, 0, a);
    gsl_matrix_set(l->B, 0, 0, 1.0);
    gsl_vector_set(l->f0, 0, f);
    o.period_s = T;
    for (i = 0; i < sizeof methods / sizeof methods[0]; i++) {
        o.method = methods[i];
        ck_assert_int_eq(rigmat_discretize_affine(l, &o, NULL, fd, &e), RIGMAT_OK);
        ck_assert_rel(gsl_vector_get(fd, 0), want[i], 1e-14);
    }
    ck_assert_int_eq((int)rigmat_affine_largest(l->f0, &big), 0);
    ck_assert_rel(big, f, 0);
    gsl_vector_set(l->f0, 0, 0.0);
    o.method = RIGMAT_METHOD_ZOH;
    ck_assert_int_eq(rigmat_discretize_affine(l, &o, NULL, fd, &e), RIGMAT_OK);
    ck_assert(gsl_vector_get(fd, 0) == 0.0);
    gsl_vector_free(fd);
    rigmat_lti_free(l);
}
END_TEST

Suite *discretize_suite(void);
Suite *discretize_suite(void)
{
    Suite *s = suite_create("discretize");
    TCase *tc = tcase_create("methods");
    TCase *td = tcase_create("delay");
    TCase *ta = tcase_create("advice");

    tcase_add_test(tc, reference_check_values);
    tcase_add_test(tc, prewarped_tustin_is_exact_at_its_frequency);
    tcase_add_test(tc, first_order_lag_closed_form);
    tcase_add_test(tc, double_integrator_zoh_closed_form);
    tcase_add_test(tc, every_method_matches_scipy);
    tcase_add_test(tc, misuse_is_reported);
    tcase_add_test(tc, affine_term_of_a_lag_matches_closed_forms);
    suite_add_tcase(s, tc);
    tcase_add_test(td, delay_gammas_of_the_lag);
    tcase_add_test(td, delayed_recursion_matches_integration);
    tcase_add_test(td, delay_states_are_named_after_inputs);
    suite_add_tcase(s, td);
    tcase_add_test(ta, advice_fires_only_where_it_matters);
    suite_add_tcase(s, ta);
    return s;
}
