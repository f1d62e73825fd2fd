/* check_sweep.c - the sweep library (src/study/sweep.h): axis parsing,
 * the grid, the point cap, failed points, thread independence, and each
 * point against the same model loaded and linearized on its own. */
#include "testutil.h"
#include "sweep.h"

#include <check.h>
#include <dirent.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_math.h>

static const char *const demo = "../examples/balancer.yaml";

static rigmat_model *load_demo(const char *const *sets, size_t nsets)
{
    const rigmat_options opt = rigmat_options_default();
    rigmat_model *m = NULL;
    rigmat_diags d;

    rigmat_diags_init(&d);
    ck_assert_int_eq(rigmat_model_load(demo, sets, nsets, &opt, &m, &d), RIGMAT_OK);
    ck_assert_int_eq(rigmat_model_check_equations(m, &d), RIGMAT_OK);
    rigmat_diags_release(&d);
    return m;
}

START_TEST(a_coordinate_name_becomes_its_operating_point_path_with_si_values)
{
    rigmat_model *m = load_demo(NULL, 0);
    rigmat_sweep_axis a;
    rigmat_error e;

    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_sweep_axis_parse("tilt=-10deg:10deg:5", m, &a, &e), RIGMAT_OK);
    ck_assert_str_eq(a.path, "operating_point.coordinates.tilt");
    ck_assert_str_eq(a.unit, "deg");
    ck_assert_str_eq(a.si_unit, "rad");
    ck_assert_uint_eq(a.count, 5);
    /* 1 deg = pi/180 rad (the definition of the degree) */
    ck_assert(fabs(a.si[0] + 10 * M_PI / 180) <= 1e-16);
    ck_assert(fabs(a.si[1] + 5 * M_PI / 180) <= 1e-16);
    ck_assert(a.si[2] == 0.0);
    ck_assert(fabs(a.si[4] - 10 * M_PI / 180) <= 1e-16);
    ck_assert_str_eq(a.text[1], "operating_point.coordinates.tilt=-5 deg");
    ck_assert_str_eq(a.text[4], "operating_point.coordinates.tilt=10 deg");
    rigmat_sweep_axis_release(&a);
    ck_assert_int_eq(rigmat_sweep_axis_parse("drive=0:1:3", m, &a, &e), RIGMAT_OK);
    ck_assert_str_eq(a.path, "operating_point.inputs.drive");
    ck_assert_str_eq(a.text[1], "operating_point.inputs.drive=0.5");
    rigmat_sweep_axis_release(&a);
    ck_assert_int_eq(rigmat_sweep_axis_parse("bodies.chassis.mass=2 kg:4:3", m, &a, &e),
            RIGMAT_OK);
    ck_assert_str_eq(a.unit, "kg");
    ck_assert(a.si[1] == 3.0);
    rigmat_sweep_axis_release(&a);
    rigmat_model_free(m);
}
END_TEST

START_TEST(malformed_axes_are_usage_errors)
{
    static const char *const bad[] = {
        "tilt", "tilt=1:2", "tilt=1:2:3:4", "tilt=1deg:2rad:3", "tilt=a:b:3", "tilt=0:1:0",
        "tilt=0:1:x", "tilt=0:1:1", "nosuch=0:1:2", "=0:1:2", "tilt=0:1:-2", "tilt=0:1:1000001"
    };
    rigmat_model *m = load_demo(NULL, 0);
    rigmat_sweep_axis a;
    rigmat_error e;
    size_t i;

    for (i = 0; i < sizeof bad / sizeof bad[0]; i++) {
        memset(&e, 0, sizeof e);
        ck_assert_msg(rigmat_sweep_axis_parse(bad[i], m, &a, &e) == RIGMAT_EUSAGE, "%s", bad[i]);
        ck_assert(e.message[0] != '\0');
        rigmat_sweep_axis_release(&a);
    }
    rigmat_model_free(m);
}
END_TEST

START_TEST(the_point_cap_refuses_a_grid_beyond_it)
{
    rigmat_sweep_axis ax[2];

    memset(ax, 0, sizeof ax);
    ax[0].count = 1000;
    ax[1].count = 1000;
    ck_assert_uint_eq(rigmat_sweep_points(ax, 2), 1000000);
    ax[1].count = 1001;
    ck_assert_uint_eq(rigmat_sweep_points(ax, 2), 0);
    ax[0].count = (size_t)-1;
    ck_assert_uint_eq(rigmat_sweep_points(ax, 2), 0);
}
END_TEST

/* Each point equals the model loaded with its override and linearized on
 * its own; duty beyond 1 fails; 1 and 3 threads give the same bytes. */
START_TEST(points_match_single_runs_and_do_not_depend_on_threads)
{
    const rigmat_options opt = rigmat_options_default();
    rigmat_model *m = load_demo(NULL, 0);
    rigmat_sweep_axis ax[2];
    rigmat_sweep_opts o;
    rigmat_sweep s1, s3;
    rigmat_error e;
    size_t p;

    memset(&e, 0, sizeof e);
    memset(&o, 0, sizeof o);
    ck_assert_int_eq(rigmat_sweep_axis_parse("drive=-1.5:1.5:4", m, &ax[0], &e), RIGMAT_OK);
    ck_assert_int_eq(rigmat_sweep_axis_parse("tilt=-2deg:2deg:3", m, &ax[1], &e), RIGMAT_OK);
    o.file = demo;
    o.opt = &opt;
    o.discretize = 1;
    o.dopts = rigmat_discretize_opts_default();
    o.dopts.period_s = 0.005;
    o.threads = 1;
    ck_assert_int_eq(rigmat_sweep_run(m, ax, 2, &o, &s1, &e), RIGMAT_OK);
    o.threads = 3;
    ck_assert_int_eq(rigmat_sweep_run(m, ax, 2, &o, &s3, &e), RIGMAT_OK);
    ck_assert_uint_eq(s1.npoints, 12);
    ck_assert_uint_eq(s1.nfailed, 6);
    ck_assert(memcmp(s1.data, s3.data, s1.npoints * s1.stride * sizeof *s1.data) == 0);
    ck_assert(memcmp(s1.ok, s3.ok, s1.npoints) == 0);
    for (p = 0; p < s1.npoints; p++) {
        const size_t id = rigmat_sweep_index(&s1, p, 0), it = rigmat_sweep_index(&s1, p, 1);
        ck_assert_uint_eq(p, id * 3 + it);
        ck_assert_int_eq(s1.ok[p], id == 1 || id == 2);
        if (!s1.ok[p]) {
            ck_assert(strstr(s1.reason[p], "outside its limit") != NULL);
            ck_assert(isnan(rigmat_sweep_block(&s1, p, RIGMAT_SB_A)[0]));
        } else {
            const char *sets[2];
            rigmat_model *mp;
            rigmat_lti *l = NULL;
            size_t i, j;
            sets[0] = ax[0].text[id];
            sets[1] = ax[1].text[it];
            mp = load_demo(sets, 2);
            ck_assert_int_eq(rigmat_linearize(mp, &opt, &l, NULL, &e), RIGMAT_OK);
            for (i = 0; i < s1.nx; i++)
                for (j = 0; j < s1.nx; j++)
                    ck_assert(rigmat_sweep_block(&s1, p, RIGMAT_SB_A)[i * s1.nx + j] ==
                              gsl_matrix_get(l->A, i, j));
            ck_assert(rigmat_sweep_block(&s1, p, RIGMAT_SB_U0)[0] ==
                      gsl_vector_get(l->u0, 0));
            rigmat_lti_free(l);
            rigmat_model_free(mp);
        }
    }
    rigmat_sweep_release(&s1);
    rigmat_sweep_release(&s3);
    rigmat_sweep_axis_release(&ax[0]);
    rigmat_sweep_axis_release(&ax[1]);
    rigmat_model_free(m);
}
END_TEST

/* Sweep one axis over file's model three times: by the fast path (when it
 * applies), by reloading the model at every point from the tree kept
 * after the parts are merged, and by reading the file again at every
 * point, on 2, 1 and 1 threads: every number, ok flag and reason must be
 * the same bytes.  Returns whether the fast path ran. */
static int fast_equals_reload(const char *file, const char *axis, double period_s,
        size_t want_failed)
{
    const rigmat_options opt = rigmat_options_default();
    rigmat_model *m = NULL;
    rigmat_sweep_axis ax;
    rigmat_sweep_opts o;
    rigmat_sweep sf, sr, sa;
    rigmat_diags d;
    rigmat_error e;
    int fast;

    rigmat_diags_init(&d);
    ck_assert_msg(rigmat_model_load(file, NULL, 0, &opt, &m, &d) == RIGMAT_OK, "%s", file);
    ck_assert_msg(rigmat_model_check_equations(m, &d) == RIGMAT_OK, "%s", file);
    rigmat_diags_release(&d);
    memset(&e, 0, sizeof e);
    ck_assert_msg(rigmat_sweep_axis_parse(axis, m, &ax, &e) == RIGMAT_OK, "%s: %s", file,
            e.message);
    memset(&o, 0, sizeof o);
    o.file = file;
    o.opt = &opt;
    o.discretize = period_s > 0;
    o.dopts = rigmat_discretize_opts_default();
    if (period_s > 0)
        o.dopts.period_s = period_s;
    o.threads = 2;
    ck_assert_int_eq(rigmat_sweep_run(m, &ax, 1, &o, &sf, &e), RIGMAT_OK);
    o.threads = 1;
    o.reload = 1;
    ck_assert_int_eq(rigmat_sweep_run(m, &ax, 1, &o, &sr, &e), RIGMAT_OK);
    ck_assert(!sr.fast);
    ck_assert_uint_eq(sf.npoints, sr.npoints);
    ck_assert_msg(sf.nfailed == want_failed, "%s %s: %zu failed (first: %s)", file, axis,
            sf.nfailed, sf.reason[0]);
    ck_assert_msg(memcmp(sf.data, sr.data, sf.npoints * sf.stride * sizeof *sf.data) == 0,
            "%s %s: the fast path's numbers differ from the reloads'", file, axis);
    ck_assert(memcmp(sf.ok, sr.ok, sf.npoints) == 0);
    ck_assert_msg(memcmp(sf.reason, sr.reason, sf.npoints * sizeof *sf.reason) == 0,
            "%s %s: reasons differ: '%s' vs '%s'", file, axis, sf.reason[0], sr.reason[0]);
    o.full_reload = 1;
    ck_assert_int_eq(rigmat_sweep_run(m, &ax, 1, &o, &sa, &e), RIGMAT_OK);
    ck_assert_msg(memcmp(sa.data, sr.data, sa.npoints * sa.stride * sizeof *sa.data) == 0 &&
                          memcmp(sa.ok, sr.ok, sa.npoints) == 0 &&
                          memcmp(sa.reason, sr.reason, sa.npoints * sizeof *sa.reason) == 0,
            "%s %s: loads from the kept tree differ from reading the file", file, axis);
    fast = sf.fast;
    rigmat_sweep_release(&sf);
    rigmat_sweep_release(&sr);
    rigmat_sweep_release(&sa);
    rigmat_sweep_axis_release(&ax);
    rigmat_model_free(m);
    return fast;
}

/* The fast path (an operating-point axis: each thread loads the model
 * once and rewrites the value) against reloading the model at every point,
 * on every example: a coordinate, a rate and an input axis, sampled and
 * not; a model with closures keeps the reload path. */
START_TEST(the_fast_path_equals_reloading_on_every_example)
{
    const rigmat_options opt = rigmat_options_default();
    DIR *dir = opendir("../examples");
    struct dirent *de;
    size_t nfiles = 0;

    ck_assert(dir != NULL);
    while ((de = readdir(dir)) != NULL) {
        const size_t len = strlen(de->d_name);
        char file[512], axis[256];
        rigmat_model *m = NULL;
        rigmat_diags d;
        size_t k, kc = RIGMAT_NONE, kr = RIGMAT_NONE;
        int closed;
        if (len < 6 || strcmp(de->d_name + len - 5, ".yaml") != 0)
            continue;
        snprintf(file, sizeof file, "../examples/%s", de->d_name);
        rigmat_diags_init(&d);
        ck_assert_int_eq(rigmat_model_load(file, NULL, 0, &opt, &m, &d), RIGMAT_OK);
        ck_assert_int_eq(rigmat_model_check_equations(m, &d), RIGMAT_OK);
        rigmat_diags_release(&d);
        closed = m->nclosures > 0;
        for (k = 0; k < m->layout.nx; k++) {
            if (m->layout.states[k].kind == RIGMAT_SIG_COORD && kc == RIGMAT_NONE)
                kc = k;
            if (m->layout.states[k].kind == RIGMAT_SIG_RATE && kr == RIGMAT_NONE)
                kr = k;
        }
        /* a coordinate, in SI (a bare number is read in the field's unit) */
        ck_assert(kc != RIGMAT_NONE);
        snprintf(axis, sizeof axis, "%s=-0.02:0.03:4", m->joints[m->layout.states[kc].index].name);
        ck_assert_msg(fast_equals_reload(file, axis, 0.005, 0) == !closed, "%s", file);
        /* a rate, as a --set path, sampled */
        if (kr != RIGMAT_NONE && !closed) {
            snprintf(axis, sizeof axis, "operating_point.rates.%s=-0.1:0.2:3",
                    m->joints[m->layout.states[kr].index].name);
            ck_assert_msg(fast_equals_reload(file, axis, 0.01, 0), "%s", file);
        }
        /* the first input, continuous only */
        if (m->layout.nu > 0) {
            snprintf(axis, sizeof axis, "%s=-0.01:0.01:3", m->layout.inputs[0].name);
            ck_assert_msg(fast_equals_reload(file, axis, 0, 0) == !closed, "%s", file);
        }
        /* a parameter (the first body's mass, +-10%, in kg): never the fast
         * path; the kept tree against reading the file */
        if (m->nbodies > 1 && m->bodies[1].mass_kg > 0) {
            snprintf(axis, sizeof axis, "bodies.%s.mass=%.17g:%.17g:3", m->bodies[1].name,
                    0.9 * m->bodies[1].mass_kg, 1.1 * m->bodies[1].mass_kg);
            ck_assert_msg(!fast_equals_reload(file, axis, 0.005, 0), "%s", file);
        }
        rigmat_model_free(m);
        nfiles++;
    }
    closedir(dir);
    ck_assert_uint_ge(nfiles, 10);
}
END_TEST

/* A point beyond an input's limit fails with the loader's own reason on
 * both paths; a trim at every point (solve: [drive]); a parameter axis
 * keeps the reload path. */
START_TEST(the_fast_path_fails_limits_trims_and_leaves_parameters_to_reloads)
{
    ck_assert(fast_equals_reload(demo, "drive=-1.5:1.5:4", 0.005, 2));
    ck_assert(fast_equals_reload(demo, "drive=-1.5:1.5:4", 0, 2));
    ck_assert(fast_equals_reload("../examples/pendulum-motor.yaml", "shoulder=10deg:40deg:4",
            0.005, 0));
    ck_assert(fast_equals_reload("../examples/quarter-car.yaml",
            "operating_point.inputs.road=-0.01:0.01:3", 0.002, 0));
    ck_assert(!fast_equals_reload(demo, "bodies.chassis.mass=3kg:5kg:3", 0.005, 0));
    /* a unit the field does not take: every point refused, by the loader */
    ck_assert(!fast_equals_reload(demo, "tilt=0kg:1kg:2", 0, 2));
}
END_TEST

Suite *sweep_suite(void);
Suite *sweep_suite(void)
{
    Suite *s = suite_create("sweep");
    TCase *tc = tcase_create("core");

    tcase_add_test(tc, a_coordinate_name_becomes_its_operating_point_path_with_si_values);
    tcase_add_test(tc, malformed_axes_are_usage_errors);
    tcase_add_test(tc, the_point_cap_refuses_a_grid_beyond_it);
    tcase_add_test(tc, points_match_single_runs_and_do_not_depend_on_threads);
    tcase_add_test(tc, the_fast_path_equals_reloading_on_every_example);
    tcase_add_test(tc, the_fast_path_fails_limits_trims_and_leaves_parameters_to_reloads);
    tcase_set_timeout(tc, 60);
    suite_add_tcase(s, tc);
    return s;
}
