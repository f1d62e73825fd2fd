/* check_rules.c - one value test per physical rule whose sign or scale a
 * one-line slip could flip (tests/mutants.list plants those slips; every
 * one must fail a test here or elsewhere).  Each expected value is derived
 * by hand on the lines above it, independently of the code under test. */
#include "testutil.h"
#include "mechtest.h"

#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_math.h>

/* Index of a named state, input or output (fails the test when absent). */
static size_t sig(const rigmat_signal *v, size_t n, const char *name)
{
    size_t k;
    for (k = 0; k < n; k++)
        if (strcmp(v[k].name, name) == 0)
            return k;
    ck_abort_msg("no signal named '%s'", name);
    return 0;
}
#define STATE(m, name) sig((m)->layout.states, (m)->layout.nx, (name))
#define INPUT(m, name) sig((m)->layout.inputs, (m)->layout.nu, (name))
#define OUTPUT(m, name) sig((m)->layout.outputs, (m)->layout.ny, (name))

/* Two bodies of pure inertia in a chain: ground -(hinge j1)- a -(hinge j2,
 * parent-referenced, at a's origin)- b, every centre of mass on its joint,
 * no gravity.  b's absolute angle is q1 + q2, so
 *     T = 1/2 Ia q1'^2 + 1/2 Ib (q1' + q2')^2,  M = [[Ia + Ib, Ib], [Ib, Ib]]
 * (hand-derived). */
static const double chain_Ia = 0.02, chain_Ib = 0.005;

static rigmat_model *chain(void)
{
    rigmat_model *m = tm_new("chain");
    const size_t a = tm_body(m, "a", 0.0, chain_Ia, 0, 0);
    const size_t b = tm_body(m, "b", 0.0, chain_Ib, 0, 0);

    m->gravity_m_s2 = 0.0;
    (void)tm_joint(m, "j1", RIGMAT_JOINT_HINGE, 0, a);
    (void)tm_joint(m, "j2", RIGMAT_JOINT_HINGE, a, b);
    return m;
}

START_TEST(relative_readings_are_b_minus_a)
{
    rigmat_model *m = chain();
    rigmat_sensor *s;
    rigmat_lti *l;
    size_t ra, rr;

    s = tm_sensor(m, "rel_angle", RIGMAT_SENSE_RELATIVE_ANGLE);
    s->body = 1; /* of: [a, b] reads b minus a */
    s->body_b = 2;
    s = tm_sensor(m, "rel_rate", RIGMAT_SENSE_RELATIVE_RATE);
    s->body = 1;
    s->body_b = 2;
    tm_op(m, 'c', "j1", 0.25);
    tm_op(m, 'c', "j2", 0.4);
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    l = tm_lin(m, NULL);
    ra = OUTPUT(m, "rel_angle");
    rr = OUTPUT(m, "rel_rate");
    /* hand-derived: th_b - th_a = (q1 + q2) - q1 = q2, and its rate q2' */
    ck_assert_rel(gsl_vector_get(l->y0, ra), 0.4, 1e-15);
    ck_assert_rel(gsl_matrix_get(l->C, ra, STATE(m, "j2.angle")), 1.0, 1e-15);
    ck_assert(gsl_matrix_get(l->C, ra, STATE(m, "j1.angle")) == 0.0);
    ck_assert_rel(gsl_matrix_get(l->C, rr, STATE(m, "j2.rate")), 1.0, 1e-15);
    ck_assert(gsl_matrix_get(l->C, rr, STATE(m, "j1.rate")) == 0.0);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(sensor_offset_adds_after_the_gain)
{
    rigmat_model *m = chain();
    rigmat_sensor *s = tm_sensor(m, "tilt", RIGMAT_SENSE_ANGLE);
    rigmat_lti *l;

    s->body = 1;
    s->gain = 2.0;
    s->offset = 0.3;
    tm_op(m, 'c', "j1", 0.1);
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    l = tm_lin(m, NULL);
    /* README "The model file": y = gain * (measured quantity) + offset:
     * 2 * 0.1 + 0.3 = 0.5, slope dy/dq1 = 2 */
    ck_assert_rel(gsl_vector_get(l->y0, 0), 0.5, 1e-15);
    ck_assert_rel(gsl_matrix_get(l->C, 0, STATE(m, "j1.angle")), 2.0, 1e-15);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(a_torque_reacting_on_the_parent_turns_them_apart)
{
    rigmat_model *m = chain();
    rigmat_force *f = tm_force(m, "twist", RIGMAT_FORCE_TORQUE);
    rigmat_lti *l;
    const double Ia = chain_Ia, Ib = chain_Ib;

    f->body = 2;
    f->reacting = 1;
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    l = tm_lin(m, NULL);
    /* hand-derived (Newton per body): Ia a1 = -tau, Ib (a1 + a2) = +tau, so
     * q1'' = -tau/Ia and q2'' = tau (1/Ia + 1/Ib) */
    ck_assert_rel(gsl_matrix_get(l->B, STATE(m, "j1.rate"), 0), -1.0 / Ia, 1e-13);
    ck_assert_rel(gsl_matrix_get(l->B, STATE(m, "j2.rate"), 0), 1.0 / Ia + 1.0 / Ib, 1e-13);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(a_body_frame_force_turns_with_the_body)
{
    rigmat_model *m = tm_new("arm");
    const double Ia = 0.02, L = 0.25, th = 0.6;
    const size_t arm = tm_body(m, "arm", 0.0, Ia, 0, 0);
    rigmat_force *f;
    rigmat_lti *l;
    size_t w;

    (void)tm_joint(m, "pivot", RIGMAT_JOINT_HINGE, 0, arm);
    f = tm_force(m, "push_body", RIGMAT_FORCE_POINT);
    f->body = arm;
    f->at_m[0] = L;
    f->direction[1] = 1.0;
    f->frame_body = 1;
    f = tm_force(m, "push_world", RIGMAT_FORCE_POINT);
    f->body = arm;
    f->at_m[0] = L;
    f->direction[1] = 1.0;
    tm_op(m, 'c', "pivot", th);
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    l = tm_lin(m, NULL);
    w = STATE(m, "pivot.rate");
    /* hand-derived, torque = r x F with r = L (cos th, sin th):
     * body frame, F along the arm's own y = (-sin th, cos th): torque L F;
     * world frame, F along world y: torque L cos(th) F */
    ck_assert_rel(gsl_matrix_get(l->B, w, INPUT(m, "push_body")), L / Ia, 1e-14);
    ck_assert_rel(gsl_matrix_get(l->B, w, INPUT(m, "push_world")), L * cos(th) / Ia, 1e-14);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(an_inclined_point_spring_and_damper_pull_along_their_line)
{
    rigmat_model *m = tm_new("guy wire");
    const double mass = 2.0, k = 50.0, c = 3.0, h = 0.3, rest = 0.2, x = 0.4;
    const size_t blk = tm_body(m, "block", mass, 0.0, 0, 0);
    const double d = hypot(x, h); /* 0.5 */
    rigmat_link *sp, *dp;
    rigmat_lti *l;
    size_t p, v;

    (void)tm_joint(m, "rail", RIGMAT_JOINT_SLIDER, 0, blk);
    sp = tm_spring(m, "wire", RIGMAT_ATTACH_POINTS);
    dp = tm_damper(m, "dash", RIGMAT_ATTACH_POINTS);
    sp->body_a = dp->body_a = 0;
    sp->point_a_m[1] = dp->point_a_m[1] = h;
    sp->body_b = dp->body_b = blk;
    sp->stiffness = k;
    sp->rest = rest;
    dp->coefficient = c;
    tm_op(m, 'c', "rail", x);
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    l = tm_lin(m, NULL);
    p = STATE(m, "rail.position");
    v = STATE(m, "rail.velocity");
    /* hand-derived from V = k (d - rest)^2 / 2, d = sqrt(x^2 + h^2):
     * F = -k (d - rest) x/d = -12 N, dF/dx = -k (x^2/d^2 + (d - rest) h^2/d^3);
     * damper: F = -c d' x/d with d' = x x'/d, dF/dx' = -c x^2/d^2 */
    ck_assert_rel(gsl_vector_get(l->f0, v), -k * (d - rest) * x / d / mass, 1e-13);
    ck_assert_rel(gsl_matrix_get(l->A, v, p),
            -k * (x * x / (d * d) + (d - rest) * h * h / (d * d * d)) / mass, 1e-12);
    ck_assert_rel(gsl_matrix_get(l->A, v, v), -c * x * x / (d * d) / mass, 1e-13);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(a_slope_pulls_a_block_toward_minus_x)
{
    rigmat_model *m = tm_new("ramp");
    const double s = 0.2;
    const size_t blk = tm_body(m, "block", 2.0, 0.0, 0, 0);
    rigmat_lti *l;

    m->slope_rad = s;
    (void)tm_joint(m, "rail", RIGMAT_JOINT_SLIDER, 0, blk);
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    l = tm_lin(m, NULL);
    /* README "Rules worth knowing": a positive slope tilts the ground frame
     * counter-clockwise, +x runs uphill, so gravity is -g (sin s, cos s) and
     * a free block accelerates at -g sin s along x */
    ck_assert_rel(gsl_vector_get(l->f0, STATE(m, "rail.velocity")), -9.80665 * sin(s), 1e-14);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(an_accelerometer_at_rest_reads_plus_g_up_in_its_own_axes)
{
    rigmat_model *m = tm_new("tilted plate");
    const double s = 0.2, th = 0.3, g = 9.80665;
    const size_t plate = tm_body(m, "plate", 0.2, 0.01, 0, 0);
    rigmat_sensor *ax, *ay;
    rigmat_lti *l;

    m->slope_rad = s;
    (void)tm_joint(m, "pivot", RIGMAT_JOINT_HINGE, 0, plate);
    ax = tm_sensor(m, "acc_x", RIGMAT_SENSE_SPECIFIC_FORCE);
    ax->body = plate;
    ax->axis[0] = 1.0;
    ay = tm_sensor(m, "acc_y", RIGMAT_SENSE_SPECIFIC_FORCE);
    ay->body = plate;
    ay->axis[1] = 1.0;
    tm_op(m, 'c', "pivot", th);
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    l = tm_lin(m, NULL);
    /* the centre of mass is on the pivot: the plate rests at any angle.
     * Specific force f = a - g_vec = g (sin s, cos s) in the world (common
     * practice: an accelerometer at rest reads +1 g up; D. H. Titterton,
     * J. L. Weston, Strapdown Inertial Navigation Technology, 2004, from
     * memory), resolved on the plate's axes (cos th, sin th) and
     * (-sin th, cos th): g sin(s + th) and g cos(s + th) (hand-derived) */
    ck_assert(fabs(gsl_vector_get(l->f0, STATE(m, "pivot.rate"))) < 1e-15);
    ck_assert_rel(gsl_vector_get(l->y0, 0), g * sin(s + th), 1e-14);
    ck_assert_rel(gsl_vector_get(l->y0, 1), g * cos(s + th), 1e-14);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(a_rolling_wheel_turns_clockwise_going_forward)
{
    rigmat_model *m = tm_new("wheel");
    const double r = 0.061, mass = 0.31, Iw = 0.5 * mass * r * r;
    const size_t wh = tm_body(m, "wheel", mass, Iw, 0, 0);
    rigmat_joint *j = tm_joint(m, "travel", RIGMAT_JOINT_ROLLING, 0, wh);
    rigmat_force *f = tm_force(m, "spin", RIGMAT_FORCE_TORQUE);
    rigmat_sensor *s = tm_sensor(m, "wheel_angle", RIGMAT_SENSE_ANGLE);
    rigmat_lti *l;

    j->radius_m = r;
    f->body = wh;
    s->body = wh;
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    l = tm_lin(m, NULL);
    /* README "Conventions" (DEVELOPERS.md): the wheel turns by -x/r; a
     * torque tau on it does work through that turn, Q = -tau/r, against the
     * inertia m + I/r^2 (hand-derived, T = m x'^2/2 + I (x'/r)^2/2) */
    ck_assert_rel(gsl_matrix_get(l->C, 0, STATE(m, "travel.position")), -1.0 / r, 1e-14);
    ck_assert_rel(gsl_matrix_get(l->B, STATE(m, "travel.velocity"), 0),
            (-1.0 / r) / (mass + Iw / (r * r)), 1e-13);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

/* A flywheel on a hinge driven through a gearbox by `count` motors. */
static rigmat_model *geared(rigmat_motor_drive drive)
{
    rigmat_model *m = tm_new("geared drive");
    const size_t fly = tm_body(m, "flywheel", 0.0, 4.0e-3, 0, 0);
    rigmat_motor *mo = tm_motor(m, "drive");
    rigmat_sensor *s;

    (void)tm_joint(m, "shaft", RIGMAT_JOINT_HINGE, 0, fly);
    mo->joint = 0;
    mo->drive = drive;
    mo->supply_v = 12.0;
    mo->resistance_ohm = 1.9;
    mo->inductance_h = 0.61e-3;
    mo->torque_constant_nm_a = 0.0274;
    mo->back_emf_v_s_rad = 0.0262;
    mo->rotor_inertia_kgm2 = 1.1e-6;
    mo->friction_nm_s_rad = 3.7e-6;
    mo->gear_ratio = 5.0;
    mo->efficiency = 0.8;
    mo->count = 2;
    mo->polarity = -1;
    s = tm_sensor(m, "speed", RIGMAT_SENSE_RATE);
    s->body = fly;
    s = tm_sensor(m, "enc", RIGMAT_SENSE_MOTOR_ANGLE);
    s->motor = 0;
    s->counts_per_rev = 48;
    s->unit_counts = 1;
    tm_op(m, 'i', "drive", 1.5);
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    return m;
}

/* Speed per drive unit of the geared drive (the model of README "Rules
 * worth knowing" and common practice for a DC motor and gearbox: armature
 * L i' = V - R i - pol Ke N w, each of c motors gives pol Kt i at its
 * shaft, the gearbox eta N times that at the output, friction b N w at the
 * shaft reflects as N^2 b, rotor inertia as N^2 Jr):
 *   w/V = c N pol eta Kt / ((J s + c N^2 b)(L s + R) + c N^2 eta Kt Ke),
 * J = J_load + c N^2 Jr (hand-derived by eliminating i). */
static double complex geared_tf(double complex s)
{
    const double c = 2, N = 5, pol = -1, eta = 0.8, Kt = 0.0274, Ke = 0.0262, R = 1.9,
                 L = 0.61e-3, b = 3.7e-6, J = 4.0e-3 + c * N * N * 1.1e-6;
    return c * N * pol * eta * Kt /
            ((J * s + c * N * N * b) * (L * s + R) + c * N * N * eta * Kt * Ke);
}

START_TEST(a_geared_drive_follows_the_motor_and_gearbox_rules)
{
    rigmat_model *m = geared(RIGMAT_DRIVE_VOLTAGE);
    rigmat_model *md = geared(RIGMAT_DRIVE_DUTY);
    rigmat_lti *l = tm_lin(m, NULL), *ld = tm_lin(md, NULL);
    double b[3], c[3];
    size_t j, k;

    for (k = 0; k < 4; k++) {
        const double complex s =
                1.5 + (0.4 + 2.1 * (double)k) * pow(10.0, (double)k) * (double complex)I;
        const double complex want = geared_tf(s);
        double complex got, gotd;
        for (j = 0; j < 3; j++) {
            b[j] = gsl_matrix_get(l->B, j, 0);
            c[j] = gsl_matrix_get(l->C, 0, j);
        }
        got = tm_tf(l->A, b, c, 0.0, s);
        for (j = 0; j < 3; j++)
            b[j] = gsl_matrix_get(ld->B, j, 0);
        gotd = tm_tf(ld->A, b, c, 0.0, s);
        ck_assert_msg(cabs(got - want) <= 1e-11 * cabs(want), "k=%zu: got %g%+gi want %g%+gi", k,
                creal(got), cimag(got), creal(want), cimag(want));
        /* duty: the drive's voltage is duty times the 12 V supply */
        ck_assert_msg(cabs(gotd - 12.0 * want) <= 1e-11 * cabs(12.0 * want), "duty, k=%zu", k);
    }
    /* the steady current at the operating point, shaft at rest: V/R per motor */
    ck_assert_rel(gsl_vector_get(l->x0, STATE(m, "drive.current")), 1.5 / 1.9, 1e-14);
    /* README: the motor-angle sensor reads the motor shaft (N turns per output
     * turn) in the mechanism's sense, in counts: N * 48 / (2 pi) per rad */
    ck_assert_rel(gsl_matrix_get(l->C, 1, STATE(m, "shaft.angle")), 5.0 * 48.0 / (2.0 * M_PI),
            1e-14);
    rigmat_lti_free(l);
    rigmat_lti_free(ld);
    tm_free(m);
    tm_free(md);
}
END_TEST

START_TEST(a_screw_turns_two_pi_per_lead)
{
    rigmat_model *m = tm_new("screw stage");
    const double mass = 1.4, lead = 0.008, Kt = 0.05, Jr = 2.0e-5;
    const size_t cart = tm_body(m, "carriage", mass, 0.0, 0, 0);
    rigmat_motor *mo = tm_motor(m, "drive");
    rigmat_lti *l;
    const double k = 2.0 * M_PI / lead;

    (void)tm_joint(m, "rail", RIGMAT_JOINT_SLIDER, 0, cart);
    mo->joint = 0;
    mo->drive = RIGMAT_DRIVE_CURRENT;
    mo->torque_constant_nm_a = Kt;
    mo->back_emf_v_s_rad = Kt;
    mo->resistance_ohm = 1.0;
    mo->rotor_inertia_kgm2 = Jr;
    mo->lead_m = lead;
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    l = tm_lin(m, NULL);
    /* common practice (power balance of an ideal screw): one turn per lead, so
     * k = 2 pi / lead rad per m, force k Kt i, rotor inertia reflected k^2 Jr:
     * x'' = k Kt i / (m + k^2 Jr) */
    ck_assert_rel(gsl_matrix_get(l->B, STATE(m, "rail.velocity"), 0),
            k * Kt / (mass + k * k * Jr), 1e-13);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(a_coloured_disturbance_is_a_unit_gain_first_order_lag)
{
    rigmat_model *m = tm_new("gusty cart");
    const size_t cart = tm_body(m, "cart", 1.2, 0.0, 0, 0);
    rigmat_force *f = tm_force(m, "gust", RIGMAT_FORCE_POINT);
    rigmat_lti *l;
    size_t x, u;

    (void)tm_joint(m, "rail", RIGMAT_JOINT_SLIDER, 0, cart);
    f->body = cart;
    f->direction[0] = 1.0;
    f->role = RIGMAT_ROLE_DISTURBANCE;
    f->density = 0.3;
    f->bandwidth_hz = 5.0;
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    l = tm_lin(m, NULL);
    x = STATE(m, "gust.shaped");
    u = INPUT(m, "gust");
    /* README "Noise convention" and "Rules worth knowing": a bandwidth f_c
     * shapes the white input by 1/(s/(2 pi f_c) + 1) (unit DC gain, common
     * practice): pole -2 pi f_c, input gain +2 pi f_c; intensity N^2 */
    ck_assert_rel(gsl_matrix_get(l->A, x, x), -2.0 * M_PI * 5.0, 1e-15);
    ck_assert_rel(gsl_matrix_get(l->B, x, u), 2.0 * M_PI * 5.0, 1e-15);
    ck_assert_rel(l->input_intensity[u], 0.09, 1e-15);
    /* the shaped force drives the cart: 1/m per newton */
    ck_assert_rel(gsl_matrix_get(l->A, STATE(m, "rail.velocity"), x), 1.0 / 1.2, 1e-15);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

Suite *rules_suite(void);

Suite *rules_suite(void)
{
    Suite *s = suite_create("rules");
    TCase *tc = tcase_create("signs_and_scales");

    tcase_add_test(tc, relative_readings_are_b_minus_a);
    tcase_add_test(tc, sensor_offset_adds_after_the_gain);
    tcase_add_test(tc, a_torque_reacting_on_the_parent_turns_them_apart);
    tcase_add_test(tc, a_body_frame_force_turns_with_the_body);
    tcase_add_test(tc, an_inclined_point_spring_and_damper_pull_along_their_line);
    tcase_add_test(tc, a_slope_pulls_a_block_toward_minus_x);
    tcase_add_test(tc, an_accelerometer_at_rest_reads_plus_g_up_in_its_own_axes);
    tcase_add_test(tc, a_rolling_wheel_turns_clockwise_going_forward);
    tcase_add_test(tc, a_geared_drive_follows_the_motor_and_gearbox_rules);
    tcase_add_test(tc, a_screw_turns_two_pi_per_lead);
    tcase_add_test(tc, a_coloured_disturbance_is_a_unit_gain_first_order_lag);
    suite_add_tcase(s, tc);
    return s;
}
