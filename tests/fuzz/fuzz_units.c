/* fuzz_units.c - the unit parser on arbitrary text.
 *
 * The input, up to its first NUL, is one quantity ("0.8 kg", "3.3 g*cm^2").
 * It goes through rigmat_units_parse and through rigmat_units_expect_flags
 * for three kinds picked by a hash of the text (all 25 on every input would
 * cost a factor of eight in speed; the hash lets every mutation reach a
 * different kind), and the properties units.h promises are checked:
 *   - the status is RIGMAT_OK or RIGMAT_EMODEL;
 *   - a value accepted is finite (nan, inf and overflow are errors);
 *   - an error has a message, its column lies inside the text (or is 0),
 *     and message and hint are NUL-terminated in their buffers;
 *   - a kind accepted means the value is in that kind's unit, so parsing
 *     the same text again gives the same answer (no hidden state);
 *   - rigmat_units_format_dim never writes past the length it is given.
 */
#include "fuzz.h"
#include "units.h"

#include <math.h>

static void check_error(const rigmat_error *e, const char *text, const char *what)
{
    const size_t n = strlen(text);

    FUZZ_REQUIRE(memchr(e->message, '\0', sizeof e->message) != NULL, "%s: message", what);
    FUZZ_REQUIRE(memchr(e->hint, '\0', sizeof e->hint) != NULL, "%s: hint", what);
    FUZZ_REQUIRE(e->message[0] != '\0', "%s: empty message for '%s'", what, text);
    FUZZ_REQUIRE(e->where.col <= n + 1, "%s: column %lu past the end of '%s' (%zu bytes)", what,
                 e->where.col, text, n);
}

static void fresh(rigmat_error *e)
{
    memset(e, 0, sizeof *e);
    e->where.col = 0;
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    char *text = fuzz_text(data, size);
    rigmat_quantity q;
    rigmat_error e;
    rigmat_status st;
    char buf[64];
    size_t k, len, h = 2166136261u;

    if (text == NULL)
        return 0;
    for (k = 0; text[k] != '\0'; k++)
        h = (h ^ (unsigned char)text[k]) * 16777619u;
    fresh(&e);
    st = rigmat_units_parse(text, &q, &e);
    FUZZ_REQUIRE(st == RIGMAT_OK || st == RIGMAT_EMODEL, "parse status %d", (int)st);
    if (st == RIGMAT_OK) {
        FUZZ_REQUIRE(isfinite(q.value), "parse accepted '%s' as %g", text, q.value);
        for (len = 0; len <= sizeof buf; len += 7) {
            memset(buf, 'X', sizeof buf);
            rigmat_units_format_dim(q.dim, buf, len);
            if (len > 0)
                FUZZ_REQUIRE(memchr(buf, '\0', len) != NULL, "format_dim, len %zu", len);
            if (len < sizeof buf)
                FUZZ_REQUIRE(buf[len] == 'X', "format_dim wrote past len %zu", len);
        }
    } else {
        check_error(&e, text, "parse");
    }

    for (k = 0; k < 3; k++) {
        const size_t pick = k == 0 ? h : k == 1 ? h / RIGMAT_Q_COUNT : size;
        const rigmat_kind kind = (rigmat_kind)(pick % (size_t)RIGMAT_Q_COUNT);
        const unsigned flags = (unsigned)((h >> (8 + 2 * k)) % 4);
        double v = 0.0, again = 0.0;
        rigmat_status st2;

        fresh(&e);
        st = rigmat_units_expect_flags(text, kind, flags, &v, &e);
        FUZZ_REQUIRE(st == RIGMAT_OK || st == RIGMAT_EMODEL, "expect status %d", (int)st);
        if (st != RIGMAT_OK) {
            check_error(&e, text, rigmat_units_kind_words(kind));
            continue;
        }
        FUZZ_REQUIRE(isfinite(v), "'%s' accepted as %s: %g", text, rigmat_units_kind_words(kind),
                     v);
        st2 = rigmat_units_expect_flags(text, kind, flags, &again, NULL);
        FUZZ_REQUIRE(st2 == RIGMAT_OK && memcmp(&v, &again, sizeof v) == 0,
                     "'%s' as %s: %.17g then %.17g", text, rigmat_units_kind_words(kind), v, again);
    }
    fresh(&e);
    {
        double v = 0.0;
        st = rigmat_units_expect_density(text, (rigmat_kind)(size % (size_t)RIGMAT_Q_COUNT), &v,
                                         &e);
        FUZZ_REQUIRE(st == RIGMAT_OK || st == RIGMAT_EMODEL, "density status %d", (int)st);
        if (st == RIGMAT_OK)
            FUZZ_REQUIRE(isfinite(v), "density '%s' accepted as %g", text, v);
        else
            check_error(&e, text, "density");
    }
    free(text);
    return 0;
}
