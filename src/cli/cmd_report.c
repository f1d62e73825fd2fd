/* cmd_report.c - `rigmat report FILE --rate FREQ -o report.html`: one
 * self-contained HTML page with inline SVG figures about the model
 * (src/emit/report.h).  The options change the responses it shows:
 * --offset STATE=VALUE (repeatable) replaces the chosen offsets,
 * --step-size INPUT=VALUE (repeatable) sets a control input's step,
 * --duration TIME the length of every run.  Values carry units. */
#include "cli.h"
#include "report.h"
#include "units.h"
#include "simulate.h"

#include <string.h>

static const char *const report_usage[] = {
    "rigmat report FILE --rate FREQ [--offset STATE=VALUE]... [--step-size INPUT=VALUE]...",
    "              [--duration TIME] [--no-validity] [--set PATH=VALUE]... [-o FILE] "
    "[--catalog DIR]",
    NULL };

struct report_args {
    const char *rate, *duration;
    struct cli_list offsets, steps;
    int no_validity;
};

/* Parse "NAME=VALUE" against the signals s[0..n): the value must have the
 * signal's unit (any unit of that dimension; a bare number is SI), read by
 * rigmat_sim_value as `simulate --offset` reads it. */
static rigmat_status name_value(struct cli_env *env, const char *option, const char *text,
        const rigmat_signal *s, size_t n, size_t *index, double *value_si)
{
    const char *eq = strchr(text, '=');
    rigmat_error e;
    size_t i, len;

    memset(&e, 0, sizeof e);
    if (eq == NULL || eq == text) {
        fprintf(env->err, "rigmat %s: --%s '%s': expected NAME=VALUE\n", env->command, option,
                text);
        return RIGMAT_EUSAGE;
    }
    len = (size_t)(eq - text);
    for (i = 0; i < n; i++)
        if (strlen(s[i].name) == len && strncmp(s[i].name, text, len) == 0)
            break;
    if (i == n) {
        fprintf(env->err, "rigmat %s: --%s '%s': no such name here\n  hint: one of:",
                env->command, option, text);
        for (i = 0; i < n; i++)
            fprintf(env->err, " %s", s[i].name);
        fputc('\n', env->err);
        return RIGMAT_EUSAGE;
    }
    *index = i;
    if (rigmat_sim_value(eq + 1, s[i].unit, option, value_si, &e) != RIGMAT_OK) {
        fprintf(env->err, "rigmat %s: --%s '%s': %s\n", env->command, option, text, e.message);
        if (e.hint[0])
            fprintf(env->err, "  hint: %s\n", e.hint);
        return RIGMAT_EUSAGE;
    }
    if (*value_si == 0.0) {
        fprintf(env->err, "rigmat %s: --%s '%s': the size must not be zero\n", env->command,
                option, text);
        return RIGMAT_EUSAGE;
    }
    return RIGMAT_OK;
}

static rigmat_status parse_cases(struct cli_env *env, const struct report_args *a,
        const rigmat_model *m, rigmat_report_opts *o)
{
    const rigmat_layout *L = &m->layout;
    rigmat_status st = RIGMAT_OK;
    size_t i;

    if (a->offsets.count > RIGMAT_REPORT_MAX_CASES || a->steps.count > RIGMAT_REPORT_MAX_CASES) {
        fprintf(env->err, "rigmat %s: at most %d offsets and %d steps\n", env->command,
                RIGMAT_REPORT_MAX_CASES, RIGMAT_REPORT_MAX_CASES);
        return RIGMAT_EUSAGE;
    }
    for (i = 0; i < a->offsets.count && st == RIGMAT_OK; i++) {
        o->offsets[i].is_input = 0;
        st = name_value(env, "offset", a->offsets.items[i], L->states, L->nx,
                &o->offsets[i].index, &o->offsets[i].size);
    }
    o->noffsets = a->offsets.count;
    for (i = 0; i < a->steps.count && st == RIGMAT_OK; i++) {
        o->steps[i].is_input = 1;
        st = name_value(env, "step-size", a->steps.items[i], L->inputs, L->nu_control,
                &o->steps[i].index, &o->steps[i].size);
    }
    o->nsteps = a->steps.count;
    return st;
}

rigmat_status cmd_report(int argc, char **argv, struct cli_env *env);
rigmat_status cmd_report(int argc, char **argv, struct cli_env *env)
{
    struct cli_common c;
    struct report_args a;
    const struct cli_opt opts[] = {
        { 0, "rate", CLI_OPT_STRING, &a.rate, "FREQ", "sample rate of the sampled model (200Hz)" },
        { 0, "offset", CLI_OPT_LIST, &a.offsets, "STATE=VALUE",
          "a response from this initial offset, with units (repeatable; replaces the "
          "chosen ones)" },
        { 0, "step-size", CLI_OPT_LIST, &a.steps, "INPUT=VALUE",
          "the step of this control input, with units (repeatable)" },
        { 0, "duration", CLI_OPT_STRING, &a.duration, "TIME", "length of every response (2s)" },
        { 0, "no-validity", CLI_OPT_FLAG, &a.no_validity, NULL,
          "leave out the validity sweep (faster)" },
        /* the common rows, but --format has one value here */
        { 0, "set", CLI_OPT_LIST, &c.sets, "PATH=VALUE",
          "override a model value, with units (repeatable)" },
        { 0, "format", CLI_OPT_STRING, &c.format, "FORMAT", "output format: html (the only one)" },
        { 'o', "output", CLI_OPT_STRING, NULL, "FILE",
          "write the report to FILE (whole or not at all)" },
        { 0, "catalog", CLI_OPT_STRING, &c.catalog, "DIR", "look for catalog parts in DIR first" },
        { 'h', "help", CLI_OPT_FLAG, &c.help, NULL, "show this help" },
        CLI_OPT_END_ROW
    };
    static const char *const formats[] = { "html", NULL };
    rigmat_report_opts o = rigmat_report_opts_default();
    rigmat_model *m = NULL;
    rigmat_lti *lti = NULL;
    rigmat_error e;
    const char *file = NULL;
    int done = 0, fmt;
    rigmat_status st;

    memset(&c, 0, sizeof c);
    memset(&a, 0, sizeof a);
    memset(&e, 0, sizeof e);
    c.format = "html"; /* the only format; --format html is accepted */
    st = cli_model_command(argc, argv, opts, report_usage, formats, env, &c, &file, &fmt, &done);
    if (st != RIGMAT_OK || done)
        return st;
    if (a.rate == NULL) {
        fprintf(env->err, "rigmat %s: missing --rate\n", env->command);
        cli_usage(env->err, report_usage, opts);
        return RIGMAT_EUSAGE;
    }
    st = cli_quantity(env, "rate", a.rate, RIGMAT_Q_FREQUENCY, &o.rate_hz);
    if (st == RIGMAT_OK && !(o.rate_hz > 0.0)) {
        fprintf(env->err, "rigmat %s: --rate must be positive\n", env->command);
        st = RIGMAT_EUSAGE;
    }
    if (st == RIGMAT_OK && a.duration != NULL) {
        st = cli_quantity(env, "duration", a.duration, RIGMAT_Q_TIME, &o.duration_s);
        if (st == RIGMAT_OK && !(o.duration_s > 0.0)) {
            fprintf(env->err, "rigmat %s: --duration must be positive\n", env->command);
            st = RIGMAT_EUSAGE;
        }
    }
    if (st != RIGMAT_OK) {
        cli_usage(env->err, report_usage, opts);
        return st;
    }
    o.validity = !a.no_validity;
    env->opt.rate_hz = o.rate_hz;
    st = cli_load_model(env, file, &c, &m);
    if (st != RIGMAT_OK)
        return st;
    st = parse_cases(env, &a, m, &o);
    if (st != RIGMAT_OK)
        goto done;
    st = cli_linearize(env, m, &lti);
    if (st != RIGMAT_OK)
        goto done;
    st = rigmat_report_write(env->out, m, lti, &o, &e);
    if (st != RIGMAT_OK)
        st = cli_report(env, &e);
done:
    rigmat_lti_free(lti);
    rigmat_model_free(m);
    return st;
}
