/* check_modes.c - the modes analysis (src/study/modes.c) against closed
 * forms: a mass-spring-damper, an inverted pendulum, two identical
 * pendulums on one cart (a pair of modes no cart force reaches and no cart
 * sensor sees), a repeated eigenvalue, a non-minimum-phase zero, DC gain
 * past a pole at 0, the invariance of shares to the units of a state.
 * scipy/numpy/sympy checks on every example: tests/ref/test_modes_examples.py. */
#include "modes.h"
#include "testutil.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_math.h>

/* the default of README.md, "Rules worth knowing" */
#define G0 9.80665

/* Load and linearize; *model must outlive the lti (its layout is borrowed). */
static rigmat_lti *load_lin(const char *path, rigmat_model **model)
{
    rigmat_model *m = NULL;
    rigmat_lti *l = NULL;
    rigmat_diags d;
    rigmat_error e;
    rigmat_options opt = rigmat_options_default();

    memset(&e, 0, sizeof e);
    rigmat_diags_init(&d);
    opt.catalog_dir = "../catalog";
    ck_assert_msg(rigmat_model_load(path, NULL, 0, &opt, &m, &d) == RIGMAT_OK, "%s: %s", path,
                  d.count ? d.items[0].message : "");
    rigmat_diags_release(&d);
    ck_assert_msg(rigmat_linearize(m, &opt, &l, NULL, &e) == RIGMAT_OK, "%s: %s", path, e.message);
    *model = m;
    return l;
}

static rigmat_modes *analyse(const rigmat_lti *l, double period_s)
{
    rigmat_modes *md = NULL;
    rigmat_error e;

    memset(&e, 0, sizeof e);
    ck_assert_msg(rigmat_modes_compute(l, period_s, NULL, &md, &e) == RIGMAT_OK, "%s", e.message);
    return md;
}

static rigmat_lti *hand(size_t nx, size_t nu, size_t ny, const double *a, const double *b,
                        const double *c)
{
    rigmat_lti *s = rigmat_lti_alloc(nx, nu, ny, nu);

    ck_assert_ptr_nonnull(s);
    tu_fill(s->A, a);
    tu_fill(s->B, b);
    tu_fill(s->C, c);
    return s;
}

START_TEST(mass_spring_damper_frequency_and_damping_match_the_closed_form)
{
    rigmat_model *model = NULL;
    /* tests/models/mass-spring-damper.yaml */
    const double m = 0.73, k = 412.0, c = 3.9, T = 0.004;
    /* Ogata (2010), "Modern Control Engineering", 5th ed., section 5-3
     * (section from memory): m x'' + c x' + k x = F has
     * omega_n = sqrt(k/m), zeta = c / (2 sqrt(k m)), poles
     * -zeta omega_n +- j omega_n sqrt(1 - zeta^2) */
    const double wn = sqrt(k / m), zeta = c / (2.0 * sqrt(k * m));
    rigmat_lti *l = load_lin("models/mass-spring-damper.yaml", &model);
    rigmat_modes *md = analyse(l, T);
    size_t i;

    ck_assert_uint_eq(md->nx, 2);
    for (i = 0; i < 2; i++) {
        const rigmat_mode *mo = &md->modes[i];
        ck_assert_rel(mo->frequency_hz, wn / (2.0 * M_PI), 1e-12);
        ck_assert_rel(mo->damping, zeta, 1e-12);
        ck_assert_rel(mo->time_constant_s, 1.0 / (zeta * wn), 1e-12);
        ck_assert_rel(mo->s_re, -zeta * wn, 1e-12);
        ck_assert_rel(fabs(mo->s_im), wn * sqrt(1.0 - zeta * zeta), 1e-12);
        /* z = e^{sT} (definition) */
        ck_assert_rel(hypot(mo->z_re, mo->z_im), exp(-zeta * wn * T), 1e-12);
        ck_assert_rel(atan2(fabs(mo->z_im), mo->z_re), wn * sqrt(1.0 - zeta * zeta) * T, 1e-12);
        ck_assert_int_eq(mo->stability, RIGMAT_STABLE);
        ck_assert(mo->controllable && mo->observable && mo->reached_by[0] && mo->seen_by[0]);
        /* in scaled units position and velocity share an oscillation
         * equally: their scales differ by omega_n (balancing, modes.h) */
        ck_assert_rel(mo->share[0], 0.5, 1e-6);
    }
    ck_assert(md->modes[0].s_im > 0.0 && md->modes[1].s_im < 0.0);
    /* the block's static compliance: x / F = 1 / k */
    ck_assert_rel(gsl_matrix_get(md->dc_gain, 0, 0), 1.0 / k, 1e-12);
    ck_assert_uint_eq(md->zeros[0].count, 0);
    rigmat_modes_free(md);
    rigmat_lti_free(l);
    rigmat_model_free(model);
}
END_TEST

START_TEST(inverted_pendulum_unstable_pole_is_sqrt_m_g_l_over_i_pivot)
{
    rigmat_model *model = NULL;
    /* tests/models/inverted-pendulum.yaml: a uniform rod, m, L, upright */
    const double m = 0.37, L = 0.53;
    /* Meriam & Kraige, "Engineering Mechanics: Dynamics" (rod about its
     * end I = m L^2 / 3, from memory); linearizing m g l sin(th) about
     * the top gives I th'' = m g l th, so s = +-sqrt(m g l / I_pivot) */
    const double ip = m * L * L / 3.0, lc = L / 2.0, p = sqrt(m * G0 * lc / ip);
    rigmat_lti *l = load_lin("models/inverted-pendulum.yaml", &model);
    rigmat_modes *md = analyse(l, 0.0);
    const rigmat_mode *up = NULL, *down = NULL;
    char line[256];
    char want[256];
    size_t i;

    for (i = 0; i < md->nx; i++) {
        if (md->modes[i].stability == RIGMAT_UNSTABLE)
            up = &md->modes[i];
        if (md->modes[i].stability == RIGMAT_STABLE)
            down = &md->modes[i];
    }
    ck_assert_ptr_nonnull(up);
    ck_assert_ptr_nonnull(down);
    ck_assert_rel(up->s_re, p, 1e-12);
    ck_assert_rel(down->s_re, -p, 1e-12);
    ck_assert_double_eq_tol(up->s_im, 0.0, 1e-300);
    ck_assert_rel(up->damping, -1.0, 1e-15);
    ck_assert_rel(up->time_constant_s, -1.0 / p, 1e-12);
    ck_assert(up->controllable && up->observable);
    ck_assert(up->reached_by[0] && up->seen_by[0]);
    /* the summary line names the rate, the joint, the input, the sensor */
    rigmat_modes_summary(md, line, sizeof line);
    snprintf(want, sizeof want,
             "1 unstable mode at %.3g rad/s, lives in pivot; reached by twist;"
             " seen by angle",
             p);
    ck_assert_str_eq(line, want);
    /* an unstable, unforced rod still has a DC gain: -1 / (m g l) per
     * N*m, the torque that holds it off vertical, with the sign flipped */
    ck_assert_rel(gsl_matrix_get(md->dc_gain, 0, 0), -1.0 / (m * G0 * lc), 1e-12);
    rigmat_modes_free(md);
    rigmat_lti_free(l);
    rigmat_model_free(model);
}
END_TEST

START_TEST(twin_pendulums_flag_only_the_antisymmetric_swing)
{
    rigmat_model *model = NULL;
    /* tests/models/twin-pendulums.yaml: identical rods m, L with pivot drag
     * c.  Swinging against each other they leave the cart alone: each is a
     * pendulum on a fixed pivot, I_p th'' + c th' + m g l th = 0 (Meriam &
     * Kraige, rod about its end I = m L^2 / 3, from memory) */
    const double m = 0.23, L = 0.41, c = 0.0023;
    const double ip = m * L * L / 3.0, lc = L / 2.0;
    const double sr = -c / (2.0 * ip), si = sqrt(m * G0 * lc / ip - sr * sr);
    rigmat_lti *l = load_lin("models/twin-pendulums.yaml", &model);
    rigmat_modes *md = analyse(l, 0.0);
    size_t i, nunc = 0, nuno = 0;

    ck_assert_uint_eq(md->nx, 6);
    for (i = 0; i < md->nx; i++) {
        const rigmat_mode *mo = &md->modes[i];

        if (!mo->controllable || !mo->observable) {
            /* the flagged pair is the antisymmetric swing */
            ck_assert(!mo->controllable && !mo->observable);
            ck_assert(!mo->reached_by[0] && !mo->seen_by[0]);
            ck_assert_rel(mo->s_re, sr, 1e-9);
            ck_assert_rel(fabs(mo->s_im), si, 1e-9);
            /* both pivots take part equally (states 1 and 2: the pivot
             * angles after the rail); the rail not at all */
            ck_assert_rel(mo->share[1], mo->share[2], 1e-9);
            ck_assert_double_eq_tol(mo->share[0] + mo->share[3], 0.0, 1e-20);
            nunc += !mo->controllable;
            nuno += !mo->observable;
        } else {
            ck_assert(mo->reached_by[0] && mo->seen_by[0]);
        }
    }
    ck_assert_uint_eq(nunc, 2);
    ck_assert_uint_eq(nuno, 2);
    rigmat_modes_free(md);
    rigmat_lti_free(l);
    rigmat_model_free(model);
}
END_TEST

START_TEST(a_repeated_eigenvalue_with_one_input_is_not_controllable)
{
    /* two identical undamped oscillators (k/m = 7.3) pushed by one force
     * through the same gain: the eigenvalues +-j sqrt(7.3) are each
     * double, rank [A - sI, b] = 3 < 4 (Hautus 1969), although the force
     * reaches the eigenspace.  With a second force, one per oscillator,
     * the rank is full. */
    const double a[] = { 0, 0, 1, 0, 0, 0, 0, 1, -7.3, 0, 0, 0, 0, -7.3, 0, 0 };
    const double b1[] = { 0, 0, 0.41, 0.41 }, b2[] = { 0, 0, 0, 0, 0.41, 0, 0, 0.41 };
    const double c[] = { 1, 1, 0, 0 };
    rigmat_lti *l1 = hand(4, 1, 1, a, b1, c), *l2 = hand(4, 2, 1, a, b2, c);
    rigmat_modes *m1 = analyse(l1, 0.0), *m2 = analyse(l2, 0.0);
    size_t i;

    for (i = 0; i < 4; i++) {
        ck_assert_rel(fabs(m1->modes[i].s_im), sqrt(7.3), 1e-12);
        ck_assert(!m1->modes[i].controllable);
        ck_assert(m1->modes[i].reached_by[0]);
        ck_assert(m2->modes[i].controllable);
    }
    rigmat_modes_free(m1);
    rigmat_modes_free(m2);
    rigmat_lti_free(l1);
    rigmat_lti_free(l2);
}
END_TEST

START_TEST(a_right_half_plane_zero_is_found_and_counted)
{
    /* companion form (Kailath 1980, "Linear Systems", section 2.1):
     * c (sI - A)^-1 b = (c0 + c1 s) / (s^2 + 5 s + 4) with c = [6, -3]:
     * G(s) = (6 - 3 s) / ((s + 1)(s + 4)), a zero at s = +2 and
     * G(0) = 6 / 4 */
    const double a[] = { 0, 1, -4, -5 }, b[] = { 0, 1 }, c[] = { 6, -3 };
    rigmat_lti *l = hand(2, 1, 1, a, b, c);
    rigmat_modes *md = analyse(l, 0.0);

    ck_assert_uint_eq(md->zeros[0].count, 1);
    ck_assert_rel(md->zeros[0].re[0], 2.0, 1e-12);
    ck_assert_double_eq_tol(md->zeros[0].im[0], 0.0, 1e-300);
    ck_assert_uint_eq(md->zeros[0].rhp, 1);
    ck_assert_rel(gsl_matrix_get(md->dc_gain, 0, 0), 1.5, 1e-12);
    ck_assert_rel(md->modes[0].s_re, -1.0, 1e-12);
    ck_assert_rel(md->modes[1].s_re, -4.0, 1e-12);
    rigmat_modes_free(md);
    rigmat_lti_free(l);
}
END_TEST

START_TEST(relative_degree_three_leaves_only_the_finite_zero)
{
    /* G(s) = (s + 3) / ((s + 1)(s + 2)(s + 5)(s + 7)), companion form:
     * relative degree 3, one zero at -3 (closed form); the denominator
     * s^4 + 15 s^3 + 73 s^2 + 129 s + 70 */
    const double a[] = { 0, 1, 0, 0, 0, 0, 1, 0, 0, 0, 0, 1, -70, -129, -73, -15 };
    const double b[] = { 0, 0, 0, 1 }, c[] = { 3, 1, 0, 0 };
    rigmat_lti *l = hand(4, 1, 1, a, b, c);
    rigmat_modes *md = analyse(l, 0.0);

    ck_assert_uint_eq(md->zeros[0].count, 1);
    ck_assert_rel(md->zeros[0].re[0], -3.0, 1e-10);
    ck_assert_uint_eq(md->zeros[0].rhp, 0);
    /* G(0) = 3 / 70 */
    ck_assert_rel(gsl_matrix_get(md->dc_gain, 0, 0), 3.0 / 70.0, 1e-12);
    rigmat_modes_free(md);
    rigmat_lti_free(l);
}
END_TEST

START_TEST(a_feedthrough_moves_the_zero_where_the_closed_form_puts_it)
{
    /* x' = -4.3 x + 1.9 u, y = 3.1 x + 2.2 u: G(s) = 2.2 + 5.89 / (s + 4.3)
     * = (2.2 s + 2.2 * 4.3 + 5.89) / (s + 4.3), one zero at
     * -(9.46 + 5.89) / 2.2 (closed form); G(0) = 2.2 + 5.89 / 4.3 */
    const double a[] = { -4.3 }, b[] = { 1.9 }, c[] = { 3.1 };
    rigmat_lti *l = hand(1, 1, 1, a, b, c);
    rigmat_modes *md;

    gsl_matrix_set(l->D, 0, 0, 2.2);
    md = analyse(l, 0.0);
    ck_assert_uint_eq(md->zeros[0].count, 1);
    ck_assert_rel(md->zeros[0].re[0], -(2.2 * 4.3 + 1.9 * 3.1) / 2.2, 1e-12);
    ck_assert_rel(gsl_matrix_get(md->dc_gain, 0, 0), 2.2 + 1.9 * 3.1 / 4.3, 1e-12);
    rigmat_modes_free(md);
    rigmat_lti_free(l);
}
END_TEST

START_TEST(a_two_state_feedthrough_channel_keeps_both_zeros)
{
    /* G(s) = 0.5 + (s + 1) / (s^2 + 3 s + 2) = (0.5 s^2 + 2.5 s + 2) /
     * ((s + 1)(s + 2)): zeros -1 and -4 (closed form, 0.5 (s + 1)(s + 4)) */
    const double a[] = { 0, 1, -2, -3 }, b[] = { 0, 1 }, c[] = { 1, 1 };
    rigmat_lti *l = hand(2, 1, 1, a, b, c);
    rigmat_modes *md;

    gsl_matrix_set(l->D, 0, 0, 0.5);
    md = analyse(l, 0.0);
    ck_assert_uint_eq(md->zeros[0].count, 2);
    ck_assert_rel(md->zeros[0].re[0], -1.0, 1e-10);
    ck_assert_rel(md->zeros[0].re[1], -4.0, 1e-10);
    rigmat_modes_free(md);
    rigmat_lti_free(l);
}
END_TEST

START_TEST(dc_gain_past_a_pole_at_zero_is_null_only_where_it_is_seen)
{
    /* a block with drag: x' = v, v' = -2.6 v + 1.7 F.  Position sees the
     * integrator (unbounded), velocity does not: v / F -> 1.7 / 2.6
     * (closed form); a third output reads nothing the input moves */
    const double a[] = { 0, 1, 0, 0, -2.6, 0, 0, 0, -0.9 }, b[] = { 0, 1.7, 0 };
    const double c[] = { 1, 0, 0, 0, 1, 0, 0, 0, 1 };
    rigmat_lti *l = hand(3, 1, 3, a, b, c);
    rigmat_modes *md = analyse(l, 0.0);

    ck_assert_uint_eq(md->zero_poles, 1);
    ck_assert(isnan(gsl_matrix_get(md->dc_gain, 0, 0)));
    ck_assert_rel(gsl_matrix_get(md->dc_gain, 1, 0), 1.7 / 2.6, 1e-10);
    ck_assert(md->zeros[2].no_path);
    ck_assert_uint_eq(md->zeros[2].count, 0);
    ck_assert_double_eq_tol(gsl_matrix_get(md->dc_gain, 2, 0), 0.0, 1e-300);
    ck_assert_int_eq(md->modes[0].stability, RIGMAT_MARGINAL);
    ck_assert(isnan(md->modes[0].time_constant_s));
    ck_assert(isnan(md->modes[0].damping));
    rigmat_modes_free(md);
    rigmat_lti_free(l);
}
END_TEST

/* Measure state k in another unit (k := f k): A row k times f, column k
 * divided by f, B row k times f, C column k divided by f. */
static void change_unit(rigmat_lti *l, size_t k, double f)
{
    size_t i;

    for (i = 0; i < l->nx; i++) {
        gsl_matrix_set(l->A, k, i, gsl_matrix_get(l->A, k, i) * f);
        gsl_matrix_set(l->A, i, k, gsl_matrix_get(l->A, i, k) / f);
    }
    for (i = 0; i < l->nu; i++)
        gsl_matrix_set(l->B, k, i, gsl_matrix_get(l->B, k, i) * f);
    for (i = 0; i < l->ny; i++)
        gsl_matrix_set(l->C, i, k, gsl_matrix_get(l->C, i, k) / f);
}

START_TEST(shares_and_zeros_do_not_depend_on_the_units_of_a_state)
{
    rigmat_model *model = NULL;
    /* the demo in m and rad, then with its travel in mm (cyclic: not
     * balanced) and its tilt in degrees (balanced): a scaling that is
     * dimensionally sound gives the same shares (Osborne 1960) */
    rigmat_lti *l = load_lin("../examples/balancer.yaml", &model);
    rigmat_modes *a = analyse(l, 0.0), *b = NULL;
    size_t k, i;

    change_unit(l, 0, 1000.0);
    change_unit(l, 1, 180.0 / M_PI);
    change_unit(l, 2, 1000.0);
    b = analyse(l, 0.0);
    for (k = 0; k < a->nx; k++) {
        ck_assert_rel(b->modes[k].s_re, a->modes[k].s_re, 1e-9);
        ck_assert_int_eq(b->modes[k].controllable, a->modes[k].controllable);
        ck_assert_int_eq(b->modes[k].observable, a->modes[k].observable);
        for (i = 0; i < a->nx; i++)
            ck_assert_msg(fabs(b->modes[k].share[i] - a->modes[k].share[i]) < 1e-6,
                          "mode %zu state %zu: share %g, was %g", k, i, b->modes[k].share[i],
                          a->modes[k].share[i]);
    }
    for (k = 0; k < a->nu * a->ny; k++) {
        ck_assert_uint_eq(b->zeros[k].count, a->zeros[k].count);
        ck_assert_uint_eq(b->zeros[k].rhp, a->zeros[k].rhp);
    }
    rigmat_modes_free(a);
    rigmat_modes_free(b);
    rigmat_lti_free(l);
    rigmat_model_free(model);
}
END_TEST

START_TEST(input_and_output_units_do_not_change_reach_sight_or_zeros)
{
    /* the demo with its gyro read in units 1e300 times smaller and its
     * drive in units 1e300 times larger: sums of squares would overflow
     * or vanish; reach, sight and zeros must not move */
    rigmat_model *model = NULL;
    rigmat_lti *l = load_lin("../examples/balancer.yaml", &model);
    rigmat_modes *a = analyse(l, 0.0), *b = NULL;
    size_t k, i, j;

    for (j = 0; j < l->nx; j++)
        gsl_matrix_set(l->C, 0, j, gsl_matrix_get(l->C, 0, j) * 1e300);
    for (i = 0; i < l->nx; i++)
        gsl_matrix_set(l->B, i, 0, gsl_matrix_get(l->B, i, 0) * 1e-300);
    b = analyse(l, 0.0);
    for (k = 0; k < a->nx; k++) {
        for (i = 0; i < a->ny; i++)
            ck_assert_int_eq(b->modes[k].seen_by[i], a->modes[k].seen_by[i]);
        for (j = 0; j < a->nu; j++)
            ck_assert_int_eq(b->modes[k].reached_by[j], a->modes[k].reached_by[j]);
        ck_assert_int_eq(b->modes[k].controllable, a->modes[k].controllable);
    }
    for (k = 0; k < a->nu * a->ny; k++) {
        ck_assert_uint_eq(b->zeros[k].count, a->zeros[k].count);
        ck_assert_int_eq(b->zeros[k].no_path, a->zeros[k].no_path);
        for (i = 0; i < a->zeros[k].count; i++)
            ck_assert_msg(fabs(b->zeros[k].re[i] - a->zeros[k].re[i]) <=
                                  1e-9 * (1.0 + hypot(a->zeros[k].re[i], a->zeros[k].im[i])),
                          "channel %zu zero %zu: %g, was %g", k, i, b->zeros[k].re[i],
                          a->zeros[k].re[i]);
    }
    rigmat_modes_free(a);
    rigmat_modes_free(b);
    rigmat_lti_free(l);
    rigmat_model_free(model);
}
END_TEST

START_TEST(the_demo_has_its_wrong_way_zero_from_drive_to_the_wheel)
{
    rigmat_model *model = NULL;
    /* derived in tests/ref/test_modes_examples.py (sympy: the roots of
     * det [[A - sI, b], [c, d]]): drive -> enc has one real zero in the
     * right half plane, near 4.94 1/s; here its presence and sign */
    rigmat_lti *l = load_lin("../examples/balancer.yaml", &model);
    rigmat_modes *md = analyse(l, 0.0);
    size_t i, j, found = 0;

    for (i = 0; i < md->ny; i++)
        for (j = 0; j < md->nu; j++)
            if (strcmp(md->output_names[i], "enc") == 0 &&
                strcmp(md->input_names[j], "drive") == 0) {
                const rigmat_channel_zeros *z = &md->zeros[i * md->nu + j];
                ck_assert_uint_eq(z->rhp, 1);
                found = 1;
            }
    ck_assert_uint_eq(found, 1);
    rigmat_modes_free(md);
    rigmat_lti_free(l);
    rigmat_model_free(model);
}
END_TEST

START_TEST(two_unstable_modes_are_both_named_in_the_summary)
{
    /* x1' = 2.2 x1 + u1 and an unstable oscillation x2'' = 0.3 x2' - 9 x2
     * + u2 (roots 0.15 +- j sqrt(9 - 0.0225)); y1 = x1, y2 = x2 */
    const double a[] = { 2.2, 0, 0, 0, 0, 1, 0, -9, 0.3 };
    const double b[] = { 1, 0, 0, 0, 0, 1 }, c[] = { 1, 0, 0, 0, 1, 0 };
    rigmat_lti *l = hand(3, 2, 2, a, b, c);
    rigmat_modes *md = analyse(l, 0.0);
    char line[256];

    /* an oscillator's position and rate share equally in balanced units
     * (|v2| / |v1| = |s| / sqrt(|a12 a21|) = 1), so their order is rounding */
    rigmat_modes_summary(md, line, sizeof line);
    ck_assert_msg(
            strcmp(line, "2 unstable modes: 2.2 rad/s in x1 and 3 rad/s (oscillating) in"
                         " x2, x3; reached by u1, u2; seen by y1, y2") == 0 ||
                    strcmp(line,
                           "2 unstable modes:"
                           " 2.2 rad/s in x1 and 3 rad/s (oscillating) in x3, x2; reached by u1, u2; seen by y1,"
                           " y2") == 0,
            "%s", line);
    /* sorted by |s|: the real mode (2.2) first, then the pair, Im > 0 first */
    ck_assert_rel(md->modes[0].s_re, 2.2, 1e-12);
    ck_assert(md->modes[1].s_im > 0.0 && md->modes[2].s_im < 0.0);
    ck_assert_rel(md->modes[1].s_re, 0.15, 1e-12);
    /* a cut buffer is terminated and the full length is returned */
    ck_assert_uint_eq(
            rigmat_modes_summary(md, line, 10),
            strlen("2 unstable modes: 2.2 rad/s in"
                   " x1 and 3 rad/s (oscillating) in x2, x3; reached by u1, u2; seen by y1, y2"));
    ck_assert_str_eq(line, "2 unstabl");
    rigmat_modes_free(md);
    rigmat_lti_free(l);
}
END_TEST

START_TEST(bad_arguments_are_refused)
{
    const double a[] = { 0, 1, -2, -3 }, b[] = { 0, 1 }, c[] = { 1, 0 };
    rigmat_lti *l = hand(2, 1, 1, a, b, c);
    rigmat_modes *md = NULL;
    rigmat_error e;

    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_modes_compute(l, -0.01, NULL, &md, &e), RIGMAT_EUSAGE);
    ck_assert_ptr_null(md);
    gsl_matrix_set(l->A, 1, 0, GSL_NAN);
    ck_assert_int_eq(rigmat_modes_compute(l, 0.0, NULL, &md, &e), RIGMAT_ENUMERIC);
    ck_assert_ptr_null(md);
    rigmat_modes_free(NULL);
    rigmat_lti_free(l);
}
END_TEST

Suite *modes_suite(void);

Suite *modes_suite(void)
{
    Suite *s = suite_create("modes");
    TCase *tc = tcase_create("references");

    tcase_add_test(tc, mass_spring_damper_frequency_and_damping_match_the_closed_form);
    tcase_add_test(tc, inverted_pendulum_unstable_pole_is_sqrt_m_g_l_over_i_pivot);
    tcase_add_test(tc, twin_pendulums_flag_only_the_antisymmetric_swing);
    tcase_add_test(tc, a_repeated_eigenvalue_with_one_input_is_not_controllable);
    tcase_add_test(tc, a_right_half_plane_zero_is_found_and_counted);
    tcase_add_test(tc, relative_degree_three_leaves_only_the_finite_zero);
    tcase_add_test(tc, a_feedthrough_moves_the_zero_where_the_closed_form_puts_it);
    tcase_add_test(tc, a_two_state_feedthrough_channel_keeps_both_zeros);
    tcase_add_test(tc, dc_gain_past_a_pole_at_zero_is_null_only_where_it_is_seen);
    tcase_add_test(tc, shares_and_zeros_do_not_depend_on_the_units_of_a_state);
    tcase_add_test(tc, input_and_output_units_do_not_change_reach_sight_or_zeros);
    tcase_add_test(tc, the_demo_has_its_wrong_way_zero_from_drive_to_the_wheel);
    tcase_add_test(tc, two_unstable_modes_are_both_named_in_the_summary);
    tcase_add_test(tc, bad_arguments_are_refused);
    suite_add_tcase(s, tc);
    return s;
}
