/* cmd_gains.c - `rigmat gains FILE --rate F [--weights W.yaml]`: the
 * steady-state Kalman filter of the sampled model with its own noise model
 * (Qd, Rd, S), and with a weights file the LQR (src/study/gains.h,
 * src/study/riccati.h, src/study/weights.h).
 *
 * JSON (README.md, "JSON output"): the common head (rigmat_result_head, kind
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
 *
 * The result is described once (gains_result) and rendered by the one
 * writer of each format (cli_emit): text, JSON, and the export formats,
 * which carry the gain and covariance matrices, the innovation standard
 * deviations and the operating point (the poles and weights are JSON
 * lists of records).
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
    "             [--set PATH=VALUE]... [--format FORMAT] [-o FILE|DIR] [--catalog DIR]",
    "             [--name NAME] [--ctype double|float]",
    "FORMAT: text, json, csv, c, numpy, mtx (-o DIR), latex", NULL
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

static void text_poles(rigmat_result *r, const char *title, const gsl_vector_complex *z, double T)
{
    size_t i;

    rigmat_result_text(r, "%s (z; time constant -T/ln|z|)\n", title);
    for (i = 0; i < z->size; i++) {
        const gsl_complex c = gsl_vector_complex_get(z, i);
        const double mag = gsl_complex_abs(c);
        if (GSL_IMAG(c) == 0.0)
            rigmat_result_text(r, "  %-28.10g", GSL_REAL(c));
        else
            rigmat_result_text(r, "  %.10g %+.10gi%*s", GSL_REAL(c), GSL_IMAG(c), 2, "");
        if (mag > 0.0)
            rigmat_result_text(r, "  |z| %.6g, %.4g ms\n", mag, -T / log(mag) * 1e3);
        else
            rigmat_result_text(r, "  |z| 0 (deadbeat)\n");
    }
    rigmat_result_text(r, "\n");
}

/* Poles as [re, im] pairs, each on one line (JSON only). */
static void json_poles(rigmat_result *r, const gsl_vector_complex *z)
{
    size_t i;

    rigmat_result_array(r);
    for (i = 0; i < z->size; i++) {
        const gsl_complex c = gsl_vector_complex_get(z, i);
        rigmat_result_array(r);
        rigmat_result_number(r, GSL_REAL(c), NULL);
        rigmat_result_number(r, GSL_IMAG(c), NULL);
        rigmat_result_close(r);
        rigmat_result_compact(r);
    }
    rigmat_result_close(r);
}

/* Largest acceptable values, null where none is given (JSON only). */
static void json_vec_or_null(rigmat_result *r, const double *v, size_t n)
{
    size_t i;

    rigmat_result_array(r);
    for (i = 0; i < n; i++) {
        if (v[i] > 0.0)
            rigmat_result_number(r, v[i], NULL);
        else
            rigmat_result_null(r);
    }
    rigmat_result_close(r);
    rigmat_result_compact(r);
}

/* The result, described once.  The gains and covariances are matrices
 * (text tables, JSON, and the export formats); the poles, the weights and
 * the Riccati counts are JSON values with lines of their own in the text. */
static rigmat_result *gains_result(const rigmat_model *m, const rigmat_lti *l,
        const rigmat_dlti *d, const rigmat_kalman *k, const rigmat_lqr *q,
        const rigmat_weights *w)
{
    const rigmat_layout *L = &m->layout;
    const double T = d->period_s;
    rigmat_result *r = rigmat_result_for_layout("gains", m->name, L);
    double mag, tau;
    size_t at, i;

    if (r == NULL)
        return NULL;
    rigmat_result_text(r, "model: %s\norder hash: %s\n", cli_model_name(m), L->order_hash);
    rigmat_result_text(r,
            "sampled at %.6g Hz (period %.6g ms), method %s; gains act on deviations from "
            "the operating point\n\n",
            1.0 / T, T * 1e3, rigmat_method_name(d->method));
    rigmat_result_key(r, "period");
    rigmat_result_number(r, T, "s");
    rigmat_result_key(r, "method");
    rigmat_result_string(r, rigmat_method_name(d->method));
    if (k != NULL) {
        rigmat_result_text(r, "%s",
                "steady-state Kalman filter (noise model Qd, Rd of the sampled model)\n"
                "  update:  x+ = x- + M (y - y-),  y- = Cd x- + Dd u\n"
                "  predict: x-[k+1] = Ad x+ + Bd u + (Kp - Ad M)(y - y-)  (the last term is "
                "zero without a cross-covariance S)\n\n");
        rigmat_result_key(r, "kalman");
        rigmat_result_object(r);
        rigmat_result_key(r, "gain");
        rigmat_result_matrix(r, k->gain, d->nx, d->ny, L->states, L->outputs);
        rigmat_result_title(r, "M (filter gain)");
        rigmat_result_key(r, "predictor_gain");
        rigmat_result_matrix(r, k->predictor_gain, d->nx, d->ny, L->states, L->outputs);
        rigmat_result_title(r, "Kp (predictor gain)");
        rigmat_result_key(r, "prior_covariance");
        rigmat_result_matrix(r, k->prior, d->nx, d->nx, L->states, L->states);
        rigmat_result_title(r, "P- (prior covariance)");
        rigmat_result_key(r, "posterior_covariance");
        rigmat_result_matrix(r, k->posterior, d->nx, d->nx, L->states, L->states);
        rigmat_result_title(r, "P+ (posterior covariance)");
        rigmat_result_key(r, "poles");
        json_poles(r, k->poles);
        rigmat_result_key(r, "innovation_covariance");
        rigmat_result_matrix(r, k->innovation, d->ny, d->ny, L->outputs, L->outputs);
        rigmat_result_title(r, "innovation covariance Cd P- Cd^T + Rd");
        rigmat_result_text(r, "predicted standard deviation of each innovation y - y-\n");
        for (i = 0; i < d->ny; i++)
            rigmat_result_text(r, "  %s [%s]: %.4g\n", L->outputs[i].name, L->outputs[i].unit,
                    gsl_vector_get(k->output_sd, i));
        rigmat_result_text(r, "\n");
        rigmat_result_key(r, "output_sd");
        rigmat_result_vector(r, k->output_sd, d->ny, L->outputs);
        rigmat_result_show(r, RIGMAT_SHOW_JSON | RIGMAT_SHOW_EXPORT);
        rigmat_result_key(r, "residual");
        rigmat_result_number(r, k->info.residual, NULL);
        rigmat_result_key(r, "iterations");
        rigmat_result_integer(r, (long)k->info.iterations);
        text_poles(r, "estimator poles, eig(Ad - Kp Cd)", k->poles, T);
        slowest(k->poles, T, &mag, &tau, &at);
        rigmat_result_text(r,
                "slowest estimator pole: |z| = %.6g, time constant %.4g ms; Riccati residual "
                "%.2g (%zu doubling steps)\n\n",
                mag, tau * 1e3, k->info.residual, k->info.iterations);
        rigmat_result_close(r);
    } else {
        rigmat_result_text(r, "no sensors: no Kalman filter\n\n");
        rigmat_result_key(r, "kalman");
        rigmat_result_null(r);
    }
    if (q != NULL) {
        rigmat_result_text(r, "LQR (Bryson's rule weights): u = -K x\n\n");
        rigmat_result_key(r, "lqr");
        rigmat_result_object(r);
        rigmat_result_key(r, "gain");
        rigmat_result_matrix(r, q->gain, q->nu, d->nx, L->inputs, L->states);
        rigmat_result_title(r, "K (regulator gain)");
        rigmat_result_key(r, "cost_to_go");
        rigmat_result_matrix(r, q->cost_to_go, d->nx, d->nx, L->states, L->states);
        rigmat_result_title(r, "X (cost-to-go)");
        rigmat_result_key(r, "closed_loop_poles");
        json_poles(r, q->poles);
        rigmat_result_key(r, "residual");
        rigmat_result_number(r, q->info.residual, NULL);
        rigmat_result_key(r, "iterations");
        rigmat_result_integer(r, (long)q->info.iterations);
        rigmat_result_key(r, "weights");
        rigmat_result_object(r);
        rigmat_result_key(r, "states");
        json_vec_or_null(r, w->x_max, w->nx);
        rigmat_result_key(r, "inputs");
        json_vec_or_null(r, w->u_max, w->nu);
        rigmat_result_close(r);
        text_poles(r, "closed-loop poles, eig(Ad - Bd K)", q->poles, T);
        slowest(q->poles, T, &mag, &tau, &at);
        rigmat_result_text(r,
                "slowest closed-loop pole: |z| = %.6g, time constant %.4g ms; Riccati "
                "residual %.2g (%zu doubling steps)\n\n",
                mag, tau * 1e3, q->info.residual, q->info.iterations);
        rigmat_result_close(r);
    }
    rigmat_result_key(r, "operating_point");
    rigmat_result_object(r);
    rigmat_result_key(r, "x");
    rigmat_result_vector(r, l->x0, l->nx, L->states);
    rigmat_result_export_name(r, "x0");
    rigmat_result_key(r, "u");
    rigmat_result_vector(r, l->u0, l->nu, L->inputs);
    rigmat_result_export_name(r, "u0");
    rigmat_result_key(r, "y");
    rigmat_result_vector(r, l->y0, l->ny, L->outputs);
    rigmat_result_export_name(r, "y0");
    rigmat_result_close(r);
    rigmat_result_show(r, RIGMAT_SHOW_JSON | RIGMAT_SHOW_EXPORT);
    rigmat_result_text(r, "%s",
            "caution: test every gain on the real machine with current limits set in the drive "
            "and an emergency stop within reach\n");
    return r;
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
        CLI_EXPORT_ROWS(&c),
        CLI_COMMON_ROWS(&c),
        CLI_OPT_END_ROW
    };
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
    rigmat_result *r = NULL;
    rigmat_riccati_info info;
    rigmat_error e;
    const char *file = NULL;
    int done = 0, fmt;
    rigmat_status st;

    memset(&c, 0, sizeof c);
    memset(&a, 0, sizeof a);
    memset(&e, 0, sizeof e);
    st = cli_model_command(argc, argv, opts, gains_usage, cli_all_formats, env, &c, &file, &fmt,
            &done);
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
    r = gains_result(m, lti, d, kf, lq, wt);
    if (r == NULL) {
        fprintf(env->err, "rigmat gains: out of memory\n");
        st = RIGMAT_ENOMEM;
    } else {
        st = cli_emit(env, r, &c, file);
    }
    goto done;
report:
    st = cli_report(env, &e);
done:
    rigmat_result_free(r);
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
