/* json.c - the JSON writer: a small emitter (numbers with 17 significant
 * digits, so a double survives the round trip; strings escaped) and the
 * walk that renders a result with it.  Matrices put each row on one line,
 * vectors and signal entries one line each: readable and short. */
#include "emit.h"

#include <math.h>
#include <string.h>

static void sep(rigmat_json *j)
{
    if (j->depth <= 0)
        return;
    if (!j->first[j->depth])
        fputc(',', j->f);
    j->first[j->depth] = 0;
    if (j->pretty) {
        fputc('\n', j->f);
        fprintf(j->f, "%*s", 2 * j->depth, "");
    }
}

static int key_pending(rigmat_json *j)
{
    /* after rigmat_json_key the next value follows directly */
    return j->first[0] == 2;
}

static void value_start(rigmat_json *j)
{
    if (key_pending(j)) {
        j->first[0] = 0;
        return;
    }
    sep(j);
}

void rigmat_json_begin(rigmat_json *j, FILE *f)
{
    memset(j, 0, sizeof *j);
    j->f = f;
    j->pretty = 1;
    fputc('{', f);
    j->depth = 1;
    j->first[1] = 1;
}

rigmat_status rigmat_json_end(rigmat_json *j)
{
    fputs(j->pretty ? "\n}\n" : "}\n", j->f);
    j->depth = 0;
    return j->bad ? RIGMAT_ENUMERIC : RIGMAT_OK;
}

static void put_string(FILE *f, const char *s)
{
    fputc('"', f);
    for (; s != NULL && *s; s++) {
        unsigned char c = (unsigned char)*s;
        if (c == '"' || c == '\\')
            fprintf(f, "\\%c", c);
        else if (c < 0x20)
            fprintf(f, "\\u%04x", c);
        else
            fputc(c, f);
    }
    fputc('"', f);
}

void rigmat_json_key(rigmat_json *j, const char *key)
{
    sep(j);
    put_string(j->f, key);
    fputs(": ", j->f);
    j->first[0] = 2;
}

static void open_c(rigmat_json *j, char c)
{
    value_start(j);
    fputc(c, j->f);
    if (j->depth + 1 < (int)(sizeof j->first / sizeof j->first[0]))
        j->depth++;
    j->first[j->depth] = 1;
}

static void close_c(rigmat_json *j, char c)
{
    const int empty = j->first[j->depth];

    j->depth--;
    if (j->pretty && !empty) {
        fputc('\n', j->f);
        fprintf(j->f, "%*s", 2 * j->depth, "");
    }
    fputc(c, j->f);
}

void rigmat_json_obj_open(rigmat_json *j)
{
    open_c(j, '{');
}
void rigmat_json_obj_close(rigmat_json *j)
{
    close_c(j, '}');
}
void rigmat_json_arr_open(rigmat_json *j)
{
    open_c(j, '[');
}
void rigmat_json_arr_close(rigmat_json *j)
{
    close_c(j, ']');
}

void rigmat_json_str(rigmat_json *j, const char *s)
{
    value_start(j);
    put_string(j->f, s);
}

void rigmat_json_num(rigmat_json *j, double v)
{
    value_start(j);
    if (!isfinite(v)) {
        j->bad = 1;
        fputs("null", j->f);
        return;
    }
    if (v == 0.0)
        v = 0.0; /* no "-0" */
    fprintf(j->f, "%.17g", v);
}

void rigmat_json_int(rigmat_json *j, long v)
{
    value_start(j);
    fprintf(j->f, "%ld", v);
}

void rigmat_json_bool(rigmat_json *j, int v)
{
    value_start(j);
    fputs(v ? "true" : "false", j->f);
}

void rigmat_json_null(rigmat_json *j)
{
    value_start(j);
    fputs("null", j->f);
}

/* Rows on one line each keeps a matrix readable and the file short. */
void rigmat_json_matrix(rigmat_json *j, const gsl_matrix *m, size_t rows, size_t cols)
{
    size_t r, c;
    const int pretty = j->pretty;

    rigmat_json_arr_open(j);
    for (r = 0; r < rows; r++) {
        rigmat_json_arr_open(j);
        j->pretty = 0;
        for (c = 0; c < cols; c++)
            rigmat_json_num(j, m != NULL ? gsl_matrix_get(m, r, c) : 0.0);
        rigmat_json_arr_close(j);
        j->pretty = pretty;
    }
    rigmat_json_arr_close(j);
}

void rigmat_json_values(rigmat_json *j, const double *v, size_t n)
{
    size_t i;
    const int pretty = j->pretty;

    rigmat_json_arr_open(j);
    j->pretty = 0;
    for (i = 0; i < n; i++)
        rigmat_json_num(j, v != NULL ? v[i] : 0.0);
    rigmat_json_arr_close(j);
    j->pretty = pretty;
}

void rigmat_json_signals(rigmat_json *j, const rigmat_signal *s, size_t n, int with_role)
{
    size_t i;
    const int pretty = j->pretty;

    rigmat_json_arr_open(j);
    for (i = 0; i < n; i++) {
        rigmat_json_obj_open(j);
        j->pretty = 0;
        rigmat_json_key(j, "name");
        rigmat_json_str(j, s[i].name);
        rigmat_json_key(j, "unit");
        rigmat_json_str(j, s[i].unit);
        if (with_role == 2) {
            static const char *const kinds[] = { "coordinate", "rate", "current", "shaping",
                "delay" };
            rigmat_json_key(j, "kind");
            rigmat_json_str(j, (size_t)s[i].kind < sizeof kinds / sizeof kinds[0]
                            ? kinds[s[i].kind] : "state");
        }
        if (with_role == 1) {
            rigmat_json_key(j, "role");
            rigmat_json_str(j, s[i].role == RIGMAT_ROLE_DISTURBANCE ? "disturbance" : "input");
            /* README.md, "Limits": [low, high] or null; a motor's
             * current_limit (A per motor) or null */
            rigmat_json_key(j, "limit");
            if (s[i].has_limit) {
                rigmat_json_arr_open(j);
                rigmat_json_num(j, s[i].limit[0]);
                rigmat_json_num(j, s[i].limit[1]);
                rigmat_json_arr_close(j);
            } else {
                rigmat_json_null(j);
            }
            if (s[i].kind == RIGMAT_SIG_MOTOR) {
                rigmat_json_key(j, "current_limit");
                if (s[i].current_limit > 0.0)
                    rigmat_json_num(j, s[i].current_limit);
                else
                    rigmat_json_null(j);
            }
        }
        rigmat_json_obj_close(j);
        j->pretty = pretty;
    }
    rigmat_json_arr_close(j);
}


/* A row-major matrix node, the layout of rigmat_json_matrix. */
static void data_matrix(rigmat_json *j, const double *d, size_t rows, size_t cols)
{
    size_t r, c;
    const int pretty = j->pretty;

    rigmat_json_arr_open(j);
    for (r = 0; r < rows; r++) {
        rigmat_json_arr_open(j);
        j->pretty = 0;
        for (c = 0; c < cols; c++)
            rigmat_json_num(j, d[r * cols + c]);
        rigmat_json_arr_close(j);
        j->pretty = pretty;
    }
    rigmat_json_arr_close(j);
}

static void node(rigmat_json *j, const rigmat_result *r, size_t i)
{
    const rigmat_rnode *n = &r->nodes[i];
    const int pretty = j->pretty;
    size_t c;

    if (!(n->show & RIGMAT_SHOW_JSON) || n->type == RIGMAT_R_TEXT)
        return;
    if (n->parent != RIGMAT_NONE && r->nodes[n->parent].type == RIGMAT_R_OBJECT)
        rigmat_json_key(j, n->key != NULL ? n->key : "");
    switch (n->type) {
    case RIGMAT_R_OBJECT:
    case RIGMAT_R_ARRAY:
        if (n->type == RIGMAT_R_OBJECT)
            rigmat_json_obj_open(j);
        else
            rigmat_json_arr_open(j);
        if (n->compact)
            j->pretty = 0;
        for (c = n->first; c != RIGMAT_NONE; c = r->nodes[c].next)
            node(j, r, c);
        if (n->type == RIGMAT_R_OBJECT)
            rigmat_json_obj_close(j);
        else
            rigmat_json_arr_close(j);
        j->pretty = pretty;
        break;
    case RIGMAT_R_NUMBER:
        rigmat_json_num(j, n->num);
        break;
    case RIGMAT_R_INTEGER:
        rigmat_json_int(j, n->integer);
        break;
    case RIGMAT_R_BOOL:
        rigmat_json_bool(j, (int)n->integer);
        break;
    case RIGMAT_R_STRING:
        rigmat_json_str(j, n->str);
        break;
    case RIGMAT_R_NULL:
        rigmat_json_null(j);
        break;
    case RIGMAT_R_MATRIX:
        data_matrix(j, n->data, n->rows, n->cols);
        break;
    case RIGMAT_R_VECTOR:
        rigmat_json_values(j, n->data, n->rows);
        break;
    case RIGMAT_R_SIGNALS:
        rigmat_json_signals(j, n->row_names, n->rows, n->with_role);
        break;
    case RIGMAT_R_TEXT:
        break;
    }
}

rigmat_status rigmat_emit_json(const rigmat_result *r, FILE *f, rigmat_error *err)
{
    rigmat_json j;
    size_t c;

    rigmat_json_begin(&j, f);
    for (c = r->nodes[0].first; c != RIGMAT_NONE; c = r->nodes[c].next)
        node(&j, r, c);
    if (rigmat_json_end(&j) != RIGMAT_OK)
        return RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "the result is not finite");
    return RIGMAT_OK;
}
