/* api.h - what the files of the public API (src/lib/api*.c) share: the
 * handles' structs and the helpers that turn an internal rigmat_error into
 * a diagnostic of the caller's list.  Not installed. */
#ifndef RIGMAT_API_H
#define RIGMAT_API_H

#include "rigmat_internal.h"
#include "discretize.h"
#include "noise.h"
#include "modes.h"
#include "simulate.h"
#include "describe.h"

#include <gsl/gsl_matrix.h>
#include <gsl/gsl_vector.h>

struct rigmat_steady {
    rigmat_trim_result r;
};

struct rigmat_linear {
    const rigmat_model *m; /* borrowed */
    rigmat_options opt;
    rigmat_lti *lti;       /* owned */
};

struct rigmat_sampled {
    const rigmat_linear *lin; /* borrowed */
    rigmat_discretize_opts o;
    rigmat_sampled_parts p;   /* owned (src/lib/describe.h) */
};

struct rigmat_analysis {
    rigmat_modes *md; /* owned */
};

struct rigmat_response {
    rigmat_sim_result r;
};

/* Append e to d (may be NULL) as an error; returns e's status
 * (RIGMAT_ENOMEM when d cannot take it). */
rigmat_status rigmat_api_fail(rigmat_diags *d, const rigmat_error *e);
/* A usage error with message what, appended to d; RIGMAT_EUSAGE. */
rigmat_status rigmat_api_usage(rigmat_diags *d, const char *what);
/* A view of m (rows x cols, NULL or empty allowed); RIGMAT_EINTERNAL when
 * m is not a gapless row-major matrix of that size. */
rigmat_status rigmat_api_view(const gsl_matrix *m, size_t rows, size_t cols, rigmat_matrix_view *out);
rigmat_status rigmat_api_view_vector(const gsl_vector *v, size_t n, rigmat_matrix_view *out);
/* The library's options: the documented defaults and the installed
 * catalog; no environment is read. */
rigmat_options rigmat_api_options(void);
/* The signals of group g of L and their count (*n); NULL for a bad g. */
const rigmat_signal *rigmat_api_group(const rigmat_layout *L, rigmat_group g, size_t *n);
void rigmat_api_signal(const rigmat_signal *s, int disturbance, rigmat_signal_view *out);

#endif /* RIGMAT_API_H */
