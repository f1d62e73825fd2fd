/* cmd_gains.c - `rigmat gains FILE --rate F [--weights W.yaml]`: the
 * steady-state Kalman filter of the sampled model with its own noise model
 * (Qd, Rd, S), and with a weights file the LQR (src/study/gains.h,
 * src/study/riccati.h, src/study/weights.h).
 *
 * JSON (DESIGN.md section 5): the common head (cli_json_head, kind
 * "gains"), then
 *   period, method
 *   kalman   {gain, predictor_gain, prior_covariance, posterior_covariance,
 *             poles, innovation_covariance, output_sd, residual, iterations}
 *            x+ = x- + gain (y - y-), y- = Cd x- + Dd u; predictor form
 *            x-[k+1] = Ad x- + Bd u + predictor_gain (y - y-); poles:
 *            eig(Ad - predictor_gain Cd), as [re, im]; output_sd:
 *            sqrt(diag(innovation_covariance)); null without sensors
 *   lqr      (with --weights) {gain, cost_to_go, closed_loop_poles,
 *             residual, iterations, weights {states, inputs}}: u = -gain x
 *            over the control inputs; weights: each state's and input's
 *            largest acceptable value (null for a state without one)
 *   operating_point {x, u, y}: the gains act on deviations from it
 */
#include "cli.h"
#include "discretize.h"
#include "gains.h"
#include "noise.h"
#include "units.h"
#include "weights.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_complex_math.h>

static const char *const gains_usage[] = {
    "rigmat gains FILE (--rate FREQ | --period TIME) [--weights W.yaml] [--method zoh|euler]",
    "             [--set PATH=VALUE]... [--format text|json] [-o FILE] [--catalog DIR]", NULL
};

struct gains_args {
    const char *rate, *period, *method, *weights;
};

static rigmat_status parse_args(struct cli_env *env, const struct gains_args *a,
                                rigmat_discretize_opts *o)
{
    rigmat_status st;
    double v;

    if ((a->rate == NULL) == (a->period == NULL)) {
        fprintf(env->err, "rigmat gains: %s\n",
                a->rate == NULL ? "missing --rate or --period"
                                : "give --rate or --period, not both");
        return RIGMAT_EUSAGE;
    }
    st = a->rate != NULL ? cli_quantity(env, "rate", a->rate, RIGMAT_Q_FREQUENCY, &v)
                         : cli_quantity(env, "period", a->period, RIGMAT_Q_TIME, &v);
    if (st != RIGMAT_OK)
        return st;
    if (!(v > 0) || !isfinite(v)) {
        fprintf(env->err, "rigmat gains: --%s must be positive\n", a->rate ? "rate" : "period");
        return RIGMAT_EUSAGE;
    }
    o->period_s = a->rate != NULL ? 1.0 / v : v;
    if (a->method != NULL) {
        if (rigmat_method_parse(a->method, &o->method) != 0 ||
            (o->method != RIGMAT_METHOD_ZOH && o->method != RIGMAT_METHOD_EULER)) {
            fprintf(env->err,
                    "rigmat gains: method '%s' is not offered here\n"
                    "  hint: use zoh (the default) or euler: the gains need the sampled state to "
                    "be the physical state\n",
                    a->method);
            return RIGMAT_EUSAGE;
        }
    }
    return RIGMAT_OK;
}

/* The slowest pole (largest |z|) and its time constant -T / ln|z|. */
static void slowest(const gsl_vector_complex *z, double T, double *mag, double *tau_s, size_t *at)
{
    size_t i;

    *mag = -1.0;
    *at = 0;
    for (i = 0; i < z->size; i++)
        if (gsl_complex_abs(gsl_vector_complex_get(z, i)) > *mag) {
            *mag = gsl_complex_abs(gsl_vector_complex_get(z, i));
            *at = i;
        }
    *tau_s = *mag > 0.0 ? -T / log(*mag) : 0.0;
}

static void text_poles(FILE *f, const char *title, const gsl_vector_complex *z, double T)
{
    size_t i;

    fprintf(f, "%s (z; time constant -T/ln|z|)\n", title);
    for (i = 0; i < z->size; i++) {
        const gsl_complex c = gsl_vector_complex_get(z, i);
        const double mag = gsl_complex_abs(c);
        if (GSL_IMAG(c) == 0.0)
            fprintf(f, "  %-28.10g", GSL_REAL(c));
        else
            fprintf(f, "  %.10g %+.10gi%*s", GSL_REAL(c), GSL_IMAG(c), 2, "");
        if (mag > 0.0)
            fprintf(f, "  |z| %.6g, %.4g ms\n", mag, -T / log(mag) * 1e3);
        else
            fputs("  |z| 0 (deadbeat)\n", f);
    }
    fputc('\n', f);
}

static void gains_text(FILE *f, const rigmat_model *m, const rigmat_dlti *d, const rigmat_kalman *k,
                       const rigmat_lqr *q)
{
    const rigmat_layout *L = &m->layout;
    const double T = d->period_s;
    double mag, tau;
    size_t at;

    fputs("model: ", f);
    cli_put_clean(f, cli_model_name(m));
    fprintf(f, "\norder hash: %s\n", L->order_hash);
    fprintf(f,
            "sampled at %.6g Hz (period %.6g ms), method %s; gains act on deviations from "
            "the operating point\n\n",
            1.0 / T, T * 1e3, rigmat_method_name(d->method));
    if (k != NULL) {
        fputs("steady-state Kalman filter (noise model Qd, Rd of the sampled model)\n"
              "  update:  x+ = x- + M (y - y-),  y- = Cd x- + Dd u\n"
              "  predict: x-[k+1] = Ad x+ + Bd u + (Kp - Ad M)(y - y-)  (the last term is zero "
              "without a cross-covariance S)\n\n",
              f);
        cli_text_matrix(f, "M (filter gain)", k->gain, L->states, d->nx, L->outputs, d->ny);
        cli_text_matrix(f, "Kp (predictor gain)", k->predictor_gain, L->states, d->nx, L->outputs,
                        d->ny);
        cli_text_matrix(f, "P- (prior covariance)", k->prior, L->states, d->nx, L->states, d->nx);
        cli_text_matrix(f, "P+ (posterior covariance)", k->posterior, L->states, d->nx, L->states,
                        d->nx);
        cli_text_matrix(f, "innovation covariance Cd P- Cd^T + Rd", k->innovation, L->outputs,
                        d->ny, L->outputs, d->ny);
        {
            size_t i;
            fputs("predicted standard deviation of each innovation y - y-\n", f);
            for (i = 0; i < d->ny; i++)
                fprintf(f, "  %s [%s]: %.4g\n", L->outputs[i].name, L->outputs[i].unit,
                        gsl_vector_get(k->output_sd, i));
            fputc('\n', f);
        }
        text_poles(f, "estimator poles, eig(Ad - Kp Cd)", k->poles, T);
        slowest(k->poles, T, &mag, &tau, &at);
        fprintf(f,
                "slowest estimator pole: |z| = %.6g, time constant %.4g ms; Riccati residual "
                "%.2g (%zu doubling steps)\n\n",
                mag, tau * 1e3, k->info.residual, k->info.iterations);
    } else {
        fputs("no sensors: no Kalman filter\n\n", f);
    }
    if (q != NULL) {
        fputs("LQR (Bryson's rule weights): u = -K x\n\n", f);
        cli_text_matrix(f, "K (regulator gain)", q->gain, L->inputs, q->nu, L->states, d->nx);
        cli_text_matrix(f, "X (cost-to-go)", q->cost_to_go, L->states, d->nx, L->states, d->nx);
        text_poles(f, "closed-loop poles, eig(Ad - Bd K)", q->poles, T);
        slowest(q->poles, T, &mag, &tau, &at);
        fprintf(f,
                "slowest closed-loop pole: |z| = %.6g, time constant %.4g ms; Riccati "
                "residual %.2g (%zu doubling steps)\n\n",
                mag, tau * 1e3, q->info.residual, q->info.iterations);
    }
    fputs("caution: test every gain on the real machine with current limits set in the drive "
          "and an emergency stop within reach\n",
          f);
}

static void json_poles(struct cli_json *j, const gsl_vector_complex *z)
{
    const int pretty = j->pretty;
    size_t i;

    cli_json_arr_open(j);
    for (i = 0; i < z->size; i++) {
        const gsl_complex c = gsl_vector_complex_get(z, i);
        cli_json_arr_open(j);
        j->pretty = 0;
        cli_json_num(j, GSL_REAL(c));
        cli_json_num(j, GSL_IMAG(c));
        cli_json_arr_close(j);
        j->pretty = pretty;
    }
    cli_json_arr_close(j);
}

static void json_vec_or_null(struct cli_json *j, const double *v, size_t n)
{
    const int pretty = j->pretty;
    size_t i;

    cli_json_arr_open(j);
    j->pretty = 0;
    for (i = 0; i < n; i++) {
        if (v[i] > 0.0)
            cli_json_num(j, v[i]);
        else
            cli_json_null(j);
    }
    cli_json_arr_close(j);
    j->pretty = pretty;
}

static rigmat_status gains_json(FILE *f, const rigmat_model *m, const rigmat_lti *l,
                                const rigmat_dlti *d, const rigmat_kalman *k, const rigmat_lqr *q,
                                const rigmat_weights *w)
{
    struct cli_json j;

    cli_json_begin(&j, f);
    cli_json_head(&j, m, "gains");
    cli_json_key(&j, "period");
    cli_json_num(&j, d->period_s);
    cli_json_key(&j, "method");
    cli_json_str(&j, rigmat_method_name(d->method));
    cli_json_key(&j, "kalman");
    if (k != NULL) {
        cli_json_obj_open(&j);
        cli_json_key(&j, "gain");
        cli_json_matrix(&j, k->gain, d->nx, d->ny);
        cli_json_key(&j, "predictor_gain");
        cli_json_matrix(&j, k->predictor_gain, d->nx, d->ny);
        cli_json_key(&j, "prior_covariance");
        cli_json_matrix(&j, k->prior, d->nx, d->nx);
        cli_json_key(&j, "posterior_covariance");
        cli_json_matrix(&j, k->posterior, d->nx, d->nx);
        cli_json_key(&j, "poles");
        json_poles(&j, k->poles);
        cli_json_key(&j, "innovation_covariance");
        cli_json_matrix(&j, k->innovation, d->ny, d->ny);
        cli_json_key(&j, "output_sd");
        cli_json_vector(&j, k->output_sd, d->ny);
        cli_json_key(&j, "residual");
        cli_json_num(&j, k->info.residual);
        cli_json_key(&j, "iterations");
        cli_json_int(&j, (long)k->info.iterations);
        cli_json_obj_close(&j);
    } else {
        cli_json_null(&j);
    }
    if (q != NULL) {
        cli_json_key(&j, "lqr");
        cli_json_obj_open(&j);
        cli_json_key(&j, "gain");
        cli_json_matrix(&j, q->gain, q->nu, d->nx);
        cli_json_key(&j, "cost_to_go");
        cli_json_matrix(&j, q->cost_to_go, d->nx, d->nx);
        cli_json_key(&j, "closed_loop_poles");
        json_poles(&j, q->poles);
        cli_json_key(&j, "residual");
        cli_json_num(&j, q->info.residual);
        cli_json_key(&j, "iterations");
        cli_json_int(&j, (long)q->info.iterations);
        cli_json_key(&j, "weights");
        cli_json_obj_open(&j);
        cli_json_key(&j, "states");
        json_vec_or_null(&j, w->x_max, w->nx);
        cli_json_key(&j, "inputs");
        json_vec_or_null(&j, w->u_max, w->nu);
        cli_json_obj_close(&j);
        cli_json_obj_close(&j);
    }
    cli_json_operating_point(&j, l);
    return cli_json_end(&j);
}

/* Load the weights file against the linear model; diagnostics printed. */
static rigmat_status load_weights(struct cli_env *env, const char *path, const rigmat_lti *l,
                                  rigmat_weights **out)
{
    rigmat_diags d;
    rigmat_status st;

    rigmat_diags_init(&d);
    d.max_errors = env->opt.max_errors;
    cli_note_input(env, path);
    st = rigmat_weights_load(path, l, &env->opt, out, &d);
    rigmat_diags_print(&d, env->err);
    rigmat_diags_release(&d);
    return st;
}

rigmat_status cmd_gains(int argc, char **argv, struct cli_env *env);
rigmat_status cmd_gains(int argc, char **argv, struct cli_env *env)
{
    struct cli_common c;
    struct gains_args a;
    const struct cli_opt opts[] = {
        { 0, "rate", CLI_OPT_STRING, &a.rate, "FREQ", "controller sample rate (200Hz)" },
        { 0, "period", CLI_OPT_STRING, &a.period, "TIME", "or its period (5ms)" },
        { 0, "weights", CLI_OPT_STRING, &a.weights, "W.yaml",
          "LQR weights by Bryson's rule (largest acceptable values)" },
        { 0, "method", CLI_OPT_STRING, &a.method, "METHOD", "zoh (default) or euler" },
        CLI_COMMON_ROWS(&c),
        CLI_OPT_END_ROW
    };
    static const char *const formats[] = { "text", "json", NULL };
    rigmat_discretize_opts o = rigmat_discretize_opts_default();
    const rigmat_noise_opts no = rigmat_noise_opts_default();
    const rigmat_riccati_opts ro = rigmat_riccati_opts_default();
    rigmat_model *m = NULL;
    rigmat_lti *lti = NULL;
    rigmat_dlti *d = NULL;
    rigmat_noise *nz = NULL;
    rigmat_discretize_ws *dw = NULL;
    rigmat_noise_ws *nw = NULL;
    rigmat_gains_ws *gw = NULL;
    rigmat_riccati_ws *kw = NULL, *lw = NULL;
    rigmat_weights *wt = NULL;
    rigmat_kalman *kf = NULL;
    rigmat_lqr *lq = NULL;
    rigmat_riccati_info info;
    rigmat_error e;
    const char *file = NULL;
    int done = 0, fmt;
    rigmat_status st;

    memset(&c, 0, sizeof c);
    memset(&a, 0, sizeof a);
    memset(&e, 0, sizeof e);
    st = cli_model_command(argc, argv, opts, gains_usage, formats, env, &c, &file, &fmt, &done);
    if (st != RIGMAT_OK || done)
        return st;
    st = parse_args(env, &a, &o);
    if (st != RIGMAT_OK) {
        cli_usage(env->err, gains_usage, opts);
        return st;
    }
    env->opt.rate_hz = 1.0 / o.period_s;
    st = cli_load_model(env, file, &c, &m);
    if (st != RIGMAT_OK)
        return st;
    st = cli_linearize(env, m, &lti);
    if (st != RIGMAT_OK)
        goto done;
    if (lti->nx == 0) {
        st = RIGMAT_FAIL(&e, RIGMAT_EUSAGE, "the model has no states: no gains to compute");
        goto report;
    }
    if (a.weights != NULL) {
        if (lti->nu_control == 0) {
            st = RIGMAT_FAIL(&e, RIGMAT_EMODEL, "the model has no control inputs: no LQR");
            goto report;
        }
        st = load_weights(env, a.weights, lti, &wt);
        if (st != RIGMAT_OK)
            goto done;
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
    if (st != RIGMAT_OK)
        goto report;
    if (d->ny > 0 && gsl_matrix_isnull(nz->Qd))
        fprintf(env->err,
                "rigmat gains: note: the model has no process noise (no disturbance with a "
                "`density`): the filter trusts the model, and its gain is zero on every stable "
                "mode\n  hint: add disturbances with a `density` for a filter that tracks the "
                "real machine\n");
    if (d->ny > 0) {
        gw = rigmat_gains_ws_alloc(d->nx, d->ny);
        kw = rigmat_riccati_ws_alloc(d->nx, d->ny);
        if (gw == NULL || kw == NULL) {
            st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
            goto report;
        }
        st = rigmat_kalman_solve(d->Ad, d->Cd, nz->Qd, nz->Rd, nz->S, &ro, gw, kw, &kf, &info, &e);
        if (st != RIGMAT_OK) {
            rigmat_gains_explain(lti, RIGMAT_GAINS_KALMAN, &info, NULL, &e);
            goto report;
        }
    } else {
        fprintf(env->err, "rigmat gains: note: the model has no sensors: no Kalman filter\n");
    }
    if (wt != NULL) {
        lw = rigmat_riccati_ws_alloc(d->nx, d->nu);
        if (lw == NULL) {
            st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
            goto report;
        }
        st = rigmat_lqr_solve(d->Ad, d->Bd, wt->Q, wt->R, &ro, lw, &lq, &info, &e);
        if (st != RIGMAT_OK) {
            rigmat_gains_explain(lti, RIGMAT_GAINS_LQR, &info, a.weights, &e);
            goto report;
        }
    }
    {
        /* one finite check for every format: the JSON writer refuses a
         * non-finite number, so the text is printed only when the JSON of
         * the same result would be */
        FILE *sink = fmt == 1 ? env->out : cli_scratch_open();
        st = sink == NULL ? RIGMAT_EIO : gains_json(sink, m, lti, d, kf, lq, wt);
        if (fmt != 1)
            cli_scratch_close(sink);
        if (sink == NULL)
            fprintf(env->err, "rigmat gains: error: cannot open /dev/null\n");
        else if (st != RIGMAT_OK)
            fprintf(env->err, "rigmat gains: error: the result is not finite\n");
        else if (fmt != 1)
            gains_text(env->out, m, d, kf, lq);
    }
    goto done;
report:
    st = cli_report(env, &e);
done:
    rigmat_lqr_free(lq);
    rigmat_kalman_free(kf);
    rigmat_weights_free(wt);
    rigmat_riccati_ws_free(lw);
    rigmat_riccati_ws_free(kw);
    rigmat_gains_ws_free(gw);
    rigmat_noise_free(nz);
    rigmat_dlti_free(d);
    rigmat_noise_ws_free(nw);
    rigmat_discretize_ws_free(dw);
    rigmat_lti_free(lti);
    rigmat_model_free(m);
    return st;
}
