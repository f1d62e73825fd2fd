/* weights.c - Bryson's-rule weights from a weights file (weights.h). */
#include "weights.h"
#include "gains.h"
#include "load.h"
#include "reentrant.h"
#include "units.h"

#include <math.h>
#include <gsl/gsl_math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

void rigmat_weights_free(rigmat_weights *w)
{
    if (w == NULL)
        return;
    if (w->Q)
        gsl_matrix_free(w->Q);
    if (w->R)
        gsl_matrix_free(w->R);
    free(w->x_max);
    free(w->u_max);
    free(w->u_from_limit);
    free(w);
}

/* The largest deviation a control input may take from its operating-point
 * value before it meets its `limit` (README.md, "Limits"): the
 * nearer of the two bounds, min(high - u0, u0 - low), since the LQR input
 * is a deviation from u0.  0 when the input has no limit or no room. */
static int input_limit(const rigmat_lti *l, size_t i, double *limit)
{
    const rigmat_signal *in = l->inputs != NULL ? &l->inputs[i] : NULL;
    double u0, room;

    *limit = 0.0;
    if (in == NULL || !in->has_limit)
        return 0;
    u0 = l->u0 != NULL ? gsl_vector_get(l->u0, i) : 0.0;
    room = GSL_MIN_DBL(in->limit[1] - u0, u0 - in->limit[0]);
    if (!(room > 0.0))
        return 0;
    *limit = room;
    return 1;
}

/* The dimension of a signal's unit string ("rad/s", "N*m", "1"); 0 when
 * it cannot be read. */
static int unit_dim(const char *unit, rigmat_dim *dim)
{
    rigmat_quantity q;
    rigmat_error e;
    char buf[48];

    memset(dim, 0, sizeof *dim);
    if (unit[0] == '\0' || strcmp(unit, "1") == 0)
        return 1;
    snprintf(buf, sizeof buf, "1 %s", unit);
    memset(&e, 0, sizeof e);
    if (rigmat_units_parse(buf, &q, &e) != RIGMAT_OK)
        return 0;
    *dim = q.dim;
    return 1;
}

static size_t find(const rigmat_lti *l, rigmat_gains_group g, size_t n, const char *s)
{
    size_t i;

    for (i = 0; i < n; i++)
        if (strcmp(rigmat_gains_name(l, g, i), s) == 0)
            return i;
    return RIGMAT_NONE;
}

/* The nearest of the first n names of group g to s, or NULL when none is
 * a likely typo (distance at most 2, or a third of the name, as the model
 * loader's hints). */
static const char *nearest(const rigmat_lti *l, rigmat_gains_group g, size_t n, const char *s)
{
    const char *best = NULL;
    size_t bestd = (size_t)-1, i;

    for (i = 0; i < n; i++) {
        const char *w = rigmat_gains_name(l, g, i);
        const size_t dist = rigmat_load_distance(s, w, 8);
        const size_t len = strlen(w);
        const size_t limit = len / 3 > 2 ? len / 3 : 2;
        if (dist <= limit && dist < bestd) {
            bestd = dist;
            best = w;
        }
    }
    return best;
}

/* "use one of: a, b, c" for the first n names of g. */
static void list_names(char *buf, size_t len, const rigmat_lti *l, rigmat_gains_group g, size_t n)
{
    size_t used = (size_t)snprintf(buf, len, "use one of: "), i;

    for (i = 0; i < n && used + 8 < len; i++) {
        const int k =
                snprintf(buf + used, len - used, "%s%s", i ? ", " : "", rigmat_gains_name(l, g, i));
        if (k < 0)
            break;
        used += (size_t)k;
    }
    if (n == 0)
        snprintf(buf, len, "the model has none");
}

struct wctx {
    rigmat_diags *d;
    const rigmat_lti *l;
    rigmat_loc within;
    const char *within_what;
    int nomem;
};

static void werr(struct wctx *c, rigmat_loc at, const char *hint, const char *fmt, ...)
        RIGMAT_PRINTF(4, 5);
static void werr(struct wctx *c, rigmat_loc at, const char *hint, const char *fmt, ...)
{
    char msg[256];
    va_list ap;

    va_start(ap, fmt);
    vsnprintf(msg, sizeof msg, fmt, ap);
    va_end(ap);
    if (rigmat_diags_add(c->d, RIGMAT_ERROR, at, c->within, c->within_what, hint, "%s", msg) ==
        RIGMAT_ENOMEM)
        c->nomem = 1;
}

/* One value: a positive quantity in the signal's unit (a bare number is
 * SI).  1 when read into *out. */
static int value(struct wctx *c, const rigmat_node *n, const char *name, const char *unit,
                 double *out)
{
    rigmat_quantity q;
    rigmat_error e;
    rigmat_dim want;
    char got[48], exp[48], hint[160];
    char *end;

    if (n->type != RIGMAT_NODE_SCALAR) {
        werr(c, n->loc, "write the largest acceptable value, e.g. 3 deg",
             "expected a value for '%s', got %s", name, rigmat_node_type_words(n->type));
        return 0;
    }
    memset(&e, 0, sizeof e);
    if (rigmat_units_parse(n->text, &q, &e) != RIGMAT_OK) {
        werr(c, n->loc, e.hint[0] ? e.hint : NULL, "%s", e.message);
        return 0;
    }
    if (unit_dim(unit, &want) && !rigmat_dim_equal(q.dim, want)) {
        const rigmat_dim none = { { 0 } };
        (void)rigmat_strtod_c(n->text, &end);
        while (*end == ' ' || *end == '\t')
            end++;
        if (!(rigmat_dim_equal(q.dim, none) && *end == '\0')) {
            rigmat_units_format_dim(q.dim, got, sizeof got);
            rigmat_units_format_dim(want, exp, sizeof exp);
            snprintf(hint, sizeof hint, "'%s' is in %s; a bare number is SI", name, unit);
            werr(c, n->loc, hint, "expected %s for '%s', got %s", exp, name,
                 got[0] ? got : "a plain number");
            return 0;
        }
    }
    if (!(q.value > 0.0) || !isfinite(q.value)) {
        werr(c, n->loc, "Bryson's rule: the weight is 1 / value^2, so the value must be positive",
             "the largest acceptable value of '%s' must be positive, got '%s'", name, n->text);
        return 0;
    }
    *out = q.value;
    return 1;
}

/* One section (states or inputs) into vals (NaN = not given). */
static void section(struct wctx *c, const rigmat_entry *sec, rigmat_gains_group g, double *vals)
{
    const rigmat_lti *l = c->l;
    const int states = g == RIGMAT_GAINS_STATE;
    const size_t n = states ? l->nx : l->nu_control;
    const rigmat_node *m = sec->value;
    char hint[200];
    size_t i;

    c->within = sec->key_loc;
    c->within_what = states ? "weights 'states'" : "weights 'inputs'";
    if (m->type != RIGMAT_NODE_MAP) {
        werr(c, m->loc, states ? "write states: {tilt.angle: 3 deg}" : "write inputs: {drive: 0.6}",
             "expected a mapping of names to values, got %s", rigmat_node_type_words(m->type));
        return;
    }
    for (i = 0; i < m->n; i++) {
        const rigmat_entry *e = &m->entries[i];
        const size_t k = find(l, g, n, e->key);
        if (k == RIGMAT_NONE) {
            const char *near = nearest(l, g, n, e->key);
            if (!states && find(l, RIGMAT_GAINS_INPUT, l->nu, e->key) != RIGMAT_NONE) {
                werr(c, e->key_loc, "disturbance inputs are not in the LQR: remove it",
                     "'%s' is a disturbance input; only control inputs are weighted", e->key);
                continue;
            }
            if (near != NULL)
                snprintf(hint, sizeof hint, "did you mean '%s'?", near);
            else if (find(l, states ? RIGMAT_GAINS_INPUT : RIGMAT_GAINS_STATE,
                          states ? l->nu_control : l->nx, e->key) != RIGMAT_NONE)
                snprintf(hint, sizeof hint, "'%s' is %s: put it under `%s:`", e->key,
                         states ? "a control input" : "a state", states ? "inputs" : "states");
            else
                list_names(hint, sizeof hint, l, g, n);
            werr(c, e->key_loc, hint, "no %s '%s' in the model", states ? "state" : "control input",
                 e->key);
            continue;
        }
        value(c, e->value, e->key, rigmat_gains_unit(l, g, k), &vals[k]);
    }
}

rigmat_status rigmat_weights_load(const char *path, const rigmat_lti *l, const rigmat_options *opt,
                                  rigmat_weights **out, rigmat_diags *d)
{
    const size_t before = d->errors;
    rigmat_node *root = NULL;
    rigmat_weights *w = NULL;
    struct wctx c;
    rigmat_loc start, inputs_at;
    rigmat_status st;
    double *xv = NULL, *uv = NULL;
    size_t i;

    *out = NULL;
    memset(&c, 0, sizeof c);
    c.d = d;
    c.l = l;
    st = rigmat_load_yaml_file(path, opt, d, d, &root);
    if (st != RIGMAT_OK) {
        rigmat_node_free(root);
        return st;
    }
    start.file = rigmat_diags_file(d, path);
    start.line = 1;
    start.col = 1;
    if (start.file == NULL) {
        rigmat_node_free(root);
        return RIGMAT_ENOMEM;
    }
    inputs_at = start;
    xv = malloc((l->nx ? l->nx : 1) * sizeof *xv);
    uv = malloc((l->nu_control ? l->nu_control : 1) * sizeof *uv);
    if (xv == NULL || uv == NULL) {
        st = RIGMAT_ENOMEM;
        goto done;
    }
    for (i = 0; i < l->nx; i++)
        xv[i] = (double)NAN;
    for (i = 0; i < l->nu_control; i++)
        uv[i] = (double)NAN;
    if (root == NULL || root->type != RIGMAT_NODE_MAP) {
        werr(&c, root != NULL ? root->loc : start, "write states: {...} and inputs: {...}",
             "expected a mapping with `states` and `inputs`, got %s",
             root != NULL ? rigmat_node_type_words(root->type) : "an empty file");
    } else {
        for (i = 0; i < root->n; i++) {
            const rigmat_entry *e = &root->entries[i];
            if (strcmp(e->key, "states") == 0) {
                section(&c, e, RIGMAT_GAINS_STATE, xv);
            } else if (strcmp(e->key, "inputs") == 0) {
                inputs_at = e->key_loc;
                section(&c, e, RIGMAT_GAINS_INPUT, uv);
            } else {
                const char *const keys[] = { "states", "inputs" };
                const size_t ds = rigmat_load_distance(e->key, keys[0], 8);
                const size_t di = rigmat_load_distance(e->key, keys[1], 8);
                char hint[64];
                memset(&c.within, 0, sizeof c.within);
                c.within_what = NULL;
                if (ds <= 2 || di <= 2)
                    snprintf(hint, sizeof hint, "did you mean '%s'?", ds <= di ? keys[0] : keys[1]);
                else
                    snprintf(hint, sizeof hint, "use states or inputs");
                werr(&c, e->key_loc, hint, "unknown key '%s' in a weights file", e->key);
            }
        }
    }
    memset(&c.within, 0, sizeof c.within);
    c.within_what = NULL;
    w = calloc(1, sizeof *w);
    if (w == NULL) {
        st = RIGMAT_ENOMEM;
        goto done;
    }
    w->nx = l->nx;
    w->nu = l->nu_control;
    w->Q = l->nx ? gsl_matrix_calloc(l->nx, l->nx) : NULL;
    w->R = l->nu_control ? gsl_matrix_calloc(l->nu_control, l->nu_control) : NULL;
    w->x_max = calloc(l->nx ? l->nx : 1, sizeof *w->x_max);
    w->u_max = calloc(l->nu_control ? l->nu_control : 1, sizeof *w->u_max);
    w->u_from_limit = calloc(l->nu_control ? l->nu_control : 1, sizeof *w->u_from_limit);
    if ((l->nx && !w->Q) || (l->nu_control && !w->R) || !w->x_max || !w->u_max ||
        !w->u_from_limit) {
        st = RIGMAT_ENOMEM;
        goto done;
    }
    for (i = 0; i < l->nx; i++)
        if (!isnan(xv[i])) {
            w->x_max[i] = xv[i];
            gsl_matrix_set(w->Q, i, i, 1.0 / (xv[i] * xv[i]));
        }
    for (i = 0; i < l->nu_control; i++) {
        double lim;
        if (isnan(uv[i]) && input_limit(l, i, &lim)) {
            uv[i] = lim;
            w->u_from_limit[i] = 1;
        }
        if (isnan(uv[i])) {
            werr(&c, inputs_at,
                 "add it under `inputs:` with its largest acceptable value (Bryson's rule)",
                 "control input '%s' has no weight, and the model gives it no limit",
                 rigmat_gains_name(l, RIGMAT_GAINS_INPUT, i));
            continue;
        }
        w->u_max[i] = uv[i];
        gsl_matrix_set(w->R, i, i, 1.0 / (uv[i] * uv[i]));
    }
    st = c.nomem ? RIGMAT_ENOMEM : (d->errors > before ? RIGMAT_EMODEL : RIGMAT_OK);
done:
    free(xv);
    free(uv);
    rigmat_node_free(root);
    if (st != RIGMAT_OK)
        rigmat_weights_free(w);
    else
        *out = w;
    return st;
}
