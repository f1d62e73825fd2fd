/* check_sweep.c - the sweep library (src/study/sweep.h): axis parsing,
 * the grid, the point cap, failed points, thread independence, and each
 * point against the same model loaded and linearized on its own. */
#include "testutil.h"
#include "sweep.h"

#include <check.h>
#include <math.h>
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
            ck_assert(isnan(s1.data[p * s1.stride]));
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
                    ck_assert(s1.data[p * s1.stride + s1.off[RIGMAT_SB_A] + i * s1.nx + j] ==
                              gsl_matrix_get(l->A, i, j));
            ck_assert(s1.data[p * s1.stride + s1.off[RIGMAT_SB_U0]] ==
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

Suite *sweep_suite(void);
Suite *sweep_suite(void)
{
    Suite *s = suite_create("sweep");
    TCase *tc = tcase_create("core");

    tcase_add_test(tc, a_coordinate_name_becomes_its_operating_point_path_with_si_values);
    tcase_add_test(tc, malformed_axes_are_usage_errors);
    tcase_add_test(tc, the_point_cap_refuses_a_grid_beyond_it);
    tcase_add_test(tc, points_match_single_runs_and_do_not_depend_on_threads);
    suite_add_tcase(s, tc);
    return s;
}
