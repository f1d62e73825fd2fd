/* closure.c - closed kinematic loops: constraint equations, assembly,
 * coordinate partitioning and the reduced dynamics (method and formulas in
 * closure.h).  Complex-step rules as in mechanics.h: every operation on
 * the coordinates is analytic, pivots are chosen on real parts, and the
 * Newton iteration runs on in complex arithmetic until the tangent has
 * converged too. */
#include "closure.h"
#include "invariant.h"
#include "layout.h"
#include "sizes.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_linalg.h>

/* Newton iterations at most, at the operating point and at each evaluation */
#define MAX_ASSEMBLY_ITERATIONS 100
#define MAX_EVAL_ITERATIONS 40

/* per coordinate, its role in the reduced equations */
enum { ROLE_INDEPENDENT = 0, ROLE_DEPENDENT, ROLE_DRIVEN };

struct rigmat_closure_ws {
    const rigmat_model *m;
    size_t n, nc, np, ni;
    unsigned char *role; /* per coordinate */
    size_t *pc, *ic;     /* dependent and independent (free) coordinates */
    double complex *phi, *J, *gam, *LU, *rhs, *T, *g, *MT, *Mr, *r, *Ja, *Jb, *row;
    size_t *perm, *permr;
    double *guess;       /* the last real solution of the dependent coordinates */
};

void rigmat_closure_free(rigmat_closure_ws *w)
{
    if (w == NULL)
        return;
    free(w->role); free(w->pc); free(w->ic);
    free(w->phi); free(w->J); free(w->gam); free(w->LU); free(w->rhs); free(w->T);
    free(w->g); free(w->MT); free(w->Mr); free(w->r); free(w->Ja); free(w->Jb); free(w->row);
    free(w->perm); free(w->permr); free(w->guess);
    free(w);
}

static void *zalloc(size_t n, size_t size, int *bad)
{
    void *p = calloc(n ? n : 1, size);
    if (p == NULL)
        *bad = 1;
    return p;
}

rigmat_status rigmat_closure_alloc(rigmat_mech *s, const rigmat_model *m,
        rigmat_closure_ws **out, rigmat_error *err)
{
    rigmat_closure_ws *w = calloc(1, sizeof *w);
    rigmat_mech_view v;
    int bad = 0;
    size_t c, n, nc;

    *out = NULL;
    if (w == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    rigmat_mech_get_view(s, &v);
    w->m = m;
    n = w->n = v.n;
    nc = w->nc = 2 * m->nclosures;
    w->role = zalloc(n, 1, &bad);
    w->pc = zalloc(n, sizeof(size_t), &bad);
    w->ic = zalloc(n, sizeof(size_t), &bad);
#define CZ(field, count) w->field = zalloc((count), sizeof(double complex), &bad)
    CZ(phi, nc); CZ(J, nc * n); CZ(gam, nc); CZ(LU, nc * nc); CZ(rhs, nc > n ? nc : n);
    CZ(T, n * n); CZ(g, n); CZ(MT, n * n); CZ(Mr, n * n); CZ(r, n); CZ(Ja, 2 * n);
    CZ(Jb, 2 * n); CZ(row, n);
#undef CZ
    w->perm = zalloc(nc, sizeof(size_t), &bad);
    w->permr = zalloc(n, sizeof(size_t), &bad);
    w->guess = zalloc(n, sizeof(double), &bad);
    if (bad) {
        rigmat_closure_free(w);
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    }
    for (c = 0; c < n; c++) {
        const rigmat_joint *jt = &m->joints[v.cjoint[c]];
        if (jt->dependent) {
            w->role[c] = ROLE_DEPENDENT;
            w->guess[w->np] = jt->assembled;
            w->pc[w->np++] = c;
        } else if (jt->driven != RIGMAT_DRIVEN_NONE) {
            w->role[c] = ROLE_DRIVEN;
        } else {
            w->role[c] = ROLE_INDEPENDENT;
            w->ic[w->ni++] = c;
        }
    }
    /* the model's choice made as many dependent coordinates as equations
     * (rigmat_closure_resolve), or none for the tree it assembles on */
    if (RIGMAT_NEVER(w->np != 0 && w->np != nc)) {
        rigmat_closure_free(w);
        return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "%zu dependent coordinates for %zu closure "
                "equations", w->np, nc);
    }
    *out = w;
    return RIGMAT_OK;
}

/* ---------------------------------------------------- the constraints */

/* Phi, its Jacobian J (nc x n) and, when gam is wanted, the
 * velocity-product term (Phi_q qd)_q qd, from the current kinematics. */
static void constraints(rigmat_closure_ws *w, const rigmat_mech *s, int want_gamma)
{
    const rigmat_model *m = w->m;
    const size_t n = w->n;
    size_t k, c;

    for (k = 0; k < m->nclosures; k++) {
        const rigmat_closure *cl = &m->closures[k];
        double complex *r0 = w->J + 2 * k * n, *r1 = w->J + (2 * k + 1) * n;
        double complex p0[2], p1[2], v0[2], v1[2], a0[2], a1[2];

        rigmat_mech_point(s, cl->body[0], cl->at_m[0], p0, w->Ja, v0, a0);
        rigmat_mech_point(s, cl->body[1], cl->at_m[1], p1, w->Jb, v1, a1);
        if (cl->type == RIGMAT_CLOSURE_HINGE) {
            w->phi[2 * k] = p1[0] - p0[0];
            w->phi[2 * k + 1] = p1[1] - p0[1];
            for (c = 0; c < n; c++) {
                r0[c] = w->Jb[c] - w->Ja[c];
                r1[c] = w->Jb[n + c] - w->Ja[n + c];
            }
            if (want_gamma) {
                w->gam[2 * k] = a1[0] - a0[0];
                w->gam[2 * k + 1] = a1[1] - a0[1];
            }
        } else {
            double complex th0, om0, al0, th1, om1, al1, nx, ny, snx, sny, dx, dy, cs, sn;
            rigmat_mech_body(s, cl->body[1], &th1, r1, &om1, &al1);
            rigmat_mech_body(s, cl->body[0], &th0, w->row, &om0, &al0);
            cs = ccos(th0);
            sn = csin(th0);
            /* the line's normal: the axis turned a quarter, into the world */
            nx = cs * -cl->axis[1] - sn * cl->axis[0];
            ny = sn * -cl->axis[1] + cs * cl->axis[0];
            snx = -ny; /* S n */
            sny = nx;
            dx = p1[0] - p0[0];
            dy = p1[1] - p0[1];
            w->phi[2 * k] = nx * dx + ny * dy;
            w->phi[2 * k + 1] = th1 - th0 - cl->angle_rad;
            for (c = 0; c < n; c++) {
                r0[c] = (snx * dx + sny * dy) * w->row[c] + nx * (w->Jb[c] - w->Ja[c]) +
                        ny * (w->Jb[n + c] - w->Ja[n + c]);
                r1[c] -= w->row[c];
            }
            if (want_gamma) {
                w->gam[2 * k] = (al0 * snx - om0 * om0 * nx) * dx +
                        (al0 * sny - om0 * om0 * ny) * dy +
                        2.0 * om0 * (snx * (v1[0] - v0[0]) + sny * (v1[1] - v0[1])) +
                        nx * (a1[0] - a0[0]) + ny * (a1[1] - a0[1]);
                w->gam[2 * k + 1] = al1 - al0;
            }
        }
    }
}

/* LU with partial pivoting on the real parts of a k x k complex matrix
 * (row-major, in place); returns the smallest pivot over the largest
 * entry's magnitude (real parts). */
static double lu_factor(double complex *A, size_t k, size_t *perm)
{
    double amax = 0.0, pmin = HUGE_VAL;
    size_t a, b, j;

    for (a = 0; a < k; a++) {
        perm[a] = a;
        for (b = 0; b < k; b++)
            if (fabs(creal(A[a * k + b])) > amax)
                amax = fabs(creal(A[a * k + b]));
    }
    for (j = 0; j < k; j++) {
        size_t piv = j;
        double best = fabs(creal(A[perm[j] * k + j]));
        for (a = j + 1; a < k; a++)
            if (fabs(creal(A[perm[a] * k + j])) > best) {
                best = fabs(creal(A[perm[a] * k + j]));
                piv = a;
            }
        if (best < pmin)
            pmin = best;
        if (!(best > 0.0))
            return 0.0;
        {
            const size_t t = perm[j];
            perm[j] = perm[piv];
            perm[piv] = t;
        }
        for (a = j + 1; a < k; a++) {
            double complex *ra = A + perm[a] * k;
            const double complex *rj = A + perm[j] * k;
            const double complex l = ra[j] / rj[j];
            ra[j] = l;
            for (b = j + 1; b < k; b++)
                ra[b] -= l * rj[b];
        }
    }
    return amax > 0.0 ? pmin / amax : 0.0;
}

/* Solve with lu_factor's result: x (k) on entry is b, on return the
 * solution; tmp has k entries. */
static void lu_solve(const double complex *A, size_t k, const size_t *perm, double complex *x,
        double complex *tmp)
{
    size_t a, b;

    for (a = 0; a < k; a++) {
        double complex v = x[perm[a]];
        for (b = 0; b < a; b++)
            v -= A[perm[a] * k + b] * tmp[b];
        tmp[a] = v;
    }
    for (a = k; a-- > 0;) {
        double complex v = tmp[a];
        for (b = a + 1; b < k; b++)
            v -= A[perm[a] * k + b] * x[b];
        x[a] = v / A[perm[a] * k + a];
    }
}

static void dependent_block(rigmat_closure_ws *w)
{
    size_t a, b;
    for (a = 0; a < w->nc; a++)
        for (b = 0; b < w->np; b++)
            w->LU[a * w->nc + b] = w->J[a * w->n + w->pc[b]];
}

/* The closure whose equations dominate the residual vector res (nc). */
static size_t worst_closure(const rigmat_closure_ws *w, const double *res)
{
    size_t k, best = 0;
    double bv = -1.0;
    for (k = 0; k < w->m->nclosures; k++) {
        const double v = res[2 * k] * res[2 * k] + res[2 * k + 1] * res[2 * k + 1];
        if (v > bv) {
            bv = v;
            best = k;
        }
    }
    return best;
}

/* The singular values of a real r x c matrix (r >= c) into sv (c),
 * decreasing, and the left singular vector of the smallest into u (r; may
 * be NULL).  RIGMAT_ENOMEM only. */
static rigmat_status real_svd(const double *A, size_t r, size_t c, double *sv, double *u)
{
    gsl_matrix *U = rigmat_matrix_alloc(r, c), *V = rigmat_matrix_alloc(c, c);
    gsl_vector *S = gsl_vector_alloc(c), *work = gsl_vector_alloc(c);
    size_t i, j;
    rigmat_status st = RIGMAT_OK;

    if (U == NULL || V == NULL || S == NULL || work == NULL) {
        st = RIGMAT_ENOMEM;
        goto done;
    }
    for (i = 0; i < r; i++)
        for (j = 0; j < c; j++)
            gsl_matrix_set(U, i, j, A[i * c + j]);
    if (gsl_linalg_SV_decomp(U, V, S, work) != GSL_SUCCESS) {
        for (j = 0; j < c; j++)
            sv[j] = 0.0;
        for (i = 0; i < r && u != NULL; i++)
            u[i] = 0.0;
        goto done;
    }
    for (j = 0; j < c; j++)
        sv[j] = gsl_vector_get(S, j);
    if (u != NULL)
        for (i = 0; i < r; i++)
            u[i] = gsl_matrix_get(U, i, c - 1);
done:
    gsl_matrix_free(U);
    gsl_matrix_free(V);
    gsl_vector_free(S);
    gsl_vector_free(work);
    return st;
}

/* The dead-centre error for the dependent block in w->J (real parts). */
static rigmat_status dead_centre(rigmat_closure_ws *w, const char *when, rigmat_error *err)
{
    const size_t nc = w->nc;
    double A[64], sv[8], u[8], ratio;
    size_t a, b, k;

    if (nc > 8) /* larger loops: report without the numbers' direction */
        return RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "the closed loops are at a dead centre %s: "
                "the dependent coordinates are not fixed by the closures", when);
    for (a = 0; a < nc; a++)
        for (b = 0; b < nc; b++)
            A[a * nc + b] = creal(w->J[a * w->n + w->pc[b]]);
    if (real_svd(A, nc, nc, sv, u) != RIGMAT_OK)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    ratio = sv[0] > 0.0 ? sv[nc - 1] / sv[0] : 0.0;
    k = worst_closure(w, u);
    (void)RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "closure '%s' is at a dead centre %s: the "
            "constraint Jacobian's dependent block has relative singular value %.3g "
            "(smallest %.3g over largest %.3g), below %g", w->m->closures[k].name, when, ratio,
            sv[nc - 1], sv[0], RIGMAT_CLOSURE_SV_RTOL);
    rigmat_error_hint(err, "at a dead centre (toggle) the loop cannot be driven from the "
            "independent coordinates: move them away from it, or choose others with "
            "'independent:'");
    if (err != NULL)
        err->where = w->m->closures[k].loc;
    return RIGMAT_ENUMERIC;
}

rigmat_status rigmat_closure_positions(rigmat_closure_ws *w, rigmat_mech *s, rigmat_error *err)
{
    const size_t nc = w->nc, n = w->n;
    rigmat_mech_view v;
    size_t a, b, it, extra = 0;
    int done = 0;
    double ratio = 0.0;

    rigmat_mech_get_view(s, &v);
    for (b = 0; b < w->np; b++)
        v.q[w->pc[b]] = w->guess[b];
    for (it = 0;; it++) {
        double step = 0.0, qmax = 0.0;
        rigmat_mech_update_kinematics(s);
        constraints(w, s, 0);
        dependent_block(w);
        ratio = lu_factor(w->LU, nc, w->perm);
        if (!(ratio > 1e-14))
            return dead_centre(w, "at this point", err);
        if (done)
            break;
        if (it >= MAX_EVAL_ITERATIONS) {
            double res[8] = { 0 };
            size_t k = 0;
            for (a = 0; a < nc && a < 8; a++)
                res[a] = creal(w->phi[a]);
            if (nc <= 8)
                k = worst_closure(w, res);
            (void)RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "closure '%s' cannot close at this point: "
                    "Newton did not converge in %d iterations", w->m->closures[k].name,
                    MAX_EVAL_ITERATIONS);
            rigmat_error_hint(err, "the independent coordinates have left the range where "
                    "the loop can be assembled (a link cannot reach)");
            if (err != NULL)
                err->where = w->m->closures[k].loc;
            return RIGMAT_ENUMERIC;
        }
        for (a = 0; a < nc; a++)
            w->rhs[a] = -w->phi[a];
        lu_solve(w->LU, nc, w->perm, w->rhs, w->r);
        for (b = 0; b < w->np; b++) {
            v.q[w->pc[b]] += w->rhs[b];
            if (fabs(creal(w->rhs[b])) > step)
                step = fabs(creal(w->rhs[b]));
            if (fabs(creal(v.q[w->pc[b]])) > qmax)
                qmax = fabs(creal(v.q[w->pc[b]]));
        }
        extra = step <= RIGMAT_CLOSURE_STEP_RTOL * (1.0 + qmax) ? extra + 1 : 0;
        done = extra >= 2;
    }
    for (a = 0; a < nc; a++)
        if (!(fabs(creal(w->phi[a])) <= RIGMAT_CLOSURE_RESIDUAL_TOL)) {
            (void)RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "closure '%s' cannot close at this point: "
                    "residual %.3g", w->m->closures[a / 2].name, creal(w->phi[a]));
            if (err != NULL)
                err->where = w->m->closures[a / 2].loc;
            return RIGMAT_ENUMERIC;
        }
    if (!(ratio > RIGMAT_CLOSURE_PIVOT_RTOL))
        return dead_centre(w, "at this point", err);
    for (b = 0; b < w->np; b++)
        w->guess[b] = creal(v.q[w->pc[b]]);
    /* the dependent rates: Phi_d qd_d = -(the other columns) qd */
    for (a = 0; a < nc; a++) {
        double complex t = 0;
        for (b = 0; b < n; b++)
            if (w->role[b] != ROLE_DEPENDENT)
                t -= w->J[a * n + b] * v.qd[b];
        w->rhs[a] = t;
    }
    lu_solve(w->LU, nc, w->perm, w->rhs, w->r);
    for (b = 0; b < w->np; b++)
        v.qd[w->pc[b]] = w->rhs[b];
    rigmat_mech_update_kinematics(s);
    constraints(w, s, 1);
    return RIGMAT_OK;
}

rigmat_status rigmat_closure_accelerations(rigmat_closure_ws *w, rigmat_mech *s,
        rigmat_error *err)
{
    const size_t nc = w->nc, n = w->n, ni = w->ni;
    rigmat_mech_view v;
    size_t a, b, c, k;
    double dmax = 0.0, ratio;

    rigmat_mech_get_view(s, &v);
    /* g: the accelerations at qdd_i = 0 (driven ones as given) */
    for (c = 0; c < n; c++)
        w->g[c] = w->role[c] == ROLE_DRIVEN ? v.qdd[c] : 0;
    for (a = 0; a < nc; a++) {
        double complex t = -w->gam[a];
        for (c = 0; c < n; c++)
            if (w->role[c] == ROLE_DRIVEN)
                t -= w->J[a * n + c] * w->g[c];
        w->rhs[a] = t;
    }
    lu_solve(w->LU, nc, w->perm, w->rhs, w->r);
    for (b = 0; b < w->np; b++)
        w->g[w->pc[b]] = w->rhs[b];
    /* T (n x ni) */
    for (k = 0; k < ni; k++) {
        for (c = 0; c < n; c++)
            w->T[c * ni + k] = c == w->ic[k] ? 1.0 : 0.0;
        for (a = 0; a < nc; a++)
            w->rhs[a] = -w->J[a * n + w->ic[k]];
        lu_solve(w->LU, nc, w->perm, w->rhs, w->r);
        for (b = 0; b < w->np; b++)
            w->T[w->pc[b] * ni + k] = w->rhs[b];
    }
    /* M T, then T' M T and T' (Q - hb - M g) */
    for (c = 0; c < n; c++) {
        double complex mg = 0;
        for (k = 0; k < ni; k++) {
            double complex t = 0;
            for (b = 0; b < n; b++)
                t += v.M[c * n + b] * w->T[b * ni + k];
            w->MT[c * ni + k] = t;
        }
        for (b = 0; b < n; b++)
            mg += v.M[c * n + b] * w->g[b];
        w->row[c] = v.Q[c] - v.hb[c] - mg;
    }
    for (a = 0; a < ni; a++) {
        double complex t = 0;
        for (k = 0; k < ni; k++) {
            double complex mr = 0;
            for (c = 0; c < n; c++)
                mr += w->T[c * ni + a] * w->MT[c * ni + k];
            w->Mr[a * ni + k] = mr;
        }
        for (c = 0; c < n; c++)
            t += w->T[c * ni + a] * w->row[c];
        w->r[a] = t;
        if (creal(w->Mr[a * ni + a]) > dmax)
            dmax = creal(w->Mr[a * ni + a]);
    }
    for (a = 0; a < ni; a++)
        if (!(creal(w->Mr[a * ni + a]) > RIGMAT_MECH_PIVOT_RTOL * dmax)) {
            const rigmat_joint *jt = &w->m->joints[v.cjoint[w->ic[a]]];
            (void)RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "the mass matrix reduced to the "
                    "independent coordinates is singular: coordinate of joint '%s' has no "
                    "inertia (diagonal %.3g of the largest)", jt->name,
                    dmax > 0.0 ? creal(w->Mr[a * ni + a]) / dmax : 0.0);
            rigmat_error_hint(err, "give the bodies of the loop a mass or an inertia");
            if (err != NULL)
                err->where = jt->loc;
            return RIGMAT_ENUMERIC;
        }
    if (ni > 0) {
        ratio = lu_factor(w->Mr, ni, w->permr);
        if (!(ratio > RIGMAT_MECH_PIVOT_RTOL)) {
            const rigmat_joint *jt = &w->m->joints[v.cjoint[w->ic[0]]];
            (void)RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "the mass matrix reduced to the "
                    "independent coordinates is singular (pivot ratio %.3g)", ratio);
            rigmat_error_hint(err, "give the bodies of the loop a mass or an inertia");
            if (err != NULL)
                err->where = jt->loc;
            return RIGMAT_ENUMERIC;
        }
        lu_solve(w->Mr, ni, w->permr, w->r, w->Ja);
    }
    for (c = 0; c < n; c++) {
        double complex t = w->g[c];
        for (k = 0; k < ni; k++)
            t += w->T[c * ni + k] * w->r[k];
        v.qdd[c] = t;
    }
    return RIGMAT_OK;
}

/* ------------------------------------------- assembly at the operating point */

static rigmat_status to_diag(rigmat_diags *d, const rigmat_error *e)
{
    if (d == NULL)
        return e->status;
    if (rigmat_diags_add(d, RIGMAT_ERROR, e->where, e->within, NULL,
                e->hint[0] ? e->hint : NULL, "%s", e->message) != RIGMAT_OK)
        return RIGMAT_ENOMEM;
    return e->status;
}

static int named(const rigmat_namelist *l, const char *name)
{
    size_t i;
    for (i = 0; i < l->count; i++)
        if (strcmp(l->names[i], name) == 0)
            return 1;
    return 0;
}

static const rigmat_setting *op_coordinate(const rigmat_model *m, const char *name)
{
    size_t i;
    for (i = 0; i < m->nop_coordinates; i++)
        if (m->op_coordinates[i].name != NULL && strcmp(m->op_coordinates[i].name, name) == 0)
            return &m->op_coordinates[i];
    return NULL;
}

/* Gauss-Newton with the minimum-norm step (SVD) on the moving loop
 * coordinates mv (nv of them), the others held: from the guesses to the
 * nearest closed configuration.  *iters and *res report it. */
static rigmat_status assemble_op(rigmat_closure_ws *w, rigmat_mech *s, const size_t *mv,
        size_t nv, int *iters, double *res, rigmat_error *err)
{
    const size_t nc = w->nc, n = w->n;
    rigmat_mech_view v;
    double *A = NULL, *sv = NULL, *dq = NULL;
    gsl_matrix *U = NULL, *V = NULL;
    gsl_vector *S = NULL, *work = NULL;
    rigmat_status st = RIGMAT_OK;
    size_t a, b, it;

    rigmat_mech_get_view(s, &v);
    *iters = 0;
    *res = HUGE_VAL;
    if (RIGMAT_NEVER(nv < nc))
        return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "fewer moving coordinates than equations");
    U = rigmat_matrix_alloc(nv, nc);
    V = rigmat_matrix_alloc(nc, nc);
    S = gsl_vector_alloc(nc);
    work = gsl_vector_alloc(nc);
    A = calloc(nc + 1, sizeof *A);
    dq = calloc(nv + 1, sizeof *dq);
    sv = calloc(nc + 1, sizeof *sv);
    if (U == NULL || V == NULL || S == NULL || work == NULL || A == NULL || dq == NULL ||
            sv == NULL) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        goto done;
    }
    for (it = 0; it <= MAX_ASSEMBLY_ITERATIONS; it++) {
        double r = 0.0, step = 0.0, qmax = 0.0, smax;
        rigmat_mech_update_kinematics(s);
        constraints(w, s, 0);
        for (a = 0; a < nc; a++)
            if (!(fabs(creal(w->phi[a])) <= r)) /* a NaN stays */
                r = fabs(creal(w->phi[a]));
        *res = r;
        *iters = (int)it;
        if (it == MAX_ASSEMBLY_ITERATIONS)
            break;
        /* J_v' = U S V': the minimum-norm step is -U S^-1 V' phi */
        if (!isfinite(r))
            break; /* reported as a loop that cannot close */
        for (b = 0; b < nv; b++)
            for (a = 0; a < nc; a++) {
                const double jv = creal(w->J[a * n + mv[b]]);
                if (!isfinite(jv))
                    goto done;
                gsl_matrix_set(U, b, a, jv);
            }
        if (gsl_linalg_SV_decomp(U, V, S, work) != GSL_SUCCESS)
            break;
        smax = gsl_vector_get(S, 0);
        for (a = 0; a < nc; a++) {
            double t = 0.0;
            const double sa = gsl_vector_get(S, a);
            for (b = 0; b < nc; b++)
                t += gsl_matrix_get(V, b, a) * creal(w->phi[b]);
            A[a] = sa > 1e-12 * smax ? t / sa : 0.0;
        }
        for (b = 0; b < nv; b++) {
            double t = 0.0;
            for (a = 0; a < nc; a++)
                t -= gsl_matrix_get(U, b, a) * A[a];
            dq[b] = t;
            if (fabs(t) > step)
                step = fabs(t);
        }
        /* a bounded step keeps a poor guess from jumping branches */
        for (b = 0; b < nv; b++) {
            v.q[mv[b]] += step > 0.5 ? dq[b] * 0.5 / step : dq[b];
            if (fabs(creal(v.q[mv[b]])) > qmax)
                qmax = fabs(creal(v.q[mv[b]]));
        }
        if (step <= 1e-15 * (1.0 + qmax) && r <= RIGMAT_CLOSURE_RESIDUAL_TOL * 1e-3)
            break;
    }
done:
    gsl_matrix_free(U);
    gsl_matrix_free(V);
    gsl_vector_free(S);
    gsl_vector_free(work);
    free(A);
    free(dq);
    free(sv);
    return st;
}

/* The relative singular value of the constraint Jacobian's columns cols
 * (nc of them), and its worst closure. */
static rigmat_status block_ratio(rigmat_closure_ws *w, const size_t *cols, double *ratio,
        double sv_out[2], size_t *worst)
{
    const size_t nc = w->nc;
    double *A = calloc(nc * nc + 1, sizeof *A), *sv = calloc(nc + 1, sizeof *sv);
    double *u = calloc(nc + 1, sizeof *u);
    size_t a, b;
    rigmat_status st = RIGMAT_ENOMEM;

    if (A != NULL && sv != NULL && u != NULL) {
        for (a = 0; a < nc; a++)
            for (b = 0; b < nc; b++)
                A[a * nc + b] = creal(w->J[a * w->n + cols[b]]);
        st = real_svd(A, nc, nc, sv, u);
        if (st == RIGMAT_OK) {
            *ratio = sv[0] > 0.0 ? sv[nc - 1] / sv[0] : 0.0;
            sv_out[0] = sv[nc - 1];
            sv_out[1] = sv[0];
            *worst = worst_closure(w, u);
        }
    }
    free(A);
    free(sv);
    free(u);
    return st;
}

rigmat_status rigmat_closure_resolve(rigmat_model *m, rigmat_diags *d)
{
    rigmat_mech *s = NULL;
    rigmat_closure_ws *w = NULL;
    rigmat_mech_view v;
    rigmat_error e;
    rigmat_status st;
    size_t *loop = NULL, *held = NULL, *mv = NULL, *dep = NULL;
    size_t nl = 0, nh = 0, nv = 0, c, j, k, nc, dof, ngiven = 0, worst = 0;
    int iters = 0;
    double res = 0.0, ratio = 0.0, svs[2] = { 0.0, 0.0 };
    rigmat_independent_how how;

    memset(&e, 0, sizeof e);
    if (!m->closures_pending)
        return RIGMAT_OK;
    st = rigmat_mech_alloc_tree(m, &s, &e);
    if (st == RIGMAT_OK)
        st = rigmat_closure_alloc(s, m, &w, &e);
    if (st != RIGMAT_OK)
        goto fail;
    rigmat_mech_get_view(s, &v);
    nc = w->nc;
    loop = calloc(v.n + 1, sizeof *loop);
    held = calloc(v.n + 1, sizeof *held);
    mv = calloc(v.n + 1, sizeof *mv);
    dep = calloc(v.n + 1, sizeof *dep);
    if (loop == NULL || held == NULL || mv == NULL || dep == NULL) {
        st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
        goto fail;
    }
    /* the operating point's coordinates, the rest 0, at rest */
    for (c = 0; c < v.n; c++) {
        const rigmat_joint *jt = &m->joints[v.cjoint[c]];
        const rigmat_setting *op = op_coordinate(m, jt->name);
        v.q[c] = op != NULL ? op->value : 0.0;
        v.qd[c] = v.qdd[c] = 0;
        if (jt->in_loop) {
            loop[nl++] = c;
            ngiven += op != NULL;
        }
    }
    if (RIGMAT_NEVER(nl <= nc)) {
        st = RIGMAT_FAIL(&e, RIGMAT_EINTERNAL, "the loops have no degree of freedom");
        goto fail;
    }
    dof = nl - nc;
    /* which loop coordinates are held while the loop closes */
    if (m->independent.count > 0)
        how = RIGMAT_INDEPENDENT_NAMED;
    else if (ngiven == dof)
        how = RIGMAT_INDEPENDENT_GIVEN;
    else
        how = RIGMAT_INDEPENDENT_PARTITION;
    for (k = 0; k < nl; k++) {
        const rigmat_joint *jt = &m->joints[v.cjoint[loop[k]]];
        int hold;
        if (how == RIGMAT_INDEPENDENT_NAMED)
            hold = named(&m->independent, jt->name);
        else
            hold = op_coordinate(m, jt->name) != NULL && ngiven <= dof;
        if (hold)
            held[nh++] = loop[k];
        else
            mv[nv++] = loop[k];
    }
    /* a slider closure holds the relative angle at the guesses */
    rigmat_mech_update_kinematics(s);
    for (k = 0; k < m->nclosures; k++)
        if (m->closures[k].type == RIGMAT_CLOSURE_SLIDER) {
            double complex th0, th1, om, al;
            rigmat_mech_body(s, m->closures[k].body[0], &th0, NULL, &om, &al);
            rigmat_mech_body(s, m->closures[k].body[1], &th1, NULL, &om, &al);
            m->closures[k].angle_rad = creal(th1 - th0);
        }
    st = assemble_op(w, s, mv, nv, &iters, &res, &e);
    if (st != RIGMAT_OK)
        goto fail;
    if (!(res <= RIGMAT_CLOSURE_RESIDUAL_TOL)) {
        double r[64] = { 0 };
        for (k = 0; k < nc && k < 64; k++)
            r[k] = creal(w->phi[k]);
        worst = nc <= 64 ? worst_closure(w, r) : 0;
        st = RIGMAT_FAIL(&e, RIGMAT_ENUMERIC, "closure '%s' cannot assemble at the operating "
                "point: a residual of %.3g (m or rad) remains after %d Newton iterations from "
                "the guesses", m->closures[worst].name, res, iters);
        rigmat_error_hint(&e, "check the link lengths and the closure points (the loop must "
                "be able to close at the given coordinates) and the guesses in "
                "operating_point.coordinates");
        e.where = m->closures[worst].loc;
        goto fail;
    }
    /* the dependent coordinates */
    if (how == RIGMAT_INDEPENDENT_PARTITION) {
        /* column-pivoted QR of the loop columns: the first nc pivots are the
         * best-conditioned dependent set (Wehage, Haug 1982) */
        gsl_matrix *A = rigmat_matrix_alloc(nc, nl);
        gsl_vector *tau = gsl_vector_alloc(nc < nl ? nc : nl), *norm = gsl_vector_alloc(nl);
        gsl_permutation *p = gsl_permutation_alloc(nl);
        int signum = 0;
        if (A == NULL || tau == NULL || norm == NULL || p == NULL) {
            gsl_matrix_free(A);
            gsl_vector_free(tau);
            gsl_vector_free(norm);
            gsl_permutation_free(p);
            st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
            goto fail;
        }
        for (j = 0; j < nc; j++)
            for (k = 0; k < nl; k++)
                gsl_matrix_set(A, j, k, creal(w->J[j * v.n + loop[k]]));
        (void)gsl_linalg_QRPT_decomp(A, tau, p, &signum, norm);
        for (k = 0; k < nc; k++)
            dep[k] = loop[gsl_permutation_get(p, k)];
        gsl_matrix_free(A);
        gsl_vector_free(tau);
        gsl_vector_free(norm);
        gsl_permutation_free(p);
        /* file order among the dependent ones */
        for (k = 1; k < nc; k++)
            for (j = k; j > 0 && dep[j - 1] > dep[j]; j--) {
                const size_t t = dep[j];
                dep[j] = dep[j - 1];
                dep[j - 1] = t;
            }
    } else {
        for (k = 0; k < nv; k++)
            dep[k] = mv[k];
        if (RIGMAT_NEVER(nv != nc)) {
            st = RIGMAT_FAIL(&e, RIGMAT_EINTERNAL, "%zu moving coordinates for %zu equations",
                    nv, nc);
            goto fail;
        }
    }
    st = block_ratio(w, dep, &ratio, svs, &worst);
    if (st != RIGMAT_OK) {
        st = RIGMAT_FAIL(&e, RIGMAT_ENOMEM, "out of memory");
        goto fail;
    }
    if (!(ratio >= RIGMAT_CLOSURE_SV_RTOL)) {
        st = RIGMAT_FAIL(&e, RIGMAT_ENUMERIC, "closure '%s' is at a dead centre at the "
                "operating point: the constraint Jacobian's dependent block has relative "
                "singular value %.3g (smallest %.3g over largest %.3g), below %g",
                m->closures[worst].name, ratio, svs[0], svs[1], RIGMAT_CLOSURE_SV_RTOL);
        rigmat_error_hint(&e, "at a dead centre (toggle) the loop cannot be moved by its "
                "independent coordinates: move the operating point away from it%s",
                how == RIGMAT_INDEPENDENT_PARTITION ? "" :
                ", or name other coordinates in 'independent:'");
        e.where = m->closures[worst].loc;
        goto fail;
    }
    for (k = 0; k < nl; k++) {
        rigmat_joint *jt = &m->joints[v.cjoint[loop[k]]];
        jt->assembled = creal(v.q[loop[k]]);
        jt->dependent = 0;
    }
    for (k = 0; k < nc; k++)
        m->joints[v.cjoint[dep[k]]].dependent = 1;
    m->independent_how = how;
    m->closure_sv_ratio = ratio;
    m->closure_residual = res;
    m->closure_iterations = iters;
    m->closures_pending = 0;
    rigmat_closure_free(w);
    rigmat_mech_free(s);
    w = NULL;
    s = NULL;
    /* `solve` cannot name a dependent coordinate */
    for (k = 0; k < m->op_solve.count; k++) {
        char base[128];
        const char *nm = m->op_solve.names[k], *dot = strrchr(nm, '.');
        snprintf(base, sizeof base, "%s", nm);
        if (dot != NULL && (size_t)(dot - nm) < sizeof base)
            base[dot - nm] = '\0';
        j = rigmat_model_joint(m, base);
        if (j != RIGMAT_NONE && m->joints[j].dependent && d != NULL) {
            if (rigmat_diags_add(d, RIGMAT_ERROR, m->op_solve.locs[k], (rigmat_loc){ NULL, 0, 0 },
                        NULL, "name an independent coordinate of the loop, or choose the "
                        "independent ones with 'independent:'", "'%s' is a dependent coordinate "
                        "of a closed loop: it follows from the closures and cannot be solved "
                        "for", nm) != RIGMAT_OK)
                st = RIGMAT_ENOMEM;
            else
                st = RIGMAT_EMODEL;
        }
    }
    if (st == RIGMAT_OK)
        st = rigmat_layout_build(m, d);
    free(loop);
    free(held);
    free(mv);
    free(dep);
    return st;
fail:
    rigmat_closure_free(w);
    rigmat_mech_free(s);
    free(loop);
    free(held);
    free(mv);
    free(dep);
    return to_diag(d, &e);
}
