/* reentrant.c - strtod in the "C" locale and the XSI strerror_r (see
 * reentrant.h).
 *
 * This file must not define _GNU_SOURCE: under it glibc's <string.h>
 * declares the GNU strerror_r, which returns a char * and may leave buf
 * untouched.  The Makefile's -D_POSIX_C_SOURCE=200809L selects the XSI
 * form, int strerror_r(int, char *, size_t), which always fills buf.
 */
#include "reentrant.h"

#include <errno.h>
#include <locale.h>
#include <stdint.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

#if defined(_GNU_SOURCE)
#error "reentrant.c needs the XSI strerror_r: do not define _GNU_SOURCE here"
#endif

/* 10^0 .. 10^22: every one is exactly representable in binary64 (5^22 <
 * 2^53), so m * 10^k and m / 10^k for an integer m < 2^53 are a single
 * correctly rounded operation: the exact case of W. D. Clinger, "How to
 * read floating point numbers accurately", PLDI 1990, section 5. */
static const double pow10_exact[23] = {
    1e0, 1e1, 1e2, 1e3, 1e4, 1e5, 1e6, 1e7, 1e8, 1e9, 1e10, 1e11,
    1e12, 1e13, 1e14, 1e15, 1e16, 1e17, 1e18, 1e19, 1e20, 1e21, 1e22
};

#define MANTISSA_LIMIT 9007199254740992ULL /* 2^53 */

static int is_digit(char c)
{
    return c >= '0' && c <= '9';
}

/* The exact case: [+-] digits [. digits] [(e|E) [+-] digits], at most 19
 * significant digits with a value below 2^53 and |exponent| <= 22 after
 * the fraction is folded in.  Returns 1 and fills *v, *used on success; 0
 * when the text needs the general conversion (leading space, hex, inf,
 * nan, too many digits, a large exponent). */
static int parse_exact(const char *s, double *v, size_t *used)
{
    const char *p = s;
    unsigned long long m = 0;
    int neg = 0, digits = 0, sig = 0, frac = 0;
    long exp10 = 0;

    if (*p == '+' || *p == '-')
        neg = *p++ == '-';
    if (p[0] == '0' && (p[1] == 'x' || p[1] == 'X'))
        return 0; /* hexadecimal */
    for (; is_digit(*p); p++, digits++) {
        if (m == 0 && *p == '0')
            continue; /* leading zeros are not significant */
        if (++sig > 19)
            return 0;
        m = m * 10u + (unsigned)(*p - '0');
    }
    if (*p == '.') {
        p++;
        for (; is_digit(*p); p++, digits++) {
            frac++;
            if (m == 0 && *p == '0')
                continue;
            if (++sig > 19)
                return 0;
            m = m * 10u + (unsigned)(*p - '0');
        }
    }
    if (digits == 0)
        return 0;
    if (*p == 'e' || *p == 'E') {
        const char *q = p + 1;
        int eneg = 0;
        long e = 0;
        if (*q == '+' || *q == '-')
            eneg = *q++ == '-';
        if (is_digit(*q)) {
            for (; is_digit(*q); q++) {
                if (e > 1000)
                    return 0; /* far outside the exact range */
                e = e * 10 + (*q - '0');
            }
            exp10 = eneg ? -e : e;
            p = q;
        }
    }
    exp10 -= frac;
    if (m >= MANTISSA_LIMIT)
        return 0;
    if (m == 0)
        *v = 0.0;
    else if (exp10 < -22 || exp10 > 22)
        return 0;
    else if (exp10 < 0)
        *v = (double)m / pow10_exact[-exp10];
    else
        *v = (double)m * pow10_exact[exp10];
    if (neg)
        *v = -*v;
    *used = (size_t)(p - s);
    return 1;
}

double rigmat_strtod_c(const char *s, char **end)
{
    double v;
    size_t used;
    locale_t c, old;

    if (parse_exact(s, &v, &used)) {
        if (end != NULL)
            *end = (char *)(uintptr_t)(s + used); /* strtod's contract */
        return v;
    }
    /* The "C" locale object: in glibc a static object, no allocation. */
    c = newlocale(LC_NUMERIC_MASK, "C", (locale_t)0);
    if (c == (locale_t)0) {
        /* Cannot switch: refuse rather than misread a decimal point. */
        if (end != NULL)
            *end = (char *)(uintptr_t)s;
        errno = ENOMEM;
        return 0.0;
    }
    old = uselocale(c);
    v = strtod(s, end);
    uselocale(old);
    freelocale(c);
    return v;
}

const char *rigmat_strerror(int errnum, char *buf, size_t len)
{
    if (len == 0)
        return buf;
    buf[0] = '\0';
    if (strerror_r(errnum, buf, len) != 0 || buf[0] == '\0')
        snprintf(buf, len, "error %d", errnum);
    return buf;
}
