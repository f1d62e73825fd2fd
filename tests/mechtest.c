/* mechtest.c - the hand-built model helpers and the linearization,
 * eigenvalue and transfer-function helpers shared by the mechanics,
 * linearize and trim suites (declared in mechtest.h). */
#include "testutil.h"
#include "mechtest.h"

#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_math.h>
#include <gsl/gsl_eigen.h>

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
    if (st == RIGMAT_OK)
        st = rigmat_model_check_equations(m, &d);
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
void tm_eigs(const gsl_matrix *A, double *re, double *im)
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

rigmat_lti *tm_lin(const rigmat_model *m, rigmat_diags *w)
{
    rigmat_options opt = rigmat_options_default();
    rigmat_lti *lti = NULL;
    rigmat_error e;
    memset(&e, 0, sizeof e);
    ck_assert_msg(rigmat_linearize(m, &opt, &lti, w, &e) == RIGMAT_OK, "%s", e.message);
    return lti;
}

double complex tm_tf(const gsl_matrix *A, const double *b, const double *c, double d,
        double complex s)
{
    const size_t n = A->size1;
    double complex *M = calloc(n * (n + 1), sizeof *M), g = d;
    size_t i, j, k;

    for (i = 0; i < n; i++) {
        for (j = 0; j < n; j++)
            M[i * (n + 1) + j] = (i == j ? s : 0) - gsl_matrix_get(A, i, j);
        M[i * (n + 1) + n] = b[i];
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
    for (j = 0; j < n; j++)
        g += c[j] * M[j * (n + 1) + n];
    free(M);
    return g;
}
