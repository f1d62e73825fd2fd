/* check_locale.c - numbers read the same whatever the locale.
 *
 * The library never reads LC_NUMERIC: rigmat_strtod_c (src/util/reentrant.c)
 * converts as strtod does in the "C" locale.  Reference: the C library's own
 * strtod in the "C" locale (glibc's strtod rounds correctly; common
 * practice), compared bit for bit, and the loader's values under the "C"
 * locale compared with the same file read under a comma-decimal locale.
 *
 * The comma-decimal case needs de_DE.UTF-8; `make check-unit` runs
 * tests/locale.sh, which generates it when it can.  Without it the case
 * says it was skipped and why. */
#include "reentrant.h"
#include "units.h"
#include "testutil.h"

#include <check.h>
#include <errno.h>
#include <locale.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#define COMMA_LOCALE "de_DE.UTF-8"

static int same_bits(double a, double b)
{
    return memcmp(&a, &b, sizeof a) == 0;
}

/* One string through both conversions: value bits, end and errno agree. */
static void agree(const char *text)
{
    char *end_ref, *end_ours;
    double ref, ours;
    int errno_ref, errno_ours;

    errno = 0;
    ref = strtod(text, &end_ref);
    errno_ref = errno;
    errno = 0;
    ours = rigmat_strtod_c(text, &end_ours);
    errno_ours = errno;
    ck_assert_msg(same_bits(ref, ours), "'%s': strtod %.17g, rigmat_strtod_c %.17g", text, ref,
            ours);
    ck_assert_msg(end_ref == end_ours, "'%s': strtod stops at %td, rigmat_strtod_c at %td", text,
            end_ref - text, end_ours - text);
    ck_assert_msg((errno_ref == ERANGE) == (errno_ours == ERANGE), "'%s': ERANGE differs", text);
}

/* Hand-picked: the exact path, its edges (2^53, 10^22), and what must go
 * to the general conversion. */
START_TEST(test_strtod_c_cases)
{
    static const char *const cases[] = {
        "0", "-0", "+0", "0.8", "0.8 kg", "1.5e-3", "2E+4", "9.80665", "0.061",
        "123456789012345678", "9007199254740991", "9007199254740992", "9007199254740993",
        "1e22", "1e23", "1e-22", "1e-23", "4.35e-7", "0.000001234", "123.456e-2",
        "0.1000000000000000055511151231257827", "1.7976931348623157e308", "1e309",
        "4.9e-324", "1e-400", "12.", ".5", ".", "-", "e5", "1e", "1e+", "5x", " 7",
        "0x10", "inf", "nan", "1,5", "00000000000000000000000012.5",
        "0.00000000000000000000000000001", "3.14159265358979323846264338327950288",
    };
    size_t i;

    for (i = 0; i < sizeof cases / sizeof cases[0]; i++)
        agree(cases[i]);
}
END_TEST

/* Random decimals of up to 20 digits, point anywhere, exponent -40..40:
 * most take the exact path, the rest the general one. */
START_TEST(test_strtod_c_random)
{
    unsigned long long state = 0x2545F4914F6CDD1DULL; /* any seed */
    char buf[64];
    int n;

    for (n = 0; n < 200000; n++) {
        size_t len = 0, digits, point, k;
        state = state * 6364136223846793005ULL + 1442695040888963407ULL; /* Knuth's MMIX LCG */
        digits = 1 + (size_t)((state >> 33) % 20);
        point = (size_t)((state >> 40) % (digits + 1));
        if ((state >> 50) & 1)
            buf[len++] = '-';
        for (k = 0; k < digits; k++) {
            state = state * 6364136223846793005ULL + 1442695040888963407ULL;
            if (k == point)
                buf[len++] = '.';
            buf[len++] = (char)('0' + (state >> 33) % 10);
        }
        if ((state >> 45) & 1)
            len += (size_t)snprintf(buf + len, sizeof buf - len, "e%d",
                    (int)((state >> 20) % 81) - 40);
        buf[len] = '\0';
        agree(buf);
    }
}
END_TEST

/* Load the demo; fill the bodies' masses and inertias and the joints'
 * placements into v (up to cap values); returns how many. */
static size_t demo_values(double *v, size_t cap)
{
    rigmat_options opt = rigmat_options_default();
    rigmat_diags d;
    rigmat_model *m = NULL;
    size_t n = 0, i;

    opt.catalog_dir = "../catalog";
    rigmat_diags_init(&d);
    ck_assert_int_eq(rigmat_model_load("../examples/balancer.yaml", NULL, 0, &opt, &m, &d),
            RIGMAT_OK);
    for (i = 0; i < m->nbodies && n + 2 <= cap; i++) {
        v[n++] = m->bodies[i].mass_kg;
        v[n++] = m->bodies[i].inertia_kgm2;
    }
    for (i = 0; i < m->njoints && n + 2 <= cap; i++) {
        v[n++] = m->joints[i].at_m[0];
        v[n++] = m->joints[i].at_m[1];
    }
    for (i = 0; i < m->nmotors && n + 2 <= cap; i++) {
        v[n++] = m->motors[i].resistance_ohm;
        v[n++] = m->motors[i].gear_ratio;
    }
    rigmat_model_free(m);
    rigmat_diags_release(&d);
    return n;
}

START_TEST(test_comma_locale)
{
    double before[64], after[64];
    size_t nb, na, i;
    rigmat_error err;
    double kg = 0.0;
    char *end;

    nb = demo_values(before, 64);
    if (setlocale(LC_NUMERIC, COMMA_LOCALE) == NULL) {
        fprintf(stderr, "check_locale: SKIPPED the comma-decimal case: locale %s is not "
                "available (tests/locale.sh generates it as root with the 'locales' "
                "package)\n", COMMA_LOCALE);
        return;
    }
    /* The locale must really bite, or this case proves nothing. */
    ck_assert_str_eq(localeconv()->decimal_point, ",");
    ck_assert(strtod("0.8", &end) == 0.0 && *end == '.');

    memset(&err, 0, sizeof err);
    ck_assert_int_eq(rigmat_units_expect("0.8 kg", RIGMAT_Q_MASS, &kg, &err), RIGMAT_OK);
    ck_assert(same_bits(kg, 0.8));
    /* 21 significant digits: the general path, under uselocale("C") */
    ck_assert_int_eq(rigmat_units_expect("0.800000000000000000001 kg", RIGMAT_Q_MASS, &kg, &err),
            RIGMAT_OK);
    ck_assert(same_bits(kg, 0.8));
    ck_assert(same_bits(rigmat_strtod_c("1.25e-30", NULL), 1.25e-30));
    /* "0,8" is not a number in a model file, whatever the locale */
    ck_assert_int_ne(rigmat_units_expect("0,8 kg", RIGMAT_Q_MASS, &kg, &err), RIGMAT_OK);

    na = demo_values(after, 64);
    setlocale(LC_NUMERIC, "C");
    ck_assert_uint_eq(na, nb);
    ck_assert_uint_gt(nb, 4);
    for (i = 0; i < nb; i++)
        ck_assert_msg(same_bits(before[i], after[i]), "value %zu: %.17g in C, %.17g in %s", i,
                before[i], after[i], COMMA_LOCALE);
}
END_TEST

Suite *locale_suite(void);
Suite *locale_suite(void)
{
    Suite *s = suite_create("locale");
    TCase *tc = tcase_create("numbers");

    tcase_add_test(tc, test_strtod_c_cases);
    tcase_add_test(tc, test_strtod_c_random);
    tcase_add_test(tc, test_comma_locale);
    suite_add_tcase(s, tc);
    return s;
}
