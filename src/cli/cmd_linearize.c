/* cmd_linearize.c - `rigmat linearize FILE`: the continuous A, B, C, D at
 * the model's operating point (trimmed first when operating_point.solve
 * names unknowns), with the point itself and how far it is from a steady
 * state.  JSON layout: README.md, "JSON output". */
#include "cli.h"

#include <stdlib.h>
#include <string.h>

static const char *const linearize_usage[] = {
    "rigmat linearize FILE [--set PATH=VALUE]... [--format FORMAT] [-o FILE|DIR] [--catalog DIR]",
    "                 [--name NAME] [--ctype double|float]",
    "FORMAT: text, json, csv, c, numpy, mtx (-o DIR), latex", NULL };

/* The result, described once for every format.  q (may be NULL): every
 * joint's coordinate at the point, given for a model with closed loops. */
static rigmat_result *linearize_result(const rigmat_model *m, const rigmat_lti *l,
        const double *q)
{
    const rigmat_layout *L = &m->layout;
    rigmat_result *r = rigmat_result_alloc("continuous");

    if (r == NULL)
        return NULL;
    rigmat_result_head(r, m->name, L->order_hash, L->states, L->nx, L->inputs, L->nu,
            L->outputs, L->ny);
    rigmat_result_dim(r, "state", L->states, L->nx);
    rigmat_result_dim(r, "input", L->inputs, L->nu);
    rigmat_result_dim(r, "output", L->outputs, L->ny);
    rigmat_result_text(r, "model: %s\norder hash: %s\n\n", cli_model_name(m),
            L->order_hash);
    rigmat_result_key(r, "A");
    rigmat_result_matrix(r, l->A, L->nx, L->nx, L->states, L->states);
    rigmat_result_title(r, "A = df/dx");
    rigmat_result_key(r, "B");
    rigmat_result_matrix(r, l->B, L->nx, L->nu, L->states, L->inputs);
    rigmat_result_title(r, "B = df/du");
    rigmat_result_key(r, "C");
    rigmat_result_matrix(r, l->C, L->ny, L->nx, L->outputs, L->states);
    rigmat_result_title(r, "C = dh/dx");
    rigmat_result_key(r, "D");
    rigmat_result_matrix(r, l->D, L->ny, L->nu, L->outputs, L->inputs);
    rigmat_result_title(r, "D = dh/du");
    rigmat_result_key(r, "operating_point");
    rigmat_result_object(r);
    rigmat_result_key(r, "x");
    rigmat_result_vector(r, l->x0, L->nx, L->states);
    rigmat_result_title(r, "operating point: x0");
    rigmat_result_export_name(r, "x0");
    rigmat_result_key(r, "u");
    rigmat_result_vector(r, l->u0, L->nu, L->inputs);
    rigmat_result_title(r, "operating point: u0");
    rigmat_result_export_name(r, "u0");
    rigmat_result_key(r, "y");
    rigmat_result_vector(r, l->y0, L->ny, L->outputs);
    rigmat_result_title(r, "operating point: y0 = h(x0, u0)");
    rigmat_result_export_name(r, "y0");
    if (q != NULL) {
        /* a closed loop's dependent coordinates are no states: every
         * joint's value (README.md, "Closed loops"), JSON only */
        size_t j;
        rigmat_result_key(r, "coordinates");
        rigmat_result_object(r);
        for (j = 0; j < m->njoints; j++) {
            rigmat_result_key(r, m->joints[j].name);
            rigmat_result_number(r, q[j], NULL);
            rigmat_result_show(r, RIGMAT_SHOW_JSON);
        }
        rigmat_result_close(r);
        rigmat_result_show(r, RIGMAT_SHOW_JSON);
    }
    rigmat_result_close(r);
    rigmat_result_key(r, "equilibrium");
    rigmat_result_object(r);
    rigmat_result_key(r, "residual");
    rigmat_result_number(r, l->residual, NULL);
    rigmat_result_export_name(r, "residual");
    rigmat_result_key(r, "is_steady");
    rigmat_result_bool(r, l->is_steady);
    rigmat_result_export_name(r, "is_steady");
    rigmat_result_key(r, "f0");
    rigmat_result_vector(r, l->f0, L->nx, L->states);
    rigmat_result_title(r, "equilibrium: f0 = f(x0, u0)");
    rigmat_result_export_name(r, "f0");
    rigmat_result_close(r);
    rigmat_result_text(r, "residual %.3g (accelerations and current derivatives): %s\n",
            l->residual,
            l->is_steady ? "a steady state" : "not a steady state; x' = A dx + B du + f0");
    return r;
}

/* Every joint's coordinate at the linearized point into a new *q. */
static rigmat_status closed_coordinates(struct cli_env *env, const rigmat_model *m,
        const rigmat_lti *l, double **q)
{
    rigmat_system *s = NULL;
    rigmat_error e;
    double *x = calloc(l->nx + 1, sizeof *x), *u = calloc(l->nu + 1, sizeof *u);
    rigmat_status st;
    size_t k;

    memset(&e, 0, sizeof e);
    *q = calloc(m->njoints + 1, sizeof **q);
    if (x == NULL || u == NULL || *q == NULL) {
        st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
    } else {
        for (k = 0; k < l->nx; k++)
            x[k] = gsl_vector_get(l->x0, k);
        for (k = 0; k < l->nu; k++)
            u[k] = gsl_vector_get(l->u0, k);
        st = rigmat_system_alloc(m, &s, &e);
        if (st == RIGMAT_OK)
            st = rigmat_system_coordinates(s, x, u, *q, &e);
    }
    rigmat_system_free(s);
    free(x);
    free(u);
    if (st != RIGMAT_OK)
        (void)cli_report(env, &e);
    return st;
}

rigmat_status cmd_linearize(int argc, char **argv, struct cli_env *env);
rigmat_status cmd_linearize(int argc, char **argv, struct cli_env *env)
{
    struct cli_common c;
    const struct cli_opt opts[] = { CLI_EXPORT_ROWS(&c), CLI_COMMON_ROWS(&c), CLI_OPT_END_ROW };
    rigmat_result *r = NULL;
    rigmat_model *m = NULL;
    rigmat_lti *lti = NULL;
    double *q = NULL;
    const char *file = NULL;
    int done = 0;
    rigmat_status st;
    int fmt;

    memset(&c, 0, sizeof c);
    st = cli_model_command(argc, argv, opts, linearize_usage, cli_all_formats, env, &c, &file, &fmt,
            &done);
    if (st != RIGMAT_OK || done)
        return st;
    st = cli_load_model(env, file, &c, &m);
    if (st != RIGMAT_OK)
        return st;
    st = cli_linearize(env, m, &lti);
    if (st == RIGMAT_OK && m->nclosures > 0)
        st = closed_coordinates(env, m, lti, &q);
    if (st == RIGMAT_OK) {
        r = linearize_result(m, lti, q);
        st = r != NULL ? cli_emit(env, r, &c, file) : RIGMAT_ENOMEM;
        if (r == NULL)
            fprintf(env->err, "rigmat linearize: out of memory\n");
        /* the text ends with the one-line modes summary */
        if (st == RIGMAT_OK && (c.format == NULL || strcmp(c.format, "text") == 0))
            cli_modes_summary(env, m, lti);
    }
    rigmat_result_free(r);
    rigmat_lti_free(lti);
    rigmat_model_free(m);
    free(q);
    return st;
}
