/* simulate.h - one response of the rig: the nonlinear model, its
 * linearization and its sampled form, driven by the same signals from the
 * same initial deviation, on the same output times.
 *
 * Time grid.  Rows are at t_k = k * step_s, k = 0 .. round(duration_s /
 * step_s) (README.md, "Simulation").  Every value is absolute (not a
 * deviation): x = x0 + dx, u = u0 + du, y = h(x, u) or y0 + C dx + D du.
 *
 * Signals (added to the operating-point input u0; README.md, "Simulation"):
 *   step     du = value            for t >= t0
 *   impulse  an impulse of the given area at t0 (see each model below)
 *   ramp     du = slope (t - t0)   for t >= t0
 *   sine     du = amplitude sin(2 pi f t)
 *   table    du = linear interpolation of (t_i, v_i); the first value
 *            before t_0, the last after t_n (a CSV file of time,value)
 * Between the breakpoints of the signals (every t0, every table time) the
 * step, ramp and table parts are linear in t; both continuous models
 * integrate interval by interval between the output times and these
 * breakpoints, so no interval straddles a jump or a kink.
 *
 * Models:
 *   NONLINEAR  x' = f(x, u(t)) of rigmat_system_eval, by GSL odeiv2 with
 *              gsl_odeiv2_step_bsimp, the semi-implicit extrapolation
 *              method of Bader and Deuflhard (Numer. Math. 41, 1983):
 *              stiff-capable (a motor's L/R of 0.1 ms beside a 1 s swing)
 *              and driven by the exact Jacobian df/dx
 *              (rigmat_system_jacobians; df/dt = df/du u'(t)).  Chosen
 *              over the variable-order BDF (msbdf) after measuring: an
 *              undamped pendulum swinging 1.2 rad for 10 s drifts in
 *              energy by 2e-5 of its swing energy under msbdf at rtol
 *              1e-8, by 1e-13 under bsimp, at similar cost.
 *              Error control per state i: |e_i| <= rtol *
 *              (|x_i| + a_i) with a_i = max(|x_i(0)|, atol_floor) in the
 *              state's SI unit, i.e. an absolute tolerance rtol * a_i.
 *              The integrator restarts at every breakpoint.  An impulse of
 *              area a on input j makes the state jump by df/du_j(x, u) a:
 *              exact when f is affine in that input (forces, torques,
 *              motor voltage, current or duty, driven accelerations), to
 *              first order in a otherwise.
 *   LINEAR     dx' = A dx + B du + f0 (f0 = 0 at a steady state), exactly:
 *              each interval [t, t + h] takes one matrix exponential of the
 *              augmented matrix
 *                  [[A, Bs, B, 0, f0], [0, W, 0, 0, 0], [0, 0, 0, I, 0], 0, 0] h
 *              acting on [dx; z; du(t+); du'; 1], where du' is the slope of
 *              the piecewise-linear part over the interval and z = (sin wt,
 *              cos wt) per sine signal with W = [[0, w], [-w, 0]] and Bs its
 *              input's column times the amplitude.  Every signal above is
 *              therefore integrated exactly (up to the exponential's
 *              rounding), sines included.  An impulse adds B_j a to dx.
 *   SAMPLED    x[k+1] = Ad x[k] + Bd du[k] + fd, ZOH (rigmat_discretize) at
 *              rate_hz, with du[k] = du(kT) sampled at the instant (after a
 *              step at that instant) and held over the period, as the
 *              controller's output would be; an impulse of area a becomes a
 *              pulse a / T over the period that contains t0.  step_s must
 *              be a whole multiple of the period T (rows fall on samples).
 *              y[k] = y0 + C dx[k] + D du[k].
 *
 * Failures.  When the nonlinear model leaves its valid region (a singular
 * mass matrix, a closed loop that cannot be assembled, a point spring of
 * zero length, a non-finite state or derivative) or the integrator cannot
 * meet the tolerance within max_steps steps of one interval, rigmat_simulate
 * returns RIGMAT_ENUMERIC with a message naming the time, and the result
 * keeps every row computed before it (complete = 0, stop_time_s).
 *
 * Units: SI throughout; times in s, rate in Hz.
 */
#ifndef RIGMAT_SIMULATE_H
#define RIGMAT_SIMULATE_H

#include "rigmat_internal.h"

typedef enum rigmat_sim_model {
    RIGMAT_SIM_NONLINEAR = 0,
    RIGMAT_SIM_LINEAR,
    RIGMAT_SIM_SAMPLED
} rigmat_sim_model;

/* "nonlinear", "linear", "sampled"; parse returns 0 and sets *m, or -1. */
const char *rigmat_sim_model_name(rigmat_sim_model m);
int rigmat_sim_model_parse(const char *name, rigmat_sim_model *m);

typedef enum rigmat_wave_kind {
    RIGMAT_WAVE_STEP = 0,
    RIGMAT_WAVE_IMPULSE,
    RIGMAT_WAVE_RAMP,
    RIGMAT_WAVE_SINE,
    RIGMAT_WAVE_TABLE
} rigmat_wave_kind;

/* One signal on one input, in the input's SI unit. */
typedef struct rigmat_wave {
    rigmat_wave_kind kind;
    size_t input;        /* input index, layout order */
    double value;        /* STEP level, IMPULSE area (unit*s), RAMP slope (unit/s), SINE amplitude */
    double t0_s;         /* STEP, IMPULSE, RAMP: start time, >= 0 */
    double frequency_hz; /* SINE: > 0 */
    double *table_t_s;   /* TABLE: ntable strictly increasing times (owned) */
    double *table_v;     /* TABLE: ntable values (owned) */
    size_t ntable;       /* TABLE: >= 1 */
} rigmat_wave;

/* Parse one signal, "step:0.5V@0.1s", "impulse:0.02 N*s", "ramp:2V/s@1s",
 * "sine:0.3V@2Hz", "file:PATH.csv", for an input whose SI unit is unit
 * ("V", "N*m", "m/s^2", "1"...).  A value may carry any unit of the right
 * dimension (an area is the unit times s, a slope the unit per s); a bare
 * number is SI.  A table file has one time,value pair per line in s and
 * the input's SI unit; a first line that does not start with a number is
 * a header, '#' starts a comment.  On success w is filled (input = input)
 * and owns its table; release it with rigmat_wave_release.  RIGMAT_EUSAGE
 * for a bad signal (message and hint), RIGMAT_EIO when the file cannot be
 * read, RIGMAT_ENOMEM. */
rigmat_status rigmat_wave_parse(const char *text, const char *unit, size_t input, rigmat_wave *w,
        rigmat_error *err);
void rigmat_wave_release(rigmat_wave *w);

/* Parse a value for a signal whose SI unit is unit ("5 deg" for "rad",
 * "20 mm/s" for "m/s"; a bare number is SI) into *v.  RIGMAT_EUSAGE with
 * a message naming what (e.g. "offset") for a wrong unit or bad text. */
rigmat_status rigmat_sim_value(const char *text, const char *unit, const char *what, double *v,
        rigmat_error *err);

/* The deviation of one input at time t from the waves on that input
 * (impulses excluded); right-continuous at a step. */
double rigmat_wave_eval(const rigmat_wave *waves, size_t nwaves, size_t input, double t_s);

typedef struct rigmat_sim_opts {
    rigmat_sim_model model;
    double duration_s; /* > 0 */
    double step_s;     /* > 0: output interval */
    double rate_hz;    /* SAMPLED: sample rate, > 0 */
    double rtol;       /* NONLINEAR: relative tolerance, default 1e-8 */
    double atol_floor; /* NONLINEAR: smallest a_i (SI), default 1e-3 */
    size_t max_steps;  /* NONLINEAR: integrator steps per interval, default 200000 */
    size_t max_rows;   /* refuse more output rows, default 10000000 */
} rigmat_sim_opts;

/* nonlinear, duration 1 s, step 1 ms, rate 0, rtol 1e-8, the defaults above. */
rigmat_sim_opts rigmat_sim_opts_default(void);

/* What drives one run. */
typedef struct rigmat_sim_case {
    const double *offset;     /* nx initial deviations from x0, or NULL for none */
    const rigmat_wave *waves; /* nwaves signals (any input, any number per input) */
    size_t nwaves;
} rigmat_sim_case;

/* The rows of one run.  Arrays are row-major: x[k * nx + i]. */
typedef struct rigmat_sim_result {
    size_t nx, nu, ny;
    size_t nrows;        /* rows computed */
    size_t nrows_planned; /* round(duration / step) + 1 */
    double *t_s;         /* nrows */
    double *x, *u, *y;   /* nrows x nx, nrows x nu, nrows x ny; absolute values */
    int complete;        /* 1 when every planned row was computed */
    double stop_time_s;  /* the time reached when the run stopped early */
} rigmat_sim_result;

/* Zero a result (before rigmat_simulate, or to reuse one after release). */
void rigmat_sim_result_init(rigmat_sim_result *r);
/* Free what a result holds; accepts an initialised, empty result. */
void rigmat_sim_result_release(rigmat_sim_result *r);

/* Run one response.  lin is the linear model at the operating point (its
 * x0, u0, y0, f0 are the point; A, B, C, D the linear and sampled models);
 * sys the nonlinear system of the same model (needed for NONLINEAR only,
 * may be NULL otherwise).  r must be initialised; it receives the rows (on
 * failure, the rows before the failure).  Statuses: RIGMAT_EUSAGE for bad
 * options (non-positive duration or step, a sampled step that is not a
 * multiple of the period, a wave on an input that does not exist, too many
 * rows), RIGMAT_ENUMERIC for a failure of the model (message with the
 * time), RIGMAT_ENOMEM. */
rigmat_status rigmat_simulate(rigmat_system *sys, const rigmat_lti *lin, const rigmat_sim_opts *o,
        const rigmat_sim_case *c, rigmat_sim_result *r, rigmat_error *err);

#endif /* RIGMAT_SIMULATE_H */
