/* cmd_discretize.c - `rigmat discretize FILE --rate F`: the sampled model
 * at a controller rate (src/sample/discretize.h) and the Kalman-filter noise model
 * (src/sample/noise.h), with sampling advice where it matters.
 *
 * The result is described once (discretize_result) and rendered in any
 * format by src/emit.  JSON (README.md, "JSON output"): the head, then
 *   period          s
 *   method          "zoh" | "foh" | "tustin" | "euler" | "backward-euler"
 *   prewarp         Hz (tustin with --prewarp only)
 *   delay           samples (0 without --delay)
 *   delay_states    [{name, unit}]: the states appended after `states` by a
 *                   delay, "<input>.delayed<j>" holding u[k-j]
 *   Ad Bd Cd Dd     x[k+1] = Ad x[k] + Bd u[k] + Gd w[k], y[k] = Cd x[k] + Dd u[k] + Ed w[k]
 *   Gd Ed           the disturbance columns (inputs with role disturbance)
 *   Qc              white-noise intensity of each input (SI per Hz; 0 for control
 *                   inputs and for disturbances without a density)
 *   Qd              covariance of the process noise added over one period
 *   qd_exact        true for zoh: Qd is the exact covariance of the sampled system,
 *                   within qd_error_bound (a Qd that cannot be bounded is refused, exit 3)
 *   qd_error_bound  relative error bound of Qd (src/sample/noise.h; 0 without noise)
 *   Rd              covariance of the measurement noise of one sample
 *   S               (only when a disturbance reaches a sensor directly)
 *                   E[w_k v_k^T], states x outputs (src/sample/noise.h)
 *   operating_point {x, u, y}: the model is in deviations from it
 * Numbers carry 17 significant digits.
 */
#include "cli.h"
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

/* The lowest and highest multiples of the closed-loop bandwidth a sample
 * rate is usually chosen at (common practice; G. F. Franklin, J. D. Powell,
 * M. L. Workman, Digital Control of Dynamic Systems, 3rd ed., 1998, on
 * sample-rate selection, from memory). */
static const double rule_low = 10.0, rule_high = 30.0;

struct discretize_args {
    const char *rate, *period, *method, *prewarp, *delay;
};

/* The rows of the sampled state: the plant's, then the delay stages. */
static rigmat_signal *sampled_states(const rigmat_layout *L, const rigmat_dlti *d)
{
    rigmat_signal *s = calloc(d->nx ? d->nx : 1, sizeof *s);
    size_t i;

    if (s == NULL)
        return NULL;
    for (i = 0; i < d->nx_plant; i++)
        s[i] = L->states[i];
    for (i = d->nx_plant; i < d->nx; i++)
        s[i] = d->delay_states[i - d->nx_plant];
    return s;
}

/* The noise per sample, a text-only summary (the matrices carry it all). */
static void noise_lines(rigmat_result *r, const rigmat_layout *L, const rigmat_noise *nz)
{
    size_t i;

    rigmat_result_text(r, "noise per sample (standard deviation; README.md, noise convention)\n");
    for (i = 0; i < L->ny; i++) {
        const rigmat_sensor_noise *s = &nz->sensor[i];
        char parts[4][80];
        parts[0][0] = parts[1][0] = parts[2][0] = parts[3][0] = '\0';
        if (s->noise_var > 0)
            snprintf(parts[0], sizeof parts[0], "; noise %.4g", sqrt(s->noise_var));
        if (s->density_var > 0)
            snprintf(parts[1], sizeof parts[1], "; density %.4g", sqrt(s->density_var));
        if (s->resolution_var > 0)
            snprintf(parts[2], sizeof parts[2], "; resolution %.4g", sqrt(s->resolution_var));
        if (nz->direct_var[i] > 0)
            snprintf(parts[3], sizeof parts[3], "; disturbance reaching it directly %.4g",
                    sqrt(nz->direct_var[i]));
        rigmat_result_text(r, "  %s [%s]: %.4g%s%s%s%s%s\n", L->outputs[i].name,
                L->outputs[i].unit, sqrt(gsl_matrix_get(nz->Rd, i, i)), parts[0], parts[1],
                parts[2], parts[3],
                gsl_matrix_get(nz->Rd, i, i) == 0.0 ? " (no noise given)" : "");
    }
    for (i = 0; i < nz->nw; i++) {
        const rigmat_signal *in = &L->inputs[L->nu_control + i];
        if (nz->disturbance_sd[i] > 0)
            rigmat_result_text(r, "  disturbance %s [%s]: %.4g averaged over one period\n",
                    in->name, in->unit, nz->disturbance_sd[i]);
    }
    rigmat_result_text(r, "\n");
}

/* The result, described once for every format. */
static rigmat_result *discretize_result(const rigmat_model *m, const rigmat_lti *l,
        const rigmat_dlti *d, const rigmat_noise *nz, const rigmat_signal *xs,
        const gsl_vector *fd)
{
    const rigmat_layout *L = &m->layout;
    const rigmat_signal *w = L->inputs + L->nu_control;
    const double rate_hz = 1.0 / d->period_s;
    const int transformed = d->method == RIGMAT_METHOD_FOH || d->method == RIGMAT_METHOD_TUSTIN;
    rigmat_result *r = rigmat_result_alloc("discrete");
    char line[160];

    if (r == NULL)
        return NULL;
    /* states: every state of Ad, the delay stages included (each with its
     * kind); the order hash stays the continuous layout's */
    rigmat_result_head(r, m->name, L->order_hash, xs, d->nx, L->inputs, L->nu, L->outputs,
            L->ny);
    rigmat_result_dim(r, "state", xs, d->nx);
    rigmat_result_dim(r, "input", L->inputs, d->nu);
    rigmat_result_dim(r, "disturbance", w, d->nw);
    rigmat_result_dim(r, "output", L->outputs, d->ny);
    rigmat_result_text(r, "model: %s\norder hash: %s\n", cli_model_name(m), L->order_hash);
    rigmat_result_text(r, "sampled at %.6g Hz (period %.6g ms), method %s", rate_hz,
            d->period_s * 1e3, rigmat_method_name(d->method));
    if (d->prewarp_hz > 0)
        rigmat_result_text(r, ", prewarped at %.6g Hz", d->prewarp_hz);
    if (d->delay_samples > 0)
        rigmat_result_text(r, ", input delay %.6g samples (%.6g ms)", d->delay_samples,
                d->delay_samples * d->period_s * 1e3);
    rigmat_result_text(r, "\nx[k+1] = Ad x[k] + Bd u[k] + Gd w[k] + fd + noise (Qd);  y[k] = "
            "Cd x[k] + Dd u[k] + Ed w[k] + noise (Rd)\n\n");
    rigmat_result_key(r, "period");
    rigmat_result_number(r, d->period_s, "s");
    rigmat_result_key(r, "method");
    rigmat_result_string(r, rigmat_method_name(d->method));
    if (d->prewarp_hz > 0) {
        rigmat_result_key(r, "prewarp");
        rigmat_result_number(r, d->prewarp_hz, "Hz");
    }
    rigmat_result_key(r, "delay");
    rigmat_result_number(r, d->delay_samples, "samples");
    /* the state basis (README.md, "State basis"): zoh and the Euler forms
     * sample the physical state; foh and tustin realize another one */
    rigmat_result_key(r, "state_basis");
    rigmat_result_string(r, transformed ? "transformed" : "physical");
    if (d->method == RIGMAT_METHOD_FOH)
        rigmat_result_text(r, "state basis: transformed (foh): the state is xi = x - G2 [u; w], "
                "so x = xi + G2 [u; w], with G2 the top right block of exp([[A T, [B G] T, 0], "
                "[0, 0, I], [0, 0, 0]]); weights and initial states written for x need this map\n");
    else if (d->method == RIGMAT_METHOD_TUSTIN)
        rigmat_result_text(r, "state basis: transformed (tustin): the state is xi = (I - A T/2) "
                "x - (T/2) (B u + G w + f0), so x = (I - A T/2)^-1 (xi + (T/2) (B u + G w + "
                "f0))%s; weights and initial states written for x need this map\n", d->prewarp_hz > 0 ? " (T prewarped: "
                "T_w = 2 tan(w1 T/2)/w1)" : "");
    else
        rigmat_result_text(r, "state basis: physical (the sampled state is x itself)\n");
    if (transformed)
        rigmat_result_text(r, "Qd and S are not given for a transformed state (they would "
                "belong to x): use --method zoh for a Kalman filter\n");
    rigmat_result_text(r, "\n");
    rigmat_result_key(r, "delay_states");
    rigmat_result_signals(r, d->delay_states, d->nx - d->nx_plant, 0);
    rigmat_result_key(r, "Ad");
    rigmat_result_matrix(r, d->Ad, d->nx, d->nx, xs, xs);
    rigmat_result_key(r, "Bd");
    rigmat_result_matrix(r, d->Bd, d->nx, d->nu, xs, L->inputs);
    rigmat_result_title(r, "Bd (control inputs)");
    rigmat_result_key(r, "Cd");
    rigmat_result_matrix(r, d->Cd, d->ny, d->nx, L->outputs, xs);
    rigmat_result_key(r, "Dd");
    rigmat_result_matrix(r, d->Dd, d->ny, d->nu, L->outputs, L->inputs);
    rigmat_result_key(r, "Gd");
    rigmat_result_matrix(r, d->Gd, d->nx, d->nw, xs, w);
    rigmat_result_title(r, "Gd (disturbances)");
    rigmat_result_key(r, "Ed");
    rigmat_result_matrix(r, d->Ed, d->ny, d->nw, L->outputs, w);
    rigmat_result_title(r, "Ed (disturbance feedthrough)");
    /* the sampled affine term (src/sample/affine.h): zero at a steady state */
    rigmat_result_key(r, "fd");
    rigmat_result_vector(r, fd, d->nx, xs);
    rigmat_result_title(r, l->is_steady ? "fd (sampled affine term; zero: a steady state)"
                                        : "fd (sampled affine term: the point is not a steady "
                                          "state)");
    /* the white intensity of the disturbances only: Gd's columns */
    rigmat_result_key(r, "Qc");
    rigmat_result_values(r, l->input_intensity + l->nu_control, d->nw, w);
    rigmat_result_show(r, RIGMAT_SHOW_JSON | RIGMAT_SHOW_EXPORT);
    /* one rule for a transformed state: no Qd (nor S), never a covariance
     * that belongs to another state */
    rigmat_result_key(r, "Qd");
    if (transformed) {
        rigmat_result_null(r);
        rigmat_result_show(r, RIGMAT_SHOW_JSON);
    } else {
        rigmat_result_matrix(r, nz->Qd, d->nx, d->nx, xs, xs);
        rigmat_result_title(r, nz->qd_exact ? "Qd (process noise per period, exact)"
                                            : "Qd (process noise per period, exact for zoh "
                                              "only)");
    }
    rigmat_result_key(r, "qd_exact");
    rigmat_result_bool(r, nz->qd_exact);
    rigmat_result_key(r, "qd_error_bound");
    rigmat_result_number(r, nz->qd_bound, NULL);
    if (nz->qd_route != RIGMAT_QD_NONE)
        rigmat_result_as_text(r, "Qd relative error bound %.2g (%s)\n\n", nz->qd_bound,
                nz->qd_route == RIGMAT_QD_EIGEN ? "eigen-decomposition, residual-checked"
                                                : "block exponential with doubling");
    else
        rigmat_result_as_text(r, "%s", "");
    rigmat_result_key(r, "Rd");
    rigmat_result_matrix(r, nz->Rd, d->ny, d->ny, L->outputs, L->outputs);
    rigmat_result_title(r, "Rd (measurement noise per sample)");
    if (nz->S != NULL && !transformed) {
        rigmat_result_key(r, "S");
        rigmat_result_matrix(r, nz->S, d->nx, d->ny, xs, L->outputs);
        rigmat_result_title(r, "S = E[w_k v_k^T] (process-measurement cross-covariance)");
    }
    noise_lines(r, L, nz);
    snprintf(line, sizeof line, "advice (common practice): sample %g-%g times faster than the "
            "closed-loop bandwidth; ", rule_low, rule_high);
    rigmat_result_text(r, "%s%.6g Hz suits a closed-loop bandwidth of about %.3g-%.3g Hz\n",
            line, rate_hz, rate_hz / rule_high, rate_hz / rule_low);
    rigmat_result_key(r, "operating_point");
    rigmat_result_object(r);
    rigmat_result_key(r, "x");
    /* the plant's states: the first l->nx of xs (the delay stages follow) */
    rigmat_result_vector(r, l->x0, l->nx, xs);
    rigmat_result_export_name(r, "x0");
    rigmat_result_key(r, "u");
    rigmat_result_vector(r, l->u0, l->nu, L->inputs);
    rigmat_result_export_name(r, "u0");
    rigmat_result_key(r, "y");
    rigmat_result_vector(r, l->y0, l->ny, L->outputs);
    rigmat_result_export_name(r, "y0");
    rigmat_result_close(r);
    rigmat_result_show(r, RIGMAT_SHOW_JSON | RIGMAT_SHOW_EXPORT);
    return r;
}

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
    const rigmat_noise_opts no = rigmat_noise_opts_default();
    rigmat_model *m = NULL;
    rigmat_lti *lti = NULL;
    rigmat_dlti *d = NULL;
    rigmat_noise *nz = NULL;
    rigmat_discretize_ws *dw = NULL;
    rigmat_noise_ws *nw = NULL;
    rigmat_signal *xs = NULL;
    gsl_vector *fd = NULL;
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
    dw = rigmat_discretize_ws_alloc(lti->nx, lti->nu, lti->ny);
    nw = rigmat_noise_ws_alloc(lti->nx, lti->nu - lti->nu_control);
    if (dw == NULL || nw == NULL) {
        st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
        goto report;
    }
    st = rigmat_discretize(lti, &o, dw, &d, &e);
    if (st == RIGMAT_OK)
        st = rigmat_noise_build(lti, d, &no, nw, &nz, &e);
    if (st == RIGMAT_OK)
        st = rigmat_sampling_advice(lti, &o, &lim, advice, sizeof advice / sizeof advice[0],
                                    &nadvice, &e);
    if (st != RIGMAT_OK)
        goto report;
    xs = sampled_states(&m->layout, d);
    if (xs == NULL) {
        st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
        goto report;
    }
    print_advice(env, m, advice,
                 nadvice < sizeof advice / sizeof advice[0] ? nadvice
                                                            : sizeof advice / sizeof advice[0],
                 &o);
    if (nz->S != NULL)
        print_direct(env, m, lti);
    print_no_process_noise(env, m, lti);
    fd = gsl_vector_calloc(d->nx);
    if (fd == NULL) {
        st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
        goto report;
    }
    st = rigmat_discretize_affine(lti, &o, d, fd, &e);
    if (st != RIGMAT_OK)
        goto report;
    r = discretize_result(m, lti, d, nz, xs, fd);
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
    free(xs);
    if (fd != NULL)
        gsl_vector_free(fd);
    rigmat_noise_free(nz);
    rigmat_dlti_free(d);
    rigmat_noise_ws_free(nw);
    rigmat_discretize_ws_free(dw);
    rigmat_lti_free(lti);
    rigmat_model_free(m);
    return st;
}
