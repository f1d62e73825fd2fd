/* check_simulate.c - the nonlinear, linear and sampled responses
 * (src/study/simulate.h) and the validity range (src/study/validity.h)
 * against closed forms, a conserved quantity and each other. */
#include "mechtest.h"
#include "simulate.h"
#include "testutil.h"
#include "validity.h"

#include <check.h>
#include <math.h>
#include <gsl/gsl_math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

/* A block of mass m on a slider, a spring k (rest 0) and a damper c across
 * it, pushed by a force; its position is sensed. */
static rigmat_model *msd(double m, double k, double c)
{
    rigmat_model *mod = tm_new("mass-spring-damper");
    const size_t block = tm_body(mod, "block", m, 0.0, 0, 0);
    rigmat_link *s, *d;
    rigmat_force *f;
    rigmat_sensor *p;

    (void)tm_joint(mod, "rail", RIGMAT_JOINT_SLIDER, 0, block);
    s = tm_spring(mod, "spring", RIGMAT_ATTACH_ACROSS);
    s->joint = 0;
    s->stiffness = k;
    d = tm_damper(mod, "damper", RIGMAT_ATTACH_ACROSS);
    d->joint = 0;
    d->coefficient = c;
    f = tm_force(mod, "push", RIGMAT_FORCE_POINT);
    f->body = block;
    f->direction[0] = 1.0;
    p = tm_sensor(mod, "pos", RIGMAT_SENSE_JOINT_POSITION);
    p->joint = 0;
    ck_assert_int_eq(tm_build(mod, NULL, 0), RIGMAT_OK);
    return mod;
}

static const double msd_m = 0.73, msd_k = 41.3, msd_c = 0.57;

/* The underdamped free and forced responses of m x'' + c x' + k x = F(t),
 * the standard results (e.g. S. S. Rao, "Mechanical Vibrations", 5th ed.,
 * 2011, sections 2.6 and 3.6; from memory):
 *   free:  x = e^{-zw t} (x0 cos wd t + (v0 + zw x0)/wd sin wd t)
 *   step F at t0:  x = F/k [1 - e^{-zw s} (cos wd s + zw/wd sin wd s)], s = t - t0
 *   F sin(W t) from rest: x_p = X sin(W t - phi), X = F / sqrt((k - m W^2)^2 +
 *     (c W)^2), phi = atan2(c W, k - m W^2), plus the free response from
 *     x(0) = -x_p(0), x'(0) = -x_p'(0). */
static double msd_free(double x0, double v0, double t)
{
    const double wn = sqrt(msd_k / msd_m), zw = msd_c / (2.0 * msd_m);
    const double wd = sqrt(wn * wn - zw * zw);
    return exp(-zw * t) * (x0 * cos(wd * t) + (v0 + zw * x0) / wd * sin(wd * t));
}

static double msd_step(double F, double t0, double t)
{
    const double wn = sqrt(msd_k / msd_m), zw = msd_c / (2.0 * msd_m);
    const double wd = sqrt(wn * wn - zw * zw), s = t - t0;
    if (s < 0)
        return 0.0;
    return F / msd_k * (1.0 - exp(-zw * s) * (cos(wd * s) + zw / wd * sin(wd * s)));
}

static double msd_sine(double F, double W, double t)
{
    const double a = msd_k - msd_m * W * W, b = msd_c * W;
    const double X = F / sqrt(a * a + b * b), phi = atan2(b, a);
    const double xp0 = X * sin(-phi), vp0 = X * W * cos(-phi);
    return X * sin(W * t - phi) + msd_free(-xp0, -vp0, t);
}

/* Run one response; fails the test on an error. */
static void run(rigmat_system *sys, const rigmat_lti *l, const rigmat_sim_opts *o,
        const rigmat_sim_case *c, rigmat_sim_result *r)
{
    rigmat_error e;
    rigmat_status st;

    memset(&e, 0, sizeof e);
    rigmat_sim_result_init(r);
    st = rigmat_simulate(sys, l, o, c, r, &e);
    ck_assert_msg(st == RIGMAT_OK, "simulate: %s", e.message);
    ck_assert_int_eq(r->complete, 1);
    ck_assert_uint_eq(r->nrows, r->nrows_planned);
}

START_TEST(linear_free_response_is_the_closed_form)
{
    rigmat_model *m = msd(msd_m, msd_k, msd_c);
    rigmat_lti *l = tm_lin(m, NULL);
    rigmat_sim_opts o = rigmat_sim_opts_default();
    double off[2] = { 0.0213, -0.117 }, worst = 0;
    rigmat_sim_case c = { off, NULL, 0 };
    rigmat_sim_result r;
    size_t k;

    o.model = RIGMAT_SIM_LINEAR;
    o.duration_s = 3.0;
    o.step_s = 0.0125;
    run(NULL, l, &o, &c, &r);
    ck_assert_uint_eq(r.nrows, 241);
    for (k = 0; k < r.nrows; k++) {
        const double want = msd_free(off[0], off[1], r.t_s[k]);
        worst = fmax(worst, fabs(r.x[2 * k] - want));
        ck_assert_rel(r.y[k], r.x[2 * k], 0); /* the sensor reads the position */
    }
    fprintf(stderr, "simulate: linear free response vs closed form %.3g m\n", worst);
    /* exact stepping: the error stays at rounding level of the amplitude */
    ck_assert_msg(worst < 1e-13, "linear free response off by %.3g m", worst);
    rigmat_sim_result_release(&r);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(linear_step_between_output_times_and_sine_are_exact)
{
    rigmat_model *m = msd(msd_m, msd_k, msd_c);
    rigmat_lti *l = tm_lin(m, NULL);
    rigmat_sim_opts o = rigmat_sim_opts_default();
    rigmat_wave w;
    rigmat_sim_case c = { NULL, &w, 1 };
    rigmat_sim_result r;
    double worst = 0;
    size_t k;

    o.model = RIGMAT_SIM_LINEAR;
    o.duration_s = 2.0;
    o.step_s = 0.01;
    memset(&w, 0, sizeof w);
    w.kind = RIGMAT_WAVE_STEP;
    w.value = 1.37;
    w.t0_s = 0.1234; /* between two output times */
    run(NULL, l, &o, &c, &r);
    for (k = 0; k < r.nrows; k++)
        worst = fmax(worst, fabs(r.x[2 * k] - msd_step(1.37, 0.1234, r.t_s[k])));
    fprintf(stderr, "simulate: linear step between output times vs closed form %.3g m\n", worst);
    ck_assert_msg(worst < 1e-14, "step response off by %.3g m", worst);
    ck_assert_rel(r.u[12], 0.0, 0);   /* t = 0.12: before the step */
    ck_assert_rel(r.u[13], 1.37, 0);  /* t = 0.13: after it */
    rigmat_sim_result_release(&r);

    w.kind = RIGMAT_WAVE_SINE;
    w.value = 0.83;
    w.t0_s = 0;
    w.frequency_hz = 1.9;
    worst = 0;
    run(NULL, l, &o, &c, &r);
    for (k = 0; k < r.nrows; k++)
        worst = fmax(worst, fabs(r.x[2 * k] - msd_sine(0.83, 2 * M_PI * 1.9, r.t_s[k])));
    fprintf(stderr, "simulate: linear sine response vs closed form %.3g m\n", worst);
    ck_assert_msg(worst < 1e-14, "sine response off by %.3g m", worst);
    ck_assert_rel(r.u[25], 0.83 * sin(2 * M_PI * 1.9 * 0.25), 1e-14);
    rigmat_sim_result_release(&r);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

/* On a linear rig the nonlinear model is the linear one: the integrator
 * (GSL msbdf) must agree with the exact stepping to about its tolerance,
 * for a ramp, a table and a sine at once. */
START_TEST(nonlinear_agrees_with_exact_stepping_on_a_linear_rig)
{
    rigmat_model *m = msd(msd_m, msd_k, msd_c);
    rigmat_lti *l = tm_lin(m, NULL);
    rigmat_system *sys = NULL;
    rigmat_sim_opts o = rigmat_sim_opts_default();
    rigmat_wave w[3];
    double tt[3] = { 0.05, 0.3, 0.71 }, tv[3] = { 0.0, 0.9, -0.4 };
    double off[2] = { 0.011, 0.0 }, worst = 0, amp = 0;
    rigmat_sim_case c = { off, w, 3 };
    rigmat_sim_result rn, rl;
    rigmat_error e;
    size_t k;

    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_system_alloc(m, &sys, &e), RIGMAT_OK);
    memset(w, 0, sizeof w);
    w[0].kind = RIGMAT_WAVE_RAMP;
    w[0].value = 2.1;
    w[0].t0_s = 0.417;
    w[1].kind = RIGMAT_WAVE_TABLE;
    w[1].table_t_s = tt;
    w[1].table_v = tv;
    w[1].ntable = 3;
    w[2].kind = RIGMAT_WAVE_SINE;
    w[2].value = 0.3;
    w[2].frequency_hz = 3.3;
    o.duration_s = 1.5;
    o.step_s = 0.02;
    o.rtol = 1e-10;
    o.model = RIGMAT_SIM_LINEAR;
    run(NULL, l, &o, &c, &rl);
    o.model = RIGMAT_SIM_NONLINEAR;
    run(sys, l, &o, &c, &rn);
    for (k = 0; k < rn.nrows; k++) {
        amp = fmax(amp, fabs(rl.x[2 * k]));
        worst = fmax(worst, fabs(rn.x[2 * k] - rl.x[2 * k]));
        ck_assert_rel(rn.u[k], rl.u[k], 1e-15);
    }
    fprintf(stderr, "simulate: nonlinear vs exact on a linear rig %.3g of %.3g m\n", worst, amp);
    ck_assert_msg(worst < 1e-7 * amp, "nonlinear vs exact: %.3g of %.3g m", worst, amp);
    rigmat_sim_result_release(&rn);
    rigmat_sim_result_release(&rl);
    rigmat_system_free(sys);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

/* An undamped pendulum swinging 1.2 rad keeps its energy
 * E = (I + m l^2) w^2 / 2 - m g l cos(th) (a conservative system: common
 * practice).  Bound: over 10 s (about 9 swings) at the default tolerance
 * 1e-8 the drift stays below 1e-10 of the swing's energy m g l (1 - cos th0)
 * (measured: 1.1e-13 with bsimp; msbdf gave 2e-5, see simulate.h). */
START_TEST(undamped_pendulum_keeps_its_energy)
{
    const double mass = 0.37, inertia = 0.0021, lc = 0.29, g = 9.80665, th0 = 1.2;
    rigmat_model *m = tm_new("pendulum");
    const size_t bob = tm_body(m, "bob", mass, inertia, 0, -lc);
    rigmat_system *sys = NULL;
    rigmat_lti *l;
    rigmat_sim_opts o = rigmat_sim_opts_default();
    double off[2] = { th0, 0.0 }, drift = 0, e0, swing;
    rigmat_sim_case c = { off, NULL, 0 };
    rigmat_sim_result r;
    rigmat_error e;
    size_t k;

    m->gravity_m_s2 = g;
    (void)tm_joint(m, "swing", RIGMAT_JOINT_HINGE, 0, bob);
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    l = tm_lin(m, NULL);
    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_system_alloc(m, &sys, &e), RIGMAT_OK);
    o.duration_s = 10.0;
    o.step_s = 0.01;
    run(sys, l, &o, &c, &r);
    e0 = -mass * g * lc * cos(th0);
    swing = mass * g * lc * (1.0 - cos(th0));
    for (k = 0; k < r.nrows; k++) {
        const double th = r.x[2 * k], w = r.x[2 * k + 1];
        const double en = 0.5 * (inertia + mass * lc * lc) * w * w - mass * g * lc * cos(th);
        drift = fmax(drift, fabs(en - e0));
    }
    fprintf(stderr, "simulate: pendulum energy drift %.3g of the swing energy\n", drift / swing);
    ck_assert_msg(drift < 1e-10 * swing, "energy drift %.3g J of %.3g J", drift, swing);
    /* it really swings: the angle changes sign */
    ck_assert(r.x[2 * 50] < 0 || r.x[2 * 100] < 0 || r.x[2 * 150] < 0);
    rigmat_sim_result_release(&r);
    rigmat_system_free(sys);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

static rigmat_model *cartpole(void)
{
    rigmat_model *mod = tm_new("cart-pole");
    const size_t cart = tm_body(mod, "cart", 0.94, 0.0, 0, 0);
    const size_t pole = tm_body(mod, "pole", 0.21, 0.21 * 0.62 * 0.62 / 12, 0, 0.31);
    rigmat_force *f;
    rigmat_link *d;
    rigmat_sensor *s;

    (void)tm_joint(mod, "rail", RIGMAT_JOINT_SLIDER, 0, cart);
    (void)tm_joint(mod, "pivot", RIGMAT_JOINT_HINGE, cart, pole);
    f = tm_force(mod, "push", RIGMAT_FORCE_POINT);
    f->body = cart;
    f->direction[0] = 1.0;
    d = tm_damper(mod, "rail_drag", RIGMAT_ATTACH_ACROSS);
    d->joint = 0;
    d->coefficient = 1.9;
    s = tm_sensor(mod, "angle", RIGMAT_SENSE_JOINT_POSITION);
    s->joint = 1;
    ck_assert_int_eq(tm_build(mod, NULL, 0), RIGMAT_OK);
    return mod;
}

/* The ZOH model is exact for an input held over each period, so at the
 * sample instants it reproduces the exact linear response to a step at a
 * sample instant (Franklin, Powell, Workman, "Digital Control of Dynamic
 * Systems", 3rd ed., 1998, section 4.3.3). */
START_TEST(sampled_matches_linear_at_the_sample_instants)
{
    rigmat_model *m = cartpole();
    rigmat_lti *l = tm_lin(m, NULL);
    rigmat_sim_opts o = rigmat_sim_opts_default();
    rigmat_wave w;
    double off[4] = { 0.0, 0.013, 0.0, -0.05 }, worst = 0, amp = 0;
    rigmat_sim_case c = { off, &w, 1 };
    rigmat_sim_result rs, rl;
    size_t k, i;

    memset(&w, 0, sizeof w);
    w.kind = RIGMAT_WAVE_STEP;
    w.value = -0.7;
    w.t0_s = 0.1; /* the 20th sample at 200 Hz */
    o.duration_s = 1.0;
    o.step_s = 0.01; /* every second sample */
    o.rate_hz = 200;
    o.model = RIGMAT_SIM_SAMPLED;
    run(NULL, l, &o, &c, &rs);
    o.model = RIGMAT_SIM_LINEAR;
    run(NULL, l, &o, &c, &rl);
    ck_assert_uint_eq(rs.nrows, 101);
    for (k = 0; k < rs.nrows; k++) {
        ck_assert_rel(rs.t_s[k], rl.t_s[k], 0);
        ck_assert_rel(rs.u[k], rl.u[k], 0);
        for (i = 0; i < 4; i++) {
            amp = fmax(amp, fabs(rl.x[4 * k + i]));
            worst = fmax(worst, fabs(rs.x[4 * k + i] - rl.x[4 * k + i]));
        }
        ck_assert_rel(rs.y[k], rs.x[4 * k + 1], 0);
    }
    fprintf(stderr, "simulate: sampled vs linear at the samples %.3g of %.3g\n", worst, amp);
    ck_assert_msg(worst < 1e-11 * amp, "sampled vs linear: %.3g of %.3g", worst, amp);
    rigmat_sim_result_release(&rs);
    rigmat_sim_result_release(&rl);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(sampled_step_must_be_a_multiple_of_the_period)
{
    rigmat_model *m = cartpole();
    rigmat_lti *l = tm_lin(m, NULL);
    rigmat_sim_opts o = rigmat_sim_opts_default();
    rigmat_sim_case c = { NULL, NULL, 0 };
    rigmat_sim_result r;
    rigmat_error e;

    memset(&e, 0, sizeof e);
    rigmat_sim_result_init(&r);
    o.model = RIGMAT_SIM_SAMPLED;
    o.rate_hz = 200;
    o.step_s = 0.0075;
    ck_assert_int_eq(rigmat_simulate(NULL, l, &o, &c, &r, &e), RIGMAT_EUSAGE);
    ck_assert_ptr_nonnull(strstr(e.message, "multiple of the period"));
    rigmat_sim_result_release(&r);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

/* A bead on a spinning massless rod, gravity off, sliding inward at
 * 0.5 m/s from 50 mm: at t = 0.1 s it reaches the axis, where the rod's
 * hinge has no inertia.  The run stops there with the rows before it. */
START_TEST(nonlinear_stops_where_the_mass_matrix_turns_singular)
{
    rigmat_model *m = tm_new("bead");
    const size_t rod = tm_body(m, "rod", 0.0, 0.0, 0, 0);
    const size_t bead = tm_body(m, "bead", 0.05, 0.0, 0, 0);
    rigmat_system *sys = NULL;
    rigmat_lti *l;
    rigmat_sim_opts o = rigmat_sim_opts_default();
    rigmat_sim_case c = { NULL, NULL, 0 };
    rigmat_sim_result r;
    rigmat_error e;

    m->gravity_m_s2 = 0.0;
    (void)tm_joint(m, "spin", RIGMAT_JOINT_HINGE, 0, rod);
    (void)tm_joint(m, "along", RIGMAT_JOINT_SLIDER, rod, bead);
    tm_op(m, 'c', "along", 0.05);
    tm_op(m, 'r', "along", -0.5);
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    l = tm_lin(m, NULL);
    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_system_alloc(m, &sys, &e), RIGMAT_OK);
    rigmat_sim_result_init(&r);
    o.duration_s = 0.2;
    o.step_s = 0.025;
    ck_assert_int_eq(rigmat_simulate(sys, l, &o, &c, &r, &e), RIGMAT_ENUMERIC);
    ck_assert_ptr_nonnull(strstr(e.message, "at t = 0.1 s"));
    ck_assert_ptr_nonnull(strstr(e.message, "singular"));
    ck_assert_int_eq(r.complete, 0);
    ck_assert_uint_eq(r.nrows, 4); /* t = 0, 0.025, 0.05, 0.075 */
    ck_assert_rel(r.x[3 * 4 + 1], 0.05 - 0.5 * 0.075, 1e-12);
    rigmat_sim_result_release(&r);
    rigmat_system_free(sys);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

/* The integrator's step budget per interval is the "cannot meet the
 * tolerance" failure: 3 steps cannot carry a swinging pendulum over 0.1 s
 * at 1e-12. */
START_TEST(nonlinear_reports_a_tolerance_it_cannot_meet)
{
    rigmat_model *m = tm_new("pendulum");
    const size_t bob = tm_body(m, "bob", 0.37, 0.0021, 0, -0.29);
    rigmat_system *sys = NULL;
    rigmat_lti *l;
    rigmat_sim_opts o = rigmat_sim_opts_default();
    double off[2] = { 1.2, 0.0 };
    rigmat_sim_case c = { off, NULL, 0 };
    rigmat_sim_result r;
    rigmat_error e;
    rigmat_wave w;

    (void)tm_joint(m, "swing", RIGMAT_JOINT_HINGE, 0, bob);
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    l = tm_lin(m, NULL);
    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_system_alloc(m, &sys, &e), RIGMAT_OK);
    rigmat_sim_result_init(&r);
    o.duration_s = 1.0;
    o.step_s = 0.1;
    o.rtol = 1e-12;
    o.max_steps = 3;
    ck_assert_int_eq(rigmat_simulate(sys, l, &o, &c, &r, &e), RIGMAT_ENUMERIC);
    ck_assert_ptr_nonnull(strstr(e.message, "cannot meet the tolerance"));
    ck_assert_int_eq(r.complete, 0);
    ck_assert_uint_ge(r.nrows, 1);
    ck_assert_rel(r.x[0], 1.2, 0);
    /* a malformed signal is refused before anything runs */
    memset(&w, 0, sizeof w);
    w.kind = RIGMAT_WAVE_TABLE;
    c.waves = &w;
    c.nwaves = 1;
    o.max_steps = 1000;
    ck_assert_int_eq(rigmat_simulate(sys, l, &o, &c, &r, &e), RIGMAT_EUSAGE);
    w.kind = RIGMAT_WAVE_STEP;
    w.input = 0; /* the pendulum has no inputs */
    ck_assert_int_eq(rigmat_simulate(sys, l, &o, &c, &r, &e), RIGMAT_EUSAGE);
    rigmat_sim_result_release(&r);
    rigmat_system_free(sys);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(signals_parse_with_units_and_refuse_wrong_ones)
{
    rigmat_wave w;
    rigmat_error e;
    char path[] = "/tmp/rigmat-wave-XXXXXX";
    FILE *f;
    int fd;

    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_wave_parse("step:250mV@20ms", "V", 0, &w, &e), RIGMAT_OK);
    ck_assert_int_eq(w.kind, RIGMAT_WAVE_STEP);
    ck_assert_rel(w.value, 0.25, 1e-15);
    ck_assert_rel(w.t0_s, 0.02, 1e-15);
    ck_assert_int_eq(rigmat_wave_parse("impulse:0.3 N*s", "N", 1, &w, &e), RIGMAT_OK);
    ck_assert_rel(w.value, 0.3, 1e-15);
    ck_assert_uint_eq(w.input, 1);
    ck_assert_int_eq(rigmat_wave_parse("ramp:90 deg/s/s", "rad/s", 0, &w, &e), RIGMAT_OK);
    ck_assert_rel(w.value, M_PI / 2, 1e-15);
    ck_assert_int_eq(rigmat_wave_parse("sine:0.4@2kHz", "1", 0, &w, &e), RIGMAT_OK);
    ck_assert_rel(w.frequency_hz, 2000, 1e-15);
    ck_assert_int_eq(rigmat_wave_parse("step:3 m", "V", 0, &w, &e), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_wave_parse("impulse:2 V", "V", 0, &w, &e), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_wave_parse("sine:2 V", "V", 0, &w, &e), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_wave_parse("square:2 V", "V", 0, &w, &e), RIGMAT_EUSAGE);
    ck_assert_ptr_nonnull(strstr(e.hint, "step:VALUE"));
    ck_assert_int_eq(rigmat_wave_parse("file:/nonexistent/x.csv", "V", 0, &w, &e), RIGMAT_EIO);

    fd = mkstemp(path);
    ck_assert_int_ge(fd, 0);
    f = fdopen(fd, "w");
    fputs("time [s],drive [V]\n0, 0\n0.5,1.5\n# a comment\n1.0,-1\n", f);
    fclose(f);
    {
        char spec[64];
        snprintf(spec, sizeof spec, "file:%s", path);
        ck_assert_int_eq(rigmat_wave_parse(spec, "V", 0, &w, &e), RIGMAT_OK);
    }
    ck_assert_uint_eq(w.ntable, 3);
    ck_assert_rel(rigmat_wave_eval(&w, 1, 0, 0.25), 0.75, 1e-15);
    ck_assert_rel(rigmat_wave_eval(&w, 1, 0, 0.75), 0.25, 1e-15);
    ck_assert_rel(rigmat_wave_eval(&w, 1, 0, 7.0), -1.0, 0);
    rigmat_wave_release(&w);
    f = fopen(path, "w");
    fputs("0,1\n0.5,2\n0.4,3\n", f);
    fclose(f);
    {
        char spec[64];
        snprintf(spec, sizeof spec, "file:%s", path);
        ck_assert_int_eq(rigmat_wave_parse(spec, "V", 0, &w, &e), RIGMAT_EUSAGE);
        ck_assert_ptr_nonnull(strstr(e.message, "times must increase"));
    }
    unlink(path);
}
END_TEST

/* The validity measure: on a linear rig the nonlinear and linear models are
 * the same, so every size is valid; on a pendulum hanging down the linear
 * model's error grows with the amplitude, and the sweep stops where it
 * crosses the criterion. */
START_TEST(validity_range_of_a_hanging_pendulum)
{
    const double mass = 0.37, inertia = 0.0021, lc = 0.29;
    rigmat_model *m = tm_new("pendulum");
    const size_t bob = tm_body(m, "bob", mass, inertia, 0, -lc);
    rigmat_sensor *s;
    rigmat_system *sys = NULL;
    rigmat_lti *l;
    rigmat_validity_opts o = rigmat_validity_opts_default();
    rigmat_validity_item it;
    rigmat_error e;
    double ea, eb;
    int failed;

    (void)tm_joint(m, "swing", RIGMAT_JOINT_HINGE, 0, bob);
    s = tm_sensor(m, "angle", RIGMAT_SENSE_JOINT_POSITION);
    s->joint = 0;
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    l = tm_lin(m, NULL);
    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_system_alloc(m, &sys, &e), RIGMAT_OK);
    o.horizon_s = 2.0;
    ck_assert_int_eq(rigmat_validity_sweep(sys, l, &m->layout, &o, 0, 0, &it, &e), RIGMAT_OK);
    ck_assert_int_eq(it.bounded, 1);
    ck_assert(it.size > 0.01 && it.size < 1.0);
    /* symmetric rig: both directions agree to the bisection's resolution */
    ck_assert_rel(it.size_pos, it.size_neg, 0.01);
    /* just inside and well outside the range */
    ck_assert_int_eq(rigmat_validity_error(sys, l, &o, 0, 0, 0.9 * it.size, &ea, &failed, &e),
            RIGMAT_OK);
    ck_assert_int_eq(rigmat_validity_error(sys, l, &o, 0, 0, 2.0 * it.size, &eb, &failed, &e),
            RIGMAT_OK);
    ck_assert(ea <= o.criterion && eb > o.criterion);
    /* the period of a pendulum lengthens with amplitude by about th0^2/16
     * (the first term of the series, e.g. L. D. Landau, E. M. Lifshitz,
     * "Mechanics", 3rd ed., 1976, section 28, problem 1; from memory), so
     * the phase error over the horizon grows as th0^2: doubling the size
     * multiplies the error by about 4 */
    {
        double e1, e2;
        ck_assert_int_eq(rigmat_validity_error(sys, l, &o, 0, 0, 0.02, &e1, &failed, &e),
                RIGMAT_OK);
        ck_assert_int_eq(rigmat_validity_error(sys, l, &o, 0, 0, 0.04, &e2, &failed, &e),
                RIGMAT_OK);
        ck_assert_rel(e2 / e1, 4.0, 0.05);
    }
    rigmat_system_free(sys);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

START_TEST(validity_of_a_linear_rig_is_unbounded)
{
    rigmat_model *m = msd(msd_m, msd_k, msd_c);
    rigmat_lti *l = tm_lin(m, NULL);
    rigmat_system *sys = NULL;
    rigmat_validity_opts o = rigmat_validity_opts_default();
    rigmat_validity_item it[4];
    rigmat_error e;
    size_t n = 0;

    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_system_alloc(m, &sys, &e), RIGMAT_OK);
    o.max_size = 10;
    ck_assert_int_eq(rigmat_validity_all(sys, l, &m->layout, &o, it, 4, &n, &e), RIGMAT_OK);
    ck_assert_uint_eq(n, 2); /* rail.position, push */
    ck_assert_int_eq(it[0].is_input, 0);
    ck_assert_int_eq(it[1].is_input, 1);
    ck_assert_int_eq(it[0].bounded, 0);
    ck_assert_int_eq(it[1].bounded, 0);
    ck_assert_rel(it[1].size, 10, 0);
    rigmat_system_free(sys);
    rigmat_lti_free(l);
    tm_free(m);
}
END_TEST

Suite *simulate_suite(void);
Suite *simulate_suite(void)
{
    Suite *s = suite_create("simulate");
    TCase *tc = tcase_create("simulate");

    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, linear_free_response_is_the_closed_form);
    tcase_add_test(tc, linear_step_between_output_times_and_sine_are_exact);
    tcase_add_test(tc, nonlinear_agrees_with_exact_stepping_on_a_linear_rig);
    tcase_add_test(tc, undamped_pendulum_keeps_its_energy);
    tcase_add_test(tc, sampled_matches_linear_at_the_sample_instants);
    tcase_add_test(tc, sampled_step_must_be_a_multiple_of_the_period);
    tcase_add_test(tc, nonlinear_stops_where_the_mass_matrix_turns_singular);
    tcase_add_test(tc, nonlinear_reports_a_tolerance_it_cannot_meet);
    tcase_add_test(tc, signals_parse_with_units_and_refuse_wrong_ones);
    tcase_add_test(tc, validity_range_of_a_hanging_pendulum);
    tcase_add_test(tc, validity_of_a_linear_rig_is_unbounded);
    suite_add_tcase(s, tc);
    return s;
}
