/* check_svg.c - the svg suite: nice-number ticks, log ticks, labels,
 * escaping, clipping, malformed figures, and well-formed output.
 *
 * Tick references: P. S. Heckbert, "Nice numbers for graph labels",
 * Graphics Gems (1990), pp. 61-63: nicenum rounds to 1, 2, 5 or 10 with
 * thresholds 1.5, 3 and 7, and rounds up (ceiling) with thresholds 1, 2, 5;
 * loose labelling takes range = nicenum(max - min, ceiling),
 * d = nicenum(range / (ntick - 1), round), graph limits floor(min/d) d and
 * ceil(max/d) d, and max(-floor(log10 d), 0) fraction digits.  The values
 * below were worked by hand from those rules. */
#include "svg.h"
#include "testutil.h"

#include <check.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>

/* Everything written to a temporary file, as one NUL-terminated string. */
static char *slurp(FILE *f)
{
    long n;
    char *s;

    fflush(f);
    n = ftell(f);
    ck_assert_int_ge(n, 0);
    s = malloc((size_t)n + 1);
    ck_assert_ptr_nonnull(s);
    rewind(f);
    ck_assert_uint_eq(fread(s, 1, (size_t)n, f), (size_t)n);
    s[n] = '\0';
    return s;
}

static char *escaped(const char *in)
{
    FILE *f = tmpfile();
    char *s;

    ck_assert_ptr_nonnull(f);
    rigmat_svg_escape(f, in);
    s = slurp(f);
    fclose(f);
    return s;
}

START_TEST(nice_number_rounds_to_1_2_5_10)
{
    /* Heckbert (1990), nicenum with round: 1.5, 3, 7 thresholds */
    ck_assert_rel(rigmat_svg_nice_number(1.2, 1), 1.0, 1e-15);
    ck_assert_rel(rigmat_svg_nice_number(2.9, 1), 2.0, 1e-15);
    ck_assert_rel(rigmat_svg_nice_number(0.031, 1), 0.05, 1e-15);
    ck_assert_rel(rigmat_svg_nice_number(740.0, 1), 1000.0, 1e-15);
    /* Heckbert (1990), nicenum without round: the smallest nice number >= x */
    ck_assert_rel(rigmat_svg_nice_number(3.4, 0), 5.0, 1e-15);
    ck_assert_rel(rigmat_svg_nice_number(1.01e-4, 0), 2e-4, 1e-15);
    ck_assert_rel(rigmat_svg_nice_number(5.2e6, 0), 1e7, 1e-15);
    ck_assert_rel(rigmat_svg_nice_number(2.0, 0), 2.0, 1e-15);
    ck_assert(rigmat_svg_nice_number(0.0, 1) == 0.0);
    ck_assert(rigmat_svg_nice_number(-3.0, 1) == 0.0);
    ck_assert(rigmat_svg_nice_number(NAN, 1) == 0.0);
}
END_TEST

START_TEST(loose_ticks_worked_by_hand)
{
    rigmat_svg_ticks t;

    /* [-0.3, 2.7], 5 ticks: range = nice(3.0, ceil) = 5, d = nice(1.25, round) = 1 */
    ck_assert_int_eq(rigmat_svg_ticks_linear(-0.3, 2.7, 5, &t), RIGMAT_OK);
    ck_assert_uint_eq(t.count, 5);
    ck_assert_rel(t.step, 1.0, 1e-15);
    ck_assert_rel(t.lo, -1.0, 1e-15);
    ck_assert_rel(t.hi, 3.0, 1e-15);
    ck_assert_int_eq(t.decimals, 0);
    ck_assert(t.value[1] == 0.0);
    /* [0.013, 0.087], 5 ticks: range = 0.1, d = nice(0.025, round) = 0.02,
     * limits 0 and 0.1, two fraction digits */
    ck_assert_int_eq(rigmat_svg_ticks_linear(0.013, 0.087, 5, &t), RIGMAT_OK);
    ck_assert_rel(t.step, 0.02, 1e-15);
    ck_assert_uint_eq(t.count, 6);
    ck_assert(t.lo == 0.0);
    ck_assert_rel(t.hi, 0.1, 1e-15);
    ck_assert_int_eq(t.decimals, 2);
    /* [-230, 910], 6 ticks: range = nice(1140, ceil) = 2000, d = nice(400, round) = 500 */
    ck_assert_int_eq(rigmat_svg_ticks_linear(-230.0, 910.0, 6, &t), RIGMAT_OK);
    ck_assert_rel(t.step, 500.0, 1e-15);
    ck_assert_rel(t.lo, -500.0, 1e-15);
    ck_assert_rel(t.hi, 1000.0, 1e-15);
    ck_assert_uint_eq(t.count, 4);
}
END_TEST

/* Any range (fixed seed): ticks cover it, are evenly spaced at 1, 2 or 5
 * times a power of ten, and stay within the table. */
START_TEST(ticks_cover_any_range_at_round_steps)
{
    unsigned long seed = 20261202UL;
    int trial;

    for (trial = 0; trial < 2000; trial++) {
        rigmat_svg_ticks t;
        double a, b, mant;
        size_t i;

        /* a small linear congruential generator (Numerical Recipes' constants) */
        seed = (seed * 1664525UL + 1013904223UL) & 0xffffffffUL;
        a = ((double)seed / 4294967296.0 - 0.5) * pow(10.0, (double)(trial % 13) - 6.0);
        seed = (seed * 1664525UL + 1013904223UL) & 0xffffffffUL;
        b = a + (double)seed / 4294967296.0 * pow(10.0, (double)(trial % 11) - 5.0);
        ck_assert_int_eq(rigmat_svg_ticks_linear(a, b, 2 + (size_t)(trial % 9), &t), RIGMAT_OK);
        /* covered, to 1e-9 of the span (a value a hair past a tick keeps that tick) */
        ck_assert_msg(t.lo <= a + 1e-9 * (t.hi - t.lo) && t.hi >= b - 1e-9 * (t.hi - t.lo),
                      "trial %d: [%g, %g] not covered by [%g, %g]", trial, a, b, t.lo, t.hi);
        ck_assert_uint_ge(t.count, 2);
        ck_assert_uint_le(t.count, RIGMAT_SVG_MAX_TICKS);
        mant = t.step / pow(10.0, floor(log10(t.step) + 1e-9));
        ck_assert_msg(fabs(mant - 1.0) < 1e-9 || fabs(mant - 2.0) < 1e-9 || fabs(mant - 5.0) < 1e-9,
                      "trial %d: step %g", trial, t.step);
        /* even spacing, to the rounding of values far larger than the step */
        for (i = 1; i < t.count; i++)
            ck_assert_msg(fabs(t.value[i] - t.value[i - 1] - t.step) <=
                                  1e-9 * t.step + 4e-16 * fabs(t.value[i]),
                          "trial %d: uneven ticks at %zu", trial, i);
    }
}
END_TEST

START_TEST(degenerate_and_bad_ranges)
{
    rigmat_svg_ticks t;

    ck_assert_int_eq(rigmat_svg_ticks_linear(3.7, 3.7, 5, &t), RIGMAT_OK);
    ck_assert(t.lo < 3.7 && t.hi > 3.7);
    ck_assert_int_eq(rigmat_svg_ticks_linear(0.0, 0.0, 5, &t), RIGMAT_OK);
    ck_assert(t.lo <= -1.0 && t.hi >= 1.0);
    /* reversed input is swapped */
    ck_assert_int_eq(rigmat_svg_ticks_linear(2.7, -0.3, 5, &t), RIGMAT_OK);
    ck_assert_rel(t.lo, -1.0, 1e-15);
    ck_assert_int_eq(rigmat_svg_ticks_linear(NAN, 1.0, 5, &t), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_svg_ticks_linear(0.0, INFINITY, 5, &t), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_svg_ticks_log(0.0, 10.0, &t), RIGMAT_EUSAGE);
    ck_assert_int_eq(rigmat_svg_ticks_log(-1.0, 10.0, &t), RIGMAT_EUSAGE);
}
END_TEST

START_TEST(log_ticks_decades_and_halves)
{
    rigmat_svg_ticks t;
    static const double short_span[] = { 1, 2, 5, 10, 20, 50, 100 };
    size_t i;

    /* [2, 30] spans the decades 1..100: 1, 2, 5 in each, then 100 */
    ck_assert_int_eq(rigmat_svg_ticks_log(2.0, 30.0, &t), RIGMAT_OK);
    ck_assert_uint_eq(t.count, 7);
    for (i = 0; i < 7; i++)
        ck_assert_rel(t.value[i], short_span[i], 1e-14);
    ck_assert_rel(t.lo, 1.0, 1e-15);
    ck_assert_rel(t.hi, 100.0, 1e-15);
    /* [0.5, 2000]: five decades, a tick at each */
    ck_assert_int_eq(rigmat_svg_ticks_log(0.5, 2000.0, &t), RIGMAT_OK);
    ck_assert_uint_eq(t.count, 6);
    ck_assert_rel(t.value[0], 0.1, 1e-14);
    ck_assert_rel(t.value[5], 1e4, 1e-14);
    /* 30 decades: every third one, and the range ends on a tick */
    ck_assert_int_eq(rigmat_svg_ticks_log(1e-15, 1e15, &t), RIGMAT_OK);
    ck_assert_uint_le(t.count, 13);
    ck_assert_rel(t.value[1] / t.value[0], 1e3, 1e-12);
    ck_assert_rel(t.value[t.count - 1], t.hi, 1e-12);
    /* at most 4 ticks over 10 decades: every 4th decade, the range to 1e12 */
    ck_assert_int_eq(rigmat_svg_ticks_log_n(1e-10, 1.0, 4, &t), RIGMAT_OK);
    ck_assert_uint_eq(t.count, 4);
    ck_assert_rel(t.value[1], 1e-6, 1e-12);
    ck_assert_rel(t.hi, 1e2, 1e-12);
    /* [2, 30] with room for 6: decades only */
    ck_assert_int_eq(rigmat_svg_ticks_log_n(2.0, 30.0, 6, &t), RIGMAT_OK);
    ck_assert_uint_eq(t.count, 3);
}
END_TEST

START_TEST(labels_round_and_never_minus_zero)
{
    rigmat_svg_ticks t;
    char buf[32];

    ck_assert_int_eq(rigmat_svg_ticks_linear(0.013, 0.087, 5, &t), RIGMAT_OK);
    rigmat_svg_tick_label(&t, t.value[3], buf, sizeof buf);
    ck_assert_str_eq(buf, "0.06");
    rigmat_svg_tick_label(&t, -1e-18, buf, sizeof buf);
    ck_assert_str_eq(buf, "0.00");
    ck_assert_int_eq(rigmat_svg_ticks_linear(-2.2e-5, 3.1e-5, 5, &t), RIGMAT_OK);
    /* d = nice(nice(5.3e-5, ceil) / 4 = 2.5e-5, round) = 2e-5 */
    ck_assert_rel(t.step, 2e-5, 1e-12);
    rigmat_svg_tick_label(&t, t.value[0], buf, sizeof buf);
    ck_assert_str_eq(buf, "-4e-05");
    /* [1e6, 2.6e6], 5 ticks: range = 2e6, d = nice(5e5, round) = 5e5 */
    ck_assert_int_eq(rigmat_svg_ticks_linear(1e6, 2.6e6, 5, &t), RIGMAT_OK);
    rigmat_svg_tick_label(&t, 1.5e6, buf, sizeof buf);
    ck_assert_str_eq(buf, "1.5e+06");
    rigmat_svg_tick_label(&t, 0.0, buf, sizeof buf);
    ck_assert_str_eq(buf, "0");
    ck_assert_int_eq(rigmat_svg_ticks_linear(-0.3, 2.7, 5, &t), RIGMAT_OK);
    rigmat_svg_tick_label(&t, -1.0, buf, sizeof buf);
    ck_assert_str_eq(buf, "-1");
}
END_TEST

START_TEST(escape_makes_text_safe_for_xml)
{
    char *s;

    s = escaped("<a & b> \"q\" 'r'");
    ck_assert_str_eq(s, "&lt;a &amp; b&gt; &quot;q&quot; &#39;r&#39;");
    free(s);
    /* a control character and a broken UTF-8 byte become U+FFFD */
    s = escaped("x\x01y\xff"
                "z");
    ck_assert_str_eq(s, "x\xEF\xBF\xBDy\xEF\xBF\xBDz");
    free(s);
    /* well-formed UTF-8 (a micro sign, a degree sign) is kept */
    s = escaped("\xC2\xB5m \xC2\xB0");
    ck_assert_str_eq(s, "\xC2\xB5m \xC2\xB0");
    free(s);
    /* a sequence cut short at the end of the string */
    s = escaped("a\xE2\x88");
    ck_assert_str_eq(s, "a\xEF\xBF\xBD\xEF\xBF\xBD");
    free(s);
}
END_TEST

START_TEST(styles_differ_by_dash_and_colour)
{
    size_t i, j;

    for (i = 0; i < 7; i++)
        for (j = i + 1; j < 7; j++) {
            ck_assert_str_ne(rigmat_svg_colour(i), rigmat_svg_colour(j));
            ck_assert_str_ne(rigmat_svg_dash(i), rigmat_svg_dash(j));
        }
    ck_assert_str_eq(rigmat_svg_colour(7), rigmat_svg_colour(0));
}
END_TEST

/* A figure with two panels, hostile names and a line that leaves the box. */
static const double tx[] = { 0.0, 0.5, 1.0, 1.5, 2.0, 2.5 };
static const double ty[] = { 0.1, 0.4, 50.0, NAN, -0.2, 0.3 };
static const double fx[] = { 0.1, 1.0, 10.0, 100.0 };
static const double fy[] = { 1.0, 0.5, -3.0, 0.01 };

static void demo_figure(rigmat_svg_plot p[2], rigmat_svg_series s[3], rigmat_svg_figure *fig)
{
    memset(p, 0, 2 * sizeof *p);
    memset(s, 0, 3 * sizeof *s);
    memset(fig, 0, sizeof *fig);
    s[0].name = "tilt <rad> & \"x\"";
    s[0].x = tx, s[0].y = ty, s[0].n = 6, s[0].line = 1;
    s[1].name = "sampled";
    s[1].x = tx, s[1].y = ty, s[1].n = 6, s[1].marker = RIGMAT_SVG_MARK_CIRCLE, s[1].style = 2;
    s[2].name = "gain";
    s[2].x = fx, s[2].y = fy, s[2].n = 4, s[2].line = 1, s[2].style = 1;
    p[0].title = "a <b>";
    p[0].x.label = "time", p[0].x.unit = "s";
    p[0].y.label = "angle", p[0].y.unit = "rad";
    p[0].y.fixed = 1, p[0].y.min = -0.5, p[0].y.max = 0.5;
    p[0].series = s, p[0].nseries = 2, p[0].zero_line = 1;
    p[1].x.label = "frequency", p[1].x.unit = "Hz", p[1].x.scale = RIGMAT_SVG_LOG10;
    p[1].y.label = "gain", p[1].y.scale = RIGMAT_SVG_LOG10;
    p[1].series = s + 2, p[1].nseries = 1;
    fig->plots = p, fig->nplots = 2, fig->columns = 2, fig->caption = "fig & 1";
    fig->standalone = 1;
}

/* Every coordinate of every path lies inside the drawing: the line that
 * leaves the fixed y range was clipped, not drawn over the axes. */
START_TEST(lines_are_clipped_to_the_plot_area)
{
    rigmat_svg_plot p[2];
    rigmat_svg_series s[3];
    rigmat_svg_figure fig;
    FILE *f = tmpfile();
    char *out, *d;
    size_t paths = 0;

    demo_figure(p, s, &fig);
    fig.nplots = 1;
    ck_assert_int_eq(rigmat_svg_write(f, &fig, NULL), RIGMAT_OK);
    out = slurp(f);
    fclose(f);
    ck_assert_ptr_nonnull(strstr(out, "&lt;b&gt;"));
    ck_assert_ptr_null(strstr(out, "<b>"));
    for (d = strstr(out, "stroke-linejoin"); d != NULL; d = strstr(d + 1, "stroke-linejoin")) {
        char *q = strstr(d, " d=\"") + 4;
        paths++;
        while (*q != '"') {
            double x, y;
            int used = 0;
            ck_assert(*q == 'M' || *q == 'L');
            ck_assert_int_eq(sscanf(q + 1, "%lf %lf%n", &x, &y, &used), 2);
            /* the panel: 460 x 300 below a 22 px caption; box inside the margins */
            ck_assert(x >= 62.0 - 1e-9 && x <= 460.0 - 14.0 + 1e-9);
            ck_assert(y >= 22.0 && y <= 22.0 + 300.0 - 40.0 + 1e-9);
            q += 1 + used;
        }
    }
    ck_assert_uint_eq(paths, 1);
    free(out);
}
END_TEST

START_TEST(malformed_figure_writes_nothing)
{
    rigmat_svg_plot p[2];
    rigmat_svg_series s[3];
    rigmat_svg_figure fig;
    rigmat_error e;
    FILE *f = tmpfile();

    demo_figure(p, s, &fig);
    s[2].y = NULL;
    ck_assert_int_eq(rigmat_svg_write(f, &fig, &e), RIGMAT_EUSAGE);
    ck_assert_int_eq(ftell(f), 0);
    s[2].y = fy;
    p[1].x.fixed = 1, p[1].x.min = 0.0, p[1].x.max = 10.0; /* log axis from 0 */
    ck_assert_int_eq(rigmat_svg_write(f, &fig, &e), RIGMAT_EUSAGE);
    ck_assert_ptr_nonnull(strstr(e.message, "log"));
    ck_assert_int_eq(ftell(f), 0);
    fclose(f);
    /* a stream that cannot be written */
    f = fopen("/dev/null", "r");
    ck_assert_ptr_nonnull(f);
    p[1].x.fixed = 0;
    ck_assert_int_eq(rigmat_svg_write(f, &fig, &e), RIGMAT_EIO);
    fclose(f);
}
END_TEST

/* The standalone SVG (and a pole map) parse as XML: xmllint from
 * libxml2-utils, skipped with a message where it is missing. */
START_TEST(figures_are_well_formed_xml)
{
    rigmat_svg_plot p[2];
    rigmat_svg_series s[3];
    rigmat_svg_figure fig;
    char path[] = "/tmp/rigmat-svg-XXXXXX";
    char cmd[128];
    FILE *f;
    int fd, rc;
    static const double re[] = { -3.1, 4.2, -2000.0, -0.5 }, im[] = { 0.0, 0.0, 0.0, 2.2 };

    if (system("command -v xmllint >/dev/null 2>&1") != 0) {
        fprintf(stderr, "svg: xmllint not installed (libxml2-utils); well-formedness skipped\n");
        return;
    }
    fd = mkstemp(path);
    ck_assert_int_ge(fd, 0);
    f = fdopen(fd, "w");
    demo_figure(p, s, &fig);
    ck_assert_int_eq(rigmat_svg_write(f, &fig, NULL), RIGMAT_OK);
    /* append nothing: one document per file; a pole map in a second file */
    fclose(f);
    snprintf(cmd, sizeof cmd, "xmllint --noout %s", path);
    rc = system(cmd);
    ck_assert_int_eq(rc, 0);

    f = fopen(path, "w");
    memset(p, 0, sizeof p[0]);
    memset(s, 0, sizeof s[0]);
    s[0].name = "poles", s[0].x = re, s[0].y = im, s[0].n = 4;
    s[0].marker = RIGMAT_SVG_MARK_CROSS;
    p[0].x.label = "real", p[0].y.label = "imaginary", p[0].x.unit = "1/s";
    p[0].frame = RIGMAT_SVG_FRAME_Z, p[0].series = s, p[0].nseries = 1;
    fig.nplots = 1, fig.caption = NULL;
    ck_assert_int_eq(rigmat_svg_write(f, &fig, NULL), RIGMAT_OK);
    fclose(f);
    rc = system(cmd);
    ck_assert_int_eq(rc, 0);
    remove(path);
}
END_TEST

Suite *svg_suite(void);
Suite *svg_suite(void)
{
    Suite *s = suite_create("svg");
    TCase *ticks = tcase_create("ticks");
    TCase *out = tcase_create("output");

    tcase_add_test(ticks, nice_number_rounds_to_1_2_5_10);
    tcase_add_test(ticks, loose_ticks_worked_by_hand);
    tcase_add_test(ticks, ticks_cover_any_range_at_round_steps);
    tcase_add_test(ticks, degenerate_and_bad_ranges);
    tcase_add_test(ticks, log_ticks_decades_and_halves);
    tcase_add_test(ticks, labels_round_and_never_minus_zero);
    suite_add_tcase(s, ticks);
    tcase_add_test(out, escape_makes_text_safe_for_xml);
    tcase_add_test(out, styles_differ_by_dash_and_colour);
    tcase_add_test(out, lines_are_clipped_to_the_plot_area);
    tcase_add_test(out, malformed_figure_writes_nothing);
    tcase_add_test(out, figures_are_well_formed_xml);
    suite_add_tcase(s, out);
    return s;
}
