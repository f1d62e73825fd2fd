/* check_api.c - the public API (include/rigmat.h), used the way a program
 * outside the tree uses it: this file includes the public header only.
 *
 * Checked: diagnostics are returned, never printed (standard error stays
 * empty); every function's error path; ownership (every handle freed in
 * the documented order, NULL accepted by every _free; `make check-san`
 * runs this suite under LeakSanitizer); values against formulas from
 * outside the project; two models on two threads give the bytes one
 * thread gives.
 *
 * The model of most cases is a 2 kg block on a vertical slider held by a
 * 50 N/m spring, so: static sag q = -m g / k (Hooke's law; common
 * practice), eigenvalues +-j sqrt(k/m) = +-5j 1/s, free response
 * q(t) = q0 + a cos(w t), and the zero-order-hold transition matrix of
 * the harmonic oscillator [[cos wT, sin(wT)/w], [-w sin wT, cos wT]]
 * (the exact solution of x' = A x; common practice). */
#include "rigmat.h"
#include "testutil.h"

#include <check.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_math.h>
#include <gsl/gsl_permutation.h>
#include <math.h>
#include <pthread.h>
#include <stdlib.h>
#include <string.h>
#include <unistd.h>

#define G0 9.80665 /* standard gravity, m/s^2 (the model's default) */

static const char osc_yaml[] =
    "rigmat: 1\n"
    "name: block on a spring\n"
    "bodies:\n"
    "  block: {mass: 2 kg}\n"
    "joints:\n"
    "  slide: {type: slider, parent: ground, child: block, axis: [0, 1]}\n"
    "springs:\n"
    "  spring: {across: slide, stiffness: 50 N/m, rest: 0 m}\n"
    "sensors:\n"
    "  pos: {measures: position, of: slide}\n"
    "operating_point:\n"
    "  coordinates: {slide: 0 m}\n"
    "  solve: [slide]\n";

/* line 3, column 13 is the value of mass */
static const char bad_yaml[] = "rigmat: 1\nbodies:\n  b: {mass: -1 kg}\n";

/* Write text to a new file in a scratch folder; the path into buf. */
static void scratch_file(const char *name, const char *text, char *buf, size_t len)
{
    char dir[] = "/tmp/rigmat-api-XXXXXX";
    FILE *f;

    ck_assert_ptr_nonnull(mkdtemp(dir));
    snprintf(buf, len, "%s/%s", dir, name);
    f = fopen(buf, "w");
    ck_assert_ptr_nonnull(f);
    fputs(text, f);
    ck_assert_int_eq(fclose(f), 0);
}

static void scratch_remove(const char *path)
{
    char dir[512];
    char *slash;

    unlink(path);
    snprintf(dir, sizeof dir, "%s", path);
    slash = strrchr(dir, '/');
    if (slash != NULL) {
        *slash = '\0';
        rmdir(dir);
    }
}

/* Load path with the overrides (key, value pairs, NULL-terminated). */
static rigmat_status load(const char *path, const char *const *sets, rigmat_model **m,
        rigmat_diags *d)
{
    rigmat_source *s = rigmat_source_new(path);
    rigmat_status st = RIGMAT_OK;

    ck_assert_ptr_nonnull(s);
    for (; sets != NULL && sets[0] != NULL && st == RIGMAT_OK; sets += 2)
        st = rigmat_source_set(s, sets[0], sets[1]);
    ck_assert_int_eq(st, RIGMAT_OK);
    st = rigmat_source_load(s, m, d);
    rigmat_source_free(s);
    return st;
}

static double at(const rigmat_matrix_view *v, size_t i, size_t j)
{
    ck_assert_uint_lt(i, v->rows);
    ck_assert_uint_lt(j, v->cols);
    return v->data[i * v->cols + j];
}

/* ------------------------------------------------------------ diagnostics */

START_TEST(diagnostics_are_returned_not_printed)
{
    char path[256], errpath[] = "/tmp/rigmat-api-stderr-XXXXXX";
    rigmat_diags *d = rigmat_diags_new();
    rigmat_model *m = NULL;
    rigmat_diag_view v;
    int fd = mkstemp(errpath), saved;
    size_t i, with_hint = 0;
    long size;
    FILE *f;

    ck_assert_ptr_nonnull(d);
    ck_assert_int_ge(fd, 0);
    scratch_file("bad.yaml", bad_yaml, path, sizeof path);
    /* standard error goes to a file for the call */
    fflush(stderr);
    saved = dup(2);
    ck_assert_int_ge(saved, 0);
    ck_assert_int_ge(dup2(fd, 2), 0);
    ck_assert_int_eq(load(path, NULL, &m, d), RIGMAT_EMODEL);
    fflush(stderr);
    ck_assert_int_ge(dup2(saved, 2), 0);
    close(saved);
    ck_assert_ptr_null(m);
    f = fdopen(fd, "r");
    ck_assert_ptr_nonnull(f);
    fseek(f, 0, SEEK_END);
    size = ftell(f);
    fclose(f);
    unlink(errpath);
    ck_assert_msg(size == 0, "the library printed %ld bytes to stderr", size);
    /* the caller reads them instead: the negative mass at 3:13 first */
    ck_assert_uint_ge(rigmat_diags_count(d), 2);
    ck_assert_uint_ge(rigmat_diags_errors(d), 2);
    ck_assert_int_eq(rigmat_diags_get(d, 0, &v), RIGMAT_OK);
    ck_assert_int_eq(v.severity, RIGMAT_ERROR);
    ck_assert_str_eq(v.file, path);
    ck_assert_uint_eq(v.line, 3);
    ck_assert_uint_eq(v.column, 13);
    ck_assert_ptr_nonnull(strstr(v.message, "negative"));
    for (i = 0; i < rigmat_diags_count(d); i++) {
        ck_assert_int_eq(rigmat_diags_get(d, i, &v), RIGMAT_OK);
        with_hint += v.hint != NULL && v.hint[0] != '\0';
    }
    ck_assert_uint_ge(with_hint, 1); /* the body without a joint */
    /* out of range, and NULLs */
    ck_assert_int_eq(rigmat_diags_get(d, rigmat_diags_count(d), &v), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_diags_get(NULL, 0, &v), RIGMAT_EUSAGE);
    ck_assert_uint_eq(rigmat_diags_count(NULL), 0);
    rigmat_diags_free(d);
    scratch_remove(path);
}
END_TEST

START_TEST(status_names_exit_codes_and_version)
{
    ck_assert_int_eq(rigmat_exit_code(RIGMAT_OK), 0);
    ck_assert_int_eq(rigmat_exit_code(RIGMAT_EMODEL), 1);
    ck_assert_int_eq(rigmat_exit_code(RIGMAT_EUSAGE), 2);
    ck_assert_int_eq(rigmat_exit_code(RIGMAT_ENUMERIC), 3);
    ck_assert_int_eq(rigmat_exit_code(RIGMAT_EIO), 4);
    ck_assert_int_eq(rigmat_exit_code(RIGMAT_ENOMEM), 4);
    ck_assert_int_eq(rigmat_exit_code(RIGMAT_EINTERNAL), 5);
    ck_assert_int_eq(rigmat_exit_code((rigmat_status)99), 5);
    ck_assert_str_eq(rigmat_status_name(RIGMAT_EMODEL), "bad model");
    ck_assert_str_eq(rigmat_version(), RIGMAT_VERSION);
}
END_TEST

/* ------------------------------------------------------------ loading */

START_TEST(load_errors_are_diagnostics)
{
    const char *const unknown[] = { "bodies.nothing.mass", "1 kg", NULL };
    char path[256];
    rigmat_diags *d = rigmat_diags_new();
    rigmat_source *s;
    rigmat_model *m = (rigmat_model *)d; /* not NULL: must be reset */
    rigmat_diag_view v;

    /* the source's own argument checks */
    ck_assert_ptr_null(rigmat_source_new(NULL));
    s = rigmat_source_new("x.yaml");
    ck_assert_int_eq(rigmat_source_set(s, "", "1"), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_source_set(s, "a", NULL), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_source_catalog(s, NULL), RIGMAT_EUSAGE);
    rigmat_source_free(s);
    ck_assert_int_eq(rigmat_source_load(NULL, &m, d), RIGMAT_EUSAGE);
    ck_assert_ptr_null(m);
    /* a file that is not there: an I/O error with its name */
    ck_assert_int_eq(load("/nonexistent/rigmat-api.yaml", NULL, &m, d), RIGMAT_EIO);
    ck_assert_int_eq(rigmat_diags_get(d, rigmat_diags_count(d) - 1, &v), RIGMAT_OK);
    ck_assert_int_eq(v.severity, RIGMAT_ERROR);
    /* an override of a path the model does not have */
    scratch_file("osc.yaml", osc_yaml, path, sizeof path);
    rigmat_diags_free(d);
    d = rigmat_diags_new();
    ck_assert_int_eq(load(path, unknown, &m, d), RIGMAT_EMODEL);
    ck_assert_ptr_null(m);
    ck_assert_uint_ge(rigmat_diags_errors(d), 1);
    ck_assert_int_eq(rigmat_diags_get(d, 0, &v), RIGMAT_OK);
    ck_assert_ptr_nonnull(strstr(v.message, "nothing"));
    /* diags may be NULL: the status still says it */
    ck_assert_int_eq(load(path, unknown, &m, NULL), RIGMAT_EMODEL);
    rigmat_diags_free(d);
    scratch_remove(path);
}
END_TEST

START_TEST(names_units_and_override)
{
    const char *const stiffer[] = { "springs.spring.stiffness", "200 N/m", NULL };
    char path[256];
    rigmat_model *m = NULL, *m2 = NULL;
    rigmat_linear *l = NULL, *l2 = NULL;
    rigmat_signal_view sv;
    rigmat_matrix_view A;

    scratch_file("osc.yaml", osc_yaml, path, sizeof path);
    ck_assert_int_eq(load(path, NULL, &m, NULL), RIGMAT_OK);
    ck_assert_str_eq(rigmat_model_name(m), "block on a spring");
    ck_assert_uint_eq(strlen(rigmat_model_order_hash(m)), 16);
    ck_assert_uint_eq(rigmat_model_count(m, RIGMAT_STATES), 2);
    ck_assert_uint_eq(rigmat_model_count(m, RIGMAT_INPUTS), 0);
    ck_assert_uint_eq(rigmat_model_count(m, RIGMAT_OUTPUTS), 1);
    ck_assert_int_eq(rigmat_model_signal(m, RIGMAT_STATES, 1, &sv), RIGMAT_OK);
    ck_assert_str_eq(sv.name, "slide.velocity");
    ck_assert_str_eq(sv.unit, "m/s");
    ck_assert_int_eq(rigmat_model_signal(m, RIGMAT_OUTPUTS, 0, &sv), RIGMAT_OK);
    ck_assert_str_eq(sv.name, "pos");
    ck_assert_int_eq(rigmat_model_signal(m, RIGMAT_OUTPUTS, 1, &sv), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_model_signal(m, (rigmat_group)7, 0, &sv), RIGMAT_EUSAGE);
    /* A[1][0] = -k/m: -25 1/s^2, and -100 with the override (Hooke) */
    ck_assert_int_eq(rigmat_model_linearize(m, &l, NULL), RIGMAT_OK);
    ck_assert_int_eq(rigmat_linear_matrix(l, "A", &A), RIGMAT_OK);
    ck_assert_uint_eq(A.rows, 2);
    ck_assert_uint_eq(A.cols, 2);
    ck_assert_rel(at(&A, 1, 0), -50.0 / 2.0, 1e-12);
    ck_assert_rel(at(&A, 0, 1), 1.0, 1e-15);
    ck_assert_int_eq(load(path, stiffer, &m2, NULL), RIGMAT_OK);
    ck_assert_int_eq(rigmat_model_linearize(m2, &l2, NULL), RIGMAT_OK);
    ck_assert_int_eq(rigmat_linear_matrix(l2, "A", &A), RIGMAT_OK);
    ck_assert_rel(at(&A, 1, 0), -200.0 / 2.0, 1e-12);
    ck_assert_ptr_eq(rigmat_linear_model(l2), m2);
    rigmat_linear_free(l2);
    rigmat_linear_free(l);
    rigmat_model_free(m2);
    rigmat_model_free(m);
    scratch_remove(path);
}
END_TEST

/* ------------------------------------------------------------ the steps */

START_TEST(trim_finds_the_static_sag)
{
    char path[256];
    rigmat_model *m = NULL;
    rigmat_steady *t = NULL;
    rigmat_linear *l = NULL;
    rigmat_matrix_view x, x0, u;
    rigmat_diags *d = rigmat_diags_new();

    scratch_file("osc.yaml", osc_yaml, path, sizeof path);
    ck_assert_int_eq(load(path, NULL, &m, NULL), RIGMAT_OK);
    ck_assert_int_eq(rigmat_model_trim(m, &t, d), RIGMAT_OK);
    ck_assert_int_eq(rigmat_steady_point(t, RIGMAT_STATES, &x), RIGMAT_OK);
    ck_assert_uint_eq(x.rows, 2);
    /* q = -m g / k (Hooke's law; common practice) */
    ck_assert_rel(x.data[0], -2.0 * G0 / 50.0, 1e-10);
    ck_assert(rigmat_steady_residual(t) <= 1e-10);
    ck_assert_uint_ge(rigmat_steady_iterations(t), 1);
    ck_assert_int_eq(rigmat_steady_point(t, RIGMAT_INPUTS, &u), RIGMAT_OK);
    ck_assert_uint_eq(u.rows, 0);
    ck_assert_ptr_null(u.data);
    ck_assert_int_eq(rigmat_steady_point(t, RIGMAT_OUTPUTS, &u), RIGMAT_EUSAGE);
    /* linearize trims the same point */
    ck_assert_int_eq(rigmat_model_linearize(m, &l, d), RIGMAT_OK);
    ck_assert_int_eq(rigmat_linear_matrix(l, "x0", &x0), RIGMAT_OK);
    ck_assert_rel(x0.data[0], x.data[0], 1e-12);
    ck_assert(rigmat_linear_is_steady(l));
    rigmat_linear_free(l);
    rigmat_steady_free(t);
    /* error paths: *out is reset to NULL */
    ck_assert_int_eq(rigmat_model_trim(NULL, &t, d), RIGMAT_EUSAGE);
    ck_assert_ptr_null(t);
    ck_assert_int_eq(rigmat_model_linearize(NULL, &l, d), RIGMAT_EUSAGE);
    ck_assert_ptr_null(l);
    ck_assert_int_eq(rigmat_model_trim(m, NULL, d), RIGMAT_EUSAGE);
    ck_assert_uint_ge(rigmat_diags_errors(d), 3);
    rigmat_steady_free(t);
    rigmat_model_free(m);
    rigmat_diags_free(d);
    scratch_remove(path);
}
END_TEST

START_TEST(discretize_analyze_simulate_values)
{
    const double w = 5.0, T = 0.01; /* sqrt(k/m) rad/s; 100 Hz */
    char path[256], buf[256];
    rigmat_model *m = NULL;
    rigmat_linear *l = NULL;
    rigmat_sampled *s = NULL;
    rigmat_analysis *a = NULL;
    rigmat_response *r = NULL;
    rigmat_matrix_view Ad, Qd, mv, t, x;
    rigmat_mode_view md;
    rigmat_signal_view sv;
    rigmat_run_spec spec;
    const double offset[2] = { 0.01, 0.0 };
    rigmat_diags *d = rigmat_diags_new();
    size_t k;

    scratch_file("osc.yaml", osc_yaml, path, sizeof path);
    ck_assert_int_eq(load(path, NULL, &m, d), RIGMAT_OK);
    ck_assert_int_eq(rigmat_model_linearize(m, &l, d), RIGMAT_OK);
    /* the sampled oscillator (zero-order hold) */
    ck_assert_int_eq(rigmat_linear_discretize(l, 1.0 / T, NULL, &s, d), RIGMAT_OK);
    ck_assert_rel(rigmat_sampled_period(s), T, 1e-15);
    ck_assert_int_eq(rigmat_sampled_matrix(s, "Ad", &Ad), RIGMAT_OK);
    ck_assert_rel(at(&Ad, 0, 0), cos(w * T), 1e-13);
    ck_assert_rel(at(&Ad, 0, 1), sin(w * T) / w, 1e-13);
    ck_assert_rel(at(&Ad, 1, 0), -w * sin(w * T), 1e-13);
    ck_assert_rel(at(&Ad, 1, 1), cos(w * T), 1e-13);
    ck_assert_uint_eq(rigmat_sampled_states(s), 2);
    ck_assert_int_eq(rigmat_sampled_state(s, 0, &sv), RIGMAT_OK);
    ck_assert_str_eq(sv.name, "slide.position");
    ck_assert_int_eq(rigmat_sampled_state(s, 2, &sv), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_sampled_matrix(s, "Qd", &Qd), RIGMAT_OK);
    ck_assert_uint_eq(Qd.rows, 2); /* no disturbance: zero, but present */
    ck_assert_int_eq(rigmat_sampled_matrix(s, "Bd", &mv), RIGMAT_OK);
    ck_assert_ptr_null(mv.data); /* no inputs */
    ck_assert_int_eq(rigmat_sampled_matrix(s, "Xd", &mv), RIGMAT_EUSAGE);
    /* the modes: +-5j, marginal, 5/(2 pi) Hz, |z| = 1 */
    ck_assert_int_eq(rigmat_linear_analyze(l, T, &a, d), RIGMAT_OK);
    ck_assert_uint_eq(rigmat_analysis_count(a), 2);
    ck_assert_int_eq(rigmat_analysis_mode(a, 0, &md), RIGMAT_OK);
    ck_assert_rel(md.im, w, 1e-12);
    ck_assert(fabs(md.re) <= 1e-12);
    ck_assert_rel(md.frequency_hz, w / (2 * M_PI), 1e-12);
    ck_assert_rel(hypot(md.z_re, md.z_im), 1.0, 1e-12);
    ck_assert_str_eq(md.stability, "marginal");
    ck_assert_int_eq(rigmat_analysis_mode(a, 2, &md), RIGMAT_EUSAGE);
    ck_assert_uint_gt(rigmat_analysis_summary(a, buf, sizeof buf), 0);
    ck_assert_ptr_nonnull(strstr(buf, "marginal"));
    /* a free response of the linear model from 1 cm above the sag:
     * q(t) - q0 = 0.01 cos(w t) */
    memset(&spec, 0, sizeof spec);
    spec.model = "linear";
    spec.duration_s = 0.5;
    spec.step_s = 0.01;
    spec.offset = offset;
    ck_assert_int_eq(rigmat_linear_simulate(l, &spec, &r, d), RIGMAT_OK);
    ck_assert_int_eq(rigmat_response_matrix(r, "t", &t), RIGMAT_OK);
    ck_assert_int_eq(rigmat_response_matrix(r, "x", &x), RIGMAT_OK);
    ck_assert_uint_eq(t.rows, 51);
    ck_assert_uint_eq(x.cols, 2);
    for (k = 0; k < t.rows; k++)
        ck_assert_msg(fabs(at(&x, k, 0) + 2.0 * G0 / 50.0 - 0.01 * cos(w * t.data[k])) <= 1e-12,
                "q at t = %g", t.data[k]);
    ck_assert_int_eq(rigmat_response_matrix(r, "y", &mv), RIGMAT_OK);
    ck_assert_uint_eq(mv.cols, 1);
    ck_assert_int_eq(rigmat_response_matrix(r, "w", &mv), RIGMAT_EUSAGE);
    rigmat_response_free(r);
    r = NULL;
    /* the nonlinear model of a linear spring is the same oscillator */
    spec.model = NULL;
    ck_assert_int_eq(rigmat_linear_simulate(l, &spec, &r, d), RIGMAT_OK);
    ck_assert_int_eq(rigmat_response_matrix(r, "x", &x), RIGMAT_OK);
    ck_assert(fabs(at(&x, 50, 0) + 2.0 * G0 / 50.0 - 0.01 * cos(w * 0.5)) <= 1e-7);
    ck_assert_uint_eq(rigmat_diags_errors(d), 0);
    /* error paths, each with a diagnostic; *out is reset to NULL */
    rigmat_response_free(r);
    rigmat_analysis_free(a);
    rigmat_sampled_free(s);
    spec.duration_s = 0.0;
    ck_assert_int_ne(rigmat_linear_simulate(l, &spec, &r, d), RIGMAT_OK);
    ck_assert_ptr_null(r);
    spec.duration_s = 0.5;
    spec.model = "analog";
    ck_assert_int_eq(rigmat_linear_simulate(l, &spec, &r, d), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_linear_analyze(l, -1.0, &a, d), RIGMAT_EUSAGE);
    ck_assert_ptr_null(a);
    ck_assert_int_eq(rigmat_linear_discretize(l, 0.0, NULL, &s, d), RIGMAT_EUSAGE);
    ck_assert_ptr_null(s);
    ck_assert_int_eq(rigmat_linear_discretize(l, 100.0, "bilinear-ish", &s, d), RIGMAT_EUSAGE);
    ck_assert_uint_eq(rigmat_diags_errors(d), 5);
    rigmat_model_free(m);
    rigmat_linear_free(l);
    rigmat_diags_free(d);
    scratch_remove(path);
}
END_TEST

/* Jacobi's formula for the demo: det(Ad) = det(exp(A T)) = exp(T tr A)
 * (common practice), through the public views and the LU of GSL. */
START_TEST(sampled_demo_obeys_jacobi)
{
    rigmat_model *m = NULL;
    rigmat_linear *l = NULL;
    rigmat_sampled *s = NULL;
    rigmat_matrix_view A, Ad;
    gsl_matrix *lu;
    gsl_permutation *p;
    double trace = 0.0, det;
    int sign;
    size_t i;

    ck_assert_int_eq(load("../examples/balancer.yaml", NULL, &m, NULL), RIGMAT_OK);
    ck_assert_int_eq(rigmat_model_linearize(m, &l, NULL), RIGMAT_OK);
    ck_assert_int_eq(rigmat_linear_discretize(l, 200.0, "zoh", &s, NULL), RIGMAT_OK);
    ck_assert_int_eq(rigmat_linear_matrix(l, "A", &A), RIGMAT_OK);
    ck_assert_int_eq(rigmat_sampled_matrix(s, "Ad", &Ad), RIGMAT_OK);
    for (i = 0; i < A.rows; i++)
        trace += at(&A, i, i);
    lu = tu_mat(Ad.rows, Ad.cols, Ad.data);
    p = gsl_permutation_alloc(Ad.rows);
    gsl_linalg_LU_decomp(lu, p, &sign);
    det = gsl_linalg_LU_det(lu, sign);
    ck_assert_rel(det, exp(0.005 * trace), 1e-10);
    gsl_permutation_free(p);
    gsl_matrix_free(lu);
    rigmat_sampled_free(s);
    rigmat_linear_free(l);
    rigmat_model_free(m);
}
END_TEST

/* ------------------------------------------------------------ export */

struct files {
    char *buf[16];
    size_t len[16];
    FILE *f[16];
    char name[16][32];
    size_t n;
};

static FILE *open_part(void *ctx, const char *name)
{
    struct files *fs = ctx;

    if (fs->n == 16)
        return NULL;
    snprintf(fs->name[fs->n], sizeof fs->name[0], "%s", name);
    fs->f[fs->n] = open_memstream(&fs->buf[fs->n], &fs->len[fs->n]);
    return fs->f[fs->n++];
}

START_TEST(export_formats_and_errors)
{
    static const char *const formats[] = { "text", "json", "csv", "c", "numpy", "latex" };
    rigmat_model *m = NULL;
    rigmat_linear *l = NULL;
    rigmat_sampled *s = NULL;
    rigmat_export_opts o;
    struct files fs;
    rigmat_diags *d = rigmat_diags_new();
    char *buf = NULL, path[] = "/tmp/rigmat-api-ro-XXXXXX";
    size_t len = 0, i;
    FILE *f;
    int fd;

    ck_assert_int_eq(load("../examples/cart.yaml", NULL, &m, NULL), RIGMAT_OK);
    ck_assert_int_eq(rigmat_model_linearize(m, &l, NULL), RIGMAT_OK);
    ck_assert_int_eq(rigmat_linear_discretize(l, 100.0, NULL, &s, NULL), RIGMAT_OK);
    for (i = 0; i < sizeof formats / sizeof formats[0]; i++) {
        f = open_memstream(&buf, &len);
        ck_assert_int_eq(rigmat_sampled_export(s, formats[i], NULL, f, d), RIGMAT_OK);
        ck_assert_int_eq(rigmat_linear_export(l, formats[i], NULL, f, d), RIGMAT_OK);
        fclose(f);
        ck_assert_msg(len > 100, "%s: %zu bytes", formats[i], len);
        free(buf);
        buf = NULL;
    }
    /* the C header with a prefix of ours, in float */
    memset(&o, 0, sizeof o);
    o.name = "trolley";
    o.ctype_float = 1;
    f = open_memstream(&buf, &len);
    ck_assert_int_eq(rigmat_sampled_export(s, "c", &o, f, d), RIGMAT_OK);
    fclose(f);
    ck_assert_ptr_nonnull(strstr(buf, "static const float trolley_Ad["));
    free(buf);
    /* the folder format through the callback: one file per matrix */
    memset(&fs, 0, sizeof fs);
    o.open_file = open_part;
    o.ctx = &fs;
    ck_assert_int_eq(rigmat_sampled_export(s, "mtx", &o, NULL, d), RIGMAT_OK);
    ck_assert_uint_ge(fs.n, 4);
    for (i = 0; i < fs.n; i++) {
        fclose(fs.f[i]);
        ck_assert_msg(strncmp(fs.buf[i], "%%MatrixMarket matrix array real general", 40) == 0,
                "%s", fs.name[i]);
        free(fs.buf[i]);
    }
    ck_assert_uint_eq(rigmat_diags_count(d), 0);
    /* errors: an unknown format, a folder format without its callback, a
     * stream that cannot be written, NULL handles */
    f = open_memstream(&buf, &len);
    ck_assert_int_eq(rigmat_sampled_export(s, "xml", NULL, f, d), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_linear_export(l, "mtx", NULL, f, d), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_linear_export(NULL, "json", NULL, f, d), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_sampled_export(NULL, "json", NULL, f, d), RIGMAT_EUSAGE);
    fclose(f);
    free(buf);
    fd = mkstemp(path);
    ck_assert_int_ge(fd, 0);
    close(fd);
    f = fopen(path, "r"); /* read-only: every write fails */
    ck_assert_ptr_nonnull(f);
    ck_assert_int_eq(rigmat_linear_export(l, "json", NULL, f, d), RIGMAT_EIO);
    fclose(f);
    unlink(path);
    ck_assert_uint_eq(rigmat_diags_errors(d), 5);
    rigmat_sampled_free(s);
    rigmat_linear_free(l);
    rigmat_model_free(m);
    rigmat_diags_free(d);
}
END_TEST

START_TEST(free_accepts_null)
{
    rigmat_matrix_view v;

    rigmat_diags_free(NULL);
    rigmat_source_free(NULL);
    rigmat_model_free(NULL);
    rigmat_steady_free(NULL);
    rigmat_linear_free(NULL);
    rigmat_sampled_free(NULL);
    rigmat_analysis_free(NULL);
    rigmat_response_free(NULL);
    ck_assert_int_eq(rigmat_linear_matrix(NULL, "A", &v), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_sampled_matrix(NULL, "Ad", &v), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_response_matrix(NULL, "t", &v), RIGMAT_EUSAGE);
    ck_assert_uint_eq(rigmat_model_count(NULL, RIGMAT_STATES), 0);
}
END_TEST

/* ------------------------------------------------------------ threads */

struct job {
    const char *path;
    double rate_hz;
    char *json;
    size_t len;
    rigmat_status st;
};

/* The whole pipeline on one model, into j->json; every handle its own. */
static void *run_job(void *arg)
{
    struct job *j = arg;
    rigmat_diags *d = rigmat_diags_new();
    rigmat_model *m = NULL;
    rigmat_linear *l = NULL;
    rigmat_sampled *s = NULL;
    FILE *f;

    j->json = NULL;
    j->st = load(j->path, NULL, &m, d);
    if (j->st == RIGMAT_OK)
        j->st = rigmat_model_linearize(m, &l, d);
    if (j->st == RIGMAT_OK)
        j->st = rigmat_linear_discretize(l, j->rate_hz, NULL, &s, d);
    if (j->st == RIGMAT_OK) {
        f = open_memstream(&j->json, &j->len);
        j->st = f != NULL ? rigmat_sampled_export(s, "json", NULL, f, d) : RIGMAT_ENOMEM;
        if (f != NULL)
            fclose(f);
    }
    rigmat_sampled_free(s);
    rigmat_linear_free(l);
    rigmat_model_free(m);
    rigmat_diags_free(d);
    return NULL;
}

START_TEST(two_models_on_two_threads)
{
    struct job one[2] = { { "../examples/balancer.yaml", 200.0, NULL, 0, RIGMAT_OK },
                          { "../examples/quarter-car.yaml", 500.0, NULL, 0, RIGMAT_OK } };
    struct job two[2];
    pthread_t th[2];
    int round, i;

    /* one after the other, then both at once, three times */
    for (i = 0; i < 2; i++) {
        run_job(&one[i]);
        ck_assert_int_eq(one[i].st, RIGMAT_OK);
    }
    for (round = 0; round < 3; round++) {
        memcpy(two, one, sizeof two);
        for (i = 0; i < 2; i++)
            ck_assert_int_eq(pthread_create(&th[i], NULL, run_job, &two[i]), 0);
        for (i = 0; i < 2; i++)
            ck_assert_int_eq(pthread_join(th[i], NULL), 0);
        for (i = 0; i < 2; i++) {
            ck_assert_int_eq(two[i].st, RIGMAT_OK);
            ck_assert_uint_eq(two[i].len, one[i].len);
            ck_assert_msg(memcmp(two[i].json, one[i].json, one[i].len) == 0,
                    "%s differs on a thread", one[i].path);
            free(two[i].json);
        }
    }
    for (i = 0; i < 2; i++)
        free(one[i].json);
}
END_TEST

Suite *api_suite(void);
Suite *api_suite(void)
{
    Suite *s = suite_create("api");
    TCase *t = tcase_create("api");

    tcase_set_timeout(t, 120);
    tcase_add_test(t, diagnostics_are_returned_not_printed);
    tcase_add_test(t, status_names_exit_codes_and_version);
    tcase_add_test(t, load_errors_are_diagnostics);
    tcase_add_test(t, names_units_and_override);
    tcase_add_test(t, trim_finds_the_static_sag);
    tcase_add_test(t, discretize_analyze_simulate_values);
    tcase_add_test(t, sampled_demo_obeys_jacobi);
    tcase_add_test(t, export_formats_and_errors);
    tcase_add_test(t, free_accepts_null);
    tcase_add_test(t, two_models_on_two_threads);
    suite_add_tcase(s, t);
    return s;
}
