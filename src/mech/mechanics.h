/* mechanics.h - equations of motion of a planar body tree, written once in
 * C99 double complex so that the same code gives f(x, u), h(x, u) and, by
 * the complex step, their exact Jacobians.
 *
 * Method: Lagrange's equations in Jacobian form (E. J. Haug, Computer Aided
 * Kinematics and Dynamics of Mechanical Systems, 1989; P. E. Nikravesh,
 * Computer-Aided Analysis of Mechanical Systems, 1988):
 *     M(q) qdd = Q(q, qd, u) - hb(q, qd),
 *     M  = sum m_i J_i^T J_i + I_i j_i^T j_i   (+ motor rotors, load inertias)
 *     hb = sum m_i J_i^T (Jdot_i qd) + I_i j_i^T (jdot_i qd)
 * with J_i the Jacobian of body i's centre of mass and j_i that of its angle.
 * The velocity-product accelerations Jdot qd are propagated down the tree
 * (each frame's acceleration at qdd = 0), so no derivative of J is formed.
 * Q collects gravity, springs, dampers, motors and forces by virtual work.
 *
 * Complex step (W. Squire, G. Trapp, SIAM Review 40(1), 1998): every
 * operation here is analytic in the inputs; nothing takes cabs, conj or
 * carg, comparisons look at creal only, the linear solve is done in complex
 * arithmetic.  Keep it that way: see DEVELOPERS.md, "Complex-step rules"
 * (after J. R. R. A. Martins, P. Sturdza, J. J. Alonso, ACM TOMS 29(3), 2003).
 *
 * Coordinates: every non-fixed joint owns one coordinate (driven ones too;
 * they are prescribed).  The canonical state, input and output vectors are
 * those of rigmat_layout_canonical (src/model/layout.h); rigmat_mech works in that
 * order and the public rigmat_system maps it to the model's final layout.
 * Units: SI throughout.
 */
#ifndef RIGMAT_MECHANICS_H
#define RIGMAT_MECHANICS_H

#include "rigmat.h"
#include <complex.h>

/* The smallest pivot of the free mass matrix, relative to its largest
 * diagonal entry, below which it is reported as singular (RIGMAT_ENUMERIC,
 * naming the coordinate without inertia). */
#define RIGMAT_MECH_PIVOT_RTOL 1e-12

typedef struct rigmat_mech rigmat_mech;

/* Build the equations of a validated model (its layout need not be built:
 * only the canonical order is used).  Checks which derivatives of driven
 * joints the model needs and fails with RIGMAT_EMODEL, naming the element
 * and the driven kind that works, when one is missing.  Returns a new
 * object owned by the caller (rigmat_mech_free); it borrows m, which must
 * outlive it. */
rigmat_status rigmat_mech_alloc(const rigmat_model *m, rigmat_mech **out, rigmat_error *err);
void rigmat_mech_free(rigmat_mech *s);

/* The canonical sizes and signals (owned by the object). */
const rigmat_layout *rigmat_mech_canonical(const rigmat_mech *s);

/* f and h at a complex point, canonical order.  f or y may be NULL.
 * RIGMAT_ENUMERIC for a singular mass matrix or a degenerate point spring. */
rigmat_status rigmat_mech_eval(rigmat_mech *s, const double complex *x, const double complex *u,
        double complex *f, double complex *y, rigmat_error *err);

/* The same at a real point. */
rigmat_status rigmat_mech_eval_real(rigmat_mech *s, const double *x, const double *u, double *f,
        double *y, rigmat_error *err);

/* The winding current of each motor (one motor of a `count`), in A, at a
 * real point, canonical order: the state, the drive's current, or
 * (V - Ke N w)/R with the inductance neglected.  cur has m->nmotors entries. */
rigmat_status rigmat_mech_motor_currents(rigmat_mech *s, const double *x, const double *u,
        double *cur, rigmat_error *err);

/* Exact Jacobians at a real point by the complex step (h = 1e-20), canonical
 * order, row-major arrays: A nx*nx, B nx*nu, C ny*nx, D ny*nu (any may be
 * NULL).  f0 and y0 (may be NULL) receive f and h at the point. */
rigmat_status rigmat_mech_jacobians(rigmat_mech *s, const double *x, const double *u, double *A,
        double *B, double *C, double *D, double *f0, double *y0, rigmat_error *err);

/* 1 when canonical state k's derivative is one trim holds to zero: joint
 * accelerations, motor current derivatives and shaping-filter states. */
int rigmat_mech_is_balance_row(const rigmat_mech *s, size_t k);

/* The operating point of the model file (unnamed values 0), canonical
 * order.  Coordinates and rates are given by joint name, inputs by element
 * name.  Motor currents follow (di/dt = 0 at the point), shaping states
 * equal their inputs.  RIGMAT_EMODEL for a name that matches nothing;
 * RIGMAT_ENUMERIC when f cannot be evaluated there. */
rigmat_status rigmat_mech_operating_point(rigmat_mech *s, double *x, double *u,
        rigmat_error *err);

/* Find a name of operating_point.solve: a joint name is its coordinate (or
 * its input when position-driven), a state name ("tilt.rate") that state,
 * an input name that input.  Sets *is_input and *index (canonical); returns
 * 0 when the name matches nothing. */
int rigmat_mech_find_unknown(const rigmat_mech *s, const char *name, int *is_input,
        size_t *index);

/* ------------------------------------------------ hooks for closure.c */

/* What closure.c (closed loops) works on: the coordinate vectors and the
 * assembled M, hb, Q of the last evaluation, all complex, canonical
 * coordinate order (one per non-fixed joint). */
typedef struct rigmat_mech_view {
    size_t n;
    double complex *q, *qd, *qdd, *M, *hb, *Q;
    const size_t *coord;  /* per joint: its coordinate or RIGMAT_NONE */
    const size_t *cjoint; /* per coordinate: its joint */
} rigmat_mech_view;

void rigmat_mech_get_view(rigmat_mech *s, rigmat_mech_view *v);

/* The tree's kinematics from the view's q and qd. */
void rigmat_mech_update_kinematics(rigmat_mech *s);

/* A point fixed in body b at r (body frame) after the kinematics:
 * position, Jacobian (2 x n row-major), velocity and velocity-product
 * acceleration; any output may be NULL. */
void rigmat_mech_point(const rigmat_mech *s, size_t b, const double r[2], double complex p[2],
        double complex *J, double complex v[2], double complex a[2]);

/* Body b's angle, its Jacobian row (n entries; may be NULL), rate and
 * velocity-product angular acceleration after the kinematics. */
void rigmat_mech_body(const rigmat_mech *s, size_t b, double complex *th, double complex *row,
        double complex *om, double complex *al);

/* The equations of a model whose closures are not yet assembled
 * (m->closures_pending): the plain tree, every coordinate a state, for
 * rigmat_model_check_equations to assemble the loops on. */
rigmat_status rigmat_mech_alloc_tree(const rigmat_model *m, rigmat_mech **out,
        rigmat_error *err);

#endif /* RIGMAT_MECHANICS_H */
