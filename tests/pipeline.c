/* pipeline.c - see pipeline.h. */
#include "pipeline.h"
#include "discretize.h"
#include "noise.h"

#include <stdlib.h>
#include <string.h>

void pipe_record_release(pipe_record *r)
{
    free(r->bytes);
    memset(r, 0, sizeof *r);
}

static void put(pipe_record *r, const void *p, size_t n)
{
    if (r == NULL || r->nomem)
        return;
    if (r->len + n > r->cap) {
        size_t cap = r->cap ? r->cap : 4096;
        unsigned char *g;
        while (cap < r->len + n)
            cap *= 2;
        g = realloc(r->bytes, cap);
        if (g == NULL) {
            r->nomem = 1;
            return;
        }
        r->bytes = g;
        r->cap = cap;
    }
    memcpy(r->bytes + r->len, p, n);
    r->len += n;
}

static void put_size(pipe_record *r, size_t v)
{
    put(r, &v, sizeof v);
}

static void put_doubles(pipe_record *r, const double *v, size_t n)
{
    put_size(r, n);
    if (v != NULL)
        put(r, v, n * sizeof *v);
}

static void put_matrix(pipe_record *r, const gsl_matrix *m)
{
    size_t i;

    if (m == NULL) {
        put_size(r, 0);
        return;
    }
    put_size(r, m->size1);
    put_size(r, m->size2);
    for (i = 0; i < m->size1; i++)
        put(r, gsl_matrix_const_ptr(m, i, 0), m->size2 * sizeof(double));
}

static void put_vector(pipe_record *r, const gsl_vector *v)
{
    size_t i;

    put_size(r, v == NULL ? 0 : v->size);
    for (i = 0; v != NULL && i < v->size; i++) {
        const double x = gsl_vector_get(v, i);
        put(r, &x, sizeof x);
    }
}

static void put_layout(pipe_record *r, const rigmat_layout *L)
{
    size_t i;

    put_size(r, L->nx);
    put_size(r, L->nu);
    put_size(r, L->ny);
    for (i = 0; i < L->nx; i++)
        put(r, L->states[i].name, strlen(L->states[i].name) + 1);
    for (i = 0; i < L->nu; i++)
        put(r, L->inputs[i].name, strlen(L->inputs[i].name) + 1);
    for (i = 0; i < L->ny; i++)
        put(r, L->outputs[i].name, strlen(L->outputs[i].name) + 1);
    put(r, L->order_hash, sizeof L->order_hash);
}

#define STEP(name, call)                                                                           \
    do {                                                                                           \
        if (st == RIGMAT_OK) {                                                                     \
            st = (call);                                                                           \
            if (st != RIGMAT_OK && where != NULL)                                                  \
                *where = (name);                                                                   \
        }                                                                                          \
    } while (0)

rigmat_status pipe_run(const char *file, const char *catalog, const rigmat_model *shared,
        pipe_record *rec, const char **where)
{
    rigmat_options opt = rigmat_options_default();
    rigmat_discretize_opts dopt = rigmat_discretize_opts_default();
    const rigmat_noise_opts nopt = rigmat_noise_opts_default();
    const rigmat_sampling_limits lim = rigmat_sampling_limits_default();
    rigmat_diags d, warn;
    rigmat_model *own = NULL;
    const rigmat_model *m = shared;
    rigmat_trim_result tr;
    rigmat_lti *lti = NULL;
    rigmat_dlti *dl = NULL;
    rigmat_noise *nz = NULL;
    rigmat_discretize_ws *dw = NULL;
    rigmat_noise_ws *nw = NULL;
    rigmat_advice advice[16];
    size_t nadvice = 0;
    rigmat_error e;
    rigmat_status st = RIGMAT_OK;

    opt.catalog_dir = catalog;
    dopt.period_s = 1.0 / 200.0;
    opt.rate_hz = 200.0;
    memset(&e, 0, sizeof e);
    memset(&tr, 0, sizeof tr);
    rigmat_diags_init(&d);
    rigmat_diags_init(&warn);
    if (where != NULL)
        *where = "";
    if (m == NULL) {
        STEP("load", rigmat_model_load(file, NULL, 0, &opt, &own, &d));
        /* completes a model with closed loops (assembly, the layout) */
        STEP("equations", rigmat_model_check_equations(own, &d));
        m = own;
    }
    if (st == RIGMAT_OK)
        put_layout(rec, &m->layout);
    if (st == RIGMAT_OK && m->op_solve.count > 0) {
        STEP("trim", rigmat_trim_model(m, &opt, &tr, &e));
        put_doubles(rec, tr.x, tr.nx);
        put_doubles(rec, tr.u, tr.nu);
        put(rec, &tr.residual, sizeof tr.residual);
        put_size(rec, tr.iterations);
    }
    STEP("linearize", rigmat_linearize(m, &opt, &lti, &warn, &e));
    if (st == RIGMAT_OK) {
        put_matrix(rec, lti->A);
        put_matrix(rec, lti->B);
        put_matrix(rec, lti->C);
        put_matrix(rec, lti->D);
        put_vector(rec, lti->x0);
        put_vector(rec, lti->u0);
        put_vector(rec, lti->y0);
        put_vector(rec, lti->f0);
        put_doubles(rec, lti->input_intensity, lti->nu);
        put_doubles(rec, lti->output_noise_sd, lti->ny);
        put_doubles(rec, lti->output_density, lti->ny);
        put_size(rec, warn.count);
    }
    if (st == RIGMAT_OK && lti->nx > 0) {
        dw = rigmat_discretize_ws_alloc(lti->nx, lti->nu, lti->ny);
        nw = rigmat_noise_ws_alloc(lti->nx, lti->nu - lti->nu_control);
        if (dw == NULL || nw == NULL) {
            st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
            if (where != NULL)
                *where = "workspaces";
        }
        STEP("discretize", rigmat_discretize(lti, &dopt, dw, &dl, &e));
        STEP("noise", rigmat_noise_build(lti, dl, &nopt, nw, &nz, &e));
        STEP("advice", rigmat_sampling_advice(lti, &dopt, &lim, advice, 16, &nadvice, &e));
        if (st == RIGMAT_OK) {
            size_t i;
            put_matrix(rec, dl->Ad);
            put_matrix(rec, dl->Bd);
            put_matrix(rec, dl->Gd);
            put_matrix(rec, dl->Cd);
            put_matrix(rec, dl->Dd);
            put_matrix(rec, dl->Ed);
            put_matrix(rec, nz->Qd);
            put_matrix(rec, nz->Rd);
            put_matrix(rec, nz->S);
            put_doubles(rec, nz->direct_var, nz->ny);
            put_doubles(rec, nz->disturbance_sd, nz->nw);
            put_size(rec, nz->doublings);
            put_size(rec, nadvice);
            for (i = 0; i < nadvice && i < 16; i++) {
                put(rec, &advice[i].re, sizeof advice[i].re);
                put(rec, &advice[i].im, sizeof advice[i].im);
                put_size(rec, advice[i].state);
            }
        }
    }
    if (st == RIGMAT_OK && rec != NULL && rec->nomem) {
        st = RIGMAT_ENOMEM;
        if (where != NULL)
            *where = "record";
    }
    rigmat_noise_free(nz);
    rigmat_dlti_free(dl);
    rigmat_noise_ws_free(nw);
    rigmat_discretize_ws_free(dw);
    rigmat_lti_free(lti);
    rigmat_trim_result_release(&tr);
    rigmat_model_free(own);
    rigmat_diags_release(&warn);
    rigmat_diags_release(&d);
    return st;
}
