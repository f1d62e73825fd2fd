/* recursive.h - f(x, u) of the planar body tree in O(N) by the
 * articulated-body algorithm, in the same complex arithmetic as
 * mechanics.c, so that the complex-step Jacobians stay exact.
 *
 * Method: R. Featherstone, Rigid Body Dynamics Algorithms, Springer 2008,
 * chapter 7 (the articulated-body algorithm, Table 7.1) with the
 * prescribed-acceleration joints of chapter 9 (hybrid dynamics), written
 * for planar motion with every vector at the body's own origin and in
 * world axes (recursive.c states the relations).
 *
 * Cost: one evaluation is O(N) in the bodies, joints and force elements
 * (two passes down the tree and one up, each O(1) per body), against
 * O(N^3) for the mass-matrix method (forming M, then its LU).  The exact
 * Jacobian takes nx + nu complex evaluations, so A costs O(N^2) in all
 * instead of O(N^4).
 *
 * Scope: the recursion handles every joint type, driven joints, springs,
 * dampers, forces, torques, motors (their torque, back-EMF and currents)
 * and every sensor but `drive_force`.  It does not handle a motor's rotor
 * or load inertia: the rotor turns at stator rate + N times the output
 * rate, which couples the stator body and the output coordinate outside
 * the tree's structure; a model with either (or a drive-force sensor)
 * keeps the mass-matrix method, which is exact for it
 * (rigmat_rec_supported says why).  mechanics.c chooses the path.
 */
#ifndef RIGMAT_RECURSIVE_H
#define RIGMAT_RECURSIVE_H

#include "rigmat_internal.h"
#include <complex.h>

/* What the recursion reads from and writes into the rigmat_mech that owns
 * it (all arrays owned there, indexed as in mechanics.c). */
typedef struct rigmat_rec_view {
    const rigmat_model *m;
    size_t n, nb;                  /* coordinates, bodies (ground is body 0) */
    const size_t *coord;           /* per joint: coordinate or RIGMAT_NONE */
    const size_t *cjoint;          /* per coordinate: joint */
    const size_t *order;           /* non-ground bodies, parents first (nb - 1) */
    const size_t *bjoint;          /* per body: its joint */
    const size_t *mstator, *mrotor, *mlin; /* per motor */
    const double *mk;              /* per motor: rad per m of a linear motor */
    const size_t *umot, *ufor;     /* per motor, per force: the input */
    /* in: q, qd, qdd (driven accelerations; free ones are written), ueff
     * (inputs after shaping), cur (current states) */
    double complex *q, *qd, *qdd, *ueff, *cur;
    /* out: body origin p (2 per body), angle, velocity (2), rate and the
     * accelerations at qdd = 0 (2, 1), as mechanics.c's kinematics; the
     * motor output rates and the currents of the motors without a current
     * state */
    double complex *bp, *bth, *bv, *bom, *ba, *bal, *wout;
} rigmat_rec_view;

typedef struct rigmat_rec rigmat_rec;

/* 1 when the recursion gives the same f and h as the mass-matrix method
 * for model m; 0 with *why (static text) naming what it does not handle. */
int rigmat_rec_supported(const rigmat_model *m, const char **why);

/* A recursion over the view (copied; its arrays are borrowed and must
 * outlive it).  NULL when out of memory. */
rigmat_rec *rigmat_rec_alloc(const rigmat_rec_view *v);
void rigmat_rec_free(rigmat_rec *r);

/* Kinematics, forces and the articulated-body recursion at the view's
 * q, qd, driven qdd, ueff and cur: fills the view's outputs and the free
 * coordinates' qdd.  RIGMAT_ENUMERIC for a coordinate without inertia of
 * its own or an overflowing one (naming its joint) and for a point spring
 * or damper of zero length, with the same messages as mechanics.c. */
rigmat_status rigmat_rec_eval(rigmat_rec *r, rigmat_error *err);

/* The acceleration (world axes) of the point at at_m (body frame) of body
 * b after rigmat_rec_eval, qdd included. */
void rigmat_rec_point_accel(const rigmat_rec *r, size_t b, const double at_m[2],
        double complex a[2]);

#endif /* RIGMAT_RECURSIVE_H */
