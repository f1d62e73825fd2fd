/* api.c - the public API of include/rigmat.h, part one: diagnostics,
 * sources and models (stage lib).  A thin layer: every function calls the
 * stage that does the work (src/util/diag.c, src/model/load.c,
 * src/mech/equations.c) and turns its rigmat_error into a diagnostic. */
#include "api.h"
#include "share_dir.h" /* RIGMAT_SHARE_DIR, from the Makefile */

#include <stdlib.h>
#include <string.h>

/* ------------------------------------------------------------ helpers */

rigmat_status rigmat_api_fail(rigmat_diags *d, const rigmat_error *e)
{
    const rigmat_status st = e->status != RIGMAT_OK ? e->status : RIGMAT_EINTERNAL;

    if (d != NULL && rigmat_diags_add(d, RIGMAT_ERROR, e->where, e->within, NULL,
                             e->hint[0] != '\0' ? e->hint : NULL, "%s",
                             e->message[0] != '\0' ? e->message : rigmat_status_name(st)) !=
                             RIGMAT_OK)
        return RIGMAT_ENOMEM;
    return st;
}

rigmat_status rigmat_api_usage(rigmat_diags *d, const char *what)
{
    rigmat_error e;

    memset(&e, 0, sizeof e);
    RIGMAT_FAIL(&e, RIGMAT_EUSAGE, "%s", what);
    return rigmat_api_fail(d, &e);
}

rigmat_status rigmat_api_view(const gsl_matrix *m, size_t rows, size_t cols, rigmat_matrix_view *out)
{
    out->data = NULL;
    out->rows = rows;
    out->cols = cols;
    if (rows == 0 || cols == 0 || m == NULL) {
        out->rows = out->cols = 0;
        return RIGMAT_OK;
    }
    /* row-major without gaps: every matrix rigmat allocates is */
    if (m->size1 != rows || m->size2 != cols || m->tda != cols)
        return RIGMAT_EINTERNAL;
    out->data = m->data;
    return RIGMAT_OK;
}

rigmat_status rigmat_api_view_vector(const gsl_vector *v, size_t n, rigmat_matrix_view *out)
{
    out->data = NULL;
    out->rows = out->cols = 0;
    if (n == 0 || v == NULL)
        return RIGMAT_OK;
    if (v->size != n || v->stride != 1)
        return RIGMAT_EINTERNAL;
    out->data = v->data;
    out->rows = n;
    out->cols = 1;
    return RIGMAT_OK;
}

rigmat_options rigmat_api_options(void)
{
    rigmat_options o = rigmat_options_default();

    o.catalog_share = RIGMAT_SHARE_DIR;
    return o;
}

/* ------------------------------------------------------------ diagnostics */

rigmat_diags *rigmat_diags_new(void)
{
    rigmat_diags *d = malloc(sizeof *d);

    if (d != NULL)
        rigmat_diags_init(d);
    return d;
}

void rigmat_diags_free(rigmat_diags *d)
{
    if (d == NULL)
        return;
    rigmat_diags_release(d);
    free(d);
}

size_t rigmat_diags_count(const rigmat_diags *d)
{
    return d != NULL ? d->count : 0;
}

size_t rigmat_diags_errors(const rigmat_diags *d)
{
    return d != NULL ? d->errors : 0;
}

rigmat_status rigmat_diags_get(const rigmat_diags *d, size_t i, rigmat_diag_view *out)
{
    const rigmat_diag *it;

    if (d == NULL || out == NULL || i >= d->count)
        return RIGMAT_EUSAGE;
    it = &d->items[i];
    out->severity = it->severity;
    out->file = it->where.file;
    out->line = it->where.line;
    out->column = it->where.col;
    out->context = it->within_what;
    out->message = it->message != NULL ? it->message : "";
    out->hint = it->hint;
    return RIGMAT_OK;
}

/* ------------------------------------------------------------ sources */

struct rigmat_source {
    char *path;
    char *catalog;
    char **sets; /* "KEY=VALUE", as the command line's --set */
    size_t nsets;
};

static char *copy(const char *s)
{
    const size_t n = strlen(s) + 1;
    char *c = malloc(n);

    if (c != NULL)
        memcpy(c, s, n);
    return c;
}

rigmat_source *rigmat_source_new(const char *path)
{
    rigmat_source *s;

    if (path == NULL)
        return NULL;
    s = calloc(1, sizeof *s);
    if (s == NULL)
        return NULL;
    s->path = copy(path);
    if (s->path == NULL) {
        free(s);
        return NULL;
    }
    return s;
}

void rigmat_source_free(rigmat_source *s)
{
    size_t i;

    if (s == NULL)
        return;
    for (i = 0; i < s->nsets; i++)
        free(s->sets[i]);
    free(s->sets);
    free(s->catalog);
    free(s->path);
    free(s);
}

rigmat_status rigmat_source_set(rigmat_source *s, const char *key, const char *value)
{
    char **grown, *item;
    size_t nk;

    if (s == NULL || key == NULL || key[0] == '\0' || value == NULL)
        return RIGMAT_EUSAGE;
    nk = strlen(key);
    item = malloc(nk + strlen(value) + 2);
    if (item == NULL)
        return RIGMAT_ENOMEM;
    memcpy(item, key, nk);
    item[nk] = '=';
    memcpy(item + nk + 1, value, strlen(value) + 1);
    grown = realloc(s->sets, (s->nsets + 1) * sizeof *grown);
    if (grown == NULL) {
        free(item);
        return RIGMAT_ENOMEM;
    }
    s->sets = grown;
    s->sets[s->nsets++] = item;
    return RIGMAT_OK;
}

rigmat_status rigmat_source_catalog(rigmat_source *s, const char *dir)
{
    char *c;

    if (s == NULL || dir == NULL)
        return RIGMAT_EUSAGE;
    c = copy(dir);
    if (c == NULL)
        return RIGMAT_ENOMEM;
    free(s->catalog);
    s->catalog = c;
    return RIGMAT_OK;
}

/* ------------------------------------------------------------ models */

rigmat_status rigmat_source_load(const rigmat_source *s, rigmat_model **out, rigmat_diags *diags)
{
    rigmat_options opt = rigmat_api_options();
    rigmat_diags local, *d = diags;
    rigmat_status st;

    if (out == NULL)
        return rigmat_api_usage(diags, "rigmat_source_load: out is NULL");
    *out = NULL;
    if (s == NULL)
        return rigmat_api_usage(diags, "rigmat_source_load: the source is NULL");
    if (d == NULL) {
        /* the loader needs a list; the caller did not want one */
        rigmat_diags_init(&local);
        d = &local;
    }
    opt.catalog_dir = s->catalog;
    st = rigmat_model_load(s->path, (const char *const *)s->sets, s->nsets, &opt, out, d);
    if (st == RIGMAT_OK) {
        /* the checks that need the equations of motion, as the program */
        st = rigmat_model_check_equations(*out, d);
        if (st != RIGMAT_OK) {
            rigmat_model_free(*out);
            *out = NULL;
        }
    }
    if (d == &local)
        rigmat_diags_release(&local);
    return st;
}

const char *rigmat_model_name(const rigmat_model *m)
{
    return m != NULL && m->name != NULL ? m->name : "";
}

const char *rigmat_model_order_hash(const rigmat_model *m)
{
    return m != NULL ? m->layout.order_hash : "";
}

/* The signals of group g of layout L and their count; NULL for a bad g. */
const rigmat_signal *rigmat_api_group(const rigmat_layout *L, rigmat_group g, size_t *n)
{
    switch (g) {
    case RIGMAT_STATES: *n = L->nx; return L->states;
    case RIGMAT_INPUTS: *n = L->nu; return L->inputs;
    case RIGMAT_OUTPUTS: *n = L->ny; return L->outputs;
    }
    *n = 0;
    return NULL;
}

size_t rigmat_model_count(const rigmat_model *m, rigmat_group g)
{
    size_t n = 0;

    if (m != NULL)
        (void)rigmat_api_group(&m->layout, g, &n);
    return n;
}

void rigmat_api_signal(const rigmat_signal *s, int disturbance, rigmat_signal_view *out)
{
    out->name = s->name;
    out->unit = s->unit;
    out->disturbance = disturbance;
}

rigmat_status rigmat_model_signal(const rigmat_model *m, rigmat_group g, size_t i,
        rigmat_signal_view *out)
{
    const rigmat_signal *s;
    size_t n = 0;

    if (m == NULL || out == NULL)
        return RIGMAT_EUSAGE;
    s = rigmat_api_group(&m->layout, g, &n);
    if (s == NULL || i >= n)
        return RIGMAT_EUSAGE;
    /* inputs [nu_control, nu) are the disturbances */
    rigmat_api_signal(&s[i], g == RIGMAT_INPUTS && i >= m->layout.nu_control, out);
    return RIGMAT_OK;
}
