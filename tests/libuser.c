/* libuser.c - a program written as a library user would write it, built
 * against an installed rigmat (tests/install.sh): load the demo, linearize,
 * sample at 200 Hz, and check the sampled model against the continuous one
 * through an invariant that needs no reference values: for ZOH,
 * Ad = exp(A T), so the eigenvalues of Ad are exp(lambda T) and
 * det(Ad) = exp(T trace(A)) (Jacobi's formula; common practice).  Then the
 * steady-state Kalman filter through <rigmat/gains.h>, checked by its own
 * Riccati residual and a stable estimator (every pole inside |z| = 1). */
#include <rigmat.h>
#include <rigmat/discretize.h>
#include <rigmat/gains.h>
#include <rigmat/noise.h>
#include <rigmat/result.h>

#include <math.h>
#include <stdio.h>
#include <string.h>
#include <gsl/gsl_complex_math.h>
#include <gsl/gsl_errno.h>
#include <gsl/gsl_linalg.h>
#include <gsl/gsl_permutation.h>

int main(int argc, char **argv)
{
    rigmat_options opt = rigmat_options_default();
    rigmat_diags d;
    rigmat_model *m = NULL;
    rigmat_lti *s = NULL;
    rigmat_dlti *z = NULL;
    rigmat_discretize_ws *w;
    rigmat_discretize_opts o = rigmat_discretize_opts_default();
    rigmat_error e;
    gsl_permutation *p;
    gsl_matrix *lu;
    double trace = 0.0, det;
    int sign, bad;
    size_t i;

    if (argc != 2)
        return 2;
    gsl_set_error_handler_off();
    rigmat_diags_init(&d);
    if (rigmat_model_load(argv[1], NULL, 0, &opt, &m, &d) != RIGMAT_OK) {
        rigmat_diags_print(&d, stderr);
        return 1;
    }
    if (rigmat_model_check_equations(m, &d) != RIGMAT_OK) {
        rigmat_diags_print(&d, stderr);
        rigmat_model_free(m);
        return 1;
    }
    rigmat_diags_release(&d);
    if (rigmat_linearize(m, &opt, &s, NULL, &e) != RIGMAT_OK) {
        fprintf(stderr, "linearize: %s\n", e.message);
        return 1;
    }
    o.period_s = 0.005;
    w = rigmat_discretize_ws_alloc(s->nx, s->nu, s->ny);
    if (w == NULL || rigmat_discretize(s, &o, w, &z, &e) != RIGMAT_OK) {
        fprintf(stderr, "discretize: %s\n", e.message);
        return 1;
    }
    for (i = 0; i < s->nx; i++)
        trace += gsl_matrix_get(s->A, i, i);
    lu = gsl_matrix_alloc(z->nx, z->nx);
    p = gsl_permutation_alloc(z->nx);
    gsl_matrix_memcpy(lu, z->Ad);
    gsl_linalg_LU_decomp(lu, p, &sign);
    det = gsl_linalg_LU_det(lu, sign);
    bad = !(fabs(det - exp(o.period_s * trace)) <= 1e-10 * exp(o.period_s * trace));
    printf("libuser: %zu states, det(Ad) %.15g, exp(T tr A) %.15g: %s\n", z->nx, det,
            exp(o.period_s * trace), bad ? "MISMATCH" : "ok");
    {
        const rigmat_noise_opts no = rigmat_noise_opts_default();
        rigmat_noise_ws *nw = rigmat_noise_ws_alloc(s->nx, s->nu - s->nu_control);
        rigmat_gains_ws *gw = rigmat_gains_ws_alloc(z->nx, z->ny);
        rigmat_riccati_ws *rw = rigmat_riccati_ws_alloc(z->nx, z->ny);
        rigmat_noise *nz = NULL;
        rigmat_kalman *k = NULL;
        double rho = 0.0;
        if (nw == NULL || gw == NULL || rw == NULL ||
                rigmat_noise_build(s, z, &no, nw, &nz, &e) != RIGMAT_OK ||
                rigmat_kalman_solve(z->Ad, z->Cd, nz->Qd, nz->Rd, nz->S, NULL, gw, rw, &k, NULL,
                        &e) != RIGMAT_OK) {
            fprintf(stderr, "kalman: %s\n", e.message);
            return 1;
        }
        for (i = 0; i < k->nx; i++)
            if (gsl_complex_abs(gsl_vector_complex_get(k->poles, i)) > rho)
                rho = gsl_complex_abs(gsl_vector_complex_get(k->poles, i));
        bad |= !(k->info.residual < 1e-12 && rho < 1.0);
        printf("libuser: Kalman filter, residual %.3g, slowest pole |z| %.6f: %s\n",
                k->info.residual, rho, bad ? "MISMATCH" : "ok");
        rigmat_kalman_free(k);
        rigmat_noise_free(nz);
        rigmat_riccati_ws_free(rw);
        rigmat_gains_ws_free(gw);
        rigmat_noise_ws_free(nw);
    }
    /* export Ad as a C header to a stream, the way the program does */
    {
        const rigmat_layout *L = &m->layout;
        rigmat_result *r = rigmat_result_alloc("discrete");
        static char text[1 << 16];
        size_t len = 0;
        FILE *f = tmpfile();
        rigmat_emit_opts eo = { "balancer", 0, NULL, NULL };
        rigmat_result_head(r, m->name, L->order_hash, L->states, L->nx, L->inputs, L->nu,
                L->outputs, L->ny);
        rigmat_result_dim(r, "state", L->states, z->nx);
        rigmat_result_key(r, "Ad");
        rigmat_result_matrix(r, z->Ad, z->nx, z->nx, L->states, L->states);
        if (f == NULL || rigmat_result_write(r, RIGMAT_FORMAT_C, &eo, f, NULL, &e) != RIGMAT_OK)
            bad = 1;
        if (f != NULL) {
            rewind(f);
            len = fread(text, 1, sizeof text - 1, f);
            fclose(f);
        }
        text[len] = '\0';
        if (strstr(text, "static const double balancer_Ad[BALANCER_N_STATES]"
                                         "[BALANCER_N_STATES] = {") == NULL)
            bad = 1;
        printf("libuser: C header export %s\n", bad ? "MISMATCH" : "ok");
        rigmat_result_free(r);
    }
    gsl_matrix_free(lu);
    gsl_permutation_free(p);
    rigmat_dlti_free(z);
    rigmat_discretize_ws_free(w);
    rigmat_lti_free(s);
    rigmat_model_free(m);
    return bad;
}
