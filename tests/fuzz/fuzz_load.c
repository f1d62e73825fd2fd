/* fuzz_load.c - the input as a model file, through rigmat_model_load.
 *
 * The input is written to model.yaml in a private folder under /tmp (made
 * once per process, so part lookups beside the model find nothing), then
 * loaded with the default options.  Parts resolve from $RIGMAT_CATALOG when
 * it is set (`make fuzz` points it at catalog/).  Comment lines at the top
 * of the form `#set PATH=VALUE` become --set overrides (at most 4), so the
 * fuzzer also reaches load_set.c while the file stays plain YAML.
 *
 * Properties checked (src/util/rigmat_internal.h, src/model/load.h):
 *   - the status is OK, EMODEL, EIO or ENOMEM;
 *   - OK gives a model, anything else none; EMODEL comes with at least one
 *     error in the diagnostics;
 *   - every diagnostic has a message, and one placed in the model file
 *     lies on a line the file has and a column no wider than the file;
 *   - printing the diagnostics works (to /dev/null), and everything is
 *     freed (LeakSanitizer reports what is not).
 */
#include "fuzz.h"
#include "rigmat_internal.h"

#include <errno.h>
#include <gsl/gsl_errno.h>
#include <unistd.h>

#define MAX_SETS 4

static FILE *devnull;

static int setup(void)
{
    if (devnull != NULL)
        return 0;
    gsl_set_error_handler_off();
    if (fuzz_model_setup() != 0)
        return -1;
    devnull = fopen("/dev/null", "w");
    return devnull != NULL ? 0 : -1;
}

/* Lines a YAML reader may count: LF, CR, NEL, LS and PS all break a line
 * (YAML 1.1), and CR LF counts twice here, which only loosens the bound. */
static unsigned long count_lines(const uint8_t *d, size_t n)
{
    unsigned long lines = 1;
    size_t i;

    for (i = 0; i < n; i++) {
        if (d[i] == '\n' || d[i] == '\r' || d[i] == 0x85)
            lines++;
        else if (d[i] == 0xe2 && i + 2 < n && d[i + 1] == 0x80 && (d[i + 2] & 0xfe) == 0xa8)
            lines++;
    }
    return lines;
}

/* The --set overrides written as leading `#set ` lines. */
static size_t take_sets(const char *text, char **sets)
{
    size_t n = 0;
    const char *p = text;

    while (n < MAX_SETS && strncmp(p, "#set ", 5) == 0) {
        const char *end = strchr(p, '\n');
        const size_t len = end != NULL ? (size_t)(end - p - 5) : strlen(p + 5);

        sets[n] = malloc(len + 1);
        if (sets[n] == NULL)
            break;
        memcpy(sets[n], p + 5, len);
        sets[n][len] = '\0';
        n++;
        if (end == NULL)
            break;
        p = end + 1;
    }
    return n;
}

static void check_diags(const rigmat_diags *d, const uint8_t *data, size_t size)
{
    const unsigned long lines = count_lines(data, size);
    size_t i, errors = 0;

    FUZZ_REQUIRE(d->count <= d->cap || d->cap == 0, "count %zu cap %zu", d->count, d->cap);
    for (i = 0; i < d->count; i++) {
        const rigmat_diag *g = &d->items[i];

        FUZZ_REQUIRE(g->message != NULL && g->message[0] != '\0', "diagnostic %zu has no message",
                     i);
        if (g->severity == RIGMAT_ERROR)
            errors++;
        if (g->where.file != NULL && strcmp(g->where.file, fuzz_model_path()) == 0) {
            /* libyaml puts the end of a stream that lacks its last line
             * break on the next line, so one line past the end is allowed. */
            FUZZ_REQUIRE(g->where.line <= lines + 1, "'%s' placed on line %lu of %lu", g->message,
                         g->where.line, lines);
            FUZZ_REQUIRE(g->where.col <= size + 1, "'%s' placed at column %lu of %zu bytes",
                         g->message, g->where.col, size);
        }
    }
    /* rigmat.h calls `errors` the number of error items; diag.c also counts
     * the ones dropped past max_errors.  Either reading is accepted. */
    FUZZ_REQUIRE(errors == d->errors || errors + d->dropped == d->errors,
                 "%zu errors listed, %zu dropped, %zu counted", errors, d->dropped, d->errors);
}

int LLVMFuzzerTestOneInput(const uint8_t *data, size_t size)
{
    rigmat_options opt;
    rigmat_diags d;
    rigmat_model *m = NULL;
    rigmat_status st;
    char *sets[MAX_SETS];
    char *text;
    size_t nsets, i;

    if (setup() != 0 || fuzz_model_write(data, size) != 0)
        abort();
    text = fuzz_text(data, size);
    if (text == NULL)
        return 0;
    nsets = take_sets(text, sets);
    opt = rigmat_options_default();
    opt.catalog_env = getenv("RIGMAT_CATALOG");
    rigmat_diags_init(&d);
    d.max_errors = opt.max_errors;
    st = rigmat_model_load(fuzz_model_path(), (const char *const *)sets, nsets, &opt, &m, &d);
    FUZZ_REQUIRE(st == RIGMAT_OK || st == RIGMAT_EMODEL || st == RIGMAT_EIO || st == RIGMAT_ENOMEM,
                 "status %d", (int)st);
    if (st == RIGMAT_OK)
        FUZZ_REQUIRE(m != NULL, "OK without a model");
    else
        FUZZ_REQUIRE(m == NULL, "status %d left *out = %p", (int)st, (void *)m);
    if (st == RIGMAT_EMODEL)
        FUZZ_REQUIRE(d.errors > 0, "bad model without an error");
    check_diags(&d, data, size);
    rigmat_diags_print(&d, devnull);
    if (st == RIGMAT_OK) {
        FUZZ_REQUIRE(m->nbodies >= 1, "no ground body");
        rigmat_model_free(m);
    }
    rigmat_diags_release(&d);
    for (i = 0; i < nsets; i++)
        free(sets[i]);
    free(text);
    return 0;
}
