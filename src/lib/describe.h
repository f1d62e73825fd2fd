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
 * signal lists, so m must outlive it. */
rigmat_result *rigmat_describe_linear(const rigmat_model *m, const rigmat_lti *l);

/* The rows of the sampled state of d: the plant's states of L, then d's
 * delay stages.  A new array of d->nx (at least one) signals that borrow
 * their names from L and d (free() it; the names are not owned), or NULL
 * when out of memory. */
rigmat_signal *rigmat_sampled_signals(const rigmat_layout *L, const rigmat_dlti *d);

/* The sampled model d of l (of model m) with its noise model nz, sampled
 * states xs (rigmat_sampled_signals) and sampled affine term fd (d->nx,
 * src/sample/affine.h).  A new result owned by the caller, or NULL when
 * out of memory; it borrows xs and m's signal lists. */
rigmat_result *rigmat_describe_sampled(const rigmat_model *m, const rigmat_lti *l,
        const rigmat_dlti *d, const rigmat_noise *nz, const rigmat_signal *xs,
        const gsl_vector *fd);

#endif /* RIGMAT_DESCRIBE_H */
