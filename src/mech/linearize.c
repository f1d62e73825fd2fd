/* linearize.c - the public nonlinear system in layout order and the
 * linearization at the operating point (see linearize.h). */
#include "invariant.h"
#include "linearize.h"
#include "trim.h"
#include "equations.h"
#include "kinds.h"

#include <math.h>
#include <gsl/gsl_math.h>
#include <stdlib.h>
#include <string.h>

struct rigmat_system {
    const rigmat_model *m;
    rigmat_mech *mech;
    size_t nx, nu, ny;       /* layout sizes */
    size_t cnx, cnu, cny;    /* canonical sizes */
    size_t *xmap, *umap, *ymap; /* layout -> canonical */
    double *xc, *uc, *fc, *yc;  /* canonical scratch */
    double *A, *B, *C, *D;      /* canonical Jacobians */
};

rigmat_mech *rigmat_system_mech(rigmat_system *s)
{
    return s->mech;
}

size_t rigmat_system_state_canon(const rigmat_system *s, size_t k)
{
    return s->xmap[k];
}

size_t rigmat_system_input_canon(const rigmat_system *s, size_t k)
{
    return s->umap[k];
}

void rigmat_system_free(rigmat_system *s)
{
    if (s == NULL)
        return;
    rigmat_mech_free(s->mech);
    free(s->xmap); free(s->umap); free(s->ymap);
    free(s->xc); free(s->uc); free(s->fc); free(s->yc);
    free(s->A); free(s->B); free(s->C); free(s->D);
    free(s);
}

static size_t find_sig(const rigmat_signal *arr, size_t n, rigmat_signal_kind kind, size_t index)
{
    size_t k;
    for (k = 0; k < n; k++)
        if (arr[k].kind == kind && arr[k].index == index)
            return k;
    return RIGMAT_NONE;
}

void rigmat_system_set_base(rigmat_system *s, const double *x_canon)
{
    memcpy(s->xc, x_canon, s->cnx * sizeof *s->xc);
}

/* The system of m without a point: the equations, the maps between the
 * layout and the canonical order, scratch. */
static rigmat_status system_build(const rigmat_model *m, rigmat_system **out, rigmat_error *err)
{
    rigmat_system *s = calloc(1, sizeof *s);
    const rigmat_layout *L = &m->layout, *C;
    rigmat_status st;
    size_t k;

    *out = NULL;
    if (s == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    s->m = m;
    st = rigmat_mech_alloc(m, &s->mech, err);
    if (st != RIGMAT_OK)
        goto fail;
    C = rigmat_mech_canonical(s->mech);
    if (L->nx + L->nu + L->ny == 0 && C->nx + C->nu + C->ny > 0) {
        st = RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the model's layout is not built");
        rigmat_error_hint(err, "call rigmat_layout_build first");
        goto fail;
    }
    s->nx = L->nx;
    s->nu = L->nu;
    s->ny = L->ny;
    s->cnx = C->nx;
    s->cnu = C->nu;
    s->cny = C->ny;
    s->xmap = calloc(s->nx + 1, sizeof *s->xmap);
    s->umap = calloc(s->nu + 1, sizeof *s->umap);
    s->ymap = calloc(s->ny + 1, sizeof *s->ymap);
    s->xc = calloc(s->cnx + 1, sizeof *s->xc);
    s->uc = calloc(s->cnu + 1, sizeof *s->uc);
    s->fc = calloc(s->cnx + 1, sizeof *s->fc);
    s->yc = calloc(s->cny + 1, sizeof *s->yc);
    s->A = calloc(s->cnx * s->cnx + 1, sizeof *s->A);
    s->B = calloc(s->cnx * s->cnu + 1, sizeof *s->B);
    s->C = calloc(s->cny * s->cnx + 1, sizeof *s->C);
    s->D = calloc(s->cny * s->cnu + 1, sizeof *s->D);
    if (!s->xmap || !s->umap || !s->ymap || !s->xc || !s->uc || !s->fc || !s->yc || !s->A ||
            !s->B || !s->C || !s->D) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        goto fail;
    }
    for (k = 0; k < s->nu; k++)
        s->umap[k] = find_sig(C->inputs, C->nu, L->inputs[k].kind, L->inputs[k].index);
    for (k = 0; k < s->nx; k++) {
        const rigmat_signal *sg = &L->states[k];
        if (sg->kind == RIGMAT_SIG_SHAPING)
            s->xmap[k] = sg->index < s->nu ?
                    find_sig(C->states, C->nx, RIGMAT_SIG_SHAPING, s->umap[sg->index]) :
                    RIGMAT_NONE;
        else
            s->xmap[k] = find_sig(C->states, C->nx, sg->kind, sg->index);
    }
    for (k = 0; k < s->ny; k++)
        s->ymap[k] = find_sig(C->outputs, C->ny, L->outputs[k].kind, L->outputs[k].index);
    for (k = 0; k < s->nx + s->nu + s->ny; k++) {
        const size_t v = k < s->nx ? s->xmap[k] :
                         k < s->nx + s->nu ? s->umap[k - s->nx] : s->ymap[k - s->nx - s->nu];
        if (RIGMAT_NEVER(v == RIGMAT_NONE)) {
            st = RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "the layout does not match the model");
            goto fail;
        }
    }
    *out = s;
    return RIGMAT_OK;
fail:
    rigmat_system_free(s);
    return st;
}

/* Set s at the model's operating point as it stands now: the states the
 * layout leaves out must be cyclic coordinates there (a check that reads
 * the point; rigmat_model_check_equations reports every one), then the
 * point itself into s->xc, s->uc. */
static rigmat_status system_at_point(rigmat_system *s, rigmat_error *err)
{
    const rigmat_model *m = s->m;
    const rigmat_layout *C = rigmat_mech_canonical(s->mech);
    rigmat_status st;
    size_t k = 0;

    st = rigmat_mech_next_noncyclic(m, s->mech, &k, err);
    if (st == RIGMAT_OK && k != RIGMAT_NONE) {
        st = RIGMAT_FAIL(err, RIGMAT_EMODEL,
                "the states list leaves out a coordinate that is not cyclic: '%s'",
                C->states[k].name);
        rigmat_error_hint(err,
                "only a coordinate that appears in no equation (cyclic) may be left out");
        if (m->order_states.locs != NULL && err != NULL)
            err->where = m->order_states.locs[0];
    }
    if (st != RIGMAT_OK)
        return st;
    return rigmat_mech_operating_point(s->mech, s->xc, s->uc, err);
}

rigmat_status rigmat_system_alloc(const rigmat_model *m, rigmat_system **out, rigmat_error *err)
{
    rigmat_system *s = NULL;
    rigmat_status st = system_build(m, &s, err);

    *out = NULL;
    if (st == RIGMAT_OK)
        st = system_at_point(s, err);
    if (st != RIGMAT_OK) {
        rigmat_system_free(s);
        return st;
    }
    *out = s;
    return RIGMAT_OK;
}

static void scatter(rigmat_system *s, const double *x, const double *u)
{
    size_t k;
    for (k = 0; k < s->nx; k++)
        s->xc[s->xmap[k]] = x[k];
    for (k = 0; k < s->nu; k++)
        s->uc[s->umap[k]] = u[k];
}

rigmat_status rigmat_system_eval(rigmat_system *s, const double *x, const double *u, double *xdot,
        double *y, rigmat_error *err)
{
    rigmat_status st;
    size_t k;

    if (RIGMAT_NEVER(s == NULL || x == NULL || (u == NULL && s->nu > 0)))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "system: missing argument");
    scatter(s, x, u);
    st = rigmat_mech_eval_real(s->mech, s->xc, s->uc, s->fc, s->yc, err);
    if (st != RIGMAT_OK)
        return st;
    if (xdot != NULL)
        for (k = 0; k < s->nx; k++)
            xdot[k] = s->fc[s->xmap[k]];
    if (y != NULL)
        for (k = 0; k < s->ny; k++)
            y[k] = s->yc[s->ymap[k]];
    return RIGMAT_OK;
}

rigmat_status rigmat_system_coordinates(rigmat_system *s, const double *x, const double *u,
        double *q, rigmat_error *err)
{
    rigmat_mech_view v;
    rigmat_status st;
    size_t j;

    if (RIGMAT_NEVER(s == NULL || x == NULL || q == NULL || (u == NULL && s->nu > 0)))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "system: missing argument");
    scatter(s, x, u);
    st = rigmat_mech_eval_real(s->mech, s->xc, s->uc, s->fc, s->yc, err);
    if (st != RIGMAT_OK)
        return st;
    rigmat_mech_get_view(s->mech, &v);
    for (j = 0; j < s->m->njoints; j++)
        q[j] = v.coord[j] != RIGMAT_NONE ? creal(v.q[v.coord[j]]) : 0.0;
    return RIGMAT_OK;
}

static rigmat_status check_size(const gsl_matrix *M, size_t r, size_t c, const char *name,
        rigmat_error *err)
{
    if (M != NULL && (M->size1 != r || M->size2 != c))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "%s is %zux%zu, expected %zux%zu", name,
                M->size1, M->size2, r, c);
    return RIGMAT_OK;
}

/* Pick the layout's rows and columns out of the canonical Jacobians. */
static void pick(const rigmat_system *s, gsl_matrix *A, gsl_matrix *B, gsl_matrix *C,
        gsl_matrix *D)
{
    size_t i, j;
    for (i = 0; i < s->nx; i++) {
        for (j = 0; j < s->nx && A; j++)
            gsl_matrix_set(A, i, j, s->A[s->xmap[i] * s->cnx + s->xmap[j]]);
        for (j = 0; j < s->nu && B; j++)
            gsl_matrix_set(B, i, j, s->B[s->xmap[i] * s->cnu + s->umap[j]]);
    }
    for (i = 0; i < s->ny; i++) {
        for (j = 0; j < s->nx && C; j++)
            gsl_matrix_set(C, i, j, s->C[s->ymap[i] * s->cnx + s->xmap[j]]);
        for (j = 0; j < s->nu && D; j++)
            gsl_matrix_set(D, i, j, s->D[s->ymap[i] * s->cnu + s->umap[j]]);
    }
}

rigmat_status rigmat_system_jacobians(rigmat_system *s, const double *x, const double *u,
        gsl_matrix *A, gsl_matrix *B, gsl_matrix *C, gsl_matrix *D, rigmat_error *err)
{
    rigmat_status st;

    if (RIGMAT_NEVER(s == NULL || x == NULL || (u == NULL && s->nu > 0)))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "system: missing argument");
    if ((st = check_size(A, s->nx, s->nx, "A", err)) != RIGMAT_OK ||
            (st = check_size(B, s->nx, s->nu, "B", err)) != RIGMAT_OK ||
            (st = check_size(C, s->ny, s->nx, "C", err)) != RIGMAT_OK ||
            (st = check_size(D, s->ny, s->nu, "D", err)) != RIGMAT_OK)
        return st;
    scatter(s, x, u);
    st = rigmat_mech_jacobians(s->mech, s->xc, s->uc, s->A, s->B, s->C, s->D, s->fc, s->yc, err);
    if (st != RIGMAT_OK)
        return st;
    pick(s, A, B, C, D);
    return RIGMAT_OK;
}

/* ------------------------------------------------------------ linearize */

static int all_finite(const gsl_matrix *M)
{
    size_t i, j;
    if (M == NULL)
        return 1;
    for (i = 0; i < M->size1; i++)
        for (j = 0; j < M->size2; j++)
            if (!isfinite(gsl_matrix_get(M, i, j)))
                return 0;
    return 1;
}

static int vec_finite(const gsl_vector *v)
{
    size_t i;
    if (v == NULL)
        return 1;
    for (i = 0; i < v->size; i++)
        if (!isfinite(gsl_vector_get(v, i)))
            return 0;
    return 1;
}

static rigmat_loc rate_loc(const rigmat_model *m, const char *joint)
{
    rigmat_loc none = { NULL, 0, 0 };
    size_t k;
    for (k = 0; k < m->nop_rates; k++)
        if (strcmp(m->op_rates[k].name, joint) == 0)
            return m->op_rates[k].loc;
    return none;
}

/* A coordinate moving at a non-zero rate must not appear in f (cyclic),
 * else the linear model holds only at t = 0: warn. */
static rigmat_status warn_steady_motion(const rigmat_system *s, const rigmat_layout *CL,
        rigmat_diags *w)
{
    const rigmat_model *m = s->m;
    size_t k, r;

    for (k = 0; k < CL->nx; k++) {
        const rigmat_signal *sg = &CL->states[k];
        const rigmat_joint *jt;
        double rate = 0.0;
        size_t kr;
        int moves = 0;
        if (sg->kind != RIGMAT_SIG_COORD)
            continue;
        jt = &m->joints[sg->index];
        kr = find_sig(CL->states, CL->nx, RIGMAT_SIG_RATE, sg->index);
        if (kr != RIGMAT_NONE)
            rate = s->xc[kr];
        else if (jt->driven == RIGMAT_DRIVEN_VELOCITY)
            rate = s->uc[find_sig(CL->inputs, CL->nu, RIGMAT_SIG_DRIVEN, sg->index)];
        if (rate == 0.0)
            continue;
        for (r = 0; r < CL->nx; r++)
            if (s->A[r * CL->nx + k] != 0.0)
                moves = 1;
        if (moves && w != NULL) {
            rigmat_loc none = { NULL, 0, 0 };
            if (rigmat_diags_add(w, RIGMAT_WARNING, rate_loc(m, jt->name), none, NULL,
                        "a steady motion is linearized exactly only along a coordinate that "
                        "appears in no equation (a balancer's travel)",
                        "joint '%s' moves at %.6g %s but its coordinate appears in the "
                        "equations: the model is time-varying along it and holds at t = 0 only",
                        jt->name, rate, rigmat_joint_unit(jt, 1)) !=
                    RIGMAT_OK)
                return RIGMAT_ENOMEM;
        }
    }
    return RIGMAT_OK;
}

/* The winding current per motor of each layout input at the canonical point
 * in s (0 for inputs that are not motors), into cur (length s->nu); mc is
 * scratch of m->nmotors entries (NULL when there are none). */
static rigmat_status input_currents(rigmat_system *s, double *mc, double *cur, rigmat_error *err)
{
    const rigmat_model *m = s->m;
    const rigmat_layout *L = &m->layout;
    rigmat_status st;
    size_t k;

    for (k = 0; k < s->nu; k++)
        cur[k] = 0.0;
    if (m->nmotors == 0)
        return RIGMAT_OK;
    st = rigmat_mech_motor_currents(s->mech, s->xc, s->uc, mc, err);
    for (k = 0; k < s->nu && st == RIGMAT_OK; k++)
        if (L->inputs[k].kind == RIGMAT_SIG_MOTOR)
            cur[k] = mc[L->inputs[k].index];
    return st;
}

/* A value with its unit ("1.83" for a duty, "14.2 V"). */
static void with_unit(char *buf, size_t len, double v, const char *unit)
{
    if (strcmp(unit, "1") == 0)
        snprintf(buf, len, "%.4g", v);
    else
        snprintf(buf, len, "%.4g %s", v, unit);
}

rigmat_status rigmat_limits_check(const rigmat_model *m, const rigmat_signal *inputs, size_t nu,
        const double *u, const double *cur, rigmat_error *err)
{
    size_t k;

    for (k = 0; k < nu; k++) {
        const rigmat_signal *in = &inputs[k];
        char val[48], lo[48], hi[48], lim[112], extra[64];
        const char *what = "input", *hint = "widen its 'limit' if the hardware allows it, or "
                "lower the load";
        extra[0] = '\0';
        if (in->kind == RIGMAT_SIG_MOTOR) {
            const rigmat_motor *mo = &m->motors[in->index];
            what = "drive";
            if (rigmat_drive_kind_desc(mo->drive)->needs_supply) {
                snprintf(extra, sizeof extra, " (supply %.4g V)", mo->supply_v);
                hint = "raise the supply or lower the load";
            } else if (mo->drive == RIGMAT_DRIVE_CURRENT) {
                hint = "a drive with more current, or lower the load";
            } else {
                hint = "a higher drive voltage, or lower the load";
            }
            if (in->current_limit > 0.0 && fabs(cur[k]) > in->current_limit) {
                with_unit(val, sizeof val, fabs(cur[k]), "A");
                with_unit(hi, sizeof hi, in->current_limit, "A");
                (void)RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "the operating point needs %s in "
                        "motor '%s'%s; its current_limit is %s", val, in->name,
                        mo->count > 1 ? " (each of its motors)" : "", hi);
                rigmat_error_hint(err, "lower the load, raise the gear ratio, or choose a "
                        "motor with a larger torque constant");
                if (err != NULL)
                    err->where = mo->loc;
                return RIGMAT_ENUMERIC;
            }
        } else if (in->kind == RIGMAT_SIG_FORCE) {
            what = "force";
        } else if (in->kind == RIGMAT_SIG_DRIVEN) {
            what = "driven joint";
        }
        if (!in->has_limit || (u[k] >= in->limit[0] && u[k] <= in->limit[1]))
            continue;
        with_unit(val, sizeof val, u[k], in->unit);
        if (in->limit[0] == -in->limit[1]) {
            with_unit(lim, sizeof lim, in->limit[1], in->unit);
        } else {
            with_unit(lo, sizeof lo, in->limit[0], in->unit);
            with_unit(hi, sizeof hi, in->limit[1], in->unit);
            snprintf(lim, sizeof lim, "[%s, %s]", lo, hi);
        }
        (void)RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "the operating point needs %s%s of %s '%s'; "
                "its limit is %s%s", strcmp(in->unit, "1") == 0 ? "duty " : "", val, what,
                in->name, lim, extra);
        rigmat_error_hint(err, "%s", hint);
        if (err != NULL)
            err->where = in->kind == RIGMAT_SIG_MOTOR ? m->motors[in->index].loc :
                         in->kind == RIGMAT_SIG_FORCE ? m->forces[in->index].loc :
                                                        m->joints[in->index].loc;
        return RIGMAT_ENUMERIC;
    }
    return RIGMAT_OK;
}

static void fill_noise(const rigmat_model *m, const rigmat_layout *L, rigmat_lti *lti)
{
    size_t k;

    for (k = 0; k < L->nu; k++) {
        const rigmat_signal *in = &L->inputs[k];
        double dens = 0.0;
        if (in->role != RIGMAT_ROLE_DISTURBANCE)
            continue;
        if (in->kind == RIGMAT_SIG_FORCE)
            dens = m->forces[in->index].density;
        else if (in->kind == RIGMAT_SIG_DRIVEN)
            dens = m->joints[in->index].density;
        else if (in->kind == RIGMAT_SIG_BIAS_NOISE) {
            /* b' = w: a random walk N has intensity N^2; Gauss-Markov
             * b' = -b/tau + w of steady sd S has intensity 2 S^2 / tau
             * (R. G. Brown, P. Y. C. Hwang, Introduction to Random Signals
             * and Applied Kalman Filtering, 4th ed. 2012, sec. 2.9 and 3.9) */
            const rigmat_sensor *se = &m->sensors[in->index];
            dens = se->bias_tau_s > 0.0 ? se->bias_sd * sqrt(2.0 / se->bias_tau_s) :
                                          se->bias_walk;
        } else if (in->kind == RIGMAT_SIG_FILTER_NOISE)
            dens = m->sensors[in->index].density; /* before the filter (README.md, "Sensor bias and filter") */
        /* README.md, "Noise convention": density N means intensity Qc = N^2 */
        lti->input_intensity[k] = dens * dens;
    }
    for (k = 0; k < L->ny; k++) {
        const rigmat_sensor *se = &m->sensors[L->outputs[k].index];
        double scale = fabs(se->gain), res, kind_scale;
        /* the kind's noise rule (src/model/kinds.c): an encoder's default
         * resolution and its counts */
        rigmat_sensor_noise_rule(se, &kind_scale, &res);
        if (kind_scale != 1.0)
            scale *= kind_scale;
        lti->output_noise_sd[k] = se->noise * scale;
        /* a filtered sensor's density is process noise of its filter state */
        lti->output_density[k] = se->filter_hz > 0.0 ? 0.0 : se->density * scale;
        lti->output_bandwidth_hz[k] = se->bandwidth_hz;
        lti->output_resolution[k] = res * scale;
    }
}

struct rigmat_linearizer {
    rigmat_system *s;
    rigmat_lti *lti; /* the result of the last run; NULL once taken */
    double *mc;      /* per motor: winding currents (scratch) */
};

void rigmat_linearizer_free(rigmat_linearizer *z)
{
    if (z == NULL)
        return;
    rigmat_system_free(z->s);
    rigmat_lti_free(z->lti);
    free(z->mc);
    free(z);
}

rigmat_status rigmat_linearizer_alloc(const rigmat_model *m, rigmat_linearizer **out,
        rigmat_error *err)
{
    rigmat_linearizer *z;
    const rigmat_layout *L;
    rigmat_status st;

    *out = NULL;
    if (RIGMAT_NEVER(m == NULL))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "linearize: missing argument");
    L = &m->layout;
    z = calloc(1, sizeof *z);
    if (z == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    st = system_build(m, &z->s, err);
    if (st != RIGMAT_OK)
        goto fail;
    /* the system was built from this layout: same sizes, control first */
    if (RIGMAT_NEVER(z->s->nx != L->nx || z->s->nu != L->nu || z->s->ny != L->ny ||
                L->nu_control > L->nu || z->s->cnx < z->s->nx || z->s->cnu < z->s->nu)) {
        st = RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "the layout does not match the system");
        goto fail;
    }
    z->lti = rigmat_lti_alloc(L->nx, L->nu, L->ny, L->nu_control);
    z->mc = calloc(m->nmotors + 1, sizeof *z->mc);
    if (z->lti == NULL || z->mc == NULL ||
            rigmat_lti_set_signals(z->lti, L->states, L->inputs, L->outputs) != RIGMAT_OK) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        goto fail;
    }
    /* the noise figures are the model's constants: none depends on the point */
    fill_noise(m, L, z->lti);
    *out = z;
    return RIGMAT_OK;
fail:
    rigmat_linearizer_free(z);
    return st;
}

rigmat_status rigmat_linearizer_run(rigmat_linearizer *z, const rigmat_options *opt,
        rigmat_diags *warnings, rigmat_error *err)
{
    rigmat_system *s;
    rigmat_lti *lti;
    const rigmat_model *m;
    const rigmat_layout *L, *CL;
    rigmat_status st;
    double residual = 0.0;
    size_t k;

    if (RIGMAT_NEVER(z == NULL || z->lti == NULL || opt == NULL))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "linearize: missing argument");
    s = z->s;
    lti = z->lti;
    m = s->m;
    L = &m->layout;
    CL = rigmat_mech_canonical(s->mech);
    st = system_at_point(s, err);
    if (st != RIGMAT_OK)
        return st;
    if (m->op_solve.count > 0) {
        /* names in solve that the equations leave free keep their given
         * values: say so, as trim does */
        rigmat_trim_result tr;
        memset(&tr, 0, sizeof tr);
        st = rigmat_trim_run(s->mech, m, opt, s->xc, s->uc, &tr, err);
        for (k = 0; st == RIGMAT_OK && warnings != NULL && k < tr.nfree; k++) {
            const rigmat_loc none = { NULL, 0, 0 };
            size_t i;
            rigmat_loc at = none;
            for (i = 0; i < m->op_solve.count; i++) {
                const size_t len = strlen(m->op_solve.names[i]);
                const char next = tr.free_unknowns[k][len < strlen(tr.free_unknowns[k]) ?
                                                        len : strlen(tr.free_unknowns[k])];
                if (strncmp(tr.free_unknowns[k], m->op_solve.names[i], len) == 0 &&
                        (next == '\0' || next == '.'))
                    at = m->op_solve.locs[i];
            }
            if (rigmat_diags_add(warnings, RIGMAT_WARNING, at, none, NULL,
                        "remove it from solve, or give it the value you want (it stays at "
                        "its given value)", "'%s' in solve is not fixed by the equations "
                        "(a cyclic or unreachable coordinate)", tr.free_unknowns[k]) !=
                    RIGMAT_OK)
                st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        }
        rigmat_trim_result_release(&tr);
        if (st != RIGMAT_OK)
            return st;
    }
    st = rigmat_mech_jacobians(s->mech, s->xc, s->uc, s->A, s->B, s->C, s->D, s->fc, s->yc, err);
    if (st != RIGMAT_OK)
        return st;
    st = warn_steady_motion(s, CL, warnings);
    if (st != RIGMAT_OK)
        return RIGMAT_FAIL(err, st, "out of memory");
    for (k = 0; k < CL->nx; k++)
        if (rigmat_mech_is_balance_row(s->mech, k) && fabs(s->fc[k]) > residual)
            residual = fabs(s->fc[k]);
    pick(s, lti->A, lti->B, lti->C, lti->D);
    for (k = 0; k < L->nx; k++) {
        gsl_vector_set(lti->x0, k, s->xc[s->xmap[k]]);
        gsl_vector_set(lti->f0, k, s->fc[s->xmap[k]]);
    }
    for (k = 0; k < L->nu; k++)
        gsl_vector_set(lti->u0, k, s->uc[s->umap[k]]);
    for (k = 0; k < L->ny; k++)
        gsl_vector_set(lti->y0, k, s->yc[s->ymap[k]]);
    lti->residual = residual;
    lti->is_steady = residual <= opt->trim_tol;
    st = input_currents(s, z->mc, lti->input_current, err);
    if (st == RIGMAT_OK && opt->limits_refuse)
        st = rigmat_limits_check(m, L->inputs, L->nu, lti->u0 != NULL ? lti->u0->data : NULL,
                lti->input_current, err);
    if (st != RIGMAT_OK)
        return st;
    if (!isfinite(residual) || !all_finite(lti->A) || !all_finite(lti->B) ||
            !all_finite(lti->C) || !all_finite(lti->D) || !vec_finite(lti->x0) ||
            !vec_finite(lti->u0) || !vec_finite(lti->y0) || !vec_finite(lti->f0)) {
        st = RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "the linear model is not finite (NaN or Inf)");
        rigmat_error_hint(err, "check the model's parameters and operating point");
        return st;
    }
    return RIGMAT_OK;
}

const rigmat_lti *rigmat_linearizer_lti(const rigmat_linearizer *z)
{
    return z->lti;
}

rigmat_status rigmat_linearize(const rigmat_model *m, const rigmat_options *opt, rigmat_lti **out,
        rigmat_diags *warnings, rigmat_error *err)
{
    rigmat_linearizer *z = NULL;
    rigmat_status st;

    if (RIGMAT_NEVER(m == NULL || opt == NULL || out == NULL))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "linearize: missing argument");
    *out = NULL;
    st = rigmat_linearizer_alloc(m, &z, err);
    if (st == RIGMAT_OK)
        st = rigmat_linearizer_run(z, opt, warnings, err);
    if (st == RIGMAT_OK) {
        *out = z->lti;
        z->lti = NULL;
    }
    rigmat_linearizer_free(z);
    return st;
}

rigmat_status rigmat_trim_model(const rigmat_model *m, const rigmat_options *opt,
        rigmat_trim_result *r, rigmat_error *err)
{
    rigmat_system *s = NULL;
    rigmat_status st, st2;
    size_t k;

    memset(r, 0, sizeof *r);
    st = rigmat_system_alloc(m, &s, err);
    if (st != RIGMAT_OK)
        return st;
    r->nx = s->nx;
    r->nu = s->nu;
    r->x = calloc(s->nx + 1, sizeof *r->x);
    r->u = calloc(s->nu + 1, sizeof *r->u);
    if (r->x == NULL || r->u == NULL) {
        rigmat_system_free(s);
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    }
    st = rigmat_trim_run(s->mech, m, opt, s->xc, s->uc, r, err);
    for (k = 0; k < s->nx; k++)
        r->x[k] = s->xc[s->xmap[k]];
    for (k = 0; k < s->nu; k++)
        r->u[k] = s->uc[s->umap[k]];
    if (st == RIGMAT_OK && opt->limits_refuse) {
        double *cur = calloc(s->nu + 1, sizeof *cur), *mc = calloc(m->nmotors + 1, sizeof *mc);
        st = cur == NULL || mc == NULL ? RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory")
                                       : input_currents(s, mc, cur, err);
        if (st == RIGMAT_OK)
            st = rigmat_limits_check(m, m->layout.inputs, s->nu, r->u, cur, err);
        free(cur);
        free(mc);
    }
    st2 = st;
    rigmat_system_free(s);
    return st2;
}

/* ---------------------------------------------------------- sign table */

/* common practice: the sign of a response's first
 * non-vanishing derivative is the sign of its initial motion. */
int rigmat_lti_first_response(const rigmat_lti *l, const double *row, double d, size_t k,
        int *order)
{
    const size_t n = l->nx;
    const double rtol = 1e-11;
    double *v = calloc(n + 1, sizeof *v), *w = calloc(n + 1, sizeof *w);
    int sign = 0;
    size_t r, i, j;

    *order = 0;
    if (d != 0.0) {
        free(v);
        free(w);
        return d > 0 ? 1 : -1;
    }
    if (v == NULL || w == NULL || l->B == NULL) {
        free(v);
        free(w);
        return 0;
    }
    memcpy(v, row, n * sizeof *v);
    for (r = 1; r <= n && sign == 0; r++) {
        double val = 0.0, mag = 0.0;
        for (i = 0; i < n; i++) {
            const double t = v[i] * gsl_matrix_get(l->B, i, k);
            val += t;
            mag += fabs(t);
        }
        if (mag > 0.0 && fabs(val) > rtol * mag) {
            sign = val > 0 ? 1 : -1;
            *order = (int)r;
            break;
        }
        for (j = 0; j < n; j++) {
            double s = 0.0, sm = 0.0;
            for (i = 0; i < n; i++) {
                const double t = v[i] * gsl_matrix_get(l->A, i, j);
                s += t;
                sm += fabs(t);
            }
            w[j] = (sm > 0.0 && fabs(s) > rtol * sm) ? s : 0.0;
        }
        memcpy(v, w, n * sizeof *v);
    }
    free(v);
    free(w);
    return sign;
}
