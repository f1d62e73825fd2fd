/* describe.c - the results of linearize and discretize, described once
 * (src/emit/result.h) for every format: the command line (src/cli/
 * cmd_linearize.c, cmd_discretize.c) and the public API (src/lib/api*.c)
 * render the same description, so `rigmat discretize --format json` and
 * rigmat_sampled_export(..., "json", ...) write the same bytes.
 *
 * discretize JSON (README.md, "JSON output"): the head, then
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
#include "describe.h"
#include "affine.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_math.h>

const char *rigmat_model_display_name(const rigmat_model *m)
{
    return m->name != NULL && m->name[0] != '\0' ? m->name : "(unnamed)";
}

/* The lowest and highest multiples of the closed-loop bandwidth a sample
 * rate is usually chosen at (common practice; G. F. Franklin, J. D. Powell,
 * M. L. Workman, Digital Control of Dynamic Systems, 3rd ed., 1998, on
 * sample-rate selection, from memory). */
static const double rule_low = 10.0, rule_high = 30.0;

rigmat_result *rigmat_describe_linear(const rigmat_model *m, const rigmat_lti *l,
        const double *q)
{
    const rigmat_layout *L = &m->layout;
    rigmat_result *r = rigmat_result_for_layout("continuous", m->name, L);

    if (r == NULL)
        return NULL;
    rigmat_result_text(r, "model: %s\norder hash: %s\n\n", rigmat_model_display_name(m),
            L->order_hash);
    rigmat_result_key(r, "A");
    rigmat_result_matrix(r, l->A, L->nx, L->nx, L->states, L->states);
    rigmat_result_title(r, "A = df/dx");
    rigmat_result_key(r, "B");
    rigmat_result_matrix(r, l->B, L->nx, L->nu, L->states, L->inputs);
    rigmat_result_title(r, "B = df/du");
    rigmat_result_key(r, "C");
    rigmat_result_matrix(r, l->C, L->ny, L->nx, L->outputs, L->states);
    rigmat_result_title(r, "C = dh/dx");
    rigmat_result_key(r, "D");
    rigmat_result_matrix(r, l->D, L->ny, L->nu, L->outputs, L->inputs);
    rigmat_result_title(r, "D = dh/du");
    rigmat_result_key(r, "operating_point");
    rigmat_result_object(r);
    rigmat_result_key(r, "x");
    rigmat_result_vector(r, l->x0, L->nx, L->states);
    rigmat_result_title(r, "operating point: x0");
    rigmat_result_export_name(r, "x0");
    rigmat_result_key(r, "u");
    rigmat_result_vector(r, l->u0, L->nu, L->inputs);
    rigmat_result_title(r, "operating point: u0");
    rigmat_result_export_name(r, "u0");
    rigmat_result_key(r, "y");
    rigmat_result_vector(r, l->y0, L->ny, L->outputs);
    rigmat_result_title(r, "operating point: y0 = h(x0, u0)");
    rigmat_result_export_name(r, "y0");
    if (q != NULL) {
        /* a closed loop's dependent coordinates are no states: every
         * joint's value (README.md, "Closed loops"), JSON only */
        size_t j;
        rigmat_result_key(r, "coordinates");
        rigmat_result_object(r);
        for (j = 0; j < m->njoints; j++) {
            rigmat_result_key(r, m->joints[j].name);
            rigmat_result_number(r, q[j], NULL);
            rigmat_result_show(r, RIGMAT_SHOW_JSON);
        }
        rigmat_result_close(r);
        rigmat_result_show(r, RIGMAT_SHOW_JSON);
    }
    rigmat_result_close(r);
    rigmat_result_key(r, "equilibrium");
    rigmat_result_object(r);
    rigmat_result_key(r, "residual");
    rigmat_result_number(r, l->residual, NULL);
    rigmat_result_export_name(r, "residual");
    rigmat_result_key(r, "is_steady");
    rigmat_result_bool(r, l->is_steady);
    rigmat_result_export_name(r, "is_steady");
    rigmat_result_key(r, "f0");
    rigmat_result_vector(r, l->f0, L->nx, L->states);
    rigmat_result_title(r, "equilibrium: f0 = f(x0, u0)");
    rigmat_result_export_name(r, "f0");
    rigmat_result_close(r);
    rigmat_result_text(r, "residual %.3g (accelerations and current derivatives): %s\n",
            l->residual,
            l->is_steady ? "a steady state" : "not a steady state; x' = A dx + B du + f0");
    return r;
}

/* The rows of the sampled state: the plant's, then the delay stages. */
rigmat_signal *rigmat_sampled_signals(const rigmat_layout *L, const rigmat_dlti *d)
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

rigmat_result *rigmat_describe_sampled(const rigmat_model *m, const rigmat_lti *l,
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
    rigmat_result_text(r, "model: %s\norder hash: %s\n", rigmat_model_display_name(m), L->order_hash);
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


rigmat_status rigmat_sampled_parts_build(const rigmat_model *m, const rigmat_lti *l,
        const rigmat_discretize_opts *o, rigmat_sampled_parts *p, rigmat_error *err)
{
    const rigmat_noise_opts no = rigmat_noise_opts_default();
    rigmat_discretize_ws *dw = rigmat_discretize_ws_alloc(l->nx, l->nu, l->ny);
    rigmat_noise_ws *nw = rigmat_noise_ws_alloc(l->nx, l->nu - l->nu_control);
    rigmat_status st = RIGMAT_OK;

    memset(p, 0, sizeof *p);
    if (dw == NULL || nw == NULL)
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    if (st == RIGMAT_OK)
        st = rigmat_discretize(l, o, dw, &p->d, err);
    if (st == RIGMAT_OK)
        st = rigmat_noise_build(l, p->d, &no, nw, &p->nz, err);
    if (st == RIGMAT_OK) {
        p->xs = rigmat_sampled_signals(&m->layout, p->d);
        p->fd = gsl_vector_calloc(p->d->nx);
        if (p->xs == NULL || p->fd == NULL)
            st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    }
    if (st == RIGMAT_OK)
        st = rigmat_discretize_affine(l, o, p->d, p->fd, err);
    rigmat_noise_ws_free(nw);
    rigmat_discretize_ws_free(dw);
    return st;
}

void rigmat_sampled_parts_release(rigmat_sampled_parts *p)
{
    if (p->fd != NULL)
        gsl_vector_free(p->fd);
    free(p->xs);
    rigmat_noise_free(p->nz);
    rigmat_dlti_free(p->d);
    memset(p, 0, sizeof *p);
}
