/* closure.h - closed kinematic loops (README.md, "Closed loops"): the
 * closures' constraint equations Phi(q) = 0 on the tree coordinates, their
 * assembly at the operating point, the choice of independent coordinates
 * and the dynamics reduced to them.
 *
 * Method: coordinate partitioning (R. A. Wehage, E. J. Haug, "Generalized
 * coordinate partitioning for dimension reduction in analysis of
 * constrained dynamic systems", J. Mech. Design 104(1), 1982; E. J. Haug,
 * Computer Aided Kinematics and Dynamics of Mechanical Systems, 1989,
 * chapter on the dynamics of constrained systems; from memory).  With the
 * coordinates split into independent i, dependent d and driven ones:
 *     q_d = q_d(q_i)            by Newton on Phi(q) = 0, q_i held,
 *     qd  = T qd_i,             T = [I; -Phi_d^-1 Phi_i] (driven: their own),
 *     qdd = T qdd_i + g,        g_d = -Phi_d^-1 (Phi_q qd)_q qd (the curvature),
 *     T' M T qdd_i = T' (Q - hb - M g),
 * exact: nothing is linearized, and every step is complex arithmetic so the
 * complex step (mechanics.h) differentiates through the Newton solve.  It
 * iterates until the real step has been below tolerance twice in a row:
 * at the converged point one more Newton step solves the tangent's linear
 * equation (the imaginary part) to round-off.
 *
 * Slider closure, with n the line's normal (body 0) and d = p1 - p0:
 *     Phi = n . d,  and th1 - th0 - angle;
 *     d2/dt2 (n . d) at qdd = 0: (al0 S n - om0^2 n) . d + 2 om0 (S n) . (v1 - v0)
 *                                + n . (a1 - a0),
 * with S the quarter turn, om0 and al0 body 0's rate and angular
 * acceleration and v, a the points' velocities and accelerations at
 * qdd = 0 (the same transport as mechanics.c).
 */
#ifndef RIGMAT_CLOSURE_H
#define RIGMAT_CLOSURE_H

#include "rigmat_internal.h"
#include "mechanics.h"

/* The relative singular value of the dependent block of the constraint
 * Jacobian (smallest over largest) below which a configuration is a dead
 * centre (README.md, "Closed loops"). */
#define RIGMAT_CLOSURE_SV_RTOL 1e-9

/* During an evaluation (simulation, the complex step) a dependent block
 * whose LU pivots fall below this, relative to its largest entry, is a
 * dead centre too; the error gives its singular values. */
#define RIGMAT_CLOSURE_PIVOT_RTOL 1e-12

/* Newton's convergence: a step below this times (1 + |q|) in every
 * dependent coordinate, then two more steps (the tangent's convergence). */
#define RIGMAT_CLOSURE_STEP_RTOL 1e-12

/* The residual (m, or rad for a slider's angle) above which the
 * assembly at the operating point has failed. */
#define RIGMAT_CLOSURE_RESIDUAL_TOL 1e-9

typedef struct rigmat_closure_ws rigmat_closure_ws;

/* Workspace of the loops of m for the equations s (m's dependent
 * coordinates chosen, rigmat_model_check_equations).  Borrows m and s. */
rigmat_status rigmat_closure_alloc(rigmat_mech *s, const rigmat_model *m,
        rigmat_closure_ws **out, rigmat_error *err);
void rigmat_closure_free(rigmat_closure_ws *w);

/* After the independent coordinates, rates and driven values are in
 * place: solve the dependent coordinates (Newton from the last solution)
 * and rates, and leave the kinematics of the closed configuration.
 * RIGMAT_ENUMERIC, naming the closure, where the loop cannot close or is at
 * a dead centre. */
rigmat_status rigmat_closure_positions(rigmat_closure_ws *w, rigmat_mech *s, rigmat_error *err);

/* After M, hb and Q are assembled: every coordinate's acceleration from the
 * reduced equations.  RIGMAT_ENUMERIC when T' M T is singular. */
rigmat_status rigmat_closure_accelerations(rigmat_closure_ws *w, rigmat_mech *s,
        rigmat_error *err);

/* Assemble a model's loops at its operating point and choose the
 * independent coordinates (`independent:`, the operating point's loop
 * coordinates when as many as the degrees of freedom, or coordinate
 * partitioning by column-pivoted QR of the constraint Jacobian); sets each
 * joint's `dependent` and `assembled`, the model's independent_how,
 * closure_sv_ratio, closure_residual, closure_iterations and each slider
 * closure's angle, clears closures_pending and rebuilds the layout.
 * Problems go to d with places.  RIGMAT_EMODEL (names), RIGMAT_ENUMERIC
 * (cannot assemble, dead centre), RIGMAT_ENOMEM. */
rigmat_status rigmat_closure_resolve(rigmat_model *m, rigmat_diags *d);

#endif /* RIGMAT_CLOSURE_H */
