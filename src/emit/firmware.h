/* firmware.h - C99 sources for a microcontroller (`rigmat firmware`):
 * NAME.h with the sampled model, the operating point, the limits, the
 * noise model and the steady-state Kalman filter's matrices (the `c`
 * export, src/emit/export.c) plus the declarations below, and NAME.c with
 * the nonlinear model f(x, u), h(x, u), their exact Jacobians by
 * forward-mode dual numbers, a steady-state Kalman filter and an extended
 * Kalman filter.  README.md, "Firmware", is the user's description.
 *
 * The evaluator is src/emit/fwkernel.inc, written once in a scalar-generic
 * style and copied into NAME.c twice (a real pass and a dual pass) with a
 * constant table of this model; rigmat compiles it a third time with a
 * counting scalar to state the operation counts in NAME.h.
 */
#ifndef RIGMAT_FIRMWARE_H
#define RIGMAT_FIRMWARE_H

#include "rigmat_internal.h"
#include "discretize.h"
#include "noise.h"
#include "gains.h"
#include "result.h"

#include <stdio.h>
#include <gsl/gsl_vector.h>

/* The largest model the evaluator takes: bodies (with ground), joints,
 * coordinates, motors, springs and dampers, forces, sensors, and
 * canonical states, inputs and outputs.  A larger model is refused
 * (RIGMAT_EMODEL) naming the count. */
#define RIGMAT_FW_MAX_ELEMENTS 64
#define RIGMAT_FW_MAX_SIGNALS 256

/* Operation counts of one evaluation, as written (the compiler may fold
 * some of them): additions and subtractions, multiplications, divisions,
 * square roots, sines and cosines. */
enum { RIGMAT_FW_ADD, RIGMAT_FW_MUL, RIGMAT_FW_DIV, RIGMAT_FW_SQRT, RIGMAT_FW_SIN, RIGMAT_FW_COS,
       RIGMAT_FW_NCOUNTS };
typedef struct rigmat_fw_counts {
    unsigned long f[RIGMAT_FW_NCOUNTS];   /* NAME_f */
    unsigned long h[RIGMAT_FW_NCOUNTS];   /* NAME_h */
    unsigned long jac[RIGMAT_FW_NCOUNTS]; /* NAME_jacobians, all four matrices */
} rigmat_fw_counts;

/* What the generator is given; everything borrowed.  d must be the ZOH
 * model without delay of lti at period d->period_s; kf is NULL when the
 * model has no sensors (no filters are generated then). */
typedef struct rigmat_fw_input {
    const rigmat_model *m;
    const rigmat_lti *lti;
    const rigmat_dlti *d;
    const rigmat_noise *nz;
    const gsl_vector *fd;
    const rigmat_kalman *kf;
} rigmat_fw_input;

/* The identifier prefix NAME (lower case) from --name or the model's name,
 * as the c export forms it. */
void rigmat_firmware_name(const rigmat_model *m, const char *name, char *buf, size_t len);

/* Write NAME.h to hf and NAME.c to cf.  o->name is NAME (see
 * rigmat_firmware_name), o->ctype_float the scalar type, o->source the
 * provenance line.  counts (may be NULL) receives the operation counts.
 * RIGMAT_EMODEL for a model beyond the evaluator's limits (naming the
 * count), RIGMAT_ENUMERIC for a value a float cannot hold or a filter
 * that cannot be built, RIGMAT_ENOMEM.  Write errors of the streams are
 * the caller's to check. */
rigmat_status rigmat_firmware_write(const rigmat_fw_input *in, const rigmat_emit_opts *o,
        FILE *hf, FILE *cf, rigmat_fw_counts *counts, rigmat_error *err);

/* RIGMAT_EMODEL (naming the count) when m has more elements or signals
 * than the evaluator takes; a check before any computation, so a model far
 * beyond them is refused at once. */
rigmat_status rigmat_firmware_fits(const rigmat_model *m, rigmat_error *err);

/* The EKF's RK4 substeps over one period: the smallest k with
 * T rho(A) / k <= RIGMAT_FW_RK4_REACH, rho(A) the spectral radius of the
 * continuous Jacobian at the operating point (its infinity norm when the
 * eigenvalues cannot be had), at least 1.  At h |lambda| = 0.5 classical
 * RK4 follows exp(h lambda) to 3e-4 of its value per step (the local error
 * of a fourth-order method, (h lambda)^5 / 120), so even the fastest mode
 * (a motor's electrical pole) is followed, not only kept stable: with
 * h |lambda| up to 2 (still inside RK4's stability region) the balancer's
 * filter failed the NEES test of tests/firmware.sh (measured), because the
 * filter's model of the current then differs from the plant's. */
#define RIGMAT_FW_RK4_REACH 0.5
unsigned rigmat_firmware_substeps(const rigmat_lti *lti, double period_s);

#endif /* RIGMAT_FIRMWARE_H */
