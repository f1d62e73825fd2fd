/* cmd_trim.c - `rigmat trim FILE`: solve operating_point.solve for a
 * steady state (src/mech/trim.h) and print the point, its residual, the
 * unknowns the equations leave free and the equations no choice meets. */
#include "cli.h"

#include <string.h>

static const char *const trim_usage[] = {
    "rigmat trim FILE [--set PATH=VALUE]... [--format text|json] [-o FILE] [--catalog DIR]",
    NULL };

static void names(rigmat_result *r, const char *key, char **list, size_t n, const char *lead)
{
    size_t i, len = 0;
    char text[1024];

    rigmat_result_key(r, key);
    rigmat_result_array(r);
    for (i = 0; i < n; i++)
        rigmat_result_string(r, list[i]);
    rigmat_result_close(r);
    rigmat_result_export_name(r, key);
    if (n == 0) {
        rigmat_result_as_text(r, "%s", "");
        return;
    }
    text[0] = '\0';
    for (i = 0; i < n && len + 1 < sizeof text; i++) {
        const int w = snprintf(text + len, sizeof text - len, "%s %s", i ? "," : "", list[i]);
        if (w < 0)
            break;
        len += (size_t)w;
        if (len >= sizeof text)
            len = sizeof text - 1;
    }
    rigmat_result_as_text(r, "%s:%s\n", lead, text);
}

/* The failed trim's residual per equation, a short table on stderr. */
static void residual_table(FILE *f, const rigmat_trim_result *t)
{
    size_t i, w = 8;

    if (t->neq == 0 || t->eq_state == NULL || t->eq_unit == NULL || t->eq_residual == NULL)
        return;
    for (i = 0; i < t->neq; i++)
        if (t->eq_state[i] == NULL || t->eq_unit[i] == NULL)
            return; /* only after an allocation failure, which is reported */
    for (i = 0; i < t->neq; i++)
        if (strlen(t->eq_state[i]) + 6 > w)
            w = strlen(t->eq_state[i]) + 6;
    fprintf(f, "  residual per equation at the last iterate:\n");
    for (i = 0; i < t->neq; i++) {
        char eq[160];
        size_t k;
        int unmet = 0;
        snprintf(eq, sizeof eq, "d(%s)/dt", t->eq_state[i]);
        for (k = 0; k < t->nunmet; k++)
            unmet |= strcmp(t->unmet_equations[k], eq) == 0;
        fprintf(f, "    %-*s %13.6g %s%s\n", (int)w, eq, t->eq_residual[i], t->eq_unit[i],
                unmet ? "  (cannot be met)" : "");
    }
}

/* The result, described once for every format. */
static rigmat_result *trim_result(const rigmat_model *m, const rigmat_trim_result *t, double tol)
{
    const rigmat_layout *L = &m->layout;
    rigmat_result *r = rigmat_result_alloc("trim");
    size_t i;

    if (r == NULL)
        return NULL;
    rigmat_result_head(r, m->name, L->order_hash, L->states, L->nx, L->inputs, L->nu,
            L->outputs, L->ny);
    rigmat_result_text(r, "model: %s\nsolved:", cli_model_name(m));
    for (i = 0; i < m->op_solve.count; i++)
        rigmat_result_text(r, "%s %s", i ? "," : "", m->op_solve.names[i]);
    rigmat_result_text(r, "%s", m->op_solve.count ? "\n\n" : " nothing (currents follow)\n\n");
    rigmat_result_key(r, "x");
    rigmat_result_values(r, t->x, t->nx, L->states);
    rigmat_result_title(r, "states");
    rigmat_result_text_list(r);
    rigmat_result_key(r, "u");
    rigmat_result_values(r, t->u, t->nu, L->inputs);
    rigmat_result_title(r, "inputs");
    rigmat_result_text_list(r);
    rigmat_result_key(r, "residual");
    rigmat_result_number(r, t->residual, NULL);
    rigmat_result_key(r, "tolerance");
    rigmat_result_number(r, tol, NULL);
    rigmat_result_key(r, "iterations");
    rigmat_result_integer(r, (long)t->iterations);
    rigmat_result_key(r, "converged");
    rigmat_result_bool(r, t->converged);
    rigmat_result_as_text(r, "\nresidual %.3g after %zu Gauss-Newton step%s (tolerance %.3g): %s\n",
            t->residual, t->iterations, t->iterations == 1 ? "" : "s", tol,
            t->converged ? "a steady state" : "not converged");
    /* the residual per equation: name = the state whose derivative it is */
    rigmat_result_key(r, "residuals");
    rigmat_result_array(r);
    for (i = 0; i < t->neq; i++) {
        char eq[160];
        snprintf(eq, sizeof eq, "d(%s)/dt", t->eq_state[i]);
        rigmat_result_object(r);
        rigmat_result_key(r, "name");
        rigmat_result_string(r, t->eq_state[i]);
        rigmat_result_key(r, "equation");
        rigmat_result_string(r, eq);
        rigmat_result_key(r, "value");
        rigmat_result_number(r, t->eq_residual[i], NULL);
        rigmat_result_key(r, "unit");
        rigmat_result_string(r, t->eq_unit[i]);
        rigmat_result_close(r);
    }
    rigmat_result_close(r);
    rigmat_result_as_text(r, "%s", "");
    names(r, "free_unknowns", t->free_unknowns, t->nfree,
            "not fixed by the equations (kept at their given values)");
    names(r, "unmet_equations", t->unmet_equations, t->nunmet,
            "equations no choice of the unknowns meets");
    return r;
}

rigmat_status cmd_trim(int argc, char **argv, struct cli_env *env);
rigmat_status cmd_trim(int argc, char **argv, struct cli_env *env)
{
    struct cli_common c;
    const struct cli_opt opts[] = { CLI_COMMON_ROWS(&c), CLI_OPT_END_ROW };
    static const char *const formats[] = { "text", "json", NULL };
    rigmat_result *res = NULL;
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
        if (st == RIGMAT_ENUMERIC)
            residual_table(env->err, &r);
        for (i = 0; i < r.nunmet; i++)
            fprintf(env->err, "  note: cannot be met: %s\n", r.unmet_equations[i]);
        for (i = 0; i < r.nfree; i++)
            fprintf(env->err, "  note: not fixed by the equations: %s\n", r.free_unknowns[i]);
        /* with --format json a trim that did not converge still writes its
         * result (converged false, the last iterate, unmet_equations) for
         * other tools, and exits 3; the text stays on stderr */
        if (st == RIGMAT_ENUMERIC && r.x != NULL && !r.converged && c.format != NULL &&
                strcmp(c.format, "json") == 0) {
            rigmat_status st2;
            res = trim_result(m, &r, env->opt.trim_tol);
            st2 = res != NULL ? cli_emit(env, res, &c, file) : RIGMAT_ENOMEM;
            if (st2 != RIGMAT_OK)
                st = st2;
            else
                env->keep_on_failure = 1;
        }
    } else {
        res = trim_result(m, &r, env->opt.trim_tol);
        st = res != NULL ? cli_emit(env, res, &c, file) : RIGMAT_ENOMEM;
        if (res == NULL)
            fprintf(env->err, "rigmat trim: out of memory\n");
    }
    rigmat_result_free(res);
    rigmat_trim_result_release(&r);
    rigmat_model_free(m);
    return st;
}
