/* modes.h - the modes of a linear model: eigenvalues, what each mode lives
 * in, who reaches it and who sees it, the zeros of every channel, DC gain.
 *
 * Input: a continuous rigmat_lti x' = A x + B u, y = C x + D u (and, for
 * the discrete eigenvalues z = e^{sT}, a sample period T).  Everything is
 * computed on the balanced model, never on raw SI numbers, because a radian
 * and a metre are not comparable:
 *
 *   Scaling.  A diagonal similarity A_b = S^-1 A S, with S = diag(scale),
 *   makes every off-diagonal row and column of A_b equal in 2-norm
 *   (Osborne 1960, "On pre-conditioning of matrices", J. ACM 7(4); the
 *   iteration of Parlett & Reinsch 1969, Numer. Math. 13, without their
 *   rounding to powers of 2).  scale[i] carries the unit of state i, so
 *   the result does not depend on the units chosen: measuring a travel in
 *   mm instead of m multiplies its scale by 1000 and changes no share.
 *   A state whose off-diagonal row or column is empty (among the others,
 *   repeatedly) cannot be balanced: a cyclic coordinate such as a
 *   balancer's travel, which nothing depends on, or a disturbance's
 *   shaping filter.  Its scale is the size of its rate of change (from its
 *   row), else of its influence (from its column), divided by (times) the
 *   characteristic rate omega_core = ||balanced part||_2 (1/s); for the
 *   shares of a mode it is measured at that mode's own rate |s| instead
 *   (when s is not 0), so a travel counts as much as the velocity moving
 *   it.  Both keep the scaling dimensionally sound.  omega_b = ||A_b||_2.
 *   Inputs and outputs are scaled to unit column (row) 2-norm in the
 *   scaled states; D accordingly.
 *
 *   Shares.  Mode k's right eigenvector v of A_b (scaled units) gives
 *   share_i = |v_i|^2 / ||v||^2: the shares of a mode sum to 1.
 *
 *   Controllability and observability by the PBH test (Hautus 1969;
 *   Kailath 1980, "Linear Systems", section 2.4.3): mode s is controllable
 *   when sigma_min([A_b - sI, B_c]) > rtol * ||[A_b, B_c]||_2 (B_c the
 *   scaled control columns), observable when sigma_min([A_b - sI; C_b]) >
 *   rtol * ||[A_b; C_b]||_2.  These measures are the relative distance to
 *   an uncontrollable (unobservable) model at s; an exactly uncontrollable
 *   mode gives rounding, about eps * cond (1e-15 .. 1e-12), and a stiff
 *   rig's slow modes give small but real values (about 4e-8 for the
 *   balancer's tilt, where the fast motor current sets the norm), hence
 *   rtol = 1e-10.  The rank form also holds for repeated eigenvalues;
 *   eigenvalues within cluster_rtol * omega_b of each other are tested at
 *   their mean, which a Jordan block's rounding does not move (its
 *   members scatter by about sqrt(eps)).  Input j reaches mode s when
 *   the projection of the unit b_j onto the left null space of A_b - sI
 *   (singular values <= null_rtol * omega_b; at least one direction)
 *   exceeds rtol (for a simple eigenvalue this is |w^H b_j| / (|w| |b_j|),
 *   w the left eigenvector); output i sees it when the unit c_i projected
 *   onto the right null space exceeds rtol.  Complex matrices are handled
 *   through their real embedding [[Re, -Im], [Im, Re]], whose singular
 *   values are those of the complex matrix, each twice.
 *
 *   Stability.  |Re s| <= stab_rtol * omega_b is marginal (the eigenvalues
 *   of a Jordan block are only known to about sqrt(eps) of the scale),
 *   else the sign of Re s decides.  A marginal mode has no time constant.
 *
 *   Zeros.  The invariant zeros of the channel (input j, output i) are the
 *   finite generalized eigenvalues of its Rosenbrock pencil
 *   ([[A, b], [c, d]], [[I, 0], [0, 0]]), in scaled units (zeros do not
 *   depend on the scaling) with time in units of 1/omega_b.  The infinite
 *   eigenvalues are deflated first, as Emami-Naeini & Van Dooren (1982),
 *   "Computation of zeros of linear multivariable systems", Automatica
 *   18(4), do: while the feedthrough is zero (|d| <= inf_rtol |b| |c|), a
 *   Householder reflection turns b into the last axis, and the pencil of
 *   (A11, a12, c1, c2) has the same finite eigenvalues with one state
 *   fewer.  What is left (d != 0) has exactly one infinite eigenvalue; QZ
 *   (gsl_eigen_gen; Moler & Stewart 1973) on it, padded to a fixed size
 *   with exactly infinite ones (P = I, Q = 0), gives beta = 0 for those
 *   up to rounding, and the known number of pairs with the smallest
 *   |beta| / |alpha| is dropped.  Deflating first matters: QZ alone leaves
 *   the infinite eigenvalues of a relative degree k > 1 as finite numbers
 *   near eps^(-1/k) omega_b (+-1e8 on the cart-pole), which no test on
 *   beta can tell from real zeros.  A channel whose Markov parameters d,
 *   c b, c A b, ..., c A^(n-1) b (scaled, A_b / omega_b) are all below
 *   rtol has a transfer function that is identically zero: no path from
 *   the input to the output, and no zeros (its pencil is singular).
 *
 *   DC gain.  -C A^-1 B + D by LU when no eigenvalue is within
 *   stab_rtol * omega_b of 0.  Otherwise per channel: with p0 eigenvalues
 *   and z0 finite zeros of the channel's pencil that close to 0, the gain
 *   is infinite (NaN here, null in JSON) when z0 < p0, and otherwise the
 *   limit of G(s) at 0, computed as the mean of G over 32 points of a
 *   circle around 0 of radius a tenth of the smallest non-zero |pole| or
 *   |zero| (the mean of an analytic function over a circle is its value at
 *   the centre; the error falls as the 32nd power of the radius ratio).
 *   An identically zero channel has gain 0.
 *
 * All rates are in 1/s (rad/s for imaginary parts), frequencies in Hz,
 * times in s.  Nothing here prints.
 */
#ifndef RIGMAT_MODES_H
#define RIGMAT_MODES_H

#include "rigmat_internal.h"

typedef enum rigmat_stability {
    RIGMAT_STABLE = 0, /* Re s < -stab_rtol * omega_b */
    RIGMAT_MARGINAL,   /* |Re s| <= stab_rtol * omega_b */
    RIGMAT_UNSTABLE    /* Re s > stab_rtol * omega_b */
} rigmat_stability;

/* Tolerances, all relative and dimensionless; rigmat_modes_settings_default
 * gives the documented defaults. */
typedef struct rigmat_modes_settings {
    double rtol;         /* PBH rank measure, reach, sight, no-path test; default 1e-10 */
    double null_rtol;    /* null space of A_b - sI: sigma <= null_rtol omega_b; default 1e-8 */
    double cluster_rtol; /* eigenvalues closer than this times omega_b are one; default 1e-7 */
    double stab_rtol;    /* marginal band and zeros "at 0", relative to omega_b; default 1e-6 */
    double inf_rtol;     /* a feedthrough below this (scaled) is zero; default 1e-10 */
    double share_min;    /* states below this share are not listed in text/JSON; default 0.01 */
    double max_work;     /* cost limit: refuse when n^3 (n + nu ny) exceeds it (README.md,
                          * "Rules worth knowing"); default 1e9 */
} rigmat_modes_settings;

rigmat_modes_settings rigmat_modes_settings_default(void);

/* One eigenvalue.  A complex pair gives two modes, the one with Im s > 0
 * first. */
typedef struct rigmat_mode {
    double s_re, s_im;      /* continuous eigenvalue (1/s) */
    double z_re, z_im;      /* e^{sT} when the period is > 0; else 0 */
    double frequency_hz;    /* |s| / (2 pi) */
    double damping;         /* -Re s / |s| in [-1, 1]; NaN when s = 0 */
    double time_constant_s; /* -1 / Re s (negative: growth); NaN when marginal */
    rigmat_stability stability;
    int controllable;          /* PBH with the control inputs */
    int observable;            /* PBH with all outputs */
    double ctrb_measure;       /* sigma_min([A_b - sI, B_c]) / ||[A_b, B_c]||_2 */
    double obsv_measure;       /* sigma_min([A_b - sI; C_b]) / ||[A_b; C_b]||_2 */
    unsigned char *reached_by; /* nu flags: input j (either role) reaches the mode */
    unsigned char *seen_by;    /* ny flags: output i sees the mode */
    double *reach;             /* nu: projection of b_j on the left null space, in [0, 1] */
    double *sight;             /* ny: projection of c_i on the right null space, in [0, 1] */
    double *share;             /* nx: share of state i, sums to 1 */
    size_t *by_share;          /* nx: state indices, largest share first */
} rigmat_mode;

/* The invariant zeros of one channel. */
typedef struct rigmat_channel_zeros {
    size_t input, output; /* indices into the inputs and outputs */
    size_t count;         /* finite zeros */
    double *re, *im;      /* count each (1/s); sorted by |z|, then Im descending */
    int no_path;          /* the transfer function is identically zero */
    size_t rhp;           /* zeros with Re z > stab_rtol * omega_b */
} rigmat_channel_zeros;

typedef struct rigmat_modes {
    size_t nx, nu, ny, nu_control;
    double period_s; /* 0 = no discrete eigenvalues */
    rigmat_modes_settings set;
    char **state_names, **input_names, **output_names; /* owned copies */
    double *scale;               /* nx: characteristic size of each state, in its unit */
    unsigned char *balanced;     /* nx: 1 when the scale came from balancing, 0 when from
                                 * its row or column (then measured per mode; see above) */
    double omega_b;              /* ||A_b||_2 (1/s); 1 when A is 0 */
    rigmat_mode *modes;          /* nx, sorted by |s| ascending, pairs together */
    rigmat_channel_zeros *zeros; /* ny * nu, output-major: zeros[i * nu + j] is u_j -> y_i */
    gsl_matrix *dc_gain;         /* ny x nu (NULL when either is 0); NaN = a pole at 0 */
    size_t zero_poles;           /* eigenvalues within stab_rtol * omega_b of 0 */
} rigmat_modes;

/* Analyse l.  period_s > 0 adds z = e^{sT}; 0 leaves it out.  set may be
 * NULL (defaults).  On success *out is a new rigmat_modes owned by the
 * caller (rigmat_modes_free); names are copied, so l may be freed first.
 * Returns RIGMAT_ENUMERIC (err filled) when the eigenvalue, SVD or QZ
 * iteration fails or A holds a non-finite number, RIGMAT_EUSAGE for a
 * negative period, RIGMAT_ENOMEM when out of memory. */
rigmat_status rigmat_modes_compute(const rigmat_lti *l, double period_s,
                                   const rigmat_modes_settings *set, rigmat_modes **out,
                                   rigmat_error *err);
void rigmat_modes_free(rigmat_modes *md);

/* The one-line plain-language summary into buf (always terminated, cut to
 * size), e.g. "1 unstable mode at 5.3 rad/s, lives in tilt; reached by
 * drive; seen by gyro, accel".  Returns the length it wanted, like
 * snprintf. */
size_t rigmat_modes_summary(const rigmat_modes *md, char *buf, size_t size);

/* Short names for the enums: "stable", "marginal", "unstable". */
const char *rigmat_stability_name(rigmat_stability s);

#endif /* RIGMAT_MODES_H */
