/* discretize.h - the sampled form of a continuous linear model.
 *
 * Given x' = A x + B u + G w, y = C x + D u + E w (u the control inputs,
 * w the disturbances: the columns of a rigmat_lti's B and D from nu_control
 * on) and a period T, build
 *     x[k+1] = Ad x[k] + Bd u[k] + Gd w[k],   y[k] = Cd x[k] + Dd u[k] + Ed w[k].
 *
 * Methods (formulas: C. F. Van Loan, IEEE Trans. Automatic Control 23(3), 1978,
 * for the block exponentials; G. F. Franklin,
 * J. D. Powell, M. L. Workman, "Digital Control of Dynamic Systems", 3rd ed.,
 * 1998, chapters 4 and 6):
 *   ZOH             exp([[A, B], [0, 0]] T) = [[Ad, Bd], [0, I]]; exact for
 *                   inputs held over each period, and valid for singular A.
 *   FOH             exp([[A T, B T, 0], [0, 0, I], [0, 0, 0]]) = [[Ad, G1, G2], ...];
 *                   Bd = G1 + (Ad - I) G2, Dd = D + C G2 (the state is
 *                   x - G2 u, a triangle hold through the samples).
 *   TUSTIN          Ad = (I - A T/2)^-1 (I + A T/2), Bd = (I - A T/2)^-1 B T,
 *                   Cd = C (I - A T/2)^-1, Dd = D + C (I - A T/2)^-1 B T/2; with a
 *                   prewarp frequency f1 (< 1/(2T)), T is replaced by
 *                   T_w = 2 tan(w1 T/2)/w1, w1 = 2 pi f1, which makes the map
 *                   exact at f1.
 *   EULER           Ad = I + A T, Bd = B T (forward differences).
 *   BACKWARD_EULER  Ad = (I - A T)^-1, Bd = Ad B T, Cd = C Ad, Dd = D + C Ad B T.
 * The same formulas give Gd and Ed from the disturbance columns.
 *
 * Input delay (ZOH only): the control inputs reach the plant tau = (d + f) T
 * late, d whole samples and a fraction 0 <= f < 1.  With
 *     Gamma0 = int_0^{(1-f)T} e^{A s} ds B,  Gamma1 = e^{A(1-f)T} int_0^{fT} e^{A s} ds B,
 * x[k+1] = Ad x[k] + Gamma0 u[k-d] + Gamma1 u[k-d-1].  The past inputs become
 * states: stage j (j = 1 .. L) holds u[k-j] for every control input and is
 * named "<input>.delayed<j>", with L = d + 1 when f > 0 and L = d when
 * f = 0.  The augmented state is [x; u[k-1]; ...; u[k-L]] (stage-major: all
 * inputs of stage 1, then stage 2, ...).  D acts on the input in effect at
 * the sampling instant, u[k-L], so Dd is zero and the delayed stage carries
 * D in Cd.  Disturbances are not delayed.
 *
 * Units: period_s in s, prewarp_hz in Hz, delay in samples.
 */
#ifndef RIGMAT_DISCRETIZE_H
#define RIGMAT_DISCRETIZE_H

#include "rigmat_internal.h"
#include "expm.h"

typedef enum rigmat_method {
    RIGMAT_METHOD_ZOH = 0,
    RIGMAT_METHOD_FOH,
    RIGMAT_METHOD_TUSTIN,
    RIGMAT_METHOD_EULER,
    RIGMAT_METHOD_BACKWARD_EULER
} rigmat_method;

/* "zoh", "foh", "tustin", "euler", "backward-euler". */
const char *rigmat_method_name(rigmat_method m);
/* Parse one of the names above; returns 0 and sets *m, or -1. */
int rigmat_method_parse(const char *name, rigmat_method *m);

typedef struct rigmat_discretize_opts {
    rigmat_method method;
    double period_s;      /* > 0 */
    double prewarp_hz;    /* TUSTIN only; 0 = none; 0 < f < 1/(2 T) */
    double delay_samples; /* ZOH only; >= 0; d + f as above */
    size_t max_states;    /* the largest nx_plant + nu * L accepted; default
                           * rigmat_options_default().max_sampled_states */
    unsigned expm_flags;  /* rigmat_expm_flags; default RIGMAT_EXPM_BALANCE: the
                           * augmented matrices mix 1/s and 1/L scales (torsion.yaml
                           * FOH at 1 kHz: Bd off by 4e-13 unbalanced, 8e-15
                           * balanced, against 40-digit mpmath) */
} rigmat_discretize_opts;

/* ZOH, 1 kHz, no prewarp, no delay. */
rigmat_discretize_opts rigmat_discretize_opts_default(void);

/* The sampled model.  Matrices are NULL when a dimension is 0. */
typedef struct rigmat_dlti {
    rigmat_method method;
    double period_s;
    double prewarp_hz;
    double delay_samples;
    size_t nx;       /* states: nx_plant + nu * ndelay */
    size_t nx_plant; /* states of the continuous model */
    size_t nu;       /* control inputs */
    size_t nw;       /* disturbance inputs */
    size_t ny;       /* outputs */
    size_t ndelay;   /* delay stages L */
    gsl_matrix *Ad;  /* nx x nx */
    gsl_matrix *Bd;  /* nx x nu */
    gsl_matrix *Gd;  /* nx x nw */
    gsl_matrix *Cd;  /* ny x nx */
    gsl_matrix *Dd;  /* ny x nu */
    gsl_matrix *Ed;  /* ny x nw: disturbance feedthrough */
    /* the delay states nx_plant .. nx-1, in order: kind RIGMAT_SIG_DELAY,
     * index = the control input, name "<input>.delayed<j>" (owned), unit
     * of the input; NULL when ndelay = 0 */
    rigmat_signal *delay_states;
} rigmat_dlti;

void rigmat_dlti_free(rigmat_dlti *d);

/* A workspace for models of up to nx states, nu inputs in all (control
 * plus disturbance) and ny outputs, for any method and delay; owned by the
 * caller, free with rigmat_discretize_ws_free.  NULL when out of memory or
 * nx = 0. */
typedef struct rigmat_discretize_ws {
    size_t nx, nu, ny;
    rigmat_expm_ws *expm;                 /* nx + 2 nu */
    gsl_matrix *M, *E;                    /* (nx + 2 nu) square */
    gsl_matrix *Phi1, *G0, *G1, *Gf, *LU; /* nx x nx, nx x nu, nx x nu, nx x nu, nx x nx */
    gsl_permutation *perm;                /* nx */
    gsl_vector *tmp;                      /* nx */
    gsl_matrix *Dm;                       /* ny x nu (1 x 1 when a size is 0) */
} rigmat_discretize_ws;

rigmat_discretize_ws *rigmat_discretize_ws_alloc(size_t nx, size_t nu, size_t ny);
void rigmat_discretize_ws_free(rigmat_discretize_ws *w);

/* Discretize s (whose input names, when it has them, name the delay states).
 * On success *out is a new model owned by the caller (rigmat_dlti_free).
 * RIGMAT_EUSAGE for a bad period, prewarp or delay, a delay whose states
 * exceed o->max_states (checked before any allocation), a delay with a method
 * other than ZOH, or a model without states; RIGMAT_ENUMERIC when I - A T/2
 * or I - A T is singular or the exponential overflows; RIGMAT_ENOMEM. */
rigmat_status rigmat_discretize(const rigmat_lti *s, const rigmat_discretize_opts *o,
                                rigmat_discretize_ws *w, rigmat_dlti **out, rigmat_error *err);

/* The same into *io, for many models of one shape (the sweep): when *io
 * holds a result of the sizes s and o give (and no delay states), it is
 * refilled in place, starting from zero as a new one does, so the numbers
 * are rigmat_discretize's to the bit; otherwise it is freed and a new one
 * allocated.  *io (NULL or a result) stays the caller's, whatever the
 * status; after a failure its numbers are stale. */
rigmat_status rigmat_discretize_reuse(const rigmat_lti *s, const rigmat_discretize_opts *o,
                                      rigmat_discretize_ws *w, rigmat_dlti **io,
                                      rigmat_error *err);

/* ------------------------------------------------------------ sampling advice */

/* Thresholds of the advice below, with their documented defaults. */
typedef struct rigmat_sampling_limits {
    double nyquist_fraction;  /* warn when |Im lambda| T > fraction * pi; default 0.5 */
    double unstable_lambda_t; /* warn when Re lambda > 0 and |lambda| T > this; default 0.3 */
    double fast_pole_lambda_t; /* a stable real pole with |lambda| T above this is "fast"; default 5 */
    double imag_rtol;          /* |Im lambda| <= imag_rtol |lambda| counts as real; default 1e-9 */
} rigmat_sampling_limits;

rigmat_sampling_limits rigmat_sampling_limits_default(void);

typedef enum rigmat_advice_kind {
    RIGMAT_ADVICE_NYQUIST,     /* an oscillatory mode near or beyond Nyquist */
    RIGMAT_ADVICE_UNSTABLE,    /* an unstable mode fast for this period */
    RIGMAT_ADVICE_EULER,       /* forward Euler turns a stable mode unstable */
    RIGMAT_ADVICE_NEGLECT_L,   /* a fast stable pole in a motor current: inductance: neglect */
    RIGMAT_ADVICE_QD_NOT_EXACT, /* Qd is the exact sampled covariance only for ZOH */
    RIGMAT_ADVICE_FAST_FILTER  /* a sensor filter's pole fast for this period: the state adds
                                * nothing a sample sees */
} rigmat_advice_kind;

typedef struct rigmat_advice {
    rigmat_advice_kind kind;
    double re, im; /* the eigenvalue, 1/s (0 for QD_NOT_EXACT) */
    size_t state;  /* the state the mode lives in most (largest |v_i|), or RIGMAT_NONE */
} rigmat_advice;

/* Eigenvalues of s->A against the period and method.  Fills up to cap
 * items into items and sets *count to the number found (which may exceed
 * cap).  A pair of complex conjugate modes yields one item.  Returns
 * RIGMAT_ENUMERIC if the eigenvalue solver fails, RIGMAT_ENOMEM. */
rigmat_status rigmat_sampling_advice(const rigmat_lti *s, const rigmat_discretize_opts *o,
                                     const rigmat_sampling_limits *lim, rigmat_advice *items,
                                     size_t cap, size_t *count, rigmat_error *err);

#endif /* RIGMAT_DISCRETIZE_H */
