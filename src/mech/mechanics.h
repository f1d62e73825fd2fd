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

#include "rigmat_internal.h"
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

/* Two methods give the same f and h (to rounding): the mass-matrix
 * method above, O(N^3) per evaluation, and the articulated-body recursion
 * of recursive.c, O(N) per evaluation, for every model but those with a
 * motor's rotor or load inertia or a drive-force sensor (recursive.h).
 * rigmat_mech_alloc takes the recursion when the model has at least
 * RIGMAT_MECH_RECURSIVE_MIN coordinates and the recursion applies, the
 * mass matrix otherwise.  The recursion is faster from the smallest
 * chains on (the Jacobian of a 4-link pendulum chain: 22 us against 62 us
 * on the shared build machine; 16 links: 1.0 ms against 6.0 ms); the mass
 * matrix stays below 12 coordinates so that the small models (every
 * example) keep their outputs to the last bit and the reference method
 * stays in daily use. */
#define RIGMAT_MECH_RECURSIVE_MIN 12

/* A model the recursion does not handle keeps the mass-matrix method,
 * O(N^3) per evaluation: above this many coordinates rigmat_mech_alloc
 * refuses it (RIGMAT_EMODEL, naming what keeps the mass matrix), the cost
 * limit that held for every model before the recursion (linearize 1.3 s
 * at 48 joints, 16-20 s at 64 on the shared build machine). */
#define RIGMAT_MECH_MASS_MATRIX_MAX 48

typedef enum rigmat_mech_path {
    RIGMAT_MECH_MASS_MATRIX,
    RIGMAT_MECH_RECURSIVE
} rigmat_mech_path;

/* Choose the method (tests compare the two).  RIGMAT_EUSAGE, naming what
 * the recursion does not handle, when it does not apply (the mass matrix
 * stays); RIGMAT_ENOMEM. */
rigmat_status rigmat_mech_set_path(rigmat_mech *s, rigmat_mech_path path, rigmat_error *err);
rigmat_mech_path rigmat_mech_get_path(const rigmat_mech *s);

/* The canonical sizes and signals (owned by the object). */
const rigmat_layout *rigmat_mech_canonical(const rigmat_mech *s);

/* cos z and sin z of a complex angle z: where |Im z| < 2^-28, as the
 * complex step makes every angle, by one real sincos of Re z (cos z =
 * cos x - i y sin x, sin z = sin x + i y cos x: cosh y rounds to 1 and
 * sinh y to y there, so the values are glibc's ccos and csin bit for bit,
 * tests/check_mechanics.c), else by ccos and csin. */
typedef struct rigmat_mech_cs {
    double complex c, s;
} rigmat_mech_cs;
rigmat_mech_cs rigmat_mech_cossin(double complex z);

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

/* The line of a point-to-point spring or damper lk from its end points pa,
 * pb and their velocities va, vb (world frame): the unit vector (ex, ey)
 * from a to b, the length and its rate.  RIGMAT_ENUMERIC (naming lk) at
 * zero length, where the line is undefined.  Shared by the mass-matrix
 * method and the recursive one (recursive.c), so both read one rule. */
rigmat_status rigmat_mech_link_line(const rigmat_link *lk, int spring,
        const double complex pa[2], const double complex pb[2], const double complex va[2],
        const double complex vb[2], double complex *ex, double complex *ey,
        double complex *length, double complex *rate, rigmat_error *err);

/* The held residual g(x, u), canonical order, and its exact Jacobians Gx
 * (nx*nx) and Gu (nx*nu, either may be NULL) by the complex step.  For the
 * rate of a free coordinate c, g_c = (M qdd)_c / M_cc: the generalized-force
 * balance of c divided by its own inertia, i.e. the acceleration c would
 * have if every other free coordinate were held still (the coupling of the
 * mass matrix taken out, so that an input acting on one coordinate only
 * moves that coordinate's row).  Every other row is f itself.  g = 0 on the
 * balance rows exactly when f = 0 there (M is positive definite); a subset
 * of rows of g says which balances hold, which f's coupled accelerations do
 * not (src/mech/trim.h, unmet equations). */
rigmat_status rigmat_mech_held(rigmat_mech *s, const double *x, const double *u, double *g,
        double *Gx, double *Gu, rigmat_error *err);
/* The index tables of the evaluation, for the firmware generator
 * (src/emit/firmware.c), which writes them out as constants of the
 * generated evaluator.  Every pointer is borrowed from s; RIGMAT_NONE
 * marks an absent entry, as in rigmat_mech itself.  Sizes: coord per
 * joint; cjoint, xq, xr, uq per coordinate (n); order nb - 1 bodies
 * (parents first); bjoint per body; freec nf; xi, umot, mstator, mrotor,
 * mlin, mk, msign, mtheta0 per motor; ufor per force; xsh per canonical
 * input; xbias, ubias, xfilt, ufilt per sensor. */
typedef struct rigmat_mech_map {
    size_t n, nb, nf;
    const size_t *coord, *cjoint, *order, *bjoint, *xq, *xr, *uq, *freec;
    const size_t *xi, *umot, *ufor, *xsh, *xbias, *ubias, *xfilt, *ufilt;
    const size_t *mstator, *mrotor, *mlin;
    const double *mk, *msign, *mtheta0;
} rigmat_mech_map;
void rigmat_mech_map_get(const rigmat_mech *s, rigmat_mech_map *out);

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
