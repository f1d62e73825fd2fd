/* report.h - one self-contained HTML page about a model: what it is, how
 * it behaves, and how far its linearization can be trusted.
 *
 * The page holds, in order: the model summary and the cautions; the sign
 * table; the operating point and its steady-state check; A, B, C, D with
 * names and units; the modes (modes.h) with zeros and DC gain; pole maps
 * (s-plane, and z-plane with the unit circle at the sample rate);
 * responses that overlay the nonlinear, linear and sampled models
 * (simulate.h); the frequency response of every input/output pair; the
 * validity range (validity.h); the sampled model with Qd and Rd.
 *
 * Frequency response: G(jw) = C (jwI - A)^-1 B + D, by GSL's complex LU at
 * each frequency of a logarithmic grid from a tenth of the slowest
 * non-zero mode to ten times the fastest (in Hz; one decade either side of
 * 1 Hz when A has no non-zero mode).  Phase in degrees, unwrapped along
 * the grid (steps over 180 degrees are taken as wraps).
 *
 * Default responses (rigmat_report_choose; each can be overridden):
 *   offsets   one per distinct main coordinate of the unstable modes, or
 *             of the slowest non-marginal mode when none is unstable.  A
 *             mode's main coordinate is the joint coordinate with the
 *             largest share of it (a rate's share counts for its
 *             coordinate).  Size: 2 deg for an angle, 10 mm for a length.
 *   steps     one per control input, of a tenth of a unit of its SI unit
 *             (0.1 for a duty, 0.1 V, 0.1 A, 0.1 N, 0.1 N*m ...).
 *   duration  three time constants of the fastest-growing unstable mode
 *             (growth of e^3 = 20 times), else five of the slowest stable
 *             mode but at most five of its periods when it oscillates,
 *             rounded to the nearest 1, 2 or 5 times a power of ten and kept
 *             within [0.05 s, 20 s]; 1 s without such a mode.
 *   rows      every sample period T, or a whole multiple of it so that a
 *             run has at most 500 rows.
 * The chosen values are printed in the report.  The validity sweep uses the
 * same duration as its horizon, at most 2 s (it runs the nonlinear model
 * some hundred times).
 *
 * Everything taken from the model (names, units) is escaped for HTML.
 * The page has no script, no external reference (no fonts, no images):
 * figures are inline SVG (svg.h).  A print style sheet keeps figures and
 * tables whole on a page.
 */
#ifndef RIGMAT_REPORT_H
#define RIGMAT_REPORT_H

#include "rigmat_internal.h"
#include <stdio.h>

/* One response: an offset of state `index` or a step of input `index`. */
typedef struct rigmat_report_case {
    int is_input;  /* 0: initial offset of a state; 1: step of an input at t = 0 */
    size_t index;  /* layout order */
    double size;   /* SI unit of the state or input; != 0 */
} rigmat_report_case;

#define RIGMAT_REPORT_MAX_CASES 16

typedef struct rigmat_report_opts {
    double rate_hz;     /* sample rate of the sampled model, > 0 */
    double duration_s;  /* response duration; 0 = chosen (see above) */
    /* offsets given by the user; when noffsets > 0 they replace the chosen ones */
    rigmat_report_case offsets[RIGMAT_REPORT_MAX_CASES];
    size_t noffsets;
    /* step sizes given by the user for some control inputs; the others keep
     * the chosen size */
    rigmat_report_case steps[RIGMAT_REPORT_MAX_CASES];
    size_t nsteps;
    size_t freq_points; /* frequency grid, default 240 */
    int validity;       /* 1 (default): sweep the validity range */
} rigmat_report_opts;

rigmat_report_opts rigmat_report_opts_default(void);

/* Write the report of model m, linearized as lin (rigmat_linearize of m,
 * in m->layout's order), to f.  Sections whose computation fails for a
 * reason of the model (the nonlinear model leaving its valid region, a
 * validity sweep that fails) say so in the page; the call fails only
 * when the report as a whole cannot be made.  Statuses: RIGMAT_EUSAGE
 * (bad options: rate, a case's index or size; message in err),
 * RIGMAT_ENUMERIC (modes, sampling or noise model fail), RIGMAT_ENOMEM,
 * RIGMAT_EIO (f reports an error).  On failure f may hold part of a page:
 * write it to a memory stream and keep it only on RIGMAT_OK. */
rigmat_status rigmat_report_write(FILE *f, const rigmat_model *m, const rigmat_lti *lin,
        const rigmat_report_opts *o, rigmat_error *err);

/* G(s) = C (sI - A)^-1 B + D at one complex point s = s_re + j s_im (for a
 * sampled model pass Ad, Bd, Cd, Dd and z = e^{jwT}), by GSL's complex LU,
 * into g_re, g_im (ny x nu each, row-major: g[i * nu + j] is input j to
 * output i).  D may be NULL (zero).  RIGMAT_ENUMERIC when sI - A is
 * singular (s is a pole), RIGMAT_EUSAGE for mismatched sizes,
 * RIGMAT_ENOMEM. */
rigmat_status rigmat_report_transfer(const gsl_matrix *A, const gsl_matrix *B,
        const gsl_matrix *C, const gsl_matrix *D, double s_re, double s_im, double *g_re,
        double *g_im, rigmat_error *err);

#endif
