/* riccati.h - the discrete algebraic Riccati equation (DARE)
 *
 *     X = A^T X A - (A^T X B + S)(R + B^T X B)^-1 (B^T X A + S^T) + Q,
 *
 * A n x n, B n x m, Q n x n symmetric positive semidefinite, R m x m
 * symmetric positive definite, S n x m (may be absent: S = 0).  The solution
 * returned is the stabilizing one: every eigenvalue of the closed loop
 * A - B K, K = (R + B^T X B)^-1 (B^T X A + S^T), lies inside the unit circle.
 * This is the control form (LQR: u = -K x); a Kalman filter solves the dual,
 * with A^T, C^T in place of A, B (src/study/gains.h).
 *
 * Method.
 *  1. The cross term, by the standard transformation (B. D. O. Anderson,
 *     J. B. Moore, "Optimal Control: Linear Quadratic Methods", 1990,
 *     section 2.4; D. A. Bini, B. Iannazzo, B. Meini, "Numerical Solution of
 *     Algebraic Riccati Equations", SIAM 2012, section 5.1):
 *         Ab = A - B R^-1 S^T,  Qb = Q - S R^-1 S^T,  G = B R^-1 B^T,
 *     after which X solves X = Ab^T X (I + G X)^-1 Ab + Qb.  Qb must be
 *     positive semidefinite (the joint covariance or cost of [x; u] is).
 *     R^-1 enters through its Cholesky factor only.
 *  2. The structure-preserving doubling algorithm (SDA; E. K.-W. Chu,
 *     H.-Y. Fan, W.-W. Lin, C.-S. Wang, "Structure-preserving algorithms for
 *     periodic discrete-time algebraic Riccati equations", Int. J. Control
 *     77(8):767-788, 2004; Bini, Iannazzo, Meini 2012, chapter 5):
 *         A0 = Ab, G0 = G, H0 = Qb;  W = I + G_k H_k,
 *         A_{k+1} = A_k W^-1 A_k,
 *         G_{k+1} = G_k + A_k W^-1 G_k A_k^T,
 *         H_{k+1} = H_k + A_k^T H_k W^-1 A_k,
 *     with W factored once per step by LU.  H_k -> X quadratically: the
 *     error falls like rho^(2^(k+1)), rho the spectral radius of the
 *     closed loop (W.-W. Lin, S.-F. Xu, SIAM J. Matrix Anal. Appl.
 *     28(1):26-39, 2006).  Stopping rule: the update A_k^T H_k W^-1 A_k is a
 *     product, not a difference, so it has no round-off floor; stop when
 *     ||H_{k+1} - H_k||_1 <= rtol ||H_{k+1}||_1 (default 1e-15), and fail
 *     after max_iter steps (default 64, enough for rho = 1 - 1e-17).
 *  3. SDA reaches the stabilizing solution when (Qb^1/2, Ab) is detectable.
 *     When it is not (an unstable mode the weights or the process noise do
 *     not see; H_k then stays in a non-stabilizing solution, e.g. X = 0 for
 *     Q = 0), the closed loop of the result is unstable.  The solver then
 *     runs SDA once more on Qb + delta I (delta = 1e-3 ||Qb||_F, or
 *     1 / ||G||_F when Qb = 0), whose gain is stabilizing, and refines it on
 *     the true Qb by Newton's method in Hewer's form (G. A. Hewer, "An
 *     iterative technique for the computation of the steady state gains for
 *     the discrete optimal regulator", IEEE Trans. Automatic Control
 *     16(4):382-384, 1971): X_i solves the Stein equation
 *     X_i = Ac^T X_i Ac + Qb + K_i^T R K_i (Ac = Ab - B K_i), by the same
 *     doubling (Smith's iteration), and K_{i+1} = (R + B^T X_i B)^-1 B^T X_i Ab.
 *     Newton converges quadratically to the stabilizing solution from any
 *     stabilizing gain (Hewer 1971); it stops when the relative change of
 *     X falls below newton_rtol (default 1e-13), or rises again once below
 *     1e-6 (round-off reached; far from the solution the change may rise).
 *
 * Refusals, found before the iteration (the PBH test,
 * rank[A - zI, B] = n; T. Kailath, "Linear Systems", 1980,
 * section 2.4.3, from memory):
 *   - R not positive definite (its Cholesky factorization breaks down at a
 *     column, returned in info->index);
 *   - Qb not positive semidefinite;
 *   - (A, B) not stabilizable: an eigenvalue z of Ab with |z| >= 1 -
 *     circle_tol where [Ab - z I, B] loses rank.  The rank test is the
 *     smallest singular value of that matrix (complex, through its real
 *     2x2-block form), with each nonzero column of B scaled to the norm of
 *     Ab, relative to max(||Ab||_F, 1), against pbh_rtol (default 1e-10);
 *     info->index is the largest entry of the left null vector w
 *     (w^H [Ab - z I, B] = 0): the state combination no input reaches;
 *   - (Qb^1/2, Ab) with an unobservable mode on the unit circle
 *     (| |z| - 1 | <= circle_tol, default 1e-6): [Ab - z I; Qb^1/2] loses
 *     rank (same scaling).  No stabilizing solution exists then (the mode
 *     costs nothing, or receives no noise, and stays on the circle);
 *     info->index is the largest entry of the right null vector.
 * and after it: no convergence within max_iter; a closed loop with a pole at
 * |z| >= 1 - circle_tol (info->index: largest entry of its eigenvector).
 * Both first run the PBH tests again at pbh_rtol_late (default 1e-6) and,
 * when they find a nearly defective mode, report it as above instead: a
 * defective (Jordan) eigenvalue is computed only to about sqrt(eps), which
 * can hide its rank defect from the strict test;
 * R + B^T X B not positive definite; a relative residual above
 * residual_max (default 1e-8).
 *
 * Accuracy: the relative residual
 *     ||A^T X A - X - (A^T X B + S) K + Q||_F /
 *         (||X||_F + ||A^T X A||_F + ||(A^T X B + S) K||_F + ||Q||_F)
 * is computed in the original (untransformed) terms and returned; on the
 * examples and the random cases of tests/ref it is 1e-18 to 3e-13.  The
 * forward error is this times the condition number of the DARE.
 *
 * Journal, volume and page details above are from memory.
 *
 * Units: none of its own; X has the units of Q (Q's units per R's units in K).
 */
#ifndef RIGMAT_RICCATI_H
#define RIGMAT_RICCATI_H

#include "rigmat_internal.h"
#include "fastblas.h"
#include <gsl/gsl_eigen.h>
#include <gsl/gsl_permutation.h>

typedef struct rigmat_riccati_opts {
    double rtol;          /* SDA stop: relative update in the 1-norm; default 1e-15 */
    size_t max_iter;      /* SDA steps (also per Stein solve); default 64 */
    double newton_rtol;   /* Newton stop: relative change of X; default 1e-13 */
    size_t newton_max;    /* Newton steps; default 30 */
    double pbh_rtol;      /* PBH rank threshold, relative; default 1e-10 */
    double pbh_rtol_late; /* the same after a failed iteration; default 1e-6 */
    double circle_tol;    /* | |z| - 1 | <= this is on the unit circle; default 1e-6 */
    double residual_max;  /* largest relative residual accepted; default 1e-8 */
} rigmat_riccati_opts;

rigmat_riccati_opts rigmat_riccati_opts_default(void);

/* Why a solve was refused (RIGMAT_FINE when it was not). */
typedef enum rigmat_riccati_defect {
    RIGMAT_RICCATI_FINE = 0,
    RIGMAT_RICCATI_R_NOT_PD,        /* R, or R + B^T X B, not positive definite; index: column */
    RIGMAT_RICCATI_Q_INDEFINITE,    /* Q - S R^-1 S^T has a negative eigenvalue */
    RIGMAT_RICCATI_UNSTABILIZABLE,  /* (A, B): a mode |z| >= 1 that B does not reach */
    RIGMAT_RICCATI_UNIT_CIRCLE,     /* (Q, A): a mode on |z| = 1 that Q does not see */
    RIGMAT_RICCATI_NO_CONVERGENCE,  /* max_iter (or newton_max) reached */
    RIGMAT_RICCATI_NOT_STABILIZING, /* a closed-loop pole at |z| >= 1 - circle_tol */
    RIGMAT_RICCATI_RESIDUAL         /* relative residual above residual_max */
} rigmat_riccati_defect;

/* What a solve did, filled whatever the status. */
typedef struct rigmat_riccati_info {
    size_t iterations;   /* SDA steps of the last SDA run */
    size_t newton_steps; /* 0 unless the detectability fallback ran */
    double update;       /* last relative SDA update */
    double residual;     /* relative residual (above); NaN when none computed */
    double rho;          /* spectral radius of the closed loop A - B K */
    rigmat_riccati_defect defect;
    double re, im;      /* the offending eigenvalue z (defects with a mode) */
    double margin;      /* PBH: relative smallest singular value found */
    size_t index;       /* state (or R column) the defect points at; RIGMAT_NONE */
    size_t right, left; /* modes: largest entries of the right and left eigenvectors
                             * of Ab (closed loop: of A - B K) for z; RIGMAT_NONE */
} rigmat_riccati_info;

/* Scratch space for n states and m inputs; allocated once, reused; free
 * with rigmat_riccati_ws_free (NULL does nothing).  NULL when out of memory
 * or n or m is 0. */
typedef struct rigmat_riccati_ws {
    size_t n, m;
    gsl_matrix *Ab, *Qb, *G, *Ak, *Gk, *Hk, *W, *Y1, *Y2, *T1, *T2, *X2, *F; /* n x n */
    gsl_matrix *Bt, *St, *Kt, *Nt;                                           /* m x n */
    gsl_matrix *L, *Rx;                                                      /* m x m */
    gsl_matrix *XB;                                                          /* n x m */
    gsl_permutation *perm;                                                   /* n */
    gsl_matrix *P, *V;                /* PBH: 2 max(n + m, 2n) x 2n, 2n x 2n */
    gsl_vector *sv, *svw;             /* 2n */
    gsl_vector *ev;                   /* n, symmetric eigenvalues */
    gsl_vector *bs;                   /* m, PBH column scales of B */
    gsl_eigen_symmv_workspace *sw;    /* n */
    gsl_eigen_nonsymmv_workspace *nw; /* n */
    gsl_vector_complex *z;            /* n eigenvalues */
    gsl_matrix_complex *Z;            /* n x n eigenvectors */
    rigmat_fastblas blas;             /* OpenBLAS, opened by the first large product */
} rigmat_riccati_ws;

rigmat_riccati_ws *rigmat_riccati_ws_alloc(size_t n, size_t m);
void rigmat_riccati_ws_free(rigmat_riccati_ws *w);

/* Solve the DARE above.  A (n x n), B (n x m), Q (n x n), R (m x m) are
 * read only (Q and R are symmetrized, i.e. only (M + M^T)/2 is used); S
 * (n x m) may be NULL.  Outputs, caller-allocated: X (n x n), K (m x n, may
 * be NULL), poles (n, may be NULL: the eigenvalues of A - B K).  info (may
 * be NULL) is filled whatever the status.  Returns RIGMAT_EUSAGE for sizes
 * that do not match the workspace, RIGMAT_ENUMERIC with info->defect set
 * and a message in err for every refusal listed above (GSL failures too). */
rigmat_status rigmat_riccati_solve(const gsl_matrix *A, const gsl_matrix *B, const gsl_matrix *Q,
                                   const gsl_matrix *R, const gsl_matrix *S,
                                   const rigmat_riccati_opts *o, rigmat_riccati_ws *w,
                                   gsl_matrix *X, gsl_matrix *K, gsl_vector_complex *poles,
                                   rigmat_riccati_info *info, rigmat_error *err);

/* The relative residual of X for (A, B, Q, R, S) as defined above, with
 * the gain K = (R + B^T X B)^-1 (B^T X A + S^T) (m x n) it implies.  NaN
 * when R + B^T X B is not positive definite.  Uses w's scratch. */
double rigmat_riccati_residual(const gsl_matrix *A, const gsl_matrix *B, const gsl_matrix *Q,
                               const gsl_matrix *R, const gsl_matrix *S, const gsl_matrix *X,
                               rigmat_riccati_ws *w);

#endif /* RIGMAT_RICCATI_H */
