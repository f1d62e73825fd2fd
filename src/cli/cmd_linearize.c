/* cmd_linearize.c - `rigmat linearize FILE`: the continuous A, B, C, D at
 * the model's operating point (trimmed first when operating_point.solve
 * names unknowns), with the point itself and how far it is from a steady
 * state.  JSON layout: README.md, "JSON output". */
#include "cli.h"

#include <string.h>

static const char *const linearize_usage[] = {
    "rigmat linearize FILE [--set PATH=VALUE]... [--format text|json] [-o FILE] [--catalog DIR]",
    NULL };

static void text_vector(FILE *f, const char *title, const gsl_vector *v, const rigmat_signal *s,
        size_t n)
{
    size_t i, w = 0;
    char buf[96];

    fprintf(f, "%s\n", title);
    if (n == 0)
        fputs("  (empty)\n", f);
    for (i = 0; i < n; i++) {
        snprintf(buf, sizeof buf, "%s [%s]", s[i].name, s[i].unit);
        if (strlen(buf) > w)
            w = strlen(buf);
    }
    for (i = 0; i < n; i++) {
        snprintf(buf, sizeof buf, "%s [%s]", s[i].name, s[i].unit);
        fprintf(f, "  %-*s %.10g\n", (int)w, buf, gsl_vector_get(v, i));
    }
    fputc('\n', f);
}

static void linearize_text(FILE *f, const rigmat_model *m, const rigmat_lti *l)
{
    const rigmat_layout *L = &m->layout;

    fprintf(f, "model: %s\norder hash: %s\n\n", cli_model_name(m), L->order_hash);
    cli_text_matrix(f, "A = df/dx", l->A, L->states, L->nx, L->states, L->nx);
    cli_text_matrix(f, "B = df/du", l->B, L->states, L->nx, L->inputs, L->nu);
    cli_text_matrix(f, "C = dh/dx", l->C, L->outputs, L->ny, L->states, L->nx);
    cli_text_matrix(f, "D = dh/du", l->D, L->outputs, L->ny, L->inputs, L->nu);
    text_vector(f, "operating point: x0", l->x0, L->states, L->nx);
    text_vector(f, "operating point: u0", l->u0, L->inputs, L->nu);
    text_vector(f, "operating point: y0 = h(x0, u0)", l->y0, L->outputs, L->ny);
    text_vector(f, "equilibrium: f0 = f(x0, u0)", l->f0, L->states, L->nx);
    fprintf(f, "residual %.3g (accelerations and current derivatives): %s\n", l->residual,
            l->is_steady ? "a steady state" : "not a steady state; x' = A dx + B du + f0");
}

static rigmat_status linearize_json(FILE *f, const rigmat_model *m, const rigmat_lti *l)
{
    const rigmat_layout *L = &m->layout;
    struct cli_json j;

    cli_json_begin(&j, f);
    cli_json_head(&j, m, "continuous");
    cli_json_key(&j, "A");
    cli_json_matrix(&j, l->A, L->nx, L->nx);
    cli_json_key(&j, "B");
    cli_json_matrix(&j, l->B, L->nx, L->nu);
    cli_json_key(&j, "C");
    cli_json_matrix(&j, l->C, L->ny, L->nx);
    cli_json_key(&j, "D");
    cli_json_matrix(&j, l->D, L->ny, L->nu);
    cli_json_operating_point(&j, l);
    cli_json_key(&j, "equilibrium");
    cli_json_obj_open(&j);
    cli_json_key(&j, "residual");
    cli_json_num(&j, l->residual);
    cli_json_key(&j, "is_steady");
    cli_json_bool(&j, l->is_steady);
    cli_json_key(&j, "f0");
    cli_json_vector(&j, l->f0, L->nx);
    cli_json_obj_close(&j);
    return cli_json_end(&j);
}

rigmat_status cmd_linearize(int argc, char **argv, struct cli_env *env);
rigmat_status cmd_linearize(int argc, char **argv, struct cli_env *env)
{
    struct cli_common c;
    const struct cli_opt opts[] = { CLI_COMMON_ROWS(&c), CLI_OPT_END_ROW };
    static const char *const formats[] = { "text", "json", NULL };
    rigmat_model *m = NULL;
    rigmat_lti *lti = NULL;
    const char *file = NULL;
    int done = 0;
    rigmat_status st;
    int fmt;

    memset(&c, 0, sizeof c);
    st = cli_model_command(argc, argv, opts, linearize_usage, formats, env, &c, &file, &fmt, &done);
    if (st != RIGMAT_OK || done)
        return st;
    st = cli_load_model(env, file, &c, &m);
    if (st != RIGMAT_OK)
        return st;
    st = cli_linearize(env, m, &lti);
    if (st != RIGMAT_OK) {
        /* reported */
    } else if (fmt == 1) {
        st = linearize_json(env->out, m, lti);
        if (st != RIGMAT_OK)
            fprintf(env->err, "rigmat linearize: error: the result is not finite\n");
    } else {
        linearize_text(env->out, m, lti);
        cli_modes_summary(env, m, lti);
    }
    rigmat_lti_free(lti);
    rigmat_model_free(m);
    return st;
}
