/* write.c - JSON and text writers shared by the commands.  JSON numbers
 * carry 17 significant digits so a double survives the round trip. */
#include "cli.h"

#include <math.h>
#include <string.h>

static void sep(struct cli_json *j)
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

static int key_pending(struct cli_json *j)
{
    /* after cli_json_key the next value follows directly */
    return j->first[0] == 2;
}

static void value_start(struct cli_json *j)
{
    if (key_pending(j)) {
        j->first[0] = 0;
        return;
    }
    sep(j);
}

void cli_json_begin(struct cli_json *j, FILE *f)
{
    memset(j, 0, sizeof *j);
    j->f = f;
    j->pretty = 1;
    fputc('{', f);
    j->depth = 1;
    j->first[1] = 1;
}

rigmat_status cli_json_end(struct cli_json *j)
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

void cli_json_key(struct cli_json *j, const char *key)
{
    sep(j);
    put_string(j->f, key);
    fputs(": ", j->f);
    j->first[0] = 2;
}

static void open_c(struct cli_json *j, char c)
{
    value_start(j);
    fputc(c, j->f);
    if (j->depth + 1 < (int)(sizeof j->first / sizeof j->first[0]))
        j->depth++;
    j->first[j->depth] = 1;
}

static void close_c(struct cli_json *j, char c)
{
    const int empty = j->first[j->depth];

    j->depth--;
    if (j->pretty && !empty) {
        fputc('\n', j->f);
        fprintf(j->f, "%*s", 2 * j->depth, "");
    }
    fputc(c, j->f);
}

void cli_json_obj_open(struct cli_json *j)
{
    open_c(j, '{');
}
void cli_json_obj_close(struct cli_json *j)
{
    close_c(j, '}');
}
void cli_json_arr_open(struct cli_json *j)
{
    open_c(j, '[');
}
void cli_json_arr_close(struct cli_json *j)
{
    close_c(j, ']');
}

void cli_json_str(struct cli_json *j, const char *s)
{
    value_start(j);
    put_string(j->f, s);
}

void cli_json_num(struct cli_json *j, double v)
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

void cli_json_int(struct cli_json *j, long v)
{
    value_start(j);
    fprintf(j->f, "%ld", v);
}

void cli_json_bool(struct cli_json *j, int v)
{
    value_start(j);
    fputs(v ? "true" : "false", j->f);
}

void cli_json_null(struct cli_json *j)
{
    value_start(j);
    fputs("null", j->f);
}

/* Rows on one line each keeps a matrix readable and the file short. */
void cli_json_matrix(struct cli_json *j, const gsl_matrix *m, size_t rows, size_t cols)
{
    size_t r, c;
    const int pretty = j->pretty;

    cli_json_arr_open(j);
    for (r = 0; r < rows; r++) {
        cli_json_arr_open(j);
        j->pretty = 0;
        for (c = 0; c < cols; c++)
            cli_json_num(j, m != NULL ? gsl_matrix_get(m, r, c) : 0.0);
        cli_json_arr_close(j);
        j->pretty = pretty;
    }
    cli_json_arr_close(j);
}

void cli_json_vector(struct cli_json *j, const gsl_vector *v, size_t n)
{
    size_t i;
    const int pretty = j->pretty;

    cli_json_arr_open(j);
    j->pretty = 0;
    for (i = 0; i < n; i++)
        cli_json_num(j, v != NULL ? gsl_vector_get(v, i) : 0.0);
    cli_json_arr_close(j);
    j->pretty = pretty;
}

void cli_json_signals(struct cli_json *j, const rigmat_signal *s, size_t n, int with_role)
{
    size_t i;
    const int pretty = j->pretty;

    cli_json_arr_open(j);
    for (i = 0; i < n; i++) {
        cli_json_obj_open(j);
        j->pretty = 0;
        cli_json_key(j, "name");
        cli_json_str(j, s[i].name);
        cli_json_key(j, "unit");
        cli_json_str(j, s[i].unit);
        if (with_role) {
            cli_json_key(j, "role");
            cli_json_str(j, s[i].role == RIGMAT_ROLE_DISTURBANCE ? "disturbance" : "input");
        }
        cli_json_obj_close(j);
        j->pretty = pretty;
    }
    cli_json_arr_close(j);
}

void cli_json_head(struct cli_json *j, const rigmat_model *m, const char *kind)
{
    const rigmat_layout *l = &m->layout;

    cli_json_key(j, "rigmat");
    cli_json_str(j, RIGMAT_VERSION);
    cli_json_key(j, "model");
    cli_json_str(j, m->name ? m->name : "");
    cli_json_key(j, "kind");
    cli_json_str(j, kind);
    cli_json_key(j, "order_hash");
    cli_json_str(j, l->order_hash);
    cli_json_key(j, "states");
    cli_json_signals(j, l->states, l->nx, 0);
    cli_json_key(j, "inputs");
    cli_json_signals(j, l->inputs, l->nu, 1);
    cli_json_key(j, "outputs");
    cli_json_signals(j, l->outputs, l->ny, 0);
}

void cli_json_operating_point(struct cli_json *j, const rigmat_lti *l)
{
    cli_json_key(j, "operating_point");
    cli_json_obj_open(j);
    cli_json_key(j, "x");
    cli_json_vector(j, l->x0, l->nx);
    cli_json_key(j, "u");
    cli_json_vector(j, l->u0, l->nu);
    cli_json_key(j, "y");
    cli_json_vector(j, l->y0, l->ny);
    cli_json_obj_close(j);
}

/* ---------------------------------------------------------------- text */

static void label(char *buf, size_t len, const rigmat_signal *s)
{
    snprintf(buf, len, "%s [%s]", s->name, s->unit);
}

/* %.6g keeps a row readable; JSON carries the full precision. */
void cli_text_matrix(FILE *f, const char *title, const gsl_matrix *m, const rigmat_signal *rows,
        size_t nrows, const rigmat_signal *cols, size_t ncols)
{
    char buf[96];
    size_t r, c, wl = 0, wc = 11;

    fprintf(f, "%s (%zu x %zu)\n", title, nrows, ncols);
    if (m == NULL || nrows == 0 || ncols == 0) {
        fputs("  (empty)\n\n", f);
        return;
    }
    for (r = 0; r < nrows; r++) {
        label(buf, sizeof buf, &rows[r]);
        if (strlen(buf) > wl)
            wl = strlen(buf);
    }
    for (c = 0; c < ncols; c++) {
        label(buf, sizeof buf, &cols[c]);
        if (strlen(buf) + 1 > wc)
            wc = strlen(buf) + 1;
    }
    if (wc > 24)
        wc = 24;
    fprintf(f, "  %-*s", (int)wl, "");
    for (c = 0; c < ncols; c++) {
        label(buf, sizeof buf, &cols[c]);
        fprintf(f, " %*.*s", (int)wc, (int)wc, buf);
    }
    fputc('\n', f);
    for (r = 0; r < nrows; r++) {
        label(buf, sizeof buf, &rows[r]);
        fprintf(f, "  %-*s", (int)wl, buf);
        for (c = 0; c < ncols; c++) {
            double v = gsl_matrix_get(m, r, c);
            if (v == 0.0)
                fprintf(f, " %*s", (int)wc, "0");
            else
                fprintf(f, " %*.6g", (int)wc, v);
        }
        fputc('\n', f);
    }
    fputc('\n', f);
}
