/* validity.c - the range over which the linear model follows the
 * nonlinear one (validity.h): one comparison per size, a doubling sweep
 * and a bisection per sign. */
#include "validity.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_math.h>

rigmat_validity_opts rigmat_validity_opts_default(void)
{
    rigmat_validity_opts o;

    memset(&o, 0, sizeof o);
    o.criterion = 0.05;
    o.horizon_s = 1.0;
    o.points = 200;
    o.rtol = 1e-9;
    o.start = 1e-3;
    o.max_size = 1e3;
    o.bisections = 8;
    return o;
}

/* How far below start the sweep goes when start already fails: 2^-20. */
#define DOWN_HALVINGS 20

static double result_error(const rigmat_sim_result *nl, const rigmat_sim_result *li,
        const rigmat_lti *lin)
{
    const int use_y = lin->ny > 0;
    const size_t n = use_y ? lin->ny : lin->nx;
    const double *a = use_y ? nl->y : nl->x, *b = use_y ? li->y : li->x;
    const gsl_vector *ref = use_y ? lin->y0 : lin->x0;
    double e = 0.0;
    size_t i, k;

    for (i = 0; i < n; i++) {
        const double r0 = gsl_vector_get(ref, i);
        double d = 0.0, diff = 0.0;
        for (k = 0; k < nl->nrows; k++) {
            d = GSL_MAX_DBL(d, fabs(a[k * n + i] - r0));
            diff = GSL_MAX_DBL(diff, fabs(a[k * n + i] - b[k * n + i]));
        }
        if (d > 1e-9 * GSL_MAX_DBL(1.0, fabs(r0)))
            e = GSL_MAX_DBL(e, diff / d);
    }
    return e;
}

rigmat_status rigmat_validity_error(rigmat_system *sys, const rigmat_lti *lin,
        const rigmat_validity_opts *o, int is_input, size_t index, double size, double *e,
        int *failed, rigmat_error *err)
{
    rigmat_sim_opts so = rigmat_sim_opts_default();
    rigmat_sim_result nl, li;
    rigmat_sim_case c;
    rigmat_wave w;
    double *offset = NULL;
    rigmat_error e_nl;
    rigmat_status st;

    *failed = 0;
    *e = HUGE_VAL;
    if (o->points == 0 || !(o->horizon_s > 0))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "validity: the horizon and points must be "
                "positive");
    if (is_input ? index >= lin->nu : index >= lin->nx)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "validity: %s %zu does not exist",
                is_input ? "input" : "state", index);
    memset(&c, 0, sizeof c);
    memset(&w, 0, sizeof w);
    if (is_input) {
        w.kind = RIGMAT_WAVE_STEP;
        w.input = index;
        w.value = size;
        c.waves = &w;
        c.nwaves = 1;
    } else {
        offset = calloc(lin->nx, sizeof *offset);
        if (offset == NULL)
            return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        offset[index] = size;
        c.offset = offset;
    }
    so.duration_s = o->horizon_s;
    so.step_s = o->horizon_s / (double)o->points;
    so.rtol = o->rtol;
    rigmat_sim_result_init(&nl);
    rigmat_sim_result_init(&li);
    memset(&e_nl, 0, sizeof e_nl);
    so.model = RIGMAT_SIM_NONLINEAR;
    st = rigmat_simulate(sys, lin, &so, &c, &nl, &e_nl);
    if (st == RIGMAT_ENUMERIC) {
        *failed = 1;
        st = RIGMAT_OK;
    } else if (st != RIGMAT_OK) {
        if (err != NULL)
            *err = e_nl;
    } else {
        so.model = RIGMAT_SIM_LINEAR;
        st = rigmat_simulate(NULL, lin, &so, &c, &li, err);
        if (st == RIGMAT_ENUMERIC) { /* a linear response that overflows: not valid */
            st = RIGMAT_OK;
        } else if (st == RIGMAT_OK) {
            *e = result_error(&nl, &li, lin);
        }
    }
    rigmat_sim_result_release(&nl);
    rigmat_sim_result_release(&li);
    free(offset);
    return st;
}

struct sweep {
    rigmat_system *sys;
    const rigmat_lti *lin;
    const rigmat_validity_opts *o;
    int is_input;
    size_t index;
    rigmat_validity_item *item;
};

/* Try one signed size; *ok is 1 when it meets the criterion. */
static rigmat_status try_size(struct sweep *s, double size, int *ok, rigmat_error *err)
{
    double e;
    int failed;
    const rigmat_status st = rigmat_validity_error(s->sys, s->lin, s->o, s->is_input, s->index,
            size, &e, &failed, err);

    if (st != RIGMAT_OK)
        return st;
    if (failed)
        s->item->nonlinear_failed = 1;
    if (s->item->nsamples < RIGMAT_VALIDITY_MAX_SAMPLES) {
        s->item->sample_size[s->item->nsamples] = size;
        s->item->sample_error[s->item->nsamples] = failed ? HUGE_VAL : e;
        s->item->nsamples++;
    }
    *ok = !failed && e <= s->o->criterion;
    return RIGMAT_OK;
}

/* The largest valid size in direction sign; *bounded 0 when max_size holds. */
static rigmat_status sweep_sign(struct sweep *s, double sign, double max_size, double *best,
        int *bounded, rigmat_error *err)
{
    double lo = 0.0, hi = 0.0, a = s->o->start;
    int ok;
    unsigned k;
    rigmat_status st;

    *best = 0.0;
    *bounded = 1;
    st = try_size(s, sign * a, &ok, err);
    if (st != RIGMAT_OK)
        return st;
    if (ok) {
        lo = a;
        for (;;) {
            const double next = GSL_MIN_DBL(2.0 * lo, max_size);
            if (next <= lo) {
                *best = lo;
                *bounded = 0;
                return RIGMAT_OK;
            }
            st = try_size(s, sign * next, &ok, err);
            if (st != RIGMAT_OK)
                return st;
            if (!ok) {
                hi = next;
                break;
            }
            lo = next;
        }
    } else {
        hi = a;
        for (k = 0; k < DOWN_HALVINGS; k++) {
            a *= 0.5;
            st = try_size(s, sign * a, &ok, err);
            if (st != RIGMAT_OK)
                return st;
            if (ok) {
                lo = a;
                break;
            }
            hi = a;
        }
        if (lo == 0.0)
            return RIGMAT_OK;
    }
    for (k = 0; k < s->o->bisections; k++) {
        const double mid = 0.5 * (lo + hi);
        st = try_size(s, sign * mid, &ok, err);
        if (st != RIGMAT_OK)
            return st;
        if (ok)
            lo = mid;
        else
            hi = mid;
    }
    *best = lo;
    return RIGMAT_OK;
}

rigmat_status rigmat_validity_sweep(rigmat_system *sys, const rigmat_lti *lin,
        const rigmat_layout *L, const rigmat_validity_opts *o, int is_input, size_t index,
        rigmat_validity_item *item, rigmat_error *err)
{
    struct sweep s;
    double max_size = o->max_size;
    int bpos, bneg;
    rigmat_status st;

    if (!(o->start > 0) || !(o->max_size >= o->start) || !(o->criterion > 0))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "validity: start, max_size and criterion must "
                "be positive, start <= max_size");
    memset(item, 0, sizeof *item);
    item->is_input = is_input;
    item->index = index;
    /* an angle offset beyond half a turn is the same pose the other way */
    if (!is_input && L != NULL && index < L->nx && strcmp(L->states[index].unit, "rad") == 0)
        max_size = GSL_MIN_DBL(max_size, M_PI);
    s.sys = sys;
    s.lin = lin;
    s.o = o;
    s.is_input = is_input;
    s.index = index;
    s.item = item;
    st = sweep_sign(&s, 1.0, max_size, &item->size_pos, &bpos, err);
    if (st == RIGMAT_OK)
        st = sweep_sign(&s, -1.0, max_size, &item->size_neg, &bneg, err);
    if (st != RIGMAT_OK)
        return st;
    item->size = GSL_MIN_DBL(item->size_pos, item->size_neg);
    item->bounded = bpos || bneg;
    return RIGMAT_OK;
}

rigmat_status rigmat_validity_all(rigmat_system *sys, const rigmat_lti *lin,
        const rigmat_layout *L, const rigmat_validity_opts *o, rigmat_validity_item *items,
        size_t cap, size_t *count, rigmat_error *err)
{
    size_t i, n = 0;
    rigmat_status st;

    if (L == NULL || L->nx != lin->nx || L->nu != lin->nu)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "validity: the layout does not match the model");
    for (i = 0; i < L->nx; i++) {
        if (L->states[i].kind != RIGMAT_SIG_COORD)
            continue;
        if (n < cap) {
            st = rigmat_validity_sweep(sys, lin, L, o, 0, i, &items[n], err);
            if (st != RIGMAT_OK)
                return st;
        }
        n++;
    }
    for (i = 0; i < L->nu_control; i++) {
        if (n < cap) {
            st = rigmat_validity_sweep(sys, lin, L, o, 1, i, &items[n], err);
            if (st != RIGMAT_OK)
                return st;
        }
        n++;
    }
    *count = n;
    return RIGMAT_OK;
}
