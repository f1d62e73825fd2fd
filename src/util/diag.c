/* diag.c - errors of the computation (rigmat_error) and input diagnostics
 * (rigmat_diags).  Reporting an error never allocates; recording a
 * diagnostic copies its strings so the list outlives the parser. */
#include "rigmat_internal.h"
#include "sizes.h"

#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

rigmat_status rigmat_error_set(rigmat_error *err, rigmat_status st, const char *src_file,
        int src_line, const char *fmt, ...)
{
    va_list ap;

    if (err == NULL)
        return st;
    err->status = st;
    err->src_file = src_file;
    err->src_line = src_line;
    err->hint[0] = '\0';
    va_start(ap, fmt);
    vsnprintf(err->message, sizeof err->message, fmt, ap);
    va_end(ap);
    return st;
}

void rigmat_error_hint(rigmat_error *err, const char *fmt, ...)
{
    va_list ap;

    if (err == NULL)
        return;
    va_start(ap, fmt);
    vsnprintf(err->hint, sizeof err->hint, fmt, ap);
    va_end(ap);
}

const char *rigmat_status_name(rigmat_status st)
{
    switch (st) {
    case RIGMAT_OK: return "ok";
    case RIGMAT_EMODEL: return "bad model";
    case RIGMAT_EUSAGE: return "bad usage";
    case RIGMAT_ENUMERIC: return "numerical failure";
    case RIGMAT_EIO: return "input/output error";
    case RIGMAT_ENOMEM: return "out of memory";
    case RIGMAT_EINTERNAL: return "internal error";
    }
    return "unknown status";
}

int rigmat_exit_code(rigmat_status st)
{
    switch (st) {
    case RIGMAT_OK: return 0;
    case RIGMAT_EMODEL: return 1;
    case RIGMAT_EUSAGE: return 2;
    case RIGMAT_ENUMERIC: return 3;
    case RIGMAT_EIO: return 4;
    case RIGMAT_ENOMEM: return 4;
    case RIGMAT_EINTERNAL: return 5;
    }
    return 5;
}

const char *rigmat_version(void)
{
    return RIGMAT_VERSION;
}

void rigmat_diags_init(rigmat_diags *d)
{
    memset(d, 0, sizeof *d);
    d->max_errors = 50;
}

void rigmat_diags_release(rigmat_diags *d)
{
    size_t i;

    if (d == NULL)
        return;
    for (i = 0; i < d->count; i++) {
        free(d->items[i].within_what);
        free(d->items[i].message);
        free(d->items[i].hint);
    }
    free(d->items);
    for (i = 0; i < d->nfiles; i++)
        free(d->files[i]);
    free(d->files);
    rigmat_diags_init(d);
}

static char *dup_str(const char *s)
{
    size_t n;
    char *p;

    if (s == NULL)
        return NULL;
    n = strlen(s) + 1;
    p = malloc(n);
    if (p != NULL)
        memcpy(p, s, n);
    return p;
}

const char *rigmat_diags_file(rigmat_diags *d, const char *name)
{
    size_t i;
    char **grown, *copy;

    if (name == NULL)
        return NULL;
    for (i = 0; i < d->nfiles; i++)
        if (strcmp(d->files[i], name) == 0)
            return d->files[i];
    copy = dup_str(name);
    if (copy == NULL)
        return NULL;
    grown = realloc(d->files, rigmat_size_mul_add(d->nfiles + 1, sizeof *grown, 0));
    if (grown == NULL) {
        free(copy);
        return NULL;
    }
    d->files = grown;
    d->files[d->nfiles++] = copy;
    return copy;
}

rigmat_status rigmat_diags_add(rigmat_diags *d, rigmat_severity sev, rigmat_loc where,
        rigmat_loc within, const char *within_what, const char *hint, const char *fmt, ...)
{
    char buf[512];
    va_list ap;
    rigmat_diag *it;

    if (sev == RIGMAT_ERROR && d->errors >= d->max_errors) {
        d->dropped++;
        d->errors++;
        return RIGMAT_OK;
    }
    if (d->count == d->cap) {
        const size_t cap = d->cap ? rigmat_size_mul_add(d->cap, 2, 0) : 16;
        rigmat_diag *grown = realloc(d->items, rigmat_size_mul_add(cap, sizeof *grown, 0));
        if (grown == NULL)
            return RIGMAT_ENOMEM;
        d->items = grown;
        d->cap = cap;
    }
    va_start(ap, fmt);
    vsnprintf(buf, sizeof buf, fmt, ap);
    va_end(ap);
    it = &d->items[d->count];
    memset(it, 0, sizeof *it);
    it->severity = sev;
    it->where = where;
    it->where.file = rigmat_diags_file(d, where.file);
    it->within = within;
    it->within.file = rigmat_diags_file(d, within.file);
    it->within_what = dup_str(within_what);
    it->message = dup_str(buf);
    it->hint = dup_str(hint);
    /* Every copy must exist: a diagnostic without its file, context or
     * hint would be a different message.  On failure nothing is kept (the
     * out-of-memory path once leaked within_what; tests/oom.c). */
    if (it->message == NULL || (where.file != NULL && it->where.file == NULL) ||
            (within.file != NULL && it->within.file == NULL) ||
            (within_what != NULL && it->within_what == NULL) ||
            (hint != NULL && it->hint == NULL)) {
        free(it->within_what);
        free(it->message);
        free(it->hint);
        memset(it, 0, sizeof *it);
        return RIGMAT_ENOMEM;
    }
    d->count++;
    if (sev == RIGMAT_ERROR)
        d->errors++;
    return RIGMAT_OK;
}

/* Echo text from the input with control characters replaced, as git's
 * usage.c does, so a hostile file cannot drive the terminal. */
static void put_clean(FILE *out, const char *s)
{
    for (; s != NULL && *s != '\0'; s++) {
        unsigned char c = (unsigned char)*s;
        fputc((c < 0x20 || c == 0x7f) ? '?' : c, out);
    }
}

static void put_loc(FILE *out, rigmat_loc loc)
{
    if (loc.file == NULL) {
        fputs("rigmat: ", out);
        return;
    }
    put_clean(out, loc.file);
    if (loc.line > 0) {
        fprintf(out, ":%lu", loc.line);
        if (loc.col > 0)
            fprintf(out, ":%lu", loc.col);
    }
    fputs(": ", out);
}

void rigmat_diags_print(const rigmat_diags *d, FILE *out)
{
    static const char *const words[] = { "error", "warning", "note" };
    size_t i;

    for (i = 0; i < d->count; i++) {
        const rigmat_diag *it = &d->items[i];
        put_loc(out, it->where);
        fprintf(out, "%s: ", words[it->severity]);
        put_clean(out, it->message);
        fputc('\n', out);
        if (it->within_what != NULL && it->within_what[0] != '\0' &&
                it->within.file != NULL) {
            put_loc(out, it->within);
            fputs("note: in ", out);
            put_clean(out, it->within_what);
            fputc('\n', out);
        }
        if (it->hint != NULL) {
            fputs("  hint: ", out);
            put_clean(out, it->hint);
            fputc('\n', out);
        }
    }
    if (d->dropped > 0)
        fprintf(out, "rigmat: %zu more errors not shown\n", d->dropped);
}
