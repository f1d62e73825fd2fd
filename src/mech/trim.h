/* trim.h - steady states: all joint accelerations, motor current
 * derivatives and shaping-filter derivatives zero at the given rates, over
 * the unknowns of operating_point.solve (motor currents and shaping states
 * always follow).
 *
 * Method: Gauss-Newton on the residual r(p) with the exact Jacobian (complex
 * step, src/mech/mechanics.h) and a minimum-norm step from the SVD,
 * dp = -J^+ r, singular values below rank_rtol * s_max treated as zero, so
 * free directions do not move (J. E. Dennis, R. B. Schnabel, Numerical
 * Methods for Unconstrained Optimization and Nonlinear Equations, 1983,
 * chapter 10; from memory), with step halving while |r| does not fall.
 * GSL's SVD wants rows >= columns: a wide J is decomposed transposed.
 * Success when max |r| <= tol.  After the last step the unknowns the
 * equations do not fix (the diagonal of the projector onto the null space
 * of J is not ~0) and the equations no step can meet (the part of r outside
 * the range of J exceeds tol) are named.
 * The loop follows GSL's alloc, set, iterate, test, free split.
 */
#ifndef RIGMAT_TRIM_H
#define RIGMAT_TRIM_H

#include "rigmat_internal.h"
#include "mechanics.h"

typedef struct rigmat_trim rigmat_trim;

/* Unknowns: the names of solve (see rigmat_mech_find_unknown), plus every
 * current and shaping state.  Borrows s.  RIGMAT_EMODEL for a name that
 * matches nothing (err->where is its place). */
rigmat_status rigmat_trim_alloc(rigmat_mech *s, const rigmat_namelist *solve,
        double rank_rtol, rigmat_trim **out, rigmat_error *err);
void rigmat_trim_free(rigmat_trim *t);
/* Start from canonical x, u (copied). */
rigmat_status rigmat_trim_set(rigmat_trim *t, const double *x, const double *u,
        rigmat_error *err);
/* One Gauss-Newton step. */
rigmat_status rigmat_trim_iterate(rigmat_trim *t, rigmat_error *err);
/* 1 when max |r| <= tol. */
int rigmat_trim_test(const rigmat_trim *t, double tol);
double rigmat_trim_residual(const rigmat_trim *t);
/* The current iterate, canonical order (borrowed). */
const double *rigmat_trim_x(const rigmat_trim *t);
const double *rigmat_trim_u(const rigmat_trim *t);
/* Names of free unknowns and unmet equations at the current iterate into r
 * (its free_unknowns / unmet_equations, owned by r). */
rigmat_status rigmat_trim_diagnose(rigmat_trim *t, double tol, rigmat_trim_result *r,
        rigmat_error *err);

/* The whole loop from (x, u), which receive the result (or the last
 * iterate).  r (may be NULL) receives iterations, residual and the names;
 * its x and u are not touched.  RIGMAT_ENUMERIC when it does not converge
 * within opt->trim_max_iter steps, with the residual and the iterate in
 * the message. */
rigmat_status rigmat_trim_run(rigmat_mech *s, const rigmat_model *m, const rigmat_options *opt,
        double *x, double *u, rigmat_trim_result *r, rigmat_error *err);

#endif /* RIGMAT_TRIM_H */
