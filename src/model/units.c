/* units.c - parse quantities with units and check them against the kind a
 * field expects.
 *
 * Method: a recursive-descent parser over the grammar in units.h.  Values
 * are accumulated in SI as doubles and dimensions as exponents counted in
 * halves (so sqrt(Hz) is exact); every step checks the value stays finite and
 * non-zero and the exponents stay within LIMIT_HALF, so no input can
 * overflow the signed char of rigmat_dim.
 *
 * Resolution of a symbol: the whole symbol is looked up first, then an SI
 * prefix followed by a unit that takes prefixes.  That order settles the
 * ambiguous cases: `m` is the metre, `min` the minute (not a milli-inch),
 * `mm` the millimetre, `ms` the millisecond, `h` the hour (hecto is not
 * offered), `H` the henry.  Run-together products such as `Nm` are refused
 * with the hint "write N*m": a product is always written with '*' (or a
 * space), so that `mN` (millinewton) and `Nm` can never be confused.
 *
 * Hostile input: the text is read up to its NUL and at most MAX_TEXT bytes;
 * parentheses and sqrt nest at most MAX_DEPTH deep; exponents are at most
 * MAX_POWER; hints compare the unknown symbol with a fixed table, so the
 * work is bounded by a constant times the length of the text.  Nothing is
 * allocated.
 *
 * Conversion factors: NIST SP 811 (2008), Appendix B, and the exact
 * definitions listed in units.h.
 */
#include "units.h"
#include "reentrant.h"

#include <ctype.h>
#include <errno.h>
#include <float.h>
#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

/* M_PI is not part of C99; 2*pi is needed exactly as a double. */
#define PI 3.14159265358979323846
/* Standard acceleration of gravity, NIST SP 811 (2008), B.8: exact. */
#define G0_M_S2 9.80665
/* The avoirdupois pound, NIST SP 811 (2008), B.8: exact. */
#define LB_KG 0.45359237

#define MAX_TEXT 256  /* bytes of a quantity's text; a YAML scalar for one value is far shorter */
#define MAX_DEPTH 16  /* nesting of parentheses and sqrt( */
#define MAX_POWER 12  /* largest |exponent| after '^' */
#define MAX_SYMBOL 31 /* bytes of one unit symbol */
#define LIMIT_HALF 60 /* largest |exponent| in halves: m^30 */
#define MAX_SEEN 16   /* symbols remembered for the mass/force hint */

/* ------------------------------------------------------------ the tables */

enum { M = RIGMAT_DIM_MASS, L = RIGMAT_DIM_LENGTH, T = RIGMAT_DIM_TIME, I = RIGMAT_DIM_CURRENT,
    AN = RIGMAT_DIM_ANGLE, CY = RIGMAT_DIM_CYCLE };

/* Weight family, for the hint that turns kg*cm into kgf*cm and back;
 * FAM_NONE_HINT also keeps a unit's prefixed forms out of "did you mean". */
enum { FAM_NONE = 0, FAM_MASS, FAM_WEIGHT, FAM_NONE_HINT };

typedef struct unit_def {
    const char *name;
    double si;                     /* the value of one of it in SI */
    signed char half[RIGMAT_NDIM]; /* M L T I angle cycle, in halves */
    unsigned char prefixable;
    unsigned char family;
} unit_def;

/* Order matters only for hints: the first of equally near names is
 * suggested, so the common ones come first. */
static const unit_def units[] = {
    { "g", 1e-3, { 2, 0, 0, 0, 0, 0 }, 1, FAM_MASS },
    /* NIST SP 811 (2008), B.8: pound (avoirdupois) = 0.45359237 kg exactly */
    { "lb", LB_KG, { 2, 0, 0, 0, 0, 0 }, 0, FAM_MASS },
    /* an ounce (avoirdupois) is 1/16 lb by definition */
    { "oz", LB_KG / 16.0, { 2, 0, 0, 0, 0, 0 }, 0, FAM_MASS },
    { "m", 1.0, { 0, 2, 0, 0, 0, 0 }, 1, FAM_NONE },
    /* NIST SP 811 (2008), B.8: inch = 0.0254 m, foot = 0.3048 m exactly */
    { "in", 0.0254, { 0, 2, 0, 0, 0, 0 }, 0, FAM_NONE },
    { "ft", 0.3048, { 0, 2, 0, 0, 0, 0 }, 0, FAM_NONE },
    { "s", 1.0, { 0, 0, 2, 0, 0, 0 }, 1, FAM_NONE },
    { "min", 60.0, { 0, 0, 2, 0, 0, 0 }, 0, FAM_NONE },
    { "h", 3600.0, { 0, 0, 2, 0, 0, 0 }, 0, FAM_NONE },
    { "A", 1.0, { 0, 0, 0, 2, 0, 0 }, 1, FAM_NONE },
    { "rad", 1.0, { 0, 0, 0, 0, 2, 0 }, 1, FAM_NONE },
    { "deg", PI / 180.0, { 0, 0, 0, 0, 2, 0 }, 0, FAM_NONE },
    { "\xc2\xb0", PI / 180.0, { 0, 0, 0, 0, 2, 0 }, 0, FAM_NONE }, /* degree sign */
    { "rev", 2.0 * PI, { 0, 0, 0, 0, 2, 0 }, 0, FAM_NONE },
    { "turn", 2.0 * PI, { 0, 0, 0, 0, 2, 0 }, 0, FAM_NONE },
    { "cycle", 1.0, { 0, 0, 0, 0, 0, 2 }, 0, FAM_NONE },
    { "Hz", 1.0, { 0, 0, -2, 0, 0, 2 }, 1, FAM_NONE },
    /* revolution per minute: an angle per time, 2*pi/60 rad/s exactly */
    { "rpm", 2.0 * PI / 60.0, { 0, 0, -2, 0, 2, 0 }, 1, FAM_NONE },
    { "N", 1.0, { 2, 2, -4, 0, 0, 0 }, 1, FAM_NONE },
    /* NIST SP 811 (2008), B.8: kilogram-force = 9.80665 N exactly; the
     * others are the same weight of their mass unit */
    { "kgf", G0_M_S2, { 2, 2, -4, 0, 0, 0 }, 0, FAM_WEIGHT },
    { "gf", 1e-3 * G0_M_S2, { 2, 2, -4, 0, 0, 0 }, 1, FAM_WEIGHT },
    { "lbf", LB_KG * G0_M_S2, { 2, 2, -4, 0, 0, 0 }, 0, FAM_WEIGHT },
    { "ozf", LB_KG / 16.0 * G0_M_S2, { 2, 2, -4, 0, 0, 0 }, 0, FAM_WEIGHT },
    { "g0", G0_M_S2, { 0, 2, -4, 0, 0, 0 }, 1, FAM_NONE_HINT },
    { "V", 1.0, { 2, 4, -6, -2, 0, 0 }, 1, FAM_NONE },
    { "ohm", 1.0, { 2, 4, -6, -4, 0, 0 }, 1, FAM_NONE },
    { "Ohm", 1.0, { 2, 4, -6, -4, 0, 0 }, 1, FAM_NONE },
    { "\xce\xa9", 1.0, { 2, 4, -6, -4, 0, 0 }, 1, FAM_NONE }, /* Greek capital omega */
    { "H", 1.0, { 2, 4, -4, -4, 0, 0 }, 1, FAM_NONE },
    { "W", 1.0, { 2, 4, -6, 0, 0, 0 }, 1, FAM_NONE },
    { "J", 1.0, { 2, 4, -4, 0, 0, 0 }, 1, FAM_NONE },
    { "%", 0.01, { 0, 0, 0, 0, 0, 0 }, 0, FAM_NONE },
};
#define NUNITS (sizeof units / sizeof units[0])

typedef struct prefix_def {
    const char *text;
    double factor;
} prefix_def;

/* No hecto (h is the hour) and no deca (two letters, and unused in rigs). */
static const prefix_def prefixes[] = {
    { "k", 1e3 }, { "m", 1e-3 }, { "u", 1e-6 }, { "\xc2\xb5", 1e-6 } /* micro sign */,
    { "\xce\xbc", 1e-6 } /* Greek small mu */, { "n", 1e-9 }, { "c", 1e-2 }, { "M", 1e6 },
    { "G", 1e9 }, { "d", 1e-1 }, { "p", 1e-12 },
};
#define NPREFIXES (sizeof prefixes / sizeof prefixes[0])

typedef struct kind_def {
    const char *words;
    const char *symbol;
    signed char half[RIGMAT_NDIM];
} kind_def;

/* Indexed by rigmat_kind. */
static const kind_def kinds[RIGMAT_Q_COUNT] = {
    { "a plain number", "1", { 0, 0, 0, 0, 0, 0 } },
    { "a mass", "kg", { 2, 0, 0, 0, 0, 0 } },
    { "a length", "m", { 0, 2, 0, 0, 0, 0 } },
    { "a time", "s", { 0, 0, 2, 0, 0, 0 } },
    { "an angle", "rad", { 0, 0, 0, 0, 2, 0 } },
    { "a frequency", "Hz", { 0, 0, -2, 0, 0, 2 } },
    { "an angular rate", "rad/s", { 0, 0, -2, 0, 2, 0 } },
    { "a velocity", "m/s", { 0, 2, -2, 0, 0, 0 } },
    { "an acceleration", "m/s^2", { 0, 2, -4, 0, 0, 0 } },
    { "an angular acceleration", "rad/s^2", { 0, 0, -4, 0, 2, 0 } },
    { "a force", "N", { 2, 2, -4, 0, 0, 0 } },
    { "a torque", "N*m", { 2, 4, -4, 0, 0, 0 } },
    { "a moment of inertia", "kg*m^2", { 2, 4, 0, 0, 0, 0 } },
    { "a voltage", "V", { 2, 4, -6, -2, 0, 0 } },
    { "a current", "A", { 0, 0, 0, 2, 0, 0 } },
    { "a resistance", "ohm", { 2, 4, -6, -4, 0, 0 } },
    { "an inductance", "H", { 2, 4, -4, -4, 0, 0 } },
    { "a torque constant", "N*m/A", { 2, 4, -4, -2, 0, 0 } },
    { "a back-emf constant", "V*s/rad", { 2, 4, -4, -2, -2, 0 } },
    { "a linear stiffness", "N/m", { 2, 0, -4, 0, 0, 0 } },
    { "a rotational stiffness", "N*m/rad", { 2, 4, -4, 0, -2, 0 } },
    { "a linear damping", "N*s/m", { 2, 0, -2, 0, 0, 0 } },
    { "a rotational damping", "N*m*s/rad", { 2, 4, -2, 0, -2, 0 } },
    { "a lead (length per turn)", "m/rev", { 0, 2, 0, 0, -2, 0 } },
};

/* -------------------------------------------------------- the dimension */

/* Internal quantity: int exponents, so a check can run before narrowing. */
typedef struct qty {
    double v;
    int half[RIGMAT_NDIM];
} qty;

/* A symbol met while parsing, for hints that rewrite the user's text. */
typedef struct seen_sym {
    size_t pos, len;
    unsigned char family;
} seen_sym;

typedef struct parser {
    const char *text;
    size_t len; /* bytes, <= MAX_TEXT */
    size_t pos;
    rigmat_error *err;
    seen_sym seen[MAX_SEEN];
    size_t nseen;
} parser;

static rigmat_dim dim_from_half(const signed char *half)
{
    rigmat_dim d;
    memcpy(d.half, half, sizeof d.half);
    return d;
}

static rigmat_dim dim_of_qty(const qty *q)
{
    rigmat_dim d;
    size_t i;

    for (i = 0; i < RIGMAT_NDIM; i++)
        d.half[i] = (signed char)q->half[i];
    return d;
}

static rigmat_dim dim_scaled(rigmat_dim a, int sign)
{
    size_t i;

    for (i = 0; i < RIGMAT_NDIM; i++)
        a.half[i] = (signed char)(a.half[i] * sign);
    return a;
}

int rigmat_dim_equal(rigmat_dim a, rigmat_dim b)
{
    return memcmp(a.half, b.half, sizeof a.half) == 0;
}

rigmat_dim rigmat_dim_mul(rigmat_dim a, rigmat_dim b)
{
    size_t i;

    for (i = 0; i < RIGMAT_NDIM; i++)
        a.half[i] = (signed char)(a.half[i] + b.half[i]);
    return a;
}

rigmat_dim rigmat_dim_div(rigmat_dim a, rigmat_dim b)
{
    size_t i;

    for (i = 0; i < RIGMAT_NDIM; i++)
        a.half[i] = (signed char)(a.half[i] - b.half[i]);
    return a;
}

rigmat_dim rigmat_units_dim(rigmat_kind kind)
{
    static const signed char none[RIGMAT_NDIM] = { 0, 0, 0, 0, 0, 0 };

    if ((unsigned)kind >= RIGMAT_Q_COUNT)
        return dim_from_half(none);
    return dim_from_half(kinds[kind].half);
}

const char *rigmat_units_kind_words(rigmat_kind kind)
{
    return (unsigned)kind < RIGMAT_Q_COUNT ? kinds[kind].words : "an unknown kind";
}

const char *rigmat_units_kind_symbol(rigmat_kind kind)
{
    return (unsigned)kind < RIGMAT_Q_COUNT ? kinds[kind].symbol : "?";
}

/* The dimension of one sqrt(Hz): cycle^(1/2) s^(-1/2). */
static rigmat_dim dim_sqrt_hz(void)
{
    static const signed char h[RIGMAT_NDIM] = { 0, 0, -1, 0, 0, 1 };
    return dim_from_half(h);
}

/* ------------------------------------------------------------ formatting */

/* Append to buf (NUL-terminated, capacity len) without overflowing. */
static void append(char *buf, size_t len, const char *s)
{
    const size_t have = strlen(buf);

    if (have + 1 >= len)
        return;
    snprintf(buf + have, len - have, "%s", s);
}

/* Append "sym", "sym^2", "sqrt(sym)" or "sym^(3/2)" for |half| > 0. */
static void append_power(char *buf, size_t len, const char *sym, int half)
{
    char tmp[48];

    if (half < 0)
        half = -half;
    if (half == 2)
        snprintf(tmp, sizeof tmp, "%s", sym);
    else if (half == 1)
        snprintf(tmp, sizeof tmp, "sqrt(%s)", sym);
    else if (half % 2 == 0)
        snprintf(tmp, sizeof tmp, "%s^%d", sym, half / 2);
    else
        snprintf(tmp, sizeof tmp, "%s^(%d/2)", sym, half);
    append(buf, len, tmp);
}

/* A cycle exponent c is written as Hz^c (cycle^c s^-c), so the remaining
 * time exponent is t + c: rad/s/sqrt(Hz) rather than rad/cycle^(1/2)/s^(1/2). */
void rigmat_units_format_dim(rigmat_dim d, char *buf, size_t len)
{
    static const char *const sym[] = { "kg", "m", "s", "A", "rad", "Hz" };
    static const int order[] = { M, L, T, I, AN, CY };
    int half[RIGMAT_NDIM];
    size_t k;
    int any = 0;

    if (buf == NULL || len == 0)
        return;
    buf[0] = '\0';
    for (k = 0; k < RIGMAT_NDIM; k++)
        half[k] = d.half[k];
    half[T] += half[CY];
    for (k = 0; k < RIGMAT_NDIM; k++) {
        const int i = order[k];
        if (half[i] > 0) {
            if (any)
                append(buf, len, "*");
            append_power(buf, len, sym[i], half[i]);
            any = 1;
        }
    }
    if (!any)
        append(buf, len, "1");
    for (k = 0; k < RIGMAT_NDIM; k++) {
        const int i = order[k];
        if (half[i] < 0) {
            append(buf, len, "/");
            append_power(buf, len, sym[i], half[i]);
        }
    }
}

/* "a mass (kg)" when d is a kind, "a force per sqrt(Hz) (N/sqrt(Hz))" when
 * it is a kind's density, else the SI symbol of d. */
static void describe_dim(rigmat_dim d, char *buf, size_t len)
{
    const rigmat_dim per = dim_sqrt_hz();
    size_t k;

    for (k = 0; k < RIGMAT_Q_COUNT; k++)
        if (rigmat_dim_equal(d, dim_from_half(kinds[k].half))) {
            snprintf(buf, len, "%s (%s)", kinds[k].words, kinds[k].symbol);
            return;
        }
    for (k = 0; k < RIGMAT_Q_COUNT; k++)
        if (rigmat_dim_equal(d, rigmat_dim_div(dim_from_half(kinds[k].half), per))) {
            snprintf(buf, len, "%s per sqrt(Hz) (%s/sqrt(Hz))", kinds[k].words,
                    kinds[k].symbol);
            return;
        }
    rigmat_units_format_dim(d, buf, len);
}

/* ---------------------------------------------------------------- errors */

/* 1-based column in characters of byte offset pos: UTF-8 continuation
 * bytes do not start a character. */
static unsigned long col_of(const char *text, size_t pos)
{
    unsigned long col = 1;
    size_t i;

    for (i = 0; i < pos && text[i] != '\0'; i++)
        if (((unsigned char)text[i] & 0xc0) != 0x80)
            col++;
    return col;
}

static void set_col(rigmat_error *err, const char *text, size_t pos)
{
    if (err != NULL)
        err->where.col = col_of(text, pos);
}

/* ASCII classes, the same in every locale (<ctype.h> follows LC_CTYPE:
 * in a Latin-1 locale tolower(0xC4) is 0xE4). */
static int ascii_lower(unsigned char c)
{
    return c >= 'A' && c <= 'Z' ? c - 'A' + 'a' : c;
}

static int ascii_alpha(unsigned char c)
{
    return ascii_lower(c) >= 'a' && ascii_lower(c) <= 'z';
}

/* Describe the character at pos for a message: 'x', or "the end". */
static void describe_char(const parser *p, size_t pos, char *buf, size_t len)
{
    const unsigned char c = (unsigned char)p->text[pos];

    if (pos >= p->len)
        snprintf(buf, len, "the end");
    else if (c >= 0x20 && c < 0x7f)
        snprintf(buf, len, "'%c'", (char)c);
    else
        snprintf(buf, len, "byte 0x%02x", (unsigned)c);
}

/* --------------------------------------------------------------- lexing */

static void skip_ws(parser *p)
{
    while (p->pos < p->len && (p->text[p->pos] == ' ' || p->text[p->pos] == '\t'))
        p->pos++;
}

static int is_symbol_start(unsigned char c)
{
    return ascii_alpha(c) || c == '%' || c >= 0x80;
}

static int is_symbol_char(unsigned char c)
{
    return ascii_alpha(c) || isdigit(c) || c == '_' || c >= 0x80;
}

/* Can a term start here (for a product written with a space)? */
static int is_term_start(const parser *p)
{
    const unsigned char c = (unsigned char)p->text[p->pos];

    if (p->pos >= p->len)
        return 0;
    return is_symbol_start(c) || c == '(' ||
            (c == '1' && !isdigit((unsigned char)p->text[p->pos + 1]) &&
                    p->text[p->pos + 1] != '.');
}

/* Find a unit by exact name (n bytes at s); NULL when there is none. */
static const unit_def *find_exact(const char *s, size_t n)
{
    size_t k;

    for (k = 0; k < NUNITS; k++)
        if (strlen(units[k].name) == n && memcmp(units[k].name, s, n) == 0)
            return &units[k];
    return NULL;
}

/* Resolve a symbol: exact name first, then prefix + prefixable name. */
static const unit_def *resolve(const char *s, size_t n, double *factor)
{
    const unit_def *u = find_exact(s, n);
    size_t k;

    *factor = 1.0;
    if (u != NULL)
        return u;
    for (k = 0; k < NPREFIXES; k++) {
        const size_t pl = strlen(prefixes[k].text);
        if (pl < n && memcmp(prefixes[k].text, s, pl) == 0) {
            u = find_exact(s + pl, n - pl);
            if (u != NULL && u->prefixable) {
                *factor = prefixes[k].factor;
                return u;
            }
        }
    }
    return NULL;
}

/* Levenshtein distance of two short strings (each <= MAX_SYMBOL bytes). */
static size_t edit_distance(const char *a, size_t na, const char *b, size_t nb)
{
    size_t row[MAX_SYMBOL + 2];
    size_t i, j;

    if (na > MAX_SYMBOL || nb > MAX_SYMBOL)
        return (size_t)-1;
    for (j = 0; j <= nb; j++)
        row[j] = j;
    for (i = 1; i <= na; i++) {
        size_t diag = row[0];
        row[0] = i;
        for (j = 1; j <= nb; j++) {
            const size_t up = row[j];
            size_t best = diag + (a[i - 1] == b[j - 1] ? 0 : 1);
            if (up + 1 < best)
                best = up + 1;
            if (row[j - 1] + 1 < best)
                best = row[j - 1] + 1;
            row[j] = best;
            diag = up;
        }
    }
    return row[nb];
}

/* Does a case-blind comparison match? */
static int same_fold(const char *a, size_t na, const char *b)
{
    size_t i;

    if (strlen(b) != na)
        return 0;
    for (i = 0; i < na; i++)
        if (ascii_lower((unsigned char)a[i]) != ascii_lower((unsigned char)b[i]))
            return 0;
    return 1;
}

/* Offer the nearest names: up to three at the smallest distance, which must
 * be small for the length (1 up to four bytes, else 2).  The candidates are
 * every name and every prefix + prefixable name. */
static void hint_nearest(rigmat_error *err, const char *s, size_t n)
{
    char cand[3][MAX_SYMBOL + 8];
    size_t ncand = 0, best = n <= 4 ? 1 : 2;
    size_t k, j;

    for (k = 0; k < NUNITS; k++) {
        if (same_fold(s, n, units[k].name)) {
            rigmat_error_hint(err, "did you mean %s? (unit symbols are case-sensitive)",
                    units[k].name);
            return;
        }
    }
    for (j = 0; j <= NPREFIXES; j++) {
        for (k = 0; k < NUNITS; k++) {
            char name[MAX_SYMBOL + 8];
            size_t d;
            /* kg0 and the like are valid but never the likely intent */
            if (j > 0 && (!units[k].prefixable || units[k].family == FAM_NONE_HINT))
                continue;
            snprintf(name, sizeof name, "%s%s", j > 0 ? prefixes[j - 1].text : "",
                    units[k].name);
            d = edit_distance(s, n, name, strlen(name));
            if (d < best) {
                best = d;
                ncand = 0;
            }
            if (d == best && ncand < 3) {
                size_t c;
                for (c = 0; c < ncand && strcmp(cand[c], name) != 0; c++)
                    ;
                if (c == ncand)
                    memcpy(cand[ncand++], name, sizeof name);
            }
        }
    }
    if (ncand == 1)
        rigmat_error_hint(err, "did you mean %s?", cand[0]);
    else if (ncand == 2)
        rigmat_error_hint(err, "did you mean %s or %s?", cand[0], cand[1]);
    else if (ncand == 3)
        rigmat_error_hint(err, "did you mean %s, %s or %s?", cand[0], cand[1], cand[2]);
    else
        rigmat_error_hint(err, "known units: kg g lb oz, m in ft, s min h, A, rad deg rev, Hz, "
                "rpm, N kgf gf lbf ozf, V ohm H W J, g0, %%; SI prefixes p n u m c d k M G");
}

/* The hint for an unknown symbol: a run-together product (Nm: write N*m),
 * a power without '^' (m2: write m^2), else the nearest known names. */
static void hint_unknown(rigmat_error *err, const char *s, size_t n)
{
    const unit_def *a, *b;
    double f;
    size_t i;

    if (n > MAX_SYMBOL)
        return;
    /* trailing digits after a known unit: a power written without '^' */
    for (i = n; i > 0 && isdigit((unsigned char)s[i - 1]); i--)
        ;
    if (i > 0 && i < n && resolve(s, i, &f) != NULL) {
        rigmat_error_hint(err, "write %.*s^%.*s for a power", (int)i, s, (int)(n - i), s + i);
        return;
    }
    /* a plural: rads, degs (but offer the product too: Ns is N*s) */
    if (n > 1 && s[n - 1] == 's' && resolve(s, n - 1, &f) != NULL) {
        rigmat_error_hint(err, "did you mean %.*s? (a product of units takes '*': %.*s*s)",
                (int)(n - 1), s, (int)(n - 1), s);
        return;
    }
    /* two known symbols run together; a product of two units of the same
     * dimension (kg g) is more likely a typing slip, left to the nearest-name
     * hint */
    for (i = 1; i < n; i++) {
        a = resolve(s, i, &f);
        b = a != NULL ? resolve(s + i, n - i, &f) : NULL;
        if (a != NULL && b != NULL && memcmp(a->half, b->half, sizeof a->half) != 0) {
            rigmat_error_hint(err, "write %.*s*%.*s: a product of units takes '*'", (int)i, s,
                    (int)(n - i), s + i);
            return;
        }
    }
    hint_nearest(err, s, n);
}

/* --------------------------------------------------------------- parsing */

static rigmat_status parse_unit(parser *p, qty *out, unsigned depth);

static void qty_one(qty *q)
{
    memset(q, 0, sizeof *q);
    q->v = 1.0;
}

/* Combine: out = out * b^sign; checks the range. at is where b starts. */
static rigmat_status qty_combine(parser *p, qty *out, const qty *b, int sign, size_t at)
{
    size_t i;
    int ok = 1;

    out->v = sign > 0 ? out->v * b->v : out->v / b->v;
    for (i = 0; i < RIGMAT_NDIM; i++) {
        out->half[i] += sign * b->half[i];
        if (out->half[i] > LIMIT_HALF || out->half[i] < -LIMIT_HALF)
            ok = 0;
    }
    if (!ok) {
        RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "unit exponent out of range (at most %d)",
                LIMIT_HALF / 2);
        set_col(p->err, p->text, at);
        return RIGMAT_EMODEL;
    }
    if (!isfinite(out->v) || out->v == 0.0) {
        RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "unit scale out of range");
        set_col(p->err, p->text, at);
        return RIGMAT_EMODEL;
    }
    return RIGMAT_OK;
}

/* Record a symbol for the weight hints; silently full past MAX_SEEN. */
static void remember(parser *p, size_t pos, size_t len, unsigned char family)
{
    if (p->nseen < MAX_SEEN) {
        p->seen[p->nseen].pos = pos;
        p->seen[p->nseen].len = len;
        p->seen[p->nseen].family = family;
        p->nseen++;
    }
}

/* symbol: a run of symbol characters resolved against the table. */
static rigmat_status parse_symbol(parser *p, qty *out)
{
    const size_t start = p->pos;
    const unit_def *u;
    double f;
    size_t n, i;

    if (p->text[p->pos] == '%')
        p->pos++;
    else
        while (p->pos < p->len && is_symbol_char((unsigned char)p->text[p->pos]))
            p->pos++;
    n = p->pos - start;
    u = n <= MAX_SYMBOL ? resolve(p->text + start, n, &f) : NULL;
    if (u == NULL) {
        if (n > MAX_SYMBOL)
            RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "unit name too long (%zu bytes, at most %d)", n,
                    MAX_SYMBOL);
        else if (n == 4 && memcmp(p->text + start, "sqrt", 4) == 0)
            RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "sqrt needs parentheses: sqrt(...)");
        else
            RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "unknown unit '%.*s'", (int)n, p->text + start);
        if (n <= MAX_SYMBOL && !(n == 4 && memcmp(p->text + start, "sqrt", 4) == 0))
            hint_unknown(p->err, p->text + start, n);
        set_col(p->err, p->text, start);
        return RIGMAT_EMODEL;
    }
    out->v = u->si * f;
    for (i = 0; i < RIGMAT_NDIM; i++)
        out->half[i] = u->half[i];
    remember(p, start, n, u->family);
    return RIGMAT_OK;
}

/* '(' unit ')' after the opening parenthesis at open; also for sqrt(. */
static rigmat_status parse_group(parser *p, qty *out, unsigned depth, size_t open)
{
    rigmat_status rc;

    if (depth + 1 > MAX_DEPTH) {
        RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "parentheses nested too deeply (at most %d)",
                MAX_DEPTH);
        set_col(p->err, p->text, open);
        return RIGMAT_EMODEL;
    }
    skip_ws(p);
    rc = parse_unit(p, out, depth + 1);
    if (rc != RIGMAT_OK)
        return rc;
    skip_ws(p);
    if (p->pos >= p->len || p->text[p->pos] != ')') {
        char what[24];
        describe_char(p, p->pos, what, sizeof what);
        RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "unbalanced '(': expected ')' but found %s", what);
        set_col(p->err, p->text, open);
        return RIGMAT_EMODEL;
    }
    p->pos++;
    return RIGMAT_OK;
}

/* factor := symbol | 'sqrt' '(' unit ')' | '(' unit ')' | '1' */
static rigmat_status parse_factor(parser *p, qty *out, unsigned depth)
{
    const size_t start = p->pos;
    const char c = p->text[p->pos];
    char what[24];

    if (p->pos < p->len && c == '(') {
        p->pos++;
        return parse_group(p, out, depth, start);
    }
    if (p->len - p->pos >= 4 && memcmp(p->text + p->pos, "sqrt", 4) == 0) {
        size_t k = p->pos + 4;
        while (k < p->len && (p->text[k] == ' ' || p->text[k] == '\t'))
            k++;
        if (k < p->len && p->text[k] == '(') {
            rigmat_status rc;
            size_t i;
            p->pos = k + 1;
            rc = parse_group(p, out, depth, start);
            if (rc != RIGMAT_OK)
                return rc;
            for (i = 0; i < RIGMAT_NDIM; i++)
                if (out->half[i] % 2 != 0) {
                    RIGMAT_FAIL(p->err, RIGMAT_EMODEL,
                            "sqrt of a half power: only whole and half powers are supported");
                    set_col(p->err, p->text, start);
                    return RIGMAT_EMODEL;
                }
            for (i = 0; i < RIGMAT_NDIM; i++)
                out->half[i] /= 2;
            out->v = sqrt(out->v);
            return RIGMAT_OK;
        }
    }
    if (p->pos < p->len && is_symbol_start((unsigned char)c))
        return parse_symbol(p, out);
    if (p->pos < p->len && c == '1' && !isdigit((unsigned char)p->text[p->pos + 1]) &&
            p->text[p->pos + 1] != '.') {
        p->pos++;
        qty_one(out);
        return RIGMAT_OK;
    }
    describe_char(p, p->pos, what, sizeof what);
    if (p->pos < p->len && (isdigit((unsigned char)c) || c == '.'))
        RIGMAT_FAIL(p->err, RIGMAT_EMODEL,
                "expected a unit, found a number (only 1 may stand in a unit, as in 1/s)");
    else
        RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "expected a unit, found %s", what);
    set_col(p->err, p->text, start);
    return RIGMAT_EMODEL;
}

/* exponent := ['-'|'+'] integer ['/' '2' | '.5' | '.0'], optionally in
 * parentheses.  Returns it in halves through *half. */
static rigmat_status parse_exponent(parser *p, int *half)
{
    const size_t start = p->pos;
    int paren = 0, neg = 0, n = 0, h, digits = 0;

    skip_ws(p);
    if (p->pos < p->len && p->text[p->pos] == '(') {
        paren = 1;
        p->pos++;
        skip_ws(p);
    }
    if (p->pos < p->len && (p->text[p->pos] == '-' || p->text[p->pos] == '+')) {
        neg = p->text[p->pos] == '-';
        p->pos++;
    }
    while (p->pos < p->len && isdigit((unsigned char)p->text[p->pos])) {
        if (n <= 10 * MAX_POWER)
            n = n * 10 + (p->text[p->pos] - '0');
        p->pos++;
        digits++;
    }
    if (digits == 0) {
        RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "expected an exponent after '^'");
        set_col(p->err, p->text, p->pos);
        return RIGMAT_EMODEL;
    }
    h = 2 * n;
    if (p->pos + 1 < p->len && p->text[p->pos] == '/' && p->text[p->pos + 1] == '2' &&
            !isdigit((unsigned char)p->text[p->pos + 2])) {
        h = n;
        p->pos += 2;
    } else if (p->pos + 1 < p->len && p->text[p->pos] == '.' &&
            (p->text[p->pos + 1] == '5' || p->text[p->pos + 1] == '0') &&
            !isdigit((unsigned char)p->text[p->pos + 2])) {
        h += p->text[p->pos + 1] == '5';
        p->pos += 2;
    }
    if (paren) {
        skip_ws(p);
        if (p->pos >= p->len || p->text[p->pos] != ')') {
            RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "unbalanced '(' in the exponent");
            set_col(p->err, p->text, start);
            return RIGMAT_EMODEL;
        }
        p->pos++;
    }
    if (h > 2 * MAX_POWER) {
        RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "exponent too large (at most %d)", MAX_POWER);
        set_col(p->err, p->text, start);
        return RIGMAT_EMODEL;
    }
    *half = neg ? -h : h;
    return RIGMAT_OK;
}

/* term := factor [ '^' exponent ] */
static rigmat_status parse_term(parser *p, qty *out, unsigned depth)
{
    const size_t start = p->pos;
    rigmat_status rc;
    int h;
    size_t i, after;

    rc = parse_factor(p, out, depth);
    if (rc != RIGMAT_OK)
        return rc;
    after = p->pos;
    skip_ws(p);
    if (p->pos >= p->len || p->text[p->pos] != '^') {
        p->pos = after; /* the caller must see the blank: "N m" is a product */
        return RIGMAT_OK;
    }
    p->pos++;
    rc = parse_exponent(p, &h);
    if (rc != RIGMAT_OK)
        return rc;
    for (i = 0; i < RIGMAT_NDIM; i++) {
        if ((out->half[i] * h) % 2 != 0) {
            RIGMAT_FAIL(p->err, RIGMAT_EMODEL,
                    "a half power of a half power: only whole and half powers are supported");
            set_col(p->err, p->text, start);
            return RIGMAT_EMODEL;
        }
        out->half[i] = out->half[i] * h / 2;
        if (out->half[i] > LIMIT_HALF || out->half[i] < -LIMIT_HALF) {
            RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "unit exponent out of range (at most %d)",
                    LIMIT_HALF / 2);
            set_col(p->err, p->text, start);
            return RIGMAT_EMODEL;
        }
    }
    out->v = pow(out->v, 0.5 * h);
    if (!isfinite(out->v) || out->v == 0.0) {
        RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "unit scale out of range");
        set_col(p->err, p->text, start);
        return RIGMAT_EMODEL;
    }
    return RIGMAT_OK;
}

/* unit := term { ('*' | '/' | ' ') term }, left to right.  out already
 * holds what came before when called with lead set (a unit after a number
 * may start with '/': "5/s"). */
static rigmat_status parse_unit_from(parser *p, qty *out, unsigned depth, int lead)
{
    rigmat_status rc;
    qty t;

    if (!lead) {
        rc = parse_term(p, out, depth);
        if (rc != RIGMAT_OK)
            return rc;
    }
    for (;;) {
        const size_t before = p->pos;
        int sign;
        size_t op;
        skip_ws(p);
        if (p->pos >= p->len)
            return RIGMAT_OK;
        op = p->pos;
        if (p->text[p->pos] == '*' || p->text[p->pos] == '/') {
            sign = p->text[p->pos] == '*' ? 1 : -1;
            p->pos++;
            skip_ws(p);
            if (p->pos >= p->len) {
                RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "'%c' is not followed by a unit",
                        p->text[op]);
                set_col(p->err, p->text, op);
                return RIGMAT_EMODEL;
            }
        } else if (p->pos > before && is_term_start(p)) {
            sign = 1; /* a product written with a space: "N m" */
        } else {
            return RIGMAT_OK;
        }
        rc = parse_term(p, &t, depth);
        if (rc != RIGMAT_OK)
            return rc;
        rc = qty_combine(p, out, &t, sign, op);
        if (rc != RIGMAT_OK)
            return rc;
    }
}

static rigmat_status parse_unit(parser *p, qty *out, unsigned depth)
{
    return parse_unit_from(p, out, depth, 0);
}

/* Case-blind prefix test of a NUL-terminated word. */
static int starts_fold(const char *s, size_t n, const char *word)
{
    size_t i;

    for (i = 0; word[i] != '\0'; i++)
        if (i >= n || ascii_lower((unsigned char)s[i]) != word[i])
            return 0;
    return 1;
}

/* number := ['+'|'-'] digits ['.' digits] [('e'|'E') ['+'|'-'] digits].
 * Scanned by hand, then converted from a bounded copy by the locale-blind
 * rigmat_strtod_c (reentrant.h), so the conversion never sees
 * hex, "inf" or "nan", and never reads beyond the number. */
static rigmat_status parse_number(parser *p, double *value)
{
    const size_t start = p->pos;
    size_t i = p->pos, mant = 0;
    char buf[72];
    char *end;
    double v;

    if (i < p->len && (p->text[i] == '+' || p->text[i] == '-'))
        i++;
    while (i < p->len && isdigit((unsigned char)p->text[i])) {
        i++;
        mant++;
    }
    if (i < p->len && p->text[i] == '.') {
        i++;
        while (i < p->len && isdigit((unsigned char)p->text[i])) {
            i++;
            mant++;
        }
    }
    if (mant == 0) {
        RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "expected a number");
        set_col(p->err, p->text, start);
        return RIGMAT_EMODEL;
    }
    if (i < p->len && (p->text[i] == 'e' || p->text[i] == 'E')) {
        size_t k = i + 1;
        if (k < p->len && (p->text[k] == '+' || p->text[k] == '-'))
            k++;
        if (k < p->len && isdigit((unsigned char)p->text[k])) {
            while (k < p->len && isdigit((unsigned char)p->text[k]))
                k++;
            i = k;
        }
    }
    if (i - start >= sizeof buf) {
        RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "number too long (%zu characters, at most %zu)",
                i - start, sizeof buf - 1);
        set_col(p->err, p->text, start);
        return RIGMAT_EMODEL;
    }
    memcpy(buf, p->text + start, i - start);
    buf[i - start] = '\0';
    errno = 0;
    v = rigmat_strtod_c(buf, &end);
    if (end == buf && errno == ENOMEM)
        return RIGMAT_FAIL(p->err, RIGMAT_ENOMEM, "out of memory");
    /* overflow, and underflow to zero or a subnormal (1e-400 kg would be a
     * massless body), are both out of range */
    if (!isfinite(v) || errno == ERANGE || (v != 0.0 && fabs(v) < DBL_MIN)) {
        RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "number out of range: %s", buf);
        set_col(p->err, p->text, start);
        return RIGMAT_EMODEL;
    }
    p->pos = i;
    *value = v;
    return RIGMAT_OK;
}

/* The whole text: [number] [unit].  has_unit and unit_pos say whether a
 * unit was written and where it starts. */
static rigmat_status parse_all(parser *p, qty *q, int *has_unit, size_t *unit_pos)
{
    rigmat_status rc;
    double num = 1.0;
    int has_num = 0;
    size_t k;

    qty_one(q);
    *has_unit = 0;
    *unit_pos = 0;
    skip_ws(p);
    if (p->pos >= p->len) {
        RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "empty value: expected a number with a unit");
        set_col(p->err, p->text, p->pos < p->len ? p->pos : 0);
        return RIGMAT_EMODEL;
    }
    /* nan and inf (also YAML's .nan and .inf) are refused by name */
    k = p->pos;
    if (k < p->len && (p->text[k] == '+' || p->text[k] == '-'))
        k++;
    if (k < p->len && p->text[k] == '.')
        k++;
    if (starts_fold(p->text + k, p->len - k, "nan") || starts_fold(p->text + k, p->len - k, "inf")) {
        RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "not a finite number: '%s'", p->text + p->pos);
        set_col(p->err, p->text, p->pos);
        return RIGMAT_EMODEL;
    }
    k = p->pos;
    if (isdigit((unsigned char)p->text[k]) || p->text[k] == '.' || p->text[k] == '+' ||
            p->text[k] == '-') {
        rc = parse_number(p, &num);
        if (rc != RIGMAT_OK)
            return rc;
        has_num = 1;
        if (p->pos + 1 < p->len && p->text[p->pos] == ',' &&
                isdigit((unsigned char)p->text[p->pos + 1])) {
            RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "unexpected ',' in a number");
            rigmat_error_hint(p->err, "the decimal separator is '.'");
            set_col(p->err, p->text, p->pos);
            return RIGMAT_EMODEL;
        }
        skip_ws(p);
    }
    if (p->pos < p->len) {
        *unit_pos = p->pos;
        if (has_num && p->text[p->pos] == '/') {
            rc = parse_unit_from(p, q, 0, 1);
        } else {
            rc = parse_unit(p, q, 0);
        }
        if (rc != RIGMAT_OK)
            return rc;
        *has_unit = 1;
        skip_ws(p);
        if (p->pos < p->len) {
            char what[24];
            describe_char(p, p->pos, what, sizeof what);
            if (p->text[p->pos] == ')')
                RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "unbalanced ')': no '(' before it");
            else
                RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "unexpected %s after the unit", what);
            set_col(p->err, p->text, p->pos);
            return RIGMAT_EMODEL;
        }
    }
    q->v *= num;
    if (!isfinite(q->v) || (num != 0.0 && fabs(q->v) < DBL_MIN)) {
        RIGMAT_FAIL(p->err, RIGMAT_EMODEL, "value out of range once converted to SI");
        set_col(p->err, p->text, 0);
        return RIGMAT_EMODEL;
    }
    return RIGMAT_OK;
}

static rigmat_status parser_init(parser *p, const char *text, rigmat_error *err)
{
    memset(p, 0, sizeof *p);
    p->err = err;
    p->text = text;
    if (text == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "no text to parse as a quantity");
    p->len = strnlen(text, MAX_TEXT + 1);
    if (p->len > MAX_TEXT) {
        RIGMAT_FAIL(err, RIGMAT_EMODEL, "value too long (more than %d bytes)", MAX_TEXT);
        set_col(err, text, 0);
        return RIGMAT_EMODEL;
    }
    return RIGMAT_OK;
}

rigmat_status rigmat_units_parse(const char *text, rigmat_quantity *q, rigmat_error *err)
{
    parser p;
    qty r;
    int has_unit;
    size_t unit_pos;
    rigmat_status rc;

    rc = parser_init(&p, text, err);
    if (rc != RIGMAT_OK)
        return rc;
    rc = parse_all(&p, &r, &has_unit, &unit_pos);
    if (rc != RIGMAT_OK)
        return rc;
    if (q != NULL) {
        q->value = r.v;
        q->dim = dim_of_qty(&r);
    }
    return RIGMAT_OK;
}

/* ----------------------------------------------------------- expectation */

/* Rewrite the unit text, adding 'f' after each mass symbol (to_weight) or
 * dropping it from each weight symbol: "kg*cm" -> "kgf*cm". */
static int rewrite_weight(const parser *p, size_t unit_pos, int to_weight, char *buf, size_t len)
{
    size_t at = unit_pos, k, o = 0;
    int changed = 0;

    if (len == 0)
        return 0;
    for (k = 0; k <= p->nseen; k++) {
        const size_t stop = k < p->nseen ? p->seen[k].pos + p->seen[k].len : p->len;
        size_t keep = stop;
        int add = 0;
        if (k < p->nseen && p->seen[k].family == (to_weight ? FAM_MASS : FAM_WEIGHT)) {
            if (to_weight)
                add = 1;
            else
                keep = stop - 1;
            changed = 1;
        }
        for (; at < keep && o + 1 < len; at++)
            buf[o++] = p->text[at];
        if (add && o + 1 < len)
            buf[o++] = 'f';
        at = stop;
    }
    /* trailing blanks are not worth echoing */
    while (o > 0 && (buf[o - 1] == ' ' || buf[o - 1] == '\t'))
        o--;
    buf[o] = '\0';
    return changed;
}

/* Is got = want * extra^k for some k != 0?  Returns k or 0. */
static int power_of(rigmat_dim got, rigmat_dim want, rigmat_dim extra)
{
    int k;

    for (k = -4; k <= 4; k++) {
        rigmat_dim t = want;
        int j;
        if (k == 0)
            continue;
        for (j = 0; j < (k > 0 ? k : -k); j++)
            t = k > 0 ? rigmat_dim_mul(t, extra) : rigmat_dim_div(t, extra);
        if (rigmat_dim_equal(got, t))
            return k;
    }
    return 0;
}

/* The hint for a unit of the wrong dimension. */
static void hint_mismatch(const parser *p, size_t unit_pos, rigmat_dim got, rigmat_dim want,
        int per_sqrt_hz, const char *kind_symbol)
{
    static const signed char accel[RIGMAT_NDIM] = { 0, 2, -4, 0, 0, 0 };
    static const signed char cyc_ang[RIGMAT_NDIM] = { 0, 0, 0, 0, -2, 2 };
    const rigmat_dim g0 = dim_from_half(accel);
    const rigmat_dim swap = dim_from_half(cyc_ang);
    char fixed[96];
    int k;

    k = power_of(got, want, g0);
    if (k == -1) {
        if (rewrite_weight(p, unit_pos, 1, fixed, sizeof fixed))
            rigmat_error_hint(p->err, "did you mean %s? (kg is a mass; kgf, gf, lbf and ozf "
                    "are forces)", fixed);
        else
            rigmat_error_hint(p->err, "a mass is not a force: a weight is written kgf, gf, lbf "
                    "or ozf, or in N");
        return;
    }
    if (k == 1 && rewrite_weight(p, unit_pos, 0, fixed, sizeof fixed)) {
        rigmat_error_hint(p->err, "did you mean %s? (kgf is a force; a mass is kg, g, lb or oz)",
                fixed);
        return;
    }
    k = power_of(got, want, swap);
    if (k > 0) {
        rigmat_error_hint(p->err, "Hz counts cycles, not radians: write rad/s or rpm for an "
                "angular rate (2*pi is not applied silently)");
        return;
    }
    if (k < 0) {
        rigmat_error_hint(p->err, "rad/s and rpm are angular rates: write a frequency in Hz "
                "(f = w/(2*pi); 2*pi is not applied silently)");
        return;
    }
    if (per_sqrt_hz && rigmat_dim_equal(got, rigmat_dim_mul(want, dim_sqrt_hz()))) {
        rigmat_error_hint(p->err, "a noise density is per sqrt(Hz): write %s/sqrt(Hz)",
                kind_symbol);
        return;
    }
    if (per_sqrt_hz && rigmat_dim_equal(got, rigmat_dim_mul(want, want))) {
        rigmat_error_hint(p->err, "that is a power spectral density: give its square root, "
                "in %s/sqrt(Hz)", kind_symbol);
        return;
    }
    if (!per_sqrt_hz && rigmat_dim_equal(got, rigmat_dim_div(want, dim_sqrt_hz()))) {
        rigmat_error_hint(p->err, "this field takes a plain value, not a density per sqrt(Hz)");
        return;
    }
    if (rigmat_dim_equal(got, dim_scaled(want, -1)))
        rigmat_error_hint(p->err, "that is the reciprocal of the unit wanted");
}

rigmat_status rigmat_units_expect_flags(const char *text, rigmat_kind kind, unsigned flags,
        double *value_si, rigmat_error *err)
{
    static const signed char ang[RIGMAT_NDIM] = { 0, 0, 0, 0, 2, 0 };
    static const signed char cyc_ang[RIGMAT_NDIM] = { 0, 0, 0, 0, -2, 2 };
    static const signed char root_s[RIGMAT_NDIM] = { 0, 0, 1, 0, 0, 0 };
    const int per_sqrt_hz = (flags & RIGMAT_UNITS_PER_SQRT_HZ) != 0;
    const rigmat_dim angle = dim_from_half(ang);
    rigmat_dim want, got;
    char want_s[96], got_s[96], sym[64];
    parser p;
    qty r;
    int has_unit, k;
    size_t unit_pos;
    double v;
    rigmat_status rc;

    if ((unsigned)kind >= RIGMAT_Q_COUNT)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "unknown quantity kind %d", (int)kind);
    rc = parser_init(&p, text, err);
    if (rc != RIGMAT_OK)
        return rc;
    rc = parse_all(&p, &r, &has_unit, &unit_pos);
    if (rc != RIGMAT_OK)
        return rc;
    want = dim_from_half(kinds[kind].half);
    if (per_sqrt_hz)
        want = rigmat_dim_div(want, dim_sqrt_hz());
    got = dim_of_qty(&r);
    v = r.v;
    if (!has_unit || rigmat_dim_equal(got, want))
        goto accept;
    /* the interchangeable pairs of units.h, each once */
    {
        const rigmat_dim per_rad = rigmat_dim_div(want, angle);
        const int rotational_pair = kind == RIGMAT_Q_TORQUE_CONSTANT ||
                kind == RIGMAT_Q_BACK_EMF;
        if (rotational_pair) {
            const rigmat_dim kt = dim_from_half(kinds[RIGMAT_Q_TORQUE_CONSTANT].half);
            const rigmat_dim ke = dim_from_half(kinds[RIGMAT_Q_BACK_EMF].half);
            if (!per_sqrt_hz && (rigmat_dim_equal(got, kt) || rigmat_dim_equal(got, ke)))
                goto accept;
            /* a speed constant (rpm/V, rad/s/V) is the reciprocal of Ke */
            if (!per_sqrt_hz && (rigmat_dim_equal(got, dim_scaled(ke, -1)) ||
                        rigmat_dim_equal(got, dim_scaled(kt, -1)))) {
                v = 1.0 / v;
                if (!isfinite(v)) {
                    RIGMAT_FAIL(err, RIGMAT_EMODEL, "a speed constant of 0 cannot be inverted");
                    set_col(err, p.text, unit_pos);
                    return RIGMAT_EMODEL;
                }
                goto accept;
            }
        }
        if (kind == RIGMAT_Q_LEAD && !per_sqrt_hz &&
                rigmat_dim_equal(got, dim_from_half(kinds[RIGMAT_Q_LENGTH].half)))
            goto accept; /* a plain length is read as per turn */
        /* the per-radian form implied (N*m for N*m/rad); or written (kg*m^2/rad) */
        if ((kind == RIGMAT_Q_ROT_STIFFNESS || kind == RIGMAT_Q_ROT_DAMPING) &&
                rigmat_dim_equal(got, rigmat_dim_mul(want, angle)))
            goto accept;
        if (kind == RIGMAT_Q_INERTIA && rigmat_dim_equal(got, per_rad))
            goto accept;
    }
    /* a density as an angle random walk (deg/sqrt(h)): 1/sqrt(Hz) read as
     * sqrt(s), common practice for gyro and accelerometer sheets */
    if (per_sqrt_hz &&
            rigmat_dim_equal(got, rigmat_dim_mul(dim_from_half(kinds[kind].half),
                                          dim_from_half(root_s))))
        goto accept;
    /* cycles as angles, only where the caller asked: 1 cycle = 2*pi rad */
    if (flags & RIGMAT_UNITS_CYCLE_AS_ANGLE) {
        k = power_of(got, want, dim_from_half(cyc_ang));
        if (k != 0) {
            v *= pow(2.0 * PI, k);
            goto accept;
        }
    }
    snprintf(sym, sizeof sym, "%s%s", kinds[kind].symbol, per_sqrt_hz ? "/sqrt(Hz)" : "");
    if (per_sqrt_hz)
        snprintf(want_s, sizeof want_s, "%s per sqrt(Hz) (%s)", kinds[kind].words, sym);
    else
        snprintf(want_s, sizeof want_s, "%s (%s)", kinds[kind].words, sym);
    describe_dim(got, got_s, sizeof got_s);
    RIGMAT_FAIL(err, RIGMAT_EMODEL, "expected %s, got %s", want_s, got_s);
    hint_mismatch(&p, unit_pos, got, want, per_sqrt_hz, kinds[kind].symbol);
    set_col(err, p.text, unit_pos);
    return RIGMAT_EMODEL;

accept:
    /* the one kind whose value is not coherent SI: a lead is per turn */
    if (kind == RIGMAT_Q_LEAD && has_unit &&
            !rigmat_dim_equal(got, dim_from_half(kinds[RIGMAT_Q_LENGTH].half)))
        v *= 2.0 * PI;
    if (value_si != NULL)
        *value_si = v;
    return RIGMAT_OK;
}

rigmat_status rigmat_units_expect(const char *text, rigmat_kind kind, double *value_si,
        rigmat_error *err)
{
    return rigmat_units_expect_flags(text, kind, 0, value_si, err);
}

rigmat_status rigmat_units_expect_density(const char *text, rigmat_kind kind, double *value_si,
        rigmat_error *err)
{
    return rigmat_units_expect_flags(text, kind, RIGMAT_UNITS_PER_SQRT_HZ, value_si, err);
}
