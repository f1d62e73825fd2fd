/* modes.c - eigenvalues, shares, PBH reach and sight, channel zeros and DC
 * gain of a continuous linear model.  Method and tolerances: modes.h. */
#include "modes.h"

#include <math.h>
#include <stdarg.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_complex_math.h>
#include <gsl/gsl_eigen.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_math.h>

/* Osborne's iteration stops when no scale moves by more than this (as a
 * log) in a sweep, or after this many sweeps.  It converges linearly, fast
 * at first and then at a rate near 0.96 per sweep on the twin pendulums,
 * so the step must be far below the accuracy wanted (1e-14 leaves about
 * 1e-12: left and right pendulum scales then agree). */
#define BALANCE_STEP_TOL   1e-14
#define BALANCE_MAX_SWEEPS 10000
/* Points on the circle for the DC gain at a cancelled pole at 0, and the
 * radius as a fraction of the nearest non-zero pole or zero (modes.h). */
#define DC_CIRCLE_POINTS   32
#define DC_CIRCLE_FRACTION 0.1

rigmat_modes_settings rigmat_modes_settings_default(void)
{
    rigmat_modes_settings s;

    s.rtol = 1e-10;
    s.null_rtol = 1e-8;
    s.cluster_rtol = 1e-7;
    s.stab_rtol = 1e-6;
    s.inf_rtol = 1e-10;
    s.share_min = 0.01;
    /* Cost limit.  Each mode costs three singular value decompositions of
     * 2n-by-2n real matrices and each input/output channel a generalized
     * eigenvalue problem of order n + 1, so the work grows as
     * n^3 (n + nu ny).  Measured on the shared 2-core build machine (one
     * OpenBLAS thread, 2026-12-02): hinge chains without inputs, 100
     * states 0.4 s, 150 states 1.7 s, 200 states 6.9 s CPU.  1e9 is about
     * 178 states without channels: a few seconds. */
    s.max_work = 1e9;
    return s;
}

const char *rigmat_stability_name(rigmat_stability s)
{
    switch (s) {
    case RIGMAT_STABLE:
        return "stable";
    case RIGMAT_MARGINAL:
        return "marginal";
    case RIGMAT_UNSTABLE:
        return "unstable";
    }
    return "unknown";
}

/* ------------------------------------------------------------ names */

enum sig_side { SIDE_STATE, SIDE_INPUT, SIDE_OUTPUT };

/* The one place that reads signal names from an lti (its plain signal
 * lists); "x1", "u1", "y1" ... when the lti carries none. */
static const char *lti_name(const rigmat_lti *l, enum sig_side side, size_t i)
{
    switch (side) {
    case SIDE_STATE:
        return l->states != NULL && i < l->nx ? l->states[i].name : NULL;
    case SIDE_INPUT:
        return l->inputs != NULL && i < l->nu ? l->inputs[i].name : NULL;
    case SIDE_OUTPUT:
        return l->outputs != NULL && i < l->ny ? l->outputs[i].name : NULL;
    }
    return NULL;
}

static char **copy_names(const rigmat_lti *l, enum sig_side side, size_t n)
{
    static const char prefix[] = { 'x', 'u', 'y' };
    char **v = calloc(n ? n : 1, sizeof *v);
    size_t i;

    if (v == NULL)
        return NULL;
    for (i = 0; i < n; i++) {
        const char *s = lti_name(l, side, i);
        char buf[32];
        size_t len;

        if (s == NULL) {
            snprintf(buf, sizeof buf, "%c%zu", prefix[side], i + 1);
            s = buf;
        }
        len = strlen(s);
        v[i] = malloc(len + 1);
        if (v[i] == NULL)
            goto fail;
        memcpy(v[i], s, len + 1);
    }
    return v;
fail:
    for (i = 0; i < n; i++)
        free(v[i]);
    free(v);
    return NULL;
}

static void free_names(char **v, size_t n)
{
    size_t i;

    if (v == NULL)
        return;
    for (i = 0; i < n; i++)
        free(v[i]);
    free(v);
}

/* ------------------------------------------------------------ lifetime */

static void mode_release(rigmat_mode *m)
{
    free(m->reached_by);
    free(m->seen_by);
    free(m->reach);
    free(m->sight);
    free(m->share);
    free(m->by_share);
}

void rigmat_modes_free(rigmat_modes *md)
{
    size_t i;

    if (md == NULL)
        return;
    if (md->modes != NULL)
        for (i = 0; i < md->nx; i++)
            mode_release(&md->modes[i]);
    free(md->modes);
    if (md->zeros != NULL)
        for (i = 0; i < md->nu * md->ny; i++) {
            free(md->zeros[i].re);
            free(md->zeros[i].im);
        }
    free(md->zeros);
    gsl_matrix_free(md->dc_gain);
    free(md->scale);
    free(md->balanced);
    free_names(md->state_names, md->nx);
    free_names(md->input_names, md->nu);
    free_names(md->output_names, md->ny);
    free(md);
}

static rigmat_modes *modes_alloc(const rigmat_lti *l)
{
    rigmat_modes *md = calloc(1, sizeof *md);
    const size_t nx = l->nx, nu = l->nu, ny = l->ny;
    size_t i;

    if (md == NULL)
        return NULL;
    md->nx = nx;
    md->nu = nu;
    md->ny = ny;
    md->nu_control = l->nu_control;
    md->state_names = copy_names(l, SIDE_STATE, nx);
    md->input_names = copy_names(l, SIDE_INPUT, nu);
    md->output_names = copy_names(l, SIDE_OUTPUT, ny);
    md->scale = calloc(nx ? nx : 1, sizeof *md->scale);
    md->balanced = calloc(nx ? nx : 1, 1);
    md->modes = calloc(nx ? nx : 1, sizeof *md->modes);
    md->zeros = calloc(nu > 0 && ny > 0 ? nu * ny : 1, sizeof *md->zeros);
    if (md->state_names == NULL || md->input_names == NULL || md->output_names == NULL ||
        md->scale == NULL || md->balanced == NULL || md->modes == NULL || md->zeros == NULL)
        goto fail;
    if (nu > 0 && ny > 0) {
        md->dc_gain = gsl_matrix_calloc(ny, nu);
        if (md->dc_gain == NULL)
            goto fail;
    }
    for (i = 0; i < nx; i++) {
        rigmat_mode *m = &md->modes[i];

        m->reached_by = calloc(nu ? nu : 1, 1);
        m->seen_by = calloc(ny ? ny : 1, 1);
        m->reach = calloc(nu ? nu : 1, sizeof *m->reach);
        m->sight = calloc(ny ? ny : 1, sizeof *m->sight);
        m->share = calloc(nx, sizeof *m->share);
        m->by_share = calloc(nx, sizeof *m->by_share);
        if (m->reached_by == NULL || m->seen_by == NULL || m->reach == NULL || m->sight == NULL ||
            m->share == NULL || m->by_share == NULL)
            goto fail;
    }
    return md;
fail:
    rigmat_modes_free(md);
    return NULL;
}

/* ------------------------------------------------------------ workspace */

/* Scratch for one analysis, sized from nx, nu, ny once. */
struct ws {
    size_t n, q;               /* nx; max(nu, ny) */
    gsl_matrix *Ab;            /* n x n balanced A */
    gsl_matrix *Bs, *Cs;       /* S^-1 B (n x nu), C S (ny x n), unnormalized */
    gsl_matrix *Bn, *Cn;       /* the same with unit columns / rows */
    double *bnorm, *cnorm;     /* the norms taken out */
    gsl_matrix *Mr, *Mi;       /* (n + q) x (n + q) parts of a complex matrix */
    gsl_matrix *E;             /* 2(n + q) x 2n embedded, then U */
    gsl_matrix *E1;            /* 2n x 2n embedded A_b - sI, then U */
    gsl_matrix *V, *V1;        /* 2n x 2n */
    gsl_vector *S, *S1, *work; /* 2n */
    gsl_matrix *eigA;          /* n x n copy for the eigen solver */
    gsl_vector_complex *eval;
    gsl_matrix_complex *evec;
    gsl_eigen_nonsymmv_workspace *eig;
    gsl_matrix *P, *Q; /* (n + 1) x (n + 1) pencil */
    gsl_vector_complex *alpha;
    gsl_vector *beta;
    gsl_eigen_gen_workspace *gen;
    gsl_matrix_complex *Z; /* n x n: s I - A_b, then its LU */
    gsl_permutation *perm;
    gsl_vector_complex *rhs, *sol;
    double *tv, *tv2; /* n */
    double *hv, *ht;  /* n + 1 */
    size_t *order;    /* n */
};

static void ws_free(struct ws *w)
{
    gsl_matrix *const m[] = { w->Ab, w->Bs, w->Cs, w->Bn, w->Cn,   w->Mr, w->Mi,
                              w->E,  w->E1, w->V,  w->V1, w->eigA, w->P,  w->Q };
    gsl_vector *const v[] = { w->S, w->S1, w->work, w->beta };
    size_t i;

    for (i = 0; i < sizeof m / sizeof m[0]; i++)
        gsl_matrix_free(m[i]);
    for (i = 0; i < sizeof v / sizeof v[0]; i++)
        gsl_vector_free(v[i]);
    gsl_vector_complex_free(w->eval);
    gsl_matrix_complex_free(w->evec);
    if (w->eig != NULL)
        gsl_eigen_nonsymmv_free(w->eig);
    gsl_vector_complex_free(w->alpha);
    if (w->gen != NULL)
        gsl_eigen_gen_free(w->gen);
    gsl_matrix_complex_free(w->Z);
    gsl_permutation_free(w->perm);
    gsl_vector_complex_free(w->rhs);
    gsl_vector_complex_free(w->sol);
    free(w->bnorm);
    free(w->cnorm);
    free(w->tv);
    free(w->tv2);
    free(w->hv);
    free(w->ht);
    free(w->order);
}

/* Returns 0 when out of memory (w then holds what was allocated). */
static int ws_alloc(struct ws *w, size_t n, size_t nu, size_t ny)
{
    const size_t q = nu > ny ? nu : ny;
    const size_t q1 = q ? q : 1, nu1 = nu ? nu : 1, ny1 = ny ? ny : 1;

    memset(w, 0, sizeof *w);
    w->n = n;
    w->q = q;
    w->Ab = gsl_matrix_alloc(n, n);
    w->Bs = gsl_matrix_calloc(n, nu1);
    w->Cs = gsl_matrix_calloc(ny1, n);
    w->Bn = gsl_matrix_calloc(n, nu1);
    w->Cn = gsl_matrix_calloc(ny1, n);
    w->bnorm = calloc(nu1, sizeof *w->bnorm);
    w->cnorm = calloc(ny1, sizeof *w->cnorm);
    w->Mr = gsl_matrix_alloc(n + q1, n + q1);
    w->Mi = gsl_matrix_alloc(n + q1, n + q1);
    w->E = gsl_matrix_alloc(2 * (n + q1), 2 * n);
    w->E1 = gsl_matrix_alloc(2 * n, 2 * n);
    w->V = gsl_matrix_alloc(2 * n, 2 * n);
    w->V1 = gsl_matrix_alloc(2 * n, 2 * n);
    w->S = gsl_vector_alloc(2 * n);
    w->S1 = gsl_vector_alloc(2 * n);
    w->work = gsl_vector_alloc(2 * n);
    w->eigA = gsl_matrix_alloc(n, n);
    w->eval = gsl_vector_complex_alloc(n);
    w->evec = gsl_matrix_complex_alloc(n, n);
    w->eig = gsl_eigen_nonsymmv_alloc(n);
    w->P = gsl_matrix_alloc(n + 1, n + 1);
    w->Q = gsl_matrix_alloc(n + 1, n + 1);
    w->alpha = gsl_vector_complex_alloc(n + 1);
    w->beta = gsl_vector_alloc(n + 1);
    w->gen = gsl_eigen_gen_alloc(n + 1);
    w->Z = gsl_matrix_complex_alloc(n, n);
    w->perm = gsl_permutation_alloc(n);
    w->rhs = gsl_vector_complex_alloc(n);
    w->sol = gsl_vector_complex_alloc(n);
    w->tv = calloc(n, sizeof *w->tv);
    w->tv2 = calloc(n, sizeof *w->tv2);
    w->hv = calloc(n + 1, sizeof *w->hv);
    w->ht = calloc(n + 1, sizeof *w->ht);
    w->order = calloc(n, sizeof *w->order);
    return w->Ab && w->Bs && w->Cs && w->Bn && w->Cn && w->bnorm && w->cnorm && w->Mr && w->Mi &&
           w->E && w->E1 && w->V && w->V1 && w->S && w->S1 && w->work && w->eigA && w->eval &&
           w->evec && w->eig && w->P && w->Q && w->alpha && w->beta && w->gen && w->Z && w->perm &&
           w->rhs && w->sol && w->tv && w->tv2 && w->hv && w->ht && w->order;
}

/* ------------------------------------------------------------ helpers */

static int all_finite(const gsl_matrix *m)
{
    size_t i, j;

    if (m == NULL)
        return 1;
    for (i = 0; i < m->size1; i++)
        for (j = 0; j < m->size2; j++)
            if (!gsl_finite(gsl_matrix_get(m, i, j)))
                return 0;
    return 1;
}

/* Largest singular value of the r x c matrix X (any shape), using the
 * workspace's E, V, S, work (X must fit in 2(n + q) x 2n when r >= c, or
 * transposed).  Returns a GSL status. */
static int norm2(struct ws *w, const gsl_matrix *X, double *out)
{
    const int tr = X->size1 < X->size2;
    const size_t r = tr ? X->size2 : X->size1, c = tr ? X->size1 : X->size2;
    gsl_matrix_view U = gsl_matrix_submatrix(w->E, 0, 0, r, c);
    gsl_matrix_view V = gsl_matrix_submatrix(w->V, 0, 0, c, c);
    gsl_vector_view S = gsl_vector_subvector(w->S, 0, c);
    gsl_vector_view W = gsl_vector_subvector(w->work, 0, c);
    int gs;

    if (c == 0) {
        *out = 0.0;
        return GSL_SUCCESS;
    }
    if (tr)
        gs = gsl_matrix_transpose_memcpy(&U.matrix, X);
    else
        gs = gsl_matrix_memcpy(&U.matrix, X);
    if (gs == GSL_SUCCESS)
        gs = gsl_linalg_SV_decomp(&U.matrix, &V.matrix, &S.vector, &W.vector);
    *out = gsl_vector_get(&S.vector, 0);
    return gs;
}

/* E = [[Mr, -Mi], [Mi, Mr]] for the r x c parts in w->Mr, w->Mi; the
 * transpose when tr.  E is the top-left block of dst. */
static void embed(gsl_matrix *dst, const struct ws *w, size_t r, size_t c, int tr)
{
    size_t i, j;

    for (i = 0; i < r; i++)
        for (j = 0; j < c; j++) {
            const double a = gsl_matrix_get(w->Mr, i, j), b = gsl_matrix_get(w->Mi, i, j);
            if (tr) {
                gsl_matrix_set(dst, j, i, a);
                gsl_matrix_set(dst, c + j, i, -b);
                gsl_matrix_set(dst, j, r + i, b);
                gsl_matrix_set(dst, c + j, r + i, a);
            } else {
                gsl_matrix_set(dst, i, j, a);
                gsl_matrix_set(dst, i, c + j, -b);
                gsl_matrix_set(dst, r + i, j, b);
                gsl_matrix_set(dst, r + i, c + j, a);
            }
        }
}

/* Mr, Mi top-left n x n := A_b - s I. */
static void shifted(struct ws *w, double sr, double si)
{
    const size_t n = w->n;
    size_t i, j;

    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++) {
            gsl_matrix_set(w->Mr, i, j, gsl_matrix_get(w->Ab, i, j) - (i == j ? sr : 0.0));
            gsl_matrix_set(w->Mi, i, j, i == j ? -si : 0.0);
        }
}

/* ------------------------------------------------------------ scaling */

/* How a state's scale was found (balance()). */
enum { SCALE_NONE = 0, SCALE_BALANCED = 1, SCALE_ROW = 2, SCALE_COL = 3 };

/* Osborne's balancing of the states that have both an off-diagonal row and
 * column among the others (modes.h), then the rest from their rows or
 * columns and the characteristic rate of the balanced part. */
static void balance(const gsl_matrix *A, double *d, unsigned char *active, double *omega_core,
                    struct ws *w)
{
    const size_t n = A->size1;
    size_t i, j, sweep;
    int changed;

    for (i = 0; i < n; i++) {
        d[i] = 1.0;
        active[i] = SCALE_BALANCED;
    }
    /* drop, until none changes, the states with an empty off-diagonal row or
     * column among the active ones */
    do {
        changed = 0;
        for (i = 0; i < n; i++) {
            int row = 0, col = 0;

            if (!active[i])
                continue;
            for (j = 0; j < n; j++)
                if (j != i && active[j]) {
                    row |= gsl_matrix_get(A, i, j) != 0.0;
                    col |= gsl_matrix_get(A, j, i) != 0.0;
                }
            if (!(row && col)) {
                active[i] = SCALE_NONE;
                changed = 1;
            }
        }
    } while (changed);
    for (sweep = 0; sweep < BALANCE_MAX_SWEEPS; sweep++) {
        double worst = 0.0;

        for (i = 0; i < n; i++) {
            double cn = 0.0, rn = 0.0, f;

            if (!active[i])
                continue;
            for (j = 0; j < n; j++)
                if (j != i && active[j]) {
                    cn = hypot(cn, gsl_matrix_get(A, j, i) * d[i] / d[j]);
                    rn = hypot(rn, gsl_matrix_get(A, i, j) * d[j] / d[i]);
                }
            f = sqrt(rn / cn);
            d[i] *= f;
            if (fabs(log(f)) > worst)
                worst = fabs(log(f));
        }
        if (worst < BALANCE_STEP_TOL)
            break;
    }
    /* the characteristic rate of the balanced part: its largest singular
     * value; when no state could be balanced, the largest |A_ii| */
    {
        size_t k = 0, kk = 0;
        double om = 0.0;

        for (i = 0; i < n; i++)
            if (active[i])
                k++;
        if (k > 0) {
            gsl_matrix_view X = gsl_matrix_submatrix(w->Mr, 0, 0, k, k);
            for (i = 0; i < n; i++) {
                size_t jj = 0;
                if (!active[i])
                    continue;
                for (j = 0; j < n; j++)
                    if (active[j])
                        gsl_matrix_set(&X.matrix, kk, jj++, gsl_matrix_get(A, i, j) * d[j] / d[i]);
                kk++;
            }
            if (norm2(w, &X.matrix, &om) != GSL_SUCCESS)
                om = 0.0;
        }
        if (!(om > 0.0))
            for (i = 0; i < n; i++)
                if (fabs(gsl_matrix_get(A, i, i)) > om)
                    om = fabs(gsl_matrix_get(A, i, i));
        if (!(om > 0.0))
            om = 1.0;
        *omega_core = om;
    }
    /* the dropped states: from their rows (the size of their rate of
     * change), else from their columns (the size of their influence) */
    do {
        changed = 0;
        for (i = 0; i < n; i++) {
            double rn = 0.0, cn = 0.0;

            if (active[i])
                continue;
            for (j = 0; j < n; j++)
                if (j != i && active[j]) {
                    rn = hypot(rn, gsl_matrix_get(A, i, j) * d[j]);
                    cn = hypot(cn, gsl_matrix_get(A, j, i) / d[j]);
                }
            if (rn > 0.0) {
                d[i] = rn / *omega_core;
                active[i] = SCALE_ROW;
            } else if (cn > 0.0) {
                d[i] = *omega_core / cn;
                active[i] = SCALE_COL;
            } else {
                continue;
            }
            changed = 1;
        }
    } while (changed);
}

/* ------------------------------------------------------------ sorting */

static int mode_before(const rigmat_mode *a, const rigmat_mode *b)
{
    const double ma = hypot(a->s_re, a->s_im), mb = hypot(b->s_re, b->s_im);

    /* a conjugate pair's magnitudes may differ in the last bits: equal
     * within 1e-12 keeps the pair together, Im s > 0 first */
    if (fabs(ma - mb) > 1e-12 * (ma > mb ? ma : mb))
        return ma < mb;
    if (a->s_im != b->s_im)
        return a->s_im > b->s_im;
    return a->s_re > b->s_re;
}

/* ------------------------------------------------------------ one mode */

/* Reach, sight, controllability and observability of the mode s by PBH. */
static int mode_pbh(struct ws *w, rigmat_mode *m, const rigmat_modes *md, double sr, double si,
                    double normAB, double normAC)
{
    const size_t n = w->n, nu = md->nu, ny = md->ny, nc = md->nu_control;
    const double tol = md->set.rtol;
    size_t i, j, k, knull, nsmall = 0;
    int gs;

    /* null spaces of A_b - sI */
    shifted(w, sr, si);
    embed(w->E1, w, n, n, 0);
    gs = gsl_linalg_SV_decomp(w->E1, w->V1, w->S1, w->work);
    if (gs != GSL_SUCCESS)
        return gs;
    for (k = 0; k < 2 * n; k++)
        if (gsl_vector_get(w->S1, k) <= md->set.null_rtol * md->omega_b)
            nsmall++;
    knull = nsmall < 2 ? 2 : nsmall + (nsmall & 1);
    if (knull > 2 * n)
        knull = 2 * n;
    for (j = 0; j < nu; j++) {
        double p2 = 0.0;

        for (k = 2 * n - knull; k < 2 * n; k++) {
            double dot = 0.0;
            for (i = 0; i < n; i++)
                dot += gsl_matrix_get(w->E1, i, k) * gsl_matrix_get(w->Bn, i, j);
            p2 += dot * dot;
        }
        m->reach[j] = w->bnorm[j] > 0.0 ? sqrt(p2) : 0.0;
        m->reached_by[j] = m->reach[j] > tol;
    }
    for (j = 0; j < ny; j++) {
        double p2 = 0.0;

        for (k = 2 * n - knull; k < 2 * n; k++) {
            double dot = 0.0;
            for (i = 0; i < n; i++)
                dot += gsl_matrix_get(w->Cn, j, i) * gsl_matrix_get(w->V1, i, k);
            p2 += dot * dot;
        }
        m->sight[j] = w->cnorm[j] > 0.0 ? sqrt(p2) : 0.0;
        m->seen_by[j] = m->sight[j] > tol;
    }

    /* the rank forms: [A_b - sI, B_c] and [A_b - sI; C_b] */
    if (nc == 0) {
        m->ctrb_measure = gsl_vector_get(w->S1, 2 * n - 1) / md->omega_b;
    } else {
        shifted(w, sr, si);
        for (i = 0; i < n; i++)
            for (j = 0; j < nc; j++) {
                gsl_matrix_set(w->Mr, i, n + j, gsl_matrix_get(w->Bn, i, j));
                gsl_matrix_set(w->Mi, i, n + j, 0.0);
            }
        {
            gsl_matrix_view U = gsl_matrix_submatrix(w->E, 0, 0, 2 * (n + nc), 2 * n);
            embed(w->E, w, n, n + nc, 1);
            gs = gsl_linalg_SV_decomp(&U.matrix, w->V, w->S, w->work);
            if (gs != GSL_SUCCESS)
                return gs;
        }
        m->ctrb_measure = gsl_vector_get(w->S, 2 * n - 1) / normAB;
    }
    if (ny == 0) {
        m->obsv_measure = gsl_vector_get(w->S1, 2 * n - 1) / md->omega_b;
    } else {
        shifted(w, sr, si);
        for (i = 0; i < ny; i++)
            for (j = 0; j < n; j++) {
                gsl_matrix_set(w->Mr, n + i, j, gsl_matrix_get(w->Cn, i, j));
                gsl_matrix_set(w->Mi, n + i, j, 0.0);
            }
        {
            gsl_matrix_view U = gsl_matrix_submatrix(w->E, 0, 0, 2 * (n + ny), 2 * n);
            embed(w->E, w, n + ny, n, 0);
            gs = gsl_linalg_SV_decomp(&U.matrix, w->V, w->S, w->work);
            if (gs != GSL_SUCCESS)
                return gs;
        }
        m->obsv_measure = gsl_vector_get(w->S, 2 * n - 1) / normAC;
    }
    m->controllable = m->ctrb_measure > tol;
    m->observable = m->obsv_measure > tol;
    return GSL_SUCCESS;
}

/* ------------------------------------------------------------ zeros */

/* Is the transfer function of channel (j -> i) identically zero?  Its
 * Markov parameters d, c b, c A b, ... (scaled, A_b / omega_b) all below
 * rtol; n + 1 of them decide (Cayley-Hamilton). */
static int no_path(struct ws *w, const rigmat_modes *md, const gsl_matrix *D, size_t i, size_t j)
{
    const size_t n = w->n;
    const double tol = md->set.rtol;
    double *t = w->tv, *t2 = w->tv2;
    size_t k, a, b;

    if (D != NULL && w->bnorm[j] > 0.0 && w->cnorm[i] > 0.0 &&
        fabs(gsl_matrix_get(D, i, j)) * md->omega_b > tol * w->bnorm[j] * w->cnorm[i])
        return 0;
    if (D != NULL && (w->bnorm[j] == 0.0 || w->cnorm[i] == 0.0) && gsl_matrix_get(D, i, j) != 0.0)
        return 0;
    if (w->bnorm[j] == 0.0 || w->cnorm[i] == 0.0)
        return 1;
    for (a = 0; a < n; a++)
        t[a] = gsl_matrix_get(w->Bn, a, j);
    for (k = 0; k < n; k++) {
        double h = 0.0;

        for (a = 0; a < n; a++)
            h += gsl_matrix_get(w->Cn, i, a) * t[a];
        if (fabs(h) > tol)
            return 0;
        for (a = 0; a < n; a++) {
            double s = 0.0;
            for (b = 0; b < n; b++)
                s += gsl_matrix_get(w->Ab, a, b) * t[b];
            t2[a] = s / md->omega_b;
        }
        for (a = 0; a < n; a++)
            t[a] = t2[a];
    }
    return 1;
}

static int zero_before(double ar, double ai, double br, double bi)
{
    const double ma = hypot(ar, ai), mb = hypot(br, bi);

    /* a repeated zero is only known to about sqrt(eps): magnitudes within
     * 1e-8 tie, so conjugates stay in pairs, Im > 0 first */
    if (fabs(ma - mb) > 1e-8 * (ma > mb ? ma : mb))
        return ma < mb;
    if (ai != bi)
        return ai > bi;
    return ar > br;
}

/* Householder reflection of the leading m entries of the working channel
 * in w: turn b into the last axis, A <- H A H, c <- c H (H = H^T = H^-1). */
static void reflect(struct ws *w, size_t m)
{
    gsl_matrix *A = w->eigA;
    double *b = w->tv, *c = w->tv2, *v = w->hv, *t = w->ht;
    double bn = 0.0, vv = 0.0;
    size_t a, k;

    for (a = 0; a < m; a++)
        bn = hypot(bn, b[a]);
    for (a = 0; a < m; a++)
        v[a] = b[a];
    v[m - 1] += b[m - 1] >= 0.0 ? bn : -bn;
    for (a = 0; a < m; a++)
        vv += v[a] * v[a];
    if (!(vv > 0.0))
        return;
    /* A <- H A: each column minus 2 v (v^T col) / vv */
    for (k = 0; k < m; k++) {
        double dot = 0.0;
        for (a = 0; a < m; a++)
            dot += v[a] * gsl_matrix_get(A, a, k);
        for (a = 0; a < m; a++)
            gsl_matrix_set(A, a, k, gsl_matrix_get(A, a, k) - 2.0 * v[a] * dot / vv);
    }
    /* A <- A H: each row minus 2 (row v) v^T / vv */
    for (a = 0; a < m; a++) {
        double dot = 0.0;
        for (k = 0; k < m; k++)
            dot += gsl_matrix_get(A, a, k) * v[k];
        for (k = 0; k < m; k++)
            gsl_matrix_set(A, a, k, gsl_matrix_get(A, a, k) - 2.0 * dot * v[k] / vv);
    }
    {
        double dot = 0.0;
        for (k = 0; k < m; k++)
            dot += c[k] * v[k];
        for (k = 0; k < m; k++)
            c[k] -= 2.0 * dot * v[k] / vv;
    }
    for (a = 0; a < m; a++)
        t[a] = 0.0;
    t[m - 1] = b[m - 1] >= 0.0 ? -bn : bn;
    for (a = 0; a < m; a++)
        b[a] = t[a];
}

/* The finite zeros of channel (j -> i): the infinite ones deflated by
 * orthogonal compressions while the feedthrough is zero, then QZ on the
 * Rosenbrock pencil of what is left (modes.h). */
static int channel_zeros(struct ws *w, const rigmat_modes *md, const gsl_matrix *D, size_t i,
                         size_t j, rigmat_channel_zeros *z)
{
    const size_t n = w->n;
    const double om = md->omega_b;
    double *b = w->tv, *c = w->tv2, d = 0.0, *ratio = w->hv;
    size_t a, k, m = n, cnt = 0, ninf;
    int gs, with_d = 0;

    z->input = j;
    z->output = i;
    z->no_path = no_path(w, md, D, i, j);
    if (z->no_path)
        return GSL_SUCCESS;
    z->re = malloc((n + 1) * sizeof *z->re);
    z->im = malloc((n + 1) * sizeof *z->im);
    if (z->re == NULL || z->im == NULL)
        return GSL_ENOMEM;
    /* the channel in scaled units, time in units of 1/omega_b */
    for (a = 0; a < n; a++) {
        for (k = 0; k < n; k++)
            gsl_matrix_set(w->eigA, a, k, gsl_matrix_get(w->Ab, a, k) / om);
        b[a] = gsl_matrix_get(w->Bn, a, j);
        c[a] = gsl_matrix_get(w->Cn, i, a);
    }
    /* in time units of 1/omega_b, G(s) / (|S^-1 b| |c S| / omega_b) =
     * d omega_b / (|S^-1 b| |c S|) + c^ (sigma I - A_b / omega_b)^-1 b^ */
    if (D != NULL)
        d = gsl_matrix_get(D, i, j) * om /
            ((w->bnorm[j] > 0.0 ? w->bnorm[j] : 1.0) * (w->cnorm[i] > 0.0 ? w->cnorm[i] : 1.0));
    /* deflate: [[A - sI, b], [c, 0]] with b along the last axis has the
     * finite zeros of (A11, a12, c1, c2) */
    while (m > 0) {
        double bn = 0.0, cn = 0.0;

        for (a = 0; a < m; a++) {
            bn = hypot(bn, b[a]);
            cn = hypot(cn, c[a]);
        }
        if (bn <= md->set.rtol || cn <= md->set.rtol) {
            with_d = fabs(d) > md->set.inf_rtol;
            break;
        }
        for (a = 0; a < m; a++) {
            b[a] /= bn;
            c[a] /= cn;
        }
        d /= bn * cn;
        if (fabs(d) > md->set.inf_rtol) {
            with_d = 1;
            break;
        }
        reflect(w, m);
        m--;
        d = c[m];
        for (a = 0; a < m; a++)
            b[a] = gsl_matrix_get(w->eigA, a, m);
    }
    if (m == 0 || !with_d) {
        /* no finite zero left (m = 0), or a channel that vanished in the
         * rounding: none listed */
        z->count = 0;
        return GSL_SUCCESS;
    }
    /* QZ on the (m + 1) pencil, padded to n + 1 with exactly infinite
     * eigenvalues (P = I, Q = 0), so one workspace serves every size */
    gsl_matrix_set_zero(w->P);
    gsl_matrix_set_zero(w->Q);
    for (a = 0; a < m; a++) {
        for (k = 0; k < m; k++)
            gsl_matrix_set(w->P, a, k, gsl_matrix_get(w->eigA, a, k));
        gsl_matrix_set(w->P, a, m, b[a]);
        gsl_matrix_set(w->P, m, a, c[a]);
        gsl_matrix_set(w->Q, a, a, 1.0);
    }
    gsl_matrix_set(w->P, m, m, d);
    for (a = m + 1; a <= n; a++)
        gsl_matrix_set(w->P, a, a, 1.0);
    gs = gsl_eigen_gen(w->P, w->Q, w->alpha, w->beta, w->gen);
    if (gs != GSL_SUCCESS)
        return gs;
    /* exactly n - m + 1 eigenvalues are infinite (the padding and the one
     * of a pencil with d != 0): drop the pairs with the smallest
     * |beta| / |alpha| */
    ninf = n - m + 1;
    for (k = 0; k <= n; k++) {
        const double mal = gsl_complex_abs(gsl_vector_complex_get(w->alpha, k));
        const double be = fabs(gsl_vector_get(w->beta, k));
        ratio[k] = mal > 0.0 ? be / mal : HUGE_VAL;
    }
    for (k = 0; k <= n; k++) {
        size_t smaller = 0, p;
        const gsl_complex al = gsl_vector_complex_get(w->alpha, k);
        const double be = gsl_vector_get(w->beta, k);
        double zr, zi;

        for (a = 0; a <= n; a++)
            if (ratio[a] < ratio[k] || (ratio[a] == ratio[k] && a < k))
                smaller++;
        if (smaller < ninf || be == 0.0)
            continue;
        zr = om * GSL_REAL(al) / be;
        zi = om * GSL_IMAG(al) / be;
        p = cnt;
        while (p > 0 && zero_before(zr, zi, z->re[p - 1], z->im[p - 1])) {
            z->re[p] = z->re[p - 1];
            z->im[p] = z->im[p - 1];
            p--;
        }
        z->re[p] = zr;
        z->im[p] = zi;
        cnt++;
    }
    z->count = cnt;
    for (k = 0; k < cnt; k++)
        if (z->re[k] > md->set.stab_rtol * om)
            z->rhp++;
    return GSL_SUCCESS;
}

/* ------------------------------------------------------------ DC gain */

/* G(s) of channel (j -> i) in SI units at a complex s, from the LU of
 * s I - A_b in w->Z (solved for column j in w->sol). */
static double channel_at(const struct ws *w, const gsl_matrix *D, size_t i, size_t j)
{
    const size_t n = w->n;
    double g = D != NULL ? gsl_matrix_get(D, i, j) : 0.0;
    size_t a;

    for (a = 0; a < n; a++)
        g += gsl_matrix_get(w->Cs, i, a) * GSL_REAL(gsl_vector_complex_get(w->sol, a));
    return g;
}

static int dc_gain(struct ws *w, rigmat_modes *md, const rigmat_lti *l)
{
    const size_t n = w->n, nu = md->nu, ny = md->ny;
    const double tol0 = md->set.stab_rtol * md->omega_b;
    size_t i, j, k, a, b;
    double rho = HUGE_VAL;
    int gs, signum;

    if (md->dc_gain == NULL)
        return GSL_SUCCESS;
    if (n == 0) {
        for (i = 0; i < ny; i++)
            for (j = 0; j < nu; j++)
                gsl_matrix_set(md->dc_gain, i, j, gsl_matrix_get(l->D, i, j));
        return GSL_SUCCESS;
    }
    /* the radius of the circle: a tenth of the nearest non-zero pole or
     * (over every channel) zero */
    for (k = 0; k < n; k++) {
        const double r = hypot(md->modes[k].s_re, md->modes[k].s_im);
        if (r > tol0 && r < rho)
            rho = r;
    }
    for (k = 0; k < nu * ny; k++)
        for (a = 0; a < md->zeros[k].count; a++) {
            const double r = hypot(md->zeros[k].re[a], md->zeros[k].im[a]);
            if (r > tol0 && r < rho)
                rho = r;
        }
    if (!(rho < HUGE_VAL))
        rho = md->omega_b;
    rho *= DC_CIRCLE_FRACTION;

    for (j = 0; j < nu; j++)
        for (i = 0; i < ny; i++)
            gsl_matrix_set(md->dc_gain, i, j, 0.0);
    /* with no pole at 0 the circle's centre itself, s = 0, is solved once */
    for (k = 0; k < (md->zero_poles == 0 ? 1 : DC_CIRCLE_POINTS); k++) {
        const double th = 2.0 * M_PI * ((double)k + 0.5) / DC_CIRCLE_POINTS;
        const double sr = md->zero_poles == 0 ? 0.0 : rho * cos(th);
        const double si = md->zero_poles == 0 ? 0.0 : rho * sin(th);
        const double wgt = md->zero_poles == 0 ? 1.0 : 1.0 / DC_CIRCLE_POINTS;

        for (a = 0; a < n; a++)
            for (b = 0; b < n; b++)
                gsl_matrix_complex_set(
                        w->Z, a, b,
                        gsl_complex_rect((a == b ? sr : 0.0) - gsl_matrix_get(w->Ab, a, b),
                                         a == b ? si : 0.0));
        gs = gsl_linalg_complex_LU_decomp(w->Z, w->perm, &signum);
        if (gs != GSL_SUCCESS)
            return gs;
        for (j = 0; j < nu; j++) {
            for (a = 0; a < n; a++)
                gsl_vector_complex_set(w->rhs, a, gsl_complex_rect(gsl_matrix_get(w->Bs, a, j), 0));
            gs = gsl_linalg_complex_LU_solve(w->Z, w->perm, w->rhs, w->sol);
            if (gs != GSL_SUCCESS)
                return gs;
            for (i = 0; i < ny; i++)
                gsl_matrix_set(md->dc_gain, i, j,
                               gsl_matrix_get(md->dc_gain, i, j) + wgt * channel_at(w, l->D, i, j));
        }
    }
    /* the exact cases: no path, a pole at 0 left, a zero at 0 left */
    for (i = 0; i < ny; i++)
        for (j = 0; j < nu; j++) {
            const rigmat_channel_zeros *z = &md->zeros[i * nu + j];
            size_t z0 = 0;

            if (z->no_path) {
                gsl_matrix_set(md->dc_gain, i, j, 0.0);
                continue;
            }
            for (a = 0; a < z->count; a++)
                if (hypot(z->re[a], z->im[a]) <= tol0)
                    z0++;
            if (z0 < md->zero_poles)
                gsl_matrix_set(md->dc_gain, i, j, (double)GSL_NAN);
            else if (z0 > md->zero_poles)
                gsl_matrix_set(md->dc_gain, i, j, 0.0);
        }
    return GSL_SUCCESS;
}

/* ------------------------------------------------------------ compute */

rigmat_status rigmat_modes_compute(const rigmat_lti *l, double period_s,
                                   const rigmat_modes_settings *set, rigmat_modes **out,
                                   rigmat_error *err)
{
    const size_t n = l->nx, nu = l->nu, ny = l->ny;
    rigmat_modes *md = NULL;
    struct ws w;
    unsigned char *active = NULL;
    double omega_core = 1.0, normAB = 1.0, normAC = 1.0;
    rigmat_status rc = RIGMAT_OK;
    size_t i, j, k;
    int gs = GSL_SUCCESS;

    *out = NULL;
    memset(&w, 0, sizeof w);
    if (!(period_s >= 0.0) || !gsl_finite(period_s))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "sample period must be finite and >= 0, got %g",
                           period_s);
    if (l->nu_control > nu)
        return RIGMAT_FAIL(err, RIGMAT_EINTERNAL, "lti has %zu control inputs of %zu",
                           l->nu_control, nu);
    if (!all_finite(l->A) || !all_finite(l->B) || !all_finite(l->C) || !all_finite(l->D))
        return RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "the linear model holds a non-finite number");
    {
        const double dn = (double)n, work = dn * dn * dn * (dn + (double)nu * (double)ny);
        const double max_work = set != NULL ? set->max_work : rigmat_modes_settings_default().max_work;

        if (!(work <= max_work)) {
            RIGMAT_FAIL(err, RIGMAT_EMODEL, "the mode analysis of %zu states and %zu "
                        "input/output channels is refused: its work, n^3 (n + channels) = "
                        "%.3g, is above the limit %.3g", n, nu * ny, work, max_work);
            rigmat_error_hint(err, "`linearize` and `discretize` handle this model; the analysis "
                              "takes models up to about 170 states (README.md, \"Rules worth "
                              "knowing\")");
            return RIGMAT_EMODEL;
        }
    }
    md = modes_alloc(l);
    if (md == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory for the modes");
    md->period_s = period_s;
    md->set = set != NULL ? *set : rigmat_modes_settings_default();
    md->omega_b = 1.0;
    if (n == 0) {
        /* no dynamics: every channel is a pure gain, with no zeros */
        for (i = 0; i < ny; i++)
            for (j = 0; j < nu; j++) {
                md->zeros[i * nu + j].input = j;
                md->zeros[i * nu + j].output = i;
                md->zeros[i * nu + j].no_path = gsl_matrix_get(l->D, i, j) == 0.0;
            }
        dc_gain(&w, md, l);
        *out = md;
        return RIGMAT_OK;
    }
    active = calloc(n, 1);
    if (active == NULL || !ws_alloc(&w, n, nu, ny)) {
        rc = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory for the modes");
        goto done;
    }

    /* scaling and the scaled model */
    balance(l->A, md->scale, active, &omega_core, &w);
    for (i = 0; i < n; i++)
        md->balanced[i] = active[i] == SCALE_BALANCED;
    for (i = 0; i < n; i++)
        for (j = 0; j < n; j++)
            gsl_matrix_set(w.Ab, i, j, gsl_matrix_get(l->A, i, j) * md->scale[j] / md->scale[i]);
    /* norms by hypot: a gain of 1e300 or 1e-300 neither overflows nor
     * vanishes */
    for (j = 0; j < nu; j++) {
        double nb = 0.0;
        for (i = 0; i < n; i++) {
            const double v = gsl_matrix_get(l->B, i, j) / md->scale[i];
            gsl_matrix_set(w.Bs, i, j, v);
            nb = hypot(nb, v);
        }
        w.bnorm[j] = nb;
        for (i = 0; i < n; i++)
            gsl_matrix_set(w.Bn, i, j, nb > 0.0 ? gsl_matrix_get(w.Bs, i, j) / nb : 0.0);
    }
    for (i = 0; i < ny; i++) {
        double nc = 0.0;
        for (j = 0; j < n; j++) {
            const double v = gsl_matrix_get(l->C, i, j) * md->scale[j];
            gsl_matrix_set(w.Cs, i, j, v);
            nc = hypot(nc, v);
        }
        w.cnorm[i] = nc;
        for (j = 0; j < n; j++)
            gsl_matrix_set(w.Cn, i, j, nc > 0.0 ? gsl_matrix_get(w.Cs, i, j) / nc : 0.0);
    }
    gs = norm2(&w, w.Ab, &md->omega_b);
    if (gs != GSL_SUCCESS)
        goto gsl_fail;
    if (!(md->omega_b > 0.0))
        md->omega_b = 1.0;
    /* ||[A_b, B_c]||_2 and ||[A_b; C_b]||_2 for the PBH measures */
    {
        const size_t nc = l->nu_control;
        gsl_matrix_view X = gsl_matrix_submatrix(w.Mr, 0, 0, n, n + nc);
        gsl_matrix_view Y = gsl_matrix_submatrix(w.Mi, 0, 0, n + ny, n);

        for (i = 0; i < n; i++) {
            for (j = 0; j < n; j++) {
                gsl_matrix_set(&X.matrix, i, j, gsl_matrix_get(w.Ab, i, j));
                gsl_matrix_set(&Y.matrix, i, j, gsl_matrix_get(w.Ab, i, j));
            }
            for (j = 0; j < nc; j++)
                gsl_matrix_set(&X.matrix, i, n + j, gsl_matrix_get(w.Bn, i, j));
        }
        for (i = 0; i < ny; i++)
            for (j = 0; j < n; j++)
                gsl_matrix_set(&Y.matrix, n + i, j, gsl_matrix_get(w.Cn, i, j));
        gs = norm2(&w, &X.matrix, &normAB);
        if (gs == GSL_SUCCESS)
            gs = norm2(&w, &Y.matrix, &normAC);
        if (gs != GSL_SUCCESS)
            goto gsl_fail;
    }

    /* eigenvalues and eigenvectors of A_b */
    gsl_matrix_memcpy(w.eigA, w.Ab);
    gs = gsl_eigen_nonsymmv(w.eigA, w.eval, w.evec, w.eig);
    if (gs != GSL_SUCCESS)
        goto gsl_fail;
    for (k = 0; k < n; k++) {
        const gsl_complex s = gsl_vector_complex_get(w.eval, k);
        rigmat_mode *m = &md->modes[k];
        double tot = 0.0;

        const double mag = gsl_complex_abs(s);
        const double tol0 = md->set.stab_rtol * md->omega_b;

        m->s_re = GSL_REAL(s);
        m->s_im = GSL_IMAG(s);
        for (i = 0; i < n; i++) {
            double a = gsl_complex_abs(gsl_matrix_complex_get(w.evec, i, k));
            /* a state that could not be balanced is measured at this
             * mode's own rate |s| rather than omega_core (modes.h) */
            if (mag > tol0 && active[i] == SCALE_ROW)
                a *= mag / omega_core;
            else if (mag > tol0 && active[i] == SCALE_COL)
                a *= omega_core / mag;
            m->share[i] = a * a;
            tot += a * a;
        }
        for (i = 0; i < n; i++)
            m->share[i] = tot > 0.0 ? m->share[i] / tot : 0.0;
    }
    /* sort the modes (swap contents, arrays included) */
    for (k = 1; k < n; k++)
        for (j = k; j > 0 && mode_before(&md->modes[j], &md->modes[j - 1]); j--) {
            const rigmat_mode t = md->modes[j];
            md->modes[j] = md->modes[j - 1];
            md->modes[j - 1] = t;
        }
    md->zero_poles = 0;
    for (k = 0; k < n; k++) {
        rigmat_mode *m = &md->modes[k];
        const double mag = hypot(m->s_re, m->s_im);
        const double tol0 = md->set.stab_rtol * md->omega_b;

        m->frequency_hz = mag / (2.0 * M_PI);
        m->damping = mag > 0.0 ? (m->s_re == 0.0 ? 0.0 : -m->s_re / mag) : (double)GSL_NAN;
        if (m->s_re > tol0)
            m->stability = RIGMAT_UNSTABLE;
        else if (m->s_re < -tol0)
            m->stability = RIGMAT_STABLE;
        else
            m->stability = RIGMAT_MARGINAL;
        m->time_constant_s = m->stability == RIGMAT_MARGINAL ? (double)GSL_NAN : -1.0 / m->s_re;
        if (mag <= tol0)
            md->zero_poles++;
        if (period_s > 0.0) {
            const double r = exp(m->s_re * period_s);
            m->z_re = r * cos(m->s_im * period_s);
            m->z_im = r * sin(m->s_im * period_s);
        }
        for (i = 0; i < n; i++)
            m->by_share[i] = i;
        for (i = 1; i < n; i++)
            for (j = i; j > 0 && m->share[m->by_share[j]] > m->share[m->by_share[j - 1]]; j--) {
                const size_t t = m->by_share[j];
                m->by_share[j] = m->by_share[j - 1];
                m->by_share[j - 1] = t;
            }
        /* a cluster of eigenvalues closer than cluster_rtol omega_b is
         * one repeated eigenvalue, tested at the cluster's mean: a Jordan
         * block's eigenvalues scatter by about sqrt(eps), their mean does
         * not (Golub & Van Loan 2013, section 7.2) */
        {
            double cr = 0.0, ci = 0.0;
            size_t cnt = 0;

            for (j = 0; j < n; j++)
                if (hypot(md->modes[j].s_re - m->s_re, md->modes[j].s_im - m->s_im) <=
                    md->set.cluster_rtol * md->omega_b) {
                    cr += md->modes[j].s_re;
                    ci += md->modes[j].s_im;
                    cnt++;
                }
            gs = mode_pbh(&w, m, md, cr / (double)cnt, ci / (double)cnt, normAB, normAC);
        }
        if (gs != GSL_SUCCESS)
            goto gsl_fail;
    }

    /* zeros, then the DC gain (which reads them) */
    for (i = 0; i < ny; i++)
        for (j = 0; j < nu; j++) {
            gs = channel_zeros(&w, md, l->D, i, j, &md->zeros[i * nu + j]);
            if (gs == GSL_ENOMEM) {
                rc = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory for the zeros");
                goto done;
            }
            if (gs != GSL_SUCCESS)
                goto gsl_fail;
        }
    gs = dc_gain(&w, md, l);
    if (gs != GSL_SUCCESS)
        goto gsl_fail;
    /* an entry beyond the double range (a gain near 1e308 times the
     * plant's static gain) is refused, never handed out; NaN marks a
     * channel through a pole at 0 and only exists with one */
    for (i = 0; i < ny; i++)
        for (j = 0; j < nu; j++)
            if (!isfinite(gsl_matrix_get(md->dc_gain, i, j)) && md->zero_poles == 0) {
                rc = RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                        "the DC gain from input %zu to output %zu is beyond the range of a "
                        "double", j + 1, i + 1);
                rigmat_error_hint(err, "check the scale of the sensors' gain and the "
                                       "model's parameters");
                goto done;
            }
    *out = md;
    md = NULL;
    goto done;

gsl_fail:
    rc = RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "modes: %s", gsl_strerror(gs));
done:
    free(active);
    ws_free(&w);
    rigmat_modes_free(md);
    return rc;
}

/* ------------------------------------------------------------ summary */

struct sbuf {
    char *p;
    size_t size, len;
};

static void sb_add(struct sbuf *b, const char *fmt, ...) RIGMAT_PRINTF(2, 3);
static void sb_add(struct sbuf *b, const char *fmt, ...)
{
    va_list ap;
    int r;

    va_start(ap, fmt);
    r = vsnprintf(b->len < b->size ? b->p + b->len : NULL, b->len < b->size ? b->size - b->len : 0,
                  fmt, ap);
    va_end(ap);
    if (r > 0)
        b->len += (size_t)r;
}

/* The length of a state name without its last ".suffix": "tilt.rate" ->
 * "tilt", "drive.current" -> "drive". */
static size_t stem_len(const char *name)
{
    const char *dot = strrchr(name, '.');

    return dot != NULL && dot != name ? (size_t)(dot - name) : strlen(name);
}

/* The share of the group of state i (the states with its stem). */
static double group_share(const rigmat_modes *md, const rigmat_mode *m, size_t i, int *first)
{
    const char *ni = md->state_names[i];
    const size_t li = stem_len(ni);
    double sum = 0.0;
    size_t j;

    *first = 1;
    for (j = 0; j < md->nx; j++) {
        const char *nj = md->state_names[j];
        if (stem_len(nj) == li && strncmp(ni, nj, li) == 0) {
            if (j < i)
                *first = 0;
            sum += m->share[j];
        }
    }
    return sum;
}

/* "tilt" or "tilt, travel": the stems holding at least a fifth of the
 * mode (always the largest), largest first, at most three.  Groups are
 * ranked by (share descending, index ascending); each pick takes the best
 * group ranked after the previous one. */
static void lives_in(struct sbuf *b, const rigmat_modes *md, const rigmat_mode *m)
{
    size_t i, listed, prev_i = 0;
    double prev = HUGE_VAL;

    for (listed = 0; listed < 3; listed++) {
        double best = -1.0;
        size_t bi = 0;

        for (i = 0; i < md->nx; i++) {
            int first;
            const double sum = group_share(md, m, i, &first);

            if (!first)
                continue;
            if (!(sum < prev || (sum == prev && i > prev_i)))
                continue; /* ranked before the previous pick */
            if (sum > best) {
                best = sum;
                bi = i;
            }
        }
        if (best < 0.0 || (best < 0.2 && listed > 0))
            break;
        sb_add(b, "%s%.*s", listed ? ", " : "", (int)stem_len(md->state_names[bi]),
               md->state_names[bi]);
        prev = best;
        prev_i = bi;
    }
}

static void name_list(struct sbuf *b, char *const *names, const unsigned char *flags, size_t n,
                      const char *none)
{
    size_t i, c = 0;

    for (i = 0; i < n; i++)
        if (flags[i])
            sb_add(b, "%s%s", c++ ? ", " : "", names[i]);
    if (c == 0)
        sb_add(b, "%s", none);
}

/* Modes counted once per conjugate pair: the member with Im s >= 0. */
static int is_rep(const rigmat_mode *m)
{
    return m->s_im >= 0.0;
}

size_t rigmat_modes_summary(const rigmat_modes *md, char *buf, size_t size)
{
    struct sbuf b;
    size_t k, nun = 0, nmarg = 0, nunc = 0, nuno = 0, i;
    unsigned char *reach = NULL, *seen = NULL;
    const rigmat_mode *first = NULL;

    b.p = buf;
    b.size = size;
    b.len = 0;
    if (size > 0)
        buf[0] = '\0';
    if (md->nx == 0) {
        sb_add(&b, "no dynamics: the model has no states");
        return b.len;
    }
    for (k = 0; k < md->nx; k++) {
        const rigmat_mode *m = &md->modes[k];
        if (!is_rep(m))
            continue;
        nun += m->stability == RIGMAT_UNSTABLE;
        nmarg += m->stability == RIGMAT_MARGINAL;
        nunc += !m->controllable;
        nuno += !m->observable;
    }
    reach = calloc(md->nu ? md->nu : 1, 1);
    seen = calloc(md->ny ? md->ny : 1, 1);
    if (reach == NULL || seen == NULL) {
        sb_add(&b, "(out of memory)");
        goto done;
    }
    if (nun > 0) {
        size_t c = 0;

        sb_add(&b, "%zu unstable mode%s%s", nun, nun > 1 ? "s" : "", nun > 1 ? ": " : " at ");
        for (k = 0; k < md->nx; k++) {
            const rigmat_mode *m = &md->modes[k];
            if (!is_rep(m) || m->stability != RIGMAT_UNSTABLE)
                continue;
            sb_add(&b, "%s%.3g rad/s%s", c++ ? " and " : "", hypot(m->s_re, m->s_im),
                   m->s_im > 0.0 ? " (oscillating)" : "");
            sb_add(&b, nun > 1 ? " in " : ", lives in ");
            lives_in(&b, md, m);
            for (i = 0; i < md->nu; i++)
                reach[i] |= m->reached_by[i];
            for (i = 0; i < md->ny; i++)
                seen[i] |= m->seen_by[i];
        }
    } else {
        /* the slowest stable mode; with none, the slowest marginal one */
        for (k = 0; k < md->nx && first == NULL; k++)
            if (md->modes[k].stability == RIGMAT_STABLE && is_rep(&md->modes[k]))
                first = &md->modes[k];
        if (first != NULL) {
            sb_add(&b, "stable; slowest mode at %.3g rad/s", hypot(first->s_re, first->s_im));
        } else {
            for (k = 0; k < md->nx && first == NULL; k++)
                if (is_rep(&md->modes[k]))
                    first = &md->modes[k];
            sb_add(&b, "no unstable mode; %zu marginal, the slowest at %.3g rad/s", nmarg,
                   hypot(first->s_re, first->s_im));
        }
        if (first->s_im != 0.0 && first->stability == RIGMAT_STABLE)
            sb_add(&b, " (damping %.2g)", first->damping);
        sb_add(&b, ", lives in ");
        lives_in(&b, md, first);
        for (i = 0; i < md->nu; i++)
            reach[i] = first->reached_by[i];
        for (i = 0; i < md->ny; i++)
            seen[i] = first->seen_by[i];
    }
    {
        sb_add(&b, "; reached by ");
        name_list(&b, md->input_names, reach, md->nu, "no input");
        sb_add(&b, "; seen by ");
        name_list(&b, md->output_names, seen, md->ny, "no output");
    }
    if (nmarg > 0 && (nun > 0 || first->stability == RIGMAT_STABLE))
        sb_add(&b, "; %zu marginal", nmarg);
    if (nunc > 0 || nuno > 0) {
        const char *sep = "; ";
        if (nunc > 0) {
            sb_add(&b, "%s%zu not controllable", sep, nunc);
            sep = ", ";
        }
        if (nuno > 0)
            sb_add(&b, "%s%zu not observable", sep, nuno);
        sb_add(&b, " (");
        i = 0;
        for (k = 0; k < md->nx; k++) {
            const rigmat_mode *m = &md->modes[k];
            if (!is_rep(m) || (m->controllable && m->observable))
                continue;
            if (i++ == 3) {
                sb_add(&b, ", ...");
                break;
            }
            sb_add(&b, "%s%.3g rad/s in ", i > 1 ? ", " : "", hypot(m->s_re, m->s_im));
            lives_in(&b, md, m);
        }
        sb_add(&b, ")");
    }
done:
    free(reach);
    free(seen);
    return b.len;
}
