/* check_report.c - the report suite: the frequency response against closed
 * forms, its failure at a pole, and the page itself on a test balancer
 * (sections present, names escaped, nothing fetched, bad options refused).
 * The HTML and its SVG figures are also checked as XML, and rendered in a
 * browser, by tests/report.sh. */
#include "report.h"
#include "mechtest.h"
#include "testutil.h"

#include <check.h>
#include <complex.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* A mass-spring-damper m x'' + c x' + k x = u, y = x (high-entropy values). */
#define MSD_M 0.31
#define MSD_C 0.42
#define MSD_K 61.0

START_TEST(transfer_matches_mass_spring_damper)
{
    const double a[] = { 0.0, 1.0, -MSD_K / MSD_M, -MSD_C / MSD_M };
    const double b[] = { 0.0, 1.0 / MSD_M }, c[] = { 1.0, 0.0 };
    gsl_matrix *A = tu_mat(2, 2, a), *B = tu_mat(2, 1, b), *C = tu_mat(1, 2, c);
    static const double w[] = { 0.37, 3.7, 14.03, 140.0 };
    double gr, gi;
    size_t k;

    for (k = 0; k < 4; k++) {
        /* the receptance of a single-degree-of-freedom oscillator,
         * X/F = 1 / (k - m w^2 + j c w) (common practice; e.g. W. T. Thomson,
         * "Theory of Vibration with Applications", 1993, section 3.1) */
        const double complex want = 1.0 / (MSD_K - MSD_M * w[k] * w[k] + (double complex)I * MSD_C * w[k]);
        ck_assert_int_eq(rigmat_report_transfer(A, B, C, NULL, 0.0, w[k], &gr, &gi, NULL),
                RIGMAT_OK);
        ck_assert_rel(gr, creal(want), 1e-12);
        ck_assert_rel(gi, cimag(want), 1e-12);
    }
    gsl_matrix_free(A);
    gsl_matrix_free(B);
    gsl_matrix_free(C);
}
END_TEST

/* Two decoupled first-order channels with feedthrough: the result is laid
 * out output-major, g[i * nu + j], and D adds. */
START_TEST(transfer_channels_and_feedthrough)
{
    const double a[] = { -2.3, 0.0, 0.0, -0.71 };
    const double b[] = { 1.7, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0, 2.9 };
    const double c[] = { 1.0, 0.0, 0.0, 1.0 };
    const double d[] = { 0.0, 0.13, 0.0, 0.0, 0.0, 0.0, 0.0, 0.0 };
    gsl_matrix *A = tu_mat(2, 2, a), *B = tu_mat(2, 4, b), *C = tu_mat(2, 2, c);
    gsl_matrix *D = tu_mat(2, 4, d);
    const double complex s = 0.4 + 1.9 * (double complex)I;
    /* 1.7 / (s + 2.3) on (0, 0); 2.9 / (s + 0.71) on (1, 3); 0.13 on (0, 1):
     * the first-order lag b / (s + a), by hand */
    const double complex g00 = 1.7 / (s + 2.3), g13 = 2.9 / (s + 0.71);
    double gr[8], gi[8];

    ck_assert_int_eq(rigmat_report_transfer(A, B, C, D, creal(s), cimag(s), gr, gi, NULL),
            RIGMAT_OK);
    ck_assert_rel(gr[0], creal(g00), 1e-13);
    ck_assert_rel(gi[0], cimag(g00), 1e-13);
    ck_assert_rel(gr[1], 0.13, 1e-15);
    ck_assert_double_eq_tol(gi[1], 0.0, 1e-15);
    ck_assert_rel(gr[7], creal(g13), 1e-13);
    ck_assert_rel(gi[7], cimag(g13), 1e-13);
    ck_assert_double_eq_tol(gr[4], 0.0, 1e-15);
    gsl_matrix_free(A);
    gsl_matrix_free(B);
    gsl_matrix_free(C);
    gsl_matrix_free(D);
}
END_TEST

START_TEST(transfer_at_a_pole_fails)
{
    const double a[] = { 0.0, 1.0, 0.0, 0.0 }, b[] = { 0.0, 1.0 }, c[] = { 1.0, 0.0 };
    gsl_matrix *A = tu_mat(2, 2, a), *B = tu_mat(2, 1, b), *C = tu_mat(1, 2, c);
    gsl_matrix *D = tu_mat(2, 2, a);
    rigmat_error e;
    double gr, gi;

    memset(&e, 0, sizeof e);
    /* a double integrator at s = 0 */
    ck_assert_int_eq(rigmat_report_transfer(A, B, C, NULL, 0.0, 0.0, &gr, &gi, &e),
            RIGMAT_ENUMERIC);
    ck_assert_ptr_nonnull(strstr(e.message, "singular"));
    /* D of the wrong shape */
    ck_assert_int_eq(rigmat_report_transfer(A, B, C, D, 0.0, 1.0, &gr, &gi, &e), RIGMAT_EUSAGE);
    gsl_matrix_free(A);
    gsl_matrix_free(B);
    gsl_matrix_free(C);
    gsl_matrix_free(D);
}
END_TEST

static char *report_of(rigmat_model *m, const rigmat_report_opts *o, rigmat_status *st,
        rigmat_error *e)
{
    rigmat_lti *l = tm_lin(m, NULL);
    FILE *f = tmpfile();
    char *s;
    long n;

    ck_assert_ptr_nonnull(f);
    memset(e, 0, sizeof *e);
    *st = rigmat_report_write(f, m, l, o, e);
    fflush(f);
    n = ftell(f);
    s = malloc((size_t)n + 1);
    ck_assert_ptr_nonnull(s);
    rewind(f);
    ck_assert_uint_eq(fread(s, 1, (size_t)n, f), (size_t)n);
    s[n] = '\0';
    fclose(f);
    rigmat_lti_free(l);
    return s;
}

START_TEST(page_has_every_section_and_escapes_names)
{
    rigmat_model *m = tm_balancer(0.0, RIGMAT_DRIVE_VOLTAGE, 0);
    rigmat_report_opts o = rigmat_report_opts_default();
    static const char *const ids[] = { "summary", "signs", "point", "linear", "modes", "poles",
        "responses", "frequency", "validity", "sampled" };
    rigmat_status st;
    rigmat_error e;
    char *html;
    size_t i;

    free(m->name);
    m->name = strdup("<script>alert('x')</script> & \"co\"");
    o.rate_hz = 200.0;
    o.validity = 0; /* the sweep is slow; tests/report.sh runs it */
    html = report_of(m, &o, &st, &e);
    ck_assert_msg(st == RIGMAT_OK, "report failed: %s", e.message);
    for (i = 0; i < sizeof ids / sizeof ids[0]; i++) {
        char needle[48];
        snprintf(needle, sizeof needle, "<h2 id=\"%s\">", ids[i]);
        ck_assert_msg(strstr(html, needle) != NULL, "no section '%s'", ids[i]);
    }
    ck_assert_ptr_null(strstr(html, "<script"));
    ck_assert_ptr_nonnull(strstr(html, "&lt;script&gt;alert(&#39;x&#39;)&lt;/script&gt; &amp; "
                                       "&quot;co&quot;"));
    /* nothing is fetched: no external reference but the XML namespaces */
    ck_assert_ptr_null(strstr(html, "src="));
    ck_assert_ptr_null(strstr(html, "url("));
    ck_assert_ptr_null(strstr(html, "@import"));
    ck_assert_ptr_null(strstr(html, "https:"));
    /* the unstable tilt mode chose the offset of tilt; the drive a step */
    ck_assert_ptr_nonnull(strstr(html, "Initial offset of tilt.angle"));
    ck_assert_ptr_nonnull(strstr(html, "Step of drive"));
    ck_assert(strstr(html, "</html>") != NULL);
    free(html);
    tm_free(m);
}
END_TEST

START_TEST(bad_options_are_refused)
{
    rigmat_model *m = tm_balancer(0.0, RIGMAT_DRIVE_VOLTAGE, 0);
    rigmat_report_opts o = rigmat_report_opts_default();
    rigmat_status st;
    rigmat_error e;
    char *html;

    o.validity = 0;
    o.rate_hz = 0.0;
    html = report_of(m, &o, &st, &e);
    ck_assert_int_eq(st, RIGMAT_EUSAGE);
    ck_assert_str_eq(html, "");
    free(html);
    o.rate_hz = 200.0;
    o.noffsets = 1;
    o.offsets[0].index = 99;
    o.offsets[0].size = 0.01;
    html = report_of(m, &o, &st, &e);
    ck_assert_int_eq(st, RIGMAT_EUSAGE);
    free(html);
    o.offsets[0].index = 1;
    o.offsets[0].size = 0.0;
    html = report_of(m, &o, &st, &e);
    ck_assert_int_eq(st, RIGMAT_EUSAGE);
    free(html);
    tm_free(m);
}
END_TEST

Suite *report_suite(void);
Suite *report_suite(void)
{
    Suite *s = suite_create("report");
    TCase *tf = tcase_create("transfer");
    TCase *page = tcase_create("page");

    tcase_add_test(tf, transfer_matches_mass_spring_damper);
    tcase_add_test(tf, transfer_channels_and_feedthrough);
    tcase_add_test(tf, transfer_at_a_pole_fails);
    suite_add_tcase(s, tf);
    tcase_add_test(page, page_has_every_section_and_escapes_names);
    tcase_add_test(page, bad_options_are_refused);
    tcase_set_timeout(page, 120);
    suite_add_tcase(s, page);
    return s;
}
