/* trim.c - steady states by Gauss-Newton with an SVD step (see trim.h). */
#include "trim.h"
#include "sizes.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_linalg.h>

struct rigmat_trim {
    rigmat_mech *s;
    const rigmat_layout *L;
    size_t np, ne;
    int *p_input;      /* per unknown: 1 when it is an input */
    size_t *p_index;   /* per unknown: canonical state or input */
    size_t *e_index;   /* per equation: canonical state row */
    double *x, *u, *xt, *ut;
    double *A, *B, *f;
    double *r, *J, *dp;
    gsl_matrix *W, *V;
    gsl_vector *S, *work;
    double rank_rtol, res;
    size_t iter;
    int moved;         /* the last step changed the iterate */
    /* the unmet-equation search (see trim.h): one workspace */
    int held;          /* 1: residual and Jacobian of the held form */
    unsigned char *active; /* per equation: 1 when it is held to zero */
    size_t *dropped;   /* equations dropped so far, in order */
    double *xs, *us;   /* the iterate the search starts from */
    double *xb, *ub;   /* the point where the reduced set converged */
};

void rigmat_trim_free(rigmat_trim *t)
{
    if (t == NULL)
        return;
    free(t->p_input); free(t->p_index); free(t->e_index);
    free(t->x); free(t->u); free(t->xt); free(t->ut);
    free(t->A); free(t->B); free(t->f); free(t->r); free(t->J); free(t->dp);
    free(t->active); free(t->dropped);
    free(t->xs); free(t->us); free(t->xb); free(t->ub);
    if (t->W) gsl_matrix_free(t->W);
    if (t->V) gsl_matrix_free(t->V);
    if (t->S) gsl_vector_free(t->S);
    if (t->work) gsl_vector_free(t->work);
    free(t);
}

static int has_unknown(const rigmat_trim *t, int is_input, size_t index)
{
    size_t k;
    for (k = 0; k < t->np; k++)
        if (t->p_input[k] == is_input && t->p_index[k] == index)
            return 1;
    return 0;
}

rigmat_status rigmat_trim_alloc(rigmat_mech *s, const rigmat_namelist *solve,
        double rank_rtol, rigmat_trim **out, rigmat_error *err)
{
    rigmat_trim *t = calloc(1, sizeof *t);
    const rigmat_layout *L = rigmat_mech_canonical(s);
    const size_t maxp = solve->count + L->nx;
    size_t k, big;

    *out = NULL;
    if (t == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    t->s = s;
    t->L = L;
    t->rank_rtol = rank_rtol;
    t->p_input = calloc(maxp + 1, sizeof *t->p_input);
    t->p_index = calloc(maxp + 1, sizeof *t->p_index);
    t->e_index = calloc(L->nx + 1, sizeof *t->e_index);
    t->x = calloc(L->nx + 1, sizeof(double));
    t->u = calloc(L->nu + 1, sizeof(double));
    t->xt = calloc(L->nx + 1, sizeof(double));
    t->ut = calloc(L->nu + 1, sizeof(double));
    t->A = calloc(rigmat_size_mul_add(L->nx, L->nx, 1), sizeof(double));
    t->B = calloc(rigmat_size_mul_add(L->nx, L->nu, 1), sizeof(double));
    t->f = calloc(L->nx + 1, sizeof(double));
    t->xs = calloc(L->nx + 1, sizeof(double));
    t->us = calloc(L->nu + 1, sizeof(double));
    t->xb = calloc(L->nx + 1, sizeof(double));
    t->ub = calloc(L->nu + 1, sizeof(double));
    if (!t->p_input || !t->p_index || !t->e_index || !t->x || !t->u || !t->xt || !t->ut ||
            !t->A || !t->B || !t->f || !t->xs || !t->us || !t->xb || !t->ub)
        goto nomem;
    for (k = 0; k < solve->count; k++) {
        int is_input;
        size_t index;
        if (!rigmat_mech_find_unknown(s, solve->names[k], &is_input, &index)) {
            (void)RIGMAT_FAIL(err, RIGMAT_EMODEL,
                    "operating_point.solve: '%s' names no coordinate, state or input",
                    solve->names[k]);
            rigmat_error_hint(err, "list joint names, state names ('tilt.rate') or input names");
            if (err != NULL && solve->locs != NULL)
                err->where = solve->locs[k];
            rigmat_trim_free(t);
            return RIGMAT_EMODEL;
        }
        if (has_unknown(t, is_input, index))
            continue;
        t->p_input[t->np] = is_input;
        t->p_index[t->np++] = index;
    }
    /* motor currents and shaping states always follow */
    for (k = 0; k < L->nx; k++)
        if ((L->states[k].kind == RIGMAT_SIG_CURRENT || L->states[k].kind == RIGMAT_SIG_SHAPING ||
                    L->states[k].kind == RIGMAT_SIG_FILTERED) &&
                !has_unknown(t, 0, k)) {
            t->p_input[t->np] = 0;
            t->p_index[t->np++] = k;
        }
    for (k = 0; k < L->nx; k++)
        if (rigmat_mech_is_balance_row(s, k))
            t->e_index[t->ne++] = k;
    big = t->ne > t->np ? t->ne : t->np;
    t->r = calloc(t->ne + 1, sizeof(double));
    t->J = calloc(rigmat_size_mul_add(t->ne, t->np, 1), sizeof(double));
    t->dp = calloc(t->np + 1, sizeof(double));
    t->active = malloc(t->ne + 1);
    t->dropped = calloc(t->ne + 1, sizeof *t->dropped);
    if (!t->r || !t->J || !t->dp || !t->active || !t->dropped)
        goto nomem;
    memset(t->active, 1, t->ne + 1);
    if (t->ne > 0 && t->np > 0) {
        const size_t small = t->ne < t->np ? t->ne : t->np;
        t->W = rigmat_matrix_alloc(big, small);
        t->V = rigmat_matrix_alloc(small, small);
        t->S = gsl_vector_alloc(small);
        t->work = gsl_vector_alloc(small);
        if (!t->W || !t->V || !t->S || !t->work)
            goto nomem;
    }
    *out = t;
    return RIGMAT_OK;
nomem:
    rigmat_trim_free(t);
    return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
}

/* Residual and Jacobian at (x, u) into r, J; returns max |r| in *res.  In
 * the held form (t->held) the rows are those of rigmat_mech_held; an
 * equation that is not active gets a zero residual and a zero Jacobian row,
 * so the least-squares step ignores it. */
static rigmat_status evaluate(rigmat_trim *t, const double *x, const double *u, int with_jac,
        double *res, rigmat_error *err)
{
    const size_t nx = t->L->nx, nu = t->L->nu;
    rigmat_status st;
    size_t e, p;

    if (t->held)
        st = rigmat_mech_held(t->s, x, u, t->f, with_jac ? t->A : NULL, with_jac ? t->B : NULL,
                err);
    else if (with_jac)
        st = rigmat_mech_jacobians(t->s, x, u, t->A, t->B, NULL, NULL, t->f, NULL, err);
    else
        st = rigmat_mech_eval_real(t->s, x, u, t->f, NULL, err);
    if (st != RIGMAT_OK)
        return st;
    *res = 0.0;
    for (e = 0; e < t->ne; e++) {
        const size_t row = t->e_index[e];
        if (!t->active[e]) {
            t->r[e] = 0.0;
            if (with_jac)
                for (p = 0; p < t->np; p++)
                    t->J[e * t->np + p] = 0.0;
            continue;
        }
        t->r[e] = t->f[row];
        if (!(fabs(t->r[e]) <= *res))
            *res = fabs(t->r[e]); /* NaN propagates */
        if (with_jac)
            for (p = 0; p < t->np; p++)
                t->J[e * t->np + p] = t->p_input[p] ? t->B[row * nu + t->p_index[p]] :
                                                       t->A[row * nx + t->p_index[p]];
    }
    return RIGMAT_OK;
}

static double norm2(const double *v, size_t n)
{
    double s = 0.0;
    size_t i;
    for (i = 0; i < n; i++)
        s += v[i] * v[i];
    return sqrt(s);
}

rigmat_status rigmat_trim_set(rigmat_trim *t, const double *x, const double *u,
        rigmat_error *err)
{
    memcpy(t->x, x, t->L->nx * sizeof *t->x);
    memcpy(t->u, u, t->L->nu * sizeof *t->u);
    t->iter = 0;
    return evaluate(t, t->x, t->u, 1, &t->res, err);
}

/* SVD of J (ne x np): tall J = W S V^T directly; wide J through J^T.  On
 * return, for tall: W holds U (ne x k), V holds V; for wide: W holds the
 * left factor of J^T (np x k, = right vectors of J), V the right (= left
 * vectors of J).  Returns 1 when J was transposed. */
static rigmat_status svd(rigmat_trim *t, int *wide, rigmat_error *err)
{
    const size_t ne = t->ne, np = t->np;
    size_t i, j;
    int gs;

    *wide = ne < np;
    for (i = 0; i < ne; i++)
        for (j = 0; j < np; j++) {
            if (*wide)
                gsl_matrix_set(t->W, j, i, t->J[i * np + j]);
            else
                gsl_matrix_set(t->W, i, j, t->J[i * np + j]);
        }
    gs = gsl_linalg_SV_decomp(t->W, t->V, t->S, t->work);
    if (gs != 0)
        return RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "trim: the SVD failed (GSL error %d)", gs);
    return RIGMAT_OK;
}

/* Left vectors u_k (length ne) and right vectors v_k (length np) of J. */
static double left_vec(const rigmat_trim *t, int wide, size_t i, size_t k)
{
    return wide ? gsl_matrix_get(t->V, i, k) : gsl_matrix_get(t->W, i, k);
}
static double right_vec(const rigmat_trim *t, int wide, size_t j, size_t k)
{
    return wide ? gsl_matrix_get(t->W, j, k) : gsl_matrix_get(t->V, j, k);
}

static size_t rank_of(const rigmat_trim *t)
{
    const size_t k = t->S->size;
    const double smax = k > 0 ? gsl_vector_get(t->S, 0) : 0.0;
    size_t r = 0;
    while (r < k && gsl_vector_get(t->S, r) > t->rank_rtol * smax && gsl_vector_get(t->S, r) > 0)
        r++;
    return r;
}

rigmat_status rigmat_trim_iterate(rigmat_trim *t, rigmat_error *err)
{
    const size_t nx = t->L->nx, nu = t->L->nu;
    rigmat_status st;
    size_t k, i, j, rk, halvings;
    double lambda = 1.0, r0, r1 = 0.0;
    int wide;

    t->moved = 0;
    if (t->np == 0 || t->ne == 0)
        return RIGMAT_OK;
    st = evaluate(t, t->x, t->u, 1, &t->res, err);
    if (st != RIGMAT_OK)
        return st;
    st = svd(t, &wide, err);
    if (st != RIGMAT_OK)
        return st;
    rk = rank_of(t);
    /* dp = -sum_k v_k (u_k . r) / s_k over the significant singular values:
     * the minimum-norm least-squares step */
    for (j = 0; j < t->np; j++)
        t->dp[j] = 0.0;
    for (k = 0; k < rk; k++) {
        double c = 0.0;
        for (i = 0; i < t->ne; i++)
            c += left_vec(t, wide, i, k) * t->r[i];
        c /= gsl_vector_get(t->S, k);
        for (j = 0; j < t->np; j++)
            t->dp[j] -= c * right_vec(t, wide, j, k);
    }
    r0 = norm2(t->r, t->ne);
    for (halvings = 0; halvings < 40; halvings++) {
        double resmax;
        memcpy(t->xt, t->x, nx * sizeof *t->xt);
        memcpy(t->ut, t->u, nu * sizeof *t->ut);
        for (j = 0; j < t->np; j++) {
            double *dst = t->p_input[j] ? &t->ut[t->p_index[j]] : &t->xt[t->p_index[j]];
            *dst += lambda * t->dp[j];
        }
        st = evaluate(t, t->xt, t->ut, 0, &resmax, NULL);
        if (st == RIGMAT_OK) {
            r1 = norm2(t->r, t->ne);
            if (isfinite(r1) && r1 < r0)
                break;
        }
        lambda *= 0.5;
    }
    t->iter++;
    if (halvings == 40) {
        /* no step reduced |r|: stay, the caller's test decides */
        st = evaluate(t, t->x, t->u, 1, &t->res, err);
        return st;
    }
    memcpy(t->x, t->xt, nx * sizeof *t->x);
    memcpy(t->u, t->ut, nu * sizeof *t->u);
    t->moved = 1;
    (void)r1;
    return evaluate(t, t->x, t->u, 1, &t->res, err);
}

int rigmat_trim_test(const rigmat_trim *t, double tol)
{
    return t->res <= tol;
}

double rigmat_trim_residual(const rigmat_trim *t)
{
    return t->res;
}

const double *rigmat_trim_x(const rigmat_trim *t)
{
    return t->x;
}

const double *rigmat_trim_u(const rigmat_trim *t)
{
    return t->u;
}

static rigmat_status push_name(char ***list, size_t *n, const char *name)
{
    char **nl = realloc(*list, (*n + 1) * sizeof *nl);
    size_t len = strlen(name) + 1;
    if (nl == NULL)
        return RIGMAT_ENOMEM;
    *list = nl;
    nl[*n] = malloc(len);
    if (nl[*n] == NULL)
        return RIGMAT_ENOMEM;
    memcpy(nl[*n], name, len);
    (*n)++;
    return RIGMAT_OK;
}

/* The unit of d(state)/dt: "rad/s" -> "rad/s^2", "1" -> "1/s", "A" -> "A/s". */
static void derivative_unit(const char *unit, char *out, size_t size)
{
    const size_t len = strlen(unit);
    if (len >= 2 && strcmp(unit + len - 2, "/s") == 0)
        snprintf(out, size, "%s^2", unit);
    else
        snprintf(out, size, "%s/s", unit);
}

/* Gauss-Newton on the active equations from t->x, t->u until they meet tol,
 * max_iter steps pass or a step no longer moves; *ok = 1 when they meet it. */
static rigmat_status resolve(rigmat_trim *t, double tol, size_t max_iter, int *ok,
        rigmat_error *err)
{
    rigmat_status st = evaluate(t, t->x, t->u, t->np > 0, &t->res, err);
    size_t it;

    t->moved = 1;
    for (it = 0; st == RIGMAT_OK && !(t->res <= tol) && t->moved && it < max_iter; it++)
        st = rigmat_trim_iterate(t, err);
    *ok = st == RIGMAT_OK && t->res <= tol;
    return st;
}

/* The search of trim.h: on return active[e] == 0 exactly for the unmet
 * equations.  Starts from t->x, t->u (kept in xs, us). */
static rigmat_status search_unmet(rigmat_trim *t, double tol, size_t max_iter, rigmat_error *err)
{
    const size_t nx = t->L->nx, nu = t->L->nu;
    size_t nd = 0, k, e;
    int ok = 0, put_back = 0;
    rigmat_status st;

    memset(t->active, 1, t->ne + 1);
    t->held = 1;
    st = resolve(t, tol, max_iter, &ok, err);
    if (st == RIGMAT_OK && !ok && t->np == 0) {
        /* nothing to solve for: no re-solve can move the point, so the
         * unmet equations are exactly those above the tolerance (and the
         * search below would cost ne evaluations for nothing) */
        for (e = 0; e < t->ne; e++)
            if (!(fabs(t->r[e]) <= tol))
                t->active[e] = 0;
        return st;
    }
    /* drop the worst active equation at the least-squares point of the
     * active set, re-solve from there; each pass drops one, so at most ne */
    while (st == RIGMAT_OK && !ok && nd < t->ne) {
        size_t worst = t->ne;
        double big = -1.0;
        for (e = 0; e < t->ne; e++)
            if (t->active[e] && !(fabs(t->r[e]) <= big)) {
                big = fabs(t->r[e]);
                worst = e;
            }
        if (worst == t->ne)
            break;
        t->active[worst] = 0;
        t->dropped[nd++] = worst;
        st = resolve(t, tol, max_iter, &ok, err);
    }
    if (st != RIGMAT_OK || !ok || nd < 2)
        return st;
    /* minimal: put each dropped equation back once, from the point where
     * the reduced set converged; keep it when the set still converges.  The
     * last one dropped is skipped unless an earlier one came back: without
     * it the set was just seen to fail */
    memcpy(t->xb, t->x, nx * sizeof *t->xb);
    memcpy(t->ub, t->u, nu * sizeof *t->ub);
    for (k = 0; st == RIGMAT_OK && k < nd; k++) {
        if (k + 1 == nd && !put_back)
            break;
        t->active[t->dropped[k]] = 1;
        memcpy(t->x, t->xb, nx * sizeof *t->x);
        memcpy(t->u, t->ub, nu * sizeof *t->u);
        st = resolve(t, tol, max_iter, &ok, err);
        if (st == RIGMAT_OK && ok) {
            put_back = 1;
            memcpy(t->xb, t->x, nx * sizeof *t->xb);
            memcpy(t->ub, t->u, nu * sizeof *t->ub);
        } else {
            t->active[t->dropped[k]] = 0;
        }
    }
    return st;
}

rigmat_status rigmat_trim_diagnose(rigmat_trim *t, double tol, size_t max_iter,
        rigmat_trim_result *res, rigmat_error *err)
{
    const size_t nx = t->L->nx, nu = t->L->nu;
    const size_t iter = t->iter;
    rigmat_status st;
    size_t i, j, k, rk = 0;
    int wide = 0;

    t->held = 0;
    memset(t->active, 1, t->ne + 1);
    st = evaluate(t, t->x, t->u, t->np > 0 && t->ne > 0, &t->res, err);
    if (st != RIGMAT_OK)
        return st;
    if (t->np > 0 && t->ne > 0) {
        st = svd(t, &wide, err);
        if (st != RIGMAT_OK)
            return st;
        rk = rank_of(t);
    }
    /* unknowns: the diagonal of the projector onto the null space of J */
    for (j = 0; j < t->np; j++) {
        double in_row = 0.0;
        for (k = 0; k < rk; k++)
            in_row += right_vec(t, wide, j, k) * right_vec(t, wide, j, k);
        if (1.0 - in_row > 1e-6) {
            const char *name = t->p_input[j] ? t->L->inputs[t->p_index[j]].name :
                                               t->L->states[t->p_index[j]].name;
            if (push_name(&res->free_unknowns, &res->nfree, name) != RIGMAT_OK)
                return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        }
    }
    /* the residual per equation at the point */
    if (t->ne > 0 && res->neq == 0) {
        res->eq_residual = calloc(t->ne, sizeof *res->eq_residual);
        res->eq_state = calloc(t->ne, sizeof *res->eq_state);
        res->eq_unit = calloc(t->ne, sizeof *res->eq_unit);
        if (res->eq_residual == NULL || res->eq_state == NULL || res->eq_unit == NULL)
            return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        res->neq = t->ne;
        for (i = 0; i < t->ne; i++) {
            const rigmat_signal *sg = &t->L->states[t->e_index[i]];
            char unit[40];
            derivative_unit(sg->unit, unit, sizeof unit);
            res->eq_state[i] = malloc(strlen(sg->name) + 1);
            res->eq_unit[i] = malloc(strlen(unit) + 1);
            if (res->eq_state[i] == NULL || res->eq_unit[i] == NULL)
                return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
            memcpy(res->eq_state[i], sg->name, strlen(sg->name) + 1);
            memcpy(res->eq_unit[i], unit, strlen(unit) + 1);
            res->eq_residual[i] = t->r[i];
        }
    }
    if (t->res <= tol)
        return RIGMAT_OK;
    /* equations that cannot be met when the others are (trim.h) */
    memcpy(t->xs, t->x, nx * sizeof *t->xs);
    memcpy(t->us, t->u, nu * sizeof *t->us);
    st = search_unmet(t, tol, max_iter, err);
    for (i = 0; st == RIGMAT_OK && i < t->ne; i++)
        if (!t->active[i]) {
            char buf[160];
            snprintf(buf, sizeof buf, "d(%s)/dt", t->L->states[t->e_index[i]].name);
            if (push_name(&res->unmet_equations, &res->nunmet, buf) != RIGMAT_OK)
                st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        }
    /* back to the iterate, its residual and its Jacobian's SVD */
    t->held = 0;
    memset(t->active, 1, t->ne + 1);
    memcpy(t->x, t->xs, nx * sizeof *t->x);
    memcpy(t->u, t->us, nu * sizeof *t->u);
    t->iter = iter;
    if (st == RIGMAT_OK)
        st = evaluate(t, t->x, t->u, t->np > 0, &t->res, err);
    if (st == RIGMAT_OK && t->np > 0 && t->ne > 0)
        st = svd(t, &wide, err);
    return st;
}

rigmat_status rigmat_trim_run(rigmat_mech *s, const rigmat_model *m, const rigmat_options *opt,
        double *x, double *u, rigmat_trim_result *r, rigmat_error *err)
{
    const rigmat_layout *L = rigmat_mech_canonical(s);
    rigmat_trim *t = NULL;
    rigmat_status st;
    size_t it;

    st = rigmat_trim_alloc(s, &m->op_solve, opt->rank_rtol, &t, err);
    if (st != RIGMAT_OK)
        return st;
    st = rigmat_trim_set(t, x, u, err);
    for (it = 0; st == RIGMAT_OK && !rigmat_trim_test(t, opt->trim_tol) &&
            it < opt->trim_max_iter; it++)
        st = rigmat_trim_iterate(t, err);
    if (st == RIGMAT_OK) {
        memcpy(x, t->x, L->nx * sizeof *x);
        memcpy(u, t->u, L->nu * sizeof *u);
        if (r != NULL) {
            r->iterations = t->iter;
            r->residual = t->res;
            r->converged = rigmat_trim_test(t, opt->trim_tol);
            st = rigmat_trim_diagnose(t, opt->trim_tol, opt->trim_max_iter, r, err);
        }
    }
    if (st == RIGMAT_OK && !rigmat_trim_test(t, opt->trim_tol)) {
        char buf[200];
        size_t k, used = 0;
        buf[0] = '\0';
        for (k = 0; k < t->np && used + 40 < sizeof buf; k++) {
            const double v = t->p_input[k] ? t->u[t->p_index[k]] : t->x[t->p_index[k]];
            const char *nm = t->p_input[k] ? L->inputs[t->p_index[k]].name :
                                             L->states[t->p_index[k]].name;
            int w = snprintf(buf + used, sizeof buf - used, "%s%s = %.6g", k ? ", " : "", nm, v);
            if (w < 0 || (size_t)w >= sizeof buf - used)
                break;
            used += (size_t)w;
        }
        {
            /* the conditioning of the last step's Jacobian, from its SVD */
            const size_t ns = t->S != NULL ? t->S->size : 0;
            const double smax = ns > 0 ? gsl_vector_get(t->S, 0) : 0.0;
            const double smin = ns > 0 ? gsl_vector_get(t->S, ns - 1) : 0.0;
            if (t->np == 0)
                st = RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                        "the operating point is not a steady state and nothing is solved for: "
                        "residual %.3g (tolerance %.3g)", t->res, opt->trim_tol);
            else
                st = RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                        "trim did not converge: residual %.3g after %zu steps (tolerance %.3g); "
                        "Jacobian condition estimate %.3g; last iterate %s", t->res, t->iter,
                        opt->trim_tol, smin > 0.0 ? smax / smin : HUGE_VAL, buf);
        }
        if (t->np == 0)
            rigmat_error_hint(err, "name the unknowns in operating_point.solve (README.md, "
                                   "\"Trim: the residual per equation and the unmet "
                                   "equations\")");
        else
            rigmat_error_hint(err, "start the solved names nearer a steady state, or check that "
                                   "one exists (rigmat trim names the equations it cannot meet)");
    }
    rigmat_trim_free(t);
    return st;
}

/* ------------------------------------------------------------- public */

void rigmat_trim_result_release(rigmat_trim_result *r)
{
    size_t k;
    if (r == NULL)
        return;
    free(r->x);
    free(r->u);
    for (k = 0; k < r->nfree; k++)
        free(r->free_unknowns[k]);
    for (k = 0; k < r->nunmet; k++)
        free(r->unmet_equations[k]);
    for (k = 0; k < r->neq; k++) {
        free(r->eq_state != NULL ? r->eq_state[k] : NULL);
        free(r->eq_unit != NULL ? r->eq_unit[k] : NULL);
    }
    free(r->free_unknowns);
    free(r->unmet_equations);
    free(r->eq_state);
    free(r->eq_unit);
    free(r->eq_residual);
    memset(r, 0, sizeof *r);
}
