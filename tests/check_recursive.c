/* check_recursive.c - the O(N) articulated-body recursion (src/mech/
 * recursive.c) against the mass-matrix method (src/mech/mechanics.c), the
 * reference: f, h and the exact Jacobians agree to 1e-12 of each array's
 * largest entry on every example and on random trees, at the operating
 * point and at a random state with every rate non-zero (so that the
 * velocity-product terms count). */
#include "testutil.h"
#include "mechtest.h"
#include "mechanics.h"
#include "recursive.h"

#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static const double agree_tol = 1e-12;

static const char *const examples[] = { "balancer", "ball-beam", "cart", "cartpole-rack",
    "gantry", "pendulum-motor", "quarter-car", "torsion" };

/* a reproducible uniform number in [lo, hi) (a 64-bit LCG, common practice:
 * D. E. Knuth's MMIX constants) */
static double uni(unsigned long long *st, double lo, double hi)
{
    *st = *st * 6364136223846793005ULL + 1442695040888963407ULL;
    return lo + (hi - lo) * (double)(*st >> 11) / 9007199254740992.0;
}

/* max |a - b| over k entries, relative to max(1e-300, max |a|) */
static double rel_diff(const double *a, const double *b, size_t k)
{
    double mx = 1e-300, d = 0.0;
    size_t i;
    for (i = 0; i < k; i++) {
        if (fabs(a[i]) > mx)
            mx = fabs(a[i]);
        if (fabs(a[i] - b[i]) > d)
            d = fabs(a[i] - b[i]);
    }
    return d / mx;
}

/* f, y and A, B, C, D of both methods at (x, u); returns the worst
 * relative difference and names the array in *what */
static double compare_at(rigmat_mech *mm, rigmat_mech *rec, const double *x, const double *u,
        const char **what)
{
    const rigmat_layout *L = rigmat_mech_canonical(mm);
    const size_t nx = L->nx, nu = L->nu, ny = L->ny;
    const size_t sz[6] = { nx, ny, nx * nx, nx * nu, ny * nx, ny * nu };
    static const char *const names[6] = { "f", "y", "A", "B", "C", "D" };
    double *p[2][6], worst = 0.0;
    rigmat_error e;
    size_t k, w;

    for (w = 0; w < 2; w++)
        for (k = 0; k < 6; k++) {
            p[w][k] = calloc(sz[k] ? sz[k] : 1, sizeof(double));
            ck_assert_ptr_nonnull(p[w][k]);
        }
    for (w = 0; w < 2; w++) {
        memset(&e, 0, sizeof e);
        ck_assert_msg(rigmat_mech_jacobians(w ? rec : mm, x, u, p[w][2], p[w][3], p[w][4],
                              p[w][5], p[w][0], p[w][1], &e) == RIGMAT_OK,
                "%s: %s", w ? "recursive" : "mass matrix", e.message);
    }
    for (k = 0; k < 6; k++) {
        const double d = sz[k] ? rel_diff(p[0][k], p[1][k], sz[k]) : 0.0;
        if (d > worst) {
            worst = d;
            *what = names[k];
        }
    }
    for (w = 0; w < 2; w++)
        for (k = 0; k < 6; k++)
            free(p[w][k]);
    return worst;
}

/* Both methods on model m: at its operating point and at a random state
 * and input near it. */
static void compare_model(const rigmat_model *m, const char *label, unsigned long long seed)
{
    rigmat_mech *mm = NULL, *rec = NULL;
    const rigmat_layout *L;
    rigmat_error e;
    double *x, *u, d;
    const char *what = "";
    size_t k;

    memset(&e, 0, sizeof e);
    ck_assert_msg(rigmat_mech_alloc(m, &mm, &e) == RIGMAT_OK, "%s: %s", label, e.message);
    ck_assert_msg(rigmat_mech_alloc(m, &rec, &e) == RIGMAT_OK, "%s: %s", label, e.message);
    ck_assert_int_eq(rigmat_mech_set_path(mm, RIGMAT_MECH_MASS_MATRIX, &e), RIGMAT_OK);
    ck_assert_msg(rigmat_mech_set_path(rec, RIGMAT_MECH_RECURSIVE, &e) == RIGMAT_OK, "%s: %s",
            label, e.message);
    ck_assert_int_eq(rigmat_mech_get_path(rec), RIGMAT_MECH_RECURSIVE);
    L = rigmat_mech_canonical(mm);
    x = calloc(L->nx + 1, sizeof *x);
    u = calloc(L->nu + 1, sizeof *u);
    ck_assert_ptr_nonnull(x);
    ck_assert_ptr_nonnull(u);
    ck_assert_msg(rigmat_mech_operating_point(mm, x, u, &e) == RIGMAT_OK, "%s: %s", label,
            e.message);
    d = compare_at(mm, rec, x, u, &what);
    ck_assert_msg(d <= agree_tol, "%s at the operating point: %s differs by %g", label, what, d);
    for (k = 0; k < L->nx; k++)
        x[k] += uni(&seed, -0.4, 0.4);
    for (k = 0; k < L->nu; k++)
        u[k] += uni(&seed, -0.5, 0.5);
    d = compare_at(mm, rec, x, u, &what);
    ck_assert_msg(d <= agree_tol, "%s at a random state: %s differs by %g", label, what, d);
    free(x);
    free(u);
    rigmat_mech_free(mm);
    rigmat_mech_free(rec);
}

/* The recursion does not take a rotor's inertia (recursive.h): such an
 * example is compared with its rotor and load inertias set to zero, after
 * checking that the recursion refuses it as it stands. */
START_TEST(every_example_agrees_with_the_mass_matrix_method)
{
    char path[128];
    rigmat_model *m = NULL;
    rigmat_diags d;
    rigmat_options opt = rigmat_options_default();
    const char *why = NULL;
    size_t k;

    snprintf(path, sizeof path, "../examples/%s.yaml", examples[_i]);
    rigmat_diags_init(&d);
    ck_assert_msg(rigmat_model_load(path, NULL, 0, &opt, &m, &d) == RIGMAT_OK, "%s: %s", path,
            d.count ? d.items[0].message : "");
    rigmat_diags_release(&d);
    if (!rigmat_rec_supported(m, &why)) {
        rigmat_mech *s = NULL;
        rigmat_error e;
        memset(&e, 0, sizeof e);
        ck_assert_ptr_nonnull(strstr(why, "inertia"));
        ck_assert_int_eq(rigmat_mech_alloc(m, &s, &e), RIGMAT_OK);
        ck_assert_int_eq(rigmat_mech_set_path(s, RIGMAT_MECH_RECURSIVE, &e), RIGMAT_EUSAGE);
        ck_assert_int_eq(rigmat_mech_get_path(s), RIGMAT_MECH_MASS_MATRIX);
        rigmat_mech_free(s);
        for (k = 0; k < m->nmotors; k++)
            m->motors[k].rotor_inertia_kgm2 = m->motors[k].load_inertia_kgm2 = 0.0;
    }
    compare_model(m, path, 0x5eedULL + (unsigned long long)_i);
    rigmat_model_free(m);
}
END_TEST

/* A random tree of nb - 1 bodies: random parents, joint types, places,
 * masses, springs, dampers, forces, motors without rotor inertia, one
 * acceleration-driven joint and sensors of the kinds the recursion reads. */
static rigmat_model *random_tree(unsigned long long *st, size_t nb)
{
    rigmat_model *m = tm_new("random tree");
    char name[32];
    size_t b, k, jh = RIGMAT_NONE, js = RIGMAT_NONE;

    for (b = 1; b < nb; b++) {
        const size_t parent = (size_t)uni(st, 0.0, (double)b);
        const double pick = uni(st, 0.0, 1.0);
        rigmat_joint *j;
        snprintf(name, sizeof name, "b%zu", b);
        (void)tm_body(m, name, uni(st, 0.2, 2.0), uni(st, 0.001, 0.1), uni(st, -0.2, 0.2),
                uni(st, -0.2, 0.2));
        snprintf(name, sizeof name, "j%zu", b);
        j = tm_joint(m, name,
                pick < 0.4 ? RIGMAT_JOINT_HINGE : pick < 0.7 ? RIGMAT_JOINT_SLIDER :
                pick < 0.9 ? RIGMAT_JOINT_ROLLING : RIGMAT_JOINT_FIXED, parent, b);
        j->at_m[0] = uni(st, -0.5, 0.5);
        j->at_m[1] = uni(st, -0.5, 0.5);
        j->angle_rad = uni(st, -1.0, 1.0);
        if (j->type == RIGMAT_JOINT_HINGE) {
            j->reference_world = uni(st, 0.0, 1.0) < 0.3;
            jh = b - 1;
        } else if (j->type == RIGMAT_JOINT_SLIDER) {
            const double a = uni(st, -3.2, 3.2);
            j->axis[0] = cos(a);
            j->axis[1] = sin(a);
            js = b - 1;
        } else if (j->type == RIGMAT_JOINT_ROLLING) {
            j->radius_m = uni(st, 0.03, 0.2);
        }
    }
    /* one acceleration-driven joint (not the last one, which stays free) */
    for (k = 0; k + 1 < m->njoints; k++)
        if (m->joints[k].type != RIGMAT_JOINT_FIXED && uni(st, 0.0, 1.0) < 0.3) {
            m->joints[k].driven = RIGMAT_DRIVEN_ACCELERATION;
            break;
        }
    for (k = 0; k < m->njoints; k++) {
        rigmat_link *l;
        if (m->joints[k].type == RIGMAT_JOINT_FIXED)
            continue;
        snprintf(name, sizeof name, "k%zu", k);
        l = tm_spring(m, name, RIGMAT_ATTACH_ACROSS);
        l->joint = k;
        l->stiffness = uni(st, 1.0, 50.0);
        l->rest = uni(st, -0.2, 0.2);
        snprintf(name, sizeof name, "c%zu", k);
        l = tm_damper(m, name, RIGMAT_ATTACH_ACROSS);
        l->joint = k;
        l->coefficient = uni(st, 0.01, 1.0);
    }
    for (k = 0; k < 2; k++) {
        rigmat_link *l = tm_spring(m, k ? "between" : "points",
                k ? RIGMAT_ATTACH_BETWEEN : RIGMAT_ATTACH_POINTS);
        l->body_a = (size_t)uni(st, 0.0, (double)nb - 1.0);
        l->body_b = l->body_a + 1;
        l->point_a_m[0] = uni(st, -0.3, 0.3);
        l->point_b_m[1] = uni(st, 0.5, 0.9);
        l->stiffness = uni(st, 1.0, 30.0);
        l->rest = k ? 0.1 : 0.3;
        l = tm_damper(m, k ? "dbetween" : "dpoints",
                k ? RIGMAT_ATTACH_BETWEEN : RIGMAT_ATTACH_POINTS);
        l->body_a = 0;
        l->body_b = nb - 1;
        l->point_a_m[0] = 1.7;
        l->point_b_m[0] = uni(st, -0.3, 0.3);
        l->coefficient = uni(st, 0.05, 0.5);
    }
    {
        rigmat_force *f = tm_force(m, "push", RIGMAT_FORCE_POINT);
        f->body = nb - 1;
        f->at_m[0] = 0.3;
        f->direction[1] = 1.0;
        f->frame_body = 1;
        f = tm_force(m, "wind", RIGMAT_FORCE_POINT);
        f->body = 1;
        f->direction[0] = 1.0;
        f->role = RIGMAT_ROLE_DISTURBANCE;
        f = tm_force(m, "twist", RIGMAT_FORCE_TORQUE);
        f->body = nb - 1;
        f->reacting = 1;
        f = tm_force(m, "nudge", RIGMAT_FORCE_ACROSS);
        f->joint = m->njoints - 1;
    }
    {
        /* a motor between two bodies, and one across a hinge or a slider */
        rigmat_motor *mo = tm_motor(m, "pair");
        mo->stator = 1;
        mo->rotor = nb - 1;
        mo->resistance_ohm = 2.0;
        mo->inductance_h = 1e-3;
        mo->torque_constant_nm_a = mo->back_emf_v_s_rad = 0.03;
        mo->friction_nm_s_rad = 1e-4;
        mo->gear_ratio = 9.0;
        mo->efficiency = 0.7;
        mo->polarity = -1;
        mo->drive = RIGMAT_DRIVE_DUTY;
        mo->supply_v = 12.0;
        mo->inductance_neglected = uni(st, 0.0, 1.0) < 0.5;
        if (jh != RIGMAT_NONE || js != RIGMAT_NONE) {
            mo = tm_motor(m, "across");
            mo->joint = js != RIGMAT_NONE && (jh == RIGMAT_NONE || uni(st, 0.0, 1.0) < 0.5) ?
                    js : jh;
            mo->mounted_on_child = uni(st, 0.0, 1.0) < 0.5;
            mo->radius_m = 0.02;
            mo->resistance_ohm = 1.5;
            mo->inductance_h = 5e-4;
            mo->torque_constant_nm_a = mo->back_emf_v_s_rad = 0.05;
            mo->gear_ratio = 4.0;
            mo->drive = uni(st, 0.0, 1.0) < 0.5 ? RIGMAT_DRIVE_VOLTAGE : RIGMAT_DRIVE_CURRENT;
        }
    }
    {
        rigmat_sensor *se = tm_sensor(m, "acc", RIGMAT_SENSE_SPECIFIC_FORCE);
        se->body = nb - 1;
        se->at_m[0] = 0.2;
        se->at_m[1] = -0.1;
        se->axis[0] = 0.6;
        se->axis[1] = 0.8;
        se = tm_sensor(m, "acc2", RIGMAT_SENSE_SPECIFIC_FORCE);
        se->body = 1;
        se->axis[1] = 1.0;
        se = tm_sensor(m, "rate", RIGMAT_SENSE_RATE);
        se->body = nb - 1;
        se = tm_sensor(m, "rel", RIGMAT_SENSE_RELATIVE_RATE);
        se->body = 1;
        se->body_b = nb - 1;
        se = tm_sensor(m, "pv", RIGMAT_SENSE_POINT_VELOCITY);
        se->body = nb - 1;
        se->at_m[0] = 0.1;
        se->axis[1] = 1.0;
        se = tm_sensor(m, "enc", RIGMAT_SENSE_MOTOR_ANGLE);
        se->motor = 0;
        se = tm_sensor(m, "amps", RIGMAT_SENSE_CURRENT);
        se->motor = 0;
    }
    return m;
}

START_TEST(random_trees_agree_with_the_mass_matrix_method)
{
    unsigned long long st = 0x1234abcdULL + 977ULL * (unsigned long long)_i;
    const size_t nb = 3 + (size_t)_i % 13;
    rigmat_model *m = random_tree(&st, nb);
    char msg[512], label[64];

    ck_assert_msg(tm_build(m, msg, sizeof msg) == RIGMAT_OK, "tree %d: %s", _i, msg);
    snprintf(label, sizeof label, "random tree %d (%zu bodies)", _i, nb);
    compare_model(m, label, st);
    tm_free(m);
}
END_TEST

/* A rotor's inertia or a drive-force sensor keeps the mass matrix, and the
 * default choice takes the recursion from RIGMAT_MECH_RECURSIVE_MIN
 * coordinates on. */
START_TEST(the_path_is_chosen_by_size_and_scope)
{
    unsigned long long st = 99;
    rigmat_model *m = random_tree(&st, 15);
    rigmat_mech *s = NULL;
    rigmat_error e;
    size_t j, n = 0;

    memset(&e, 0, sizeof e);
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    for (j = 0; j < m->njoints; j++)
        n += m->joints[j].type != RIGMAT_JOINT_FIXED;
    ck_assert_int_eq(rigmat_mech_alloc(m, &s, &e), RIGMAT_OK);
    ck_assert_int_eq(rigmat_mech_get_path(s),
            n >= RIGMAT_MECH_RECURSIVE_MIN ? RIGMAT_MECH_RECURSIVE : RIGMAT_MECH_MASS_MATRIX);
    rigmat_mech_free(s);
    m->motors[0].rotor_inertia_kgm2 = 1e-5;
    ck_assert_int_eq(rigmat_mech_alloc(m, &s, &e), RIGMAT_OK);
    ck_assert_int_eq(rigmat_mech_get_path(s), RIGMAT_MECH_MASS_MATRIX);
    ck_assert_int_eq(rigmat_mech_set_path(s, RIGMAT_MECH_RECURSIVE, &e), RIGMAT_EUSAGE);
    ck_assert_ptr_nonnull(strstr(e.message, "rotor"));
    rigmat_mech_free(s);
    tm_free(m);
}
END_TEST

/* The recursion's pivot check names the joint without inertia, as the
 * mass-matrix method does (check_mechanics.c). */
START_TEST(massless_slider_is_singular_in_the_recursion_too)
{
    rigmat_model *m = tm_new("loose");
    const size_t a = tm_body(m, "sled", 1.0, 0.01, 0, 0);
    const size_t b = tm_body(m, "puck", 0.0, 0.0, 0, 0);
    rigmat_mech *s = NULL;
    rigmat_error e;
    double x[4] = { 0, 0, 0, 0 }, f[4];

    (void)tm_joint(m, "rail", RIGMAT_JOINT_SLIDER, 0, a);
    (void)tm_joint(m, "groove", RIGMAT_JOINT_SLIDER, a, b);
    ck_assert_int_eq(tm_build(m, NULL, 0), RIGMAT_OK);
    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_mech_alloc(m, &s, &e), RIGMAT_OK);
    ck_assert_int_eq(rigmat_mech_set_path(s, RIGMAT_MECH_RECURSIVE, &e), RIGMAT_OK);
    ck_assert_int_eq(rigmat_mech_eval_real(s, x, NULL, f, NULL, &e), RIGMAT_ENUMERIC);
    ck_assert_ptr_nonnull(strstr(e.message, "singular"));
    ck_assert_ptr_nonnull(strstr(e.message, "'groove'"));
    rigmat_mech_free(s);
    tm_free(m);
}
END_TEST

Suite *recursive_suite(void);
Suite *recursive_suite(void)
{
    Suite *s = suite_create("recursive");
    TCase *tc = tcase_create("core");

    tcase_add_loop_test(tc, every_example_agrees_with_the_mass_matrix_method, 0,
            (int)(sizeof examples / sizeof examples[0]));
    tcase_add_loop_test(tc, random_trees_agree_with_the_mass_matrix_method, 0, 60);
    tcase_add_test(tc, the_path_is_chosen_by_size_and_scope);
    tcase_add_test(tc, massless_slider_is_singular_in_the_recursion_too);
    suite_add_tcase(s, tc);
    return s;
}
