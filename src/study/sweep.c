/* sweep.c - linear models over a grid (src/study/sweep.h).
 *
 * Each point loads the model afresh with its overrides (the same loader,
 * the same text as a single `linearize --set` run), so the numbers agree
 * exactly; operating-point axes take the fast path of sweep.h instead
 * (the reload cost about 85% of a point).
 * Threads take the next point from a shared counter; each writes only its
 * point's slot of s->data, s->ok and s->reason.
 */
#include "sweep.h"
#include "units.h"
#include "reentrant.h"
#include "load.h"
#include "linearize.h"
#include "invariant.h"
#include "bigmem.h"

#include <errno.h>
#include <math.h>
#include <pthread.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>

static char *dup_str(const char *s)
{
    const size_t n = strlen(s) + 1;
    char *d = malloc(n);

    if (d != NULL)
        memcpy(d, s, n);
    return d;
}

void rigmat_sweep_axis_release(rigmat_sweep_axis *a)
{
    size_t i;

    if (a == NULL)
        return;
    if (a->text != NULL)
        for (i = 0; i < a->count; i++)
            free(a->text[i]);
    free(a->text);
    free(a->si);
    free(a->path);
    free(a->arg);
    memset(a, 0, sizeof *a);
}

/* "-10deg" -> -10 and "deg"; " 2.5 kg " -> 2.5 and "kg".  0 on success. */
static int split_value(const char *s, size_t len, double *v, char *unit, size_t ulen)
{
    char buf[96], *end;
    size_t i, j;

    if (len == 0 || len >= sizeof buf)
        return -1;
    memcpy(buf, s, len);
    buf[len] = '\0';
    errno = 0;
    *v = rigmat_strtod_c(buf, &end);
    if (end == buf || errno == ERANGE || !isfinite(*v))
        return -1;
    while (*end == ' ')
        end++;
    j = strlen(end);
    while (j > 0 && end[j - 1] == ' ')
        j--;
    if (j >= ulen)
        return -1;
    for (i = 0; i < j; i++)
        if (end[i] == '=' || end[i] == ':' || (unsigned char)end[i] < 0x20)
            return -1;
    memcpy(unit, end, j);
    unit[j] = '\0';
    return 0;
}

/* The --set path for a name without a dot: a coordinate (a joint) or an
 * input of the operating point; NULL when it names neither. */
static const char *op_section(const rigmat_model *m, const char *name)
{
    size_t i;

    for (i = 0; i < m->layout.nu; i++)
        if (strcmp(m->layout.inputs[i].name, name) == 0)
            return "operating_point.inputs.";
    if (rigmat_model_joint(m, name) != RIGMAT_NONE)
        return "operating_point.coordinates.";
    return NULL;
}

rigmat_status rigmat_sweep_axis_parse(const char *text, const rigmat_model *base,
        rigmat_sweep_axis *a, rigmat_error *err)
{
    const char *eq = strchr(text, '='), *c1, *c2, *sec;
    char ufrom[32], uto[32], *end, name[128];
    unsigned long count;
    rigmat_quantity q;
    rigmat_error ue;
    size_t i, n;

    memset(a, 0, sizeof *a);
    a->arg = dup_str(text);
    if (a->arg == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    if (eq == NULL || eq == text || (size_t)(eq - text) >= sizeof name) {
        RIGMAT_FAIL(err, RIGMAT_EUSAGE, "--vary '%s': expected PATH=FROM:TO:COUNT", text);
        rigmat_error_hint(err, "e.g. --vary tilt=-10deg:10deg:21 or "
                "--vary bodies.chassis.mass=1kg:3kg:5");
        return RIGMAT_EUSAGE;
    }
    memcpy(name, text, (size_t)(eq - text));
    name[eq - text] = '\0';
    c1 = strchr(eq + 1, ':');
    c2 = c1 != NULL ? strchr(c1 + 1, ':') : NULL;
    if (c2 == NULL || strchr(c2 + 1, ':') != NULL) {
        RIGMAT_FAIL(err, RIGMAT_EUSAGE, "--vary '%s': expected FROM:TO:COUNT after '='", text);
        rigmat_error_hint(err, "e.g. --vary tilt=-10deg:10deg:21");
        return RIGMAT_EUSAGE;
    }
    if (split_value(eq + 1, (size_t)(c1 - eq - 1), &a->from, ufrom, sizeof ufrom) != 0 ||
            split_value(c1 + 1, (size_t)(c2 - c1 - 1), &a->to, uto, sizeof uto) != 0)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "--vary '%s': FROM and TO must be finite numbers "
                "with an optional unit", text);
    if (ufrom[0] != '\0' && uto[0] != '\0' && strcmp(ufrom, uto) != 0) {
        RIGMAT_FAIL(err, RIGMAT_EUSAGE, "--vary '%s': FROM is in '%s' and TO in '%s'", text,
                ufrom, uto);
        rigmat_error_hint(err, "write both ends in one unit (or the unit on one end only)");
        return RIGMAT_EUSAGE;
    }
    snprintf(a->unit, sizeof a->unit, "%s", ufrom[0] != '\0' ? ufrom : uto);
    errno = 0;
    count = strtoul(c2 + 1, &end, 10);
    if (c2[1] < '0' || c2[1] > '9' || *end != '\0' || errno == ERANGE || count == 0 ||
            count > RIGMAT_SWEEP_MAX_POINTS) {
        RIGMAT_FAIL(err, RIGMAT_EUSAGE, "--vary '%s': COUNT must be a whole number from 1 "
                "to %lu", text, RIGMAT_SWEEP_MAX_POINTS);
        return RIGMAT_EUSAGE;
    }
    if (count == 1 && a->from != a->to)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "--vary '%s': one point cannot span FROM to TO",
                text);
    a->count = (size_t)count;
    if (strchr(name, '.') != NULL) {
        a->path = dup_str(name);
    } else {
        sec = op_section(base, name);
        if (sec == NULL) {
            RIGMAT_FAIL(err, RIGMAT_EUSAGE, "--vary '%s': '%s' is neither a coordinate nor "
                    "an input of the model", text, name);
            rigmat_error_hint(err, "give a --set path such as bodies.NAME.mass, or a joint "
                    "or input name");
            return RIGMAT_EUSAGE;
        }
        n = strlen(sec) + strlen(name) + 1;
        a->path = malloc(n);
        if (a->path != NULL)
            snprintf(a->path, n, "%s%s", sec, name);
    }
    a->si = calloc(a->count, sizeof *a->si);
    a->text = calloc(a->count, sizeof *a->text);
    if (a->path == NULL || a->si == NULL || a->text == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    for (i = 0; i < a->count; i++) {
        /* the last value is TO itself, not FROM plus a rounded span */
        double v = a->from;
        char val[96];

        if (a->count > 1 && i + 1 == a->count)
            v = a->to;
        else if (a->count > 1)
            v = a->from + (a->to - a->from) * ((double)i / (double)(a->count - 1));
        snprintf(val, sizeof val, "%.17g%s%s", v, a->unit[0] != '\0' ? " " : "", a->unit);
        n = strlen(a->path) + strlen(val) + 2;
        a->text[i] = malloc(n);
        if (a->text[i] == NULL)
            return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        snprintf(a->text[i], n, "%s=%s", a->path, val);
        memset(&ue, 0, sizeof ue);
        if (rigmat_units_parse(val, &q, &ue) != RIGMAT_OK) {
            RIGMAT_FAIL(err, RIGMAT_EUSAGE, "--vary '%s': %s", text, ue.message);
            if (ue.hint[0] != '\0')
                rigmat_error_hint(err, "%s", ue.hint);
            return RIGMAT_EUSAGE;
        }
        a->si[i] = q.value;
        /* a bare number is read in the field's own SI unit, unknown here */
        if (i == 0 && a->unit[0] != '\0')
            rigmat_units_format_dim(q.dim, a->si_unit, sizeof a->si_unit);
    }
    return RIGMAT_OK;
}

size_t rigmat_sweep_points(const rigmat_sweep_axis *axes, size_t naxes)
{
    size_t n = 1, k;

    for (k = 0; k < naxes; k++) {
        if (axes[k].count == 0 || n > RIGMAT_SWEEP_MAX_POINTS / axes[k].count)
            return 0;
        n *= axes[k].count;
    }
    return n;
}

size_t rigmat_sweep_index(const rigmat_sweep *s, size_t p, size_t k)
{
    size_t j;

    for (j = s->naxes; j-- > k + 1;)
        p /= s->axes[j].count;
    return p % s->axes[k].count;
}

void rigmat_sweep_release(rigmat_sweep *s)
{
    if (s == NULL)
        return;
    free(s->data);
    free(s->ok);
    free(s->reason);
    memset(s, 0, sizeof *s);
}

/* ------------------------------------------------------------ one point */

struct shared {
    const rigmat_model *base;
    const rigmat_sweep_opts *o;
    rigmat_sweep *s;
    pthread_mutex_t lock;
    size_t next, done;
    rigmat_status fatal; /* out of memory in a worker */
    /* the fast path (fast = 1): per axis, its values as the loader reads
     * them (SI) and the setting's section and name; the overrides of the
     * model each thread loads once; that model loaded by the main thread,
     * taken by the first worker */
    int fast;
    double *fsi[RIGMAT_SWEEP_MAX_AXES];
    int fwhich[RIGMAT_SWEEP_MAX_AXES];
    char fname[RIGMAT_SWEEP_MAX_AXES][128];
    const char *tsets[64 + RIGMAT_SWEEP_MAX_AXES];
    size_t ntsets;
    rigmat_model *first;
    /* the reload path: the file parsed with its parts merged, once, or NULL
     * (each point then reads the file) */
    rigmat_load_base *lbase;
};

/* What one thread keeps from point to point. */
struct worker_state {
    rigmat_discretize_ws *ws;
    rigmat_dlti *d;
    /* the fast path: the thread's own model, its linearizer, and per axis
     * the setting its values are written into */
    rigmat_model *m;
    rigmat_linearizer *z;
    rigmat_setting *set[RIGMAT_SWEEP_MAX_AXES];
};

/* m (rows x cols, or zeros when NULL) into dst, row-major: a row at a
 * time from GSL's storage (row-major with its own row stride). */
static void put_matrix(double *dst, const gsl_matrix *m, size_t rows, size_t cols)
{
    size_t i, j;

    if (rows == 0 || cols == 0)
        return;
    if (m == NULL || RIGMAT_NEVER(m->size1 != rows || m->size2 != cols)) {
        for (j = 0; j < rows * cols; j++)
            dst[j] = 0.0;
        return;
    }
    for (i = 0; i < rows; i++)
        memcpy(dst + i * cols, m->data + i * m->tda, cols * sizeof *dst);
}

static void put_vector(double *dst, const gsl_vector *v, size_t n)
{
    size_t i;

    for (i = 0; i < n; i++)
        dst[i] = v != NULL ? v->data[i * v->stride] : 0.0;
}

/* The reason of a point the loader refuses, for an error placed within
 * within (may be NULL). */
static void refused_reason(char *reason, size_t len, const char *within, const char *message)
{
    const char *const parts[] = { "the model is refused: ", within != NULL ? within : "",
        within != NULL ? ": " : "", message };
    size_t used = 0, k, i;

    /* as snprintf would, cutting a long message to the reason's size */
    for (k = 0; k < sizeof parts / sizeof parts[0]; k++)
        for (i = 0; parts[k][i] != '\0' && used + 1 < len; i++)
            reason[used++] = parts[k][i];
    reason[used] = '\0';
}

/* The first error of d as a reason. */
static void diag_reason(char *reason, size_t len, const rigmat_diags *d)
{
    size_t i;

    for (i = 0; i < d->count; i++)
        if (d->items[i].severity == RIGMAT_ERROR) {
            refused_reason(reason, len, d->items[i].within_what, d->items[i].message);
            return;
        }
    snprintf(reason, len, "the model is refused");
}

/* 1 when a step's status st ends the point: running out of memory goes
 * to *rc (it stops the sweep), any other failure gives e's message as the
 * point's reason. */
static int step_failed(rigmat_status st, const rigmat_error *e, char *reason, size_t len,
        rigmat_status *rc)
{
    if (st == RIGMAT_ENOMEM) {
        *rc = st;
        return 1;
    }
    if (st != RIGMAT_OK) {
        snprintf(reason, len, "%s", e->message);
        return 1;
    }
    return 0;
}

/* The point's slot from its linear model l (of model m) and, with a rate,
 * its sampled model: 0 when the point is good, else -1 with the reason
 * written, or RIGMAT_ENOMEM in *rc. */
static int finish_point(struct shared *sh, size_t p, const rigmat_model *m, const rigmat_lti *l,
        struct worker_state *w, rigmat_status *rc)
{
    rigmat_sweep *s = sh->s;
    const rigmat_sweep_opts *o = sh->o;
    char *reason = s->reason[p];
    const size_t reason_len = sizeof s->reason[p];
    rigmat_error e;
    rigmat_status st;
    size_t i, b;

    memset(&e, 0, sizeof e);
    /* a backstop: linearize already refuses a point beyond an input limit
     * (README.md, "Limits"); a duty cycle lies in [-1, 1] whatever it says */
    for (i = 0; i < m->layout.nu; i++) {
        const rigmat_signal *in = &m->layout.inputs[i];
        const double u = gsl_vector_get(l->u0, i);
        if (in->kind == RIGMAT_SIG_MOTOR && m->motors[in->index].drive == RIGMAT_DRIVE_DUTY &&
                !(fabs(u) <= 1.0)) {
            snprintf(reason, reason_len, "input '%s' is %.6g, beyond its duty limit of 1",
                    in->name, u);
            return -1;
        }
    }
    put_matrix(rigmat_sweep_block(s, p, RIGMAT_SB_A), l->A, s->nx, s->nx);
    put_matrix(rigmat_sweep_block(s, p, RIGMAT_SB_B), l->B, s->nx, s->nu);
    put_matrix(rigmat_sweep_block(s, p, RIGMAT_SB_C), l->C, s->ny, s->nx);
    put_matrix(rigmat_sweep_block(s, p, RIGMAT_SB_D), l->D, s->ny, s->nu);
    put_vector(rigmat_sweep_block(s, p, RIGMAT_SB_X0), l->x0, s->nx);
    put_vector(rigmat_sweep_block(s, p, RIGMAT_SB_U0), l->u0, s->nu);
    put_vector(rigmat_sweep_block(s, p, RIGMAT_SB_Y0), l->y0, s->ny);
    if (o->discretize) {
        if (w->ws == NULL) {
            w->ws = rigmat_discretize_ws_alloc(s->nx, s->nu, s->ny);
            if (w->ws == NULL) {
                *rc = RIGMAT_ENOMEM;
                return -1;
            }
        }
        st = rigmat_discretize_reuse(l, &o->dopts, w->ws, &w->d, &e);
        if (step_failed(st, &e, reason, reason_len, rc))
            return -1;
        put_matrix(rigmat_sweep_block(s, p, RIGMAT_SB_AD), w->d->Ad, s->nx, s->nx);
        put_matrix(rigmat_sweep_block(s, p, RIGMAT_SB_BD), w->d->Bd, s->nx, s->nuc);
        put_matrix(rigmat_sweep_block(s, p, RIGMAT_SB_GD), w->d->Gd, s->nx, s->nw);
        put_matrix(rigmat_sweep_block(s, p, RIGMAT_SB_CD), w->d->Cd, s->ny, s->nx);
        put_matrix(rigmat_sweep_block(s, p, RIGMAT_SB_DD), w->d->Dd, s->ny, s->nuc);
        put_matrix(rigmat_sweep_block(s, p, RIGMAT_SB_ED), w->d->Ed, s->ny, s->nw);
    }
    for (b = 0; b < RIGMAT_SB_COUNT; b++) {
        const double *v = rigmat_sweep_block(s, p, b);
        for (i = 0; s->has[b] && i < s->rows[b] * s->cols[b]; i++)
            if (!isfinite(v[i])) {
                snprintf(reason, reason_len, "a result is not finite");
                return -1;
            }
    }
    return 0;
}

double *rigmat_sweep_block(const rigmat_sweep *s, size_t p, size_t b)
{
    return s->data + s->off[b] + p * s->rows[b] * s->cols[b];
}

/* Mark point p good, or failed with its reason (NaN numbers). */
static void mark_point(rigmat_sweep *s, size_t p, int good, rigmat_status rc)
{
    char *reason = s->reason[p];
    size_t i, b;

    if (good) {
        /* reason[0] is already '\0' (calloc, and nothing writes a good
         * point's reason): not touching it keeps the reasons' pages unmapped
         * when every point is good */
        s->ok[p] = 1;
        return;
    }
    s->ok[p] = 0;
    if (reason[0] == '\0')
        snprintf(reason, sizeof s->reason[p], "%s",
                rc == RIGMAT_ENOMEM ? "out of memory" : "failed");
    for (b = 0; b < RIGMAT_SB_COUNT; b++) {
        double *v = rigmat_sweep_block(s, p, b);
        for (i = 0; s->has[b] && i < s->rows[b] * s->cols[b]; i++)
            v[i] = (double)NAN;
    }
}

/* Point p by reloading the model with its overrides: the general path.
 * Returns RIGMAT_ENOMEM only when memory ran out (any other failure marks
 * the point). */
static rigmat_status reload_point(struct shared *sh, size_t p, struct worker_state *w)
{
    rigmat_sweep *s = sh->s;
    const rigmat_sweep_opts *o = sh->o;
    const char *sets[64 + RIGMAT_SWEEP_MAX_AXES];
    char *reason = s->reason[p];
    const size_t reason_len = sizeof s->reason[p];
    rigmat_model *m = NULL;
    rigmat_lti *l = NULL;
    rigmat_diags diags;
    rigmat_error e;
    rigmat_status st, rc = RIGMAT_OK;
    size_t i, k, nsets = 0;
    int good = 0;

    memset(&e, 0, sizeof e);
    for (i = 0; i < o->nsets && i < 64; i++)
        sets[nsets++] = o->sets[i];
    for (k = 0; k < s->naxes; k++)
        sets[nsets++] = s->axes[k].text[rigmat_sweep_index(s, p, k)];
    rigmat_diags_init(&diags);
    diags.max_errors = o->opt->max_errors;
    if (sh->lbase != NULL)
        st = rigmat_model_load_from(sh->lbase, sets, nsets, o->opt, &m, &diags);
    else
        st = rigmat_model_load(o->file, sets, nsets, o->opt, &m, &diags);
    if (st == RIGMAT_OK)
        st = rigmat_model_check_equations(m, &diags);
    if (st == RIGMAT_ENOMEM) {
        rc = st;
        goto out;
    }
    if (st != RIGMAT_OK) {
        diag_reason(reason, reason_len, &diags);
        goto out;
    }
    if (strcmp(m->layout.order_hash, sh->base->layout.order_hash) != 0) {
        snprintf(reason, reason_len, "the values change the model's layout (order hash %s, "
                "not %s)", m->layout.order_hash, sh->base->layout.order_hash);
        goto out;
    }
    st = rigmat_linearize(m, o->opt, &l, NULL, &e);
    if (step_failed(st, &e, reason, reason_len, &rc))
        goto out;
    good = finish_point(sh, p, m, l, w, &rc) == 0;
out:
    mark_point(s, p, good, rc);
    rigmat_lti_free(l);
    rigmat_model_free(m);
    rigmat_diags_release(&diags);
    return rc;
}

/* The thread's model for the fast path: the one the main thread loaded,
 * or its own load of the same overrides; its linearizer, and the setting
 * of each axis.  RIGMAT_ENOMEM, or another status when the load fails
 * (it did not in the main thread: only memory can make it fail here). */
static rigmat_status fast_begin(struct shared *sh, struct worker_state *w)
{
    const rigmat_sweep_opts *o = sh->o;
    rigmat_diags diags;
    rigmat_error e;
    rigmat_status st = RIGMAT_OK;
    size_t k, i;

    pthread_mutex_lock(&sh->lock);
    w->m = sh->first;
    sh->first = NULL;
    pthread_mutex_unlock(&sh->lock);
    if (w->m == NULL) {
        rigmat_diags_init(&diags);
        diags.max_errors = o->opt->max_errors;
        st = rigmat_model_load(o->file, sh->tsets, sh->ntsets, o->opt, &w->m, &diags);
        if (st == RIGMAT_OK)
            st = rigmat_model_check_equations(w->m, &diags);
        rigmat_diags_release(&diags);
        if (st != RIGMAT_OK)
            return st;
    }
    memset(&e, 0, sizeof e);
    st = rigmat_linearizer_alloc(w->m, &w->z, &e);
    if (st != RIGMAT_OK)
        return st;
    for (k = 0; k < sh->s->naxes; k++) {
        rigmat_setting *set = sh->fwhich[k] == 0 ? w->m->op_coordinates :
                              sh->fwhich[k] == 1 ? w->m->op_rates : w->m->op_inputs;
        const size_t n = sh->fwhich[k] == 0 ? w->m->nop_coordinates :
                         sh->fwhich[k] == 1 ? w->m->nop_rates : w->m->nop_inputs;
        for (i = 0; i < n && w->set[k] == NULL; i++)
            if (strcmp(set[i].name, sh->fname[k]) == 0)
                w->set[k] = &set[i];
        if (RIGMAT_NEVER(w->set[k] == NULL)) /* the load wrote every axis's setting */
            return RIGMAT_EINTERNAL;
    }
    return RIGMAT_OK;
}

/* Point p on the thread's loaded model: its values written into the
 * settings, then what reads them, as a load with the point's overrides
 * would: the loader's input-limit check, the equation checks that read
 * the point (a states list), the linearization (trim included) and the
 * rest as reload_point.  Returns as reload_point. */
static rigmat_status fast_point(struct shared *sh, size_t p, struct worker_state *w)
{
    rigmat_sweep *s = sh->s;
    rigmat_model *m = w->m;
    char *reason = s->reason[p];
    const size_t reason_len = sizeof s->reason[p];
    rigmat_error e;
    rigmat_status st, rc = RIGMAT_OK;
    size_t i, k;
    int good = 0;

    for (k = 0; k < s->naxes; k++)
        w->set[k]->value = sh->fsi[k][rigmat_sweep_index(s, p, k)];
    memset(&e, 0, sizeof e);
    for (i = 0; i < m->nop_inputs; i++)
        if (rigmat_load_op_input_outside(m, m->op_inputs[i].name, m->op_inputs[i].value, &e)) {
            refused_reason(reason, reason_len, RIGMAT_LOAD_OP_WORDS, e.message);
            goto out;
        }
    if (m->order_states.count > 0) {
        rigmat_diags diags;
        rigmat_diags_init(&diags);
        diags.max_errors = sh->o->opt->max_errors;
        st = rigmat_model_check_equations(m, &diags);
        if (st != RIGMAT_OK && st != RIGMAT_ENOMEM)
            diag_reason(reason, reason_len, &diags);
        rigmat_diags_release(&diags);
        if (st == RIGMAT_ENOMEM)
            rc = st;
        if (st != RIGMAT_OK)
            goto out;
    }
    st = rigmat_linearizer_run(w->z, sh->o->opt, NULL, &e);
    if (step_failed(st, &e, reason, reason_len, &rc))
        goto out;
    good = finish_point(sh, p, m, rigmat_linearizer_lti(w->z), w, &rc) == 0;
out:
    mark_point(s, p, good, rc);
    return rc;
}

static void *worker(void *arg)
{
    struct shared *sh = arg;
    struct worker_state w;
    size_t p;
    rigmat_status st = RIGMAT_OK;

    memset(&w, 0, sizeof w);
    if (sh->fast) {
        st = fast_begin(sh, &w);
        if (st != RIGMAT_OK) {
            pthread_mutex_lock(&sh->lock);
            sh->fatal = st == RIGMAT_ENOMEM ? st : RIGMAT_EINTERNAL;
            pthread_mutex_unlock(&sh->lock);
        }
    }
    for (;;) {
        pthread_mutex_lock(&sh->lock);
        p = sh->fatal == RIGMAT_OK ? sh->next++ : sh->s->npoints;
        pthread_mutex_unlock(&sh->lock);
        if (p >= sh->s->npoints)
            break;
        st = sh->fast ? fast_point(sh, p, &w) : reload_point(sh, p, &w);
        pthread_mutex_lock(&sh->lock);
        if (st != RIGMAT_OK)
            sh->fatal = st;
        sh->done++;
        if (sh->o->progress != NULL)
            sh->o->progress(sh->o->progress_ctx, sh->done, sh->s->npoints);
        pthread_mutex_unlock(&sh->lock);
    }
    rigmat_linearizer_free(w.z);
    rigmat_model_free(w.m);
    rigmat_dlti_free(w.d);
    rigmat_discretize_ws_free(w.ws);
    return NULL;
}

/* Whether the sweep can take the fast path, and what it needs: every axis
 * an operating-point setting whose every value the loader accepts, no
 * closed loop (the assembly reads the point), and the model loads with
 * the common overrides and, per axis, its first value within the input's
 * limit (so every varied setting exists) with the layout of base.  Sets
 * sh->fast; RIGMAT_ENOMEM, else RIGMAT_OK (fast or not). */
static rigmat_status fast_prepare(struct shared *sh)
{
    const rigmat_sweep_opts *o = sh->o;
    const rigmat_sweep *s = sh->s;
    rigmat_diags diags;
    rigmat_model *m = NULL;
    rigmat_status st;
    size_t i, k;

    sh->fast = 0;
    if (o->reload || sh->base->nclosures > 0)
        return RIGMAT_OK;
    sh->ntsets = 0;
    for (i = 0; i < o->nsets; i++)
        sh->tsets[sh->ntsets++] = o->sets[i];
    for (k = 0; k < s->naxes; k++) {
        const rigmat_sweep_axis *a = &s->axes[k];
        size_t first = a->count;
        sh->fsi[k] = malloc(a->count * sizeof *sh->fsi[k]);
        if (sh->fsi[k] == NULL)
            return RIGMAT_ENOMEM;
        for (i = 0; i < a->count; i++) {
            int which;
            char name[sizeof sh->fname[k]];
            st = rigmat_load_op_value(sh->base, a->text[i], o->opt, &which, name, sizeof name,
                    &sh->fsi[k][i]);
            if (st == RIGMAT_ENOMEM)
                return st;
            if (st != RIGMAT_OK)
                return RIGMAT_OK; /* not a setting, or a value the loader refuses */
            if (i == 0) {
                sh->fwhich[k] = which;
                memcpy(sh->fname[k], name, sizeof name);
            }
            if (first == a->count && (which != 2 ||
                        !rigmat_load_op_input_outside(sh->base, name, sh->fsi[k][i], NULL)))
                first = i;
        }
        if (first == a->count)
            return RIGMAT_OK; /* every value beyond the limit: every point fails */
        sh->tsets[sh->ntsets++] = a->text[first];
    }
    rigmat_diags_init(&diags);
    diags.max_errors = o->opt->max_errors;
    st = rigmat_model_load(o->file, sh->tsets, sh->ntsets, o->opt, &m, &diags);
    if (st == RIGMAT_OK)
        st = rigmat_model_check_equations(m, &diags);
    rigmat_diags_release(&diags);
    if (st == RIGMAT_ENOMEM)
        return st;
    if (st != RIGMAT_OK || strcmp(m->layout.order_hash, sh->base->layout.order_hash) != 0 ||
            m->nclosures > 0) {
        rigmat_model_free(m);
        return RIGMAT_OK;
    }
    sh->first = m;
    sh->fast = 1;
    return RIGMAT_OK;
}

static void fast_release(struct shared *sh)
{
    size_t k;

    for (k = 0; k < RIGMAT_SWEEP_MAX_AXES; k++)
        free(sh->fsi[k]);
    rigmat_model_free(sh->first);
    rigmat_load_base_free(sh->lbase);
}

rigmat_status rigmat_sweep_run(const rigmat_model *base, rigmat_sweep_axis *axes, size_t naxes,
        const rigmat_sweep_opts *o, rigmat_sweep *s, rigmat_error *err)
{
    const rigmat_layout *L = &base->layout;
    pthread_t tid[RIGMAT_SWEEP_MAX_THREADS];
    struct shared sh;
    size_t b, p, nthreads, started = 0, used;

    memset(s, 0, sizeof *s);
    if (naxes > RIGMAT_SWEEP_MAX_AXES)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "at most %d --vary axes", RIGMAT_SWEEP_MAX_AXES);
    if (o->nsets > 64)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "at most 64 --set overrides");
    s->naxes = naxes;
    s->axes = axes;
    s->npoints = rigmat_sweep_points(axes, naxes);
    if (s->npoints == 0) {
        RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the grid has more than %lu points",
                RIGMAT_SWEEP_MAX_POINTS);
        rigmat_error_hint(err, "lower the COUNTs; sweep a larger range in several runs");
        return RIGMAT_EUSAGE;
    }
    s->nx = L->nx;
    s->nu = L->nu;
    s->nuc = L->nu_control;
    s->nw = L->nu - L->nu_control;
    s->ny = L->ny;
    s->rows[RIGMAT_SB_A] = s->nx;  s->cols[RIGMAT_SB_A] = s->nx;
    s->rows[RIGMAT_SB_B] = s->nx;  s->cols[RIGMAT_SB_B] = s->nu;
    s->rows[RIGMAT_SB_C] = s->ny;  s->cols[RIGMAT_SB_C] = s->nx;
    s->rows[RIGMAT_SB_D] = s->ny;  s->cols[RIGMAT_SB_D] = s->nu;
    s->rows[RIGMAT_SB_X0] = s->nx; s->cols[RIGMAT_SB_X0] = 1;
    s->rows[RIGMAT_SB_U0] = s->nu; s->cols[RIGMAT_SB_U0] = 1;
    s->rows[RIGMAT_SB_Y0] = s->ny; s->cols[RIGMAT_SB_Y0] = 1;
    s->rows[RIGMAT_SB_AD] = s->nx; s->cols[RIGMAT_SB_AD] = s->nx;
    s->rows[RIGMAT_SB_BD] = s->nx; s->cols[RIGMAT_SB_BD] = s->nuc;
    s->rows[RIGMAT_SB_GD] = s->nx; s->cols[RIGMAT_SB_GD] = s->nw;
    s->rows[RIGMAT_SB_CD] = s->ny; s->cols[RIGMAT_SB_CD] = s->nx;
    s->rows[RIGMAT_SB_DD] = s->ny; s->cols[RIGMAT_SB_DD] = s->nuc;
    s->rows[RIGMAT_SB_ED] = s->ny; s->cols[RIGMAT_SB_ED] = s->nw;
    for (b = 0; b < RIGMAT_SB_COUNT; b++) {
        s->has[b] = b < RIGMAT_SB_AD || o->discretize;
        if (s->has[b])
            s->stride += s->rows[b] * s->cols[b];
    }
    if (s->stride != 0 && s->npoints > RIGMAT_SWEEP_MAX_DOUBLES / s->stride) {
        RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the sweep would hold %lu points x %lu numbers, more "
                "than %lu", (unsigned long)s->npoints, (unsigned long)s->stride,
                RIGMAT_SWEEP_MAX_DOUBLES);
        rigmat_error_hint(err, "lower the COUNTs; sweep a larger range in several runs");
        return RIGMAT_EUSAGE;
    }
    for (b = 0, used = 0; b < RIGMAT_SB_COUNT; b++) {
        s->off[b] = used;
        if (s->has[b])
            used += s->npoints * s->rows[b] * s->cols[b];
    }
    s->data = malloc((s->npoints * s->stride + 1) * sizeof *s->data);
    rigmat_bigmem_advise(s->data, (s->npoints * s->stride + 1) * sizeof *s->data);
    s->ok = calloc(s->npoints, 1);
    s->reason = calloc(s->npoints, sizeof *s->reason);
    if (s->data == NULL || s->ok == NULL || s->reason == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory for %lu points",
                (unsigned long)s->npoints);
    memset(&sh, 0, sizeof sh);
    sh.base = base;
    sh.o = o;
    sh.s = s;
    if (fast_prepare(&sh) != RIGMAT_OK) {
        fast_release(&sh);
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    }
    s->fast = sh.fast;
    if (!sh.fast && !o->full_reload) {
        /* the reload path reads and parses the file, and merges its parts,
         * once; a file that does not give a clean base is read per point */
        rigmat_diags bd;
        rigmat_status bst;
        rigmat_diags_init(&bd);
        bst = rigmat_load_base_new(o->file, o->opt, &sh.lbase, &bd);
        rigmat_diags_release(&bd);
        if (bst == RIGMAT_ENOMEM) {
            fast_release(&sh);
            return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        }
    }
    if (pthread_mutex_init(&sh.lock, NULL) != 0) {
        fast_release(&sh);
        return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "cannot create a lock");
    }
    nthreads = o->threads < 1 ? 1 : o->threads;
    if (nthreads > RIGMAT_SWEEP_MAX_THREADS)
        nthreads = RIGMAT_SWEEP_MAX_THREADS;
    if (nthreads > s->npoints)
        nthreads = s->npoints;
    if (nthreads == 1) {
        worker(&sh);
    } else {
        for (started = 0; started < nthreads; started++)
            if (pthread_create(&tid[started], NULL, worker, &sh) != 0)
                break;
        if (started == 0)
            worker(&sh); /* no thread could start: do the work here */
        for (p = 0; p < started; p++)
            pthread_join(tid[p], NULL);
    }
    pthread_mutex_destroy(&sh.lock);
    fast_release(&sh);
    if (sh.fatal == RIGMAT_ENOMEM)
        return RIGMAT_FAIL(err, sh.fatal, "out of memory during the sweep");
    if (sh.fatal != RIGMAT_OK)
        return RIGMAT_FAIL(err, sh.fatal, "the sweep's model did not load again in a thread");
    for (p = 0; p < s->npoints; p++)
        s->nfailed += !s->ok[p];
    return RIGMAT_OK;
}
