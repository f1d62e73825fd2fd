/* result.c - building a result description, the format table, the one
 * finiteness check, and the dispatch to the writer of each format. */
#include "result.h"
#include "emit.h"

#include <math.h>
#include <stdarg.h>
#include <stdlib.h>
#include <string.h>

/* The format table (issue 8: one entry per format). */
static const rigmat_format_info format_table[] = {
    { "text", RIGMAT_FORMAT_TEXT, 0, 0, "aligned tables for people (the default)" },
    { "json", RIGMAT_FORMAT_JSON, 0, 0, "the JSON contract of README.md, 17 digits" },
    { "csv", RIGMAT_FORMAT_CSV, 1, 0, "one labelled table per matrix and vector" },
    { "c", RIGMAT_FORMAT_C, 1, 0, "a C99/C++ header: sizes, index enums, static const arrays" },
    { "numpy", RIGMAT_FORMAT_NUMPY, 1, 0, "a Python module of numpy arrays and name lists" },
    { "mtx", RIGMAT_FORMAT_MTX, 1, 1, "Matrix Market arrays, one file per matrix (-o DIR)" },
    { "latex", RIGMAT_FORMAT_LATEX, 1, 0, "bmatrix blocks with labelled rows and columns" },
};

const rigmat_format_info *rigmat_format_table(size_t *n)
{
    *n = sizeof format_table / sizeof format_table[0];
    return format_table;
}

const rigmat_format_info *rigmat_format_find(const char *word)
{
    size_t i;

    for (i = 0; word != NULL && i < sizeof format_table / sizeof format_table[0]; i++)
        if (strcmp(word, format_table[i].word) == 0)
            return &format_table[i];
    return NULL;
}

/* ------------------------------------------------------------ building */

static char *dup_s(rigmat_result *r, const char *s)
{
    size_t n;
    char *p;

    if (s == NULL)
        return NULL;
    n = strlen(s) + 1;
    p = malloc(n);
    if (p == NULL) {
        r->status = RIGMAT_ENOMEM;
        return NULL;
    }
    memcpy(p, s, n);
    return p;
}

static char *vformat(rigmat_result *r, const char *fmt, va_list ap) RIGMAT_PRINTF(2, 0);
static char *vformat(rigmat_result *r, const char *fmt, va_list ap)
{
    va_list aq;
    int n;
    char *p;

    va_copy(aq, ap);
    n = vsnprintf(NULL, 0, fmt, aq);
    va_end(aq);
    if (n < 0) {
        r->status = RIGMAT_EINTERNAL;
        return NULL;
    }
    p = malloc((size_t)n + 1);
    if (p == NULL) {
        r->status = RIGMAT_ENOMEM;
        return NULL;
    }
    vsnprintf(p, (size_t)n + 1, fmt, ap);
    return p;
}

static void node_release(rigmat_rnode *n)
{
    free(n->key);
    free(n->title);
    free(n->text);
    free(n->export_name);
    free(n->unit);
    free(n->str);
    free(n->data);
}

rigmat_result *rigmat_result_alloc(const char *kind)
{
    rigmat_result *r = calloc(1, sizeof *r);

    if (r == NULL)
        return NULL;
    r->cap = 64;
    r->nodes = calloc(r->cap, sizeof *r->nodes);
    r->kind = dup_s(r, kind);
    if (r->nodes == NULL || r->kind == NULL) {
        rigmat_result_free(r);
        return NULL;
    }
    r->n = 1;
    r->nodes[0].type = RIGMAT_R_OBJECT;
    r->nodes[0].show = RIGMAT_SHOW_ALL;
    r->nodes[0].parent = r->nodes[0].first = r->nodes[0].last = r->nodes[0].next = RIGMAT_NONE;
    r->open = 0;
    return r;
}

void rigmat_result_free(rigmat_result *r)
{
    size_t i;

    if (r == NULL)
        return;
    for (i = 0; r->nodes != NULL && i < r->n; i++)
        node_release(&r->nodes[i]);
    free(r->nodes);
    free(r->pending_key);
    free(r->kind);
    free(r->model);
    free(r->order_hash);
    free(r);
}

/* Append a node of type t as the next child of the open container. */
static rigmat_rnode *add(rigmat_result *r, rigmat_rtype t)
{
    rigmat_rnode *n, *p;
    size_t i;

    if (r->status != RIGMAT_OK)
        return NULL;
    if (r->n == r->cap) {
        rigmat_rnode *g = realloc(r->nodes, 2 * r->cap * sizeof *g);
        if (g == NULL) {
            r->status = RIGMAT_ENOMEM;
            return NULL;
        }
        r->nodes = g;
        r->cap *= 2;
    }
    i = r->n++;
    n = &r->nodes[i];
    memset(n, 0, sizeof *n);
    n->type = t;
    n->show = RIGMAT_SHOW_ALL;
    n->parent = r->open;
    n->first = n->last = n->next = RIGMAT_NONE;
    p = &r->nodes[r->open];
    if (p->type == RIGMAT_R_OBJECT) {
        n->key = r->pending_key; /* NULL for text lines */
        r->pending_key = NULL;
    }
    if (p->last == RIGMAT_NONE)
        p->first = i;
    else
        r->nodes[p->last].next = i;
    p->last = i;
    return n;
}

/* The node the presentation calls apply to: the last one added at the
 * open level (an object or array just closed is its parent's last). */
static rigmat_rnode *last(rigmat_result *r)
{
    if (r->status != RIGMAT_OK || r->n < 2)
        return NULL;
    return r->nodes[r->open].last != RIGMAT_NONE ? &r->nodes[r->nodes[r->open].last] : NULL;
}

void rigmat_result_key(rigmat_result *r, const char *key)
{
    if (r->status != RIGMAT_OK)
        return;
    free(r->pending_key);
    r->pending_key = dup_s(r, key);
}

void rigmat_result_object(rigmat_result *r)
{
    if (add(r, RIGMAT_R_OBJECT) != NULL)
        r->open = r->n - 1;
}

void rigmat_result_array(rigmat_result *r)
{
    if (add(r, RIGMAT_R_ARRAY) != NULL)
        r->open = r->n - 1;
}

void rigmat_result_close(rigmat_result *r)
{
    if (r->status != RIGMAT_OK || r->open == 0)
        return;
    r->open = r->nodes[r->open].parent;
}

void rigmat_result_number(rigmat_result *r, double v, const char *unit)
{
    rigmat_rnode *n = add(r, RIGMAT_R_NUMBER);

    if (n != NULL) {
        n->num = v;
        n->unit = dup_s(r, unit);
    }
}

void rigmat_result_integer(rigmat_result *r, long v)
{
    rigmat_rnode *n = add(r, RIGMAT_R_INTEGER);

    if (n != NULL)
        n->integer = v;
}

void rigmat_result_bool(rigmat_result *r, int v)
{
    rigmat_rnode *n = add(r, RIGMAT_R_BOOL);

    if (n != NULL)
        n->integer = v != 0;
}

void rigmat_result_string(rigmat_result *r, const char *s)
{
    rigmat_rnode *n = add(r, RIGMAT_R_STRING);

    if (n != NULL)
        n->str = dup_s(r, s != NULL ? s : "");
}

void rigmat_result_null(rigmat_result *r)
{
    (void)add(r, RIGMAT_R_NULL);
}

static double *copy_values(rigmat_result *r, size_t count)
{
    double *d = calloc(count ? count : 1, sizeof *d);

    if (d == NULL)
        r->status = RIGMAT_ENOMEM;
    return d;
}

void rigmat_result_matrix(rigmat_result *r, const gsl_matrix *m, size_t rows, size_t cols,
        const rigmat_signal *row_names, const rigmat_signal *col_names)
{
    rigmat_rnode *n = add(r, RIGMAT_R_MATRIX);
    size_t i, k;

    if (n == NULL)
        return;
    n->rows = rows;
    n->cols = cols;
    n->row_names = row_names;
    n->col_names = col_names;
    n->data = copy_values(r, rows * cols);
    if (n->data == NULL || m == NULL)
        return;
    for (i = 0; i < rows && i < m->size1; i++)
        for (k = 0; k < cols && k < m->size2; k++)
            n->data[i * cols + k] = gsl_matrix_get(m, i, k);
}

void rigmat_result_values(rigmat_result *r, const double *v, size_t count,
        const rigmat_signal *names)
{
    rigmat_rnode *n = add(r, RIGMAT_R_VECTOR);

    if (n == NULL)
        return;
    n->rows = count;
    n->cols = 1;
    n->row_names = names;
    n->data = copy_values(r, count);
    if (n->data != NULL && v != NULL && count > 0)
        memcpy(n->data, v, count * sizeof *v);
}

void rigmat_result_vector(rigmat_result *r, const gsl_vector *v, size_t count,
        const rigmat_signal *names)
{
    rigmat_rnode *n;
    size_t i;

    rigmat_result_values(r, NULL, count, names);
    n = last(r);
    if (n == NULL || n->data == NULL || v == NULL)
        return;
    for (i = 0; i < count && i < v->size; i++)
        n->data[i] = gsl_vector_get(v, i);
}

void rigmat_result_signals(rigmat_result *r, const rigmat_signal *s, size_t count, int with_role)
{
    rigmat_rnode *n = add(r, RIGMAT_R_SIGNALS);

    if (n == NULL)
        return;
    n->row_names = s;
    n->rows = count;
    n->with_role = with_role;
}

void rigmat_result_text(rigmat_result *r, const char *fmt, ...)
{
    rigmat_rnode *n = add(r, RIGMAT_R_TEXT);
    va_list ap;

    if (n == NULL)
        return;
    n->show = RIGMAT_SHOW_TEXT;
    free(n->key);
    n->key = NULL;
    va_start(ap, fmt);
    n->str = vformat(r, fmt, ap);
    va_end(ap);
}

void rigmat_result_show(rigmat_result *r, unsigned show)
{
    rigmat_rnode *n = last(r);

    if (n != NULL)
        n->show = show;
}

void rigmat_result_compact(rigmat_result *r)
{
    rigmat_rnode *n = last(r);

    if (n != NULL)
        n->compact = 1;
}

void rigmat_result_text_list(rigmat_result *r)
{
    rigmat_rnode *n = last(r);

    if (n != NULL)
        n->text_list = 1;
}

void rigmat_result_title(rigmat_result *r, const char *title)
{
    rigmat_rnode *n = last(r);

    if (n != NULL) {
        free(n->title);
        n->title = dup_s(r, title);
    }
}

void rigmat_result_export_name(rigmat_result *r, const char *name)
{
    rigmat_rnode *n = last(r);

    if (n != NULL) {
        free(n->export_name);
        n->export_name = dup_s(r, name);
    }
}

void rigmat_result_as_text(rigmat_result *r, const char *fmt, ...)
{
    rigmat_rnode *n = last(r);
    va_list ap;

    if (n == NULL)
        return;
    free(n->text);
    va_start(ap, fmt);
    n->text = vformat(r, fmt, ap);
    va_end(ap);
}

void rigmat_result_dim(rigmat_result *r, const char *word, const rigmat_signal *sig, size_t n)
{
    if (r->status != RIGMAT_OK)
        return;
    if (r->ndims == RIGMAT_RESULT_MAX_DIMS) {
        r->status = RIGMAT_EINTERNAL;
        return;
    }
    r->dims[r->ndims].word = word;
    r->dims[r->ndims].sig = sig;
    r->dims[r->ndims++].n = n;
}

rigmat_result *rigmat_result_for_layout(const char *kind, const char *model,
        const rigmat_layout *L)
{
    rigmat_result *r = rigmat_result_alloc(kind);

    if (r == NULL)
        return NULL;
    rigmat_result_head(r, model, L->order_hash, L->states, L->nx, L->inputs, L->nu,
            L->outputs, L->ny);
    rigmat_result_dim(r, "state", L->states, L->nx);
    rigmat_result_dim(r, "input", L->inputs, L->nu);
    rigmat_result_dim(r, "output", L->outputs, L->ny);
    return r;
}

void rigmat_result_head(rigmat_result *r, const char *model, const char *order_hash,
        const rigmat_signal *states, size_t nx, const rigmat_signal *inputs, size_t nu,
        const rigmat_signal *outputs, size_t ny)
{
    if (r->status != RIGMAT_OK)
        return;
    r->model = dup_s(r, model != NULL ? model : "");
    r->order_hash = dup_s(r, order_hash != NULL ? order_hash : "");
    rigmat_result_key(r, "rigmat");
    rigmat_result_string(r, RIGMAT_VERSION);
    rigmat_result_export_name(r, "version");
    rigmat_result_show(r, RIGMAT_SHOW_JSON | RIGMAT_SHOW_EXPORT);
    rigmat_result_key(r, "model");
    rigmat_result_string(r, model != NULL ? model : "");
    rigmat_result_show(r, RIGMAT_SHOW_JSON | RIGMAT_SHOW_EXPORT);
    rigmat_result_key(r, "kind");
    rigmat_result_string(r, r->kind);
    rigmat_result_show(r, RIGMAT_SHOW_JSON | RIGMAT_SHOW_EXPORT);
    rigmat_result_key(r, "order_hash");
    rigmat_result_string(r, order_hash != NULL ? order_hash : "");
    rigmat_result_show(r, RIGMAT_SHOW_JSON | RIGMAT_SHOW_EXPORT);
    rigmat_result_key(r, "states");
    rigmat_result_signals(r, states, nx, 2);
    rigmat_result_show(r, RIGMAT_SHOW_JSON | RIGMAT_SHOW_EXPORT);
    rigmat_result_key(r, "inputs");
    rigmat_result_signals(r, inputs, nu, 1);
    rigmat_result_show(r, RIGMAT_SHOW_JSON | RIGMAT_SHOW_EXPORT);
    rigmat_result_key(r, "outputs");
    rigmat_result_signals(r, outputs, ny, 0);
    rigmat_result_show(r, RIGMAT_SHOW_JSON | RIGMAT_SHOW_EXPORT);
}

int rigmat_result_has_matrices(const rigmat_result *r)
{
    size_t i;

    for (i = 1; i < r->n; i++)
        if (r->nodes[i].type == RIGMAT_R_MATRIX && (r->nodes[i].show & RIGMAT_SHOW_EXPORT))
            return 1;
    return 0;
}

/* ------------------------------------------------------------ the one check */

/* "operating_point.x[3]" for node i (entry k of its data, or none). */
static void node_path(const rigmat_result *r, size_t i, char *buf, size_t len)
{
    size_t chain[32], n = 0, used = 0;

    for (; i != 0 && i != RIGMAT_NONE && n < 32; i = r->nodes[i].parent)
        chain[n++] = i;
    buf[0] = '\0';
    while (n-- > 0 && used + 1 < len) {
        const rigmat_rnode *node = &r->nodes[chain[n]];
        const rigmat_rnode *p = &r->nodes[node->parent];
        int w;
        if (p->type == RIGMAT_R_ARRAY) {
            size_t k = 0, c;
            for (c = p->first; c != RIGMAT_NONE && c != chain[n]; c = r->nodes[c].next)
                k++;
            w = snprintf(buf + used, len - used, "[%zu]", k);
        } else {
            w = snprintf(buf + used, len - used, "%s%s", used ? "." : "",
                    node->key != NULL ? node->key : "?");
        }
        if (w < 0)
            break;
        used += (size_t)w;
        if (used >= len)
            used = len - 1;
    }
}

rigmat_status rigmat_result_check_finite(const rigmat_result *r, rigmat_error *err)
{
    char path[160];
    size_t i, k;

    if (r->status != RIGMAT_OK)
        return RIGMAT_FAIL(err, r->status, "cannot build the result: %s",
                r->status == RIGMAT_ENOMEM ? "out of memory" : "internal error");
    for (i = 1; i < r->n; i++) {
        const rigmat_rnode *n = &r->nodes[i];
        if (n->type == RIGMAT_R_NUMBER && !isfinite(n->num)) {
            node_path(r, i, path, sizeof path);
            return RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "the result is not finite: %s = %g", path,
                    n->num);
        }
        if (n->type != RIGMAT_R_MATRIX && n->type != RIGMAT_R_VECTOR)
            continue;
        for (k = 0; k < n->rows * n->cols; k++)
            if (!isfinite(n->data[k])) {
                node_path(r, i, path, sizeof path);
                if (n->type == RIGMAT_R_VECTOR)
                    return RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                            "the result is not finite: %s[%zu] = %g%s%s%s", path, k,
                            n->data[k], n->row_names ? " ('" : "",
                            n->row_names ? n->row_names[k].name : "", n->row_names ? "')" : "");
                return RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                        "the result is not finite: %s[%zu][%zu] = %g", path, k / n->cols,
                        k % n->cols, n->data[k]);
            }
    }
    return RIGMAT_OK;
}

/* ------------------------------------------------------------ dispatch */

rigmat_status rigmat_result_write(const rigmat_result *r, rigmat_format fmt,
        const rigmat_emit_opts *o, FILE *out, const rigmat_emit_sink *sink, rigmat_error *err)
{
    static const rigmat_emit_opts none = { NULL, 0, NULL, NULL };
    const rigmat_status st = rigmat_result_check_finite(r, err);

    if (st != RIGMAT_OK)
        return st;
    if (o == NULL)
        o = &none;
    if (fmt != RIGMAT_FORMAT_TEXT && fmt != RIGMAT_FORMAT_JSON && !rigmat_result_has_matrices(r))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "a '%s' result has no matrices to export",
                r->kind);
    switch (fmt) {
    case RIGMAT_FORMAT_TEXT:
        return rigmat_emit_text(r, out, err);
    case RIGMAT_FORMAT_JSON:
        return rigmat_emit_json(r, out, err);
    case RIGMAT_FORMAT_CSV:
        return rigmat_emit_csv(r, o, out, err);
    case RIGMAT_FORMAT_C:
        return rigmat_emit_c(r, o, out, err);
    case RIGMAT_FORMAT_NUMPY:
        return rigmat_emit_numpy(r, o, out, err);
    case RIGMAT_FORMAT_MTX:
        if (sink == NULL || sink->open == NULL)
            return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the mtx format writes a folder of files");
        return rigmat_emit_mtx(r, o, sink, err);
    case RIGMAT_FORMAT_LATEX:
        return rigmat_emit_latex(r, o, out, err);
    }
    return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "unknown format %d", (int)fmt);
}
