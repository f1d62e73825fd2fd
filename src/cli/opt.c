/* opt.c - a small table-driven option parser: one table gives both the
 * parsing and the help text, so the two cannot drift apart. */
#include "cli.h"
#include "units.h"

#include <string.h>

static const struct cli_opt *find_long(const struct cli_opt *opts, const char *name, size_t len)
{
    for (; opts->type != CLI_OPT_END; opts++)
        if (strlen(opts->long_name) == len && strncmp(opts->long_name, name, len) == 0)
            return opts;
    return NULL;
}

static const struct cli_opt *find_short(const struct cli_opt *opts, char c)
{
    for (; opts->type != CLI_OPT_END; opts++)
        if (opts->short_name != 0 && opts->short_name == c)
            return opts;
    return NULL;
}

static rigmat_status store(const struct cli_opt *o, const char *val, struct cli_env *env)
{
    if (strcmp(o->long_name, "output") == 0) {
        env->output = val;
        return RIGMAT_OK;
    }
    switch (o->type) {
    case CLI_OPT_FLAG:
        *(int *)o->value = 1;
        break;
    case CLI_OPT_STRING:
        *(const char **)o->value = val;
        break;
    case CLI_OPT_LIST: {
        struct cli_list *l = o->value;
        if (l->count == sizeof l->items / sizeof l->items[0]) {
            fprintf(env->err, "rigmat %s: too many --%s options (at most %zu)\n", env->command,
                    o->long_name, sizeof l->items / sizeof l->items[0]);
            return RIGMAT_EUSAGE;
        }
        l->items[l->count++] = val;
        break;
    }
    case CLI_OPT_END:
        break;
    }
    return RIGMAT_OK;
}

rigmat_status cli_parse(int argc, char **argv, const struct cli_opt *opts, struct cli_env *env,
        const char **pos, size_t maxpos, size_t *npos)
{
    int i, only_pos = 0;

    *npos = 0;
    for (i = 1; i < argc; i++) {
        const char *a = argv[i];
        const struct cli_opt *o = NULL;
        const char *val = NULL;

        if (only_pos || a[0] != '-' || a[1] == '\0') {
            if (*npos == maxpos) {
                fprintf(env->err, "rigmat %s: unexpected argument '%s'\n", env->command, a);
                return RIGMAT_EUSAGE;
            }
            pos[(*npos)++] = a;
            continue;
        }
        if (strcmp(a, "--") == 0) {
            only_pos = 1;
            continue;
        }
        if (a[1] == '-') {
            const char *eq = strchr(a + 2, '=');
            size_t len = eq ? (size_t)(eq - (a + 2)) : strlen(a + 2);
            o = find_long(opts, a + 2, len);
            if (eq)
                val = eq + 1;
        } else {
            o = find_short(opts, a[1]);
            if (o != NULL && a[2] != '\0')
                val = a + 2;
        }
        if (o == NULL) {
            fprintf(env->err, "rigmat %s: unknown option '%s'\n", env->command, a);
            fprintf(env->err, "  hint: 'rigmat %s --help' lists the options\n", env->command);
            return RIGMAT_EUSAGE;
        }
        if (o->type == CLI_OPT_FLAG) {
            if (val != NULL) {
                fprintf(env->err, "rigmat %s: option '--%s' takes no value\n", env->command,
                        o->long_name);
                return RIGMAT_EUSAGE;
            }
        } else if (val == NULL) {
            if (i + 1 >= argc) {
                fprintf(env->err, "rigmat %s: option '--%s' needs a value (%s)\n", env->command,
                        o->long_name, o->arg ? o->arg : "VALUE");
                return RIGMAT_EUSAGE;
            }
            val = argv[++i];
        }
        if (store(o, val, env) != RIGMAT_OK)
            return RIGMAT_EUSAGE;
    }
    return RIGMAT_OK;
}

void cli_usage(FILE *f, const char *const *usage, const struct cli_opt *opts)
{
    size_t i;

    for (i = 0; usage[i] != NULL; i++)
        fprintf(f, "%s %s\n", i == 0 ? "usage:" : "      ", usage[i]);
    fputs("\noptions:\n", f);
    for (; opts->type != CLI_OPT_END; opts++) {
        char left[64];
        if (opts->short_name)
            snprintf(left, sizeof left, "-%c, --%s%s%s", opts->short_name, opts->long_name,
                    opts->arg ? " " : "", opts->arg ? opts->arg : "");
        else
            snprintf(left, sizeof left, "    --%s%s%s", opts->long_name, opts->arg ? " " : "",
                    opts->arg ? opts->arg : "");
        fprintf(f, "  %-26s %s\n", left, opts->help);
    }
}

int cli_format(struct cli_env *env, const char *fmt, const char *const *accepted)
{
    const rigmat_format_info *fi;
    int i;

    if (fmt == NULL)
        fmt = "text";
    for (i = 0; accepted[i] != NULL; i++)
        if (strcmp(fmt, accepted[i]) == 0)
            break;
    fi = rigmat_format_find(fmt);
    if (accepted[i] != NULL && fi != NULL && fi->folder &&
            (env->output == NULL || strcmp(env->output, "-") == 0)) {
        fprintf(env->err, "rigmat %s: the %s format writes one file per matrix\n"
                "  hint: give the folder to write them into with -o DIR\n", env->command, fmt);
        return -1;
    }
    if (accepted[i] != NULL)
        return i;
    if (fi != NULL)
        fprintf(env->err, "rigmat %s: the format '%s' is not offered by this command\n"
                "  hint: 'rigmat %s' writes", env->command, fmt, env->command);
    else
        fprintf(env->err, "rigmat %s: unknown format '%s'\n  hint: use one of", env->command, fmt);
    for (i = 0; accepted[i] != NULL; i++)
        fprintf(env->err, "%s %s", i ? "," : "", accepted[i]);
    if (fi != NULL)
        fputs("; linearize and discretize write every format", env->err);
    fputc('\n', env->err);
    return -1;
}

rigmat_status cli_quantity(struct cli_env *env, const char *option, const char *text, int kind,
        double *value_si)
{
    rigmat_error e;

    memset(&e, 0, sizeof e);
    if (rigmat_units_expect(text, (rigmat_kind)kind, value_si, &e) != RIGMAT_OK) {
        fprintf(env->err, "rigmat %s: --%s '%s': %s\n", env->command, option, text, e.message);
        if (e.hint[0])
            fprintf(env->err, "  hint: %s\n", e.hint);
        return RIGMAT_EUSAGE;
    }
    return RIGMAT_OK;
}
