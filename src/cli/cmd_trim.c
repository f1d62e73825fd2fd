/* cmd_trim.c - `rigmat trim FILE`: solve operating_point.solve for a
 * steady state (src/mech/trim.h) and print the point, its residual, the
 * unknowns the equations leave free and the equations no choice meets. */
#include "cli.h"

#include <string.h>

static const char *const trim_usage[] = {
    "rigmat trim FILE [--set PATH=VALUE]... [--format text|json] [-o FILE] [--catalog DIR]",
    NULL };

static void names_json(struct cli_json *j, const char *key, char **names, size_t n)
{
    size_t i;
    cli_json_key(j, key);
    cli_json_arr_open(j);
    for (i = 0; i < n; i++)
        cli_json_str(j, names[i]);
    cli_json_arr_close(j);
}

static void values_json(struct cli_json *j, const char *key, const double *v, size_t n)
{
    gsl_vector_const_view vv = gsl_vector_const_view_array(v, n ? n : 1);
    cli_json_key(j, key);
    cli_json_vector(j, n ? &vv.vector : NULL, n);
}

static rigmat_status trim_json(FILE *f, const rigmat_model *m, const rigmat_trim_result *r,
        double tol)
{
    struct cli_json j;

    cli_json_begin(&j, f);
    cli_json_head(&j, m, "trim");
    values_json(&j, "x", r->x, r->nx);
    values_json(&j, "u", r->u, r->nu);
    cli_json_key(&j, "residual");
    cli_json_num(&j, r->residual);
    cli_json_key(&j, "tolerance");
    cli_json_num(&j, tol);
    cli_json_key(&j, "iterations");
    cli_json_int(&j, (long)r->iterations);
    cli_json_key(&j, "converged");
    cli_json_bool(&j, r->converged);
    names_json(&j, "free_unknowns", r->free_unknowns, r->nfree);
    names_json(&j, "unmet_equations", r->unmet_equations, r->nunmet);
    return cli_json_end(&j);
}

static void trim_text(FILE *f, const rigmat_model *m, const rigmat_trim_result *r, double tol)
{
    const rigmat_layout *L = &m->layout;
    size_t i;

    fprintf(f, "model: %s\nsolved:", cli_model_name(m));
    for (i = 0; i < m->op_solve.count; i++)
        fprintf(f, "%s %s", i ? "," : "", m->op_solve.names[i]);
    fputs(m->op_solve.count ? "\n\nstates\n" : " nothing (currents follow)\n\nstates\n", f);
    for (i = 0; i < r->nx; i++)
        fprintf(f, "  %-24s %.10g %s\n", L->states[i].name, r->x[i], L->states[i].unit);
    fputs("inputs\n", f);
    for (i = 0; i < r->nu; i++)
        fprintf(f, "  %-24s %.10g %s\n", L->inputs[i].name, r->u[i], L->inputs[i].unit);
    fprintf(f, "\nresidual %.3g after %zu Gauss-Newton step%s (tolerance %.3g): %s\n",
            r->residual, r->iterations, r->iterations == 1 ? "" : "s", tol,
            r->converged ? "a steady state" : "not converged");
    if (r->nfree > 0) {
        fputs("not fixed by the equations (kept at their given values):", f);
        for (i = 0; i < r->nfree; i++)
            fprintf(f, "%s %s", i ? "," : "", r->free_unknowns[i]);
        fputc('\n', f);
    }
    if (r->nunmet > 0) {
        fputs("equations no choice of the unknowns meets:", f);
        for (i = 0; i < r->nunmet; i++)
            fprintf(f, "%s %s", i ? "," : "", r->unmet_equations[i]);
        fputc('\n', f);
    }
}

rigmat_status cmd_trim(int argc, char **argv, struct cli_env *env);
rigmat_status cmd_trim(int argc, char **argv, struct cli_env *env)
{
    struct cli_common c;
    const struct cli_opt opts[] = { CLI_COMMON_ROWS(&c), CLI_OPT_END_ROW };
    static const char *const formats[] = { "text", "json", NULL };
    rigmat_model *m = NULL;
    rigmat_trim_result r;
    rigmat_error e;
    const char *file = NULL;
    size_t i;
    int done = 0;
    rigmat_status st;
    int fmt;

    memset(&c, 0, sizeof c);
    memset(&r, 0, sizeof r);
    st = cli_model_command(argc, argv, opts, trim_usage, formats, env, &c, &file, &fmt, &done);
    if (st != RIGMAT_OK || done)
        return st;
    st = cli_load_model(env, file, &c, &m);
    if (st != RIGMAT_OK)
        return st;
    memset(&e, 0, sizeof e);
    st = rigmat_trim_model(m, &env->opt, &r, &e);
    if (st != RIGMAT_OK) {
        st = cli_report(env, &e);
        for (i = 0; i < r.nunmet; i++)
            fprintf(env->err, "  note: cannot be met: %s\n", r.unmet_equations[i]);
        for (i = 0; i < r.nfree; i++)
            fprintf(env->err, "  note: not fixed by the equations: %s\n", r.free_unknowns[i]);
    } else if (fmt == 1) {
        st = trim_json(env->out, m, &r, env->opt.trim_tol);
    } else {
        trim_text(env->out, m, &r, env->opt.trim_tol);
    }
    rigmat_trim_result_release(&r);
    rigmat_model_free(m);
    return st;
}
