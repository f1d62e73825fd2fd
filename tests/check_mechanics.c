/* check_mechanics.c - equations of motion of hand-built models against
 * closed forms (the hand-built model helpers are in mechtest.c). */
#include "testutil.h"
#include "mechtest.h"
#include "mechanics.h"

#include <check.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_math.h>

/* ------------------------------------------------------------ tests */

/* rigmat_mech_cossin replaces ccos and csin where the imaginary part is
 * that of a complex step; the claim is glibc's bits (cosh y = 1 and
 * sinh y = y exactly there), checked here against the library itself on
 * angles over 12 decades of both signs, zero and the sign of a zero
 * imaginary part, and a large imaginary part (the library's own path). */
START_TEST(complex_cos_sin_of_a_step_angle_are_the_library_bits)
{
    unsigned state = 777u;
    long i;

    for (i = 0; i < 200000; i++) {
        double x, y;
        double complex z;
        rigmat_mech_cs r;
        state = state * 1103515245u + 12345u;
        x = ldexp((double)((state >> 8) & 0xffffffu) / 16777216.0, (int)(state % 40u) - 20);
        if (state & 0x10000000u)
            x = -x;
        state = state * 1103515245u + 12345u;
        y = ldexp((double)((state >> 8) & 0xffffu) / 65536.0, -(int)(state % 90u) - 20);
        if (state & 0x20000000u)
            y = -y;
        if (i % 1000 == 0)
            x = 0.0;
        if (i % 777 == 0)
            y = (i % 2) ? -0.0 : 0.0;
        if (i % 1999 == 0)
            y = 0.5; /* not a step: the library's path */
        ((double *)&z)[0] = x; /* C99 6.2.5: the parts, signs of zeros kept */
        ((double *)&z)[1] = y;
        r = rigmat_mech_cossin(z);
        {
            const double complex c = ccos(z), sn = csin(z);
            ck_assert_msg(memcmp(&r.c, &c, sizeof c) == 0 && memcmp(&r.s, &sn, sizeof sn) == 0,
                          "cos/sin of %a%+ai: (%a%+ai, %a%+ai), library (%a%+ai, %a%+ai)", x, y,
                          creal(r.c), cimag(r.c), creal(r.s), cimag(r.s), creal(c), cimag(c),
                          creal(sn), cimag(sn));
        }
    }
}
END_TEST

START_TEST(cart_with_viscous_friction_matches_closed_form)
{
    rigmat_model *m = tm_new("cart");
    const double M = 1.37, c = 0.42;
    const size_t cart = tm_body(m, "cart", M, 0.0, 0.0, 0.0);
    rigmat_joint *j = tm_joint(m, "rail", RIGMAT_JOINT_SLIDER, 0, cart);
    rigmat_link *d = tm_damper(m, "rail_drag", RIGMAT_ATTACH_ACROSS);
    rigmat_force *f = tm_force(m, "push", RIGMAT_FORCE_POINT);
    rigmat_lti *lti;
    gsl_matrix *Aw = gsl_matrix_calloc(2, 2), *Bw = gsl_matrix_calloc(2, 1);

    (void)j;
    d->joint = 0;
    d->coefficient = c;
    f->body = cart;
    f->direction[0] = 1.0;
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    lti = tm_lin(m, NULL);
    /* common practice: M p'' = u - c p', state [p, p'] */
    gsl_matrix_set(Aw, 0, 1, 1.0);
    gsl_matrix_set(Aw, 1, 1, -c / M);
    gsl_matrix_set(Bw, 1, 0, 1.0 / M);
    ck_assert_matrix_rel(lti->A, Aw, 1e-14);
    ck_assert_matrix_rel(lti->B, Bw, 1e-14);
    ck_assert_str_eq(m->layout.states[0].name, "rail.position");
    ck_assert_str_eq(m->layout.states[1].name, "rail.velocity");
    ck_assert_str_eq(m->layout.inputs[0].unit, "N");
    ck_assert(tm_fd_error(m) < 1e-7);
    gsl_matrix_free(Aw);
    gsl_matrix_free(Bw);
    rigmat_lti_free(lti);
    tm_free(m);
}
END_TEST

static rigmat_model *pendulum(double lc_m)
{
    rigmat_model *m = tm_new("pendulum");
    const size_t bob = tm_body(m, "bob", 0.53, 0.0041, 0.0, lc_m);
    (void)tm_joint(m, "swing", RIGMAT_JOINT_HINGE, 0, bob);
    m->joints[0].at_m[0] = 0.12;
    m->joints[0].at_m[1] = 0.4;
    return m;
}

START_TEST(pendulum_hangs_at_sqrt_mgl_over_Ipivot_and_falls_upright)
{
    const double m_kg = 0.53, lc = 0.27, Ic = 0.0041, g = 9.80665;
    /* common practice: a compound pendulum swings at w = sqrt(m g l_c / I_pivot),
     * I_pivot = I_c + m l_c^2 (parallel axis) */
    const double w = sqrt(m_kg * g * lc / (Ic + m_kg * lc * lc));
    rigmat_model *hang = pendulum(-lc), *up = pendulum(lc);
    rigmat_lti *a, *b;
    double re[2], im[2];

    ck_assert_int_eq(tm_build(hang, NULL, 0), RIGMAT_OK);
    ck_assert_int_eq(tm_build(up, NULL, 0), RIGMAT_OK);
    a = tm_lin(hang, NULL);
    b = tm_lin(up, NULL);
    tm_eigs(a->A, re, im);
    ck_assert(fabs(re[0]) < 1e-14 && fabs(re[1]) < 1e-14);
    ck_assert_rel(im[1], w, 1e-13);
    ck_assert_rel(im[0], -w, 1e-13);
    tm_eigs(b->A, re, im);
    ck_assert_rel(re[1], w, 1e-13);
    ck_assert_rel(re[0], -w, 1e-13);
    ck_assert(tm_fd_error(hang) < 1e-7);
    rigmat_lti_free(a);
    rigmat_lti_free(b);
    tm_free(hang);
    tm_free(up);
}
END_TEST

START_TEST(mass_spring_damper_has_textbook_frequency_and_damping)
{
    rigmat_model *m = tm_new("msd");
    const double mass = 0.83, k = 412.0, c = 3.1;
    const size_t b = tm_body(m, "block", mass, 0, 0, 0);
    rigmat_link *s, *d;
    rigmat_lti *lti;
    double re[2], im[2], wn, zeta;

    (void)tm_joint(m, "rail", RIGMAT_JOINT_SLIDER, 0, b);
    s = tm_spring(m, "coil", RIGMAT_ATTACH_ACROSS);
    s->joint = 0;
    s->stiffness = k;
    s->rest = 0.05;
    d = tm_damper(m, "dash", RIGMAT_ATTACH_ACROSS);
    d->joint = 0;
    d->coefficient = c;
    m->gravity_m_s2 = 9.80665;
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    lti = tm_lin(m, NULL);
    tm_eigs(lti->A, re, im);
    wn = sqrt(re[0] * re[0] + im[0] * im[0]);
    zeta = -re[0] / wn;
    /* common practice: w_n = sqrt(k/m), zeta = c / (2 sqrt(k m)) */
    ck_assert_rel(wn, sqrt(k / mass), 1e-13);
    ck_assert_rel(zeta, c / (2.0 * sqrt(k * mass)), 1e-13);
    /* the slider is horizontal: at rest q = rest is the steady state; at q = 0 the
     * spring pushes: f0 = k rest / m */
    ck_assert_rel(gsl_vector_get(lti->f0, 1), k * 0.05 / mass, 1e-14);
    ck_assert_int_eq(lti->is_steady, 0);
    rigmat_lti_free(lti);
    tm_free(m);
}
END_TEST

/* G(s) = C (sI - A)^-1 B + D for one input/output at complex s, by Gaussian
 * elimination with partial pivoting in complex arithmetic (tm_tf). */
static double complex tf(const rigmat_lti *l, size_t out, size_t in, double complex s)
{
    const size_t n = l->nx;
    double *b = calloc(n + 1, sizeof *b), *c = calloc(n + 1, sizeof *c);
    double complex g;
    size_t j;

    ck_assert_ptr_nonnull(b);
    ck_assert_ptr_nonnull(c);
    for (j = 0; j < n; j++) {
        b[j] = gsl_matrix_get(l->B, j, in);
        c[j] = gsl_matrix_get(l->C, out, j);
    }
    g = tm_tf(l->A, b, c, gsl_matrix_get(l->D, out, in), s);
    free(b);
    free(c);
    return g;
}

START_TEST(dc_motor_speed_follows_the_standard_transfer_function)
{
    rigmat_model *m = tm_new("dc motor");
    const double Jb = 2.3e-5, Jr = 1.1e-5, b = 3.7e-6, R = 1.9, L = 0.61e-3, Kt = 0.0274,
                 Ke = 0.0262;
    const size_t fly = tm_body(m, "flywheel", 0.2, Jb, 0, 0);
    rigmat_motor *mo = tm_motor(m, "drive");
    rigmat_sensor *se;
    rigmat_lti *lti;
    size_t k;

    (void)tm_joint(m, "shaft", RIGMAT_JOINT_HINGE, 0, fly);
    mo->joint = 0;
    mo->resistance_ohm = R;
    mo->inductance_h = L;
    mo->torque_constant_nm_a = Kt;
    mo->back_emf_v_s_rad = Ke;
    mo->rotor_inertia_kgm2 = Jr;
    mo->friction_nm_s_rad = b;
    se = tm_sensor(m, "speed", RIGMAT_SENSE_RATE);
    se->body = fly;
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    lti = tm_lin(m, NULL);
    for (k = 0; k < 4; k++) {
        const double complex s = (0.3 + 0.7 * (double)k) * (double complex)I * pow(10.0, (double)k) + 2.0;
        const double complex J = Jb + Jr;
        /* common practice (DC motor speed model): w/V = Kt / ((J s + b)(L s + R) + Kt Ke) */
        const double complex want = Kt / ((J * s + b) * (L * s + R) + Kt * Ke);
        const double complex got = tf(lti, 0, 0, s);
        ck_assert_msg(cabs(got - want) <= 1e-12 * cabs(want), "s=%g%+gi: got %g%+gi want %g%+gi",
                creal(s), cimag(s), creal(got), cimag(got), creal(want), cimag(want));
    }
    ck_assert(tm_fd_error(m) < 1e-7);
    rigmat_lti_free(lti);
    tm_free(m);
}
END_TEST

START_TEST(massless_slider_is_a_singular_mass_matrix_naming_the_joint)
{
    rigmat_model *m = tm_new("loose");
    const size_t b = tm_body(m, "puck", 0.0, 0.0, 0, 0);
    rigmat_lti *lti = NULL;
    rigmat_options opt = rigmat_options_default();
    rigmat_error e;

    (void)tm_joint(m, "groove", RIGMAT_JOINT_SLIDER, 0, b);
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_linearize(m, &opt, &lti, NULL, &e), RIGMAT_ENUMERIC);
    ck_assert_ptr_null(lti);
    ck_assert_ptr_nonnull(strstr(e.message, "singular"));
    ck_assert_ptr_nonnull(strstr(e.message, "'groove'"));
    tm_free(m);
}
END_TEST

START_TEST(damper_on_position_driven_joint_asks_for_velocity)
{
    rigmat_model *m = tm_new("shaker");
    const size_t table = tm_body(m, "table", 0.0, 0.0, 0, 0);
    const size_t mass = tm_body(m, "mass", 0.4, 0.0, 0, 0);
    rigmat_joint *j = tm_joint(m, "road", RIGMAT_JOINT_SLIDER, 0, table);
    rigmat_link *d;
    char msg[300];

    j->axis[0] = 0;
    j->axis[1] = 1;
    j->driven = RIGMAT_DRIVEN_POSITION;
    j = tm_joint(m, "lift", RIGMAT_JOINT_SLIDER, 0, mass);
    j->axis[0] = 0;
    j->axis[1] = 1;
    d = tm_damper(m, "tyre_damping", RIGMAT_ATTACH_POINTS);
    d->body_a = table;
    d->body_b = mass;
    d->point_b_m[1] = 0.3;
    d->coefficient = 40;
    ck_assert_int_eq(tm_build(m, msg, sizeof msg), RIGMAT_EMODEL);
    ck_assert_str_eq(msg, "damper 'tyre_damping' needs the rate of position-driven joint 'road'"
                          " | hint: use driven: velocity");
    /* with the rate given the model builds */
    m->joints[0].driven = RIGMAT_DRIVEN_VELOCITY;
    ck_assert_int_eq(tm_build(m, msg, sizeof msg), RIGMAT_OK);
    tm_free(m);
}
END_TEST

START_TEST(mass_riding_a_velocity_driven_joint_asks_for_acceleration)
{
    rigmat_model *m = tm_new("servo cart");
    const size_t cart = tm_body(m, "cart", 1.2, 0.0, 0, 0);
    const size_t pole = tm_body(m, "pole", 0.2, 0.001, 0, 0.3);
    rigmat_joint *j = tm_joint(m, "rail", RIGMAT_JOINT_SLIDER, 0, cart);
    char msg[300];

    j->driven = RIGMAT_DRIVEN_VELOCITY;
    (void)tm_joint(m, "pivot", RIGMAT_JOINT_HINGE, cart, pole);
    ck_assert_int_eq(tm_build(m, msg, sizeof msg), RIGMAT_EMODEL);
    ck_assert_str_eq(msg, "body 'pole' needs the acceleration of velocity-driven joint 'rail'"
                          " | hint: use driven: acceleration");
    m->joints[0].driven = RIGMAT_DRIVEN_ACCELERATION;
    ck_assert_int_eq(tm_build(m, msg, sizeof msg), RIGMAT_OK);
    ck_assert_uint_eq(m->layout.nu, 1);
    ck_assert_str_eq(m->layout.inputs[0].unit, "m/s^2");
    ck_assert(tm_fd_error(m) < 1e-7);
    tm_free(m);
}
END_TEST

START_TEST(balancer_jacobians_agree_with_central_differences)
{
    int drive, neglect;
    for (drive = 0; drive < 3; drive++)
        for (neglect = 0; neglect < 2; neglect++) {
            rigmat_model *m = tm_balancer(0.013, drive, neglect);
            const double e = tm_fd_error(m);
            ck_assert_msg(e < 1e-7, "drive %d neglect %d: %g", drive, neglect, e);
            tm_free(m);
        }
}
END_TEST

Suite *mechanics_suite(void);

Suite *mechanics_suite(void)
{
    Suite *s = suite_create("mechanics");
    TCase *tc = tcase_create("closed_forms");

    tcase_add_test(tc, complex_cos_sin_of_a_step_angle_are_the_library_bits);
    tcase_add_test(tc, cart_with_viscous_friction_matches_closed_form);
    tcase_add_test(tc, pendulum_hangs_at_sqrt_mgl_over_Ipivot_and_falls_upright);
    tcase_add_test(tc, mass_spring_damper_has_textbook_frequency_and_damping);
    tcase_add_test(tc, dc_motor_speed_follows_the_standard_transfer_function);
    tcase_add_test(tc, massless_slider_is_a_singular_mass_matrix_naming_the_joint);
    tcase_add_test(tc, damper_on_position_driven_joint_asks_for_velocity);
    tcase_add_test(tc, mass_riding_a_velocity_driven_joint_asks_for_acceleration);
    tcase_add_test(tc, balancer_jacobians_agree_with_central_differences);
    suite_add_tcase(s, tc);
    return s;
}
