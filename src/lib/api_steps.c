/* api_steps.c - the public API of include/rigmat.h, part two: trim,
 * linearize, discretize, analyze, simulate and export (stage lib).  Each
 * function calls the stage that does the work, in the order the command
 * line does (src/cli/cmd_*.c), and renders exports through the one
 * description of each result (src/lib/describe.c) and the one result
 * writer (src/emit/result.h). */
#include "api.h"
#include "describe.h"
#include "result.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>

/* ------------------------------------------------------------ trim */

rigmat_status rigmat_model_trim(const rigmat_model *m, rigmat_steady **out, rigmat_diags *diags)
{
    const rigmat_options opt = rigmat_api_options();
    const rigmat_loc none = { NULL, 0, 0 };
    rigmat_steady *t;
    rigmat_error e;
    rigmat_status st;
    size_t i;

    if (out == NULL)
        return rigmat_api_usage(diags, "rigmat_model_trim: out is NULL");
    *out = NULL;
    if (m == NULL)
        return rigmat_api_usage(diags, "rigmat_model_trim: the model is NULL");
    t = calloc(1, sizeof *t);
    if (t == NULL)
        return RIGMAT_ENOMEM;
    memset(&e, 0, sizeof e);
    st = rigmat_trim_model(m, &opt, &t->r, &e);
    if (st != RIGMAT_OK) {
        st = rigmat_api_fail(diags, &e);
        /* what the solver found out, as notes under the error */
        for (i = 0; diags != NULL && i < t->r.nfree && st != RIGMAT_ENOMEM; i++)
            if (rigmat_diags_add(diags, RIGMAT_NOTE, none, none, NULL, NULL,
                        "the equations do not fix the unknown '%s'", t->r.free_unknowns[i]) !=
                    RIGMAT_OK)
                st = RIGMAT_ENOMEM;
        for (i = 0; diags != NULL && i < t->r.nunmet && st != RIGMAT_ENOMEM; i++)
            if (rigmat_diags_add(diags, RIGMAT_NOTE, none, none, NULL, NULL,
                        "no choice of the unknowns meets the equation of '%s'",
                        t->r.unmet_equations[i]) != RIGMAT_OK)
                st = RIGMAT_ENOMEM;
        rigmat_steady_free(t);
        return st;
    }
    *out = t;
    return RIGMAT_OK;
}

void rigmat_steady_free(rigmat_steady *t)
{
    if (t == NULL)
        return;
    rigmat_trim_result_release(&t->r);
    free(t);
}

double rigmat_steady_residual(const rigmat_steady *t)
{
    return t != NULL ? t->r.residual : (double)NAN;
}

size_t rigmat_steady_iterations(const rigmat_steady *t)
{
    return t != NULL ? t->r.iterations : 0;
}

rigmat_status rigmat_steady_point(const rigmat_steady *t, rigmat_group g, rigmat_matrix_view *out)
{
    if (t == NULL || out == NULL || (g != RIGMAT_STATES && g != RIGMAT_INPUTS))
        return RIGMAT_EUSAGE;
    out->rows = g == RIGMAT_STATES ? t->r.nx : t->r.nu;
    out->data = out->rows > 0 ? (g == RIGMAT_STATES ? t->r.x : t->r.u) : NULL;
    out->cols = out->rows > 0 ? 1 : 0;
    return RIGMAT_OK;
}

/* ------------------------------------------------------------ linearize */

rigmat_status rigmat_model_linearize(const rigmat_model *m, rigmat_linear **out,
        rigmat_diags *diags)
{
    rigmat_linear *l;
    rigmat_error e;
    rigmat_status st;

    if (out == NULL)
        return rigmat_api_usage(diags, "rigmat_model_linearize: out is NULL");
    *out = NULL;
    if (m == NULL)
        return rigmat_api_usage(diags, "rigmat_model_linearize: the model is NULL");
    l = calloc(1, sizeof *l);
    if (l == NULL)
        return RIGMAT_ENOMEM;
    l->m = m;
    l->opt = rigmat_api_options();
    memset(&e, 0, sizeof e);
    st = rigmat_linearize(m, &l->opt, &l->lti, diags, &e);
    if (st != RIGMAT_OK) {
        free(l);
        return rigmat_api_fail(diags, &e);
    }
    *out = l;
    return RIGMAT_OK;
}

void rigmat_linear_free(rigmat_linear *l)
{
    if (l == NULL)
        return;
    rigmat_lti_free(l->lti);
    free(l);
}

const rigmat_model *rigmat_linear_model(const rigmat_linear *l)
{
    return l != NULL ? l->m : NULL;
}

int rigmat_linear_is_steady(const rigmat_linear *l)
{
    return l != NULL && l->lti->is_steady;
}

rigmat_status rigmat_linear_matrix(const rigmat_linear *l, const char *name,
        rigmat_matrix_view *out)
{
    const rigmat_lti *s;

    if (l == NULL || name == NULL || out == NULL)
        return RIGMAT_EUSAGE;
    s = l->lti;
    if (strcmp(name, "A") == 0)
        return rigmat_api_view(s->A, s->nx, s->nx, out);
    if (strcmp(name, "B") == 0)
        return rigmat_api_view(s->B, s->nx, s->nu, out);
    if (strcmp(name, "C") == 0)
        return rigmat_api_view(s->C, s->ny, s->nx, out);
    if (strcmp(name, "D") == 0)
        return rigmat_api_view(s->D, s->ny, s->nu, out);
    if (strcmp(name, "x0") == 0)
        return rigmat_api_view_vector(s->x0, s->nx, out);
    if (strcmp(name, "u0") == 0)
        return rigmat_api_view_vector(s->u0, s->nu, out);
    if (strcmp(name, "y0") == 0)
        return rigmat_api_view_vector(s->y0, s->ny, out);
    if (strcmp(name, "f0") == 0)
        return rigmat_api_view_vector(s->f0, s->nx, out);
    return RIGMAT_EUSAGE;
}

/* ------------------------------------------------------------ discretize */

rigmat_status rigmat_linear_discretize(const rigmat_linear *l, double rate_hz, const char *method,
        rigmat_sampled **out, rigmat_diags *diags)
{
    rigmat_sampled *s;
    rigmat_error e;
    rigmat_status st;

    if (out == NULL)
        return rigmat_api_usage(diags, "rigmat_linear_discretize: out is NULL");
    *out = NULL;
    if (l == NULL)
        return rigmat_api_usage(diags, "rigmat_linear_discretize: the linear model is NULL");
    if (!(rate_hz > 0) || !isfinite(rate_hz))
        return rigmat_api_usage(diags, "rigmat_linear_discretize: the rate must be a positive number "
                                "of Hz");
    if (l->lti->nx == 0)
        return rigmat_api_usage(diags, "the model has no states to sample");
    s = calloc(1, sizeof *s);
    if (s == NULL)
        return RIGMAT_ENOMEM;
    s->lin = l;
    s->o = rigmat_discretize_opts_default();
    s->o.period_s = 1.0 / rate_hz;
    s->o.max_states = l->opt.max_sampled_states;
    if (method != NULL && rigmat_method_parse(method, &s->o.method) != 0) {
        free(s);
        return rigmat_api_usage(diags, "rigmat_linear_discretize: unknown method; use zoh, foh, "
                                "tustin, euler or backward-euler");
    }
    memset(&e, 0, sizeof e);
    st = rigmat_sampled_parts_build(l->m, l->lti, &s->o, &s->p, &e);
    if (st != RIGMAT_OK) {
        rigmat_sampled_free(s);
        return rigmat_api_fail(diags, &e);
    }
    *out = s;
    return RIGMAT_OK;
}

void rigmat_sampled_free(rigmat_sampled *s)
{
    if (s == NULL)
        return;
    rigmat_sampled_parts_release(&s->p);
    free(s);
}

double rigmat_sampled_period(const rigmat_sampled *s)
{
    return s != NULL ? s->p.d->period_s : (double)NAN;
}

rigmat_status rigmat_sampled_matrix(const rigmat_sampled *s, const char *name,
        rigmat_matrix_view *out)
{
    const rigmat_dlti *d;
    int transformed;

    if (s == NULL || name == NULL || out == NULL)
        return RIGMAT_EUSAGE;
    d = s->p.d;
    transformed = d->method == RIGMAT_METHOD_FOH || d->method == RIGMAT_METHOD_TUSTIN;
    if (strcmp(name, "Ad") == 0)
        return rigmat_api_view(d->Ad, d->nx, d->nx, out);
    if (strcmp(name, "Bd") == 0)
        return rigmat_api_view(d->Bd, d->nx, d->nu, out);
    if (strcmp(name, "Cd") == 0)
        return rigmat_api_view(d->Cd, d->ny, d->nx, out);
    if (strcmp(name, "Dd") == 0)
        return rigmat_api_view(d->Dd, d->ny, d->nu, out);
    if (strcmp(name, "Gd") == 0)
        return rigmat_api_view(d->Gd, d->nx, d->nw, out);
    if (strcmp(name, "Ed") == 0)
        return rigmat_api_view(d->Ed, d->ny, d->nw, out);
    /* one rule with the export: no Qd for a transformed state */
    if (strcmp(name, "Qd") == 0)
        return rigmat_api_view(transformed ? NULL : s->p.nz->Qd, d->nx, d->nx, out);
    if (strcmp(name, "Rd") == 0)
        return rigmat_api_view(s->p.nz->Rd, d->ny, d->ny, out);
    if (strcmp(name, "fd") == 0)
        return rigmat_api_view_vector(s->p.fd, d->nx, out);
    return RIGMAT_EUSAGE;
}

size_t rigmat_sampled_states(const rigmat_sampled *s)
{
    return s != NULL ? s->p.d->nx : 0;
}

rigmat_status rigmat_sampled_state(const rigmat_sampled *s, size_t i, rigmat_signal_view *out)
{
    if (s == NULL || out == NULL || i >= s->p.d->nx)
        return RIGMAT_EUSAGE;
    rigmat_api_signal(&s->p.xs[i], 0, out);
    return RIGMAT_OK;
}

/* ------------------------------------------------------------ analyze */

rigmat_status rigmat_linear_analyze(const rigmat_linear *l, double period_s,
        rigmat_analysis **out, rigmat_diags *diags)
{
    rigmat_analysis *a;
    rigmat_error e;
    rigmat_status st;

    if (out == NULL)
        return rigmat_api_usage(diags, "rigmat_linear_analyze: out is NULL");
    *out = NULL;
    if (l == NULL)
        return rigmat_api_usage(diags, "rigmat_linear_analyze: the linear model is NULL");
    a = calloc(1, sizeof *a);
    if (a == NULL)
        return RIGMAT_ENOMEM;
    memset(&e, 0, sizeof e);
    st = rigmat_modes_compute(l->lti, period_s, NULL, &a->md, &e);
    if (st != RIGMAT_OK) {
        free(a);
        return rigmat_api_fail(diags, &e);
    }
    *out = a;
    return RIGMAT_OK;
}

void rigmat_analysis_free(rigmat_analysis *a)
{
    if (a == NULL)
        return;
    rigmat_modes_free(a->md);
    free(a);
}

size_t rigmat_analysis_count(const rigmat_analysis *a)
{
    return a != NULL ? a->md->nx : 0;
}

rigmat_status rigmat_analysis_mode(const rigmat_analysis *a, size_t i, rigmat_mode_view *out)
{
    const rigmat_mode *md;

    if (a == NULL || out == NULL || i >= a->md->nx)
        return RIGMAT_EUSAGE;
    md = &a->md->modes[i];
    out->re = md->s_re;
    out->im = md->s_im;
    out->z_re = md->z_re;
    out->z_im = md->z_im;
    out->frequency_hz = md->frequency_hz;
    out->damping = md->damping;
    out->time_constant_s = md->time_constant_s;
    out->stability = rigmat_stability_name(md->stability);
    out->controllable = md->controllable;
    out->observable = md->observable;
    out->main_state = a->md->state_names != NULL ? a->md->state_names[md->by_share[0]] : "";
    return RIGMAT_OK;
}

size_t rigmat_analysis_summary(const rigmat_analysis *a, char *buf, size_t size)
{
    if (a == NULL) {
        if (buf != NULL && size > 0)
            buf[0] = '\0';
        return 0;
    }
    return rigmat_modes_summary(a->md, buf, size);
}

/* ------------------------------------------------------------ simulate */

rigmat_status rigmat_linear_simulate(const rigmat_linear *l, const rigmat_run_spec *spec,
        rigmat_response **out, rigmat_diags *diags)
{
    rigmat_sim_opts o = rigmat_sim_opts_default();
    rigmat_sim_case c;
    rigmat_system *sys = NULL;
    rigmat_response *r;
    rigmat_error e;
    rigmat_status st = RIGMAT_OK;

    if (out == NULL)
        return rigmat_api_usage(diags, "rigmat_linear_simulate: out is NULL");
    *out = NULL;
    if (l == NULL || spec == NULL)
        return rigmat_api_usage(diags, "rigmat_linear_simulate: the linear model or spec is NULL");
    if (spec->model != NULL && rigmat_sim_model_parse(spec->model, &o.model) != 0)
        return rigmat_api_usage(diags, "rigmat_linear_simulate: unknown model; use nonlinear, linear "
                                "or sampled");
    o.duration_s = spec->duration_s;
    o.step_s = spec->step_s;
    o.rate_hz = spec->rate_hz;
    memset(&c, 0, sizeof c);
    c.offset = spec->offset;
    memset(&e, 0, sizeof e);
    r = calloc(1, sizeof *r);
    if (r == NULL)
        return RIGMAT_ENOMEM;
    rigmat_sim_result_init(&r->r);
    if (o.model == RIGMAT_SIM_NONLINEAR)
        st = rigmat_system_alloc(l->m, &sys, &e);
    if (st == RIGMAT_OK)
        st = rigmat_simulate(sys, l->lti, &o, &c, &r->r, &e);
    rigmat_system_free(sys);
    if (st != RIGMAT_OK) {
        rigmat_response_free(r);
        return rigmat_api_fail(diags, &e);
    }
    *out = r;
    return RIGMAT_OK;
}

void rigmat_response_free(rigmat_response *r)
{
    if (r == NULL)
        return;
    rigmat_sim_result_release(&r->r);
    free(r);
}

rigmat_status rigmat_response_matrix(const rigmat_response *r, const char *name,
        rigmat_matrix_view *out)
{
    size_t cols;
    const double *data;

    if (r == NULL || name == NULL || out == NULL)
        return RIGMAT_EUSAGE;
    if (strcmp(name, "t") == 0) {
        data = r->r.t_s;
        cols = 1;
    } else if (strcmp(name, "x") == 0) {
        data = r->r.x;
        cols = r->r.nx;
    } else if (strcmp(name, "u") == 0) {
        data = r->r.u;
        cols = r->r.nu;
    } else if (strcmp(name, "y") == 0) {
        data = r->r.y;
        cols = r->r.ny;
    } else {
        return RIGMAT_EUSAGE;
    }
    out->rows = cols > 0 ? r->r.nrows : 0;
    out->cols = out->rows > 0 ? cols : 0;
    out->data = out->rows > 0 ? data : NULL;
    return RIGMAT_OK;
}

/* ------------------------------------------------------------ export */

/* Render r (NULL: out of memory while describing) in format to out. */
static rigmat_status export_result(const rigmat_result *r, const char *format,
        const rigmat_export_opts *opts, FILE *out, rigmat_diags *diags)
{
    const rigmat_format_info *fi = format != NULL ? rigmat_format_find(format) : NULL;
    rigmat_emit_opts eo;
    rigmat_emit_sink sink;
    rigmat_error e;
    rigmat_status st;

    memset(&e, 0, sizeof e);
    memset(&eo, 0, sizeof eo);
    if (fi == NULL)
        return rigmat_api_usage(diags, "unknown export format; use text, json, csv, c, numpy, mtx or "
                                "latex");
    if (r == NULL) {
        RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
        return rigmat_api_fail(diags, &e);
    }
    if (!fi->folder && out == NULL)
        return rigmat_api_usage(diags, "export: the stream is NULL");
    sink.open = NULL;
    sink.ctx = NULL;
    if (opts != NULL) {
        eo.name = opts->name;
        eo.ctype_float = opts->ctype_float;
        eo.source = opts->source;
        sink.open = opts->open_file;
        sink.ctx = opts->ctx;
    }
    st = rigmat_result_write(r, fi->format, &eo, out, sink.open != NULL ? &sink : NULL, &e);
    if (st != RIGMAT_OK)
        return rigmat_api_fail(diags, &e);
    if (!fi->folder && ferror(out)) {
        RIGMAT_FAIL(&e, RIGMAT_EIO, "writing the %s export failed", fi->word);
        return rigmat_api_fail(diags, &e);
    }
    return RIGMAT_OK;
}

rigmat_status rigmat_linear_export(const rigmat_linear *l, const char *format,
        const rigmat_export_opts *opts, FILE *out, rigmat_diags *diags)
{
    rigmat_result *r;
    rigmat_status st;

    if (l == NULL)
        return rigmat_api_usage(diags, "rigmat_linear_export: the linear model is NULL");
    r = rigmat_describe_linear(l->m, l->lti, NULL);
    st = export_result(r, format, opts, out, diags);
    rigmat_result_free(r);
    return st;
}

rigmat_status rigmat_sampled_export(const rigmat_sampled *s, const char *format,
        const rigmat_export_opts *opts, FILE *out, rigmat_diags *diags)
{
    rigmat_result *r;
    rigmat_status st;

    if (s == NULL)
        return rigmat_api_usage(diags, "rigmat_sampled_export: the sampled model is NULL");
    r = rigmat_describe_sampled(s->lin->m, s->lin->lti, s->p.d, s->p.nz, s->p.xs, s->p.fd);
    st = export_result(r, format, opts, out, diags);
    rigmat_result_free(r);
    return st;
}
