/* noise.h - the discrete noise model of a Kalman filter: Qd, Rd and the
 * cross-covariance S.
 *
 * Convention (README.md, "Noise convention"): a
 * density N is white noise of intensity Qc = N^2, E[w(t) w(s)] = Qc
 * delta(t - s).  Hence
 *   - the average of such a signal over one period T has variance N^2 / T;
 *   - behind a first-order low-pass of bandwidth f_c (Hz), H = 1/(1 + s/w_c)
 *     with w_c = 2 pi f_c, its variance is N^2 int |H(jw)|^2 dw / (2 pi)
 *     = N^2 w_c / 2 = N^2 pi f_c;
 *   - a quantization step q adds q^2 / 12 (B. Widrow, I. Kollar, M.-C. Liu,
 *     IEEE Trans. Instrum. Meas. 45(2):353-361, 1996);
 *   - a sensor's `noise` is a standard deviation per sample.
 *
 * Process noise.  For x' = A x + G w, the covariance of the state noise
 * accumulated over one period is
 *     Qd = int_0^T e^{A s} G Qc G^T e^{A^T s} ds.
 * It is computed in balanced coordinates (A' = D^-1 A D, G' = D^-1 G, D the
 * power-of-two diagonal of gsl_linalg_balance_matrix, so exact; Qd = D Q' D)
 * by one of two routes, each with a first-order error bound; the bound is
 * normwise, ||Q'_computed - Q'||_1 / ||Q'||_1 with the norm max(||.||_1,
 * ||.||_inf), in those balanced coordinates (where the states have
 * comparable scales, so small variances such as a stiff position's are
 * covered too):
 *   1. Van Loan's block method (C. F. Van Loan, "Computing integrals
 *      involving the matrix exponential", IEEE Trans. Automatic Control
 *      AC-23(3):395-404, 1978): e^{M h} with M = [[-A, W], [0, A^T]],
 *      W = G Qc G^T, has blocks [[F11, F12], [0, F22]], Phi = F22^T and
 *      Q(h) = F22^T F12.  On a stiff model e^{-A T} overflows, so the block
 *      form is applied only over h = T / 2^s with ||A'||_1 h <= step_norm,
 *      and the s doublings Q(2h) = Q(h) + Phi(h) Q(h) Phi(h)^T,
 *      Phi(2h) = Phi(h)^2 (exact, from splitting the integral at h) bring it
 *      to T.  The bound is carried through the doublings: with e_P, e_Q the
 *      error bounds of Phi and Q and gamma = n u (u = 2^-53),
 *          e_P <- 2 |Phi| e_P + gamma |Phi|^2,
 *          e_Q <- (1 + |Phi|^2) e_Q + 2 |Phi| |Q| e_P + gamma (2 |Phi|^2 + 1) |Q|,
 *      starting from 8 (2n) u times the norms of the block exponential
 *      (its backward error, Higham 2005; 2n its size: with n, the bound
 *      fell 1.5 times short of the measured error of a stiff oscillator
 *      whose products were rounded without fused multiply-adds, GSL's
 *      CBLAS, tests/check_noise.c).  It grows like 2^s u: each doubling
 *      can double an error along a mode that does not decay within h.
 *   2. When that bound exceeds rtol: the eigen-decomposition A' = V L V^-1
 *      (complex), in which the integral is elementwise:
 *          Qd = V X V^H,  X_ij = Wt_ij int_0^T e^{mu_ij s} ds,
 *          Wt = V^-1 W' V^-H,  mu_ij = l_i + conj(l_j),
 *      the integral T (e^z - 1)/z at z = mu T by expm1 (no cancellation for
 *      slow modes, none for fast ones).  Its bound is a posteriori, from the
 *      exact identity (d/ds of e^{As} W e^{A^T s})
 *          A Qd + Qd A^T = Ad W Ad^T - W,
 *      with Ad = e^{A' T} from rigmat_expm: the residual R of the computed
 *      Qd, plus the rounding of R itself and the disagreement of that Ad
 *      with V e^{L T} V^-1, bounds the error through the inverse of the
 *      Lyapunov operator, ||E|| <= kappa(V)^2 (||R|| + rounding) /
 *      min |mu_ij|.  The operator is singular when some mu_ij = 0 (an
 *      integrator, an undamped mode): then this route gives no bound.
 * When neither bound is within rtol, Qd is refused (RIGMAT_ENUMERIC) rather
 * than printed.  Why route 1 alone fails on stiff, lightly damped modes: see
 * noise.c, above vanloan_doubling().  Qd is the exact covariance of the
 * sampled continuous system, i.e. it belongs to the ZOH Ad; for the other
 * methods it is the same matrix, labelled approximate.
 *
 * Measurement noise.  Rd is diagonal in the sensors' own terms plus, when a
 * disturbance with a density reaches an output directly (column j of the
 * continuous D, j >= nu_control, is not zero: E = D[:, nu_control:]), that
 * white noise inside the measurement, taken as its average over the
 * period: Rd += E diag(Qc / T) E^T.  The same average over the interval
 * [kT, (k+1)T) drives x[k+1], so process and measurement noise correlate:
 *     S = E[w_k v_k^T] = Gamma_G diag(Qc) E^T / T,
 * Gamma_G = int_0^T e^{A s} ds G (the exact ZOH disturbance matrix), in the
 * form x[k+1] = Ad x[k] + ... + w_k, y[k] = Cd x[k] + ... + v_k.  S is NULL
 * when no disturbance reaches an output directly.
 *
 * Units: SI throughout; variances in output units squared.
 */
#ifndef RIGMAT_NOISE_H
#define RIGMAT_NOISE_H

#include "rigmat_internal.h"
#include "discretize.h"
#include "expm.h"

typedef struct rigmat_noise_opts {
    double step_norm;    /* ||A'||_1 h <= step_norm for the block step; default 0.5 */
    unsigned expm_flags; /* rigmat_expm_flags; default 0 */
    double rtol;         /* the largest error bound accepted (see above); default 1e-6 */
} rigmat_noise_opts;

/* How a Qd was computed. */
typedef enum rigmat_qd_route {
    RIGMAT_QD_NONE = 0,    /* no process noise: Qd = 0 */
    RIGMAT_QD_VANLOAN = 1, /* block exponential with doubling */
    RIGMAT_QD_EIGEN = 2    /* eigen-decomposition, residual-checked */
} rigmat_qd_route;

rigmat_noise_opts rigmat_noise_opts_default(void);

/* Scratch space for models of up to nx states and nw disturbances.  With
 * nw = 0 only T2 is allocated (rigmat_noise_build's zero Qd; the others
 * are NULL and rigmat_noise_qd refuses the workspace). */
typedef struct rigmat_noise_ws {
    size_t nx, nw;
    rigmat_expm_ws *expm;              /* max(2 nx, nx + nw) */
    gsl_matrix *M, *F;                 /* 2 nx square (>= nx + nw) */
    gsl_matrix *W, *Phi, *Q, *T1, *T2; /* nx x nx */
    gsl_matrix *G;                     /* nx x nw; NULL when nw = 0 */
    gsl_matrix *Ab, *Ad;               /* nx x nx: balanced A, its exponential */
    gsl_vector *D;                     /* nx: the balancing diagonal */
    /* what the last rigmat_noise_qd did */
    rigmat_qd_route route;
    double bound;        /* the error bound of the Qd returned (0 for none) */
    double bound_vanloan; /* route 1's bound (inf when it overflowed) */
    double bound_eigen;   /* route 2's bound (inf when it gives none; -1 when not tried) */
} rigmat_noise_ws;

rigmat_noise_ws *rigmat_noise_ws_alloc(size_t nx, size_t nw);
void rigmat_noise_ws_free(rigmat_noise_ws *w);

/* Qd (nx x nx, caller-allocated) for x' = A x + G w with intensities
 * intensity[0..ncols(G)) (Qc diagonal, SI per Hz, >= 0) over period_s.  G
 * may be NULL (Qd = 0).  *doublings (may be NULL) receives s; w->route,
 * w->bound and the two routes' bounds tell how it went.  Returns
 * RIGMAT_EUSAGE for bad sizes or a negative intensity, RIGMAT_ENUMERIC when
 * the exponential fails or no route is within o->rtol (the message gives
 * both bounds), RIGMAT_ENOMEM when the eigen route cannot get its scratch
 * space (it allocates it per call: route 1 is the common case). */
rigmat_status rigmat_noise_qd(const gsl_matrix *A, const gsl_matrix *G, const double *intensity,
                              double period_s, const rigmat_noise_opts *o, rigmat_noise_ws *w,
                              gsl_matrix *Qd, unsigned *doublings, rigmat_error *err);

/* The per-sample variance of one sensor and its parts, each >= 0. */
typedef struct rigmat_sensor_noise {
    double noise_var;      /* sd^2 */
    double density_var;    /* N^2 / T, or N^2 pi f_c with a bandwidth */
    double resolution_var; /* q^2 / 12 */
    double total_var;      /* their sum */
} rigmat_sensor_noise;

/* sd, density, bandwidth_hz and resolution as in rigmat_lti (0 = none). */
rigmat_sensor_noise rigmat_noise_sensor(double sd, double density, double bandwidth_hz,
                                        double resolution, double period_s);

/* The standard deviation of a white disturbance of intensity Qc averaged
 * over one period: sqrt(Qc / T). */
double rigmat_noise_sample_sd(double intensity, double period_s);

/* The standard deviation of a sensor bias t seconds after it was known
 * exactly (b(0) = 0): a random walk of density walk (b' = w) grows as
 * walk sqrt(t); a Gauss-Markov bias of steady sd and correlation time tau
 * as sd sqrt(1 - e^{-2t/tau}) (tau > 0 selects it). */
double rigmat_noise_bias_sd(double walk, double sd, double tau_s, double t_s);

/* The noise model of a sampled model. */
typedef struct rigmat_noise {
    size_t nx, ny, nw; /* nx: states of the sampled model (with delays) */
    double period_s;
    int qd_exact;                /* 1 when the sampled model is ZOH (Qd within qd_bound) */
    unsigned doublings;          /* s of the Qd computation (route 1) */
    rigmat_qd_route qd_route;    /* how Qd was computed */
    double qd_bound;             /* its relative error bound (noise.h, above; <= rtol) */
    gsl_matrix *Qd;              /* nx x nx (delay states carry no noise); NULL when nx = 0 */
    gsl_matrix *Rd;              /* ny x ny; NULL when ny = 0 */
    gsl_matrix *S;               /* nx x ny cross-covariance; NULL when none */
    rigmat_sensor_noise *sensor; /* ny: the sensors' own terms */
    double *direct_var;          /* ny: variance added by disturbances reaching the output */
    double *disturbance_sd;      /* nw: per-sample sd of each disturbance, sqrt(Qc/T) */
    size_t ndirect;              /* (output, disturbance) pairs with a direct path */
} rigmat_noise;

/* Build the noise model of d, sampled from s.  On success *out is owned by
 * the caller (rigmat_noise_free).  Statuses as rigmat_noise_qd, and
 * RIGMAT_ENOMEM. */
rigmat_status rigmat_noise_build(const rigmat_lti *s, const rigmat_dlti *d,
                                 const rigmat_noise_opts *o, rigmat_noise_ws *w, rigmat_noise **out,
                                 rigmat_error *err);
void rigmat_noise_free(rigmat_noise *n);

#endif /* RIGMAT_NOISE_H */
