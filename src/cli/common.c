/* common.c - model loading and error reporting shared by the commands. */
#include "cli.h"
#include "describe.h"
#include "affine.h"
#include "linearize.h"

#include <math.h>
#include <string.h>

void cli_put_clean(FILE *f, const char *s)
{
    for (; s != NULL && *s; s++) {
        unsigned char c = (unsigned char)*s;
        fputc((c < 0x20 || c == 0x7f) ? '?' : c, f);
    }
}

const char *cli_model_name(const rigmat_model *m)
{
    return rigmat_model_display_name(m);
}

rigmat_status cli_report(struct cli_env *env, const rigmat_error *err)
{
    if (err->where.file != NULL) {
        cli_put_clean(env->err, err->where.file);
        if (err->where.line > 0)
            fprintf(env->err, ":%lu:%lu", err->where.line, err->where.col);
        fputs(": error: ", env->err);
    } else {
        fprintf(env->err, "rigmat %s: error: ", env->command);
    }
    cli_put_clean(env->err, err->message);
    fputc('\n', env->err);
    if (err->hint[0] != '\0') {
        fputs("  hint: ", env->err);
        cli_put_clean(env->err, err->hint);
        fputc('\n', env->err);
    }
    return err->status != RIGMAT_OK ? err->status : RIGMAT_EINTERNAL;
}

rigmat_status cli_load_model(struct cli_env *env, const char *file, const struct cli_common *c,
        rigmat_model **out)
{
    rigmat_diags d;
    rigmat_status st;

    if (c->catalog != NULL)
        env->opt.catalog_dir = c->catalog;
    cli_catalog_warn(env);
    rigmat_diags_init(&d);
    d.max_errors = env->opt.max_errors;
    st = rigmat_model_load(file, c->sets.items, c->sets.count, &env->opt, out, &d);
    /* then the checks that need the equations of motion (mech stage) */
    if (st == RIGMAT_OK) {
        st = rigmat_model_check_equations(*out, &d);
        if (st != RIGMAT_OK) {
            rigmat_model_free(*out);
            *out = NULL;
        }
    }
    if (st == RIGMAT_OK)
        cli_note_model_inputs(env, *out);
    rigmat_diags_print(&d, env->err);
    /* out of memory may leave nothing in d to print: say it once here */
    if (st == RIGMAT_ENOMEM)
        fprintf(env->err, "rigmat %s: error: out of memory\n", env->command);
    rigmat_diags_release(&d);
    return st;
}

rigmat_status cli_model_command(int argc, char **argv, const struct cli_opt *opts,
        const char *const *usage, const char *const *formats, struct cli_env *env,
        const struct cli_common *c, const char **file, int *fmt, int *done)
{
    const char *pos[1];
    size_t npos = 0;
    const rigmat_status st = cli_parse(argc, argv, opts, env, pos, 1, &npos);

    *done = 0;
    if (st != RIGMAT_OK) {
        cli_usage(env->err, usage, opts);
        return st;
    }
    if (c->help) {
        cli_usage(stdout, usage, opts);
        *done = 1;
        return RIGMAT_OK;
    }
    if (npos != 1) {
        fprintf(env->err, "rigmat %s: missing the model FILE\n", env->command);
        cli_usage(env->err, usage, opts);
        return RIGMAT_EUSAGE;
    }
    *file = pos[0];
    *fmt = cli_format(env, c->format, formats);
    if (*fmt < 0)
        return RIGMAT_EUSAGE;
    return cli_export_options(env, c);
}

rigmat_status cli_linearize(struct cli_env *env, const rigmat_model *m, rigmat_lti **out)
{
    rigmat_diags warn;
    rigmat_error e;
    rigmat_status st;

    memset(&e, 0, sizeof e);
    rigmat_diags_init(&warn);
    st = rigmat_linearize(m, &env->opt, out, &warn, &e);
    if (st == RIGMAT_OK && (*out)->nx > 0) {
        /* f0 != 0: the model is affine there, x' = A dx + B du + f0, and
         * sampled it carries fd (src/sample/affine.h); a steady motion's
         * moving coordinate drifts by v T per sample */
        const rigmat_lti *l = *out;
        double v;
        const size_t k = rigmat_affine_largest(l->f0, &v);
        const rigmat_loc none = { NULL, 0, 0 };
        const char *name = l->states != NULL ? l->states[k].name : "x";
        const char *unit = l->states != NULL ? l->states[k].unit : "SI";
        if (fabs(v) > env->opt.trim_tol &&
                rigmat_diags_add(&warn, RIGMAT_WARNING, none, none, NULL,
                        l->is_steady ? "the sampled model carries the drift in fd (v T per "
                                       "sample); the other equations are balanced"
                                     : "trim it (operating_point.solve), or carry f0 (fd "
                                       "when sampled) with the model",
                        "%s: the largest component of f0 is d(%s)/dt = %.6g %s per s",
                        l->is_steady ? "a steady motion, not a rest point"
                                     : "the operating point is not a steady state",
                        name, v, unit) != RIGMAT_OK)
            st = RIGMAT_ENOMEM;
    }
    rigmat_diags_print(&warn, env->err);
    rigmat_diags_release(&warn);
    return st == RIGMAT_OK ? st : cli_report(env, &e);
}
