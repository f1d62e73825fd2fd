/* discretize.c - ZOH, FOH, Tustin, forward and backward Euler, input delay
 * by state augmentation, and sampling-rate advice (discretize.h). */
#include "invariant.h"
#include "discretize.h"
#include "fastblas.h"
#include "sizes.h"

#include <math.h>
#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_blas.h>
#include <gsl/gsl_eigen.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_math.h>
#include <gsl/gsl_complex_math.h>

static const char *const method_names[] = { "zoh", "foh", "tustin", "euler", "backward-euler" };

/* The largest delay accepted, in samples: keeps the conversion of
 * floor(delay) to size_t defined; any real delay is far below it. */
static const double max_delay_samples = 1e9;

const char *rigmat_method_name(rigmat_method m)
{
    if ((size_t)m < sizeof method_names / sizeof method_names[0])
        return method_names[m];
    return "?";
}

int rigmat_method_parse(const char *name, rigmat_method *m)
{
    size_t i;

    for (i = 0; name != NULL && i < sizeof method_names / sizeof method_names[0]; i++)
        if (strcmp(name, method_names[i]) == 0) {
            *m = (rigmat_method)i;
            return 0;
        }
    return -1;
}

rigmat_discretize_opts rigmat_discretize_opts_default(void)
{
    rigmat_discretize_opts o;

    o.method = RIGMAT_METHOD_ZOH;
    o.period_s = 1e-3;
    o.prewarp_hz = 0.0;
    o.delay_samples = 0.0;
    o.max_states = rigmat_options_default().max_sampled_states;
    o.expm_flags = RIGMAT_EXPM_BALANCE | RIGMAT_EXPM_POWERS;
    return o;
}

/* ------------------------------------------------------------ containers */

void rigmat_dlti_free(rigmat_dlti *d)
{
    size_t i;

    if (d == NULL)
        return;
    {
        gsl_matrix *const m[] = { d->Ad, d->Bd, d->Gd, d->Cd, d->Dd, d->Ed };
        for (i = 0; i < sizeof m / sizeof m[0]; i++)
            if (m[i] != NULL)
                gsl_matrix_free(m[i]);
    }
    if (d->delay_states != NULL) {
        for (i = 0; i < d->nu * d->ndelay; i++)
            free(d->delay_states[i].name);
        free(d->delay_states);
    }
    free(d);
}

static gsl_matrix *zeros(size_t r, size_t c, int *bad)
{
    gsl_matrix *m;

    if (r == 0 || c == 0)
        return NULL;
    m = rigmat_matrix_calloc(r, c);
    if (m == NULL)
        *bad = 1;
    return m;
}

rigmat_discretize_ws *rigmat_discretize_ws_alloc(size_t nx, size_t nu, size_t ny)
{
    rigmat_discretize_ws *w;
    const size_t nb = rigmat_size_mul_add(nu, 2, nx);
    int bad = 0;

    if (nx == 0)
        return NULL;
    w = calloc(1, sizeof *w);
    if (w == NULL)
        return NULL;
    w->nx = nx;
    w->nu = nu;
    w->ny = ny;
    w->expm = rigmat_expm_ws_alloc(nb);
    w->M = zeros(nb, nb, &bad);
    w->E = zeros(nb, nb, &bad);
    w->Phi1 = zeros(nx, nx, &bad);
    w->LU = zeros(nx, nx, &bad);
    w->G0 = zeros(nx, nu ? nu : 1, &bad);
    w->G1 = zeros(nx, nu ? nu : 1, &bad);
    w->Gf = zeros(nx, nu ? nu : 1, &bad);
    w->Dm = zeros(ny ? ny : 1, nu ? nu : 1, &bad);
    w->perm = gsl_permutation_alloc(nx);
    w->tmp = gsl_vector_alloc(nx);
    if (bad || w->expm == NULL || w->perm == NULL || w->tmp == NULL) {
        rigmat_discretize_ws_free(w);
        return NULL;
    }
    return w;
}

void rigmat_discretize_ws_free(rigmat_discretize_ws *w)
{
    size_t i;

    if (w == NULL)
        return;
    rigmat_expm_ws_free(w->expm);
    {
        gsl_matrix *const m[] = { w->M, w->E, w->Phi1, w->LU, w->G0, w->G1, w->Gf, w->Dm };
        for (i = 0; i < sizeof m / sizeof m[0]; i++)
            if (m[i] != NULL)
                gsl_matrix_free(m[i]);
    }
    if (w->perm != NULL)
        gsl_permutation_free(w->perm);
    if (w->tmp != NULL)
        gsl_vector_free(w->tmp);
    free(w);
}

/* ------------------------------------------------------------ helpers */

/* dst[r0 + i, c0 + j] = src[sr + i, sc + j] * scale, for rows x cols. */
static void put(gsl_matrix *dst, size_t r0, size_t c0, const gsl_matrix *src, size_t sr, size_t sc,
                size_t rows, size_t cols, double scale)
{
    size_t i, j;

    for (i = 0; i < rows; i++)
        for (j = 0; j < cols; j++)
            gsl_matrix_set(dst, r0 + i, c0 + j, scale * gsl_matrix_get(src, sr + i, sc + j));
}

static void put_identity(gsl_matrix *dst, size_t r0, size_t c0, size_t n)
{
    size_t i;

    for (i = 0; i < n; i++)
        gsl_matrix_set(dst, r0 + i, c0 + i, 1.0);
}

/* The leading r x c block of a workspace matrix. */
static gsl_matrix_view lead(gsl_matrix *m, size_t r, size_t c)
{
    return gsl_matrix_submatrix(m, 0, 0, r, c);
}

static rigmat_status gsl_fail(rigmat_error *err, const char *what, int gs)
{
    return RIGMAT_FAIL(err, gs == GSL_ENOMEM ? RIGMAT_ENOMEM : RIGMAT_EINTERNAL, "%s failed: %s",
                       what, gsl_strerror(gs));
}

/* A GSL call that fails only when its sizes disagree (a product, a copy, a
 * triangular solve): the sizes are ours, so that is a broken invariant. */
static rigmat_status gsl_bug(rigmat_error *err, const char *what, int gs)
{
    (void)RIGMAT_NEVER(gs != GSL_SUCCESS);
    return gsl_fail(err, what, gs);
}

/* E = exp([[A h, B h], [0, 0]]) of size n + m (B may be NULL when m = 0). */
static rigmat_status expm_hold(const gsl_matrix *A, const gsl_matrix *B, size_t n, size_t m,
                               double h, rigmat_discretize_ws *w, unsigned flags,
                               gsl_matrix_view *E, rigmat_error *err)
{
    gsl_matrix_view M = lead(w->M, n + m, n + m);

    *E = lead(w->E, n + m, n + m);
    gsl_matrix_set_zero(&M.matrix);
    put(&M.matrix, 0, 0, A, 0, 0, n, n, h);
    if (m > 0)
        put(&M.matrix, 0, n, B, 0, 0, n, m, h);
    return rigmat_expm(&M.matrix, &E->matrix, flags, w->expm, NULL, err);
}

/* ------------------------------------------------------------ methods */

/* Ad, the full input matrix Gam (n x m, in w->Gf) and the output map
 * (Cm, Dm) of one method, before the split into control and disturbance
 * columns and before any delay.  Cm and Dm are ny x n and ny x m and
 * already allocated (NULL when a size is 0). */
static rigmat_status method_core(const rigmat_lti *s, const rigmat_discretize_opts *o,
                                 rigmat_discretize_ws *w, gsl_matrix *Ad, gsl_matrix *Cm,
                                 gsl_matrix *Dm, rigmat_error *err)
{
    const size_t n = s->nx, m = s->nu, ny = s->ny;
    const double T = o->period_s;
    gsl_matrix_view E, Gam;
    rigmat_status rc;
    size_t i, j;
    int gs;

    if (m > 0)
        Gam = lead(w->Gf, n, m);
    if (ny > 0) {
        put(Cm, 0, 0, s->C, 0, 0, ny, n, 1.0);
        if (m > 0)
            put(Dm, 0, 0, s->D, 0, 0, ny, m, 1.0);
    }
    switch (o->method) {
    case RIGMAT_METHOD_ZOH:
        rc = expm_hold(s->A, s->B, n, m, T, w, o->expm_flags, &E, err);
        if (rc != RIGMAT_OK)
            return rc;
        put(Ad, 0, 0, &E.matrix, 0, 0, n, n, 1.0);
        if (m > 0)
            put(&Gam.matrix, 0, 0, &E.matrix, 0, n, n, m, 1.0);
        return RIGMAT_OK;
    case RIGMAT_METHOD_FOH: {
        gsl_matrix_view M = lead(w->M, n + 2 * m, n + 2 * m);
        if (m == 0) {
            rc = expm_hold(s->A, NULL, n, 0, T, w, o->expm_flags, &E, err);
            if (rc == RIGMAT_OK)
                put(Ad, 0, 0, &E.matrix, 0, 0, n, n, 1.0);
            return rc;
        }
        E = lead(w->E, n + 2 * m, n + 2 * m);
        gsl_matrix_set_zero(&M.matrix);
        put(&M.matrix, 0, 0, s->A, 0, 0, n, n, T);
        put(&M.matrix, 0, n, s->B, 0, 0, n, m, T);
        put_identity(&M.matrix, n, n + m, m);
        rc = rigmat_expm(&M.matrix, &E.matrix, o->expm_flags, w->expm, NULL, err);
        if (rc != RIGMAT_OK)
            return rc;
        put(Ad, 0, 0, &E.matrix, 0, 0, n, n, 1.0);
        /* Gam = G1 - G2 + Ad G2 (the scipy foh form of G1 + (Ad - I) G2) */
        for (i = 0; i < n; i++)
            for (j = 0; j < m; j++)
                gsl_matrix_set(&Gam.matrix, i, j,
                               gsl_matrix_get(&E.matrix, i, n + j) -
                                       gsl_matrix_get(&E.matrix, i, n + m + j));
        {
            gsl_matrix_const_view G2 = gsl_matrix_const_submatrix(&E.matrix, 0, n + m, n, m);
            gs = rigmat_dgemm(&w->expm->blas, CblasNoTrans, CblasNoTrans, 1.0, Ad, &G2.matrix, 1.0,
                              &Gam.matrix);
            if (gs == GSL_SUCCESS && ny > 0)
                gs = rigmat_dgemm(&w->expm->blas, CblasNoTrans, CblasNoTrans, 1.0, s->C, &G2.matrix,
                                  1.0, Dm);
            if (gs != GSL_SUCCESS)
                return gsl_bug(err, "matrix product", gs);
        }
        return RIGMAT_OK;
    }
    case RIGMAT_METHOD_EULER:
        for (i = 0; i < n; i++)
            for (j = 0; j < n; j++)
                gsl_matrix_set(Ad, i, j, (i == j ? 1.0 : 0.0) + T * gsl_matrix_get(s->A, i, j));
        if (m > 0)
            put(&Gam.matrix, 0, 0, s->B, 0, 0, n, m, T);
        return RIGMAT_OK;
    case RIGMAT_METHOD_TUSTIN:
    case RIGMAT_METHOD_BACKWARD_EULER: {
        /* alpha = 1/2 (Tustin) or 1 (backward Euler): I - alpha h A */
        const double alpha = o->method == RIGMAT_METHOD_TUSTIN ? 0.5 : 1.0;
        double h = T;
        gsl_matrix_view LU = lead(w->LU, n, n);
        gsl_permutation perm;
        int signum;

        if (o->method == RIGMAT_METHOD_TUSTIN && o->prewarp_hz > 0.0) {
            const double w1_rad_s = 2.0 * M_PI * o->prewarp_hz;
            h = 2.0 * tan(w1_rad_s * T / 2.0) / w1_rad_s;
        }
        perm.size = n;
        perm.data = w->perm->data;
        for (i = 0; i < n; i++)
            for (j = 0; j < n; j++) {
                const double a = gsl_matrix_get(s->A, i, j);
                gsl_matrix_set(&LU.matrix, i, j, (i == j ? 1.0 : 0.0) - alpha * h * a);
                gsl_matrix_set(Ad, i, j, (i == j ? 1.0 : 0.0) + (1.0 - alpha) * h * a);
            }
        gs = gsl_linalg_LU_decomp(&LU.matrix, &perm, &signum);
        if (gs != GSL_SUCCESS)
            return gsl_fail(err, "LU factorization", gs);
        for (i = 0; i < n; i++)
            if (gsl_matrix_get(&LU.matrix, i, i) == 0.0)
                return RIGMAT_FAIL(err, RIGMAT_ENUMERIC,
                                   "I - %g T A is singular: A has an eigenvalue at %.6g 1/s", alpha,
                                   1.0 / (alpha * h));
        for (j = 0; j < n && gs == GSL_SUCCESS; j++) {
            gsl_vector_view c = gsl_matrix_column(Ad, j);
            gs = gsl_linalg_LU_svx(&LU.matrix, &perm, &c.vector);
        }
        for (j = 0; j < m && gs == GSL_SUCCESS; j++) {
            gsl_vector_view c = gsl_matrix_column(&Gam.matrix, j);
            gsl_vector_const_view b = gsl_matrix_const_column(s->B, j);
            gs = gsl_vector_memcpy(&c.vector, &b.vector);
            if (gs == GSL_SUCCESS)
                gs = gsl_vector_scale(&c.vector, h);
            if (gs == GSL_SUCCESS)
                gs = gsl_linalg_LU_svx(&LU.matrix, &perm, &c.vector);
        }
        if (gs != GSL_SUCCESS)
            return gsl_fail(err, "LU solve", gs);
        if (ny == 0)
            return RIGMAT_OK;
        /* Dm = D + alpha C Gam, with Gam = (I - alpha h A)^-1 B h */
        if (m > 0) {
            gs = rigmat_dgemm(&w->expm->blas, CblasNoTrans, CblasNoTrans, alpha, s->C, &Gam.matrix,
                              1.0, Dm);
            if (gs != GSL_SUCCESS)
                return gsl_bug(err, "matrix product", gs);
        }
        /* Cm = C (I - alpha h A)^-1: with P M = L U, Z = Cm P^T solves Z L U = C */
        gs = rigmat_dtrsm(&w->expm->blas, CblasRight, CblasUpper, CblasNoTrans, CblasNonUnit, 1.0,
                          &LU.matrix, Cm);
        if (gs == GSL_SUCCESS)
            gs = rigmat_dtrsm(&w->expm->blas, CblasRight, CblasLower, CblasNoTrans, CblasUnit, 1.0,
                              &LU.matrix, Cm);
        if (gs != GSL_SUCCESS)
            return gsl_bug(err, "triangular solve", gs);
        for (i = 0; i < ny; i++) {
            gsl_vector_view row = gsl_matrix_row(Cm, i);
            gsl_vector_view t = gsl_vector_subvector(w->tmp, 0, n);
            /* Cm[:, p[k]] = Z[:, k] */
            for (j = 0; j < n; j++)
                gsl_vector_set(&t.vector, gsl_permutation_get(&perm, j),
                               gsl_vector_get(&row.vector, j));
            gs = gsl_vector_memcpy(&row.vector, &t.vector);
            if (gs != GSL_SUCCESS)
                return gsl_bug(err, "copy", gs);
        }
        return RIGMAT_OK;
    }
    }
    return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "unknown discretization method %d", (int)o->method);
}

static rigmat_status check_opts(const rigmat_lti *s, const rigmat_discretize_opts *o,
                                const rigmat_discretize_ws *w, rigmat_error *err)
{
    if (s == NULL || o == NULL || w == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "discretize: missing argument");
    if (s->nx == 0 || s->A == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the model has no states to sample");
    if (s->nu_control > s->nu || (s->nu > 0 && s->B == NULL) || (s->ny > 0 && s->C == NULL) ||
        (s->ny > 0 && s->nu > 0 && s->D == NULL))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "discretize: inconsistent model sizes");
    if (s->nx > w->nx || s->nu > w->nu || s->ny > w->ny)
        return RIGMAT_FAIL(
                err, RIGMAT_EUSAGE,
                "discretize: workspace is for %zu states, %zu inputs and %zu outputs, model has "
                "%zu, %zu and %zu",
                w->nx, w->nu, w->ny, s->nx, s->nu, s->ny);
    if (!(o->period_s > 0.0) || !isfinite(o->period_s))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the sample period must be positive, got %g s",
                           o->period_s);
    if (o->prewarp_hz != 0.0) {
        if (o->method != RIGMAT_METHOD_TUSTIN)
            return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "prewarping applies to tustin only, not %s",
                               rigmat_method_name(o->method));
        if (!(o->prewarp_hz > 0.0) || !(o->prewarp_hz * o->period_s < 0.5))
            return RIGMAT_FAIL(
                    err, RIGMAT_EUSAGE,
                    "the prewarp frequency must lie in (0, %g Hz), below Nyquist; got %g Hz",
                    0.5 / o->period_s, o->prewarp_hz);
    }
    if (o->delay_samples != 0.0) {
        if (o->method != RIGMAT_METHOD_ZOH)
            return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "an input delay needs zoh, not %s",
                               rigmat_method_name(o->method));
        if (!(o->delay_samples >= 0.0) || !(o->delay_samples <= max_delay_samples))
            return RIGMAT_FAIL(err, RIGMAT_EUSAGE,
                               "the delay must be between 0 and %g samples, got %g",
                               max_delay_samples, o->delay_samples);
    }
    return RIGMAT_OK;
}

static rigmat_status name_delays(const rigmat_lti *s, rigmat_dlti *d, rigmat_error *err)
{
    size_t j, i;

    d->delay_states = calloc(rigmat_size_mul_add(d->nu, d->ndelay, 0), sizeof *d->delay_states);
    if (d->delay_states == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    for (j = 0; j < d->ndelay; j++)
        for (i = 0; i < d->nu; i++) {
            rigmat_signal *g = &d->delay_states[j * d->nu + i];
            const rigmat_signal *in = s->inputs != NULL ? &s->inputs[i] : NULL;
            char buf[160];
            const int len = in != NULL && in->name != NULL
                                    ? snprintf(buf, sizeof buf, "%s.delayed%zu", in->name, j + 1)
                                    : snprintf(buf, sizeof buf, "u%zu.delayed%zu", i + 1, j + 1);
            if (len < 0 || (size_t)len >= sizeof buf)
                return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "input name too long for a delay state");
            g->name = malloc((size_t)len + 1);
            if (g->name == NULL)
                return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
            memcpy(g->name, buf, (size_t)len + 1);
            if (in != NULL)
                memcpy(g->unit, in->unit, sizeof g->unit);
            else
                strcpy(g->unit, "?");
            g->unit[sizeof g->unit - 1] = '\0';
            g->kind = RIGMAT_SIG_DELAY;
            g->index = i;
            g->role = RIGMAT_ROLE_INPUT;
        }
    return RIGMAT_OK;
}

/* Gamma0 over (1 - f) T into w->G0 and Gamma1 = Phi_(1-f) Gamma_f into w->G1,
 * for the control columns. */
static rigmat_status delay_gammas(const rigmat_lti *s, const rigmat_discretize_opts *o, double frac,
                                  rigmat_discretize_ws *w, rigmat_error *err)
{
    const size_t n = s->nx, mc = s->nu_control;
    const double T = o->period_s;
    gsl_matrix_view E, G0 = lead(w->G0, n, mc), G1 = lead(w->G1, n, mc);
    gsl_matrix_view Phi1 = lead(w->Phi1, n, n);
    rigmat_status rc;
    int gs;

    rc = expm_hold(s->A, s->B, n, mc, (1.0 - frac) * T, w, o->expm_flags, &E, err);
    if (rc != RIGMAT_OK)
        return rc;
    put(&Phi1.matrix, 0, 0, &E.matrix, 0, 0, n, n, 1.0);
    put(&G0.matrix, 0, 0, &E.matrix, 0, n, n, mc, 1.0);
    if (frac == 0.0) {
        gsl_matrix_set_zero(&G1.matrix);
        return RIGMAT_OK;
    }
    rc = expm_hold(s->A, s->B, n, mc, frac * T, w, o->expm_flags, &E, err);
    if (rc != RIGMAT_OK)
        return rc;
    {
        gsl_matrix_const_view Gf = gsl_matrix_const_submatrix(&E.matrix, 0, n, n, mc);
        gs = rigmat_dgemm(&w->expm->blas, CblasNoTrans, CblasNoTrans, 1.0, &Phi1.matrix, &Gf.matrix,
                          0.0, &G1.matrix);
    }
    if (gs != GSL_SUCCESS)
        return gsl_bug(err, "matrix product", gs);
    return RIGMAT_OK;
}

/* NULL (an empty block) counts as finite. */
static int finite_all(const gsl_matrix *m)
{
    size_t i, j;

    for (i = 0; m != NULL && i < m->size1; i++)
        for (j = 0; j < m->size2; j++)
            if (!isfinite(gsl_matrix_get(m, i, j)))
                return 0;
    return 1;
}

/* 1 when d has the sizes of a result of s and o (n plant states, L delay
 * stages): it can be refilled in place. */
static int dlti_fits(const rigmat_dlti *d, const rigmat_lti *s, size_t L)
{
    return d->nx_plant == s->nx && d->nu == s->nu_control && d->nw == s->nu - s->nu_control &&
           d->ny == s->ny && d->ndelay == L && d->delay_states == NULL;
}

static void zero_if(gsl_matrix *m)
{
    if (m != NULL)
        gsl_matrix_set_zero(m);
}

rigmat_status rigmat_discretize(const rigmat_lti *s, const rigmat_discretize_opts *o,
                                rigmat_discretize_ws *w, rigmat_dlti **out, rigmat_error *err)
{
    rigmat_dlti *d = NULL;
    rigmat_status rc;

    if (out != NULL)
        *out = NULL;
    if (out == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "discretize: missing argument");
    rc = rigmat_discretize_reuse(s, o, w, &d, err);
    if (rc != RIGMAT_OK)
        rigmat_dlti_free(d);
    else
        *out = d;
    return rc;
}

rigmat_status rigmat_discretize_reuse(const rigmat_lti *s, const rigmat_discretize_opts *o,
                                      rigmat_discretize_ws *w, rigmat_dlti **io,
                                      rigmat_error *err)
{
    rigmat_dlti *d = NULL;
    gsl_matrix_view Cv, Dv, Pv;
    gsl_matrix *Cm = NULL, *Dm = NULL, *Phi;
    size_t n, mc, mw, ny, L = 0, whole = 0, j;
    double frac = 0.0;
    rigmat_status rc;
    int bad = 0;

    if (io == NULL)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "discretize: missing argument");
    rc = check_opts(s, o, w, err);
    if (rc != RIGMAT_OK)
        return rc;
    n = s->nx;
    mc = s->nu_control;
    mw = s->nu - mc;
    ny = s->ny;
    if (o->delay_samples > 0.0) {
        const double fl = floor(o->delay_samples);
        whole = (size_t)fl;
        frac = o->delay_samples - fl;
        L = frac > 0.0 ? whole + 1 : whole;
    }
    if (mc == 0)
        L = 0; /* nothing to delay */
    {
        /* n + mc L, refused above the limit before anything is allocated */
        const size_t nx = rigmat_size_mul_add(mc, L, n);
        if (nx > o->max_states) {
            rc = RIGMAT_FAIL(err, RIGMAT_EUSAGE,
                             "a delay of %g samples needs %.0f states (%zu of the plant, %zu "
                             "control inputs x %zu delay stages), above the limit of %zu states",
                             o->delay_samples, (double)n + (double)mc * (double)L, n, mc, L,
                             o->max_states);
            rigmat_error_hint(err, "each delayed sample adds a state per control input; the "
                                   "limit is max_sampled_states in rigmat_options (README.md, "
                                   "Limits)");
            return rc;
        }
    }
    if (*io != NULL && dlti_fits(*io, s, L)) {
        /* refilled in place: every block starts from zero, as a new one */
        d = *io;
        zero_if(d->Ad);
        zero_if(d->Bd);
        zero_if(d->Gd);
        zero_if(d->Cd);
        zero_if(d->Dd);
        zero_if(d->Ed);
        goto fill;
    }
    rigmat_dlti_free(*io);
    *io = d = calloc(1, sizeof *d);
    if (d == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    d->method = o->method;
    d->period_s = o->period_s;
    d->prewarp_hz = o->prewarp_hz;
    d->delay_samples = o->delay_samples;
    d->nx_plant = n;
    d->nu = mc;
    d->nw = mw;
    d->ny = ny;
    d->ndelay = L;
    d->nx = n + mc * L;
    d->Ad = zeros(d->nx, d->nx, &bad);
    d->Bd = zeros(d->nx, mc, &bad);
    d->Gd = zeros(d->nx, mw, &bad);
    d->Cd = zeros(ny, d->nx, &bad);
    d->Dd = zeros(ny, mc, &bad);
    d->Ed = zeros(ny, mw, &bad);
    if (bad)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
fill:
    d->method = o->method;
    d->period_s = o->period_s;
    d->prewarp_hz = o->prewarp_hz;
    d->delay_samples = o->delay_samples;
    /* the method writes Ad and Cd in place (their plant blocks), Dm into w->Dm */
    Pv = lead(d->Ad, n, n);
    Phi = &Pv.matrix;
    if (ny > 0) {
        Cv = lead(d->Cd, ny, n);
        Cm = &Cv.matrix;
        if (s->nu > 0) {
            Dv = lead(w->Dm, ny, s->nu);
            Dm = &Dv.matrix;
        }
    }
    rc = method_core(s, o, w, Phi, Cm, Dm, err);
    if (rc != RIGMAT_OK)
        return rc;
    if (mw > 0)
        put(d->Gd, 0, 0, w->Gf, 0, mc, n, mw, 1.0);
    if (ny > 0) {
        if (mw > 0)
            put(d->Ed, 0, 0, Dm, 0, mc, ny, mw, 1.0);
    }
    if (L == 0) {
        if (mc > 0) {
            put(d->Bd, 0, 0, w->Gf, 0, 0, n, mc, 1.0);
            if (ny > 0)
                put(d->Dd, 0, 0, Dm, 0, 0, ny, mc, 1.0);
        }
    } else {
        /* stage j (1-based) holds u[k-j] in columns n + (j-1) mc ... */
        rc = delay_gammas(s, o, frac, w, err);
        if (rc != RIGMAT_OK)
            return rc;
        if (whole == 0)
            put(d->Bd, 0, 0, w->G0, 0, 0, n, mc, 1.0); /* u[k-0] */
        else
            put(d->Ad, 0, n + (whole - 1) * mc, w->G0, 0, 0, n, mc, 1.0);
        if (frac > 0.0)
            put(d->Ad, 0, n + whole * mc, w->G1, 0, 0, n, mc, 1.0); /* u[k-d-1] */
        put_identity(d->Bd, n, 0, mc);
        for (j = 2; j <= L; j++)
            put_identity(d->Ad, n + (j - 1) * mc, n + (j - 2) * mc, mc);
        if (ny > 0)
            put(d->Cd, 0, n + (L - 1) * mc, Dm, 0, 0, ny, mc, 1.0);
        rc = name_delays(s, d, err);
        if (rc != RIGMAT_OK)
            return rc;
    }
    if (!finite_all(d->Ad) || !finite_all(d->Bd) || !finite_all(d->Gd) || !finite_all(d->Cd) ||
            !finite_all(d->Dd) || !finite_all(d->Ed))
        rc = RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "the sampled model is not finite");
    return rc;
}

/* ------------------------------------------------------------ advice */

rigmat_sampling_limits rigmat_sampling_limits_default(void)
{
    rigmat_sampling_limits l;

    l.nyquist_fraction = 0.5;
    l.unstable_lambda_t = 0.3;
    l.fast_pole_lambda_t = 5.0;
    l.imag_rtol = 1e-9;
    return l;
}

static void add_item(rigmat_advice *items, size_t cap, size_t *count, rigmat_advice_kind k,
                     double re, double im, size_t state)
{
    if (*count < cap) {
        items[*count].kind = k;
        items[*count].re = re;
        items[*count].im = im;
        items[*count].state = state;
    }
    (*count)++;
}

rigmat_status rigmat_sampling_advice(const rigmat_lti *s, const rigmat_discretize_opts *o,
                                     const rigmat_sampling_limits *lim, rigmat_advice *items,
                                     size_t cap, size_t *count, rigmat_error *err)
{
    gsl_matrix *A = NULL;
    gsl_vector_complex *ev = NULL;
    gsl_matrix_complex *V = NULL;
    rigmat_fastblas fb;
    rigmat_status rc = RIGMAT_OK;
    const double T = o->period_s;
    size_t n, i, k;
    int gs;

    *count = 0;
    if (s->nx == 0)
        return RIGMAT_OK;
    n = s->nx;
    rigmat_fastblas_init(&fb);
    A = rigmat_matrix_alloc(n, n);
    ev = gsl_vector_complex_alloc(n);
    V = gsl_matrix_complex_alloc(n, n);
    if (A == NULL || ev == NULL || V == NULL) {
        rc = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        goto done;
    }
    /* a large model's eigenvalues by LAPACK (fastblas.h): the 2000 states
     * of a 1000-mass chain took 55 s with GSL's QR, most of `discretize` */
    gs = gsl_matrix_memcpy(A, s->A);
    if (gs == GSL_SUCCESS)
        gs = rigmat_eigen_nonsymmv(&fb, A, ev, V);
    if (gs == GSL_ENOMEM) {
        rc = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        goto done;
    }
    if (gs != GSL_SUCCESS) {
        rc = RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "eigenvalues of A did not converge: %s",
                         gsl_strerror(gs));
        goto done;
    }
    for (k = 0; k < n; k++) {
        const gsl_complex z = gsl_vector_complex_get(ev, k);
        const double re = GSL_REAL(z), im = GSL_IMAG(z);
        const double mag = hypot(re, im);
        const int is_real = fabs(im) <= lim->imag_rtol * mag;
        size_t where = RIGMAT_NONE;
        double best = -1.0;

        if (im < 0.0 && !is_real)
            continue; /* one item per conjugate pair */
        for (i = 0; i < n; i++) {
            const double a = gsl_complex_abs(gsl_matrix_complex_get(V, i, k));
            if (a > best) {
                best = a;
                where = i;
            }
        }
        if (!is_real && fabs(im) * T > lim->nyquist_fraction * M_PI)
            add_item(items, cap, count, RIGMAT_ADVICE_NYQUIST, re, im, where);
        if (re > 0.0 && mag * T > lim->unstable_lambda_t)
            add_item(items, cap, count, RIGMAT_ADVICE_UNSTABLE, re, im, where);
        if (o->method == RIGMAT_METHOD_EULER && re < 0.0 && hypot(1.0 + re * T, im * T) >= 1.0)
            add_item(items, cap, count, RIGMAT_ADVICE_EULER, re, im, where);
        if (is_real && re < 0.0 && mag * T > lim->fast_pole_lambda_t && where != RIGMAT_NONE &&
            s->states != NULL && s->states[where].kind == RIGMAT_SIG_CURRENT)
            add_item(items, cap, count, RIGMAT_ADVICE_NEGLECT_L, re, im, where);
        if (is_real && re < 0.0 && mag * T > lim->fast_pole_lambda_t && where != RIGMAT_NONE &&
            s->states != NULL && s->states[where].kind == RIGMAT_SIG_FILTERED)
            add_item(items, cap, count, RIGMAT_ADVICE_FAST_FILTER, re, im, where);
    }
    if (o->method != RIGMAT_METHOD_ZOH) {
        for (i = s->nu_control; i < s->nu; i++)
            if (s->input_intensity != NULL && s->input_intensity[i] > 0.0)
                break;
        if (i < s->nu)
            add_item(items, cap, count, RIGMAT_ADVICE_QD_NOT_EXACT, 0.0, 0.0, RIGMAT_NONE);
    }
done:
    if (A != NULL)
        gsl_matrix_free(A);
    if (ev != NULL)
        gsl_vector_complex_free(ev);
    if (V != NULL)
        gsl_matrix_complex_free(V);
    rigmat_fastblas_release(&fb);
    return rc;
}
