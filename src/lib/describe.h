/* describe.h - the results of linearize and discretize, described once for
 * every format (stage lib: between emit and cli).  The command line and the
 * public API (include/rigmat.h) both render these descriptions, so their
 * outputs are the same bytes. */
#ifndef RIGMAT_DESCRIBE_H
#define RIGMAT_DESCRIBE_H

#include "rigmat_internal.h"
#include "discretize.h"
#include "noise.h"
#include "result.h"

/* The model's name as every text output shows it: "(unnamed)" for a model
 * without one (JSON keeps "" under "model", as documented). */
const char *rigmat_model_display_name(const rigmat_model *m);

/* The continuous model l of m: A, B, C, D, the operating point and the
 * equilibrium (README.md, "JSON output").  A new result owned by the
 * caller (rigmat_result_free), or NULL when out of memory; it borrows m's
 * signal lists, so m must outlive it.  q (may be NULL): every joint's
 * coordinate at the point, shown for a model with closed loops. */
rigmat_result *rigmat_describe_linear(const rigmat_model *m, const rigmat_lti *l,
        const double *q);

/* The rows of the sampled state of d: the plant's states of L, then d's
 * delay stages.  A new array of d->nx (at least one) signals that borrow
 * their names from L and d (free() it; the names are not owned), or NULL
 * when out of memory. */
rigmat_signal *rigmat_sampled_signals(const rigmat_layout *L, const rigmat_dlti *d);

/* Everything a sampled result holds besides the continuous model. */
typedef struct rigmat_sampled_parts {
    rigmat_dlti *d;    /* the sampled model */
    rigmat_noise *nz;  /* its noise model */
    rigmat_signal *xs; /* its states (rigmat_sampled_signals) */
    gsl_vector *fd;    /* the sampled affine term, d->nx (src/sample/affine.h) */
} rigmat_sampled_parts;

/* Sample l (of model m) with o, build its noise model, its state list and
 * its affine term: the one sequence `rigmat discretize` and
 * rigmat_linear_discretize run.  p is zeroed first; on failure it holds
 * what was built (release it either way with rigmat_sampled_parts_release)
 * and err says why: RIGMAT_EUSAGE, RIGMAT_ENUMERIC or RIGMAT_ENOMEM as the
 * stages return them. */
rigmat_status rigmat_sampled_parts_build(const rigmat_model *m, const rigmat_lti *l,
        const rigmat_discretize_opts *o, rigmat_sampled_parts *p, rigmat_error *err);
void rigmat_sampled_parts_release(rigmat_sampled_parts *p);

/* The sampled model d of l (of model m) with its noise model nz, sampled
 * states xs (rigmat_sampled_signals) and sampled affine term fd (d->nx,
 * src/sample/affine.h).  A new result owned by the caller, or NULL when
 * out of memory; it borrows xs and m's signal lists. */
rigmat_result *rigmat_describe_sampled(const rigmat_model *m, const rigmat_lti *l,
        const rigmat_dlti *d, const rigmat_noise *nz, const rigmat_signal *xs,
        const gsl_vector *fd);

#endif /* RIGMAT_DESCRIBE_H */
