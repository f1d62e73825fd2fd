/* cmd_modes.c - `rigmat modes FILE [--rate R]`: the modes of the model
 * linearized at its operating point (src/study/modes.h): eigenvalues,
 * frequency, damping, time constant, stability, the states each mode lives
 * in, controllability and observability per mode, the invariant zeros of
 * every channel and the DC gain.  Text leads with a one-line summary; JSON
 * follows README.md, "JSON output".  Also the summary line `check` and
 * `linearize` print at the end of their text (cli_modes_summary). */
#include "cli.h"
#include "validity.h"
#include "modes.h"
#include "units.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_math.h>

static const char *const modes_usage[] = {
    "rigmat modes FILE [--rate FREQ] [--validity] [--set PATH=VALUE]... [--format text|json]"
    " [-o FILE] [--catalog DIR]",
    NULL
};

/* ------------------------------------------------------------ text */

/* re + im j; parts below snap (in size) print as 0: text only, JSON keeps
 * every digit */
static void text_complex(char *buf, size_t n, double re, double im, double snap)
{
    if (fabs(re) < snap)
        re = 0.0;
    if (fabs(im) < snap)
        im = 0.0;
    if (im == 0.0)
        snprintf(buf, n, "%.6g", re);
    else
        snprintf(buf, n, "%.6g %c %.6gj", re, im < 0.0 ? '-' : '+', fabs(im));
}

static void text_summary(rigmat_result *r, const rigmat_modes *md)
{
    char line[1024];

    rigmat_modes_summary(md, line, sizeof line);
    rigmat_result_text(r, "%s\n", line);
}

static void text_modes(rigmat_result *r, const rigmat_modes *md, const rigmat_layout *L)
{
    char s[64], z[64], tau[32], damp[32], cm[32], om[32];
    size_t k, i, unbalanced = 0;
    const double snap = md->set.stab_rtol * md->omega_b;

    rigmat_result_text(r, "\nmodes (%zu): eigenvalues s of A", md->nx);
    if (md->period_s > 0.0)
        rigmat_result_text(r, ", and z = exp(s T) at T = %.6g s (%.6g Hz)", md->period_s,
                1.0 / md->period_s);
    rigmat_result_text(r, "\n  %3s  %-28s", "#", "s [1/s]");
    if (md->period_s > 0.0)
        rigmat_result_text(r, " %-28s", "z");
    rigmat_result_text(r, " %11s %9s %11s  %-9s %-12s %-12s\n", "freq [Hz]", "damping", "tau [s]",
            "stability", "ctrb", "obsv");
    for (k = 0; k < md->nx; k++) {
        const rigmat_mode *m = &md->modes[k];

        text_complex(s, sizeof s, m->s_re, m->s_im, snap);
        if (gsl_finite(m->time_constant_s))
            snprintf(tau, sizeof tau, "%.4g", m->time_constant_s);
        else
            snprintf(tau, sizeof tau, "-");
        if (gsl_finite(m->damping))
            snprintf(damp, sizeof damp, "%.4g", m->damping);
        else
            snprintf(damp, sizeof damp, "-");
        rigmat_result_text(r, "  %3zu  %-28s", k + 1, s);
        if (md->period_s > 0.0) {
            text_complex(z, sizeof z, m->z_re, m->z_im, 0.0);
            rigmat_result_text(r, " %-28s", z);
        }
        snprintf(cm, sizeof cm, "%s %.0e", m->controllable ? "yes" : "NO", m->ctrb_measure);
        snprintf(om, sizeof om, "%s %.0e", m->observable ? "yes" : "NO", m->obsv_measure);
        rigmat_result_text(r, " %11.4g %9s %11s  %-9s %-12s %-12s\n", m->frequency_hz, damp, tau,
                rigmat_stability_name(m->stability), cm, om);
    }
    rigmat_result_text(r,
            "\nwhere each mode lives (shares of its eigenvector in scaled units, >= %g %%),"
            "\nwhich inputs reach it and which outputs see it:\n",
            md->set.share_min * 100.0);
    for (k = 0; k < md->nx; k++) {
        const rigmat_mode *m = &md->modes[k];
        size_t c = 0;

        rigmat_result_text(r, "  %3zu  ", k + 1);
        for (i = 0; i < md->nx; i++) {
            const size_t si = m->by_share[i];
            if (m->share[si] < md->set.share_min && i > 0)
                break;
            rigmat_result_text(r, "%s%s %.0f%%", i ? ", " : "", md->state_names[si],
                    100.0 * m->share[si]);
        }
        rigmat_result_text(r, "\n       reached by: ");
        for (i = 0; i < md->nu; i++)
            if (m->reached_by[i])
                rigmat_result_text(r, "%s%s%s", c++ ? ", " : "", md->input_names[i],
                        i >= md->nu_control ? " (disturbance)" : "");
        if (c == 0)
            rigmat_result_text(r, "%s", "none");
        rigmat_result_text(r, "%s", "; seen by: ");
        c = 0;
        for (i = 0; i < md->ny; i++)
            if (m->seen_by[i])
                rigmat_result_text(r, "%s%s", c++ ? ", " : "", md->output_names[i]);
        if (c == 0)
            rigmat_result_text(r, "%s", "none");
        rigmat_result_text(r, "\n");
    }
    rigmat_result_text(r,
            "\nscaled units: each state divided by its scale, from balancing A (Osborne):\n");
    for (i = 0; i < md->nx; i++) {
        rigmat_result_text(r, "  %-28s %-12.4g %-8s%s\n", md->state_names[i], md->scale[i],
                L != NULL && i < L->nx ? L->states[i].unit : "", md->balanced[i] ? "" : " *");
        if (!md->balanced[i])
            unbalanced++;
    }
    if (unbalanced > 0)
        rigmat_result_text(r, "%s",
                "  * nothing depends on it, or it on nothing: its size is its rate of change\n"
                "    (or its influence) over each mode's own rate |s|\n");
    rigmat_result_text(r,
            "ctrb, obsv: PBH test; the number is the smallest singular value of [A - sI, B]\n"
            "(control inputs) or of [A - sI; C], scaled, over its norm: yes above %g.\n"
            "marginal: |Re s| <= %g x %.4g 1/s (the norm of scaled A)\n",
            md->set.rtol, md->set.stab_rtol, md->omega_b);
}

static void text_zeros(rigmat_result *r, const rigmat_modes *md)
{
    char v[64];
    size_t i, j, k, nrhp = 0;
    const double snap = md->set.stab_rtol * md->omega_b;

    rigmat_result_text(r, "%s", "\ninvariant zeros of each channel (input -> output):\n");
    if (md->nu == 0 || md->ny == 0) {
        rigmat_result_text(r, "%s", "  (none: the model has no inputs or no outputs)\n");
        return;
    }
    for (j = 0; j < md->nu; j++)
        for (i = 0; i < md->ny; i++) {
            const rigmat_channel_zeros *z = &md->zeros[i * md->nu + j];

            rigmat_result_text(r, "  %s -> %s: ", md->input_names[j], md->output_names[i]);
            if (z->no_path)
                rigmat_result_text(r, "%s", "no path (the input does not reach the output)");
            else if (z->count == 0)
                rigmat_result_text(r, "%s", "none");
            for (k = 0; k < z->count; k++) {
                text_complex(v, sizeof v, z->re[k], z->im[k], snap);
                rigmat_result_text(r, "%s%s", k ? ", " : "", v);
            }
            if (z->rhp > 0) {
                rigmat_result_text(r, "  [%zu in the right half plane]", z->rhp);
                nrhp++;
            }
            rigmat_result_text(r, "\n");
        }
    rigmat_result_text(r, "  (parts below %.3g 1/s, the marginal band, print as 0)\n", snap);
    if (nrhp > 0)
        rigmat_result_text(r, "%s",
                "  A zero in the right half plane (Re z > 0) makes the first response of that\n"
                "  output to a step of that input go the wrong way before it turns.\n");
}

static void text_dc_gain(rigmat_result *r, const rigmat_modes *md, const rigmat_layout *L)
{
    size_t i, j;

    rigmat_result_text(r, "%s",
            "\nDC gain (steady output per unit of input, -C A^-1 B + D; 'unbounded' where a\n"
            "pole at 0 makes the output grow without end):\n");
    if (md->dc_gain == NULL) {
        rigmat_result_text(r, "%s", "  (empty)\n");
        return;
    }
    rigmat_result_text(r, "  %-24s", "");
    for (j = 0; j < md->nu; j++)
        rigmat_result_text(r, " %14.14s", md->input_names[j]);
    rigmat_result_text(r, "\n");
    for (i = 0; i < md->ny; i++) {
        char lab[64];

        snprintf(lab, sizeof lab, "%s [%s]", md->output_names[i],
                 L != NULL && i < L->ny ? L->outputs[i].unit : "");
        rigmat_result_text(r, "  %-24s", lab);
        for (j = 0; j < md->nu; j++) {
            const double g = gsl_matrix_get(md->dc_gain, i, j);
            if (!gsl_finite(g))
                rigmat_result_text(r, " %14s", "unbounded");
            else if (g == 0.0)
                rigmat_result_text(r, " %14s", "0");
            else
                rigmat_result_text(r, " %14.6g", g);
        }
        rigmat_result_text(r, "\n");
    }
}

/* ------------------------------------------------------------ JSON */

static void json_complex(rigmat_result *r, double re, double im)
{
    rigmat_result_array(r);
    rigmat_result_number(r, re, NULL);
    rigmat_result_number(r, im, NULL);
    rigmat_result_close(r);
}

static void json_num_or_null(rigmat_result *r, double v)
{
    if (gsl_finite(v))
        rigmat_result_number(r, v, NULL);
    else
        rigmat_result_null(r);
}

static void json_names(rigmat_result *r, char *const *names, const unsigned char *flags, size_t n)
{
    size_t i;

    rigmat_result_array(r);
    for (i = 0; i < n; i++)
        if (flags[i])
            rigmat_result_string(r, names[i]);
    rigmat_result_close(r);
}

/* The result, described once: the text layout first (lines of its own),
 * then the JSON tree, which the text does not show (its numbers are
 * plain scalars and arrays).  The DC gain may hold an unbounded entry
 * (null in JSON), so it is an array of rows, not a matrix: the export
 * formats, which need finite matrices, are not offered. */
static rigmat_result *modes_result(const rigmat_model *m, const rigmat_modes *md)
{
    const rigmat_layout *L = &m->layout;
    rigmat_result *r = rigmat_result_alloc("modes");
    char line[1024];
    size_t k, i, jj;

    if (r == NULL)
        return NULL;
    rigmat_result_head(r, m->name, L->order_hash, L->states, L->nx, L->inputs, L->nu,
            L->outputs, L->ny);
    text_summary(r, md);
    text_modes(r, md, L);
    text_zeros(r, md);
    text_dc_gain(r, md, L);
    rigmat_modes_summary(md, line, sizeof line);
    rigmat_result_key(r, "summary");
    rigmat_result_string(r, line);
    if (md->period_s > 0.0) {
        rigmat_result_key(r, "period");
        rigmat_result_number(r, md->period_s, NULL);
    }
    rigmat_result_key(r, "modes");
    rigmat_result_array(r);
    for (k = 0; k < md->nx; k++) {
        const rigmat_mode *mo = &md->modes[k];

        rigmat_result_object(r);
        rigmat_result_key(r, "s");
        json_complex(r, mo->s_re, mo->s_im);
        if (md->period_s > 0.0) {
            rigmat_result_key(r, "z");
            json_complex(r, mo->z_re, mo->z_im);
        }
        rigmat_result_key(r, "frequency");
        rigmat_result_number(r, mo->frequency_hz, NULL);
        rigmat_result_key(r, "damping");
        json_num_or_null(r, mo->damping);
        rigmat_result_key(r, "time_constant");
        json_num_or_null(r, mo->time_constant_s);
        rigmat_result_key(r, "stability");
        rigmat_result_string(r, rigmat_stability_name(mo->stability));
        rigmat_result_key(r, "controllable");
        rigmat_result_bool(r, mo->controllable);
        rigmat_result_key(r, "observable");
        rigmat_result_bool(r, mo->observable);
        rigmat_result_key(r, "reached_by");
        json_names(r, md->input_names, mo->reached_by, md->nu);
        rigmat_result_key(r, "seen_by");
        json_names(r, md->output_names, mo->seen_by, md->ny);
        rigmat_result_key(r, "states");
        rigmat_result_array(r);
        for (i = 0; i < md->nx; i++) {
            const size_t si = mo->by_share[i];
            if (mo->share[si] < md->set.share_min && i > 0)
                break;
            rigmat_result_object(r);
            rigmat_result_key(r, "name");
            rigmat_result_string(r, md->state_names[si]);
            rigmat_result_key(r, "share");
            rigmat_result_number(r, mo->share[si], NULL);
            rigmat_result_close(r);
        }
        rigmat_result_close(r);
        rigmat_result_close(r);
    }
    rigmat_result_close(r);

    rigmat_result_key(r, "zeros");
    rigmat_result_array(r);
    for (jj = 0; jj < md->nu; jj++)
        for (i = 0; i < md->ny; i++) {
            const rigmat_channel_zeros *z = &md->zeros[i * md->nu + jj];

            rigmat_result_object(r);
            rigmat_result_key(r, "input");
            rigmat_result_string(r, md->input_names[jj]);
            rigmat_result_key(r, "output");
            rigmat_result_string(r, md->output_names[i]);
            rigmat_result_key(r, "values");
            rigmat_result_array(r);
            for (k = 0; k < z->count; k++)
                json_complex(r, z->re[k], z->im[k]);
            rigmat_result_close(r);
            rigmat_result_key(r, "right_half_plane");
            rigmat_result_array(r);
            for (k = 0; k < z->count; k++)
                if (z->re[k] > md->set.stab_rtol * md->omega_b)
                    json_complex(r, z->re[k], z->im[k]);
            rigmat_result_close(r);
            rigmat_result_key(r, "no_path");
            rigmat_result_bool(r, z->no_path);
            rigmat_result_close(r);
        }
    rigmat_result_close(r);

    rigmat_result_key(r, "dc_gain");
    rigmat_result_array(r);
    for (i = 0; i < md->ny; i++) {
        rigmat_result_array(r);
        for (jj = 0; jj < md->nu; jj++)
            json_num_or_null(r, gsl_matrix_get(md->dc_gain, i, jj));
        rigmat_result_close(r);
    }
    rigmat_result_close(r);

    rigmat_result_key(r, "scaling");
    rigmat_result_object(r);
    rigmat_result_key(r, "method");
    rigmat_result_string(r, "balanced");
    rigmat_result_key(r, "rate");
    rigmat_result_number(r, md->omega_b, NULL);
    rigmat_result_key(r, "scales");
    rigmat_result_array(r);
    for (i = 0; i < md->nx; i++)
        rigmat_result_number(r, md->scale[i], NULL);
    rigmat_result_close(r);
    rigmat_result_key(r, "balanced");
    rigmat_result_array(r);
    for (i = 0; i < md->nx; i++)
        rigmat_result_bool(r, md->balanced[i]);
    rigmat_result_close(r);
    rigmat_result_close(r);
    rigmat_result_key(r, "tolerances");
    rigmat_result_object(r);
    rigmat_result_key(r, "pbh");
    rigmat_result_number(r, md->set.rtol, NULL);
    rigmat_result_key(r, "marginal");
    rigmat_result_number(r, md->set.stab_rtol, NULL);
    rigmat_result_key(r, "infinite_zero");
    rigmat_result_number(r, md->set.inf_rtol, NULL);
    rigmat_result_close(r);
    return r;
}

/* ------------------------------------------------------------ summary */

void cli_modes_summary(struct cli_env *env, const rigmat_model *m, const rigmat_lti *l)
{
    rigmat_lti *own = NULL;
    rigmat_modes *md = NULL;
    rigmat_error e;
    char line[1024];

    memset(&e, 0, sizeof e);
    if (l == NULL) {
        if (rigmat_linearize(m, &env->opt, &own, NULL, &e) != RIGMAT_OK) {
            fprintf(env->out, "\nmodes: not available: %s\n", e.message);
            return;
        }
        l = own;
    }
    if (rigmat_modes_compute(l, 0.0, NULL, &md, &e) != RIGMAT_OK) {
        fprintf(env->out, "\nmodes: not available: %s\n", e.message);
    } else {
        rigmat_modes_summary(md, line, sizeof line);
        fprintf(env->out, "\nmodes: %s\n", line);
    }
    rigmat_modes_free(md);
    rigmat_lti_free(own);
}

/* ------------------------------------------------------------ command */

rigmat_status cmd_modes(int argc, char **argv, struct cli_env *env);
rigmat_status cmd_modes(int argc, char **argv, struct cli_env *env)
{
    struct cli_common c;
    const char *rate = NULL;
    int validity = 0;
    const struct cli_opt opts[] = {
        { 0, "rate", CLI_OPT_STRING, &rate, "FREQ",
          "also the discrete eigenvalues z = exp(s T) at this sample rate" },
        { 0, "validity", CLI_OPT_FLAG, &validity, NULL,
          "also the validity range of the linear model (slower: nonlinear runs)" },
        CLI_COMMON_ROWS(&c),
        CLI_OPT_END_ROW
    };
    static const char *const formats[] = { "text", "json", NULL };
    rigmat_model *m = NULL;
    rigmat_lti *lti = NULL;
    rigmat_modes *md = NULL;
    rigmat_result *r = NULL;
    rigmat_system *sys = NULL;
    rigmat_validity_item *items = NULL;
    rigmat_error e;
    const char *file = NULL;
    double rate_hz = 0.0;
    int done = 0;
    rigmat_status st;
    int fmt;

    memset(&c, 0, sizeof c);
    memset(&e, 0, sizeof e);
    st = cli_model_command(argc, argv, opts, modes_usage, formats, env, &c, &file, &fmt, &done);
    if (st != RIGMAT_OK || done)
        return st;
    if (rate != NULL) {
        st = cli_quantity(env, "rate", rate, RIGMAT_Q_FREQUENCY, &rate_hz);
        if (st != RIGMAT_OK)
            return st;
        if (!(rate_hz > 0.0) || !gsl_finite(rate_hz)) {
            fprintf(env->err, "rigmat modes: --rate must be positive\n");
            cli_usage(env->err, modes_usage, opts);
            return RIGMAT_EUSAGE;
        }
        env->opt.rate_hz = rate_hz;
    }
    st = cli_load_model(env, file, &c, &m);
    if (st != RIGMAT_OK)
        return st;
    st = cli_linearize(env, m, &lti);
    if (st != RIGMAT_OK)
        goto done;
    st = rigmat_modes_compute(lti, rate_hz > 0.0 ? 1.0 / rate_hz : 0.0, NULL, &md, &e);
    if (st != RIGMAT_OK) {
        cli_report(env, &e);
        goto done;
    }
    r = modes_result(m, md);
    if (r == NULL) {
        fprintf(env->err, "rigmat modes: out of memory\n");
        st = RIGMAT_ENOMEM;
        goto done;
    }
    if (validity) {
        /* how far the linear model holds (src/study/validity.h), with the
         * documented defaults of `simulate --validity` */
        const rigmat_validity_opts vo = rigmat_validity_opts_default();
        const size_t cap = m->layout.nx + m->layout.nu + 1;
        size_t n = 0;

        items = calloc(cap, sizeof *items);
        if (items == NULL) {
            fprintf(env->err, "rigmat modes: out of memory\n");
            st = RIGMAT_ENOMEM;
            goto done;
        }
        st = rigmat_system_alloc(m, &sys, &e);
        if (st == RIGMAT_OK)
            st = rigmat_validity_all(sys, lti, &m->layout, &vo, items, cap, &n, &e);
        if (st != RIGMAT_OK) {
            cli_report(env, &e);
            goto done;
        }
        rigmat_result_text(r, "\n");
        cli_validity_describe(r, m, &vo, items, n);
    }
    st = cli_emit(env, r, &c, file);
done:
    free(items);
    rigmat_system_free(sys);
    rigmat_result_free(r);
    rigmat_modes_free(md);
    rigmat_lti_free(lti);
    rigmat_model_free(m);
    return st;
}
