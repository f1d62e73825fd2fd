/* affine.h - the sampled affine term of a model linearized at a point that
 * is not a steady state.
 *
 * The continuous model is x' = A dx + B du + f0 (f0 = f(x0, u0), zero at a
 * steady state).  Sampled, x[k+1] = Ad x[k] + Bd u[k] + Gd w[k] + fd, where
 * fd is the sampled image of the constant f0 by the method's own rule for
 * a constant input:
 *   ZOH, FOH  fd = (int_0^T e^{A s} ds) f0, the top right column of
 *             exp([[A, f0], [0, 0]] T) (C. F. Van Loan, IEEE Trans.
 *             Automatic Control 23(3), 1978; the same augmented exponential
 *             as Bd).  Exact: a constant is held exactly by either hold,
 *             and the FOH state x - G2 u differs from x by a term in u only.
 *   EULER     fd = T f0.
 *   BACKWARD_EULER  fd = (I - A T)^-1 T f0.
 *   TUSTIN    fd = (I - A T_w/2)^-1 T_w f0 (T_w the prewarped period), the
 *             method's Bd column for a constant input.
 * Delay states (rows nx_plant .. nx-1 of a delayed model) get 0: f0 acts
 * on the plant only.  fd is exactly zero when f0 is.
 */
#ifndef RIGMAT_AFFINE_H
#define RIGMAT_AFFINE_H

#include "rigmat_internal.h"
#include "discretize.h"

/* fd (length d->nx) for the continuous model s sampled as d with options o.
 * RIGMAT_ENUMERIC when the exponential overflows or I - A T (/2) is
 * singular, RIGMAT_ENOMEM. */
rigmat_status rigmat_discretize_affine(const rigmat_lti *s, const rigmat_discretize_opts *o,
        const rigmat_dlti *d, gsl_vector *fd, rigmat_error *err);

/* The index of the largest |f0| component and its value (length n); 0 when
 * f0 is NULL or empty. */
size_t rigmat_affine_largest(const gsl_vector *f0, double *value);

#endif /* RIGMAT_AFFINE_H */
