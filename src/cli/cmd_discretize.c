/* cmd_discretize.c - `rigmat discretize FILE --rate F`: the sampled model
 * at a controller rate (src/sample/discretize.h) and the Kalman-filter noise model
 * (src/sample/noise.h), with sampling advice where it matters.
 *
 * The result is described once (rigmat_describe_sampled, src/lib/describe.c,
 * where its JSON members are listed) and rendered in any format by src/emit.
 */
#include "cli.h"
#include "describe.h"
#include "affine.h"
#include "linearize.h"
#include "discretize.h"
#include "noise.h"
#include "units.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_math.h>

static const char *const discretize_usage[] = {
    "rigmat discretize FILE (--rate FREQ | --period TIME) [--method METHOD] [--prewarp FREQ]",
    "                  [--delay SAMPLES] [--set PATH=VALUE]... [--format FORMAT] [-o FILE|DIR]",
    "                  [--catalog DIR] [--name NAME] [--ctype double|float]",
    "FORMAT: text, json, csv, c, numpy, mtx (-o DIR), latex", NULL
};

struct discretize_args {
    const char *rate, *period, *method, *prewarp, *delay;
};

/* "drive.current" -> "drive" into buf */
static const char *motor_of(const char *state, char *buf, size_t len)
{
    const char *dot = strrchr(state, '.');
    const size_t n = dot != NULL ? (size_t)(dot - state) : strlen(state);

    snprintf(buf, len, "%.*s", (int)(n < len ? n : len - 1), state);
    return buf;
}

static void print_advice(struct cli_env *env, const rigmat_model *m, const rigmat_advice *a,
                         size_t n, const rigmat_discretize_opts *o)
{
    const rigmat_layout *L = &m->layout;
    const double T = o->period_s, nyq_hz = 0.5 / T;
    char buf[96];
    size_t i;

    for (i = 0; i < n; i++) {
        const double mag = hypot(a[i].re, a[i].im);
        const char *st = a[i].state != RIGMAT_NONE ? L->states[a[i].state].name : "?";
        switch (a[i].kind) {
        case RIGMAT_ADVICE_NYQUIST:
            fprintf(env->err,
                    "rigmat discretize: warning: the mode at %.4g Hz (lambda = %.4g +/- %.4gj 1/s, "
                    "mostly '%s') is %s the Nyquist frequency %.4g Hz\n",
                    fabs(a[i].im) / (2 * M_PI), a[i].re, fabs(a[i].im), st,
                    fabs(a[i].im) * T >= M_PI ? "beyond" : "near", nyq_hz);
            break;
        case RIGMAT_ADVICE_UNSTABLE:
            fprintf(env->err,
                    "rigmat discretize: warning: the unstable mode lambda = %.4g 1/s (mostly '%s') "
                    "has |lambda| T = %.3g; above about 0.3 the controller reacts late to it\n",
                    a[i].re, st, mag * T);
            fputs("  hint: sample faster\n", env->err);
            break;
        case RIGMAT_ADVICE_EULER:
            fprintf(env->err,
                    "rigmat discretize: warning: forward euler turns the stable mode lambda = "
                    "%.4g%+.4gj 1/s unstable at this rate (|1 + lambda T| = %.3g)\n",
                    a[i].re, a[i].im, hypot(1 + a[i].re * T, a[i].im * T));
            fputs("  hint: use --method zoh or tustin, or sample faster\n", env->err);
            break;
        case RIGMAT_ADVICE_NEGLECT_L:
            fprintf(env->err,
                    "rigmat discretize: suggestion: motor '%s': its electrical time constant "
                    "(%.3g ms) is far below the period; zoh samples it exactly, and "
                    "`inductance: neglect` would drop the state '%s'\n",
                    motor_of(st, buf, sizeof buf), 1e3 / mag, st);
            break;
        case RIGMAT_ADVICE_FAST_FILTER:
            fprintf(env->err,
                    "rigmat discretize: suggestion: sensor '%s': its filter's time constant "
                    "(%.3g ms) is far below the period; zoh samples it exactly, and without "
                    "`filter` the state '%s' would go (its density then stays in Rd)\n",
                    motor_of(st, buf, sizeof buf), 1e3 / mag, st);
            break;
        case RIGMAT_ADVICE_QD_NOT_EXACT:
            fprintf(env->err,
                    "rigmat discretize: note: Qd is the exact covariance of the sampled "
                    "continuous model (zoh); with %s it is an approximation\n",
                    rigmat_method_name(o->method));
            break;
        }
    }
}

/* Qd is zero without a disturbance density: say so, with a one-line
 * `forces:` entry on the model's first body as the example. */
static void print_no_process_noise(struct cli_env *env, const rigmat_model *m,
        const rigmat_lti *l)
{
    if (rigmat_lti_has_process_noise(l))
        return;
    fprintf(env->err, "rigmat discretize: warning: Qd is zero: the model declares no "
            "disturbance with a `density`, and a Kalman filter needs process noise\n");
    fprintf(env->err, "  hint: add a disturbance, e.g. under `forces:`  load: {torque_on: %s, "
            "role: disturbance, density: 0.01 N*m/sqrt(Hz)}\n",
            m->nbodies > 1 ? m->bodies[1].name : "BODY");
}

static void print_direct(struct cli_env *env, const rigmat_model *m, const rigmat_lti *l)
{
    const rigmat_layout *L = &m->layout;
    size_t i, k;

    for (i = 0; i < l->ny; i++)
        for (k = l->nu_control; k < l->nu; k++)
            if (l->input_intensity[k] > 0 && gsl_matrix_get(l->D, i, k) != 0.0) {
                fprintf(env->err,
                        "rigmat discretize: warning: disturbance '%s' reaches sensor '%s' "
                        "directly: its white noise is inside the measurement; its sampled "
                        "variance is added to Rd and the cross-covariance S is exported\n",
                        L->inputs[k].name, L->outputs[i].name);
                fputs("  hint: give the disturbance a `bandwidth` to colour it instead\n",
                      env->err);
            }
}

static rigmat_status parse_args(struct cli_env *env, const struct discretize_args *a,
                                rigmat_discretize_opts *o)
{
    rigmat_status st;
    double v;

    if ((a->rate == NULL) == (a->period == NULL)) {
        fprintf(env->err, "rigmat discretize: %s\n",
                a->rate == NULL ? "missing --rate or --period"
                                : "give --rate or --period, not both");
        return RIGMAT_EUSAGE;
    }
    if (a->rate != NULL) {
        st = cli_quantity(env, "rate", a->rate, RIGMAT_Q_FREQUENCY, &v);
        if (st != RIGMAT_OK)
            return st;
        if (!(v > 0) || !isfinite(v)) {
            fprintf(env->err, "rigmat discretize: --rate must be positive\n");
            return RIGMAT_EUSAGE;
        }
        o->period_s = 1.0 / v;
    } else {
        st = cli_quantity(env, "period", a->period, RIGMAT_Q_TIME, &v);
        if (st != RIGMAT_OK)
            return st;
        if (!(v > 0) || !isfinite(v)) {
            fprintf(env->err, "rigmat discretize: --period must be positive\n");
            return RIGMAT_EUSAGE;
        }
        o->period_s = v;
    }
    if (a->method != NULL && rigmat_method_parse(a->method, &o->method) != 0) {
        fprintf(env->err,
                "rigmat discretize: unknown method '%s'\n"
                "  hint: use zoh, foh, tustin, euler or backward-euler\n",
                a->method);
        return RIGMAT_EUSAGE;
    }
    if (a->prewarp != NULL) {
        st = cli_quantity(env, "prewarp", a->prewarp, RIGMAT_Q_FREQUENCY, &o->prewarp_hz);
        if (st != RIGMAT_OK)
            return st;
        if (!(o->prewarp_hz > 0) || !isfinite(o->prewarp_hz)) {
            fprintf(env->err, "rigmat discretize: --prewarp must be a positive frequency\n"
                    "  hint: leave --prewarp out for plain Tustin\n");
            return RIGMAT_EUSAGE;
        }
    }
    if (a->delay != NULL) {
        st = cli_quantity(env, "delay", a->delay, RIGMAT_Q_NUMBER, &o->delay_samples);
        if (st != RIGMAT_OK)
            return st;
    }
    return RIGMAT_OK;
}

rigmat_status cmd_discretize(int argc, char **argv, struct cli_env *env);
rigmat_status cmd_discretize(int argc, char **argv, struct cli_env *env)
{
    struct cli_common c;
    struct discretize_args a;
    const struct cli_opt opts[] = {
        { 0, "rate", CLI_OPT_STRING, &a.rate, "FREQ", "controller sample rate (200Hz)" },
        { 0, "period", CLI_OPT_STRING, &a.period, "TIME", "or its period (5ms)" },
        { 0, "method", CLI_OPT_STRING, &a.method, "METHOD",
          "zoh (default), foh, tustin, euler or backward-euler" },
        { 0, "prewarp", CLI_OPT_STRING, &a.prewarp, "FREQ",
          "tustin: match the continuous model exactly at FREQ" },
        { 0, "delay", CLI_OPT_STRING, &a.delay, "SAMPLES",
          "zoh: input delay in samples, whole plus fraction (1.5)" },
        CLI_EXPORT_ROWS(&c),
        CLI_COMMON_ROWS(&c),
        CLI_OPT_END_ROW
    };
    rigmat_result *r = NULL;
    rigmat_discretize_opts o = rigmat_discretize_opts_default();
    const rigmat_sampling_limits lim = rigmat_sampling_limits_default();
    rigmat_model *m = NULL;
    rigmat_lti *lti = NULL;
    rigmat_sampled_parts p;
    rigmat_advice advice[32];
    size_t nadvice = 0;
    rigmat_error e;
    const char *file = NULL;
    int done = 0;
    rigmat_status st;
    int fmt;

    memset(&c, 0, sizeof c);
    memset(&a, 0, sizeof a);
    memset(&e, 0, sizeof e);
    memset(&p, 0, sizeof p);
    st = cli_model_command(argc, argv, opts, discretize_usage, cli_all_formats, env, &c, &file,
            &fmt, &done);
    if (st != RIGMAT_OK || done)
        return st;
    st = parse_args(env, &a, &o);
    if (st != RIGMAT_OK) {
        cli_usage(env->err, discretize_usage, opts);
        return st;
    }
    env->opt.rate_hz = 1.0 / o.period_s;
    o.max_states = env->opt.max_sampled_states;
    st = cli_load_model(env, file, &c, &m);
    if (st != RIGMAT_OK)
        return st;
    st = cli_linearize(env, m, &lti);
    if (st != RIGMAT_OK)
        goto done;
    if (lti->nx == 0) {
        st = RIGMAT_FAIL(&e, RIGMAT_EUSAGE, "the model has no states to sample");
        goto report;
    }
    /* the sampled model, its noise model, states and affine term (the one
     * sequence the library runs too: src/lib/describe.c) */
    st = rigmat_sampled_parts_build(m, lti, &o, &p, &e);
    if (st == RIGMAT_OK)
        st = rigmat_sampling_advice(lti, &o, &lim, advice, sizeof advice / sizeof advice[0],
                                    &nadvice, &e);
    if (st != RIGMAT_OK)
        goto report;
    print_advice(env, m, advice,
                 nadvice < sizeof advice / sizeof advice[0] ? nadvice
                                                            : sizeof advice / sizeof advice[0],
                 &o);
    if (p.nz->S != NULL)
        print_direct(env, m, lti);
    print_no_process_noise(env, m, lti);
    r = rigmat_describe_sampled(m, lti, p.d, p.nz, p.xs, p.fd);
    if (r == NULL) {
        st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
        goto report;
    }
    st = cli_emit(env, r, &c, file);
    goto done;
report:
    st = cli_report(env, &e);
done:
    rigmat_result_free(r);
    rigmat_sampled_parts_release(&p);
    rigmat_lti_free(lti);
    rigmat_model_free(m);
    return st;
}
