/* text.c - the text writer: aligned, labelled tables for people.
 * Matrices print with %.6g and vectors with %.10g to stay readable; the
 * JSON and the export formats carry the full precision. */
#include "emit.h"

#include <string.h>

/* Text from the model (its name, file and signal names) may hold any
 * byte.  Control characters (C0, DEL, and C1 written as UTF-8) become '?'
 * so the output cannot drive a terminal; newline and tab stay, as the
 * writers' own layout uses them.  JSON escapes instead (json.c). */
static size_t clean_at(const unsigned char *p)
{
    if (p[0] == '\n' || p[0] == '\t')
        return 0;
    if (p[0] < 0x20 || p[0] == 0x7f)
        return 1;
    if (p[0] == 0xc2 && p[1] >= 0x80 && p[1] <= 0x9f)
        return 2;
    return 0;
}

static void put_text(FILE *f, const char *s)
{
    const unsigned char *p = (const unsigned char *)s;

    while (*p != '\0') {
        const size_t bad = clean_at(p);
        if (bad > 0) {
            fputc('?', f);
            p += bad;
        } else {
            fputc(*p++, f);
        }
    }
}

/* The same cleaning in place, for a label that is measured before printing. */
static void clean_buf(char *buf)
{
    unsigned char *p = (unsigned char *)buf, *q = p;

    while (*p != '\0') {
        const size_t bad = clean_at(p);
        if (bad > 0) {
            *q++ = '?';
            p += bad;
        } else {
            *q++ = *p++;
        }
    }
    *q = '\0';
    for (q = (unsigned char *)buf; *q != '\0'; q++)
        if (*q == '\n' || *q == '\t')
            *q = ' ';
}

static void label(char *buf, size_t len, const rigmat_signal *s, size_t i)
{
    if (s != NULL)
        snprintf(buf, len, "%s [%s]", s[i].name, s[i].unit);
    else
        snprintf(buf, len, "%zu", i + 1);
    clean_buf(buf);
}

void rigmat_text_matrix(FILE *f, const char *title, const double *data, size_t ld,
        const rigmat_signal *rows, size_t nrows, const rigmat_signal *cols, size_t ncols)
{
    char buf[96];
    size_t r, c, wl = 0, wc = 11;

    fprintf(f, "%s (%zu x %zu)\n", title, nrows, ncols);
    if (data == NULL || nrows == 0 || ncols == 0) {
        fputs("  (empty)\n\n", f);
        return;
    }
    for (r = 0; r < nrows; r++) {
        label(buf, sizeof buf, rows, r);
        if (strlen(buf) > wl)
            wl = strlen(buf);
    }
    for (c = 0; c < ncols; c++) {
        label(buf, sizeof buf, cols, c);
        if (strlen(buf) + 1 > wc)
            wc = strlen(buf) + 1;
    }
    if (wc > 24)
        wc = 24;
    fprintf(f, "  %-*s", (int)wl, "");
    for (c = 0; c < ncols; c++) {
        label(buf, sizeof buf, cols, c);
        fprintf(f, " %*.*s", (int)wc, (int)wc, buf);
    }
    fputc('\n', f);
    for (r = 0; r < nrows; r++) {
        label(buf, sizeof buf, rows, r);
        fprintf(f, "  %-*s", (int)wl, buf);
        for (c = 0; c < ncols; c++) {
            const double v = data[r * ld + c];
            if (v == 0.0)
                fprintf(f, " %*s", (int)wc, "0");
            else
                fprintf(f, " %*.6g", (int)wc, v);
        }
        fputc('\n', f);
    }
    fputc('\n', f);
}

static void text_vector(FILE *f, const char *title, const double *v, const rigmat_signal *s,
        size_t n)
{
    size_t i, w = 0;
    char buf[96];

    fprintf(f, "%s\n", title);
    if (n == 0)
        fputs("  (empty)\n", f);
    for (i = 0; i < n; i++) {
        label(buf, sizeof buf, s, i);
        if (strlen(buf) > w)
            w = strlen(buf);
    }
    for (i = 0; i < n; i++) {
        label(buf, sizeof buf, s, i);
        fprintf(f, "  %-*s %.10g\n", (int)w, buf, v[i]);
    }
    fputc('\n', f);
}

/* A node with its own text prints it; matrices and vectors have a layout
 * of their own; containers show their children; other values appear in
 * the text only through a line of their own. */
static void node(FILE *f, const rigmat_result *r, size_t i)
{
    const rigmat_rnode *n = &r->nodes[i];
    const char *title = n->title != NULL ? n->title : n->key != NULL ? n->key : "";
    size_t c;

    if (!(n->show & RIGMAT_SHOW_TEXT))
        return;
    if (n->text != NULL) {
        put_text(f, n->text);
        return;
    }
    switch (n->type) {
    case RIGMAT_R_TEXT:
        put_text(f, n->str != NULL ? n->str : "");
        break;
    case RIGMAT_R_MATRIX:
        rigmat_text_matrix(f, title, n->data, n->cols, n->row_names, n->rows, n->col_names,
                n->cols);
        break;
    case RIGMAT_R_VECTOR:
        if (n->text_list) {
            fprintf(f, "%s\n", title);
            for (c = 0; c < n->rows; c++) {
                char name[96];
                snprintf(name, sizeof name, "%s", n->row_names ? n->row_names[c].name : "");
                clean_buf(name);
                fprintf(f, "  %-24s %.10g ", name, n->data[c]);
                put_text(f, n->row_names ? n->row_names[c].unit : "");
                fputc('\n', f);
            }
        } else {
            text_vector(f, title, n->data, n->row_names, n->rows);
        }
        break;
    case RIGMAT_R_OBJECT:
    case RIGMAT_R_ARRAY:
        for (c = n->first; c != RIGMAT_NONE; c = r->nodes[c].next)
            node(f, r, c);
        break;
    default:
        break;
    }
}

rigmat_status rigmat_emit_text(const rigmat_result *r, FILE *f, rigmat_error *err)
{
    (void)err;
    node(f, r, 0);
    return RIGMAT_OK;
}
