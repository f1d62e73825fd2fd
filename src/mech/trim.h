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
 * of J is not ~0) are named, and the residual of each equation is kept.
 *
 * Unmet equations (only when the trim failed): the smallest set of
 * equations that cannot be met when all the others are.  The acceleration
 * rows of f are coupled through the mass matrix (f = M^-1 (Q - hb)): an
 * input acting on the shoulder alone moves every coordinate's acceleration,
 * so with one unknown and two rows either row alone can be met and a
 * least-squares split of f blames both, or whichever is larger.  The search
 * therefore works on the held form g of rigmat_mech_held (each free
 * coordinate's force balance divided by its own inertia, in the units of
 * f; other rows are f), where an equation the unknowns cannot reach keeps
 * its residual however they are chosen:
 *   1. Gauss-Newton on all of g from the last iterate (its least-squares
 *      point when g cannot be met);
 *   2. while the active equations do not converge, drop the one with the
 *      largest |g| there and re-solve the rest from the point reached
 *      (at most ne re-solves);
 *   3. minimality: put each dropped equation back once (the last dropped
 *      only if an earlier one came back), re-solve from the point where
 *      the reduced set converged, and keep it active when the set still
 *      converges (at most one re-solve per dropped equation, so ne).
 * The dropped equations left are unmet_equations.  "Converges" means
 * max |g| <= trim_tol over the active equations within trim_max_iter steps
 * (a step that no longer lowers |g| ends a re-solve early): one solve and
 * at most 2 ne re-solves of at most trim_max_iter steps each.  Every
 * buffer is the trim's own workspace, allocated once by rigmat_trim_alloc;
 * the steps allocate nothing.  The result is minimal in that no single
 * unmet equation can be met with the rest; it need not be the smallest
 * such set, and when several are equally small the largest residual of
 * the held form picks one.
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
/* Names of free unknowns, the residual per equation and, when the
 * iterate misses tol, the unmet equations (the search above, re-solves of
 * at most max_iter steps) into r (its free_unknowns, eq_*,
 * unmet_equations, owned by r).  The iterate is left as it was. */
rigmat_status rigmat_trim_diagnose(rigmat_trim *t, double tol, size_t max_iter,
        rigmat_trim_result *r, rigmat_error *err);

/* The whole loop from (x, u), which receive the result (or the last
 * iterate).  r (may be NULL) receives iterations, residual and the names;
 * its x and u are not touched.  RIGMAT_ENUMERIC when it does not converge
 * within opt->trim_max_iter steps, with the residual and the iterate in
 * the message. */
rigmat_status rigmat_trim_run(rigmat_mech *s, const rigmat_model *m, const rigmat_options *opt,
        double *x, double *u, rigmat_trim_result *r, rigmat_error *err);

#endif /* RIGMAT_TRIM_H */
