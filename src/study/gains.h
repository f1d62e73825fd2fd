/* gains.h - steady-state Kalman filter and LQR gains of a sampled model.
 *
 * Both come from the discrete algebraic Riccati equation (riccati.h).
 *
 * Kalman filter.  Model (src/sample/noise.h for Qd, Rd, S):
 *     x[k+1] = Ad x[k] + Bd u[k] + w[k],   y[k] = Cd x[k] + Dd u[k] + v[k],
 *     E[w w^T] = Qd, E[v v^T] = Rd, E[w[k] v[k]^T] = S (same index k: the
 *     noise that moves the state from k to k+1 correlates with the
 *     measurement noise at k; S = 0 when no disturbance reaches a sensor
 *     directly), white in k.
 * The prior covariance P = E[(x - x-)(x - x-)^T] solves the filter DARE
 *     P = Ad P Ad^T - (Ad P Cd^T + S)(Rd + Cd P Cd^T)^-1 (Cd P Ad^T + S^T) + Qd,
 * the dual of the control DARE (Ad^T, Cd^T in place of A, B), solved by
 * rigmat_riccati_solve.  Then (B. D. O. Anderson, J. B. Moore, "Optimal
 * Filtering", 1979, sections 3.3 and 5.5; for the cross term, their
 * section 5.5, from memory):
 *     innovation covariance  Re = Cd P Cd^T + Rd
 *     filter gain            M  = P Cd^T Re^-1              (nx x ny)
 *     predictor gain         Kp = (Ad P Cd^T + S) Re^-1 = Ad M + S Re^-1
 *     posterior covariance   P+ = P - M Re M^T = E[(x - x+)(x - x+)^T]
 * Filter form, one step:
 *     measurement update  e = y[k] - (Cd x- + Dd u[k]);  x+ = x- + M e
 *     time update         x-[k+1] = Ad x+ + Bd u[k] + (Kp - Ad M) e
 * (the last term is S Re^-1 e: zero when S = 0).  Predictor form:
 *     x-[k+1] = Ad x- + Bd u[k] + Kp e.
 * Estimator poles: the eigenvalues of Ad - Kp Cd, the error dynamics of
 * the predictor form (x - x-)[k+1] = (Ad - Kp Cd)(x - x-)[k] + noise; with
 * S = 0 they equal the eigenvalues of (I - M Cd) Ad, those of the filter
 * form's error x - x+.  Each output's predicted standard deviation is
 * sqrt(Re_ii): the spread of y - y- the filter expects, to hold against
 * the innovations measured on the machine.
 * Qd is usually singular (few disturbance inputs): the solver handles a
 * semidefinite Qd; what it needs is that every mode on the unit circle
 * receives some process noise, every mode on or outside it is seen by a
 * sensor, and Rd is positive definite (every sensor has some noise).
 *
 * LQR.  u[k] = -K x[k] minimizes sum_k x^T Q x + u^T R u for
 * x[k+1] = Ad x + Bd u (control inputs only; disturbances are not in the
 * LQR): K = (R + Bd^T X Bd)^-1 Bd^T X Ad with X, the cost-to-go, from the
 * control DARE; closed-loop poles eig(Ad - Bd K).  Q and R come from
 * Bryson's rule (weights.h).
 *
 * Refusals are rigmat_riccati_solve's, with the message rewritten by
 * rigmat_gains_explain to name the mode's state, sensor or input.
 */
#ifndef RIGMAT_GAINS_H
#define RIGMAT_GAINS_H

#include "rigmat_internal.h"
#include "riccati.h"

/* The steady-state Kalman filter.  Owns every matrix. */
typedef struct rigmat_kalman {
    size_t nx, ny;
    gsl_matrix *gain;           /* M, nx x ny: x+ = x- + M (y - y-) */
    gsl_matrix *predictor_gain; /* Kp = Ad M + S Re^-1, nx x ny */
    gsl_matrix *prior;          /* P, nx x nx */
    gsl_matrix *posterior;      /* P+, nx x nx */
    gsl_matrix *innovation;     /* Re, ny x ny */
    gsl_vector *output_sd;      /* sqrt(Re_ii), ny, in each output's unit */
    gsl_vector_complex *poles;  /* eig(Ad - Kp Cd), nx */
    rigmat_riccati_info info;   /* residual, iterations */
} rigmat_kalman;

/* The LQR.  Owns every matrix. */
typedef struct rigmat_lqr {
    size_t nx, nu;             /* nu: control inputs */
    gsl_matrix *gain;          /* K, nu x nx: u = -K x */
    gsl_matrix *cost_to_go;    /* X, nx x nx */
    gsl_vector_complex *poles; /* eig(Ad - Bd K), nx */
    rigmat_riccati_info info;
} rigmat_lqr;

/* Scratch space for nx states and up to p outputs or inputs; free with
 * rigmat_gains_ws_free (NULL does nothing).  NULL when out of memory or a
 * size is 0. */
typedef struct rigmat_gains_ws {
    size_t nx, p;
    gsl_matrix *At;           /* nx x nx */
    gsl_matrix *Ct, *PCt, *T; /* nx x p */
    gsl_matrix *Mt;           /* p x nx */
    gsl_matrix *L;            /* p x p */
} rigmat_gains_ws;

rigmat_gains_ws *rigmat_gains_ws_alloc(size_t nx, size_t p);
void rigmat_gains_ws_free(rigmat_gains_ws *w);

/* The steady-state Kalman filter of (Ad, Cd, Qd, Rd, S) as above; S may be
 * NULL.  gw holds at least nx states and ny outputs; rw is exactly
 * (nx, ny).  On success *out is new, owned by the caller
 * (rigmat_kalman_free).  RIGMAT_ENUMERIC (with (*info) filled when info is
 * not NULL) for every refusal of rigmat_riccati_solve; RIGMAT_EUSAGE for
 * sizes; RIGMAT_ENOMEM. */
rigmat_status rigmat_kalman_solve(const gsl_matrix *Ad, const gsl_matrix *Cd, const gsl_matrix *Qd,
                                  const gsl_matrix *Rd, const gsl_matrix *S,
                                  const rigmat_riccati_opts *o, rigmat_gains_ws *gw,
                                  rigmat_riccati_ws *rw, rigmat_kalman **out,
                                  rigmat_riccati_info *info, rigmat_error *err);
void rigmat_kalman_free(rigmat_kalman *k);

/* The LQR of (Ad, Bd) with weights Q (nx x nx) and R (nu x nu); rw is
 * exactly (nx, nu).  Ownership and statuses as rigmat_kalman_solve. */
rigmat_status rigmat_lqr_solve(const gsl_matrix *Ad, const gsl_matrix *Bd, const gsl_matrix *Q,
                               const gsl_matrix *R, const rigmat_riccati_opts *o,
                               rigmat_riccati_ws *rw, rigmat_lqr **out, rigmat_riccati_info *info,
                               rigmat_error *err);
void rigmat_lqr_free(rigmat_lqr *l);

/* ------------------------------------------------------ names of signals */

typedef enum rigmat_gains_group {
    RIGMAT_GAINS_STATE,
    RIGMAT_GAINS_INPUT,
    RIGMAT_GAINS_OUTPUT
} rigmat_gains_group;

/* The name and unit of state, input or output i of l: the one place in
 * src/study that reads them (from the lti's borrowed layout in this
 * version).  "?" and "" when l carries no names or i is out of range. */
const char *rigmat_gains_name(const rigmat_lti *l, rigmat_gains_group g, size_t i);
const char *rigmat_gains_unit(const rigmat_lti *l, rigmat_gains_group g, size_t i);

/* Which problem a refusal came from, for rigmat_gains_explain. */
typedef enum rigmat_gains_problem { RIGMAT_GAINS_KALMAN, RIGMAT_GAINS_LQR } rigmat_gains_problem;

/* Rewrite err (status kept) after a refusal described by info so that it
 * names the mode by its eigenvalue and the state it mostly lives in, the
 * sensor without noise, or the input, with a hint; weights_file names the
 * weights (may be NULL).  Does nothing when info->defect is RIGMAT_RICCATI_FINE. */
void rigmat_gains_explain(const rigmat_lti *l, rigmat_gains_problem p,
                          const rigmat_riccati_info *info, const char *weights_file,
                          rigmat_error *err);

#endif /* RIGMAT_GAINS_H */
