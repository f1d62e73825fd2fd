/* check_closures.c - closed kinematic loops (src/mech/closure.c): the
 * choice of independent coordinates, the assembly against closed-form
 * loop solutions, exact Jacobians through the Newton solve, and the
 * refusals (a loop that cannot close, a dead centre, a model used before
 * its loops are assembled).  The examples examples/fourbar.yaml and
 * examples/slider-crank.yaml, edited as text where a case needs it. */
#include "testutil.h"
#include "mechtest.h"
#include "closure.h"

#include <check.h>
#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>
#include <gsl/gsl_math.h>

/* the four-bar's links (examples/fourbar.yaml): crank, coupler, rocker, ground */
static const double fa = 0.08, fb = 0.28, fc = 0.20, fd = 0.30;

static char *read_text(const char *path)
{
    FILE *f = fopen(path, "r");
    char *buf;
    long n;

    ck_assert_ptr_nonnull(f);
    ck_assert_int_eq(fseek(f, 0, SEEK_END), 0);
    n = ftell(f);
    ck_assert_int_ge(n, 0);
    rewind(f);
    buf = calloc((size_t)n + 1, 1);
    ck_assert_ptr_nonnull(buf);
    ck_assert_uint_eq(fread(buf, 1, (size_t)n, f), (size_t)n);
    fclose(f);
    return buf;
}

/* The text of an example with `from` replaced by `to` (once; from must occur). */
static char *edited(const char *example, const char *from, const char *to)
{
    char *t = read_text(example), *at, *out;

    if (from == NULL)
        return t;
    at = strstr(t, from);
    ck_assert_msg(at != NULL, "'%s' not in %s", from, example);
    out = calloc(strlen(t) + strlen(to) + 1, 1);
    ck_assert_ptr_nonnull(out);
    memcpy(out, t, (size_t)(at - t));
    strcat(out, to);
    strcat(out, at + strlen(from));
    free(t);
    return out;
}

/* Load text (written to a temporary file) with sets; the status of load
 * and then rigmat_model_check_equations; the first diagnostic into msg. */
static rigmat_status load_closed(const char *text, const char *const *sets, size_t nsets,
        rigmat_model **out, char *msg, size_t len)
{
    char path[] = "/tmp/rigmat-closures-XXXXXX";
    rigmat_options opt = rigmat_options_default();
    rigmat_diags d;
    rigmat_status st;
    const int fdesc = mkstemp(path);
    FILE *f;

    ck_assert_int_ge(fdesc, 0);
    f = fdopen(fdesc, "w");
    ck_assert_ptr_nonnull(f);
    fputs(text, f);
    ck_assert_int_eq(fclose(f), 0);
    rigmat_diags_init(&d);
    *out = NULL;
    st = rigmat_model_load(path, sets, nsets, &opt, out, &d);
    if (st == RIGMAT_OK) {
        st = rigmat_model_check_equations(*out, &d);
        if (st != RIGMAT_OK) {
            rigmat_model_free(*out);
            *out = NULL;
        }
    }
    msg[0] = '\0';
    if (d.count > 0)
        snprintf(msg, len, "%s", d.items[0].message);
    rigmat_diags_release(&d);
    unlink(path);
    return st;
}

static size_t output_index(const rigmat_model *m, const char *name)
{
    size_t k;
    for (k = 0; k < m->layout.ny; k++)
        if (strcmp(m->layout.outputs[k].name, name) == 0)
            return k;
    ck_abort_msg("no output '%s'", name);
    return 0;
}

/* Freudenstein's equation of the four-bar (F. Freudenstein, 1955; R. L.
 * Norton, Design of Machinery, ch. 4): with K1 = d/a, K2 = d/c,
 * K3 = (a^2 - b^2 + c^2 + d^2) / (2 a c), every closed configuration has
 *     K1 cos th4 - K2 cos th2 + K3 - cos(th2 - th4) = 0. */
static double freudenstein(double th2, double th4)
{
    const double k1 = fd / fa, k2 = fd / fc, k3 = (fa * fa - fb * fb + fc * fc + fd * fd) /
            (2.0 * fa * fc);
    return k1 * cos(th4) - k2 * cos(th2) + k3 - cos(th2 - th4);
}

START_TEST(fourbar_named_independent_and_freudenstein)
{
    char *text = edited("../examples/fourbar.yaml", NULL, NULL), msg[256];
    rigmat_model *m = NULL;
    rigmat_lti *lti;
    size_t ky;
    double th2, th4, dF2, dF4;

    ck_assert_int_eq(load_closed(text, NULL, 0, &m, msg, sizeof msg), RIGMAT_OK);
    ck_assert_int_eq(m->independent_how, RIGMAT_INDEPENDENT_NAMED);
    ck_assert_int_eq(m->joints[rigmat_model_joint(m, "crank")].dependent, 0);
    ck_assert_int_eq(m->joints[rigmat_model_joint(m, "knee")].dependent, 1);
    ck_assert_int_eq(m->joints[rigmat_model_joint(m, "swing")].dependent, 1);
    ck_assert_uint_eq(m->layout.nx, 3); /* crank angle, rate, current */
    ck_assert_str_eq(m->layout.states[0].name, "crank.angle");
    ck_assert(m->closure_residual <= 1e-14);
    lti = tm_lin(m, NULL);
    ky = output_index(m, "rocker_angle");
    th2 = gsl_vector_get(lti->x0, 0);
    th4 = gsl_vector_get(lti->y0, ky);
    ck_assert_rel(th2, 60.0 * M_PI / 180.0, 1e-15);
    /* the assembled rocker angle closes Freudenstein's equation */
    ck_assert(fabs(freudenstein(th2, th4)) < 1e-13);
    /* and its derivative by the crank is the implicit one of that equation */
    dF2 = fd / fc * sin(th2) + sin(th2 - th4);
    dF4 = -fd / fa * sin(th4) - sin(th2 - th4);
    ck_assert_rel(gsl_matrix_get(lti->C, ky, 0), -dF2 / dF4, 1e-12);
    /* the open branch of the guesses (rocker about 93.5 deg, not -123 deg) */
    ck_assert(th4 > 1.5 && th4 < 1.7);
    rigmat_lti_free(lti);
    rigmat_model_free(m);
    free(text);
}
END_TEST

START_TEST(guesses_pick_the_branch)
{
    static const char *const crossed[] = { "operating_point.coordinates.knee=-110deg",
        "operating_point.coordinates.swing=-120deg", "springs.return.rest=-120deg" };
    char *text = edited("../examples/fourbar.yaml", NULL, NULL), msg[256];
    rigmat_model *m = NULL;
    rigmat_lti *lti;
    double th4;

    ck_assert_int_eq(load_closed(text, crossed, 3, &m, msg, sizeof msg), RIGMAT_OK);
    lti = tm_lin(m, NULL);
    th4 = gsl_vector_get(lti->y0, output_index(m, "rocker_angle"));
    ck_assert(fabs(freudenstein(gsl_vector_get(lti->x0, 0), th4)) < 1e-13);
    ck_assert(th4 < -2.0 && th4 > -2.3); /* the crossed branch, about -123 deg */
    rigmat_lti_free(lti);
    rigmat_model_free(m);
    free(text);
}
END_TEST

/* text with two replacements */
static char *edited2(const char *example, const char *f1, const char *t1, const char *f2,
        const char *t2)
{
    char *once = edited(example, f1, t1), *at, *out;

    at = strstr(once, f2);
    ck_assert_msg(at != NULL, "'%s' not in %s", f2, example);
    out = calloc(strlen(once) + strlen(t2) + 1, 1);
    ck_assert_ptr_nonnull(out);
    memcpy(out, once, (size_t)(at - once));
    strcat(out, t2);
    strcat(out, at + strlen(f2));
    free(once);
    return out;
}

START_TEST(operating_point_or_partition_chooses)
{
    /* only the crank given: as many as the degrees of freedom */
    char *given = edited2("../examples/fourbar.yaml", "independent: [crank]\n", "",
            "coordinates: {crank: 60 deg, knee: -40 deg, swing: 80 deg}",
            "coordinates: {crank: 60 deg}");
    /* three given for one degree of freedom: partitioning */
    char *three = edited("../examples/fourbar.yaml", "independent: [crank]\n", ""), msg[256];
    rigmat_model *m = NULL;
    size_t j, ndep = 0;

    ck_assert_int_eq(load_closed(given, NULL, 0, &m, msg, sizeof msg), RIGMAT_OK);
    ck_assert_int_eq(m->independent_how, RIGMAT_INDEPENDENT_GIVEN);
    ck_assert_int_eq(m->joints[rigmat_model_joint(m, "crank")].dependent, 0);
    ck_assert_int_eq(m->joints[rigmat_model_joint(m, "knee")].dependent, 1);
    rigmat_model_free(m);
    ck_assert_int_eq(load_closed(three, NULL, 0, &m, msg, sizeof msg), RIGMAT_OK);
    ck_assert_int_eq(m->independent_how, RIGMAT_INDEPENDENT_PARTITION);
    for (j = 0; j < m->njoints; j++)
        ndep += m->joints[j].dependent != 0;
    ck_assert_uint_eq(ndep, 2);
    ck_assert(m->closure_sv_ratio >= RIGMAT_CLOSURE_SV_RTOL);
    ck_assert(m->closure_residual <= 1e-12);
    rigmat_model_free(m);
    free(given);
    free(three);
}
END_TEST

/* The slider-crank's piston travel in closed form (R. L. Norton, Design of
 * Machinery, ch. 4, the in-line slider-crank): x = r cos th +
 * sqrt(l^2 - r^2 sin^2 th); its derivative by th likewise. */
START_TEST(slider_crank_travel_closed_form)
{
    char *text = edited("../examples/slider-crank.yaml", NULL, NULL), msg[256];
    rigmat_model *m = NULL;
    rigmat_lti *lti;
    const double r = 0.06, l = 0.20;
    double th, root;
    size_t ky;

    ck_assert_int_eq(load_closed(text, NULL, 0, &m, msg, sizeof msg), RIGMAT_OK);
    lti = tm_lin(m, NULL);
    th = gsl_vector_get(lti->x0, 0);
    root = sqrt(l * l - r * r * sin(th) * sin(th));
    ky = output_index(m, "travel");
    ck_assert_rel(gsl_vector_get(lti->y0, ky), r * cos(th) + root, 1e-14);
    ck_assert_rel(gsl_matrix_get(lti->C, ky, 0),
            -r * sin(th) - r * r * sin(th) * cos(th) / root, 1e-12);
    rigmat_lti_free(lti);
    rigmat_model_free(m);
    free(text);
}
END_TEST

/* The complex step through the Newton solve against central differences,
 * away from rest (the curvature terms in play). */
START_TEST(jacobians_through_the_assembly_are_exact)
{
    static const char *const moving[] = { "operating_point.solve=[]",
        "operating_point.inputs.drive=3V", "operating_point.rates.crank=5rad/s" };
    const char *const files[] = { "../examples/fourbar.yaml", "../examples/slider-crank.yaml" };
    size_t k;

    for (k = 0; k < 2; k++) {
        char *text = edited(files[k], NULL, NULL), msg[256];
        rigmat_model *m = NULL;
        ck_assert_int_eq(load_closed(text, moving, 3, &m, msg, sizeof msg), RIGMAT_OK);
        ck_assert_msg(tm_fd_error(m) < 1e-6, "%s: %g", files[k], tm_fd_error(m));
        rigmat_model_free(m);
        free(text);
    }
}
END_TEST

START_TEST(a_loop_that_cannot_close_is_named)
{
    /* a rocker of 0.9 m: longer than the other three links together */
    char *text = edited("../examples/fourbar.yaml", "[[280 mm, 0], [200 mm, 0]]",
            "[[280 mm, 0], [900 mm, 0]]"), msg[256];
    rigmat_model *m = NULL;

    ck_assert_int_eq(load_closed(text, NULL, 0, &m, msg, sizeof msg), RIGMAT_ENUMERIC);
    ck_assert_ptr_null(m);
    ck_assert_msg(strstr(msg, "closure 'pin_c' cannot assemble") != NULL, "%s", msg);
    free(text);
}
END_TEST

START_TEST(a_dead_centre_is_refused_with_its_numbers)
{
    /* rocker independent at its extreme: crank and coupler in line */
    const double e = fa + fb, x = (e * e - fc * fc + fd * fd) / (2.0 * fd);
    const double y = sqrt(e * e - x * x);
    char s1[96], s2[96], s3[96], msg[256];
    const char *sets[4];
    char *text = edited("../examples/fourbar.yaml", "independent: [crank]",
            "independent: [swing]");
    rigmat_model *m = NULL;

    snprintf(s1, sizeof s1, "operating_point.coordinates.crank=%.17grad", atan2(y, x));
    snprintf(s2, sizeof s2, "operating_point.coordinates.swing=%.17grad", atan2(y, x - fd));
    snprintf(s3, sizeof s3, "springs.return.rest=%.17grad", atan2(y, x - fd));
    sets[0] = s1;
    sets[1] = "operating_point.coordinates.knee=0rad";
    sets[2] = s2;
    sets[3] = s3;
    ck_assert_int_eq(load_closed(text, sets, 4, &m, msg, sizeof msg), RIGMAT_ENUMERIC);
    ck_assert_msg(strstr(msg, "closure 'pin_c' is at a dead centre") != NULL &&
            strstr(msg, "relative singular value") != NULL, "%s", msg);
    free(text);
}
END_TEST

START_TEST(unassembled_model_is_refused)
{
    rigmat_options opt = rigmat_options_default();
    rigmat_model *m = NULL;
    rigmat_lti *lti = NULL;
    rigmat_diags d;
    rigmat_error e;

    rigmat_diags_init(&d);
    memset(&e, 0, sizeof e);
    ck_assert_int_eq(rigmat_model_load("../examples/fourbar.yaml", NULL, 0, &opt, &m, &d),
            RIGMAT_OK);
    ck_assert_int_eq(m->closures_pending, 1);
    ck_assert_int_eq(rigmat_linearize(m, &opt, &lti, NULL, &e), RIGMAT_EUSAGE);
    ck_assert_ptr_null(lti);
    ck_assert_ptr_nonnull(strstr(e.message, "rigmat_model_check_equations"));
    rigmat_model_free(m);
    rigmat_diags_release(&d);
}
END_TEST

Suite *closures_suite(void);

Suite *closures_suite(void)
{
    Suite *s = suite_create("closures");
    TCase *tc = tcase_create("loops");

    tcase_set_timeout(tc, 120);
    tcase_add_test(tc, fourbar_named_independent_and_freudenstein);
    tcase_add_test(tc, guesses_pick_the_branch);
    tcase_add_test(tc, operating_point_or_partition_chooses);
    tcase_add_test(tc, slider_crank_travel_closed_form);
    tcase_add_test(tc, jacobians_through_the_assembly_are_exact);
    tcase_add_test(tc, a_loop_that_cannot_close_is_named);
    tcase_add_test(tc, a_dead_centre_is_refused_with_its_numbers);
    tcase_add_test(tc, unassembled_model_is_refused);
    suite_add_tcase(s, tc);
    return s;
}
