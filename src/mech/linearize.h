/* linearize.h - exact linearization of f(x, u), h(x, u) (src/mech/mechanics.h)
 * at the model's operating point, in the model's layout order.
 *
 * A = df/dx, B = df/du, C = dh/dx, D = dh/du by the complex step
 * (J. R. R. A. Martins, P. Sturdza, J. J. Alonso, ACM TOMS 29(3), 2003): each
 * column costs one complex evaluation and carries no truncation or
 * cancellation error.  The operating point is the model's (unnamed = 0),
 * trimmed first when operating_point.solve is not empty (src/mech/trim.h).
 * residual = max |f0| over the balance equations (accelerations, current and
 * shaping derivatives); is_steady = residual <= opt->trim_tol.
 * The entry points are rigmat_system_* and rigmat_linearize in
 * src/util/rigmat_internal.h.
 */
#ifndef RIGMAT_LINEARIZE_H
#define RIGMAT_LINEARIZE_H

#include "rigmat_internal.h"
#include "mechanics.h"

/* The system's canonical equations (borrowed). */
rigmat_mech *rigmat_system_mech(rigmat_system *s);
/* Canonical index of layout state / input / output k. */
size_t rigmat_system_state_canon(const rigmat_system *s, size_t k);
size_t rigmat_system_input_canon(const rigmat_system *s, size_t k);
/* The values held by states the layout leaves out (canonical x; copied). */
void rigmat_system_set_base(rigmat_system *s, const double *x_canon);


/* The linearization of one model, reusable at many operating points (the
 * sweep's fast path, src/study/sweep.c): the system, the result and the
 * scratch are allocated once; each run reads the model's operating point
 * as it stands (m->op_coordinates, op_rates, op_inputs, which the caller
 * may rewrite between runs, one thread per linearizer and its model) and
 * computes exactly what rigmat_linearize computes, which is alloc, one run
 * and taking the result.  Statuses and messages as rigmat_linearize's;
 * after a failed run the result is stale.  The result is owned by the
 * linearizer and rewritten by the next run. */
typedef struct rigmat_linearizer rigmat_linearizer;
rigmat_status rigmat_linearizer_alloc(const rigmat_model *m, rigmat_linearizer **out,
        rigmat_error *err);
rigmat_status rigmat_linearizer_run(rigmat_linearizer *z, const rigmat_options *opt,
        rigmat_diags *warnings, rigmat_error *err);
const rigmat_lti *rigmat_linearizer_lti(const rigmat_linearizer *z);
void rigmat_linearizer_free(rigmat_linearizer *z);

/* The first non-zero response of one row to a positive step in input k:
 * the smallest order r with a non-zero entry of d (r = 0) or
 * row A^(r-1) B[:, k] (r >= 1), up to nx; entries that are rounding
 * residue of a cancellation (below 1e-11 of the sum of the magnitudes they
 * came from) count as zero.  Returns -1, 0 or +1 (0: no response at any
 * order) and the order in *order.  row has length l->nx. */
int rigmat_lti_first_response(const rigmat_lti *l, const double *row, double d, size_t k,
        int *order);
/* 1 when some disturbance input of l has a white-noise intensity (a
 * `density`), so Qd can be non-zero; 0 when Qd is zero. */
int rigmat_lti_has_process_noise(const rigmat_lti *l);

#endif /* RIGMAT_LINEARIZE_H */
