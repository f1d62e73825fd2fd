/* check_emit.c - the result description and its writers (src/emit/):
 * the JSON layout byte for byte, the one finiteness check for every
 * format, the identifiers of the C header, and float rounding. */
#include "result.h"
#include "testutil.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static rigmat_signal sig(const char *name, const char *unit)
{
    rigmat_signal s;

    memset(&s, 0, sizeof s);
    s.name = (char *)(size_t)name; /* the tests never write through it */
    snprintf(s.unit, sizeof s.unit, "%s", unit);
    return s;
}

/* A two-state result; a non-finite entry when bad_entry is non-zero. */
static rigmat_result *small_result(const char *model, double bad_entry)
{
    static rigmat_signal x[2], u[1];
    rigmat_result *r = rigmat_result_alloc("continuous");
    gsl_matrix *A = gsl_matrix_calloc(2, 2);

    x[0] = sig("cart.position", "m");
    x[1] = sig("cart.velocity", "m/s");
    x[1].kind = RIGMAT_SIG_RATE;
    u[0] = sig("push", "N");
    u[0].kind = RIGMAT_SIG_FORCE;
    u[0].role = RIGMAT_ROLE_INPUT;
    ck_assert_ptr_nonnull(r);
    gsl_matrix_set(A, 0, 1, 1.0);
    gsl_matrix_set(A, 1, 1, -0.1);
    if (bad_entry != 0.0)
        gsl_matrix_set(A, 1, 0, bad_entry);
    rigmat_result_head(r, model, "0123456789abcdef", x, 2, u, 1, NULL, 0);
    rigmat_result_dim(r, "state", x, 2);
    rigmat_result_key(r, "A");
    rigmat_result_matrix(r, A, 2, 2, x, x);
    rigmat_result_key(r, "period");
    rigmat_result_number(r, 0.1, "s");
    rigmat_result_key(r, "operating_point");
    rigmat_result_object(r);
    rigmat_result_key(r, "x");
    rigmat_result_values(r, NULL, 2, x);
    rigmat_result_export_name(r, "x0");
    rigmat_result_close(r);
    gsl_matrix_free(A);
    return r;
}

static char *render(const rigmat_result *r, rigmat_format fmt, const rigmat_emit_opts *o,
        rigmat_status *st, rigmat_error *e)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);

    ck_assert_ptr_nonnull(f);
    memset(e, 0, sizeof *e);
    *st = rigmat_result_write(r, fmt, o, f, NULL, e);
    fclose(f);
    return buf;
}

/* The JSON layout of README.md: two-space indent, matrix rows and
 * vectors on one line, 17 significant digits (0.1 is 0.10000000000000001
 * in binary64: %.17g, C99 7.21.6.1). */
START_TEST(json_layout_is_exact)
{
    rigmat_result *r = small_result("cart", 0.0);
    rigmat_status st;
    rigmat_error e;
    char *out = render(r, RIGMAT_FORMAT_JSON, NULL, &st, &e);
    const char *want = "{\n"
                       "  \"rigmat\": \"" RIGMAT_VERSION "\",\n"
                       "  \"model\": \"cart\",\n"
                       "  \"kind\": \"continuous\",\n"
                       "  \"order_hash\": \"0123456789abcdef\",\n"
                       "  \"states\": [\n"
                       "    {\"name\": \"cart.position\",\"unit\": \"m\","
                       "\"kind\": \"coordinate\"},\n"
                       "    {\"name\": \"cart.velocity\",\"unit\": \"m/s\","
                       "\"kind\": \"rate\"}\n"
                       "  ],\n"
                       "  \"inputs\": [\n"
                       "    {\"name\": \"push\",\"unit\": \"N\",\"role\": \"input\","
                       "\"limit\": null}\n"
                       "  ],\n"
                       "  \"outputs\": [],\n"
                       "  \"A\": [\n"
                       "    [0,1],\n"
                       "    [0,-0.10000000000000001]\n"
                       "  ],\n"
                       "  \"period\": 0.10000000000000001,\n"
                       "  \"operating_point\": {\n"
                       "    \"x\": [0,0]\n"
                       "  }\n"
                       "}\n";

    ck_assert_int_eq(st, RIGMAT_OK);
    ck_assert_str_eq(out, want);
    free(out);
    rigmat_result_free(r);
}
END_TEST

/* One check refuses a non-finite number in every format, text included,
 * names it, and nothing is written. */
START_TEST(non_finite_is_refused_by_every_format)
{
    const rigmat_format fmts[] = { RIGMAT_FORMAT_TEXT, RIGMAT_FORMAT_JSON, RIGMAT_FORMAT_CSV,
        RIGMAT_FORMAT_C, RIGMAT_FORMAT_NUMPY, RIGMAT_FORMAT_LATEX };
    rigmat_result *r = small_result("cart", HUGE_VAL);
    size_t i;

    for (i = 0; i < sizeof fmts / sizeof fmts[0]; i++) {
        rigmat_status st;
        rigmat_error e;
        char *out = render(r, fmts[i], NULL, &st, &e);
        ck_assert_int_eq(st, RIGMAT_ENUMERIC);
        ck_assert_msg(strstr(e.message, "A[1][0] = inf") != NULL, "message: %s", e.message);
        ck_assert_msg(out == NULL || out[0] == '\0', "format %d wrote '%s'", (int)fmts[i], out);
        free(out);
    }
    rigmat_result_free(r);
    r = small_result("cart", (double)NAN);
    {
        rigmat_status st;
        rigmat_error e;
        char *out = render(r, RIGMAT_FORMAT_TEXT, NULL, &st, &e);
        ck_assert_int_eq(st, RIGMAT_ENUMERIC);
        free(out);
    }
    rigmat_result_free(r);
}
END_TEST

/* C identifiers from awkward names: no leading digit, no "__", no
 * leading or trailing '_' (C11 7.1.3 reserves "__" and "_X" names). */
START_TEST(c_identifiers_are_valid)
{
    rigmat_result *r = small_result("3-axis  rig (v2)__", 0.0);
    rigmat_status st;
    rigmat_error e;
    char *out = render(r, RIGMAT_FORMAT_C, NULL, &st, &e);
    rigmat_emit_opts o = { "_plant_", 1, NULL, NULL };

    ck_assert_int_eq(st, RIGMAT_OK);
    ck_assert_ptr_nonnull(strstr(out, "#ifndef M_3_AXIS_RIG_V2_H\n"));
    ck_assert_ptr_nonnull(strstr(out, "static const double m_3_axis_rig_v2_A[M_3_AXIS_RIG_V2_N_"
                                      "STATES][M_3_AXIS_RIG_V2_N_STATES]"));
    ck_assert_ptr_nonnull(strstr(out, "M_3_AXIS_RIG_V2_STATE_CART_VELOCITY = 1,"));
    ck_assert_ptr_null(strstr(out, "V2__"));
    ck_assert_ptr_null(strstr(out, "v2__"));
    ck_assert_ptr_nonnull(strstr(out, "#define M_3_AXIS_RIG_V2_MODEL \"3-axis  rig (v2)__\"\n"));
    free(out);
    out = render(r, RIGMAT_FORMAT_C, &o, &st, &e);
    ck_assert_int_eq(st, RIGMAT_OK);
    /* float: 9 significant digits and the f suffix; 0.1f is
     * 0.100000001490116 (binary32 nearest to 0.1) */
    ck_assert_ptr_nonnull(strstr(out, "static const float plant_period = 0.100000001f;"));
    ck_assert_ptr_nonnull(strstr(out, "{ 0.0f, 1.0f },"));
    free(out);
    rigmat_result_free(r);
}
END_TEST

/* A float header refuses a value beyond FLT_MAX (3.40282347e38, C99
 * 5.2.4.2.2) rather than write an infinity. */
START_TEST(float_overflow_is_refused)
{
    rigmat_result *r = small_result("cart", 1e39);
    rigmat_emit_opts o = { NULL, 1, NULL, NULL };
    rigmat_status st;
    rigmat_error e;
    char *out = render(r, RIGMAT_FORMAT_C, &o, &st, &e);

    ck_assert_int_eq(st, RIGMAT_ENUMERIC);
    ck_assert_ptr_nonnull(strstr(e.message, "does not fit in a float"));
    free(out);
    out = render(r, RIGMAT_FORMAT_C, NULL, &st, &e);
    ck_assert_int_eq(st, RIGMAT_OK);
    free(out);
    rigmat_result_free(r);
}
END_TEST

/* The format table: every word found, and only the export formats need
 * matrices. */
START_TEST(format_table_is_complete)
{
    static const char *const words[] = { "text", "json", "csv", "c", "numpy", "mtx", "latex" };
    size_t n, i;
    const rigmat_format_info *t = rigmat_format_table(&n);

    ck_assert_uint_eq(n, sizeof words / sizeof words[0]);
    for (i = 0; i < n; i++) {
        ck_assert_ptr_eq(rigmat_format_find(words[i]), &t[i]);
        ck_assert_int_eq(t[i].matrices_only, i >= 2);
    }
    ck_assert_ptr_null(rigmat_format_find("yaml"));
    ck_assert_int_eq(rigmat_format_find("mtx")->folder, 1);
}
END_TEST

Suite *emit_suite(void);
Suite *emit_suite(void)
{
    Suite *s = suite_create("emit");
    TCase *t = tcase_create("writers");

    tcase_add_test(t, json_layout_is_exact);
    tcase_add_test(t, non_finite_is_refused_by_every_format);
    tcase_add_test(t, c_identifiers_are_valid);
    tcase_add_test(t, float_overflow_is_refused);
    tcase_add_test(t, format_table_is_complete);
    suite_add_tcase(s, t);
    return s;
}
