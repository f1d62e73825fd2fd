/* simulate.c - the nonlinear, linear and sampled responses (simulate.h).
 *
 * All three share one plan: the output times k * step and the breakpoints
 * of the signals, merged into one sorted list of nodes.  Over the interval
 * between two nodes the step, ramp and table parts of every input are one
 * straight line, v + w (t - ts), read at two interior points so that a
 * breakpoint a rounding error away from a node never leaks into the wrong
 * interval; sines are evaluated analytically.
 *
 * Methods: GSL odeiv2 (bsimp: the semi-implicit extrapolation method of
 * G. Bader and P. Deuflhard, Numer. Math. 41:373-398, 1983), the matrix
 * exponential of Higham (2005) (expm.h) on the augmented matrix written in
 * simulate.h (the construction of C. F. Van Loan, IEEE TAC 23(3), 1978,
 * for integrals of the exponential), and ZOH (discretize.h).
 */
#include "simulate.h"
#include "discretize.h"
#include "expm.h"
#include "units.h"
#include "reentrant.h"

#include <errno.h>
#include <float.h>
#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_math.h>
#include <gsl/gsl_odeiv2.h>

/* ---------------------------------------------------------------- names */

static const char *const model_names[] = { "nonlinear", "linear", "sampled" };

const char *rigmat_sim_model_name(rigmat_sim_model m)
{
    return (size_t)m < sizeof model_names / sizeof model_names[0] ? model_names[m] : "?";
}

int rigmat_sim_model_parse(const char *name, rigmat_sim_model *m)
{
    size_t i;

    for (i = 0; i < sizeof model_names / sizeof model_names[0]; i++)
        if (strcmp(name, model_names[i]) == 0) {
            *m = (rigmat_sim_model)i;
            return 0;
        }
    return -1;
}

rigmat_sim_opts rigmat_sim_opts_default(void)
{
    rigmat_sim_opts o;

    memset(&o, 0, sizeof o);
    o.model = RIGMAT_SIM_NONLINEAR;
    o.duration_s = 1.0;
    o.step_s = 1e-3;
    o.rate_hz = 0.0;
    o.rtol = 1e-8;
    o.atol_floor = 1e-3;
    o.max_steps = 200000;
    o.max_rows = 10000000;
    return o;
}

/* ---------------------------------------------------------------- waves */

void rigmat_wave_release(rigmat_wave *w)
{
    if (w == NULL)
        return;
    free(w->table_t_s);
    free(w->table_v);
    w->table_t_s = NULL;
    w->table_v = NULL;
    w->ntable = 0;
}

/* A quantity of dimension want (a bare number is SI). */
static rigmat_status wave_quantity(const char *text, rigmat_dim want, const char *what,
        const char *unit_words, double *v, rigmat_error *err)
{
    rigmat_quantity q;
    rigmat_error e;
    rigmat_dim none;
    char got[64];

    memset(&e, 0, sizeof e);
    memset(&none, 0, sizeof none);
    if (rigmat_units_parse(text, &q, &e) != RIGMAT_OK) {
        RIGMAT_FAIL(err, RIGMAT_EUSAGE, "%s '%s': %s", what, text, e.message);
        if (e.hint[0])
            rigmat_error_hint(err, "%s", e.hint);
        return RIGMAT_EUSAGE;
    }
    if (!rigmat_dim_equal(q.dim, want) && !rigmat_dim_equal(q.dim, none)) {
        rigmat_units_format_dim(q.dim, got, sizeof got);
        RIGMAT_FAIL(err, RIGMAT_EUSAGE, "%s '%s' is in %s, expected %s", what, text, got,
                unit_words);
        return RIGMAT_EUSAGE;
    }
    if (!isfinite(q.value))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "%s '%s' is not finite", what, text);
    *v = q.value;
    return RIGMAT_OK;
}

/* The dimension of an SI unit string ("1" is dimensionless). */
static rigmat_status unit_dim(const char *unit, rigmat_dim *d, rigmat_error *err)
{
    rigmat_quantity q;
    rigmat_error e;
    char one[40];

    memset(&e, 0, sizeof e);
    memset(d, 0, sizeof *d);
    if (strcmp(unit, "1") == 0 || unit[0] == '\0')
        return RIGMAT_OK;
    snprintf(one, sizeof one, "1 %s", unit);
    if (rigmat_units_parse(one, &q, &e) != RIGMAT_OK)
        return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "the unit '%s' does not parse", unit);
    *d = q.dim;
    return RIGMAT_OK;
}

rigmat_status rigmat_sim_value(const char *text, const char *unit, const char *what, double *v,
        rigmat_error *err)
{
    rigmat_dim d;
    char words[64];
    const rigmat_status st = unit_dim(unit, &d, err);

    if (st != RIGMAT_OK)
        return st;
    snprintf(words, sizeof words, "%s", unit);
    return wave_quantity(text, d, what, words, v, err);
}

static rigmat_status read_table(const char *path, rigmat_wave *w, rigmat_error *err)
{
    FILE *f = fopen(path, "r");
    char line[512];
    size_t cap = 0, lineno = 0;
    rigmat_status st = RIGMAT_OK;

    char why[128];

    if (f == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EIO, "cannot read the signal file '%s': %s", path,
                rigmat_strerror(errno, why, sizeof why));
    while (fgets(line, sizeof line, f) != NULL) {
        char *p = line, *end;
        double t, v;

        lineno++;
        if (strchr(line, '\n') == NULL && !feof(f)) {
            st = RIGMAT_FAIL(err, RIGMAT_EUSAGE, "%s:%zu: line too long", path, lineno);
            break;
        }
        while (*p == ' ' || *p == '\t')
            p++;
        if (*p == '#' || *p == '\n' || *p == '\r' || *p == '\0')
            continue;
        t = rigmat_strtod_c(p, &end);
        if (end == p) {
            if (w->ntable == 0 && lineno == 1)
                continue; /* a header */
            st = RIGMAT_FAIL(err, RIGMAT_EUSAGE, "%s:%zu: expected 'time,value'", path, lineno);
            break;
        }
        p = end;
        while (*p == ' ' || *p == '\t')
            p++;
        if (*p != ',') {
            st = RIGMAT_FAIL(err, RIGMAT_EUSAGE, "%s:%zu: expected a comma after the time",
                    path, lineno);
            break;
        }
        p++;
        v = rigmat_strtod_c(p, &end);
        if (end == p) {
            st = RIGMAT_FAIL(err, RIGMAT_EUSAGE, "%s:%zu: expected a value after the comma",
                    path, lineno);
            break;
        }
        for (p = end; *p == ' ' || *p == '\t' || *p == '\r' || *p == '\n'; p++)
            ;
        if (*p != '\0' || !isfinite(t) || !isfinite(v)) {
            st = RIGMAT_FAIL(err, RIGMAT_EUSAGE, "%s:%zu: expected two finite numbers", path,
                    lineno);
            break;
        }
        if (w->ntable > 0 && !(t > w->table_t_s[w->ntable - 1])) {
            st = RIGMAT_FAIL(err, RIGMAT_EUSAGE, "%s:%zu: times must increase", path, lineno);
            break;
        }
        if (w->ntable == cap) {
            size_t ncap = cap ? 2 * cap : 64;
            double *a = realloc(w->table_t_s, ncap * sizeof *a), *b;
            if (a == NULL) {
                st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory reading '%s'", path);
                break;
            }
            w->table_t_s = a;
            b = realloc(w->table_v, ncap * sizeof *b);
            if (b == NULL) {
                st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory reading '%s'", path);
                break;
            }
            w->table_v = b;
            cap = ncap;
        }
        w->table_t_s[w->ntable] = t;
        w->table_v[w->ntable] = v;
        w->ntable++;
    }
    if (st == RIGMAT_OK && ferror(f))
        st = RIGMAT_FAIL(err, RIGMAT_EIO, "cannot read the signal file '%s'", path);
    fclose(f);
    if (st == RIGMAT_OK && w->ntable == 0)
        st = RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the signal file '%s' has no time,value rows", path);
    if (st != RIGMAT_OK)
        rigmat_wave_release(w);
    return st;
}

rigmat_status rigmat_wave_parse(const char *text, const char *unit, size_t input, rigmat_wave *w,
        rigmat_error *err)
{
    static const struct { const char *name; rigmat_wave_kind kind; } kinds[] = {
        { "step", RIGMAT_WAVE_STEP }, { "impulse", RIGMAT_WAVE_IMPULSE },
        { "ramp", RIGMAT_WAVE_RAMP }, { "sine", RIGMAT_WAVE_SINE }, { "file", RIGMAT_WAVE_TABLE } };
    const char *colon = strchr(text, ':');
    char body[300], words[80];
    rigmat_error e;
    rigmat_dim dim, tdim = rigmat_units_dim(RIGMAT_Q_TIME);
    char *at;
    size_t i, klen;
    rigmat_status st = RIGMAT_OK;

    memset(w, 0, sizeof *w);
    w->input = input;
    if (colon == NULL)
        goto bad_kind;
    klen = (size_t)(colon - text);
    for (i = 0; i < sizeof kinds / sizeof kinds[0]; i++)
        if (strlen(kinds[i].name) == klen && strncmp(text, kinds[i].name, klen) == 0)
            break;
    if (i == sizeof kinds / sizeof kinds[0])
        goto bad_kind;
    w->kind = kinds[i].kind;
    if (strlen(colon + 1) >= sizeof body)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the signal '%.40s...' is too long", text);
    strcpy(body, colon + 1);
    if (w->kind == RIGMAT_WAVE_TABLE)
        return read_table(body, w, err);

    st = unit_dim(unit, &dim, err);
    if (st != RIGMAT_OK)
        return st;
    at = strchr(body, '@');
    if (at != NULL)
        *at++ = '\0';
    switch (w->kind) {
    case RIGMAT_WAVE_STEP:
        snprintf(words, sizeof words, "%s (the input's unit)", unit);
        st = wave_quantity(body, dim, "step value", words, &w->value, err);
        break;
    case RIGMAT_WAVE_IMPULSE:
        snprintf(words, sizeof words, "%s*s (an area: the input's unit times s)", unit);
        st = wave_quantity(body, rigmat_dim_mul(dim, tdim), "impulse area", words, &w->value,
                err);
        break;
    case RIGMAT_WAVE_RAMP:
        snprintf(words, sizeof words, "%s/s (a slope: the input's unit per s)", unit);
        st = wave_quantity(body, rigmat_dim_div(dim, tdim), "ramp slope", words, &w->value,
                err);
        break;
    case RIGMAT_WAVE_SINE:
        snprintf(words, sizeof words, "%s (the input's unit)", unit);
        st = wave_quantity(body, dim, "sine amplitude", words, &w->value, err);
        if (st == RIGMAT_OK && at == NULL) {
            st = RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the sine '%s' needs a frequency", text);
            rigmat_error_hint(err, "write sine:AMPLITUDE@FREQUENCY, e.g. sine:0.5V@2Hz");
        } else if (st == RIGMAT_OK) {
            memset(&e, 0, sizeof e);
            if (rigmat_units_expect(at, RIGMAT_Q_FREQUENCY, &w->frequency_hz, &e) != RIGMAT_OK
                    || !(w->frequency_hz > 0) || !isfinite(w->frequency_hz)) {
                st = RIGMAT_FAIL(err, RIGMAT_EUSAGE, "sine frequency '%s': %s", at,
                        e.message[0] ? e.message : "must be positive");
                if (e.hint[0])
                    rigmat_error_hint(err, "%s", e.hint);
            }
        }
        return st;
    case RIGMAT_WAVE_TABLE:
        return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "table handled above");
    }
    if (st != RIGMAT_OK)
        return st;
    if (at != NULL) {
        memset(&e, 0, sizeof e);
        if (rigmat_units_expect(at, RIGMAT_Q_TIME, &w->t0_s, &e) != RIGMAT_OK) {
            st = RIGMAT_FAIL(err, RIGMAT_EUSAGE, "start time '%s': %s", at, e.message);
            if (e.hint[0])
                rigmat_error_hint(err, "%s", e.hint);
            return st;
        }
        if (!(w->t0_s >= 0) || !isfinite(w->t0_s))
            return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "start time '%s' must be 0 or later", at);
    }
    return RIGMAT_OK;

bad_kind:
    RIGMAT_FAIL(err, RIGMAT_EUSAGE, "unknown signal '%s'", text);
    rigmat_error_hint(err, "use step:VALUE[@T0], impulse:AREA[@T0], ramp:SLOPE[@T0], "
            "sine:AMPLITUDE@FREQUENCY or file:PATH.csv");
    return RIGMAT_EUSAGE;
}

/* The piecewise-linear part (step, ramp, table) of one wave at t; a step
 * or ramp starts when t >= t0 - snap. */
static double wave_pl(const rigmat_wave *w, double t, double snap)
{
    size_t lo, hi;

    switch (w->kind) {
    case RIGMAT_WAVE_STEP:
        return t >= w->t0_s - snap ? w->value : 0.0;
    case RIGMAT_WAVE_RAMP:
        return t > w->t0_s ? w->value * (t - w->t0_s) : 0.0;
    case RIGMAT_WAVE_TABLE:
        if (t <= w->table_t_s[0])
            return w->table_v[0];
        if (t >= w->table_t_s[w->ntable - 1])
            return w->table_v[w->ntable - 1];
        lo = 0;
        hi = w->ntable - 1;
        while (hi - lo > 1) {
            const size_t mid = lo + (hi - lo) / 2;
            if (w->table_t_s[mid] <= t)
                lo = mid;
            else
                hi = mid;
        }
        return w->table_v[lo] + (w->table_v[hi] - w->table_v[lo]) * (t - w->table_t_s[lo]) /
                (w->table_t_s[hi] - w->table_t_s[lo]);
    case RIGMAT_WAVE_IMPULSE:
    case RIGMAT_WAVE_SINE:
        break;
    }
    return 0.0;
}

static double wave_sine(const rigmat_wave *w, double t)
{
    return w->kind == RIGMAT_WAVE_SINE ? w->value * sin(2.0 * M_PI * w->frequency_hz * t) : 0.0;
}

static double wave_eval_snap(const rigmat_wave *waves, size_t nwaves, size_t input, double t,
        double snap)
{
    double s = 0.0;
    size_t k;

    for (k = 0; k < nwaves; k++)
        if (waves[k].input == input)
            s += wave_pl(&waves[k], t, snap) + wave_sine(&waves[k], t);
    return s;
}

double rigmat_wave_eval(const rigmat_wave *waves, size_t nwaves, size_t input, double t_s)
{
    return wave_eval_snap(waves, nwaves, input, t_s, 0.0);
}

/* ----------------------------------------------------------------- plan */

struct node {
    double t;
    size_t row; /* output row, or RIGMAT_NONE for a breakpoint only */
    int brk;    /* a breakpoint of a signal falls here: the input may jump or kink */
};

struct plan {
    size_t nu;
    const rigmat_wave *waves;
    size_t nwaves;
    struct node *nodes;
    size_t nnodes;
    size_t nrows;
    double step, snap;
    double *v, *w; /* nu: the piecewise-linear part on the current interval */
    double ts;     /* start of the current interval */
};

static int cmp_double(const void *a, const void *b)
{
    const double x = *(const double *)a, y = *(const double *)b;
    return (x > y) - (x < y);
}

static void plan_release(struct plan *p)
{
    free(p->nodes);
    free(p->v);
    free(p->w);
}

static rigmat_status plan_build(struct plan *p, const rigmat_sim_opts *o, size_t nu,
        const rigmat_sim_case *c, rigmat_error *err)
{
    const double steps = o->duration_s / o->step_s;
    double *bp = NULL;
    size_t nbp = 0, k, i, j;

    memset(p, 0, sizeof *p);
    p->nu = nu;
    p->waves = c->waves;
    p->nwaves = c->nwaves;
    if (!(o->duration_s > 0) || !isfinite(o->duration_s))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the duration must be positive");
    if (!(o->step_s > 0) || !isfinite(o->step_s))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the output step must be positive");
    if (!(steps + 1 <= (double)o->max_rows))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE,
                "%.0f output rows are more than the limit of %zu", floor(steps + 1),
                o->max_rows);
    for (k = 0; k < c->nwaves; k++) {
        const rigmat_wave *w = &c->waves[k];
        if (w->input >= nu)
            return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "signal %zu drives input %zu of %zu", k,
                    w->input, nu);
        if (!isfinite(w->value) || !(w->t0_s >= 0) || !isfinite(w->t0_s) ||
                (w->kind == RIGMAT_WAVE_SINE &&
                        (!(w->frequency_hz > 0) || !isfinite(w->frequency_hz))))
            return RIGMAT_FAIL(err, RIGMAT_EUSAGE,
                    "signal %zu: a value, start time or frequency is out of range", k);
        if (w->kind == RIGMAT_WAVE_TABLE) {
            if (w->ntable == 0 || w->table_t_s == NULL || w->table_v == NULL)
                return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "signal %zu: an empty table", k);
            for (i = 0; i < w->ntable; i++)
                if (!isfinite(w->table_t_s[i]) || !isfinite(w->table_v[i]) ||
                        (i > 0 && !(w->table_t_s[i] > w->table_t_s[i - 1])))
                    return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "signal %zu: table row %zu is not "
                            "finite or its time does not increase", k, i);
        }
    }
    p->nrows = (size_t)floor(steps + 0.5) + 1;
    p->step = o->step_s;
    p->snap = 1e-9 * o->step_s;

    for (k = 0; k < c->nwaves; k++)
        nbp += c->waves[k].kind == RIGMAT_WAVE_TABLE ? c->waves[k].ntable : 1;
    bp = malloc((nbp ? nbp : 1) * sizeof *bp);
    p->v = calloc(nu ? nu : 1, sizeof *p->v);
    p->w = calloc(nu ? nu : 1, sizeof *p->w);
    p->nodes = malloc((p->nrows + nbp) * sizeof *p->nodes);
    if (bp == NULL || p->v == NULL || p->w == NULL || p->nodes == NULL) {
        free(bp);
        plan_release(p);
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory planning the simulation");
    }
    nbp = 0;
    for (k = 0; k < c->nwaves; k++) {
        const rigmat_wave *w = &c->waves[k];
        if (w->kind == RIGMAT_WAVE_TABLE)
            for (i = 0; i < w->ntable; i++)
                bp[nbp++] = w->table_t_s[i];
        else if (w->kind != RIGMAT_WAVE_SINE)
            bp[nbp++] = w->t0_s;
    }
    qsort(bp, nbp, sizeof *bp, cmp_double);
    /* Merge: grid times, then breakpoints inside (0, dur) not within snap
     * of a grid time or of the breakpoint before. */
    i = 0;
    j = 0;
    for (k = 0; k < p->nrows; k++) {
        const double tk = (double)k * o->step_s;
        for (; j < nbp && bp[j] <= tk + p->snap; j++) {
            if (i > 0 && bp[j] - p->nodes[i - 1].t <= p->snap) {
                p->nodes[i - 1].brk = 1;
                continue;
            }
            if (bp[j] >= tk - p->snap || bp[j] <= p->snap)
                continue; /* on this grid time (marked below) or at the start */
            p->nodes[i].t = bp[j];
            p->nodes[i].row = RIGMAT_NONE;
            p->nodes[i].brk = 1;
            i++;
        }
        p->nodes[i].t = tk;
        p->nodes[i].row = k;
        p->nodes[i].brk = j > 0 && fabs(bp[j - 1] - tk) <= p->snap;
        i++;
    }
    p->nnodes = i;
    free(bp);
    return RIGMAT_OK;
}

/* Set the straight line of every input over [ts, te]. */
static void plan_interval(struct plan *p, double ts, double te)
{
    const double h = te - ts, ta = ts + 0.25 * h, tb = ts + 0.75 * h;
    size_t j, k;

    p->ts = ts;
    for (j = 0; j < p->nu; j++) {
        double ga = 0.0, gb = 0.0;
        for (k = 0; k < p->nwaves; k++)
            if (p->waves[k].input == j) {
                ga += wave_pl(&p->waves[k], ta, 0.0);
                gb += wave_pl(&p->waves[k], tb, 0.0);
            }
        p->w[j] = (gb - ga) / (0.5 * h);
        p->v[j] = ga - p->w[j] * 0.25 * h;
    }
}

/* du(t) on the current interval (sines included) and, if rate is not NULL,
 * its time derivative. */
static void plan_du(const struct plan *p, double t, double *du, double *rate)
{
    size_t j, k;

    for (j = 0; j < p->nu; j++) {
        du[j] = p->v[j] + p->w[j] * (t - p->ts);
        if (rate != NULL)
            rate[j] = p->w[j];
    }
    for (k = 0; k < p->nwaves; k++) {
        const rigmat_wave *w = &p->waves[k];
        if (w->kind == RIGMAT_WAVE_SINE) {
            const double om = 2.0 * M_PI * w->frequency_hz;
            du[w->input] += w->value * sin(om * t);
            if (rate != NULL)
                rate[w->input] += w->value * om * cos(om * t);
        }
    }
}

/* The impulses at node time t: area per input into imp (nu); returns 1 if any. */
static int plan_impulses(const struct plan *p, double t, int first, double *imp)
{
    size_t k;
    int any = 0;

    memset(imp, 0, (p->nu ? p->nu : 1) * sizeof *imp);
    for (k = 0; k < p->nwaves; k++) {
        const rigmat_wave *w = &p->waves[k];
        if (w->kind != RIGMAT_WAVE_IMPULSE)
            continue;
        if (fabs(w->t0_s - t) <= p->snap || (first && w->t0_s <= p->snap)) {
            imp[w->input] += w->value;
            any = 1;
        }
    }
    return any;
}

/* --------------------------------------------------------------- result */

void rigmat_sim_result_init(rigmat_sim_result *r)
{
    memset(r, 0, sizeof *r);
}

void rigmat_sim_result_release(rigmat_sim_result *r)
{
    if (r == NULL)
        return;
    free(r->t_s);
    free(r->x);
    free(r->u);
    free(r->y);
    rigmat_sim_result_init(r);
}

static rigmat_status result_alloc(rigmat_sim_result *r, size_t nx, size_t nu, size_t ny,
        size_t nrows, rigmat_error *err)
{
    rigmat_sim_result_release(r);
    r->nx = nx;
    r->nu = nu;
    r->ny = ny;
    r->nrows_planned = nrows;
    r->t_s = malloc(nrows * sizeof *r->t_s);
    r->x = malloc((nrows * nx + 1) * sizeof *r->x);
    r->u = malloc((nrows * nu + 1) * sizeof *r->u);
    r->y = malloc((nrows * ny + 1) * sizeof *r->y);
    if (r->t_s == NULL || r->x == NULL || r->u == NULL || r->y == NULL) {
        rigmat_sim_result_release(r);
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory for %zu rows", nrows);
    }
    return RIGMAT_OK;
}

static double vget(const gsl_vector *v, size_t i)
{
    return v != NULL ? gsl_vector_get(v, i) : 0.0;
}

/* y = y0 + C dx + D du (linear and sampled rows). */
static void linear_output(const rigmat_lti *l, const double *dx, const double *du, double *y)
{
    size_t i, k;

    for (i = 0; i < l->ny; i++) {
        double s = vget(l->y0, i);
        for (k = 0; k < l->nx; k++)
            s += gsl_matrix_get(l->C, i, k) * dx[k];
        for (k = 0; k < l->nu; k++)
            s += gsl_matrix_get(l->D, i, k) * du[k];
        y[i] = s;
    }
}

static int finite_n(const double *a, size_t n)
{
    size_t i;
    for (i = 0; i < n; i++)
        if (!isfinite(a[i]))
            return 0;
    return 1;
}

/* ------------------------------------------------------------ nonlinear */

struct nl_ctx {
    rigmat_system *sys;
    struct plan *plan;
    const rigmat_lti *lin;
    size_t nx, nu;
    double *u, *du, *rate; /* nu */
    gsl_matrix *J, *Bu;    /* nx x nx, nx x nu (NULL when nu = 0) */
    rigmat_error fail;     /* the first failure of f or its Jacobian */
    double fail_t;
    int failed;
};

static void nl_input(struct nl_ctx *c, double t, int with_rate)
{
    size_t j;

    plan_du(c->plan, t, c->du, with_rate ? c->rate : NULL);
    for (j = 0; j < c->nu; j++)
        c->u[j] = vget(c->lin->u0, j) + c->du[j];
}

static void nl_note(struct nl_ctx *c, double t, const rigmat_error *e)
{
    if (c->failed)
        return;
    c->failed = 1;
    c->fail = *e;
    c->fail_t = t;
}

static int nl_f(double t, const double y[], double dydt[], void *params)
{
    struct nl_ctx *c = params;
    rigmat_error e;

    memset(&e, 0, sizeof e);
    if (!finite_n(y, c->nx)) {
        RIGMAT_FAIL(&e, RIGMAT_ENUMERIC, "the state is not finite");
        nl_note(c, t, &e);
        return GSL_EBADFUNC;
    }
    nl_input(c, t, 0);
    if (rigmat_system_eval(c->sys, y, c->u, dydt, NULL, &e) != RIGMAT_OK) {
        nl_note(c, t, &e);
        return GSL_EBADFUNC;
    }
    if (!finite_n(dydt, c->nx)) {
        RIGMAT_FAIL(&e, RIGMAT_ENUMERIC, "the state derivative is not finite");
        nl_note(c, t, &e);
        return GSL_EBADFUNC;
    }
    return GSL_SUCCESS;
}

static int nl_jac(double t, const double y[], double *dfdy, double dfdt[], void *params)
{
    struct nl_ctx *c = params;
    gsl_matrix_view J = gsl_matrix_view_array(dfdy, c->nx, c->nx);
    rigmat_error e;
    size_t i, j;

    memset(&e, 0, sizeof e);
    nl_input(c, t, 1);
    if (rigmat_system_jacobians(c->sys, y, c->u, &J.matrix, c->Bu, NULL, NULL, &e) !=
            RIGMAT_OK) {
        nl_note(c, t, &e);
        return GSL_EBADFUNC;
    }
    for (i = 0; i < c->nx; i++) {
        double s = 0.0;
        for (j = 0; j < c->nu; j++)
            s += gsl_matrix_get(c->Bu, i, j) * c->rate[j];
        dfdt[i] = s;
    }
    if (!finite_n(dfdy, c->nx * c->nx) || !finite_n(dfdt, c->nx)) {
        RIGMAT_FAIL(&e, RIGMAT_ENUMERIC, "the Jacobian of the model is not finite");
        nl_note(c, t, &e);
        return GSL_EBADFUNC;
    }
    return GSL_SUCCESS;
}

static rigmat_status nl_fail(const struct nl_ctx *c, double t, int gsl_status, double rtol,
        rigmat_error *err)
{
    if (c->failed) {
        RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "the nonlinear model fails at t = %.9g s: %s",
                c->fail_t, c->fail.message);
        if (err != NULL) {
            err->where = c->fail.where;
            err->within = c->fail.within;
        }
        if (c->fail.hint[0])
            rigmat_error_hint(err, "%s", c->fail.hint);
        else
            rigmat_error_hint(err, "the rig has left the region where its model is valid");
        return RIGMAT_ENUMERIC;
    }
    RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
            "the integrator cannot meet the tolerance %.3g at t = %.9g s (%s)", rtol, t,
            gsl_strerror(gsl_status));
    rigmat_error_hint(err, "a looser --tolerance or a shorter --duration may help; the "
            "motion may also be escaping (a non-finite or unbounded state)");
    return RIGMAT_ENUMERIC;
}

static rigmat_status sim_nonlinear(rigmat_system *sys, const rigmat_lti *lin,
        const rigmat_sim_opts *o, const rigmat_sim_case *cs, struct plan *p,
        rigmat_sim_result *r, rigmat_error *err)
{
    const size_t nx = lin->nx, nu = lin->nu, ny = lin->ny;
    struct nl_ctx c;
    gsl_odeiv2_system ode;
    gsl_odeiv2_driver *drv = NULL;
    double *x = NULL, *scale = NULL, *imp = NULL;
    rigmat_status st = RIGMAT_OK;
    size_t n, i, j;
    double t = 0.0;

    if (sys == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the nonlinear simulation needs the system");
    if (!(o->rtol > 0) || !(o->rtol < 1))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the tolerance %g is not in (0, 1)", o->rtol);
    if (!(o->atol_floor > 0) || !isfinite(o->atol_floor) || o->max_steps == 0)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "atol_floor and max_steps must be positive");
    memset(&c, 0, sizeof c);
    c.sys = sys;
    c.plan = p;
    c.lin = lin;
    c.nx = nx;
    c.nu = nu;
    c.u = calloc(nu + 1, sizeof *c.u);
    c.du = calloc(nu + 1, sizeof *c.du);
    c.rate = calloc(nu + 1, sizeof *c.rate);
    c.J = gsl_matrix_alloc(nx, nx);
    c.Bu = nu ? gsl_matrix_alloc(nx, nu) : NULL;
    x = malloc(nx * sizeof *x);
    scale = malloc(nx * sizeof *scale);
    imp = calloc(nu + 1, sizeof *imp);
    if (c.u == NULL || c.du == NULL || c.rate == NULL || c.J == NULL || (nu && c.Bu == NULL) ||
            x == NULL || scale == NULL || imp == NULL) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory for the nonlinear simulation");
        goto done;
    }
    for (i = 0; i < nx; i++) {
        x[i] = vget(lin->x0, i) + (cs->offset ? cs->offset[i] : 0.0);
        scale[i] = GSL_MAX_DBL(fabs(x[i]), o->atol_floor);
    }
    ode.function = nl_f;
    ode.jacobian = nl_jac;
    ode.dimension = nx;
    ode.params = &c;
    /* |e_i| <= rtol (a_i + |x_i|): epsabs = rtol with scale_abs = a_i, a_y = 1 */
    drv = gsl_odeiv2_driver_alloc_scaled_new(&ode, gsl_odeiv2_step_bsimp,
            GSL_MIN_DBL(p->step, 1e-4) * 1e-2, o->rtol, o->rtol, 1.0, 0.0, scale);
    if (drv == NULL) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory for the integrator");
        goto done;
    }
    gsl_odeiv2_driver_set_nmax(drv, o->max_steps);

    for (n = 0; n < p->nnodes; n++) {
        const double tn = p->nodes[n].t;
        if (n > 0) {
            int gs;
            plan_interval(p, p->nodes[n - 1].t, tn);
            /* restart the step-size control where the input jumps or kinks */
            if (p->nodes[n - 1].brk)
                gsl_odeiv2_driver_reset(drv);
            t = p->nodes[n - 1].t;
            gs = gsl_odeiv2_driver_apply(drv, &t, tn, x);
            if (gs != GSL_SUCCESS || !finite_n(x, nx)) {
                if (gs == GSL_SUCCESS) {
                    rigmat_error e;
                    memset(&e, 0, sizeof e);
                    RIGMAT_FAIL(&e, RIGMAT_ENUMERIC, "the state is not finite");
                    nl_note(&c, tn, &e);
                }
                st = nl_fail(&c, t, gs, o->rtol, err);
                r->stop_time_s = t;
                goto done;
            }
        }
        /* the input just after tn */
        for (j = 0; j < nu; j++)
            c.u[j] = vget(lin->u0, j) + wave_eval_snap(p->waves, p->nwaves, j, tn, p->snap);
        if (nu > 0 && plan_impulses(p, tn, n == 0, imp)) {
            rigmat_error e;
            memset(&e, 0, sizeof e);
            if (rigmat_system_jacobians(sys, x, c.u, NULL, c.Bu, NULL, NULL, &e) != RIGMAT_OK) {
                nl_note(&c, tn, &e);
                st = nl_fail(&c, tn, GSL_EBADFUNC, o->rtol, err);
                r->stop_time_s = tn;
                goto done;
            }
            for (i = 0; i < nx; i++)
                for (j = 0; j < nu; j++)
                    x[i] += gsl_matrix_get(c.Bu, i, j) * imp[j];
        }
        if (p->nodes[n].row != RIGMAT_NONE) {
            const size_t k = p->nodes[n].row;
            rigmat_error e;
            memset(&e, 0, sizeof e);
            if (rigmat_system_eval(sys, x, c.u, NULL, ny ? r->y + k * ny : NULL, &e) !=
                    RIGMAT_OK || !finite_n(r->y + k * ny, ny)) {
                if (e.status == RIGMAT_OK)
                    RIGMAT_FAIL(&e, RIGMAT_ENUMERIC, "an output is not finite");
                nl_note(&c, tn, &e);
                st = nl_fail(&c, tn, GSL_EBADFUNC, o->rtol, err);
                r->stop_time_s = tn;
                goto done;
            }
            r->t_s[k] = (double)k * p->step;
            memcpy(r->x + k * nx, x, nx * sizeof *x);
            if (nu)
                memcpy(r->u + k * nu, c.u, nu * sizeof *c.u);
            r->nrows = k + 1;
        }
    }
    r->complete = 1;
    r->stop_time_s = p->nodes[p->nnodes - 1].t;
done:
    if (drv != NULL)
        gsl_odeiv2_driver_free(drv);
    free(c.u);
    free(c.du);
    free(c.rate);
    if (c.J)
        gsl_matrix_free(c.J);
    if (c.Bu)
        gsl_matrix_free(c.Bu);
    free(x);
    free(scale);
    free(imp);
    return st;
}

/* --------------------------------------------------------------- linear */

static rigmat_status sim_linear(const rigmat_lti *lin, const rigmat_sim_case *cs,
        struct plan *p, rigmat_sim_result *r, rigmat_error *err)
{
    const size_t nx = lin->nx, nu = lin->nu, ny = lin->ny;
    size_t ns = 0, na, k, i, j, n, s;
    gsl_matrix *M = NULL, *Mh = NULL, *E = NULL;
    gsl_vector *a = NULL, *b = NULL;
    rigmat_expm_ws *ws = NULL;
    double *dx = NULL, *du = NULL, *imp = NULL, hc = -1.0;
    rigmat_status st = RIGMAT_OK;
    const double tend = p->nodes[p->nnodes - 1].t;

    for (k = 0; k < cs->nwaves; k++)
        ns += cs->waves[k].kind == RIGMAT_WAVE_SINE;
    /* [dx; z (2 per sine); v; w; 1] */
    na = nx + 2 * ns + 2 * nu + 1;
    M = gsl_matrix_calloc(na, na);
    Mh = gsl_matrix_alloc(na, na);
    E = gsl_matrix_alloc(na, na);
    a = gsl_vector_alloc(na);
    b = gsl_vector_alloc(na);
    ws = rigmat_expm_ws_alloc(na);
    dx = calloc(nx + 1, sizeof *dx);
    du = calloc(nu + 1, sizeof *du);
    imp = calloc(nu + 1, sizeof *imp);
    if (M == NULL || Mh == NULL || E == NULL || a == NULL || b == NULL || ws == NULL ||
            dx == NULL || du == NULL || imp == NULL) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory for the linear simulation");
        goto done;
    }
    for (i = 0; i < nx; i++) {
        for (j = 0; j < nx; j++)
            gsl_matrix_set(M, i, j, gsl_matrix_get(lin->A, i, j));
        for (j = 0; j < nu; j++)
            gsl_matrix_set(M, i, nx + 2 * ns + j, gsl_matrix_get(lin->B, i, j));
        gsl_matrix_set(M, i, na - 1, vget(lin->f0, i));
        dx[i] = cs->offset ? cs->offset[i] : 0.0;
    }
    for (j = 0; j < nu; j++)
        gsl_matrix_set(M, nx + 2 * ns + j, nx + 2 * ns + nu + j, 1.0);
    for (k = 0, s = 0; k < cs->nwaves; k++) {
        const rigmat_wave *w = &cs->waves[k];
        const double om = 2.0 * M_PI * w->frequency_hz;
        const size_t z = nx + 2 * s;
        if (w->kind != RIGMAT_WAVE_SINE)
            continue;
        for (i = 0; i < nx; i++)
            gsl_matrix_set(M, i, z, gsl_matrix_get(lin->B, i, w->input) * w->value);
        gsl_matrix_set(M, z, z + 1, om);  /* (sin wt)' = w cos wt */
        gsl_matrix_set(M, z + 1, z, -om); /* (cos wt)' = -w sin wt */
        s++;
    }

    for (n = 0; n < p->nnodes; n++) {
        const double tn = p->nodes[n].t;
        if (n > 0) {
            const double t0 = p->nodes[n - 1].t, h = tn - t0;
            plan_interval(p, t0, tn);
            if (fabs(h - hc) > 4.0 * DBL_EPSILON * GSL_MAX_DBL(tend, h)) {
                gsl_matrix_memcpy(Mh, M);
                gsl_matrix_scale(Mh, h);
                st = rigmat_expm(Mh, E, RIGMAT_EXPM_BALANCE, ws, NULL, err);
                if (st != RIGMAT_OK)
                    goto done;
                hc = h;
            }
            gsl_vector_set_zero(a);
            for (i = 0; i < nx; i++)
                gsl_vector_set(a, i, dx[i]);
            for (k = 0, s = 0; k < cs->nwaves; k++) {
                const rigmat_wave *w = &cs->waves[k];
                const double om = 2.0 * M_PI * w->frequency_hz;
                if (w->kind != RIGMAT_WAVE_SINE)
                    continue;
                gsl_vector_set(a, nx + 2 * s, sin(om * t0));
                gsl_vector_set(a, nx + 2 * s + 1, cos(om * t0));
                s++;
            }
            for (j = 0; j < nu; j++) {
                gsl_vector_set(a, nx + 2 * ns + j, p->v[j]);
                gsl_vector_set(a, nx + 2 * ns + nu + j, p->w[j]);
            }
            gsl_vector_set(a, na - 1, 1.0);
            gsl_blas_dgemv(CblasNoTrans, 1.0, E, a, 0.0, b);
            for (i = 0; i < nx; i++)
                dx[i] = gsl_vector_get(b, i);
            if (!finite_n(dx, nx)) {
                r->stop_time_s = t0;
                st = RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                        "the linear response is not finite at t = %.9g s", tn);
                goto done;
            }
        }
        if (nu > 0 && plan_impulses(p, tn, n == 0, imp))
            for (i = 0; i < nx; i++)
                for (j = 0; j < nu; j++)
                    dx[i] += gsl_matrix_get(lin->B, i, j) * imp[j];
        if (p->nodes[n].row != RIGMAT_NONE) {
            const size_t row = p->nodes[n].row;
            for (j = 0; j < nu; j++)
                du[j] = wave_eval_snap(p->waves, p->nwaves, j, tn, p->snap);
            r->t_s[row] = (double)row * p->step;
            for (i = 0; i < nx; i++)
                r->x[row * nx + i] = vget(lin->x0, i) + dx[i];
            for (j = 0; j < nu; j++)
                r->u[row * nu + j] = vget(lin->u0, j) + du[j];
            linear_output(lin, dx, du, r->y + row * ny);
            r->nrows = row + 1;
        }
    }
    r->complete = 1;
    r->stop_time_s = tend;
done:
    if (M) gsl_matrix_free(M);
    if (Mh) gsl_matrix_free(Mh);
    if (E) gsl_matrix_free(E);
    if (a) gsl_vector_free(a);
    if (b) gsl_vector_free(b);
    rigmat_expm_ws_free(ws);
    free(dx);
    free(du);
    free(imp);
    return st;
}

/* -------------------------------------------------------------- sampled */

static rigmat_status sim_sampled(const rigmat_lti *lin, const rigmat_sim_opts *o,
        const rigmat_sim_case *cs, struct plan *p, rigmat_sim_result *r, rigmat_error *err)
{
    const size_t nx = lin->nx, nu = lin->nu, ny = lin->ny, nc = lin->nu_control;
    const size_t nw = nu - nc;
    rigmat_lti *aug = NULL;
    rigmat_dlti *d = NULL;
    rigmat_discretize_ws *ws = NULL;
    rigmat_discretize_opts dopt = rigmat_discretize_opts_default();
    double *dx = NULL, *nxt = NULL, *du = NULL, T, ratio;
    size_t per, nsamp, k, i, j, q;
    rigmat_status st = RIGMAT_OK;

    if (!(o->rate_hz > 0) || !isfinite(o->rate_hz))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the sampled model needs a positive rate");
    T = 1.0 / o->rate_hz;
    ratio = p->step / T;
    if (!(ratio >= 0.5) || fabs(ratio - floor(ratio + 0.5)) > 1e-9 * ratio) {
        RIGMAT_FAIL(err, RIGMAT_EUSAGE,
                "the output step %.9g s is not a whole multiple of the period %.9g s", p->step,
                T);
        rigmat_error_hint(err, "leave --step out (it then equals the period) or pick a "
                "multiple of it");
        return RIGMAT_EUSAGE;
    }
    per = (size_t)floor(ratio + 0.5);
    nsamp = (p->nrows - 1) * per;
    /* [B f0]: the constant f0 enters as a disturbance column held at 1, so
     * its last column of Gd is fd = int_0^T e^{As} ds f0. */
    aug = rigmat_lti_alloc(nx, nu + 1, ny, nc);
    ws = rigmat_discretize_ws_alloc(nx, nu + 1, ny);
    dx = calloc(nx + 1, sizeof *dx);
    nxt = calloc(nx + 1, sizeof *nxt);
    du = calloc(nu + 1, sizeof *du);
    if (aug == NULL || ws == NULL || dx == NULL || nxt == NULL || du == NULL) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory for the sampled simulation");
        goto done;
    }
    gsl_matrix_memcpy(aug->A, lin->A);
    for (i = 0; i < nx; i++) {
        for (j = 0; j < nu; j++)
            gsl_matrix_set(aug->B, i, j, gsl_matrix_get(lin->B, i, j));
        gsl_matrix_set(aug->B, i, nu, vget(lin->f0, i));
    }
    if (ny > 0) {
        gsl_matrix_memcpy(aug->C, lin->C);
        for (i = 0; i < ny; i++)
            for (j = 0; j < nu; j++)
                gsl_matrix_set(aug->D, i, j, gsl_matrix_get(lin->D, i, j));
    }
    dopt.method = RIGMAT_METHOD_ZOH;
    dopt.period_s = T;
    st = rigmat_discretize(aug, &dopt, ws, &d, err);
    if (st != RIGMAT_OK)
        goto done;
    for (i = 0; i < nx; i++)
        dx[i] = cs->offset ? cs->offset[i] : 0.0;
    for (k = 0; k <= nsamp; k++) {
        const double tk = (double)k * T;
        /* the input in effect over [kT, (k+1)T): sampled just after kT */
        for (j = 0; j < nu; j++)
            du[j] = wave_eval_snap(p->waves, p->nwaves, j, tk, p->snap);
        for (q = 0; q < cs->nwaves; q++) {
            const rigmat_wave *w = &cs->waves[q];
            const double kw = floor(w->t0_s / T + 1e-9);
            if (w->kind == RIGMAT_WAVE_IMPULSE && kw == (double)k)
                du[w->input] += w->value / T;
        }
        if (k % per == 0) {
            const size_t row = k / per;
            r->t_s[row] = (double)row * p->step;
            for (i = 0; i < nx; i++)
                r->x[row * nx + i] = vget(lin->x0, i) + dx[i];
            for (j = 0; j < nu; j++)
                r->u[row * nu + j] = vget(lin->u0, j) + du[j];
            linear_output(lin, dx, du, r->y + row * ny);
            r->nrows = row + 1;
        }
        if (k == nsamp)
            break;
        for (i = 0; i < nx; i++) {
            double sum = 0.0;
            for (j = 0; j < nx; j++)
                sum += gsl_matrix_get(d->Ad, i, j) * dx[j];
            for (j = 0; j < nc; j++)
                sum += gsl_matrix_get(d->Bd, i, j) * du[j];
            for (j = 0; j < nw; j++)
                sum += gsl_matrix_get(d->Gd, i, j) * du[nc + j];
            sum += gsl_matrix_get(d->Gd, i, nw);
            nxt[i] = sum;
        }
        memcpy(dx, nxt, nx * sizeof *dx);
        if (!finite_n(dx, nx)) {
            r->stop_time_s = tk;
            st = RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                    "the sampled response is not finite at t = %.9g s", tk + T);
            goto done;
        }
    }
    r->complete = 1;
    r->stop_time_s = (double)(p->nrows - 1) * p->step;
done:
    rigmat_dlti_free(d);
    rigmat_discretize_ws_free(ws);
    rigmat_lti_free(aug);
    free(dx);
    free(nxt);
    free(du);
    return st;
}

/* ---------------------------------------------------------------- entry */

rigmat_status rigmat_simulate(rigmat_system *sys, const rigmat_lti *lin, const rigmat_sim_opts *o,
        const rigmat_sim_case *c, rigmat_sim_result *r, rigmat_error *err)
{
    struct plan p;
    rigmat_status st;
    size_t i;

    if (lin == NULL || o == NULL || c == NULL || r == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "simulate: a required argument is NULL");
    if (lin->nx == 0 || lin->A == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the model has no states to simulate");
    if (c->offset != NULL)
        for (i = 0; i < lin->nx; i++)
            if (!isfinite(c->offset[i]))
                return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "offset %zu is not finite", i);
    st = plan_build(&p, o, lin->nu, c, err);
    if (st != RIGMAT_OK)
        return st;
    st = result_alloc(r, lin->nx, lin->nu, lin->ny, p.nrows, err);
    if (st == RIGMAT_OK) {
        switch (o->model) {
        case RIGMAT_SIM_NONLINEAR:
            st = sim_nonlinear(sys, lin, o, c, &p, r, err);
            break;
        case RIGMAT_SIM_LINEAR:
            st = sim_linear(lin, c, &p, r, err);
            break;
        case RIGMAT_SIM_SAMPLED:
            st = sim_sampled(lin, o, c, &p, r, err);
            break;
        default:
            st = RIGMAT_FAIL(err, RIGMAT_EUSAGE, "unknown simulation model %d", (int)o->model);
        }
    }
    plan_release(&p);
    return st;
}
