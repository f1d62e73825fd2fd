/* lti.c - the continuous linear model container. */
#include "rigmat_internal.h"
#include "sizes.h"
#include "linearize.h"

#include <stdlib.h>
#include <string.h>

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

static gsl_vector *zvec(size_t n, int *bad)
{
    gsl_vector *v;

    if (n == 0)
        return NULL;
    v = gsl_vector_calloc(n);
    if (v == NULL)
        *bad = 1;
    return v;
}

static double *zarr(size_t n, int *bad)
{
    double *p = calloc(n ? n : 1, sizeof *p);

    if (p == NULL)
        *bad = 1;
    return p;
}

rigmat_lti *rigmat_lti_alloc(size_t nx, size_t nu, size_t ny, size_t nu_control)
{
    rigmat_lti *s = calloc(1, sizeof *s);
    int bad = 0;

    if (s == NULL)
        return NULL;
    s->nx = nx;
    s->nu = nu;
    s->ny = ny;
    s->nu_control = nu_control;
    s->A = zeros(nx, nx, &bad);
    s->B = zeros(nx, nu, &bad);
    s->C = zeros(ny, nx, &bad);
    s->D = zeros(ny, nu, &bad);
    s->x0 = zvec(nx, &bad);
    s->u0 = zvec(nu, &bad);
    s->y0 = zvec(ny, &bad);
    s->f0 = zvec(nx, &bad);
    s->input_intensity = zarr(nu, &bad);
    s->input_current = zarr(nu, &bad);
    s->output_noise_sd = zarr(ny, &bad);
    s->output_density = zarr(ny, &bad);
    s->output_bandwidth_hz = zarr(ny, &bad);
    s->output_resolution = zarr(ny, &bad);
    if (bad) {
        rigmat_lti_free(s);
        return NULL;
    }
    return s;
}

static void free_signals(rigmat_signal **arr, size_t n)
{
    size_t i;

    if (*arr == NULL)
        return;
    for (i = 0; i < n; i++)
        free((*arr)[i].name);
    free(*arr);
    *arr = NULL;
}

static rigmat_signal *copy_signals(const rigmat_signal *src, size_t n, int *bad)
{
    rigmat_signal *arr;
    size_t i;

    if (src == NULL || *bad)
        return NULL;
    arr = calloc(n ? n : 1, sizeof *arr);
    if (arr == NULL) {
        *bad = 1;
        return NULL;
    }
    for (i = 0; i < n; i++) {
        const char *name = src[i].name != NULL ? src[i].name : "";
        const size_t len = strlen(name) + 1;
        arr[i] = src[i];
        arr[i].unit[sizeof arr[i].unit - 1] = '\0';
        arr[i].name = malloc(len);
        if (arr[i].name == NULL) {
            free_signals(&arr, i);
            *bad = 1;
            return NULL;
        }
        memcpy(arr[i].name, name, len);
    }
    return arr;
}

static void release_signals(rigmat_lti *s)
{
    free_signals(&s->states, s->nx);
    free_signals(&s->inputs, s->nu);
    free_signals(&s->outputs, s->ny);
}

rigmat_status rigmat_lti_set_signals(rigmat_lti *s, const rigmat_signal *states,
        const rigmat_signal *inputs, const rigmat_signal *outputs)
{
    int bad = 0;

    release_signals(s);
    s->states = copy_signals(states, s->nx, &bad);
    s->inputs = copy_signals(inputs, s->nu, &bad);
    s->outputs = copy_signals(outputs, s->ny, &bad);
    if (bad) {
        release_signals(s);
        return RIGMAT_ENOMEM;
    }
    return RIGMAT_OK;
}

void rigmat_lti_free(rigmat_lti *s)
{
    if (s == NULL)
        return;
    release_signals(s);
    if (s->A) gsl_matrix_free(s->A);
    if (s->B) gsl_matrix_free(s->B);
    if (s->C) gsl_matrix_free(s->C);
    if (s->D) gsl_matrix_free(s->D);
    if (s->x0) gsl_vector_free(s->x0);
    if (s->u0) gsl_vector_free(s->u0);
    if (s->y0) gsl_vector_free(s->y0);
    if (s->f0) gsl_vector_free(s->f0);
    free(s->input_intensity);
    free(s->input_current);
    free(s->output_noise_sd);
    free(s->output_density);
    free(s->output_bandwidth_hz);
    free(s->output_resolution);
    free(s);
}

int rigmat_lti_has_process_noise(const rigmat_lti *l)
{
    size_t k;

    for (k = l->nu_control; k < l->nu && l->input_intensity != NULL; k++)
        if (l->input_intensity[k] > 0.0)
            return 1;
    return 0;
}
