/* cmd_linearize.c - `rigmat linearize FILE`: the continuous A, B, C, D at
 * the model's operating point (trimmed first when operating_point.solve
 * names unknowns), with the point itself and how far it is from a steady
 * state.  JSON layout: README.md, "JSON output". */
#include "cli.h"
#include "describe.h"

#include <stdlib.h>
#include <string.h>

static const char *const linearize_usage[] = {
    "rigmat linearize FILE [--set PATH=VALUE]... [--format FORMAT] [-o FILE|DIR] [--catalog DIR]",
    "                 [--name NAME] [--ctype double|float]",
    "FORMAT: text, json, csv, c, numpy, mtx (-o DIR), latex", NULL };

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
        r = rigmat_describe_linear(m, lti, q);
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
