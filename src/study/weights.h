/* weights.h - LQR weights from a weights file, by Bryson's rule.
 *
 * Bryson's rule (A. E. Bryson, Y.-C. Ho, "Applied Optimal Control", 1975,
 * section 5.4; G. F. Franklin, J. D. Powell, A. Emami-Naeini, "Feedback
 * Control of Dynamic Systems", section 7.6, from memory): weigh each state
 * and input by the inverse square of its largest acceptable value,
 *     Q_ii = 1 / x_max_i^2,   R_jj = 1 / u_max_j^2,
 * so that each term of the cost is 1 at its limit.  The file (README.md,
 * "Gains: the Kalman filter and the LQR"):
 *
 *     states:  {tilt.angle: 3 deg, travel.position: 0.25 m}
 *     inputs:  {drive: 0.6}
 *
 * Names are the model's state and control-input names; values carry units
 * (parsed by the units module and checked against the signal's unit; a
 * bare number is SI) and must be positive.  A state without a weight gets
 * Q_ii = 0.  A control input without a weight takes its `limit` when the
 * model gives it one; otherwise it is an error naming the input (this
 * version of the model schema has no `limit` yet: every control input
 * needs a weight).  Disturbance inputs are not in the LQR and may not be
 * weighted.
 *
 * The file is read by the model loader's YAML reader (src/model/load.h),
 * with the same limits and protections as a model file; diagnostics carry
 * FILE:LINE:COL and a "did you mean" hint for a misspelt name.
 */
#ifndef RIGMAT_WEIGHTS_H
#define RIGMAT_WEIGHTS_H

#include "rigmat_internal.h"

typedef struct rigmat_weights {
    size_t nx, nu;     /* states; control inputs */
    gsl_matrix *Q;     /* nx x nx, diagonal 1 / x_max^2 (0 without a weight) */
    gsl_matrix *R;     /* nu x nu, diagonal 1 / u_max^2 */
    double *x_max;     /* nx, SI; 0 = no weight */
    double *u_max;     /* nu, SI */
    int *u_from_limit; /* nu: 1 when u_max is the input's limit */
} rigmat_weights;

/* Read path against the states and control inputs of l (names and units
 * through rigmat_gains_name/unit).  Diagnostics go to d (which also interns
 * the file name, so their places stay valid as long as d).  On success *out
 * is new, owned by the caller (rigmat_weights_free).  RIGMAT_EMODEL after
 * at least one error in d, RIGMAT_EIO when the file cannot be read,
 * RIGMAT_ENOMEM. */
rigmat_status rigmat_weights_load(const char *path, const rigmat_lti *l, const rigmat_options *opt,
                                  rigmat_weights **out, rigmat_diags *d);
void rigmat_weights_free(rigmat_weights *w);

#endif /* RIGMAT_WEIGHTS_H */
