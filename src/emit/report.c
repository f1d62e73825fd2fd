/* report.c - the HTML report of one model (report.h).
 *
 * The computations come first (modes, sampled model and noise, frequency
 * responses, simulations, validity), then the page is written top to
 * bottom.  Names and units of x, u and y are read through sig_x, sig_u and
 * sig_y only, so where they come from can change in one place.
 */
#include "report.h"
#include "svg.h"
#include "modes.h"
#include "simulate.h"
#include "validity.h"
#include "discretize.h"
#include "noise.h"
#include "linearize.h"

#include <math.h>
#include <stdlib.h>
#include <string.h>
#include <gsl/gsl_complex.h>
#include <gsl/gsl_complex_math.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_matrix.h>

#ifndef M_PI
#define M_PI 3.14159265358979323846
#endif

/* Default response sizes (report.h): an angle of 2 deg, a length of
 * 10 mm, a step of 0.1 in the input's SI unit; rows per run at most 500. */
#define OFFSET_ANGLE_RAD (2.0 * M_PI / 180.0)
#define OFFSET_LENGTH_M  0.01
#define STEP_SI          0.1
#define MAX_ROWS         500.0
#define MAX_VALIDITY     32
#define VALIDITY_HORIZON_S 2.0

/* ------------------------------------------------------------- names */

static const rigmat_signal *sig_x(const rigmat_model *m, size_t i)
{
    return &m->layout.states[i];
}

static const rigmat_signal *sig_u(const rigmat_model *m, size_t j)
{
    return &m->layout.inputs[j];
}

static const rigmat_signal *sig_y(const rigmat_model *m, size_t i)
{
    return &m->layout.outputs[i];
}

/* ------------------------------------------------------------- state */

struct sim_run {
    rigmat_sim_result r;
    rigmat_status st;
    char message[256]; /* why it stopped early; empty when complete */
};

struct freq_resp {
    size_t n;          /* grid points */
    double *f_hz;      /* n */
    double *mag, *ph;  /* ny * nu * n, channel (i, j) at ((i * nu) + j) * n */
    size_t nd;         /* sampled points, below Nyquist */
    double *dmag, *dph; /* ny * nu * nd */
};

struct report {
    const rigmat_model *m;
    const rigmat_lti *l;
    const rigmat_report_opts *o;
    double period_s, duration_s, step_s;
    rigmat_modes *md;
    rigmat_dlti *d;
    rigmat_noise *nz;
    struct freq_resp fr;
    rigmat_system *sys;
    rigmat_report_case cases[2 * RIGMAT_REPORT_MAX_CASES];
    size_t ncases;
    int offsets_chosen; /* 1 when the offsets are the defaults */
    struct sim_run *runs; /* ncases * 3: nonlinear, linear, sampled */
    rigmat_validity_item *val;
    size_t nval;
    rigmat_status val_st;
    char val_message[256];
    rigmat_validity_opts vo;
};

/* ------------------------------------------------------------- output helpers */

static void esc(FILE *f, const char *s)
{
    rigmat_svg_escape(f, s);
}

/* A number for a table cell: 5 significant digits; non-finite as words. */
static void cell_num(FILE *f, double v)
{
    if (isnan(v))
        fputs("<td class=\"na\">n/a</td>", f);
    else if (isinf(v))
        fputs(v > 0 ? "<td>+inf</td>" : "<td>-inf</td>", f);
    else
        fprintf(f, "<td>%.5g</td>", v == 0.0 ? 0.0 : v);
}

/* Below this, a real or imaginary part is rounding residue of a value at
 * zero (the modes' own "at 0" band, stab_rtol * omega_b). */
static double tiny(const rigmat_modes *md)
{
    return md->set.stab_rtol * md->omega_b;
}

static double snap(double v, double eps)
{
    return fabs(v) <= eps ? 0.0 : v;
}

/* A complex number as text: "-4.8", "5.1 + 2.2j", "0.97 - 0.1j". */
static void complex_text(FILE *f, double re, double im, double eps)
{
    re = snap(re, eps);
    im = snap(im, eps);
    if (im == 0.0)
        fprintf(f, "%.5g", re);
    else
        fprintf(f, "%.5g %s %.5gj", re, im < 0.0 ? "&#8722;" : "+", fabs(im));
}

/* A unit after a number: nothing for a pure number ("1"). */
static const char *unit_after(const rigmat_signal *s)
{
    return strcmp(s->unit, "1") == 0 ? "" : s->unit;
}

static void sig_label(FILE *f, const rigmat_signal *s)
{
    esc(f, s->name);
    fputs(" <span class=\"unit\">[", f);
    esc(f, s->unit);
    fputs("]</span>", f);
}

/* A labelled matrix: rows and columns "name [unit]". */
static void matrix_table(FILE *f, const char *caption, const gsl_matrix *M,
        const rigmat_signal *const *rows, size_t nr, const rigmat_signal *const *cols, size_t nc)
{
    size_t i, j;

    fputs("<div class=\"wide\"><table class=\"matrix\"><caption>", f);
    esc(f, caption);
    fputs("</caption>\n", f);
    if (M == NULL || nr == 0 || nc == 0) {
        fputs("<tr><td class=\"na\">(empty)</td></tr></table></div>\n", f);
        return;
    }
    fputs("<tr><th></th>", f);
    for (j = 0; j < nc; j++) {
        fputs("<th>", f);
        sig_label(f, cols[j]);
        fputs("</th>", f);
    }
    fputs("</tr>\n", f);
    for (i = 0; i < nr; i++) {
        fputs("<tr><th>", f);
        sig_label(f, rows[i]);
        fputs("</th>", f);
        for (j = 0; j < nc; j++)
            cell_num(f, gsl_matrix_get(M, i, j));
        fputs("</tr>\n", f);
    }
    fputs("</table></div>\n", f);
}

/* Pointer lists of the model's signals, for matrix_table. */
struct sigs {
    const rigmat_signal **x, **u, **y, **w; /* w: the disturbance inputs */
};

static int sigs_init(struct sigs *s, const rigmat_model *m)
{
    const rigmat_layout *L = &m->layout;
    size_t i;

    s->x = calloc(L->nx + 1, sizeof *s->x);
    s->u = calloc(L->nu + 1, sizeof *s->u);
    s->y = calloc(L->ny + 1, sizeof *s->y);
    if (s->x == NULL || s->u == NULL || s->y == NULL)
        return -1;
    for (i = 0; i < L->nx; i++)
        s->x[i] = sig_x(m, i);
    for (i = 0; i < L->nu; i++)
        s->u[i] = sig_u(m, i);
    for (i = 0; i < L->ny; i++)
        s->y[i] = sig_y(m, i);
    s->w = s->u + L->nu_control;
    return 0;
}

static void sigs_release(struct sigs *s)
{
    free(s->x);
    free(s->u);
    free(s->y);
}

/* ------------------------------------------------------------- choices */

/* The coordinate state whose coordinate state i belongs to (itself, or the
 * coordinate of a rate); RIGMAT_NONE for other states. */
static size_t coord_of(const rigmat_model *m, size_t i)
{
    const rigmat_layout *L = &m->layout;
    size_t k;

    if (sig_x(m, i)->kind == RIGMAT_SIG_COORD)
        return i;
    if (sig_x(m, i)->kind != RIGMAT_SIG_RATE)
        return RIGMAT_NONE;
    for (k = 0; k < L->nx; k++)
        if (sig_x(m, k)->kind == RIGMAT_SIG_COORD && sig_x(m, k)->index == sig_x(m, i)->index)
            return k;
    return RIGMAT_NONE;
}

/* A mode's main coordinate (report.h), or RIGMAT_NONE. */
static size_t main_coord(const rigmat_model *m, const rigmat_mode *md, size_t nx, double *sum)
{
    size_t i, best = RIGMAT_NONE;

    for (i = 0; i < nx; i++)
        sum[i] = 0.0;
    for (i = 0; i < nx; i++) {
        const size_t c = coord_of(m, i);
        if (c != RIGMAT_NONE)
            sum[c] += md->share[i];
    }
    for (i = 0; i < nx; i++)
        if (sum[i] > 0.0 && (best == RIGMAT_NONE || sum[i] > sum[best]))
            best = i;
    return best;
}

static double default_offset(const rigmat_signal *s)
{
    return strcmp(s->unit, "rad") == 0 ? OFFSET_ANGLE_RAD : OFFSET_LENGTH_M;
}

static rigmat_status choose(struct report *R, rigmat_error *err)
{
    const rigmat_model *m = R->m;
    const rigmat_modes *md = R->md;
    const size_t nx = md->nx;
    double *sum = calloc(nx + 1, sizeof *sum);
    double grow = 0.0, slow = HUGE_VAL, dur, k;
    size_t i, j, unstable = 0, slowest = RIGMAT_NONE;

    if (sum == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    for (i = 0; i < nx; i++) {
        const rigmat_mode *q = &md->modes[i];
        if (q->stability == RIGMAT_UNSTABLE) {
            unstable++;
            if (q->s_re > grow)
                grow = q->s_re;
        } else if (q->stability == RIGMAT_STABLE && -q->s_re < slow) {
            slow = -q->s_re;
            slowest = i;
        }
    }
    R->ncases = 0;
    if (R->o->noffsets > 0) {
        for (i = 0; i < R->o->noffsets; i++)
            R->cases[R->ncases++] = R->o->offsets[i];
        R->offsets_chosen = 0;
    } else {
        R->offsets_chosen = 1;
        for (i = 0; i < nx && R->ncases < RIGMAT_REPORT_MAX_CASES; i++) {
            size_t c;
            int dup = 0;
            if (!(unstable > 0 ? md->modes[i].stability == RIGMAT_UNSTABLE : i == slowest))
                continue;
            c = main_coord(m, &md->modes[i], nx, sum);
            if (c == RIGMAT_NONE)
                continue;
            for (j = 0; j < R->ncases; j++)
                dup |= R->cases[j].index == c;
            if (dup)
                continue;
            R->cases[R->ncases].is_input = 0;
            R->cases[R->ncases].index = c;
            R->cases[R->ncases++].size = default_offset(sig_x(m, c));
        }
    }
    for (j = 0; j < m->layout.nu_control && j < RIGMAT_REPORT_MAX_CASES; j++) {
        double size = STEP_SI;
        for (i = 0; i < R->o->nsteps; i++)
            if (R->o->steps[i].index == j)
                size = R->o->steps[i].size;
        R->cases[R->ncases].is_input = 1;
        R->cases[R->ncases].index = j;
        R->cases[R->ncases++].size = size;
    }
    free(sum);

    if (R->o->duration_s > 0.0) {
        dur = R->o->duration_s;
    } else {
        dur = grow > 0.0 ? 3.0 / grow : slowest != RIGMAT_NONE ? 5.0 / slow : 1.0;
        if (grow <= 0.0 && slowest != RIGMAT_NONE && md->modes[slowest].s_im != 0.0)
            dur = fmin(dur, 5.0 * 2.0 * M_PI / fabs(md->modes[slowest].s_im)); /* 5 periods */
        dur = rigmat_svg_nice_number(dur, 1);
        dur = dur < 0.05 ? 0.05 : dur > 20.0 ? 20.0 : dur;
    }
    k = ceil(dur / R->period_s / MAX_ROWS - 1e-9);
    R->step_s = (k < 1.0 ? 1.0 : k) * R->period_s;
    R->duration_s = R->step_s * ceil(dur / R->step_s - 1e-9);
    return RIGMAT_OK;
}

/* ------------------------------------------------------------- frequency response */

/* G = Cm (M)^-1 Bm + Dm at one point, where M = sI - A (continuous, s = jw)
 * or zI - Ad (sampled, z = e^{jwT}), into g (ny x nu, row-major). */
static rigmat_status freq_point(const gsl_matrix *A, const gsl_matrix *B, const gsl_matrix *C,
        const gsl_matrix *D, gsl_complex s, gsl_matrix_complex *M, gsl_permutation *p,
        gsl_vector_complex *b, gsl_vector_complex *x, gsl_complex *g)
{
    const size_t nx = A->size1, nu = B->size2, ny = C->size1;
    size_t i, j, k;
    int signum;

    for (i = 0; i < nx; i++)
        for (j = 0; j < nx; j++) {
            const double a = -gsl_matrix_get(A, i, j);
            gsl_matrix_complex_set(M, i, j,
                    i == j ? gsl_complex_add_real(s, a) : gsl_complex_rect(a, 0.0));
        }
    if (gsl_linalg_complex_LU_decomp(M, p, &signum) != GSL_SUCCESS)
        return RIGMAT_ENUMERIC;
    for (j = 0; j < nu; j++) {
        for (i = 0; i < nx; i++)
            gsl_vector_complex_set(b, i, gsl_complex_rect(gsl_matrix_get(B, i, j), 0.0));
        if (gsl_linalg_complex_LU_solve(M, p, b, x) != GSL_SUCCESS)
            return RIGMAT_ENUMERIC;
        for (i = 0; i < ny; i++) {
            gsl_complex acc = gsl_complex_rect(D != NULL ? gsl_matrix_get(D, i, j) : 0.0, 0.0);
            for (k = 0; k < nx; k++)
                acc = gsl_complex_add(acc,
                        gsl_complex_mul_real(gsl_vector_complex_get(x, k), gsl_matrix_get(C, i, k)));
            g[i * nu + j] = acc;
        }
    }
    return RIGMAT_OK;
}

rigmat_status rigmat_report_transfer(const gsl_matrix *A, const gsl_matrix *B,
        const gsl_matrix *C, const gsl_matrix *D, double s_re, double s_im, double *g_re,
        double *g_im, rigmat_error *err)
{
    const size_t nx = A->size1, nu = B->size2, ny = C->size1;
    gsl_matrix_complex *M;
    gsl_permutation *p;
    gsl_vector_complex *b, *x;
    gsl_complex *g;
    rigmat_status st = RIGMAT_OK;
    size_t k;

    if (A->size2 != nx || B->size1 != nx || C->size2 != nx
            || (D != NULL && (D->size1 != ny || D->size2 != nu)))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "transfer: mismatched matrix sizes");
    M = gsl_matrix_complex_alloc(nx, nx);
    p = gsl_permutation_alloc(nx);
    b = gsl_vector_complex_alloc(nx);
    x = gsl_vector_complex_alloc(nx);
    g = malloc(ny * nu * sizeof *g + 1);
    if (M == NULL || p == NULL || b == NULL || x == NULL || g == NULL) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    } else if (freq_point(A, B, C, D, gsl_complex_rect(s_re, s_im), M, p, b, x, g) != RIGMAT_OK) {
        st = RIGMAT_FAIL(err, RIGMAT_ENUMERIC, "transfer: sI - A is singular at s = %g%+gj",
                s_re, s_im);
    } else {
        for (k = 0; k < ny * nu; k++) {
            g_re[k] = GSL_REAL(g[k]);
            g_im[k] = GSL_IMAG(g[k]);
        }
    }
    gsl_matrix_complex_free(M);
    gsl_permutation_free(p);
    gsl_vector_complex_free(b);
    gsl_vector_complex_free(x);
    free(g);
    return st;
}

/* Unwrap a phase in degrees in place: jumps over 180 degrees are wraps. */
static void unwrap(double *ph, size_t n)
{
    size_t i;
    double shift = 0.0;

    for (i = 1; i < n; i++) {
        double d;
        if (!isfinite(ph[i]) || !isfinite(ph[i - 1] - shift)) {
            continue;
        }
        d = ph[i] + shift - ph[i - 1];
        while (d > 180.0)
            shift -= 360.0, d -= 360.0;
        while (d < -180.0)
            shift += 360.0, d += 360.0;
        ph[i] += shift;
    }
}

static rigmat_status freq_compute(struct report *R, rigmat_error *err)
{
    const rigmat_lti *l = R->l;
    const size_t nx = l->nx, nu = l->nu, ny = l->ny, n = R->o->freq_points;
    struct freq_resp *fr = &R->fr;
    gsl_matrix_complex *M = gsl_matrix_complex_alloc(nx, nx);
    gsl_permutation *p = gsl_permutation_alloc(nx);
    gsl_vector_complex *b = gsl_vector_complex_alloc(nx), *x = gsl_vector_complex_alloc(nx);
    gsl_complex *g = malloc((ny * nu + 1) * sizeof *g);
    double wlo = HUGE_VAL, whi = 0.0, flo, fhi, fny;
    rigmat_status st = RIGMAT_OK;
    size_t i, c, k;

    fr->n = n;
    fr->f_hz = malloc(n * sizeof *fr->f_hz);
    fr->mag = malloc((ny * nu * n + 1) * sizeof *fr->mag);
    fr->ph = malloc((ny * nu * n + 1) * sizeof *fr->ph);
    fr->dmag = malloc((ny * nu * n + 1) * sizeof *fr->dmag);
    fr->dph = malloc((ny * nu * n + 1) * sizeof *fr->dph);
    if (M == NULL || p == NULL || b == NULL || x == NULL || g == NULL || fr->f_hz == NULL
            || fr->mag == NULL || fr->ph == NULL || fr->dmag == NULL || fr->dph == NULL) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        goto done;
    }
    for (i = 0; i < nx; i++) {
        const double w = hypot(R->md->modes[i].s_re, R->md->modes[i].s_im);
        if (R->md->modes[i].stability == RIGMAT_MARGINAL && w <= 1e-6 * R->md->omega_b)
            continue;
        if (w > 0.0 && w < wlo)
            wlo = w;
        if (w > whi)
            whi = w;
    }
    if (whi > 0.0) {
        flo = wlo / (2.0 * M_PI) / 10.0;
        fhi = whi / (2.0 * M_PI) * 10.0;
    } else {
        flo = 0.1;
        fhi = 10.0;
    }
    fny = 0.5 / R->period_s;
    fr->nd = 0;
    for (k = 0; k < n; k++) {
        const double f = flo * pow(fhi / flo, (double)k / (double)(n - 1));
        const double w = 2.0 * M_PI * f;
        fr->f_hz[k] = f;
        if (freq_point(l->A, l->B, l->C, l->D, gsl_complex_rect(0.0, w), M, p, b, x, g)
                != RIGMAT_OK) {
            for (c = 0; c < ny * nu; c++)
                fr->mag[c * n + k] = (double)NAN, fr->ph[c * n + k] = (double)NAN;
        } else {
            for (c = 0; c < ny * nu; c++) {
                fr->mag[c * n + k] = gsl_complex_abs(g[c]);
                fr->ph[c * n + k] = gsl_complex_arg(g[c]) * 180.0 / M_PI;
            }
        }
        /* the sampled model below Nyquist, z = e^{jwT} */
        if (f < fny * (1.0 - 1e-9) && R->d != NULL && R->d->Bd != NULL) {
            const gsl_complex z = gsl_complex_polar(1.0, w * R->period_s);
            const size_t kd = fr->nd++;
            if (freq_point(R->d->Ad, R->d->Bd, R->d->Cd, R->d->Dd, z, M, p, b, x, g)
                    != RIGMAT_OK) {
                for (c = 0; c < ny * R->d->nu; c++)
                    fr->dmag[c * n + kd] = (double)NAN, fr->dph[c * n + kd] = (double)NAN;
            } else {
                for (c = 0; c < ny * R->d->nu; c++) {
                    fr->dmag[c * n + kd] = gsl_complex_abs(g[c]);
                    fr->dph[c * n + kd] = gsl_complex_arg(g[c]) * 180.0 / M_PI;
                }
            }
        }
    }
    for (c = 0; c < ny * nu; c++)
        unwrap(fr->ph + c * n, n);
    for (c = 0; R->d != NULL && c < ny * R->d->nu; c++)
        unwrap(fr->dph + c * n, fr->nd);
done:
    gsl_matrix_complex_free(M);
    gsl_permutation_free(p);
    gsl_vector_complex_free(b);
    gsl_vector_complex_free(x);
    free(g);
    return st;
}

/* ------------------------------------------------------------- simulations */

static rigmat_status simulate_all(struct report *R, rigmat_error *err)
{
    const rigmat_layout *L = &R->m->layout;
    double *offset = calloc(L->nx + 1, sizeof *offset);
    size_t c, k;
    rigmat_status st = RIGMAT_OK;

    R->runs = calloc(R->ncases * 3 + 1, sizeof *R->runs);
    if (offset == NULL || R->runs == NULL) {
        free(offset);
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    }
    for (c = 0; c < R->ncases * 3; c++)
        rigmat_sim_result_init(&R->runs[c].r);
    for (c = 0; c < R->ncases && st == RIGMAT_OK; c++) {
        const rigmat_report_case *q = &R->cases[c];
        rigmat_wave w;
        rigmat_sim_case sc;

        memset(&w, 0, sizeof w);
        memset(&sc, 0, sizeof sc);
        memset(offset, 0, (L->nx + 1) * sizeof *offset);
        if (q->is_input) {
            w.kind = RIGMAT_WAVE_STEP;
            w.input = q->index;
            w.value = q->size;
            w.t0_s = 0.0;
            sc.waves = &w;
            sc.nwaves = 1;
        } else {
            offset[q->index] = q->size;
            sc.offset = offset;
        }
        for (k = 0; k < 3; k++) {
            struct sim_run *run = &R->runs[c * 3 + k];
            rigmat_sim_opts so = rigmat_sim_opts_default();
            rigmat_error e;

            memset(&e, 0, sizeof e);
            so.model = (rigmat_sim_model)k;
            so.duration_s = R->duration_s;
            so.step_s = R->step_s;
            so.rate_hz = 1.0 / R->period_s;
            run->st = rigmat_simulate(R->sys, R->l, &so, &sc, &run->r, &e);
            if (run->st == RIGMAT_ENOMEM || run->st == RIGMAT_EUSAGE
                    || run->st == RIGMAT_EINTERNAL) {
                /* not a property of the model: the report cannot be made */
                *err = e;
                st = run->st;
                break;
            }
            if (run->st != RIGMAT_OK)
                snprintf(run->message, sizeof run->message, "%s", e.message);
        }
    }
    free(offset);
    return st;
}

/* ------------------------------------------------------------- page sections */

static const char style_sheet[] =
        "body{font-family:\"DejaVu Sans\",Verdana,sans-serif;font-size:13px;color:#222;"
        "max-width:1000px;margin:1.2em auto;padding:0 1em;line-height:1.45}\n"
        "h1{font-size:1.55em;border-bottom:3px solid #0072B2;padding-bottom:.2em}\n"
        "h2{font-size:1.2em;margin-top:2em;border-bottom:1px solid #aab;padding-bottom:.15em}\n"
        "h3{font-size:1.02em;margin:1.3em 0 .3em;break-after:avoid}\n"
        "table{border-collapse:collapse;margin:.4em 0 1em}\n"
        "caption{text-align:left;font-weight:bold;padding:.2em 0}\n"
        "td,th{border:1px solid #cdd;padding:2px 7px;text-align:right;white-space:nowrap}\n"
        "th{background:#eef3f7;text-align:left;font-weight:normal}\n"
        "td{font-family:\"DejaVu Sans Mono\",monospace;font-size:12px}\n"
        "td.t{font-family:inherit;text-align:left;white-space:normal}\n"
        "td.na{color:#888}\n"
        ".unit{color:#555}\n"
        ".wide{overflow-x:auto}\n"
        ".caution{border-left:5px solid #D55E00;background:#fbf1ea;padding:.4em 1em;margin:1em 0}\n"
        ".summary{font-size:1.08em;border-left:5px solid #0072B2;background:#eef5fa;"
        "padding:.4em 1em}\n"
        ".note{color:#444;font-size:.95em}\n"
        ".bad{color:#a33a00;font-weight:bold}\n"
        "nav ol{columns:2;font-size:.95em}\n"
        "figure{margin:.8em 0 1.4em}\n"
        "figcaption{font-size:.95em;color:#333;margin-top:.2em}\n"
        "svg{max-width:100%;height:auto}\n"
        "@media print{body{max-width:none;font-size:10pt;margin:0}"
        "nav{display:none}h2{break-after:avoid}"
        "figure,table{break-inside:avoid}.caution,.summary{background:none}"
        ".wide{overflow:visible}}\n";

static void section(FILE *f, const char *id, const char *title)
{
    fprintf(f, "<h2 id=\"%s\">", id);
    esc(f, title);
    fputs("</h2>\n", f);
}

static void write_head(FILE *f, const struct report *R)
{
    const rigmat_model *m = R->m;
    const rigmat_layout *L = &m->layout;
    char summary[512];
    size_t i;

    fputs("<!DOCTYPE html>\n<html xmlns=\"http://www.w3.org/1999/xhtml\" lang=\"en\">\n<head>\n"
          "<meta charset=\"utf-8\"/>\n<title>rigmat report: ",
            f);
    esc(f, m->name != NULL ? m->name : m->file);
    fprintf(f, "</title>\n<style>\n%s</style>\n</head>\n<body>\n<h1>", style_sheet);
    esc(f, m->name != NULL ? m->name : m->file);
    fputs("</h1>\n<p class=\"note\">Model file <code>", f);
    esc(f, m->file);
    fprintf(f, "</code>; rigmat %s; state order hash <code>", RIGMAT_VERSION);
    esc(f, L->order_hash);
    fprintf(f, "</code>; sampled at %.6g Hz (period %.6g s).</p>\n", 1.0 / R->period_s,
            R->period_s);
    rigmat_modes_summary(R->md, summary, sizeof summary);
    fputs("<p class=\"summary\">", f);
    esc(f, summary);
    fputs("</p>\n", f);

    fputs("<nav><ol>"
          "<li><a href=\"#summary\">Model summary and cautions</a></li>"
          "<li><a href=\"#signs\">Sign table</a></li>"
          "<li><a href=\"#point\">Operating point</a></li>"
          "<li><a href=\"#linear\">Linear model A, B, C, D</a></li>"
          "<li><a href=\"#modes\">Modes, zeros, DC gain</a></li>"
          "<li><a href=\"#poles\">Pole maps</a></li>"
          "<li><a href=\"#responses\">Responses: nonlinear, linear, sampled</a></li>"
          "<li><a href=\"#frequency\">Frequency responses</a></li>"
          "<li><a href=\"#validity\">Validity range of the linear model</a></li>"
          "<li><a href=\"#sampled\">Sampled model, Qd and Rd</a></li>"
          "</ol></nav>\n",
            f);

    section(f, "summary", "1. Model summary and cautions");
    {
        /* "1 motor", "2 motors", "1 body", "3 bodies" */
        const size_t nb = m->nbodies > 0 ? m->nbodies - 1 : 0;
        const size_t nd = L->nu - L->nu_control;
        fprintf(f, "<p>%zu bod%s besides ground, %zu joint%s, %zu motor%s, %zu force%s, "
                   "%zu sensor%s. %zu state%s, %zu input%s (%zu control, %zu disturbance%s), "
                   "%zu output%s.</p>\n",
                nb, nb == 1 ? "y" : "ies", m->njoints, m->njoints == 1 ? "" : "s",
                m->nmotors, m->nmotors == 1 ? "" : "s", m->nforces, m->nforces == 1 ? "" : "s",
                m->nsensors, m->nsensors == 1 ? "" : "s", L->nx, L->nx == 1 ? "" : "s",
                L->nu, L->nu == 1 ? "" : "s", L->nu_control, nd, nd == 1 ? "" : "s",
                L->ny, L->ny == 1 ? "" : "s");
    }
    fputs("<table><tr><th>vector</th><th>name</th><th>unit</th><th>what it is</th></tr>\n", f);
    for (i = 0; i < L->nx; i++) {
        const rigmat_signal *s = sig_x(m, i);
        const char *what;
        switch (s->kind) {
        case RIGMAT_SIG_COORD: what = "coordinate"; break;
        case RIGMAT_SIG_RATE: what = "rate"; break;
        case RIGMAT_SIG_CURRENT: what = "motor current"; break;
        case RIGMAT_SIG_SHAPING: what = "shaping filter"; break;
        case RIGMAT_SIG_DELAY: what = "delayed input"; break;
        case RIGMAT_SIG_BIAS: what = "sensor bias"; break;
        case RIGMAT_SIG_FILTERED: what = "sensor filter"; break;
        default: what = "state"; break;
        }
        fprintf(f, "<tr><th>x%zu</th><td class=\"t\">", i + 1);
        esc(f, s->name);
        fputs("</td><td class=\"t\">", f);
        esc(f, s->unit);
        fprintf(f, "</td><td class=\"t\">%s</td></tr>\n", what);
    }
    for (i = 0; i < L->nu; i++) {
        const rigmat_signal *s = sig_u(m, i);
        fprintf(f, "<tr><th>u%zu</th><td class=\"t\">", i + 1);
        esc(f, s->name);
        fputs("</td><td class=\"t\">", f);
        esc(f, s->unit);
        fprintf(f, "</td><td class=\"t\">%s input</td></tr>\n",
                i < L->nu_control ? "control" : "disturbance");
    }
    for (i = 0; i < L->ny; i++) {
        const rigmat_signal *s = sig_y(m, i);
        fprintf(f, "<tr><th>y%zu</th><td class=\"t\">", i + 1);
        esc(f, s->name);
        fputs("</td><td class=\"t\">", f);
        esc(f, s->unit);
        fputs("</td><td class=\"t\">sensor output</td></tr>\n", f);
    }
    fputs("</table>\n", f);
    fputs("<div class=\"caution\"><p><strong>Cautions.</strong></p><ul>"
          "<li>A linear model holds only near its operating point. Section 9 shows how far "
          "from it this one stays within the stated error; beyond that, trust the nonlinear "
          "model and, above all, the rig.</li>"
          "<li>Test every controller designed from this model first against the nonlinear "
          "model, then on the rig with current limits set in the motor driver and an "
          "emergency stop within reach. Start with low gains and small moves.</li>"
          "<li>The model is only as good as its numbers: masses, inertias, motor constants "
          "and sensor figures should be measured on the rig where it matters.</li>"
          "<li>This report does not replace a safety assessment. Defer to local codes, "
          "standards and licensed practice for anything that can hurt people or "
          "property.</li></ul></div>\n",
            f);
}

static void write_signs(FILE *f, const struct report *R, double *row)
{
    const rigmat_model *m = R->m;
    const rigmat_lti *l = R->l;
    const rigmat_layout *L = &m->layout;
    size_t i, k;

    section(f, "signs", "2. Sign table");
    fputs("<p>The first response of each coordinate and each sensor to a positive step of "
          "each input, at the operating point, with the order of the derivative in which it "
          "first appears (for a coordinate 2 is its acceleration; for a sensor 0 means the "
          "input reaches it directly). Check these against the rig before trusting any "
          "gain: a wrong sign here is a wrong sign everywhere.</p>\n",
            f);
    fputs("<div class=\"wide\"><table><tr><th></th>", f);
    for (k = 0; k < L->nu; k++) {
        fputs("<th>", f);
        esc(f, sig_u(m, k)->name);
        fputs("</th>", f);
    }
    fputs("</tr>\n", f);
    for (i = 0; i < L->nx + L->ny; i++) {
        const int is_out = i >= L->nx;
        const size_t r = is_out ? i - L->nx : i;
        size_t c;

        if (!is_out && sig_x(m, r)->kind != RIGMAT_SIG_COORD)
            continue;
        fputs("<tr><th>", f);
        esc(f, is_out ? sig_y(m, r)->name : sig_x(m, r)->name);
        fputs(is_out ? " (sensor)" : " (coordinate)", f);
        fputs("</th>", f);
        for (c = 0; c < l->nx; c++)
            row[c] = is_out ? gsl_matrix_get(l->C, r, c) : (c == r ? 1.0 : 0.0);
        for (k = 0; k < L->nu; k++) {
            int order = 0;
            const double d = is_out && l->D != NULL ? gsl_matrix_get(l->D, r, k) : 0.0;
            const int s = rigmat_lti_first_response(l, row, d, k, &order);
            if (s == 0)
                fputs("<td>0</td>", f);
            else
                fprintf(f, "<td>%s (%d)</td>", s > 0 ? "+" : "&#8722;", order);
        }
        fputs("</tr>\n", f);
    }
    fputs("</table></div>\n", f);
}

static void write_point(FILE *f, const struct report *R)
{
    const rigmat_model *m = R->m;
    const rigmat_lti *l = R->l;
    size_t i;

    section(f, "point", "3. Operating point");
    fputs("<p>", f);
    if (l->is_steady)
        fprintf(f, "The operating point is a steady state: the largest residual of the "
                   "balance equations is %.3g (SI).",
                l->residual);
    else
        fprintf(f, "<span class=\"bad\">The operating point is not a steady state</span>: the "
                   "largest residual of the balance equations is %.3g (SI). The model is "
                   "affine there (x' = A x + B u + f0); the responses below include f0.",
                l->residual);
    fputs("</p>\n<table><tr><th>state</th><th>value</th><th>derivative f0</th></tr>\n", f);
    for (i = 0; i < l->nx; i++) {
        fputs("<tr><th>", f);
        sig_label(f, sig_x(m, i));
        fputs("</th>", f);
        cell_num(f, gsl_vector_get(l->x0, i));
        cell_num(f, gsl_vector_get(l->f0, i));
        fputs("</tr>\n", f);
    }
    fputs("</table>\n<table><tr><th>input</th><th>value</th></tr>\n", f);
    for (i = 0; i < l->nu; i++) {
        fputs("<tr><th>", f);
        sig_label(f, sig_u(m, i));
        fputs("</th>", f);
        cell_num(f, gsl_vector_get(l->u0, i));
        fputs("</tr>\n", f);
    }
    fputs("</table>\n<table><tr><th>output</th><th>value</th></tr>\n", f);
    for (i = 0; i < l->ny; i++) {
        fputs("<tr><th>", f);
        sig_label(f, sig_y(m, i));
        fputs("</th>", f);
        cell_num(f, gsl_vector_get(l->y0, i));
        fputs("</tr>\n", f);
    }
    fputs("</table>\n", f);
}

static void write_linear(FILE *f, const struct report *R, const struct sigs *S)
{
    const rigmat_lti *l = R->l;

    section(f, "linear", "4. Linear model");
    fputs("<p>x' = A x + B u + f0, y = C x + D u, in deviations from the operating point; "
          "rows and columns are named with their SI units, so each entry's unit is the row's "
          "over the column's (per second in A and B).</p>\n",
            f);
    matrix_table(f, "A", l->A, S->x, l->nx, S->x, l->nx);
    matrix_table(f, "B", l->B, S->x, l->nx, S->u, l->nu);
    matrix_table(f, "C", l->C, S->y, l->ny, S->x, l->nx);
    matrix_table(f, "D", l->D, S->y, l->ny, S->u, l->nu);
}

static void name_list(FILE *f, const unsigned char *flags, char *const *names, size_t n)
{
    size_t i, count = 0;

    for (i = 0; i < n; i++)
        if (flags[i]) {
            if (count++)
                fputs(", ", f);
            esc(f, names[i]);
        }
    if (count == 0)
        fputs("none", f);
}

static void write_modes(FILE *f, const struct report *R, const struct sigs *S)
{
    const rigmat_modes *md = R->md;
    size_t i, k, j;

    section(f, "modes", "5. Modes");
    fprintf(f, "<p>Eigenvalues of A (s) and of the sampled model (z = e<sup>sT</sup>, T = %.6g "
               "s), slowest first. Shares come from the eigenvector in scaled units (each "
               "state divided by its characteristic size from a balancing of A), so a radian "
               "and a metre weigh alike; shares below %.3g %% are left out. Controllable: "
               "reached by the control inputs; observable: seen by the outputs (PBH test).</p>\n",
            md->period_s, 100.0 * md->set.share_min);
    fputs("<div class=\"wide\"><table><tr><th>s [1/s]</th><th>z</th><th>frequency [Hz]</th>"
          "<th>damping</th><th>time constant [s]</th><th>stability</th><th>lives in</th>"
          "<th>reached by</th><th>seen by</th></tr>\n",
            f);
    for (i = 0; i < md->nx; i++) {
        const rigmat_mode *q = &md->modes[i];
        fputs("<tr><td>", f);
        complex_text(f, q->s_re, q->s_im, tiny(md));
        fputs("</td><td>", f);
        complex_text(f, q->z_re, q->z_im, 1e-12);
        fputs("</td>", f);
        cell_num(f, q->frequency_hz);
        cell_num(f, q->damping);
        cell_num(f, q->time_constant_s);
        fprintf(f, "<td class=\"t%s\">%s</td><td class=\"t\">",
                q->stability == RIGMAT_UNSTABLE ? " bad" : "", rigmat_stability_name(q->stability));
        for (k = 0; k < md->nx; k++) {
            const size_t s = q->by_share[k];
            if (q->share[s] < md->set.share_min)
                break;
            if (k > 0)
                fputs(", ", f);
            esc(f, md->state_names[s]);
            fprintf(f, " %.0f%%", 100.0 * q->share[s]);
        }
        fputs("</td><td class=\"t\">", f);
        if (!q->controllable && sig_x(R->m, q->by_share[0])->kind == RIGMAT_SIG_SHAPING)
            fputs("not controllable (a disturbance's own filter, as expected); ", f);
        else if (!q->controllable)
            fputs("<span class=\"bad\">not controllable</span>; ", f);
        name_list(f, q->reached_by, md->input_names, md->nu);
        fputs("</td><td class=\"t\">", f);
        if (!q->observable)
            fputs("<span class=\"bad\">not observable</span>; ", f);
        name_list(f, q->seen_by, md->output_names, md->ny);
        fputs("</td></tr>\n", f);
    }
    fputs("</table></div>\n", f);

    fputs("<h3>Zeros of each channel</h3>\n<p>Invariant zeros of each input/output pair "
          "(finite generalized eigenvalues of the Rosenbrock pencil). A zero in the right "
          "half-plane means the first response of that output goes the wrong way: a "
          "controller cannot make it fast without overshoot or undershoot.</p>\n"
          "<div class=\"wide\"><table><tr><th>input</th><th>output</th><th>zeros [1/s]</th>"
          "</tr>\n",
            f);
    for (i = 0; i < md->ny; i++)
        for (j = 0; j < md->nu; j++) {
            const rigmat_channel_zeros *z = &md->zeros[i * md->nu + j];
            fputs("<tr><th>", f);
            esc(f, md->input_names[j]);
            fputs("</th><th>", f);
            esc(f, md->output_names[i]);
            fputs("</th><td class=\"t\">", f);
            if (z->no_path) {
                fputs("no path from this input to this output", f);
            } else if (z->count == 0) {
                fputs("none", f);
            } else {
                for (k = 0; k < z->count; k++) {
                    const int rhp = z->re[k] > md->set.stab_rtol * md->omega_b;
                    fputs(k > 0 ? ", " : "", f);
                    fputs(rhp ? "<span class=\"bad\">" : "", f);
                    complex_text(f, z->re[k], z->im[k], tiny(md));
                    fputs(rhp ? "</span>" : "", f);
                }
                if (z->rhp > 0)
                    fprintf(f, " <span class=\"bad\">(%zu in the right half-plane: the "
                               "response starts the wrong way)</span>",
                            z->rhp);
            }
            fputs("</td></tr>\n", f);
        }
    fputs("</table></div>\n", f);
    if (md->dc_gain != NULL) {
        fputs("<p>DC gain, -C A<sup>-1</sup> B + D: the steady change of each output per unit "
              "step of each input; n/a where a pole at 0 makes it infinite.</p>\n",
                f);
        matrix_table(f, "DC gain", md->dc_gain, S->y, md->ny, S->u, md->nu);
    }
}

/* Pole map figure: the s-plane (and a view near the origin when the modes
 * span a wide range), and the z-plane. */
static rigmat_status write_poles(FILE *f, const struct report *R, rigmat_error *err)
{
    const rigmat_modes *md = R->md;
    const size_t nx = md->nx;
    double *buf = malloc((6 * nx + 4 * md->ny * md->nu * (nx + 1) + 8) * sizeof *buf);
    double *sre, *sim, *zre, *zim, *qre, *qim, wmin = HUGE_VAL, wmax = 0.0, zoom = 0.0;
    size_t i, j, k, nz = 0, outside = 0, far_zeros = 0;
    rigmat_svg_series ser[4];
    rigmat_svg_plot p[3];
    rigmat_svg_figure fig;
    rigmat_status st;

    if (buf == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    sre = buf, sim = sre + nx, zre = sim + nx, zim = zre + nx;
    qre = zim + nx, qim = qre + md->ny * md->nu * (nx + 1);
    for (i = 0; i < nx; i++) {
        const double w = hypot(md->modes[i].s_re, md->modes[i].s_im);
        sre[i] = snap(md->modes[i].s_re, tiny(md)), sim[i] = snap(md->modes[i].s_im, tiny(md));
        zre[i] = md->modes[i].z_re, zim[i] = md->modes[i].z_im;
        if (w > 1e-6 * md->omega_b && w < wmin)
            wmin = w;
        if (w > wmax)
            wmax = w;
    }
    for (i = 0; i < md->ny; i++)
        for (j = 0; j < md->nu_control; j++) {
            const rigmat_channel_zeros *z = &md->zeros[i * md->nu + j];
            for (k = 0; k < z->count; k++)
                qre[nz] = snap(z->re[k], tiny(md)), qim[nz++] = snap(z->im[k], tiny(md));
        }
    if (wmax > 50.0 * wmin && isfinite(wmin)) {
        /* a view of the slow modes: the poles up to 5 times the slowest
         * non-zero one, and the zeros among them (a right-half-plane zero
         * next to an unstable pole is the point of a balancer) */
        for (i = 0; i < nx; i++) {
            const double w = hypot(sre[i], sim[i]);
            if (w <= 5.0 * wmin && w > zoom)
                zoom = w;
        }
        for (i = 0; i < nz; i++) {
            const double w = hypot(qre[i], qim[i]);
            if (w <= 5.0 * wmin && w > zoom)
                zoom = w;
        }
        zoom *= 1.3;
        for (i = 0; i < nx; i++)
            outside += fabs(sre[i]) > zoom || fabs(sim[i]) > zoom;
    }

    memset(ser, 0, sizeof ser);
    memset(p, 0, sizeof p);
    memset(&fig, 0, sizeof fig);
    ser[0].name = "poles", ser[0].x = sre, ser[0].y = sim, ser[0].n = nx;
    ser[0].marker = RIGMAT_SVG_MARK_CROSS, ser[0].style = 0;
    ser[1].name = "zeros (control inputs to outputs)", ser[1].x = qre, ser[1].y = qim;
    ser[1].n = nz, ser[1].marker = RIGMAT_SVG_MARK_CIRCLE, ser[1].style = 1;
    ser[2] = ser[0];
    ser[2].x = zre, ser[2].y = zim;
    for (k = 0; k < (zoom > 0.0 ? 2u : 1u); k++) {
        p[k].title = k == 0 ? "s-plane" : "s-plane near the origin";
        p[k].x.label = "real part", p[k].x.unit = "1/s";
        p[k].y.label = "imaginary part", p[k].y.unit = "rad/s";
        p[k].frame = RIGMAT_SVG_FRAME_S;
        p[k].series = ser, p[k].nseries = nz > 0 ? 2 : 1;
    }
    /* the whole view is framed by the poles (with the origin): a zero far
     * beyond them would squeeze them into a point; such zeros are counted */
    {
        double xlo = 0.0, xhi = 0.0, ym = 0.0, span;
        for (i = 0; i < nx; i++) {
            xlo = fmin(xlo, sre[i]);
            xhi = fmax(xhi, sre[i]);
            ym = fmax(ym, fabs(sim[i]));
        }
        span = xhi - xlo > 0.0 ? xhi - xlo : fmax(ym, 1.0);
        p[0].x.fixed = p[0].y.fixed = 1;
        p[0].x.min = xlo - 0.08 * span;
        p[0].x.max = xhi + 0.08 * span + (xhi <= 0.0 ? 0.12 * span : 0.0);
        ym = fmax(1.1 * ym, 0.25 * span);
        p[0].y.min = -ym, p[0].y.max = ym;
        for (i = 0; i < nz; i++)
            far_zeros += qre[i] < p[0].x.min || qre[i] > p[0].x.max || fabs(qim[i]) > ym;
    }
    if (zoom > 0.0) {
        p[1].x.fixed = p[1].y.fixed = 1;
        p[1].x.min = p[1].y.min = -zoom;
        p[1].x.max = p[1].y.max = zoom;
    }
    k = zoom > 0.0 ? 2 : 1;
    p[k].title = "z-plane at the sample rate";
    p[k].x.label = "real part", p[k].y.label = "imaginary part";
    p[k].frame = RIGMAT_SVG_FRAME_Z;
    p[k].series = ser + 2, p[k].nseries = 1;
    fig.plots = p, fig.nplots = k + 1, fig.columns = 2;
    fig.panel_width_px = 470, fig.panel_height_px = 340;

    section(f, "poles", "6. Pole maps");
    fputs("<figure>\n", f);
    st = rigmat_svg_write(f, &fig, err);
    fputs("<figcaption>Poles (crosses) of the continuous model in the s-plane, with the "
          "zeros (circles) of every channel from a control input; the shaded half-plane is "
          "unstable. In the z-plane, the poles of the sampled model: inside the unit circle "
          "is stable.",
            f);
    if (far_zeros > 0)
        fprintf(f, " %zu %s beyond the poles' range and %s not drawn in the first view (see "
                   "the table of zeros).",
                far_zeros, far_zeros == 1 ? "zero lies" : "zeros lie", far_zeros == 1 ? "is" : "are");
    if (zoom > 0.0)
        fprintf(f, " The second view shows |Re s|, |Im s| up to %.3g; %zu %s outside it.", zoom,
                outside, outside == 1 ? "pole lies" : "poles lie");
    fputs("</figcaption>\n</figure>\n", f);
    free(buf);
    return st;
}

static const char *const model_names[] = { "nonlinear", "linear", "sampled" };

/* One response figure: a panel per coordinate state and per output. */
static rigmat_status write_case(FILE *f, const struct report *R, size_t c, double *buf,
        rigmat_error *err)
{
    const rigmat_model *m = R->m;
    const rigmat_layout *L = &m->layout;
    const rigmat_report_case *q = &R->cases[c];
    const size_t maxr = (size_t)(R->duration_s / R->step_s + 1.5);
    rigmat_svg_plot p[64];
    rigmat_svg_series ser[64 * 3];
    rigmat_svg_figure fig;
    char caption[256], *names[64];
    size_t np = 0, i, k, r, used = 0;
    rigmat_status st;

    memset(p, 0, sizeof p);
    memset(ser, 0, sizeof ser);
    memset(&fig, 0, sizeof fig);
    memset(names, 0, sizeof names);
    for (i = 0; i < L->nx + L->ny && np < 64; i++) {
        const int is_out = i >= L->nx;
        const size_t idx = is_out ? i - L->nx : i;
        const rigmat_signal *s = is_out ? sig_y(m, idx) : sig_x(m, idx);

        if (!is_out && s->kind != RIGMAT_SIG_COORD)
            continue;
        for (k = 0; k < 3; k++) {
            const rigmat_sim_result *res = &R->runs[c * 3 + k].r;
            double *t = buf + used, *v = t + maxr;
            const size_t n = res->nrows < maxr ? res->nrows : maxr;
            for (r = 0; r < n; r++) {
                t[r] = res->t_s[r];
                v[r] = is_out ? res->y[r * res->ny + idx] : res->x[r * res->nx + idx];
            }
            used += 2 * maxr;
            ser[np * 3 + k].name = model_names[k];
            ser[np * 3 + k].x = t, ser[np * 3 + k].y = v, ser[np * 3 + k].n = n;
            ser[np * 3 + k].line = 1, ser[np * 3 + k].style = k;
        }
        p[np].title = s->name;
        p[np].x.label = "time", p[np].x.unit = "s";
        p[np].y.label = s->name, p[np].y.unit = s->unit;
        p[np].x.fixed = 1, p[np].x.min = 0.0, p[np].x.max = R->duration_s;
        p[np].series = ser + np * 3, p[np].nseries = 3;
        np++;
    }
    if (q->is_input)
        snprintf(caption, sizeof caption, "Step of %s by %.4g%s%s at t = 0",
                sig_u(m, q->index)->name, q->size, *unit_after(sig_u(m, q->index)) ? " " : "",
                unit_after(sig_u(m, q->index)));
    else
        snprintf(caption, sizeof caption, "Initial offset of %s by %.4g %s",
                sig_x(m, q->index)->name, q->size, sig_x(m, q->index)->unit);
    fputs("<h3>", f);
    esc(f, caption);
    fputs("</h3>\n<figure>\n", f);
    fig.plots = p, fig.nplots = np, fig.columns = 3;
    fig.panel_width_px = 330, fig.panel_height_px = 230;
    st = rigmat_svg_write(f, &fig, err);
    fputs("<figcaption>Absolute values over time; nonlinear (solid), linear (dashed), sampled "
          "at the report's rate (dotted).",
            f);
    for (k = 0; k < 3; k++) {
        const struct sim_run *run = &R->runs[c * 3 + k];
        if (run->st != RIGMAT_OK) {
            fprintf(f, " <span class=\"bad\">The %s model stopped at t = %.4g s: ", model_names[k],
                    run->r.nrows > 0 ? run->r.t_s[run->r.nrows - 1] : 0.0);
            esc(f, run->message);
            fputs(".</span>", f);
        }
    }
    fputs("</figcaption>\n</figure>\n", f);
    return st;
}

static rigmat_status write_responses(FILE *f, const struct report *R, rigmat_error *err)
{
    const rigmat_model *m = R->m;
    const size_t maxr = (size_t)(R->duration_s / R->step_s + 1.5);
    const size_t nsig = m->layout.nx + m->layout.ny;
    double *buf = malloc((nsig * 3 * 2 * maxr + 1) * sizeof *buf);
    rigmat_sim_opts so = rigmat_sim_opts_default();
    rigmat_status st = RIGMAT_OK;
    size_t c;

    if (buf == NULL)
        return RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
    section(f, "responses", "7. Responses: nonlinear, linear and sampled");
    fputs("<p>Each case starts at the operating point (plus the offset) and runs the three "
          "models side by side: the nonlinear equations of motion (variable-order BDF with "
          "the exact Jacobian), the linear model exactly (matrix exponential), and the "
          "sampled model at the report's rate. Where they part, the linear model no longer "
          "describes the rig.</p>\n",
            f);
    fputs("<table><tr><th>setting</th><th>value</th><th>how it was chosen</th><th>option</th>"
          "</tr>\n",
            f);
    fprintf(f, "<tr><th>duration</th><td>%.4g s</td><td class=\"t\">%s</td>"
               "<td class=\"t\"><code>--duration TIME</code></td></tr>\n",
            R->duration_s,
            R->o->duration_s > 0.0 ? "given"
                                   : "3 time constants of the fastest-growing unstable mode, "
                                     "else 5 of the slowest stable one (at most 5 of its "
                                     "periods), rounded to 1, 2 or 5 times a power of ten, "
                                     "within 0.05 s to 20 s");
    fprintf(f, "<tr><th>output interval</th><td>%.4g s</td><td class=\"t\">the sample "
               "period, or a whole multiple of it for at most %.0f rows</td><td class=\"t\">"
               "</td></tr>\n",
            R->step_s, MAX_ROWS);
    fprintf(f, "<tr><th>nonlinear tolerance</th><td>%.3g</td><td class=\"t\">relative, the "
               "simulation's default</td><td class=\"t\"></td></tr>\n",
            so.rtol);
    for (c = 0; c < R->ncases; c++) {
        const rigmat_report_case *q = &R->cases[c];
        const rigmat_signal *s = q->is_input ? sig_u(m, q->index) : sig_x(m, q->index);
        fprintf(f, "<tr><th>%s of ", q->is_input ? "step" : "offset");
        esc(f, s->name);
        fprintf(f, "</th><td>%.4g ", q->size);
        esc(f, unit_after(s));
        fprintf(f, "</td><td class=\"t\">%s</td><td class=\"t\"><code>%s</code></td></tr>\n",
                q->is_input ? (R->o->nsteps > 0 ? "given or 0.1 of the SI unit"
                                                : "0.1 of the input's SI unit")
                            : (R->offsets_chosen ? "the main coordinate of an unstable (else "
                                                   "the slowest) mode; 2 deg or 10 mm"
                                                 : "given"),
                q->is_input ? "--step-size INPUT=VALUE" : "--offset STATE=VALUE");
    }
    fputs("</table>\n", f);
    if (R->ncases == 0)
        fputs("<p class=\"note\">No case to run: the model has no control input and no "
              "unstable or stable mode with a coordinate.</p>\n",
                f);
    for (c = 0; c < R->ncases && st == RIGMAT_OK; c++)
        st = write_case(f, R, c, buf, err);
    free(buf);
    return st;
}

/* "(rad/s)/V", "rad/s" for a dimensionless input. */
static void ratio_unit(char *buf, size_t cap, const char *out, const char *in)
{
    const int paren_out = strpbrk(out, "/*") != NULL, paren_in = strpbrk(in, "/*") != NULL;

    if (strcmp(in, "1") == 0)
        snprintf(buf, cap, "%s", out);
    else
        snprintf(buf, cap, "%s%s%s/%s%s%s", paren_out ? "(" : "", out, paren_out ? ")" : "",
                paren_in ? "(" : "", in, paren_in ? ")" : "");
}

static rigmat_status write_frequency(FILE *f, const struct report *R, rigmat_error *err)
{
    const rigmat_model *m = R->m;
    const rigmat_lti *l = R->l;
    const struct freq_resp *fr = &R->fr;
    const size_t n = fr->n;
    rigmat_svg_plot *p = calloc(2 * l->ny + 1, sizeof *p);
    rigmat_svg_series *ser = calloc(4 * l->ny + 1, sizeof *ser);
    char (*units)[64] = calloc(l->ny + 1, sizeof *units);
    rigmat_svg_figure fig;
    rigmat_status st = RIGMAT_OK;
    size_t i, j;

    if (p == NULL || ser == NULL || units == NULL) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        goto done;
    }
    section(f, "frequency", "8. Frequency responses");
    fprintf(f, "<p>Magnitude and phase of G(j&#969;) = C (j&#969;I &#8722; A)<sup>-1</sup> B + "
               "D for every input/output pair, on %zu logarithmic frequencies from a tenth of "
               "the slowest mode to ten times the fastest. For the control inputs the sampled "
               "model (zero-order hold) is drawn dashed up to the Nyquist frequency, %.4g Hz. The phase is unwrapped "
               "along the frequency axis.</p>\n",
            n, 0.5 / R->period_s);
    for (j = 0; j < l->nu; j++) {
        const int sampled = j < l->nu_control && R->d != NULL;
        memset(&fig, 0, sizeof fig);
        memset(p, 0, (2 * l->ny + 1) * sizeof *p);
        memset(ser, 0, (4 * l->ny + 1) * sizeof *ser);
        for (i = 0; i < l->ny; i++) {
            const size_t c = i * l->nu + j, cd = i * (R->d != NULL ? R->d->nu : 0) + j;
            rigmat_svg_series *s = ser + 4 * i;
            ratio_unit(units[i], sizeof units[i], sig_y(m, i)->unit, sig_u(m, j)->unit);
            s[0].name = "continuous", s[0].x = fr->f_hz, s[0].y = fr->mag + c * n, s[0].n = n;
            s[0].line = 1, s[0].style = 0;
            s[1] = s[0];
            s[1].y = fr->ph + c * n;
            if (sampled) {
                s[2].name = "sampled", s[2].x = fr->f_hz, s[2].y = fr->dmag + cd * n;
                s[2].n = fr->nd, s[2].line = 1, s[2].style = 1;
                s[3] = s[2];
                s[3].y = fr->dph + cd * n;
            }
            p[2 * i].title = sig_y(m, i)->name;
            p[2 * i].x.label = "frequency", p[2 * i].x.unit = "Hz";
            p[2 * i].x.scale = RIGMAT_SVG_LOG10;
            p[2 * i].y.label = "magnitude", p[2 * i].y.unit = units[i];
            p[2 * i].y.scale = RIGMAT_SVG_LOG10;
            p[2 * i].series = s, p[2 * i].nseries = 1;
            p[2 * i + 1] = p[2 * i];
            p[2 * i + 1].y.label = "phase", p[2 * i + 1].y.unit = "deg";
            p[2 * i + 1].y.scale = RIGMAT_SVG_LINEAR;
            p[2 * i + 1].series = s + 1;
            if (sampled) {
                /* continuous and sampled next to each other: s[0], s[2] and s[1], s[3] */
                rigmat_svg_series t = s[1];
                s[1] = s[2];
                s[2] = t;
                p[2 * i].nseries = 2;
                p[2 * i + 1].series = s + 2;
                p[2 * i + 1].nseries = 2;
            }
        }
        fputs("<h3>From ", f);
        esc(f, sig_u(m, j)->name);
        fprintf(f, " (%s input)</h3>\n<figure>\n", j < l->nu_control ? "control" : "disturbance");
        fig.plots = p, fig.nplots = 2 * l->ny, fig.columns = 2;
        fig.panel_width_px = 470, fig.panel_height_px = 230;
        st = rigmat_svg_write(f, &fig, err);
        if (st != RIGMAT_OK)
            goto done;
        fputs("</figure>\n", f);
    }
done:
    free(p);
    free(ser);
    free(units);
    return st;
}

static int cmp_abs_first(const void *a, const void *b)
{
    const double x = fabs(((const double *)a)[0]), y = fabs(((const double *)b)[0]);

    return x < y ? -1 : x > y;
}

static rigmat_status write_validity(FILE *f, const struct report *R, rigmat_error *err)
{
    const rigmat_model *m = R->m;
    const rigmat_validity_opts *vo = &R->vo;
    rigmat_svg_plot p[MAX_VALIDITY];
    rigmat_svg_series ser[MAX_VALIDITY * 3];
    char labels[MAX_VALIDITY][96];
    double pts[MAX_VALIDITY][RIGMAT_VALIDITY_MAX_SAMPLES][2];
    double px[MAX_VALIDITY][2][RIGMAT_VALIDITY_MAX_SAMPLES], py[MAX_VALIDITY][2][RIGMAT_VALIDITY_MAX_SAMPLES];
    double cx[MAX_VALIDITY][2], cy[MAX_VALIDITY][2];
    rigmat_svg_figure fig;
    size_t i, k, np = 0;
    rigmat_status st = RIGMAT_OK;

    section(f, "validity", "9. Validity range of the linear model");
    if (!R->o->validity) {
        fputs("<p class=\"note\">Not computed (turned off).</p>\n", f);
        return RIGMAT_OK;
    }
    fprintf(f, "<p>For each coordinate (an initial offset) and each control input (a step at "
               "t = 0), the largest size for which the linear response stays within %.3g %% "
               "of the nonlinear one over %.4g s: the error is the largest difference over "
               "time, relative to how far each output moves, and the worst output counts. "
               "Sizes from %.3g (SI) doubling up to %.3g, then %u bisections.</p>\n",
            100.0 * vo->criterion, vo->horizon_s, vo->start, vo->max_size, vo->bisections);
    if (R->val_st != RIGMAT_OK) {
        fputs("<p class=\"bad\">The sweep failed: ", f);
        esc(f, R->val_message);
        fputs(".</p>\n", f);
        return RIGMAT_OK;
    }
    fputs("<table><tr><th>target</th><th>valid up to (positive)</th><th>valid up to "
          "(negative)</th><th>note</th></tr>\n",
            f);
    for (i = 0; i < R->nval; i++) {
        const rigmat_validity_item *it = &R->val[i];
        const rigmat_signal *s = it->is_input ? sig_u(m, it->index) : sig_x(m, it->index);
        fprintf(f, "<tr><th>%s ", it->is_input ? "step of" : "offset of");
        sig_label(f, s);
        fputs("</th>", f);
        cell_num(f, it->size_pos);
        cell_num(f, -it->size_neg);
        fputs("<td class=\"t\">", f);
        if (!it->bounded)
            fprintf(f, "still valid at the largest size tried (%.3g). ", vo->max_size);
        if (it->nonlinear_failed)
            fputs("the nonlinear model failed at some size (counted as not valid).", f);
        fputs("</td></tr>\n", f);
    }
    fputs("</table>\n", f);

    memset(p, 0, sizeof p);
    memset(ser, 0, sizeof ser);
    for (i = 0; i < R->nval && np < MAX_VALIDITY; i++) {
        const rigmat_validity_item *it = &R->val[i];
        const rigmat_signal *s = it->is_input ? sig_u(m, it->index) : sig_x(m, it->index);
        size_t n[2] = { 0, 0 };
        double lo = HUGE_VAL, hi = 0.0;

        for (k = 0; k < it->nsamples; k++)
            pts[np][k][0] = it->sample_size[k], pts[np][k][1] = it->sample_error[k];
        qsort(pts[np], it->nsamples, sizeof pts[np][0], cmp_abs_first);
        for (k = 0; k < it->nsamples; k++) {
            const int neg = pts[np][k][0] < 0.0;
            const double a = fabs(pts[np][k][0]);
            px[np][neg][n[neg]] = a;
            py[np][neg][n[neg]++] = pts[np][k][1];
            if (a > 0.0 && a < lo)
                lo = a;
            if (a > hi)
                hi = a;
        }
        if (!(hi > 0.0))
            continue;
        snprintf(labels[np], sizeof labels[np], "%s %s", it->is_input ? "step of" : "offset of",
                s->name);
        cx[np][0] = lo, cx[np][1] = hi, cy[np][0] = cy[np][1] = vo->criterion;
        ser[3 * np].name = "positive", ser[3 * np].x = px[np][0], ser[3 * np].y = py[np][0];
        ser[3 * np].n = n[0], ser[3 * np].line = 1, ser[3 * np].style = 0;
        ser[3 * np].marker = RIGMAT_SVG_MARK_CIRCLE;
        ser[3 * np + 1].name = "negative", ser[3 * np + 1].x = px[np][1];
        ser[3 * np + 1].y = py[np][1], ser[3 * np + 1].n = n[1], ser[3 * np + 1].line = 1;
        ser[3 * np + 1].style = 1, ser[3 * np + 1].marker = RIGMAT_SVG_MARK_TRIANGLE;
        ser[3 * np + 2].name = "criterion", ser[3 * np + 2].x = cx[np];
        ser[3 * np + 2].y = cy[np], ser[3 * np + 2].n = 2, ser[3 * np + 2].line = 1;
        ser[3 * np + 2].style = 6;
        p[np].title = labels[np];
        p[np].x.label = "size", p[np].x.unit = s->unit, p[np].x.scale = RIGMAT_SVG_LOG10;
        p[np].y.label = "relative error", p[np].y.scale = RIGMAT_SVG_LOG10;
        p[np].series = ser + 3 * np, p[np].nseries = 3;
        np++;
    }
    if (np > 0) {
        memset(&fig, 0, sizeof fig);
        fig.plots = p, fig.nplots = np, fig.columns = 2;
        fig.panel_width_px = 470, fig.panel_height_px = 250;
        fputs("<figure>\n", f);
        st = rigmat_svg_write(f, &fig, err);
        fputs("<figcaption>The error of the linear model against the size of the offset or "
              "step (both axes logarithmic), for each sign; below the criterion line the "
              "linear model is valid. Sizes where the nonlinear model failed are not "
              "drawn.</figcaption>\n</figure>\n",
                f);
    }
    return st;
}

static void write_sampled(FILE *f, const struct report *R, const struct sigs *S)
{
    const rigmat_dlti *d = R->d;
    const rigmat_noise *nz = R->nz;

    section(f, "sampled", "10. Sampled model, Qd and Rd");
    fprintf(f, "<p>Zero-order hold at %.6g Hz (T = %.6g s): x[k+1] = Ad x[k] + Bd u[k] + "
               "Gd w[k] + process noise (covariance Qd), y[k] = Cd x[k] + Dd u[k] + Ed w[k] + "
               "measurement noise (covariance Rd); u the control inputs, w the disturbances. "
               "Qd is the exact covariance of the noise the disturbances add over one period "
               "(Van Loan's method); Rd the sensors' noise per sample. An entry of Qd or Rd is in "
               "the row's unit times the column's.</p>\n",
            1.0 / R->period_s, R->period_s);
    matrix_table(f, "Ad", d->Ad, S->x, d->nx, S->x, d->nx);
    matrix_table(f, "Bd", d->Bd, S->x, d->nx, S->u, d->nu);
    if (d->nw > 0)
        matrix_table(f, "Gd", d->Gd, S->x, d->nx, S->w, d->nw);
    matrix_table(f, "Cd", d->Cd, S->y, d->ny, S->x, d->nx);
    matrix_table(f, "Dd", d->Dd, S->y, d->ny, S->u, d->nu);
    if (d->nw > 0)
        matrix_table(f, "Ed", d->Ed, S->y, d->ny, S->w, d->nw);
    matrix_table(f, "Qd (process noise covariance per period)", nz->Qd, S->x, d->nx, S->x, d->nx);
    matrix_table(f, "Rd (measurement noise covariance per sample)", nz->Rd, S->y, d->ny, S->y,
            d->ny);
    if (nz->S != NULL)
        matrix_table(f, "S (cross-covariance of process and measurement noise)", nz->S, S->x,
                d->nx, S->y, d->ny);
}

/* ------------------------------------------------------------- entry */

rigmat_report_opts rigmat_report_opts_default(void)
{
    rigmat_report_opts o;

    memset(&o, 0, sizeof o);
    o.rate_hz = 0.0;
    o.duration_s = 0.0;
    o.freq_points = 240;
    o.validity = 1;
    return o;
}

static rigmat_status check_opts(const rigmat_model *m, const rigmat_lti *l,
        const rigmat_report_opts *o, rigmat_error *err)
{
    const rigmat_layout *L = &m->layout;
    size_t i;

    if (!(o->rate_hz > 0.0) || !isfinite(o->rate_hz))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the sample rate must be positive");
    if (!(o->duration_s >= 0.0) || !isfinite(o->duration_s))
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "the duration must be positive");
    if (l->nx != L->nx || l->nu != L->nu || l->ny != L->ny || l->nx == 0)
        return RIGMAT_FAIL(err, l->nx == 0 ? RIGMAT_EUSAGE : RIGMAT_EINTERNAL,
                l->nx == 0 ? "the model has no states to report on"
                           : "the linear model does not match the model's layout");
    if (o->noffsets > RIGMAT_REPORT_MAX_CASES || o->nsteps > RIGMAT_REPORT_MAX_CASES
            || o->freq_points < 2 || o->freq_points > 100000)
        return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "too many cases or a bad frequency grid");
    for (i = 0; i < o->noffsets; i++)
        if (o->offsets[i].is_input || o->offsets[i].index >= L->nx
                || !isfinite(o->offsets[i].size) || o->offsets[i].size == 0.0)
            return RIGMAT_FAIL(err, RIGMAT_EUSAGE, "offset %zu: not a state, or a zero size",
                    i + 1);
    for (i = 0; i < o->nsteps; i++)
        if (!o->steps[i].is_input || o->steps[i].index >= L->nu_control
                || !isfinite(o->steps[i].size) || o->steps[i].size == 0.0)
            return RIGMAT_FAIL(err, RIGMAT_EUSAGE,
                    "step %zu: not a control input, or a zero size", i + 1);
    return RIGMAT_OK;
}

static void report_release(struct report *R)
{
    size_t c;

    if (R->runs != NULL)
        for (c = 0; c < R->ncases * 3; c++)
            rigmat_sim_result_release(&R->runs[c].r);
    free(R->runs);
    free(R->val);
    free(R->fr.f_hz);
    free(R->fr.mag);
    free(R->fr.ph);
    free(R->fr.dmag);
    free(R->fr.dph);
    rigmat_system_free(R->sys);
    rigmat_noise_free(R->nz);
    rigmat_dlti_free(R->d);
    rigmat_modes_free(R->md);
}

rigmat_status rigmat_report_write(FILE *f, const rigmat_model *m, const rigmat_lti *lin,
        const rigmat_report_opts *o, rigmat_error *err)
{
    struct report R;
    struct sigs S;
    rigmat_discretize_opts dopt = rigmat_discretize_opts_default();
    const rigmat_noise_opts nopt = rigmat_noise_opts_default();
    rigmat_discretize_ws *dws = NULL;
    rigmat_noise_ws *nws = NULL;
    double *row = NULL;
    rigmat_status st;

    memset(&R, 0, sizeof R);
    memset(&S, 0, sizeof S);
    st = check_opts(m, lin, o, err);
    if (st != RIGMAT_OK)
        return st;
    R.m = m, R.l = lin, R.o = o;
    R.period_s = 1.0 / o->rate_hz;
    if (sigs_init(&S, m) != 0 || (row = calloc(lin->nx + 1, sizeof *row)) == NULL) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        goto done;
    }

    st = rigmat_modes_compute(lin, R.period_s, NULL, &R.md, err);
    if (st != RIGMAT_OK)
        goto done;
    dopt.period_s = R.period_s;
    dws = rigmat_discretize_ws_alloc(lin->nx, lin->nu, lin->ny);
    nws = rigmat_noise_ws_alloc(lin->nx, lin->nu - lin->nu_control);
    if (dws == NULL || nws == NULL) {
        st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
        goto done;
    }
    st = rigmat_discretize(lin, &dopt, dws, &R.d, err);
    if (st == RIGMAT_OK)
        st = rigmat_noise_build(lin, R.d, &nopt, nws, &R.nz, err);
    if (st == RIGMAT_OK)
        st = freq_compute(&R, err);
    if (st == RIGMAT_OK)
        st = choose(&R, err);
    if (st == RIGMAT_OK)
        st = rigmat_system_alloc(m, &R.sys, err);
    if (st == RIGMAT_OK)
        st = simulate_all(&R, err);
    if (st != RIGMAT_OK)
        goto done;
    R.vo = rigmat_validity_opts_default();
    /* the responses' duration, at most VALIDITY_HORIZON_S: each size tried
     * runs the nonlinear model over it, twice per size and sign */
    R.vo.horizon_s = fmin(R.duration_s, VALIDITY_HORIZON_S);
    if (o->validity) {
        rigmat_error e;
        memset(&e, 0, sizeof e);
        R.val = calloc(MAX_VALIDITY, sizeof *R.val);
        if (R.val == NULL) {
            st = RIGMAT_FAIL(err, RIGMAT_ENOMEM, "out of memory");
            goto done;
        }
        R.val_st = rigmat_validity_all(R.sys, lin, &m->layout, &R.vo, R.val, MAX_VALIDITY,
                &R.nval, &e);
        if (R.val_st == RIGMAT_ENOMEM) {
            *err = e;
            st = RIGMAT_ENOMEM;
            goto done;
        }
        if (R.nval > MAX_VALIDITY)
            R.nval = MAX_VALIDITY;
        if (R.val_st != RIGMAT_OK)
            snprintf(R.val_message, sizeof R.val_message, "%s", e.message);
    }

    write_head(f, &R);
    write_signs(f, &R, row);
    write_point(f, &R);
    write_linear(f, &R, &S);
    write_modes(f, &R, &S);
    st = write_poles(f, &R, err);
    if (st == RIGMAT_OK)
        st = write_responses(f, &R, err);
    if (st == RIGMAT_OK)
        st = write_frequency(f, &R, err);
    if (st == RIGMAT_OK)
        st = write_validity(f, &R, err);
    if (st != RIGMAT_OK)
        goto done;
    write_sampled(f, &R, &S);
    fputs("<p class=\"note\">Written by rigmat " RIGMAT_VERSION ". Every figure is drawn by "
          "rigmat itself; the page loads nothing from anywhere.</p>\n</body>\n</html>\n",
            f);
    if (ferror(f))
        st = RIGMAT_FAIL(err, RIGMAT_EIO, "writing the report failed");
done:
    free(row);
    sigs_release(&S);
    rigmat_noise_ws_free(nws);
    rigmat_discretize_ws_free(dws);
    report_release(&R);
    return st;
}
