/* sweep_bench.c - the compute of `rigmat sweep` without the process and
 * the output: rigmat_sweep_run on one thread over one operating-point
 * axis, and its two stages alone at the same points (the reusable
 * linearizer with the axis value written in place, and the sampling of
 * one linear model), with the counts an operation estimate needs.
 *
 *   sweep_bench FILE AXIS RATE_HZ [--reload | --reread]
 *       AXIS as --vary (tilt=-10deg:10deg:4000); --reload: every point
 *       reloads the model (the general path: from the tree kept after
 *       the file is parsed and its parts merged); --reread: every point
 *       reads and parses the file again, for comparison.
 *   prints one line of key=value pairs: points, fast (1: the fast path
 *       ran), sweep_us_wall, sweep_us_cpu (per point), lin_us, disc_us
 *       (per point, CPU), nx, nu, ny, evals (complex evaluations of f
 *       and h per linearization), expm_n (the exponential's size),
 *       expm_products (matrix products of one exponential)
 *
 * Part of `make bench` (bench/sweep.sh); never fails on time. */
#include "rigmat_internal.h"
#include "discretize.h"
#include "expm.h"
#include "linearize.h"
#include "sweep.h"

#include <stdio.h>
#include <stdlib.h>
#include <string.h>
#include <time.h>
#include <gsl/gsl_errno.h>

static double clock_s(clockid_t id)
{
    struct timespec t;

    clock_gettime(id, &t);
    return (double)t.tv_sec + 1e-9 * (double)t.tv_nsec;
}

static rigmat_model *load(const char *file, const char *const *sets, size_t nsets,
        const rigmat_options *opt)
{
    rigmat_model *m = NULL;
    rigmat_diags d;

    rigmat_diags_init(&d);
    if (rigmat_model_load(file, sets, nsets, opt, &m, &d) != RIGMAT_OK ||
            rigmat_model_check_equations(m, &d) != RIGMAT_OK) {
        rigmat_diags_print(&d, stderr);
        rigmat_model_free(m);
        m = NULL;
    }
    rigmat_diags_release(&d);
    return m;
}

int main(int argc, char **argv)
{
    const rigmat_options opt = rigmat_options_default();
    rigmat_model *base, *m;
    rigmat_sweep_axis ax;
    rigmat_sweep_opts o;
    rigmat_sweep s;
    rigmat_error e;
    rigmat_linearizer *z = NULL;
    rigmat_discretize_ws *ws = NULL;
    rigmat_dlti *d = NULL;
    rigmat_setting *set = NULL;
    rigmat_expm_info stats;
    double w0, c0, w1, c1, sweep_cpu_s, lin_s, disc_s;
    size_t p, i, reps;

    if (argc < 4) {
        fprintf(stderr, "usage: sweep_bench FILE AXIS RATE_HZ [--reload | --reread]\n");
        return 2;
    }
    gsl_set_error_handler_off();
    memset(&e, 0, sizeof e);
    base = load(argv[1], NULL, 0, &opt);
    if (base == NULL || rigmat_sweep_axis_parse(argv[2], base, &ax, &e) != RIGMAT_OK) {
        fprintf(stderr, "sweep_bench: %s\n", e.message);
        return 1;
    }
    memset(&o, 0, sizeof o);
    o.file = argv[1];
    o.opt = &opt;
    o.discretize = 1;
    o.dopts = rigmat_discretize_opts_default();
    o.dopts.period_s = 1.0 / atof(argv[3]);
    o.threads = 1;
    o.reload = argc > 4 && (strcmp(argv[4], "--reload") == 0 || strcmp(argv[4], "--reread") == 0);
    o.full_reload = argc > 4 && strcmp(argv[4], "--reread") == 0;
    w0 = clock_s(CLOCK_MONOTONIC);
    c0 = clock_s(CLOCK_PROCESS_CPUTIME_ID);
    if (rigmat_sweep_run(base, &ax, 1, &o, &s, &e) != RIGMAT_OK) {
        fprintf(stderr, "sweep_bench: %s\n", e.message);
        return 1;
    }
    w1 = clock_s(CLOCK_MONOTONIC);
    c1 = clock_s(CLOCK_PROCESS_CPUTIME_ID);
    sweep_cpu_s = c1 - c0;
    /* the stages alone: the axis's setting rewritten in a loaded model */
    m = load(argv[1], (const char *const *)&ax.text[0], 1, &opt);
    if (m == NULL || rigmat_linearizer_alloc(m, &z, &e) != RIGMAT_OK) {
        fprintf(stderr, "sweep_bench: %s\n", e.message);
        return 1;
    }
    for (i = 0; i < m->nop_coordinates + m->nop_rates + m->nop_inputs && set == NULL; i++) {
        rigmat_setting *st = i < m->nop_coordinates ? &m->op_coordinates[i] :
                             i < m->nop_coordinates + m->nop_rates ?
                                     &m->op_rates[i - m->nop_coordinates] :
                                     &m->op_inputs[i - m->nop_coordinates - m->nop_rates];
        const char *dot = strrchr(ax.path, '.');
        if (dot != NULL && strcmp(st->name, dot + 1) == 0)
            set = st;
    }
    if (set == NULL) {
        fprintf(stderr, "sweep_bench: the axis is no operating-point setting\n");
        return 1;
    }
    c0 = clock_s(CLOCK_PROCESS_CPUTIME_ID);
    for (p = 0; p < ax.count; p++) {
        set->value = ax.si[p];
        if (rigmat_linearizer_run(z, &opt, NULL, &e) != RIGMAT_OK) {
            fprintf(stderr, "sweep_bench: %s\n", e.message);
            return 1;
        }
    }
    lin_s = clock_s(CLOCK_PROCESS_CPUTIME_ID) - c0;
    ws = rigmat_discretize_ws_alloc(m->layout.nx, m->layout.nu, m->layout.ny);
    reps = ax.count;
    c0 = clock_s(CLOCK_PROCESS_CPUTIME_ID);
    for (p = 0; p < reps; p++)
        if (rigmat_discretize_reuse(rigmat_linearizer_lti(z), &o.dopts, ws, &d, &e) !=
                RIGMAT_OK) {
            fprintf(stderr, "sweep_bench: %s\n", e.message);
            return 1;
        }
    disc_s = clock_s(CLOCK_PROCESS_CPUTIME_ID) - c0;
    {
        /* the exponential of the demo's ZOH block, for its product count */
        const size_t n = m->layout.nx + m->layout.nu;
        gsl_matrix *M = gsl_matrix_calloc(n, n), *E = gsl_matrix_alloc(n, n);
        rigmat_expm_ws *xw = rigmat_expm_ws_alloc(n);
        const rigmat_lti *l = rigmat_linearizer_lti(z);
        size_t r, c;
        memset(&stats, 0, sizeof stats);
        for (r = 0; r < m->layout.nx; r++) {
            for (c = 0; c < m->layout.nx; c++)
                gsl_matrix_set(M, r, c, o.dopts.period_s * gsl_matrix_get(l->A, r, c));
            for (c = 0; c < m->layout.nu; c++)
                gsl_matrix_set(M, r, m->layout.nx + c,
                        o.dopts.period_s * gsl_matrix_get(l->B, r, c));
        }
        (void)rigmat_expm(M, E, o.dopts.expm_flags, xw, &stats, &e);
        printf("points=%lu fast=%d sweep_us_wall=%.2f sweep_us_cpu=%.2f lin_us=%.2f "
               "disc_us=%.2f nx=%lu nu=%lu ny=%lu evals=%lu expm_n=%lu expm_products=%u expm_degree=%u expm_squarings=%u\n",
               (unsigned long)s.npoints, s.fast, 1e6 * (w1 - w0) / (double)s.npoints,
               1e6 * sweep_cpu_s / (double)s.npoints,
               1e6 * lin_s / (double)ax.count, 1e6 * disc_s / (double)reps,
               (unsigned long)m->layout.nx, (unsigned long)m->layout.nu,
               (unsigned long)m->layout.ny, (unsigned long)(1 + m->layout.nx + m->layout.nu),
               (unsigned long)n, stats.products, stats.degree, stats.squarings);
        gsl_matrix_free(M);
        gsl_matrix_free(E);
        rigmat_expm_ws_free(xw);
    }
    rigmat_dlti_free(d);
    rigmat_discretize_ws_free(ws);
    rigmat_linearizer_free(z);
    rigmat_model_free(m);
    rigmat_sweep_release(&s);
    rigmat_sweep_axis_release(&ax);
    rigmat_model_free(base);
    return 0;
}
