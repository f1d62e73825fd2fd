/* check_trim.c - steady states found by trim against closed forms, and
 * its failure reports. */
#include "testutil.h"
#include "mechtest.h"
#include "trim.h"

#include <check.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_math.h>

static rigmat_model *quarter_car(int tyre_damper)
{
    rigmat_model *m = tm_new("quarter car");
    const size_t patch = tm_body(m, "patch", 0, 0, 0, 0);
    const size_t hub = tm_body(m, "hub", 41.0, 0, 0, 0);
    const size_t body = tm_body(m, "body", 310.0, 0, 0, 0);
    rigmat_joint *j;
    rigmat_link *l;

    j = tm_joint(m, "road", RIGMAT_JOINT_SLIDER, 0, patch);
    j->axis[0] = 0;
    j->axis[1] = 1;
    j->driven = RIGMAT_DRIVEN_POSITION;
    j = tm_joint(m, "wheel", RIGMAT_JOINT_SLIDER, 0, hub);
    j->axis[0] = 0;
    j->axis[1] = 1;
    j->at_m[1] = 0.3;
    j = tm_joint(m, "stroke", RIGMAT_JOINT_SLIDER, 0, body);
    j->axis[0] = 0;
    j->axis[1] = 1;
    j->at_m[1] = 0.8;
    l = tm_spring(m, "tyre", RIGMAT_ATTACH_POINTS);
    l->body_a = patch;
    l->body_b = hub;
    l->stiffness = 190000;
    l->rest = 0.3;
    l = tm_spring(m, "coil", RIGMAT_ATTACH_POINTS);
    l->body_a = hub;
    l->body_b = body;
    l->stiffness = 21000;
    l->rest = 0.5;
    l = tm_damper(m, "shock", RIGMAT_ATTACH_POINTS);
    l->body_a = hub;
    l->body_b = body;
    l->coefficient = 1500;
    if (tyre_damper) {
        l = tm_damper(m, "tyre_damping", RIGMAT_ATTACH_POINTS);
        l->body_a = patch;
        l->body_b = hub;
        l->coefficient = 120;
    }
    tm_solve(m, "wheel");
    tm_solve(m, "stroke");
    return m;
}

START_TEST(quarter_car_sags_under_gravity_and_matches_the_two_mass_model)
{
    rigmat_model *m = quarter_car(0);
    const double mb = 310, mw = 41, ks = 21000, kt = 190000, cs = 1500, g = 9.80665;
    rigmat_lti *l;
    gsl_matrix *Aw = gsl_matrix_calloc(4, 4), *Bw = gsl_matrix_calloc(4, 1);

    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    ck_assert_str_eq(m->layout.inputs[0].name, "road");
    ck_assert_str_eq(m->layout.inputs[0].unit, "m");
    l = tm_lin(m, NULL);
    /* common practice (static sag): the tyre carries both masses, the coil the body */
    ck_assert_rel(gsl_vector_get(l->x0, 0), -(mb + mw) * g / kt, 1e-12);
    ck_assert_rel(gsl_vector_get(l->x0, 1) - gsl_vector_get(l->x0, 0), -mb * g / ks, 1e-12);
    ck_assert(l->is_steady);
    /* common practice: the quarter-car model, state [zw, zb, zw', zb'], road input zr:
     * mw zw'' = -kt (zw - zr) + ks (zb - zw) + cs (zb' - zw'), mb zb'' = -ks (zb - zw) - cs (zb' - zw') */
    gsl_matrix_set(Aw, 0, 2, 1);
    gsl_matrix_set(Aw, 1, 3, 1);
    gsl_matrix_set(Aw, 2, 0, -(kt + ks) / mw);
    gsl_matrix_set(Aw, 2, 1, ks / mw);
    gsl_matrix_set(Aw, 2, 2, -cs / mw);
    gsl_matrix_set(Aw, 2, 3, cs / mw);
    gsl_matrix_set(Aw, 3, 0, ks / mb);
    gsl_matrix_set(Aw, 3, 1, -ks / mb);
    gsl_matrix_set(Aw, 3, 2, cs / mb);
    gsl_matrix_set(Aw, 3, 3, -cs / mb);
    gsl_matrix_set(Bw, 2, 0, kt / mw);
    ck_assert_matrix_rel(l->A, Aw, 1e-12);
    ck_assert_matrix_rel(l->B, Bw, 1e-12);
    ck_assert(tm_fd_error(m) < 1e-7);
    gsl_matrix_free(Aw);
    gsl_matrix_free(Bw);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(tyre_damping_on_a_position_driven_road_asks_for_its_rate)
{
    rigmat_model *m = quarter_car(1);
    char msg[300];
    ck_assert_int_eq(tm_build(m, msg, sizeof msg), RIGMAT_EMODEL);
    ck_assert_str_eq(msg, "damper 'tyre_damping' needs the rate of position-driven joint 'road'"
                          " | hint: use driven: velocity");
    tm_free(m);
}
END_TEST

START_TEST(slanted_spring_holds_a_block_with_its_geometric_stiffness)
{
    rigmat_model *m = tm_new("slanted");
    const double mass = 0.73, k = 310.0, a = 0.12, L0 = 0.15, g = 9.80665;
    const size_t blk = tm_body(m, "block", mass, 0, 0, 0);
    rigmat_joint *j = tm_joint(m, "lift", RIGMAT_JOINT_SLIDER, 0, blk);
    rigmat_link *s = tm_spring(m, "strap", RIGMAT_ATTACH_POINTS);
    rigmat_lti *l;
    double q, d, keff, F;

    j->axis[0] = 0;
    j->axis[1] = 1;
    s->body_a = 0;
    s->point_a_m[0] = -a; /* anchor 0.12 m to the side, level with q = 0 */
    s->body_b = blk;
    s->stiffness = k;
    s->rest = L0;
    tm_op(m, 'c', "lift", -0.2); /* start below the anchor: the hanging equilibrium */
    tm_solve(m, "lift");
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    l = tm_lin(m, NULL);
    q = gsl_vector_get(l->x0, 0);
    d = sqrt(a * a + q * q);
    /* by hand: V(q) = k (d - L0)^2 / 2 + m g q with d = sqrt(a^2 + q^2);
     * V'(q) = k (d - L0) q / d + m g = 0 at the equilibrium;
     * V''(q) = k [ (q/d)^2 + (1 - L0/d) a^2 / d^2 ] is the linear stiffness, which
     * differs from k because the strap also turns as the block moves */
    F = k * (d - L0) * q / d + mass * g;
    ck_assert(fabs(F) < 1e-9);
    ck_assert(q < 0);
    keff = k * (q * q / (d * d) + (1.0 - L0 / d) * a * a / (d * d));
    ck_assert_rel(gsl_matrix_get(l->A, 1, 0), -keff / mass, 1e-10);
    ck_assert(keff < k);
    ck_assert(tm_fd_error(m) < 1e-7);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

static rigmat_model *held_pendulum(rigmat_motor_drive drive)
{
    rigmat_model *m = tm_new("held pendulum");
    const size_t arm = tm_body(m, "arm", 0.62, 0.0031, 0, -0.21);
    rigmat_motor *mo;

    (void)tm_joint(m, "swing", RIGMAT_JOINT_HINGE, 0, arm);
    mo = tm_motor(m, "drive");
    mo->stator = 0;
    mo->rotor = arm;
    mo->drive = drive;
    mo->resistance_ohm = 3.3;
    mo->inductance_h = 2.2e-3;
    mo->torque_constant_nm_a = 0.031;
    mo->back_emf_v_s_rad = 0.031;
    mo->rotor_inertia_kgm2 = 2e-6;
    mo->gear_ratio = 50;
    mo->efficiency = 0.7;
    tm_op(m, 'c', "swing", 20.0 * M_PI / 180.0);
    tm_solve(m, "drive");
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    return m;
}

START_TEST(motor_torque_holding_a_pendulum_at_20_deg_is_found_by_trim)
{
    const double th = 20.0 * M_PI / 180.0, mg = 0.62 * 9.80665, lc = 0.21;
    /* common practice: holding torque m g l_c sin(th) = N eff Kt i */
    const double i_hold = mg * lc * sin(th) / (50 * 0.7 * 0.031);
    const double Ip = 0.0031 + 0.62 * lc * lc + 2e-6 * 50 * 50;
    rigmat_model *a = held_pendulum(RIGMAT_DRIVE_CURRENT), *v = held_pendulum(RIGMAT_DRIVE_VOLTAGE);
    rigmat_lti *la = tm_lin(a, NULL), *lv = tm_lin(v, NULL);

    ck_assert_rel(gsl_vector_get(la->u0, 0), i_hold, 1e-12);
    /* voltage drive at rest: V = R i, and the current state follows */
    ck_assert_rel(gsl_vector_get(lv->u0, 0), 3.3 * i_hold, 1e-12);
    ck_assert_rel(gsl_vector_get(lv->x0, 2), i_hold, 1e-12);
    /* the linear stiffness about the held angle: -m g l_c cos(th) / I_pivot, the
     * rotor reflected with N^2 (stator on the ground) */
    ck_assert_rel(gsl_matrix_get(la->A, 1, 0), -mg * lc * cos(th) / Ip, 1e-12);
    ck_assert(la->is_steady && lv->is_steady);
    ck_assert(tm_fd_error(v) < 1e-7);
    rigmat_lti_free(la);
    rigmat_lti_free(lv);
    tm_free(a);
    tm_free(v);
}
END_TEST

START_TEST(balancer_with_offset_centre_of_mass_leans_until_it_is_over_the_axle)
{
    const double cx = 0.013, h = 0.17;
    rigmat_model *m = tm_balancer(cx, RIGMAT_DRIVE_VOLTAGE, 0);
    rigmat_lti *l;

    tm_solve(m, "tilt");
    tm_solve(m, "drive");
    l = tm_lin(m, NULL);
    /* common practice (statics): at rest no net torque reaches the wheel's
     * contact, so the chassis's centre of mass is straight above the axle:
     * cx cos(th) - h sin(th) = 0 */
    ck_assert_rel(gsl_vector_get(l->x0, 1), atan(cx / h), 1e-10);
    ck_assert(fabs(gsl_vector_get(l->u0, 0)) < 1e-9);
    ck_assert(l->is_steady);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(balancer_cruising_at_constant_speed_is_a_steady_motion)
{
    rigmat_model *m = tm_balancer(0.0, RIGMAT_DRIVE_VOLTAGE, 0);
    rigmat_diags w;
    rigmat_lti *l;

    tm_op(m, 'r', "travel", 0.5);
    tm_solve(m, "drive");
    rigmat_diags_init(&w);
    l = tm_lin(m, &w);
    /* travel is cyclic: no warning, and the drive cancels the drag */
    ck_assert_uint_eq(w.count, 0);
    ck_assert(l->is_steady);
    ck_assert(gsl_vector_get(l->u0, 0) > 0.0);
    ck_assert_rel(gsl_vector_get(l->x0, 2), 0.5, 0);
    ck_assert(tm_fd_error(m) < 1e-7);
    rigmat_diags_release(&w);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(trim_that_cannot_converge_names_the_equation_and_the_free_unknown)
{
    rigmat_model *m = tm_new("pendulum");
    const size_t bob = tm_body(m, "bob", 0.4, 0.002, 0, -0.2);
    rigmat_options opt = rigmat_options_default();
    rigmat_trim_result r;
    rigmat_lti *l = NULL;
    rigmat_error e;

    (void)tm_joint(m, "swing", RIGMAT_JOINT_HINGE, 0, bob);
    tm_op(m, 'c', "swing", 0.35);
    tm_solve(m, "swing.rate"); /* the rate cannot hold a displaced pendulum */
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_trim_model(m, &opt, &r, &e), RIGMAT_ENUMERIC);
    ck_assert_ptr_nonnull(strstr(e.message, "did not converge"));
    ck_assert_ptr_nonnull(strstr(e.message, "swing.rate = "));
    ck_assert_uint_eq(r.nunmet, 1);
    ck_assert_str_eq(r.unmet_equations[0], "d(swing.rate)/dt");
    ck_assert_uint_eq(r.nfree, 1);
    ck_assert_str_eq(r.free_unknowns[0], "swing.rate");
    ck_assert(r.residual > 1.0);
    rigmat_trim_result_release(&r);
    ck_assert_int_eq(rigmat_linearize(m, &opt, &l, NULL, &e), RIGMAT_ENUMERIC);
    ck_assert_ptr_null(l);
    tm_free(m);
}
END_TEST


/* A free cart pushed by a force solved for: the push is fixed (zero: the
 * only steady state of a free body, common practice), the cart's position
 * appears in no equation.  linearize warns and names it, as trim does. */
START_TEST(linearize_warns_of_a_name_in_solve_the_equations_leave_free)
{
    rigmat_model *m = tm_new("free cart");
    const size_t cart = tm_body(m, "cart", 1.2, 0, 0, 0);
    rigmat_force *f;
    rigmat_diags w;
    rigmat_lti *l;
    size_t i;
    int found = 0;

    (void)tm_joint(m, "rail", RIGMAT_JOINT_SLIDER, 0, cart);
    f = tm_force(m, "push", RIGMAT_FORCE_ACROSS);
    f->joint = 0;
    tm_solve(m, "rail");
    tm_solve(m, "push");
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    rigmat_diags_init(&w);
    l = tm_lin(m, &w);
    ck_assert(fabs(gsl_vector_get(l->u0, 0)) < 1e-12);
    for (i = 0; i < w.count; i++)
        found |= w.items[i].severity == RIGMAT_WARNING &&
                strstr(w.items[i].message, "'rail.position' in solve is not fixed") != NULL;
    ck_assert_msg(found, "no warning naming rail.position");
    rigmat_diags_release(&w);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(trim_steps_one_by_one_and_the_residual_falls)
{
    rigmat_model *m = quarter_car(0);
    rigmat_mech *s = NULL;
    rigmat_trim *t = NULL;
    double x[4], u[1], r0, r1;

    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    ck_assert_int_eq(rigmat_mech_alloc(m, &s, NULL), RIGMAT_OK);
    ck_assert_int_eq(rigmat_mech_operating_point(s, x, u, NULL), RIGMAT_OK);
    ck_assert_int_eq(rigmat_trim_alloc(s, &m->op_solve, 1e-9, &t, NULL), RIGMAT_OK);
    ck_assert_int_eq(rigmat_trim_set(t, x, u, NULL), RIGMAT_OK);
    r0 = rigmat_trim_residual(t);
    ck_assert(!rigmat_trim_test(t, 1e-10));
    ck_assert_int_eq(rigmat_trim_iterate(t, NULL), RIGMAT_OK);
    r1 = rigmat_trim_residual(t);
    /* linear springs: one Gauss-Newton step lands on the equilibrium */
    ck_assert(r1 < 1e-9 * r0);
    ck_assert(rigmat_trim_test(t, 1e-10));
    rigmat_trim_free(t);
    rigmat_mech_free(s);
    tm_free(m);
}
END_TEST

/* A chain of uniform rods hanging along -y at zero angles: a shoulder
 * hinge on the ground with a current-driven motor (N = 15, Kt = 0.05 N*m/A,
 * no rotor inertia), then free hinges (elbow, wrist) at the ends of the
 * links, relative angles.  Gravity 9.80665 m/s^2. */
static const double arm_m[3] = { 0.9, 0.55, 0.23 }, arm_l[3] = { 0.35, 0.28, 0.17 };
static const char *const arm_joint[3] = { "shoulder", "elbow", "wrist" };

static rigmat_model *rod_arm(size_t links, const double *q, int solve_elbow)
{
    rigmat_model *m = tm_new("rod arm");
    size_t k, prev = 0;
    rigmat_motor *mo;

    for (k = 0; k < links; k++) {
        static const char *const body[3] = { "upper", "fore", "hand" };
        const size_t b = tm_body(m, body[k], arm_m[k], arm_m[k] * arm_l[k] * arm_l[k] / 12.0, 0,
                -arm_l[k] / 2.0);
        rigmat_joint *j = tm_joint(m, arm_joint[k], RIGMAT_JOINT_HINGE, prev, b);
        if (k > 0)
            j->at_m[1] = -arm_l[k - 1];
        tm_op(m, 'c', arm_joint[k], q[k]);
        prev = b;
    }
    mo = tm_motor(m, "sh");
    mo->stator = 0;
    mo->rotor = 1;
    mo->drive = RIGMAT_DRIVE_CURRENT;
    mo->resistance_ohm = 2.1;
    mo->inductance_neglected = 1;
    mo->torque_constant_nm_a = 0.05;
    mo->back_emf_v_s_rad = 0.05;
    mo->rotor_inertia_kgm2 = 0;
    mo->gear_ratio = 15;
    tm_solve(m, "sh");
    if (solve_elbow)
        tm_solve(m, "elbow");
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    return m;
}

/* Common practice, the planar two-link arm (e.g. M. W. Spong, S. Hutchinson,
 * M. Vidyasagar, Robot Modeling and Control, 2006, section 7.4; from
 * memory), angles from the downward vertical, the elbow relative, I_k = m_k
 * l_k^2 / 12 about each rod's middle, lc_k = l_k / 2:
 *   M11 = I1 + m1 lc1^2 + I2 + m2 (l1^2 + lc2^2 + 2 l1 lc2 cos q2)
 *   M12 = I2 + m2 (lc2^2 + l1 lc2 cos q2),  M22 = I2 + m2 lc2^2
 *   G1 = g (m1 lc1 + m2 l1) sin q1 + g m2 lc2 sin(q1 + q2),  G2 = g m2 lc2 sin(q1 + q2)
 * and at rest M qdd = tau e1 - G. */
static void arm2_statics(const double *q, double M[2][2], double G[2])
{
    const double g = 9.80665, m1 = arm_m[0], m2 = arm_m[1], l1 = arm_l[0], l2 = arm_l[1];
    const double I1 = m1 * l1 * l1 / 12.0, I2 = m2 * l2 * l2 / 12.0, c1 = l1 / 2.0,
                 c2 = l2 / 2.0;
    M[0][0] = I1 + m1 * c1 * c1 + I2 + m2 * (l1 * l1 + c2 * c2 + 2.0 * l1 * c2 * cos(q[1]));
    M[0][1] = M[1][0] = I2 + m2 * (c2 * c2 + l1 * c2 * cos(q[1]));
    M[1][1] = I2 + m2 * c2 * c2;
    G[1] = g * m2 * c2 * sin(q[0] + q[1]);
    G[0] = g * (m1 * c1 + m2 * l1) * sin(q[0]) + G[1];
}

/* At 35 deg with the elbow at 50 deg the forearm does not hang straight:
 * no shoulder current holds the elbow, the shoulder alone can be held.  At
 * the last iterate (the least-squares point of the accelerations) the
 * shoulder's acceleration is the larger of the two, so blaming the largest
 * acceleration would name the wrong joint; the force balances do not. */
START_TEST(two_link_arm_that_cannot_hold_its_elbow_names_only_the_elbow)
{
    const double q[2] = { 35.0 * M_PI / 180.0, 50.0 * M_PI / 180.0 }, NKt = 15 * 0.05;
    rigmat_model *m = rod_arm(2, q, 0);
    rigmat_options opt = rigmat_options_default();
    double M[2][2], G[2], Mi[2][2], b[2], a[2], det, tau;
    rigmat_trim_result r;
    rigmat_error e;

    arm2_statics(q, M, G);
    det = M[0][0] * M[1][1] - M[0][1] * M[1][0];
    Mi[0][0] = M[1][1] / det;
    Mi[1][1] = M[0][0] / det;
    Mi[0][1] = Mi[1][0] = -M[0][1] / det;
    /* by hand: qdd = tau b - a with b = M^-1 e1, a = M^-1 G; the
     * least-squares tau = (b . a) / (b . b) */
    b[0] = Mi[0][0];
    b[1] = Mi[1][0];
    a[0] = Mi[0][0] * G[0] + Mi[0][1] * G[1];
    a[1] = Mi[1][0] * G[0] + Mi[1][1] * G[1];
    tau = (b[0] * a[0] + b[1] * a[1]) / (b[0] * b[0] + b[1] * b[1]);
    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_trim_model(m, &opt, &r, &e), RIGMAT_ENUMERIC);
    ck_assert(!r.converged);
    ck_assert_uint_eq(r.nunmet, 1);
    ck_assert_str_eq(r.unmet_equations[0], "d(elbow.rate)/dt");
    ck_assert_uint_eq(r.nfree, 0);
    ck_assert_rel(r.u[0], tau / NKt, 1e-9);
    ck_assert_uint_eq(r.neq, 2);
    ck_assert_str_eq(r.eq_state[0], "shoulder.rate");
    ck_assert_str_eq(r.eq_state[1], "elbow.rate");
    ck_assert_str_eq(r.eq_unit[0], "rad/s^2");
    ck_assert_str_eq(r.eq_unit[1], "rad/s^2");
    ck_assert_rel(r.eq_residual[0], tau * b[0] - a[0], 1e-9);
    ck_assert_rel(r.eq_residual[1], tau * b[1] - a[1], 1e-9);
    ck_assert(fabs(r.eq_residual[0]) > fabs(r.eq_residual[1]));
    ck_assert_rel(r.residual, fabs(tau * b[0] - a[0]), 1e-9);
    rigmat_trim_result_release(&r);
    tm_free(m);
}
END_TEST

/* The held residual itself: with the current that balances the shoulder's
 * torque (G1 / (N Kt)) its row is zero, and the elbow's is -G2 / M22 (the
 * forearm swings back toward hanging), whatever the current. */
START_TEST(held_residual_is_each_force_balance_over_its_own_inertia)
{
    const double q[2] = { 35.0 * M_PI / 180.0, 50.0 * M_PI / 180.0 }, NKt = 15 * 0.05;
    rigmat_model *m = rod_arm(2, q, 0);
    rigmat_mech *s = NULL;
    double x[4], u[1], g[4], Gx[16], Gu[4], M[2][2], G[2];

    arm2_statics(q, M, G);
    ck_assert_int_eq(rigmat_mech_alloc(m, &s, NULL), RIGMAT_OK);
    ck_assert_int_eq(rigmat_mech_operating_point(s, x, u, NULL), RIGMAT_OK);
    u[0] = G[0] / NKt;
    ck_assert_int_eq(rigmat_mech_held(s, x, u, g, Gx, Gu, NULL), RIGMAT_OK);
    ck_assert(fabs(g[2]) < 1e-12);
    ck_assert_rel(g[3], -G[1] / M[1][1], 1e-12);
    /* d g / d i: N Kt / M11 on the shoulder, nothing on the elbow */
    ck_assert_rel(Gu[2], NKt / M[0][0], 1e-12);
    ck_assert(fabs(Gu[3]) < 1e-14);
    u[0] = 0.37 * G[0] / NKt;
    ck_assert_int_eq(rigmat_mech_held(s, x, u, g, NULL, NULL, NULL), RIGMAT_OK);
    ck_assert_rel(g[2], -0.63 * G[0] / M[0][0], 1e-12);
    ck_assert_rel(g[3], -G[1] / M[1][1], 1e-12);
    rigmat_mech_free(s);
    tm_free(m);
}
END_TEST

/* With the elbow solved the forearm hangs straight (q1 + q2 = 0) and the
 * current is the statics one, common practice:
 * i = g sin q1 (m1 l1 / 2 + m2 l1) / (N Kt). */
START_TEST(two_link_arm_with_the_elbow_solved_hangs_the_forearm)
{
    const double q[2] = { 35.0 * M_PI / 180.0, 0.2 }, g = 9.80665;
    rigmat_model *m = rod_arm(2, q, 1);
    rigmat_options opt = rigmat_options_default();
    rigmat_trim_result r;
    rigmat_error e;
    size_t k;

    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_trim_model(m, &opt, &r, &e), RIGMAT_OK);
    ck_assert(r.converged);
    ck_assert_rel(r.x[1], -q[0], 1e-10);
    ck_assert_rel(r.u[0], g * sin(q[0]) * (arm_m[0] * arm_l[0] / 2 + arm_m[1] * arm_l[0]) /
            (15 * 0.05), 1e-10);
    ck_assert_uint_eq(r.nunmet, 0);
    ck_assert_uint_eq(r.neq, 2);
    for (k = 0; k < r.neq; k++)
        ck_assert(fabs(r.eq_residual[k]) <= opt.trim_tol);
    rigmat_trim_result_release(&r);
    tm_free(m);
}
END_TEST

/* A three-link chain held at a pose by the shoulder alone: the elbow and
 * the wrist both carry unbalanced gravity torques the shoulder current
 * cannot reach (each joint's force balance holds only when everything
 * below it hangs straight, common practice), so both are named, and the
 * shoulder is not. */
START_TEST(three_link_arm_names_the_elbow_and_the_wrist)
{
    const double q[3] = { 35.0 * M_PI / 180.0, 50.0 * M_PI / 180.0, -20.0 * M_PI / 180.0 };
    rigmat_model *m = rod_arm(3, q, 0);
    rigmat_options opt = rigmat_options_default();
    rigmat_trim_result r;
    rigmat_error e;

    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_trim_model(m, &opt, &r, &e), RIGMAT_ENUMERIC);
    ck_assert_uint_eq(r.nunmet, 2);
    ck_assert_str_eq(r.unmet_equations[0], "d(elbow.rate)/dt");
    ck_assert_str_eq(r.unmet_equations[1], "d(wrist.rate)/dt");
    ck_assert_uint_eq(r.neq, 3);
    ck_assert_str_eq(r.eq_state[2], "wrist.rate");
    rigmat_trim_result_release(&r);
    tm_free(m);
}
END_TEST

Suite *trim_suite(void);

Suite *trim_suite(void)
{
    Suite *s = suite_create("trim");
    TCase *tc = tcase_create("steady_states");

    tcase_add_test(tc, quarter_car_sags_under_gravity_and_matches_the_two_mass_model);
    tcase_add_test(tc, tyre_damping_on_a_position_driven_road_asks_for_its_rate);
    tcase_add_test(tc, slanted_spring_holds_a_block_with_its_geometric_stiffness);
    tcase_add_test(tc, motor_torque_holding_a_pendulum_at_20_deg_is_found_by_trim);
    tcase_add_test(tc, balancer_with_offset_centre_of_mass_leans_until_it_is_over_the_axle);
    tcase_add_test(tc, balancer_cruising_at_constant_speed_is_a_steady_motion);
    tcase_add_test(tc, trim_that_cannot_converge_names_the_equation_and_the_free_unknown);
    tcase_add_test(tc, trim_steps_one_by_one_and_the_residual_falls);
    tcase_add_test(tc, linearize_warns_of_a_name_in_solve_the_equations_leave_free);
    tcase_add_test(tc, two_link_arm_that_cannot_hold_its_elbow_names_only_the_elbow);
    tcase_add_test(tc, held_residual_is_each_force_balance_over_its_own_inertia);
    tcase_add_test(tc, two_link_arm_with_the_elbow_solved_hangs_the_forearm);
    tcase_add_test(tc, three_link_arm_names_the_elbow_and_the_wrist);
    suite_add_tcase(s, tc);
    return s;
}
