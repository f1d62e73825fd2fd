/* validity.h - how far from its operating point the linear model holds.
 *
 * For each coordinate (an initial offset of that joint coordinate, every
 * other state at the point) and each control input (a step at t = 0), the
 * size a is swept and the nonlinear and linear responses (simulate.h) are
 * compared over the horizon [0, horizon_s] on a grid of `points` intervals.
 *
 * The error of one size a is
 *     e(a) = max over outputs i of  max_t |y_lin,i(t) - y_nl,i(t)| / d_i,
 *     d_i  = max_t |y_nl,i(t) - y0_i|,
 * over the outputs that move: d_i > 1e-9 max(1, |y0_i|) (SI).  (Without
 * outputs the states take their place.)  The linear model is valid at a
 * when e(a) <= criterion (default 0.05, "within 5 %").  A size at which the
 * nonlinear model fails (leaves its valid region) counts as not valid.
 *
 * Sweep, for each sign: a = start, 2 start, 4 start, ... while valid and
 * a <= max_size; then `bisections` bisections between the last valid and
 * the first invalid size.  When e(start) already fails, sizes are halved
 * down to start / 2^20 instead.  The result per direction is the largest
 * valid size found (0 when none); the item's size is the smaller of the
 * two directions.  Every (a, e(a)) tried is kept for plots.
 *
 * Units: sizes are in the SI unit of the state or input.
 */
#ifndef RIGMAT_VALIDITY_H
#define RIGMAT_VALIDITY_H

#include "rigmat_internal.h"
#include "simulate.h"

typedef struct rigmat_validity_opts {
    double criterion;    /* relative error bound, default 0.05 */
    double horizon_s;    /* default 1 s */
    size_t points;       /* output intervals over the horizon, default 200 */
    double rtol;         /* nonlinear relative tolerance, default 1e-9 */
    double start;        /* first size tried (SI), default 1e-3 */
    double max_size;     /* largest size tried (SI), default 1e3 (pi for angles) */
    unsigned bisections; /* default 8 */
} rigmat_validity_opts;

rigmat_validity_opts rigmat_validity_opts_default(void);

#define RIGMAT_VALIDITY_MAX_SAMPLES 96

typedef struct rigmat_validity_item {
    int is_input;           /* 0: an offset of state `index`; 1: a step of input `index` */
    size_t index;           /* layout order */
    double size;            /* min(size_pos, size_neg), >= 0 */
    double size_pos;        /* largest valid positive size */
    double size_neg;        /* largest valid negative size (as a magnitude) */
    int bounded;            /* 0 when still valid at max_size both ways */
    int nonlinear_failed;   /* 1 when some size made the nonlinear model fail */
    size_t nsamples;        /* sizes tried, both signs (negative sizes negative) */
    double sample_size[RIGMAT_VALIDITY_MAX_SAMPLES];
    double sample_error[RIGMAT_VALIDITY_MAX_SAMPLES]; /* e(a); +inf where the model failed */
} rigmat_validity_item;

/* The error e(a) of one size (see above) for an offset of state `index`
 * (is_input 0) or a step of input `index` (is_input 1).  *failed is set
 * when the nonlinear run failed (then *e is +inf and RIGMAT_OK is
 * returned).  Other statuses: RIGMAT_EUSAGE, RIGMAT_ENOMEM. */
rigmat_status rigmat_validity_error(rigmat_system *sys, const rigmat_lti *lin,
        const rigmat_validity_opts *o, int is_input, size_t index, double size, double *e,
        int *failed, rigmat_error *err);

/* Sweep one target (see above) into *item. */
rigmat_status rigmat_validity_sweep(rigmat_system *sys, const rigmat_lti *lin,
        const rigmat_layout *L, const rigmat_validity_opts *o, int is_input, size_t index,
        rigmat_validity_item *item, rigmat_error *err);

/* Sweep every joint coordinate state (kind RIGMAT_SIG_COORD) and every
 * control input of L, in that order, into items (up to cap; *count is the
 * number of targets).  Statuses as rigmat_validity_error. */
rigmat_status rigmat_validity_all(rigmat_system *sys, const rigmat_lti *lin,
        const rigmat_layout *L, const rigmat_validity_opts *o, rigmat_validity_item *items,
        size_t cap, size_t *count, rigmat_error *err);

#endif /* RIGMAT_VALIDITY_H */
