/* check_sizes.c - the overflow-checked size helpers (src/util/sizes.c) and
 * the delay limit they back (src/sample/discretize.c; issue 10, item 1). */
#include "sizes.h"
#include "discretize.h"
#include "testutil.h"

#include <stdint.h>
#include <string.h>

START_TEST(mul_and_add_refuse_overflow)
{
    size_t r = 0;

    ck_assert_int_eq(rigmat_size_mul(0, SIZE_MAX, &r), 0);
    ck_assert_uint_eq(r, 0);
    ck_assert_int_eq(rigmat_size_mul(3, 7, &r), 0);
    ck_assert_uint_eq(r, 21);
    ck_assert_int_eq(rigmat_size_mul(SIZE_MAX, 1, &r), 0);
    ck_assert_uint_eq(r, SIZE_MAX);
    ck_assert_int_eq(rigmat_size_mul(SIZE_MAX / 2 + 1, 2, &r), -1);
    ck_assert_uint_eq(r, SIZE_MAX);
    /* the case: 2^31 states, n * n * 8 bytes wraps to 0 in 64 bits */
    {
        const size_t n = (size_t)1 << 31;
        size_t nn = 0;
        if (sizeof(size_t) >= 8) {
            ck_assert_int_eq(rigmat_size_mul(n, n, &nn), 0);
            ck_assert_int_eq(rigmat_size_mul(nn, 8, &r), -1);
        } else {
            ck_assert_int_eq(rigmat_size_mul(n, n, &nn), -1);
        }
        ck_assert(!rigmat_size_matrix_ok(n, n, sizeof(double)));
        ck_assert_ptr_null(rigmat_matrix_alloc(n, n));
        ck_assert_ptr_null(rigmat_matrix_calloc(n, n));
    }
    ck_assert_int_eq(rigmat_size_add(SIZE_MAX - 1, 1, &r), 0);
    ck_assert_uint_eq(r, SIZE_MAX);
    ck_assert_int_eq(rigmat_size_add(SIZE_MAX, 1, &r), -1);
    ck_assert_uint_eq(r, SIZE_MAX);
    ck_assert_uint_eq(rigmat_size_mul_add(4, 5, 6), 26);
    ck_assert_uint_eq(rigmat_size_mul_add(SIZE_MAX, 2, 0), SIZE_MAX);
    ck_assert_uint_eq(rigmat_size_mul_add(SIZE_MAX, 1, 1), SIZE_MAX);
    ck_assert(rigmat_size_matrix_ok(1000, 1000, sizeof(double)));
    {
        gsl_matrix *m = rigmat_matrix_calloc(3, 2);
        ck_assert_ptr_nonnull(m);
        ck_assert(m->size1 == 3 && m->size2 == 2 && gsl_matrix_get(m, 2, 1) == 0.0);
        gsl_matrix_free(m);
    }
}
END_TEST

START_TEST(delay_over_the_state_limit_is_refused)
{
    /* x' = -x + u1 + ... + u4: 1 plant state and 4 control inputs */
    rigmat_lti *s = rigmat_lti_alloc(1, 4, 1, 4);
    rigmat_discretize_opts o = rigmat_discretize_opts_default();
    rigmat_discretize_ws *w = rigmat_discretize_ws_alloc(1, 4, 1);
    rigmat_dlti *d = NULL;
    rigmat_error err;
    size_t j;

    ck_assert_ptr_nonnull(s);
    ck_assert_ptr_nonnull(w);
    ck_assert_uint_eq(o.max_states, rigmat_options_default().max_sampled_states);
    gsl_matrix_set(s->A, 0, 0, -1.0);
    for (j = 0; j < 4; j++)
        gsl_matrix_set(s->B, 0, j, 1.0);
    gsl_matrix_set(s->C, 0, 0, 1.0);
    /* at the limit: 1 + 4 * 255 = 1021 states, accepted */
    o.max_states = 1021;
    o.delay_samples = 255;
    memset(&err, 0, sizeof err);
    ck_assert_int_eq(rigmat_discretize(s, &o, w, &d, &err), RIGMAT_OK);
    ck_assert_uint_eq(d->nx, 1021);
    rigmat_dlti_free(d);
    d = NULL;
    /* one stage more: refused, naming the count and the limit */
    o.delay_samples = 255.5;
    ck_assert_int_eq(rigmat_discretize(s, &o, w, &d, &err), RIGMAT_EUSAGE);
    ck_assert_ptr_null(d);
    ck_assert_ptr_nonnull(strstr(err.message, "needs 1025 states"));
    ck_assert_ptr_nonnull(strstr(err.message, "limit of 1021 states"));
    /* the delay: 1 + 4 * 536870911 states; refused before any allocation */
    o = rigmat_discretize_opts_default();
    o.delay_samples = 536870911;
    ck_assert_int_eq(rigmat_discretize(s, &o, w, &d, &err), RIGMAT_EUSAGE);
    ck_assert_ptr_nonnull(strstr(err.message, "2147483645 states"));
    o.delay_samples = 1e9;
    ck_assert_int_eq(rigmat_discretize(s, &o, w, &d, &err), RIGMAT_EUSAGE);
    ck_assert_ptr_null(d);
    rigmat_lti_free(s);
    rigmat_discretize_ws_free(w);
}
END_TEST

Suite *sizes_suite(void);
Suite *sizes_suite(void)
{
    Suite *s = suite_create("sizes");
    TCase *t = tcase_create("sizes");

    tcase_add_test(t, mul_and_add_refuse_overflow);
    tcase_add_test(t, delay_over_the_state_limit_is_refused);
    suite_add_tcase(s, t);
    return s;
}
