/* cmd_simulate.c - `rigmat simulate FILE`: one response of the nonlinear
 * model, its linearization or its sampled form (src/study/simulate.h), or
 * with --validity the range over which the linear model holds
 * (src/study/validity.h).
 *
 * CSV (README.md, "Simulation"): a header `time [s]`, then every state, input
 * and output as `name [unit]`, absolute values, one row per output time
 * k*step, k = 0 .. round(duration/step); numbers in the fewest of 15, 16
 * or 17 significant digits that read back exactly; a field with a comma or a quote is quoted (RFC 4180).
 *
 * JSON: the common head (rigmat_result_head, kind "simulation"), then
 *   simulated   "nonlinear" | "linear" | "sampled"
 *   duration, step (s), rate (Hz, sampled only), tolerance (nonlinear only)
 *   complete    true (a partial table, see below, says false)
 *   stopped_at  s: the time the run reached (the end, or the last good step
 *               before a failure)
 *   time        [t_k]
 *   x, u, y     one row per time, absolute values, in the head's order
 *
 * Failure part-way (the nonlinear model leaves its valid region): exit 3,
 * the error names the time, and nothing goes to standard output or -o, so
 * a result there is always a whole run.  The rows computed before the
 * failure are written only on request, with --partial FILE, in the chosen
 * format (JSON then says complete: false); a file named apart from the
 * result cannot be mistaken for a complete run.
 *
 * --plot FILE.svg: the outputs (the states, for a model without outputs)
 * over time, one panel each, as a standalone SVG (src/emit/svg.h), written
 * only when the run succeeds, whole or not at all.
 *
 * --validity: per coordinate and control input, the largest offset or step
 * for which the linear response stays within --criterion of the nonlinear
 * one over --horizon (text or json; src/study/validity.h gives the
 * measure).
 */
#include "cli.h"
#include "outfile.h"
#include "simulate.h"
#include "svg.h"
#include "units.h"
#include "validity.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

static const char *const simulate_usage[] = {
    "rigmat simulate FILE [--model nonlinear|linear|sampled] [--offset STATE=VALUE]...",
    "                [--input NAME=SIGNAL]... [--duration TIME] [--step TIME] [--rate FREQ]",
    "                [--tolerance TOL] [--format csv|json] [-o FILE] [--partial FILE]",
    "                [--plot FILE.svg] [--set PATH=VALUE]... [--catalog DIR]",
    "rigmat simulate FILE --validity [--criterion FRACTION] [--horizon TIME]",
    "                [--format text|json] [-o FILE]",
    "signals (added to the operating-point input; values with units):",
    "  step:VALUE[@T0]  impulse:AREA[@T0]  ramp:SLOPE[@T0]  sine:AMPLITUDE@FREQUENCY",
    "  file:PATH.csv (time,value rows in s and the input's SI unit; linear interpolation)",
    NULL
};

struct simulate_args {
    const char *model, *duration, *step, *rate, *tolerance, *partial, *plot;
    const char *criterion, *horizon;
    struct cli_list offsets, inputs;
    int validity;
};

/* The names and units of x, u and y.  The one place this command reads
 * them, so a change of where they live touches one function. */
static void sim_signals(const rigmat_model *m, const rigmat_signal **x, const rigmat_signal **u,
        const rigmat_signal **y)
{
    *x = m->layout.states;
    *u = m->layout.inputs;
    *y = m->layout.outputs;
}

static size_t find_signal(const rigmat_signal *s, size_t n, const char *name, size_t len)
{
    size_t i;

    for (i = 0; i < n; i++)
        if (strlen(s[i].name) == len && strncmp(s[i].name, name, len) == 0)
            return i;
    return RIGMAT_NONE;
}

static void list_names(FILE *f, const rigmat_signal *s, size_t n)
{
    size_t i;

    for (i = 0; i < n; i++)
        fprintf(f, "%s%s", i ? ", " : "", s[i].name);
    if (n == 0)
        fputs("(none)", f);
}

static rigmat_status usage_error(struct cli_env *env, const rigmat_error *e)
{
    fprintf(env->err, "rigmat %s: %s\n", env->command, e->message);
    if (e->hint[0])
        fprintf(env->err, "  hint: %s\n", e->hint);
    return e->status == RIGMAT_EIO || e->status == RIGMAT_ENOMEM ? e->status : RIGMAT_EUSAGE;
}

/* --offset STATE=VALUE into offset (nx). */
static rigmat_status parse_offsets(struct cli_env *env, const rigmat_model *m,
        const struct cli_list *l, double *offset)
{
    const rigmat_signal *xs, *us, *ys;
    size_t k, nx = m->layout.nx;

    sim_signals(m, &xs, &us, &ys);
    for (k = 0; k < l->count; k++) {
        const char *eq = strchr(l->items[k], '=');
        rigmat_error e;
        size_t i;
        double v;

        if (eq == NULL) {
            fprintf(env->err, "rigmat %s: --offset '%s': expected STATE=VALUE\n", env->command,
                    l->items[k]);
            return RIGMAT_EUSAGE;
        }
        i = find_signal(xs, nx, l->items[k], (size_t)(eq - l->items[k]));
        if (i == RIGMAT_NONE) {
            fprintf(env->err, "rigmat %s: --offset: no state '%.*s'\n  hint: the states are ",
                    env->command, (int)(eq - l->items[k]), l->items[k]);
            list_names(env->err, xs, nx);
            fputc('\n', env->err);
            return RIGMAT_EUSAGE;
        }
        memset(&e, 0, sizeof e);
        if (rigmat_sim_value(eq + 1, xs[i].unit, "offset", &v, &e) != RIGMAT_OK)
            return usage_error(env, &e);
        offset[i] += v;
    }
    return RIGMAT_OK;
}

/* --input NAME=SIGNAL into waves (count l->count). */
static rigmat_status parse_inputs(struct cli_env *env, const rigmat_model *m,
        const struct cli_list *l, rigmat_wave *waves, size_t *nwaves)
{
    const rigmat_signal *xs, *us, *ys;
    size_t k;

    sim_signals(m, &xs, &us, &ys);
    for (k = 0; k < l->count; k++) {
        const char *eq = strchr(l->items[k], '=');
        rigmat_error e;
        size_t j;

        if (eq == NULL) {
            fprintf(env->err, "rigmat %s: --input '%s': expected NAME=SIGNAL\n", env->command,
                    l->items[k]);
            return RIGMAT_EUSAGE;
        }
        j = find_signal(us, m->layout.nu, l->items[k], (size_t)(eq - l->items[k]));
        if (j == RIGMAT_NONE) {
            fprintf(env->err, "rigmat %s: --input: no input '%.*s'\n  hint: the inputs are ",
                    env->command, (int)(eq - l->items[k]), l->items[k]);
            list_names(env->err, us, m->layout.nu);
            fputc('\n', env->err);
            return RIGMAT_EUSAGE;
        }
        memset(&e, 0, sizeof e);
        if (rigmat_wave_parse(eq + 1, us[j].unit, j, &waves[*nwaves], &e) != RIGMAT_OK)
            return usage_error(env, &e);
        (*nwaves)++;
    }
    return RIGMAT_OK;
}

/* ------------------------------------------------------------- writers */

static void csv_field(FILE *f, const char *name, const char *unit)
{
    char buf[160];
    const char *p;

    snprintf(buf, sizeof buf, "%s [%s]", name, unit);
    if (strpbrk(buf, ",\"\n\r") == NULL) {
        fputs(buf, f);
        return;
    }
    fputc('"', f);
    for (p = buf; *p; p++) {
        if (*p == '"')
            fputc('"', f);
        fputc(*p, f);
    }
    fputc('"', f);
}

/* The shortest of 15, 16 or 17 significant digits that reads back as v. */
static void csv_num(FILE *f, double v)
{
    char buf[40];
    int prec;

    for (prec = 15; prec < 17; prec++) {
        snprintf(buf, sizeof buf, "%.*g", prec, v);
        if (strtod(buf, NULL) == v)
            break;
    }
    if (prec == 17)
        snprintf(buf, sizeof buf, "%.17g", v);
    fputs(buf, f);
}

static void write_csv(FILE *f, const rigmat_model *m, const rigmat_sim_result *r)
{
    const rigmat_signal *xs, *us, *ys;
    size_t k, i;

    sim_signals(m, &xs, &us, &ys);
    fputs("time [s]", f);
    for (i = 0; i < r->nx; i++) {
        fputc(',', f);
        csv_field(f, xs[i].name, xs[i].unit);
    }
    for (i = 0; i < r->nu; i++) {
        fputc(',', f);
        csv_field(f, us[i].name, us[i].unit);
    }
    for (i = 0; i < r->ny; i++) {
        fputc(',', f);
        csv_field(f, ys[i].name, ys[i].unit);
    }
    fputc('\n', f);
    for (k = 0; k < r->nrows; k++) {
        csv_num(f, r->t_s[k]);
        for (i = 0; i < r->nx; i++) {
            fputc(',', f);
            csv_num(f, r->x[k * r->nx + i]);
        }
        for (i = 0; i < r->nu; i++) {
            fputc(',', f);
            csv_num(f, r->u[k * r->nu + i]);
        }
        for (i = 0; i < r->ny; i++) {
            fputc(',', f);
            csv_num(f, r->y[k * r->ny + i]);
        }
        fputc('\n', f);
    }
}

/* One row per time, each value on a line of its own (the layout the JSON
 * of a response has always had; a matrix node would put a row on one
 * line). */
static void json_rows(rigmat_result *res, const double *a, size_t rows, size_t cols)
{
    size_t k, i;

    rigmat_result_array(res);
    for (k = 0; k < rows; k++) {
        rigmat_result_array(res);
        for (i = 0; i < cols; i++)
            rigmat_result_number(res, a[k * cols + i], NULL);
        rigmat_result_close(res);
    }
    rigmat_result_close(res);
}

/* A response, described once for the JSON writer.  The CSV of a response
 * is not rendered from it: the writer's CSV gives one labelled table per
 * matrix, while a response is one table over time of every state, input
 * and output side by side, in the fewest digits that read back exactly
 * (write_csv), so that one path stays here. */
static rigmat_result *sim_result(const rigmat_model *m, const rigmat_sim_opts *o,
        const rigmat_sim_result *r)
{
    const rigmat_layout *L = &m->layout;
    rigmat_result *res = rigmat_result_alloc("simulation");
    size_t k;

    if (res == NULL)
        return NULL;
    rigmat_result_head(res, m->name, L->order_hash, L->states, L->nx, L->inputs, L->nu,
            L->outputs, L->ny);
    rigmat_result_key(res, "simulated");
    rigmat_result_string(res, rigmat_sim_model_name(o->model));
    rigmat_result_key(res, "duration");
    rigmat_result_number(res, o->duration_s, "s");
    rigmat_result_key(res, "step");
    rigmat_result_number(res, o->step_s, "s");
    if (o->model == RIGMAT_SIM_SAMPLED) {
        rigmat_result_key(res, "rate");
        rigmat_result_number(res, o->rate_hz, "Hz");
    }
    if (o->model == RIGMAT_SIM_NONLINEAR) {
        rigmat_result_key(res, "tolerance");
        rigmat_result_number(res, o->rtol, NULL);
    }
    rigmat_result_key(res, "complete");
    rigmat_result_bool(res, r->complete);
    rigmat_result_key(res, "stopped_at");
    rigmat_result_number(res, r->stop_time_s, "s");
    rigmat_result_key(res, "time");
    rigmat_result_array(res);
    for (k = 0; k < r->nrows; k++)
        rigmat_result_number(res, r->t_s[k], NULL);
    rigmat_result_close(res);
    rigmat_result_key(res, "x");
    json_rows(res, r->x, r->nrows, r->nx);
    rigmat_result_key(res, "u");
    json_rows(res, r->u, r->nrows, r->nu);
    rigmat_result_key(res, "y");
    json_rows(res, r->y, r->nrows, r->ny);
    return res;
}

/* The response to f: CSV by write_csv, JSON by the one JSON writer. */
static rigmat_status write_result(FILE *f, int json, const rigmat_model *m,
        const rigmat_sim_opts *o, const rigmat_sim_result *r, rigmat_error *e)
{
    rigmat_result *res;
    rigmat_status st;

    if (!json) {
        write_csv(f, m, r);
        return RIGMAT_OK;
    }
    res = sim_result(m, o, r);
    if (res == NULL)
        return RIGMAT_FAIL(e, RIGMAT_ENOMEM, "out of memory");
    st = rigmat_result_write(res, RIGMAT_FORMAT_JSON, NULL, f, NULL, e);
    rigmat_result_free(res);
    return st;
}

/* The rows before a failure, to the --partial file (whole or not at all). */
static void write_partial(struct cli_env *env, const char *path, int json, const rigmat_model *m,
        const rigmat_sim_opts *o, const rigmat_sim_result *r)
{
    char *buf = NULL;
    size_t len = 0;
    FILE *f = open_memstream(&buf, &len);
    rigmat_error e;

    memset(&e, 0, sizeof e);
    if (f == NULL) {
        fprintf(env->err, "rigmat %s: out of memory for the partial table\n", env->command);
        return;
    }
    if (write_result(f, json, m, o, r, &e) != RIGMAT_OK) {
        fclose(f);
        free(buf);
        cli_report(env, &e);
        return;
    }
    if (fclose(f) != 0) {
        free(buf);
        fprintf(env->err, "rigmat %s: out of memory for the partial table\n", env->command);
        return;
    }
    if (cli_outfile_write(path, buf, len, &e) != RIGMAT_OK)
        cli_report(env, &e);
    else
        fprintf(env->err, "rigmat %s: note: the %zu rows before the failure are in '%s'\n",
                env->command, r->nrows, path);
    free(buf);
}

/* --plot: every output over time, one panel each (the states when the
 * model has no outputs), written whole to path. */
static rigmat_status write_plot(struct cli_env *env, const char *path, const rigmat_model *m,
        const rigmat_sim_opts *o, const rigmat_sim_result *r)
{
    const rigmat_signal *xs, *us, *ys;
    const int use_y = r->ny > 0;
    const size_t n = use_y ? r->ny : r->nx;
    const rigmat_signal *sig;
    rigmat_svg_plot *plots = calloc(n, sizeof *plots);
    rigmat_svg_series *series = calloc(n, sizeof *series);
    double *col = malloc((n * r->nrows + 1) * sizeof *col);
    rigmat_svg_figure fig;
    char caption[160], *buf = NULL;
    size_t len = 0, i, k;
    FILE *f = NULL;
    rigmat_error e;
    rigmat_status st = RIGMAT_OK;

    sim_signals(m, &xs, &us, &ys);
    sig = use_y ? ys : xs;
    memset(&e, 0, sizeof e);
    if (plots == NULL || series == NULL || col == NULL ||
            (f = open_memstream(&buf, &len)) == NULL) {
        fprintf(env->err, "rigmat %s: out of memory for the plot\n", env->command);
        st = RIGMAT_ENOMEM;
        goto done;
    }
    for (i = 0; i < n; i++) {
        for (k = 0; k < r->nrows; k++)
            col[i * r->nrows + k] = use_y ? r->y[k * r->ny + i] : r->x[k * r->nx + i];
        series[i].name = rigmat_sim_model_name(o->model);
        series[i].x = r->t_s;
        series[i].y = col + i * r->nrows;
        series[i].n = r->nrows;
        series[i].line = 1;
        series[i].style = (size_t)o->model;
        plots[i].title = sig[i].name;
        plots[i].x.label = "time";
        plots[i].x.unit = "s";
        plots[i].y.label = sig[i].name;
        plots[i].y.unit = sig[i].unit;
        plots[i].series = &series[i];
        plots[i].nseries = 1;
        plots[i].zero_line = 1;
    }
    snprintf(caption, sizeof caption, "%s: %s model, %s over %.4g s", m->name ? m->name : "",
            rigmat_sim_model_name(o->model), use_y ? "outputs" : "states", o->duration_s);
    memset(&fig, 0, sizeof fig);
    fig.plots = plots;
    fig.nplots = n;
    fig.columns = n > 1 ? 2 : 1;
    fig.caption = caption;
    fig.standalone = 1;
    st = rigmat_svg_write(f, &fig, &e);
    if (fclose(f) != 0 && st == RIGMAT_OK) {
        fprintf(env->err, "rigmat %s: out of memory for the plot\n", env->command);
        st = RIGMAT_ENOMEM;
    } else if (st != RIGMAT_OK) {
        cli_report(env, &e);
    } else if ((st = cli_outfile_write(path, buf, len, &e)) !=
            RIGMAT_OK) {
        cli_report(env, &e);
    }
done:
    free(buf);
    free(plots);
    free(series);
    free(col);
    return st;
}

/* ------------------------------------------------------------ validity */

/* The validity table, described once: a head, then the table of
 * cli_validity_describe (src/cli/validity.c). */
static rigmat_result *validity_result(const rigmat_model *m, const rigmat_validity_opts *o,
        const rigmat_validity_item *it, size_t n)
{
    const rigmat_layout *L = &m->layout;
    rigmat_result *r = rigmat_result_alloc("validity");

    if (r == NULL)
        return NULL;
    rigmat_result_head(r, m->name, L->order_hash, L->states, L->nx, L->inputs, L->nu,
            L->outputs, L->ny);
    cli_validity_describe(r, m, o, it, n);
    return r;
}

static rigmat_status run_validity(struct cli_env *env, const struct simulate_args *a,
        const struct cli_common *c, const char *file, const rigmat_model *m,
        rigmat_system *sys, const rigmat_lti *lin)
{
    rigmat_result *r = NULL;
    rigmat_validity_opts o = rigmat_validity_opts_default();
    rigmat_validity_item *items;
    const size_t cap = m->layout.nx + m->layout.nu + 1;
    size_t n = 0;
    rigmat_error e;
    rigmat_status st;

    if (a->criterion != NULL) {
        st = cli_quantity(env, "criterion", a->criterion, RIGMAT_Q_NUMBER, &o.criterion);
        if (st != RIGMAT_OK)
            return st;
        if (!(o.criterion > 0) || !(o.criterion < 1)) {
            fprintf(env->err, "rigmat %s: --criterion must be a fraction in (0, 1), such as "
                    "0.05\n", env->command);
            return RIGMAT_EUSAGE;
        }
    }
    if (a->horizon != NULL) {
        st = cli_quantity(env, "horizon", a->horizon, RIGMAT_Q_TIME, &o.horizon_s);
        if (st != RIGMAT_OK)
            return st;
        if (!(o.horizon_s > 0)) {
            fprintf(env->err, "rigmat %s: --horizon must be positive\n", env->command);
            return RIGMAT_EUSAGE;
        }
    }
    if (a->tolerance != NULL) {
        st = cli_quantity(env, "tolerance", a->tolerance, RIGMAT_Q_NUMBER, &o.rtol);
        if (st != RIGMAT_OK)
            return st;
    }
    items = calloc(cap, sizeof *items);
    if (items == NULL) {
        fprintf(env->err, "rigmat %s: out of memory\n", env->command);
        return RIGMAT_ENOMEM;
    }
    memset(&e, 0, sizeof e);
    st = rigmat_validity_all(sys, lin, &m->layout, &o, items, cap, &n, &e);
    if (st != RIGMAT_OK) {
        cli_report(env, &e);
    } else {
        r = validity_result(m, &o, items, n);
        st = r != NULL ? cli_emit(env, r, c, file) : RIGMAT_ENOMEM;
        if (r == NULL)
            fprintf(env->err, "rigmat %s: out of memory\n", env->command);
    }
    rigmat_result_free(r);
    free(items);
    return st;
}

/* --------------------------------------------------------------- command */

static rigmat_status sim_options(struct cli_env *env, const struct simulate_args *a,
        rigmat_sim_opts *o)
{
    rigmat_status st;

    *o = rigmat_sim_opts_default();
    if (a->model != NULL && rigmat_sim_model_parse(a->model, &o->model) != 0) {
        fprintf(env->err, "rigmat %s: unknown model '%s'\n  hint: use nonlinear, linear or "
                "sampled\n", env->command, a->model);
        return RIGMAT_EUSAGE;
    }
    if (a->duration != NULL &&
            (st = cli_quantity(env, "duration", a->duration, RIGMAT_Q_TIME, &o->duration_s)) !=
                    RIGMAT_OK)
        return st;
    if (a->rate != NULL &&
            (st = cli_quantity(env, "rate", a->rate, RIGMAT_Q_FREQUENCY, &o->rate_hz)) !=
                    RIGMAT_OK)
        return st;
    if (a->tolerance != NULL &&
            (st = cli_quantity(env, "tolerance", a->tolerance, RIGMAT_Q_NUMBER, &o->rtol)) !=
                    RIGMAT_OK)
        return st;
    if (o->model == RIGMAT_SIM_SAMPLED) {
        if (a->rate == NULL) {
            fprintf(env->err, "rigmat %s: --model sampled needs --rate\n", env->command);
            return RIGMAT_EUSAGE;
        }
        if (!(o->rate_hz > 0)) {
            fprintf(env->err, "rigmat %s: --rate must be positive\n", env->command);
            return RIGMAT_EUSAGE;
        }
        o->step_s = 1.0 / o->rate_hz;
    } else if (a->rate != NULL) {
        fprintf(env->err, "rigmat %s: --rate applies to --model sampled only\n", env->command);
        return RIGMAT_EUSAGE;
    }
    if (a->step != NULL &&
            (st = cli_quantity(env, "step", a->step, RIGMAT_Q_TIME, &o->step_s)) != RIGMAT_OK)
        return st;
    if (!(o->duration_s > 0) || !(o->step_s > 0)) {
        fprintf(env->err, "rigmat %s: --duration and --step must be positive\n", env->command);
        return RIGMAT_EUSAGE;
    }
    if (a->tolerance != NULL && (!(o->rtol > 0) || !(o->rtol < 1))) {
        fprintf(env->err, "rigmat %s: --tolerance must be in (0, 1), such as 1e-8\n",
                env->command);
        return RIGMAT_EUSAGE;
    }
    return RIGMAT_OK;
}

rigmat_status cmd_simulate(int argc, char **argv, struct cli_env *env);
rigmat_status cmd_simulate(int argc, char **argv, struct cli_env *env)
{
    struct cli_common c;
    struct simulate_args a;
    const struct cli_opt opts[] = {
        { 0, "model", CLI_OPT_STRING, &a.model, "MODEL",
          "nonlinear (default), linear or sampled" },
        { 0, "offset", CLI_OPT_LIST, &a.offsets, "STATE=VALUE",
          "initial deviation from the operating point, with units (repeatable)" },
        { 0, "input", CLI_OPT_LIST, &a.inputs, "NAME=SIGNAL",
          "a signal added to the operating-point input (repeatable)" },
        { 0, "duration", CLI_OPT_STRING, &a.duration, "TIME", "simulated time (default 1 s)" },
        { 0, "step", CLI_OPT_STRING, &a.step, "TIME",
          "output interval (default 1 ms; sampled: the period)" },
        { 0, "rate", CLI_OPT_STRING, &a.rate, "FREQ", "sample rate of --model sampled" },
        { 0, "tolerance", CLI_OPT_STRING, &a.tolerance, "TOL",
          "relative tolerance of the nonlinear integrator (default 1e-8)" },
        { 0, "partial", CLI_OPT_STRING, &a.partial, "FILE",
          "on a failure part-way, write the rows before it to FILE" },
        { 0, "plot", CLI_OPT_STRING, &a.plot, "FILE.svg", "also draw the outputs over time" },
        { 0, "validity", CLI_OPT_FLAG, &a.validity, NULL,
          "report how far the linear model holds instead" },
        { 0, "criterion", CLI_OPT_STRING, &a.criterion, "FRACTION",
          "--validity: relative error bound (default 0.05)" },
        { 0, "horizon", CLI_OPT_STRING, &a.horizon, "TIME",
          "--validity: compared time span (default 1 s)" },
        /* the common rows (CLI_COMMON_ROWS), with this command's formats */
        { 0, "set", CLI_OPT_LIST, &c.sets, "PATH=VALUE",
          "override a model value, with units (repeatable)" },
        { 0, "format", CLI_OPT_STRING, &c.format, "FORMAT",
          "csv (default) or json; with --validity text (default) or json" },
        { 'o', "output", CLI_OPT_STRING, NULL, "FILE",
          "write the result to FILE (whole or not at all)" },
        { 0, "catalog", CLI_OPT_STRING, &c.catalog, "DIR", "look for catalog parts in DIR first" },
        { 'h', "help", CLI_OPT_FLAG, &c.help, NULL, "show this help" },
        CLI_OPT_END_ROW };
    static const char *const formats[] = { "csv", "json", "text", NULL };
    rigmat_model *m = NULL;
    rigmat_lti *lti = NULL;
    rigmat_system *sys = NULL;
    rigmat_wave *waves = NULL;
    size_t nwaves = 0, k;
    double *offset = NULL;
    const char *file = NULL;
    rigmat_sim_opts o;
    rigmat_sim_result r;
    rigmat_sim_case cs;
    rigmat_error e;
    int done = 0, fmt;
    rigmat_status st;

    memset(&c, 0, sizeof c);
    memset(&a, 0, sizeof a);
    memset(&e, 0, sizeof e);
    rigmat_sim_result_init(&r);
    st = cli_model_command(argc, argv, opts, simulate_usage, formats, env, &c, &file, &fmt, &done);
    if (st != RIGMAT_OK || done)
        return st;
    if (c.format == NULL)
        fmt = a.validity ? 2 : 0;
    if (a.validity ? fmt == 0 : fmt == 2) {
        fprintf(env->err, "rigmat %s: --format %s does not apply%s\n  hint: use %s\n",
                env->command, formats[fmt], a.validity ? " to --validity" : " to a response",
                a.validity ? "text or json" : "csv or json");
        return RIGMAT_EUSAGE;
    }
    if (!a.validity && (a.criterion != NULL || a.horizon != NULL)) {
        fprintf(env->err, "rigmat %s: --criterion and --horizon go with --validity\n",
                env->command);
        return RIGMAT_EUSAGE;
    }
    if (a.validity && (a.offsets.count || a.inputs.count || a.model || a.duration || a.step ||
                              a.rate || a.partial || a.plot)) {
        fprintf(env->err, "rigmat %s: --validity takes --criterion, --horizon and --tolerance "
                "only\n", env->command);
        return RIGMAT_EUSAGE;
    }
    if (!a.validity && (st = sim_options(env, &a, &o)) != RIGMAT_OK)
        return st;

    st = cli_load_model(env, file, &c, &m);
    if (st != RIGMAT_OK)
        return st;
    st = cli_linearize(env, m, &lti);
    if (st != RIGMAT_OK)
        goto out;
    if (a.validity || o.model == RIGMAT_SIM_NONLINEAR) {
        st = rigmat_system_alloc(m, &sys, &e);
        if (st != RIGMAT_OK) {
            cli_report(env, &e);
            goto out;
        }
    }
    if (a.validity) {
        st = run_validity(env, &a, &c, file, m, sys, lti);
        goto out;
    }
    offset = calloc(m->layout.nx + 1, sizeof *offset);
    waves = calloc(a.inputs.count + 1, sizeof *waves);
    if (offset == NULL || waves == NULL) {
        fprintf(env->err, "rigmat %s: out of memory\n", env->command);
        st = RIGMAT_ENOMEM;
        goto out;
    }
    if ((st = parse_offsets(env, m, &a.offsets, offset)) != RIGMAT_OK ||
            (st = parse_inputs(env, m, &a.inputs, waves, &nwaves)) != RIGMAT_OK)
        goto out;
    cs.offset = offset;
    cs.waves = waves;
    cs.nwaves = nwaves;
    st = rigmat_simulate(sys, lti, &o, &cs, &r, &e);
    if (st != RIGMAT_OK) {
        cli_report(env, &e);
        if (a.partial != NULL && r.nrows > 0 && cli_output_guard(env, a.partial) == RIGMAT_OK)
            write_partial(env, a.partial, fmt == 1, m, &o, &r);
        else if (st == RIGMAT_ENUMERIC && r.nrows > 0)
            fprintf(env->err, "  note: %zu rows were computed before it; --partial FILE "
                    "keeps them\n", r.nrows);
        goto out;
    }
    if (fmt == 1) {
        rigmat_result *res = sim_result(m, &o, &r);
        st = res != NULL ? cli_emit(env, res, &c, file) : RIGMAT_ENOMEM;
        if (res == NULL)
            fprintf(env->err, "rigmat %s: out of memory\n", env->command);
        rigmat_result_free(res);
    } else {
        write_csv(env->out, m, &r);
        st = RIGMAT_OK;
    }
    if (st == RIGMAT_OK && a.plot != NULL && (st = cli_output_guard(env, a.plot)) == RIGMAT_OK)
        st = write_plot(env, a.plot, m, &o, &r);
out:
    for (k = 0; k < nwaves; k++)
        rigmat_wave_release(&waves[k]);
    free(waves);
    free(offset);
    rigmat_sim_result_release(&r);
    rigmat_system_free(sys);
    rigmat_lti_free(lti);
    rigmat_model_free(m);
    return st;
}
