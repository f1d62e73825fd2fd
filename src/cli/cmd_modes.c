/* cmd_modes.c - `rigmat modes FILE [--rate R]`: the modes of the model
 * linearized at its operating point (src/study/modes.h): eigenvalues,
 * frequency, damping, time constant, stability, the states each mode lives
 * in, controllability and observability per mode, the invariant zeros of
 * every channel and the DC gain.  Text leads with a one-line summary; JSON
 * follows DESIGN.md section 5.  Also the summary line `check` and
 * `linearize` print at the end of their text (cli_modes_summary). */
#include "cli.h"
#include "modes.h"
#include "units.h"

#include <math.h>
#include <string.h>
#include <gsl/gsl_math.h>

static const char *const modes_usage[] = {
    "rigmat modes FILE [--rate FREQ] [--set PATH=VALUE]... [--format text|json] [-o FILE]"
    " [--catalog DIR]",
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

static void text_summary(FILE *f, const rigmat_modes *md)
{
    char line[1024];

    rigmat_modes_summary(md, line, sizeof line);
    fprintf(f, "%s\n", line);
}

static void text_modes(FILE *f, const rigmat_modes *md, const rigmat_layout *L)
{
    char s[64], z[64], tau[32], damp[32], cm[32], om[32];
    size_t k, i, unbalanced = 0;
    const double snap = md->set.stab_rtol * md->omega_b;

    fprintf(f, "\nmodes (%zu): eigenvalues s of A", md->nx);
    if (md->period_s > 0.0)
        fprintf(f, ", and z = exp(s T) at T = %.6g s (%.6g Hz)", md->period_s, 1.0 / md->period_s);
    fprintf(f, "\n  %3s  %-28s", "#", "s [1/s]");
    if (md->period_s > 0.0)
        fprintf(f, " %-28s", "z");
    fprintf(f, " %11s %9s %11s  %-9s %-12s %-12s\n", "freq [Hz]", "damping", "tau [s]", "stability",
            "ctrb", "obsv");
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
        fprintf(f, "  %3zu  %-28s", k + 1, s);
        if (md->period_s > 0.0) {
            text_complex(z, sizeof z, m->z_re, m->z_im, 0.0);
            fprintf(f, " %-28s", z);
        }
        snprintf(cm, sizeof cm, "%s %.0e", m->controllable ? "yes" : "NO", m->ctrb_measure);
        snprintf(om, sizeof om, "%s %.0e", m->observable ? "yes" : "NO", m->obsv_measure);
        fprintf(f, " %11.4g %9s %11s  %-9s %-12s %-12s\n", m->frequency_hz, damp, tau,
                rigmat_stability_name(m->stability), cm, om);
    }
    fprintf(f,
            "\nwhere each mode lives (shares of its eigenvector in scaled units, >= %g %%),"
            "\nwhich inputs reach it and which outputs see it:\n",
            md->set.share_min * 100.0);
    for (k = 0; k < md->nx; k++) {
        const rigmat_mode *m = &md->modes[k];
        size_t c = 0;

        fprintf(f, "  %3zu  ", k + 1);
        for (i = 0; i < md->nx; i++) {
            const size_t si = m->by_share[i];
            if (m->share[si] < md->set.share_min && i > 0)
                break;
            fprintf(f, "%s%s %.0f%%", i ? ", " : "", md->state_names[si], 100.0 * m->share[si]);
        }
        fprintf(f, "\n       reached by: ");
        for (i = 0; i < md->nu; i++)
            if (m->reached_by[i])
                fprintf(f, "%s%s%s", c++ ? ", " : "", md->input_names[i],
                        i >= md->nu_control ? " (disturbance)" : "");
        if (c == 0)
            fputs("none", f);
        fputs("; seen by: ", f);
        c = 0;
        for (i = 0; i < md->ny; i++)
            if (m->seen_by[i])
                fprintf(f, "%s%s", c++ ? ", " : "", md->output_names[i]);
        if (c == 0)
            fputs("none", f);
        fputc('\n', f);
    }
    fprintf(f, "\nscaled units: each state divided by its scale, from balancing A (Osborne):\n");
    for (i = 0; i < md->nx; i++) {
        fprintf(f, "  %-28s %-12.4g %-8s%s\n", md->state_names[i], md->scale[i],
                L != NULL && i < L->nx ? L->states[i].unit : "", md->balanced[i] ? "" : " *");
        if (!md->balanced[i])
            unbalanced++;
    }
    if (unbalanced > 0)
        fputs("  * nothing depends on it, or it on nothing: its size is its rate of change\n"
              "    (or its influence) over each mode's own rate |s|\n",
              f);
    fprintf(f,
            "ctrb, obsv: PBH test; the number is the smallest singular value of [A - sI, B]\n"
            "(control inputs) or of [A - sI; C], scaled, over its norm: yes above %g.\n"
            "marginal: |Re s| <= %g x %.4g 1/s (the norm of scaled A)\n",
            md->set.rtol, md->set.stab_rtol, md->omega_b);
}

static void text_zeros(FILE *f, const rigmat_modes *md)
{
    char v[64];
    size_t i, j, k, nrhp = 0;
    const double snap = md->set.stab_rtol * md->omega_b;

    fputs("\ninvariant zeros of each channel (input -> output):\n", f);
    if (md->nu == 0 || md->ny == 0) {
        fputs("  (none: the model has no inputs or no outputs)\n", f);
        return;
    }
    for (j = 0; j < md->nu; j++)
        for (i = 0; i < md->ny; i++) {
            const rigmat_channel_zeros *z = &md->zeros[i * md->nu + j];

            fprintf(f, "  %s -> %s: ", md->input_names[j], md->output_names[i]);
            if (z->no_path)
                fputs("no path (the input does not reach the output)", f);
            else if (z->count == 0)
                fputs("none", f);
            for (k = 0; k < z->count; k++) {
                text_complex(v, sizeof v, z->re[k], z->im[k], snap);
                fprintf(f, "%s%s", k ? ", " : "", v);
            }
            if (z->rhp > 0) {
                fprintf(f, "  [%zu in the right half plane]", z->rhp);
                nrhp++;
            }
            fputc('\n', f);
        }
    fprintf(f, "  (parts below %.3g 1/s, the marginal band, print as 0)\n", snap);
    if (nrhp > 0)
        fputs("  A zero in the right half plane (Re z > 0) makes the first response of that\n"
              "  output to a step of that input go the wrong way before it turns.\n",
              f);
}

static void text_dc_gain(FILE *f, const rigmat_modes *md, const rigmat_layout *L)
{
    size_t i, j;

    fputs("\nDC gain (steady output per unit of input, -C A^-1 B + D; 'unbounded' where a\n"
          "pole at 0 makes the output grow without end):\n",
          f);
    if (md->dc_gain == NULL) {
        fputs("  (empty)\n", f);
        return;
    }
    fprintf(f, "  %-24s", "");
    for (j = 0; j < md->nu; j++)
        fprintf(f, " %14.14s", md->input_names[j]);
    fputc('\n', f);
    for (i = 0; i < md->ny; i++) {
        char lab[64];

        snprintf(lab, sizeof lab, "%s [%s]", md->output_names[i],
                 L != NULL && i < L->ny ? L->outputs[i].unit : "");
        fprintf(f, "  %-24s", lab);
        for (j = 0; j < md->nu; j++) {
            const double g = gsl_matrix_get(md->dc_gain, i, j);
            if (!gsl_finite(g))
                fprintf(f, " %14s", "unbounded");
            else if (g == 0.0)
                fprintf(f, " %14s", "0");
            else
                fprintf(f, " %14.6g", g);
        }
        fputc('\n', f);
    }
}

/* ------------------------------------------------------------ JSON */

static void json_complex(struct cli_json *j, double re, double im)
{
    cli_json_arr_open(j);
    cli_json_num(j, re);
    cli_json_num(j, im);
    cli_json_arr_close(j);
}

static void json_num_or_null(struct cli_json *j, double v)
{
    if (gsl_finite(v))
        cli_json_num(j, v);
    else
        cli_json_null(j);
}

static void json_names(struct cli_json *j, char *const *names, const unsigned char *flags, size_t n)
{
    size_t i;

    cli_json_arr_open(j);
    for (i = 0; i < n; i++)
        if (flags[i])
            cli_json_str(j, names[i]);
    cli_json_arr_close(j);
}

static rigmat_status modes_json(FILE *f, const rigmat_model *m, const rigmat_modes *md)
{
    struct cli_json j;
    char line[1024];
    size_t k, i, jj;

    cli_json_begin(&j, f);
    cli_json_head(&j, m, "modes");
    rigmat_modes_summary(md, line, sizeof line);
    cli_json_key(&j, "summary");
    cli_json_str(&j, line);
    if (md->period_s > 0.0) {
        cli_json_key(&j, "period");
        cli_json_num(&j, md->period_s);
    }
    cli_json_key(&j, "modes");
    cli_json_arr_open(&j);
    for (k = 0; k < md->nx; k++) {
        const rigmat_mode *mo = &md->modes[k];

        cli_json_obj_open(&j);
        cli_json_key(&j, "s");
        json_complex(&j, mo->s_re, mo->s_im);
        if (md->period_s > 0.0) {
            cli_json_key(&j, "z");
            json_complex(&j, mo->z_re, mo->z_im);
        }
        cli_json_key(&j, "frequency");
        cli_json_num(&j, mo->frequency_hz);
        cli_json_key(&j, "damping");
        json_num_or_null(&j, mo->damping);
        cli_json_key(&j, "time_constant");
        json_num_or_null(&j, mo->time_constant_s);
        cli_json_key(&j, "stability");
        cli_json_str(&j, rigmat_stability_name(mo->stability));
        cli_json_key(&j, "controllable");
        cli_json_bool(&j, mo->controllable);
        cli_json_key(&j, "observable");
        cli_json_bool(&j, mo->observable);
        cli_json_key(&j, "reached_by");
        json_names(&j, md->input_names, mo->reached_by, md->nu);
        cli_json_key(&j, "seen_by");
        json_names(&j, md->output_names, mo->seen_by, md->ny);
        cli_json_key(&j, "states");
        cli_json_arr_open(&j);
        for (i = 0; i < md->nx; i++) {
            const size_t si = mo->by_share[i];
            if (mo->share[si] < md->set.share_min && i > 0)
                break;
            cli_json_obj_open(&j);
            cli_json_key(&j, "name");
            cli_json_str(&j, md->state_names[si]);
            cli_json_key(&j, "share");
            cli_json_num(&j, mo->share[si]);
            cli_json_obj_close(&j);
        }
        cli_json_arr_close(&j);
        cli_json_obj_close(&j);
    }
    cli_json_arr_close(&j);

    cli_json_key(&j, "zeros");
    cli_json_arr_open(&j);
    for (jj = 0; jj < md->nu; jj++)
        for (i = 0; i < md->ny; i++) {
            const rigmat_channel_zeros *z = &md->zeros[i * md->nu + jj];

            cli_json_obj_open(&j);
            cli_json_key(&j, "input");
            cli_json_str(&j, md->input_names[jj]);
            cli_json_key(&j, "output");
            cli_json_str(&j, md->output_names[i]);
            cli_json_key(&j, "values");
            cli_json_arr_open(&j);
            for (k = 0; k < z->count; k++)
                json_complex(&j, z->re[k], z->im[k]);
            cli_json_arr_close(&j);
            cli_json_key(&j, "right_half_plane");
            cli_json_arr_open(&j);
            for (k = 0; k < z->count; k++)
                if (z->re[k] > md->set.stab_rtol * md->omega_b)
                    json_complex(&j, z->re[k], z->im[k]);
            cli_json_arr_close(&j);
            cli_json_key(&j, "no_path");
            cli_json_bool(&j, z->no_path);
            cli_json_obj_close(&j);
        }
    cli_json_arr_close(&j);

    cli_json_key(&j, "dc_gain");
    cli_json_arr_open(&j);
    for (i = 0; i < md->ny; i++) {
        cli_json_arr_open(&j);
        for (jj = 0; jj < md->nu; jj++)
            json_num_or_null(&j, gsl_matrix_get(md->dc_gain, i, jj));
        cli_json_arr_close(&j);
    }
    cli_json_arr_close(&j);

    cli_json_key(&j, "scaling");
    cli_json_obj_open(&j);
    cli_json_key(&j, "method");
    cli_json_str(&j, "balanced");
    cli_json_key(&j, "rate");
    cli_json_num(&j, md->omega_b);
    cli_json_key(&j, "scales");
    cli_json_arr_open(&j);
    for (i = 0; i < md->nx; i++)
        cli_json_num(&j, md->scale[i]);
    cli_json_arr_close(&j);
    cli_json_key(&j, "balanced");
    cli_json_arr_open(&j);
    for (i = 0; i < md->nx; i++)
        cli_json_bool(&j, md->balanced[i]);
    cli_json_arr_close(&j);
    cli_json_obj_close(&j);
    cli_json_key(&j, "tolerances");
    cli_json_obj_open(&j);
    cli_json_key(&j, "pbh");
    cli_json_num(&j, md->set.rtol);
    cli_json_key(&j, "marginal");
    cli_json_num(&j, md->set.stab_rtol);
    cli_json_key(&j, "infinite_zero");
    cli_json_num(&j, md->set.inf_rtol);
    cli_json_obj_close(&j);
    return cli_json_end(&j);
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
    const struct cli_opt opts[] = {
        { 0, "rate", CLI_OPT_STRING, &rate, "FREQ",
          "also the discrete eigenvalues z = exp(s T) at this sample rate" },
        CLI_COMMON_ROWS(&c),
        CLI_OPT_END_ROW
    };
    static const char *const formats[] = { "text", "json", NULL };
    rigmat_model *m = NULL;
    rigmat_lti *lti = NULL;
    rigmat_modes *md = NULL;
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
    {
        /* one finite check for every format: the text is printed only when
         * the JSON of the same result would be (it refuses inf and nan) */
        FILE *sink = fmt == 1 ? env->out : cli_scratch_open();
        st = sink == NULL ? RIGMAT_EIO : modes_json(sink, m, md);
        if (fmt != 1)
            cli_scratch_close(sink);
        if (sink == NULL)
            fprintf(env->err, "rigmat modes: error: cannot open /dev/null\n");
        else if (st != RIGMAT_OK)
            fprintf(env->err, "rigmat modes: error: the result is not finite\n");
    }
    if (st == RIGMAT_OK && fmt != 1) {
        text_summary(env->out, md);
        text_modes(env->out, md, &m->layout);
        text_zeros(env->out, md);
        text_dc_gain(env->out, md, &m->layout);
    }
done:
    rigmat_modes_free(md);
    rigmat_lti_free(lti);
    rigmat_model_free(m);
    return st;
}
