/* check_mechanics.c - equations of motion of hand-built models against
 * closed forms, and the hand-built model helpers (mechtest.h). */
#include "testutil.h"
#include "mechtest.h"
#include "mechanics.h"

#include <check.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_math.h>
#include <gsl/gsl_eigen.h>

/* ---------------------------------------------------------- helpers */

#define TM_CAP 16

static char *dupstr(const char *s)
{
    char *p = malloc(strlen(s) + 1);
    ck_assert_ptr_nonnull(p);
    strcpy(p, s);
    return p;
}

rigmat_model *tm_new(const char *name)
{
    rigmat_model *m = calloc(1, sizeof *m);
    ck_assert_ptr_nonnull(m);
    m->name = dupstr(name);
    m->gravity_m_s2 = 9.80665;
    m->bodies = calloc(TM_CAP, sizeof *m->bodies);
    m->joints = calloc(TM_CAP, sizeof *m->joints);
    m->springs = calloc(TM_CAP, sizeof *m->springs);
    m->dampers = calloc(TM_CAP, sizeof *m->dampers);
    m->motors = calloc(TM_CAP, sizeof *m->motors);
    m->forces = calloc(TM_CAP, sizeof *m->forces);
    m->sensors = calloc(TM_CAP, sizeof *m->sensors);
    m->op_coordinates = calloc(TM_CAP, sizeof *m->op_coordinates);
    m->op_rates = calloc(TM_CAP, sizeof *m->op_rates);
    m->op_inputs = calloc(TM_CAP, sizeof *m->op_inputs);
    (void)tm_body(m, "ground", 0, 0, 0, 0);
    return m;
}

static void free_list(rigmat_namelist *l)
{
    size_t k;
    for (k = 0; k < l->count; k++)
        free(l->names[k]);
    free(l->names);
    free(l->locs);
}

void tm_free(rigmat_model *m)
{
    size_t k;
    if (m == NULL)
        return;
    rigmat_layout_release(&m->layout);
    for (k = 0; k < m->nbodies; k++) free(m->bodies[k].name);
    for (k = 0; k < m->njoints; k++) free(m->joints[k].name);
    for (k = 0; k < m->nsprings; k++) free(m->springs[k].name);
    for (k = 0; k < m->ndampers; k++) free(m->dampers[k].name);
    for (k = 0; k < m->nmotors; k++) free(m->motors[k].name);
    for (k = 0; k < m->nforces; k++) free(m->forces[k].name);
    for (k = 0; k < m->nsensors; k++) free(m->sensors[k].name);
    for (k = 0; k < m->nop_coordinates; k++) free(m->op_coordinates[k].name);
    for (k = 0; k < m->nop_rates; k++) free(m->op_rates[k].name);
    for (k = 0; k < m->nop_inputs; k++) free(m->op_inputs[k].name);
    free_list(&m->op_solve);
    free_list(&m->order_states);
    free_list(&m->order_inputs);
    free_list(&m->order_outputs);
    free(m->bodies); free(m->joints); free(m->springs); free(m->dampers); free(m->motors);
    free(m->forces); free(m->sensors); free(m->op_coordinates); free(m->op_rates);
    free(m->op_inputs); free(m->name);
    free(m);
}

size_t tm_body(rigmat_model *m, const char *name, double mass_kg, double inertia_kgm2,
        double comx_m, double comy_m)
{
    rigmat_body *b = &m->bodies[m->nbodies];
    ck_assert_uint_lt(m->nbodies, TM_CAP);
    b->name = dupstr(name);
    b->mass_kg = mass_kg;
    b->inertia_kgm2 = inertia_kgm2;
    b->com_m[0] = comx_m;
    b->com_m[1] = comy_m;
    b->joint = RIGMAT_NONE;
    return m->nbodies++;
}

rigmat_joint *tm_joint(rigmat_model *m, const char *name, rigmat_joint_type type, size_t parent,
        size_t child)
{
    rigmat_joint *j = &m->joints[m->njoints];
    ck_assert_uint_lt(m->njoints, TM_CAP);
    j->name = dupstr(name);
    j->type = type;
    j->parent = parent;
    j->child = child;
    j->axis[0] = 1.0;
    m->bodies[child].joint = m->njoints;
    m->njoints++;
    return j;
}

static rigmat_link *link_new(rigmat_link *arr, size_t *n, const char *name, rigmat_attach how)
{
    rigmat_link *l = &arr[*n];
    ck_assert_uint_lt(*n, TM_CAP);
    l->name = dupstr(name);
    l->attach = how;
    (*n)++;
    return l;
}

rigmat_link *tm_spring(rigmat_model *m, const char *name, rigmat_attach how)
{
    return link_new(m->springs, &m->nsprings, name, how);
}

rigmat_link *tm_damper(rigmat_model *m, const char *name, rigmat_attach how)
{
    return link_new(m->dampers, &m->ndampers, name, how);
}

rigmat_motor *tm_motor(rigmat_model *m, const char *name)
{
    rigmat_motor *mo = &m->motors[m->nmotors++];
    mo->name = dupstr(name);
    mo->gear_ratio = 1.0;
    mo->efficiency = 1.0;
    mo->count = 1;
    mo->polarity = 1;
    mo->joint = RIGMAT_NONE;
    mo->stator = mo->rotor = RIGMAT_NONE;
    return mo;
}

rigmat_force *tm_force(rigmat_model *m, const char *name, rigmat_force_kind kind)
{
    rigmat_force *f = &m->forces[m->nforces++];
    f->name = dupstr(name);
    f->kind = kind;
    f->reacting = RIGMAT_NONE;
    f->joint = RIGMAT_NONE;
    return f;
}

rigmat_sensor *tm_sensor(rigmat_model *m, const char *name, rigmat_sensor_kind kind)
{
    rigmat_sensor *s = &m->sensors[m->nsensors++];
    s->name = dupstr(name);
    s->kind = kind;
    s->gain = 1.0;
    s->joint = s->body = s->body_b = s->motor = RIGMAT_NONE;
    return s;
}

void tm_op(rigmat_model *m, char which, const char *name, double value)
{
    rigmat_setting *arr = which == 'c' ? m->op_coordinates :
                          which == 'r' ? m->op_rates : m->op_inputs;
    size_t *n = which == 'c' ? &m->nop_coordinates :
                which == 'r' ? &m->nop_rates : &m->nop_inputs;
    arr[*n].name = dupstr(name);
    arr[*n].value = value;
    (*n)++;
}

void tm_list(rigmat_namelist *l, const char *name)
{
    l->names = realloc(l->names, (l->count + 1) * sizeof *l->names);
    l->locs = realloc(l->locs, (l->count + 1) * sizeof *l->locs);
    ck_assert_ptr_nonnull(l->names);
    ck_assert_ptr_nonnull(l->locs);
    l->names[l->count] = dupstr(name);
    memset(&l->locs[l->count], 0, sizeof l->locs[0]);
    l->count++;
}

void tm_solve(rigmat_model *m, const char *name)
{
    tm_list(&m->op_solve, name);
}

rigmat_status tm_build(rigmat_model *m, char *msg, size_t len)
{
    rigmat_diags d;
    rigmat_status st;

    rigmat_diags_init(&d);
    st = rigmat_layout_build(m, &d);
    if (msg != NULL && len > 0) {
        msg[0] = '\0';
        if (d.count > 0)
            snprintf(msg, len, "%s%s%s", d.items[0].message, d.items[0].hint ? " | hint: " : "",
                    d.items[0].hint ? d.items[0].hint : "");
    }
    rigmat_diags_release(&d);
    return st;
}

double tm_fd_error(const rigmat_model *m)
{
    const rigmat_layout *L = &m->layout;
    const size_t nx = L->nx, nu = L->nu, ny = L->ny;
    rigmat_system *s = NULL;
    rigmat_lti *lti = NULL;
    rigmat_options opt = rigmat_options_default();
    double *x, *u, *fp, *fm, *yp, *ym, worst = 0.0;
    size_t j, k;

    ck_assert_int_eq(rigmat_linearize(m, &opt, &lti, NULL, NULL), RIGMAT_OK);
    ck_assert_int_eq(rigmat_system_alloc(m, &s, NULL), RIGMAT_OK);
    x = calloc(nx + 1, sizeof *x);
    u = calloc(nu + 1, sizeof *u);
    fp = calloc(nx + 1, sizeof *fp);
    fm = calloc(nx + 1, sizeof *fm);
    yp = calloc(ny + 1, sizeof *yp);
    ym = calloc(ny + 1, sizeof *ym);
    for (k = 0; k < nx; k++)
        x[k] = gsl_vector_get(lti->x0, k);
    for (k = 0; k < nu; k++)
        u[k] = gsl_vector_get(lti->u0, k);
    for (j = 0; j < nx + nu; j++) {
        double *z = j < nx ? &x[j] : &u[j - nx];
        const double z0 = *z, h = 1e-6 * (1.0 + fabs(z0));
        *z = z0 + h;
        ck_assert_int_eq(rigmat_system_eval(s, x, u, fp, yp, NULL), RIGMAT_OK);
        *z = z0 - h;
        ck_assert_int_eq(rigmat_system_eval(s, x, u, fm, ym, NULL), RIGMAT_OK);
        *z = z0;
        for (k = 0; k < nx; k++) {
            const double ex = j < nx ? gsl_matrix_get(lti->A, k, j) :
                                       gsl_matrix_get(lti->B, k, j - nx);
            const double e = fabs((fp[k] - fm[k]) / (2 * h) - ex) / (1.0 + fabs(ex));
            worst = e > worst ? e : worst;
        }
        for (k = 0; k < ny; k++) {
            const double ex = j < nx ? gsl_matrix_get(lti->C, k, j) :
                                       gsl_matrix_get(lti->D, k, j - nx);
            const double e = fabs((yp[k] - ym[k]) / (2 * h) - ex) / (1.0 + fabs(ex));
            worst = e > worst ? e : worst;
        }
    }
    free(x); free(u); free(fp); free(fm); free(yp); free(ym);
    rigmat_system_free(s);
    rigmat_lti_free(lti);
    return worst;
}

rigmat_model *tm_balancer(double comx_m, int drive, int neglect_inductance)
{
    rigmat_model *m = tm_new("balancer");
    const double r = 0.061;
    const size_t wheel = tm_body(m, "wheel", 0.31, 0.5 * 0.31 * r * r, 0, 0);
    const size_t chassis = tm_body(m, "chassis", 4.2, 0.061, comx_m, 0.17);
    rigmat_joint *j;
    rigmat_link *l;
    rigmat_motor *mo;
    rigmat_sensor *s;

    j = tm_joint(m, "travel", RIGMAT_JOINT_ROLLING, 0, wheel);
    j->radius_m = r;
    j = tm_joint(m, "tilt", RIGMAT_JOINT_HINGE, wheel, chassis);
    j->reference_world = 1;
    l = tm_damper(m, "axle_drag", RIGMAT_ATTACH_ACROSS);
    l->joint = 1;
    l->coefficient = 0.004;
    mo = tm_motor(m, "drive");
    mo->stator = chassis;
    mo->rotor = wheel;
    mo->count = 2;
    mo->polarity = -1;
    mo->drive = (rigmat_motor_drive)drive;
    mo->supply_v = 22.2;
    mo->resistance_ohm = 2.1;
    mo->inductance_h = 1.8e-3;
    mo->inductance_neglected = neglect_inductance;
    mo->torque_constant_nm_a = 0.021;
    mo->back_emf_v_s_rad = 0.021;
    mo->rotor_inertia_kgm2 = 3.3e-6;
    mo->friction_nm_s_rad = 1.1e-5;
    mo->gear_ratio = 27;
    mo->efficiency = 0.8;
    s = tm_sensor(m, "gyro", RIGMAT_SENSE_RATE);
    s->body = chassis;
    s = tm_sensor(m, "accel", RIGMAT_SENSE_SPECIFIC_FORCE);
    s->body = chassis;
    s->at_m[1] = 0.25;
    s->axis[0] = 1;
    s = tm_sensor(m, "enc", RIGMAT_SENSE_MOTOR_ANGLE);
    s->motor = 0;
    s->counts_per_rev = 48;
    s->unit_counts = 1;
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    return m;
}

/* Eigenvalues of the lti's A, sorted by real then imaginary part. */
static void eigs(const gsl_matrix *A, double *re, double *im)
{
    const size_t n = A->size1;
    gsl_matrix *W = gsl_matrix_alloc(n, n);
    gsl_vector_complex *ev = gsl_vector_complex_alloc(n);
    gsl_eigen_nonsymm_workspace *w = gsl_eigen_nonsymm_alloc(n);
    size_t i, j;

    gsl_matrix_memcpy(W, A);
    ck_assert_int_eq(gsl_eigen_nonsymm(W, ev, w), 0);
    for (i = 0; i < n; i++) {
        re[i] = GSL_REAL(gsl_vector_complex_get(ev, i));
        im[i] = GSL_IMAG(gsl_vector_complex_get(ev, i));
    }
    for (i = 0; i < n; i++)
        for (j = i + 1; j < n; j++)
            if (re[j] < re[i] || (re[j] == re[i] && im[j] < im[i])) {
                double t = re[i]; re[i] = re[j]; re[j] = t;
                t = im[i]; im[i] = im[j]; im[j] = t;
            }
    gsl_eigen_nonsymm_free(w);
    gsl_vector_complex_free(ev);
    gsl_matrix_free(W);
}

static rigmat_lti *lin(const rigmat_model *m)
{
    rigmat_options opt = rigmat_options_default();
    rigmat_lti *lti = NULL;
    rigmat_error e;
    memset(&e, 0, sizeof e);
    ck_assert_msg(rigmat_linearize(m, &opt, &lti, NULL, &e) == RIGMAT_OK, "%s", e.message);
    return lti;
}

/* ------------------------------------------------------------ tests */

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
    lti = lin(m);
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
    a = lin(hang);
    b = lin(up);
    eigs(a->A, re, im);
    ck_assert(fabs(re[0]) < 1e-14 && fabs(re[1]) < 1e-14);
    ck_assert_rel(im[1], w, 1e-13);
    ck_assert_rel(im[0], -w, 1e-13);
    eigs(b->A, re, im);
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
    lti = lin(m);
    eigs(lti->A, re, im);
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
 * elimination with partial pivoting in complex arithmetic. */
static double complex tf(const rigmat_lti *l, size_t out, size_t in, double complex s)
{
    const size_t n = l->nx;
    double complex *M = calloc(n * (n + 1), sizeof *M), g;
    size_t i, j, k;

    for (i = 0; i < n; i++) {
        for (j = 0; j < n; j++)
            M[i * (n + 1) + j] = (i == j ? s : 0) - gsl_matrix_get(l->A, i, j);
        M[i * (n + 1) + n] = gsl_matrix_get(l->B, i, in);
    }
    for (k = 0; k < n; k++) {
        size_t p = k;
        for (i = k + 1; i < n; i++)
            if (cabs(M[i * (n + 1) + k]) > cabs(M[p * (n + 1) + k]))
                p = i;
        for (j = 0; j <= n; j++) {
            double complex t = M[k * (n + 1) + j];
            M[k * (n + 1) + j] = M[p * (n + 1) + j];
            M[p * (n + 1) + j] = t;
        }
        for (i = k + 1; i < n; i++) {
            const double complex f = M[i * (n + 1) + k] / M[k * (n + 1) + k];
            for (j = k; j <= n; j++)
                M[i * (n + 1) + j] -= f * M[k * (n + 1) + j];
        }
    }
    for (k = n; k-- > 0;) {
        double complex v = M[k * (n + 1) + n];
        for (j = k + 1; j < n; j++)
            v -= M[k * (n + 1) + j] * M[j * (n + 1) + n];
        M[k * (n + 1) + n] = v / M[k * (n + 1) + k];
    }
    g = gsl_matrix_get(l->D, out, in);
    for (j = 0; j < n; j++)
        g += gsl_matrix_get(l->C, out, j) * M[j * (n + 1) + n];
    free(M);
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
    lti = lin(m);
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
