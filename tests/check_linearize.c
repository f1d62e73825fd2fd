/* check_linearize.c - linearization against textbook models through
 * invariants, the layout (order, names, hash), the sign table, noise
 * scaling and a nonlinear simulation. */
#include "testutil.h"
#include "mechtest.h"
#include "linearize.h"

#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_math.h>

/* Our transfer function from input k to state row r. */
static double complex tf_state(const rigmat_lti *l, size_t r, size_t k, double complex s)
{
    double b[16], c[16];
    size_t i;
    for (i = 0; i < l->nx; i++) {
        b[i] = gsl_matrix_get(l->B, i, k);
        c[i] = i == r ? 1.0 : 0.0;
    }
    return tm_tf(l->A, b, c, 0.0, s);
}

static rigmat_model *cartpole(double M, double m, double lc, double inertia, double b, double g)
{
    rigmat_model *mod = tm_new("cart-pole");
    const size_t cart = tm_body(mod, "cart", M, 0.0, 0, 0);
    const size_t pole = tm_body(mod, "pole", m, inertia, 0, lc);
    rigmat_force *f;
    rigmat_link *d;

    mod->gravity_m_s2 = g;
    (void)tm_joint(mod, "rail", RIGMAT_JOINT_SLIDER, 0, cart);
    (void)tm_joint(mod, "pivot", RIGMAT_JOINT_HINGE, cart, pole);
    f = tm_force(mod, "push", RIGMAT_FORCE_POINT);
    f->body = cart;
    f->direction[0] = 1.0;
    if (b > 0) {
        d = tm_damper(mod, "rail_drag", RIGMAT_ATTACH_ACROSS);
        d->joint = 0;
        d->coefficient = b;
    }
    ck_assert_int_eq(tm_build(mod, NULL, 0), RIGMAT_OK);
    return mod;
}

START_TEST(point_mass_cartpole_has_the_reference_eigenvalues_and_cart_response)
{
    rigmat_model *m = cartpole(1.0, 0.1, 0.5, 0.0, 0.0, 9.81);
    rigmat_lti *l = tm_lin(m, NULL);
    gsl_matrix *Ar = gsl_matrix_calloc(4, 4);
    double re[4], im[4], br[4] = { 0, 1, 0, -2 }, cr[4] = { 1, 0, 0, 0 };
    size_t k;

    tm_eigs(l->A, re, im);
    /* point mass on a massless rod, th from upright (hand-derived by Lagrange's
     * equations, checked with sympy): th'' = (M + m) g th / (M l) - u / (M l), so the
     * eigenvalues are 0, 0, +-sqrt((M + m) g / (M l)) = +-4.6456431201718456 */
    ck_assert_rel(re[0], -4.6456431201718456, 1e-13);
    ck_assert_rel(re[3], 4.6456431201718456, 1e-13);
    ck_assert(fabs(re[1]) < 1e-13 && fabs(re[2]) < 1e-13);
    /* the same derivation: A and B of the state [p, p', th, th'] with th from
     * upright: A23 = -m g / M = -0.981, A43 = (M + m) g / (M l) = 21.582,
     * B = [0, 1/M, 0, -1/(M l)] = [0, 1, 0, -2] */
    gsl_matrix_set(Ar, 0, 1, 1.0);
    gsl_matrix_set(Ar, 1, 2, -0.981);
    gsl_matrix_set(Ar, 2, 3, 1.0);
    gsl_matrix_set(Ar, 3, 2, 21.582);
    /* the cart position's response is independent of the angle's sign convention */
    for (k = 0; k < 5; k++) {
        const double complex s = 0.37 + (0.5 + (double)k) * (double complex)I;
        const double complex want = tm_tf(Ar, br, cr, 0.0, s), got = tf_state(l, 0, 0, s);
        ck_assert_msg(cabs(got - want) <= 1e-12 * cabs(want), "k=%zu", k);
    }
    ck_assert(tm_fd_error(m) < 1e-7);
    gsl_matrix_free(Ar);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(uniform_rod_cartpole_matches_the_textbook_model)
{
    const double M = 0.5, mp = 0.2, L = 0.6, lc = 0.3, b = 0.1, g = 9.8;
    const double Ip = mp * L * L / 12.0; /* uniform rod about its centre */
    rigmat_model *m = cartpole(M, mp, lc, Ip, b, g);
    rigmat_lti *l = tm_lin(m, NULL);
    gsl_matrix *Ab = gsl_matrix_calloc(4, 4);
    const double p = Ip * (M + mp) + M * mp * lc * lc;
    /* G. F. Franklin, J. D. Powell, A. Emami-Naeini, Feedback Control of Dynamic
     * Systems (the cart with an inverted rod of inertia I about its centre,
     * cart friction b), linearized about upright (from memory):
     * state [x, x', phi, phi'], p = I (M + m) + M m l^2 */
    double bb[4], cx[4] = { 1, 0, 0, 0 }, cphi[4] = { 0, 0, 1, 0 };
    double re[4], im[4], rb[4], ib[4];
    size_t k;

    gsl_matrix_set(Ab, 0, 1, 1.0);
    gsl_matrix_set(Ab, 1, 1, -(Ip + mp * lc * lc) * b / p);
    gsl_matrix_set(Ab, 1, 2, mp * mp * g * lc * lc / p);
    gsl_matrix_set(Ab, 2, 3, 1.0);
    gsl_matrix_set(Ab, 3, 1, -mp * lc * b / p);
    gsl_matrix_set(Ab, 3, 2, mp * g * lc * (M + mp) / p);
    bb[0] = 0;
    bb[1] = (Ip + mp * lc * lc) / p;
    bb[2] = 0;
    bb[3] = mp * lc / p;
    ck_assert_str_eq(m->layout.states[0].name, "rail.position");
    ck_assert_str_eq(m->layout.states[1].name, "pivot.angle");
    tm_eigs(l->A, re, im);
    tm_eigs(Ab, rb, ib);
    for (k = 0; k < 4; k++) {
        ck_assert(fabs(re[k] - rb[k]) <= 1e-12 * (1.0 + fabs(rb[k])));
        ck_assert(fabs(im[k] - ib[k]) <= 1e-12 * (1.0 + fabs(ib[k])));
    }
    for (k = 0; k < 5; k++) {
        const double complex s = 0.21 + (0.3 + 1.7 * (double)k) * (double complex)I;
        const double complex wx = tm_tf(Ab, bb, cx, 0.0, s), gx = tf_state(l, 0, 0, s);
        const double complex wp = tm_tf(Ab, bb, cphi, 0.0, s), gp = tf_state(l, 1, 0, s);
        ck_assert(cabs(gx - wx) <= 1e-12 * cabs(wx));
        /* magnitude and phase: the book's phi, measured from upright, grows as
         * the rod's top moves toward -x, as our counter-clockwise angle does
         * (hand-derived: a push +u gives phi'' = m l u / p > 0 in the book, and
         * theta'' = m l x'' / (I + m l^2) > 0 here), so the two transfer
         * functions are equal as complex numbers, not only in size */
        ck_assert_msg(cabs(gp - wp) <= 1e-12 * cabs(wp), "k=%zu: got %g%+gi want %g%+gi", k,
                creal(gp), cimag(gp), creal(wp), cimag(wp));
    }
    gsl_matrix_free(Ab);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(layout_names_units_and_hash)
{
    rigmat_model *m = tm_new("cart");
    const size_t cart = tm_body(m, "cart", 1.3, 0, 0, 0);
    rigmat_force *f;
    rigmat_sensor *s;

    (void)tm_joint(m, "rail", RIGMAT_JOINT_SLIDER, 0, cart);
    f = tm_force(m, "push", RIGMAT_FORCE_POINT);
    f->body = cart;
    f->direction[0] = 1;
    s = tm_sensor(m, "pos", RIGMAT_SENSE_JOINT_POSITION);
    s->joint = 0;
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    /* python3: FNV-1a 64 (offset 0xcbf29ce484222325, prime 0x100000001b3) of
     * b'rail.position\tm\nrail.velocity\tm/s\n|push\tN\n|pos\tm\n' */
    ck_assert_str_eq(m->layout.order_hash, "93e41ff37d41d8d2");
    ck_assert_str_eq(m->layout.outputs[0].unit, "m");
    tm_free(m);
}
END_TEST

START_TEST(interleaved_order_and_a_states_list_leaving_out_a_cyclic_coordinate)
{
    rigmat_model *m = tm_balancer(0.0, RIGMAT_DRIVE_VOLTAGE, 0);
    char msg[300];

    m->order_interleaved = 1;
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    ck_assert_str_eq(m->layout.states[0].name, "travel.position");
    ck_assert_str_eq(m->layout.states[1].name, "travel.velocity");
    ck_assert_str_eq(m->layout.states[2].name, "tilt.angle");
    ck_assert_str_eq(m->layout.states[4].name, "drive.current");
    /* the encoder reads the travel, so it is not cyclic with it */
    tm_list(&m->order_states, "tilt.angle");
    tm_list(&m->order_states, "tilt.rate");
    tm_list(&m->order_states, "travel.velocity");
    tm_list(&m->order_states, "drive.current");
    ck_assert_int_eq(tm_build(m, msg, sizeof msg), RIGMAT_EMODEL);
    ck_assert_ptr_nonnull(strstr(msg, "not cyclic: 'travel.position'"));
    /* without the encoder it is */
    m->nsensors = 2;
    free(m->sensors[2].name);
    ck_assert_int_eq(tm_build(m, msg, sizeof msg), RIGMAT_OK);
    ck_assert_uint_eq(m->layout.nx, 4);
    ck_assert_str_eq(m->layout.states[2].name, "travel.velocity");
    ck_assert(tm_fd_error(m) < 1e-7);
    tm_free(m);
}
END_TEST

START_TEST(neglected_inductance_is_the_residualized_circuit)
{
    rigmat_model *kept = tm_balancer(0.0, RIGMAT_DRIVE_VOLTAGE, 0);
    rigmat_model *nol = tm_balancer(0.0, RIGMAT_DRIVE_VOLTAGE, 1);
    rigmat_lti *a = tm_lin(kept, NULL), *b = tm_lin(nol, NULL);
    gsl_matrix *Ar = gsl_matrix_alloc(4, 4), *Br = gsl_matrix_alloc(4, 1);
    const double aii = gsl_matrix_get(a->A, 4, 4);
    size_t i, j;

    /* common practice (singular perturbation with the current equation linear in
     * i): A_r = A_mm - A_mi A_ii^-1 A_im, B_r = B_m - A_mi A_ii^-1 B_i; exact here
     * for any L because the circuit equation is linear in i */
    for (i = 0; i < 4; i++) {
        for (j = 0; j < 4; j++)
            gsl_matrix_set(Ar, i, j, gsl_matrix_get(a->A, i, j) -
                    gsl_matrix_get(a->A, i, 4) * gsl_matrix_get(a->A, 4, j) / aii);
        gsl_matrix_set(Br, i, 0, gsl_matrix_get(a->B, i, 0) -
                gsl_matrix_get(a->A, i, 4) * gsl_matrix_get(a->B, 4, 0) / aii);
    }
    {
        gsl_matrix_view A4 = gsl_matrix_submatrix(b->A, 0, 0, 4, 4);
        gsl_matrix_view B4 = gsl_matrix_submatrix(b->B, 0, 0, 4, 1);
        ck_assert_matrix_rel(&A4.matrix, Ar, 1e-12);
        ck_assert_matrix_rel(&B4.matrix, Br, 1e-12);
    }
    gsl_matrix_free(Ar);
    gsl_matrix_free(Br);
    rigmat_lti_free(a);
    rigmat_lti_free(b);
    tm_free(kept);
    tm_free(nol);
}
END_TEST

START_TEST(demo_sign_table_positive_duty_drives_forward)
{
    rigmat_model *m = tm_balancer(0.0, RIGMAT_DRIVE_DUTY, 0);
    rigmat_lti *l = tm_lin(m, NULL);
    double row[5] = { 1, 0, 0, 0, 0 };
    int order, s;

    /* README.md, "Signs and frames", worked example: polarity -1, +duty drives the
     * base toward +x */
    s = rigmat_lti_first_response(l, row, 0.0, 0, &order);
    ck_assert_int_eq(s, 1);
    ck_assert_int_eq(order, 3); /* duty -> current -> acceleration */
    /* the encoder counts up with forward travel whatever the polarity */
    ck_assert(gsl_matrix_get(l->C, 2, 0) > 0.0);
    /* the reaction tips the chassis: tilt follows the opposite torque */
    row[0] = 0;
    row[1] = 1;
    s = rigmat_lti_first_response(l, row, 0.0, 0, &order);
    ck_assert_int_eq(s, 1);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(encoder_noise_is_scaled_into_counts)
{
    rigmat_model *m = tm_balancer(0.0, RIGMAT_DRIVE_VOLTAGE, 0);
    rigmat_lti *l;

    m->sensors[0].density = 1.7e-4;
    m->sensors[0].gain = -2.0;
    m->sensors[1].noise = 0.02;
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    l = tm_lin(m, NULL);
    /* README.md, "Sensors: gain, offset and noise units": resolution defaults to
     * one decoded count; noise scales by |gain| */
    ck_assert_rel(l->output_resolution[2], 1.0, 1e-15);
    ck_assert_rel(l->output_density[0], 3.4e-4, 1e-15);
    ck_assert_rel(l->output_noise_sd[1], 0.02, 1e-15);
    ck_assert_str_eq(m->layout.outputs[2].unit, "counts");
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

/* x' = f(x, u) by classical RK4 with a fixed step. */
static void rk4(rigmat_system *s, double *x, const double *u, size_t nx, double h, size_t steps)
{
    double k1[8], k2[8], k3[8], k4[8], t[8];
    size_t i, n;
    for (n = 0; n < steps; n++) {
        ck_assert_int_eq(rigmat_system_eval(s, x, u, k1, NULL, NULL), RIGMAT_OK);
        for (i = 0; i < nx; i++) t[i] = x[i] + 0.5 * h * k1[i];
        ck_assert_int_eq(rigmat_system_eval(s, t, u, k2, NULL, NULL), RIGMAT_OK);
        for (i = 0; i < nx; i++) t[i] = x[i] + 0.5 * h * k2[i];
        ck_assert_int_eq(rigmat_system_eval(s, t, u, k3, NULL, NULL), RIGMAT_OK);
        for (i = 0; i < nx; i++) t[i] = x[i] + h * k3[i];
        ck_assert_int_eq(rigmat_system_eval(s, t, u, k4, NULL, NULL), RIGMAT_OK);
        for (i = 0; i < nx; i++)
            x[i] += h / 6.0 * (k1[i] + 2 * k2[i] + 2 * k3[i] + k4[i]);
    }
}

/* the same for the linear model dx' = A dx + B du */
static void rk4_lin(const rigmat_lti *l, double *x, const double *u, double h, size_t steps)
{
    const size_t nx = l->nx;
    double k[4][8], t[8];
    size_t i, j, n, st;
    for (n = 0; n < steps; n++)
        for (st = 0; st < 4; st++) {
            for (i = 0; i < nx; i++)
                t[i] = x[i] + (st == 0 ? 0 : st == 3 ? h * k[2][i] : 0.5 * h * k[st - 1][i]);
            for (i = 0; i < nx; i++) {
                double v = 0;
                for (j = 0; j < nx; j++)
                    v += gsl_matrix_get(l->A, i, j) * t[j];
                for (j = 0; j < l->nu; j++)
                    v += gsl_matrix_get(l->B, i, j) * u[j];
                k[st][i] = v;
            }
            if (st == 3)
                for (i = 0; i < nx; i++)
                    x[i] += h / 6.0 * (k[0][i] + 2 * k[1][i] + 2 * k[2][i] + k[3][i]);
        }
}

START_TEST(linear_model_tracks_a_nonlinear_simulation_of_a_small_perturbation)
{
    rigmat_model *m = tm_balancer(0.0, RIGMAT_DRIVE_VOLTAGE, 0);
    rigmat_lti *l = tm_lin(m, NULL);
    rigmat_system *s = NULL;
    const size_t nx = l->nx;
    double x[8] = { 0 }, dx[8] = { 0 }, u[2] = { 0.05, 0 }, du[2] = { 0.05, 0 };
    const double eps = 1e-4;
    double num = 0, den = 0;
    size_t i;

    ck_assert_int_eq(rigmat_system_alloc(m, &s, NULL), RIGMAT_OK);
    x[1] = dx[1] = eps;
    u[0] = du[0] = 0.5 * eps;
    rk4(s, x, u, nx, 1e-5, 20000);
    rk4_lin(l, dx, du, 1e-5, 20000);
    for (i = 0; i < nx; i++) {
        num += (x[i] - dx[i]) * (x[i] - dx[i]);
        den += dx[i] * dx[i];
    }
    /* the difference is second order in the perturbation: ~eps relative */
    ck_assert_msg(sqrt(num / den) < 50 * eps, "relative difference %g", sqrt(num / den));
    ck_assert(sqrt(den) > eps);
    rigmat_system_free(s);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(steady_motion_along_a_swinging_coordinate_is_a_warning)
{
    rigmat_model *m = tm_new("spinner");
    const size_t bob = tm_body(m, "bob", 0.4, 0.002, 0, -0.2);
    rigmat_diags w;
    rigmat_lti *l;

    (void)tm_joint(m, "swing", RIGMAT_JOINT_HINGE, 0, bob);
    tm_op(m, 'r', "swing", 1.3);
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    rigmat_diags_init(&w);
    l = tm_lin(m, &w);
    ck_assert_uint_eq(w.count, 1);
    ck_assert_int_eq(w.items[0].severity, RIGMAT_WARNING);
    ck_assert_ptr_nonnull(strstr(w.items[0].message, "time-varying"));
    ck_assert_rel(gsl_vector_get(l->x0, 1), 1.3, 0);
    rigmat_diags_release(&w);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST


/* Every example model: exact Jacobians against central differences. */
static const char *const examples[] = { "balancer", "ball-beam", "cart", "cartpole-rack",
    "gantry", "pendulum-motor", "quarter-car", "torsion" };

START_TEST(every_example_has_jacobians_that_agree_with_central_differences)
{
    char path[128];
    rigmat_model *m = NULL;
    rigmat_diags d;
    rigmat_options opt = rigmat_options_default();
    double e;

    snprintf(path, sizeof path, "../examples/%s.yaml", examples[_i]);
    rigmat_diags_init(&d);
    ck_assert_msg(rigmat_model_load(path, NULL, 0, &opt, &m, &d) == RIGMAT_OK, "%s: %s", path,
            d.count ? d.items[0].message : "");
    rigmat_diags_release(&d);
    e = tm_fd_error(m);
    ck_assert_msg(e < 1e-7, "%s: %g", path, e);
    rigmat_model_free(m);
}
END_TEST


/* Qd can be non-zero only through a disturbance with a density: a control
 * input's intensity does not count (the discretize warning "Qd is zero"). */
START_TEST(process_noise_needs_a_disturbance_density)
{
    rigmat_lti *l = rigmat_lti_alloc(2, 2, 1, 1);

    ck_assert_int_eq(rigmat_lti_has_process_noise(l), 0);
    l->input_intensity[0] = 1.0; /* a control input: not process noise */
    ck_assert_int_eq(rigmat_lti_has_process_noise(l), 0);
    l->input_intensity[1] = 0.01 * 0.01;
    ck_assert_int_eq(rigmat_lti_has_process_noise(l), 1);
    rigmat_lti_free(l);
}
END_TEST

Suite *linearize_suite(void);

Suite *linearize_suite(void)
{
    Suite *s = suite_create("linearize");
    TCase *tc = tcase_create("references");

    tcase_set_timeout(tc, 60);
    tcase_add_test(tc, process_noise_needs_a_disturbance_density);
    tcase_add_test(tc, point_mass_cartpole_has_the_reference_eigenvalues_and_cart_response);
    tcase_add_test(tc, uniform_rod_cartpole_matches_the_textbook_model);
    tcase_add_test(tc, layout_names_units_and_hash);
    tcase_add_test(tc, interleaved_order_and_a_states_list_leaving_out_a_cyclic_coordinate);
    tcase_add_test(tc, neglected_inductance_is_the_residualized_circuit);
    tcase_add_test(tc, demo_sign_table_positive_duty_drives_forward);
    tcase_add_test(tc, encoder_noise_is_scaled_into_counts);
    tcase_add_test(tc, linear_model_tracks_a_nonlinear_simulation_of_a_small_perturbation);
    tcase_add_test(tc, steady_motion_along_a_swinging_coordinate_is_a_warning);
    tcase_add_loop_test(tc, every_example_has_jacobians_that_agree_with_central_differences, 0,
            (int)(sizeof examples / sizeof examples[0]));
    suite_add_tcase(s, tc);
    return s;
}
