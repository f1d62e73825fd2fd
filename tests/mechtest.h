/* mechtest.h - hand-built models and linearization helpers for the
 * mechanics, linearize and trim suites (defined in mechtest.c), so those
 * suites do not depend on the YAML loader. */
#ifndef RIGMAT_MECHTEST_H
#define RIGMAT_MECHTEST_H

#include "rigmat_internal.h"

#include <complex.h>

/* A model with only the ground; free with tm_free. */
rigmat_model *tm_new(const char *name);
void tm_free(rigmat_model *m);
size_t tm_body(rigmat_model *m, const char *name, double mass_kg, double inertia_kgm2,
        double comx_m, double comy_m);
/* A joint with defaults (at 0, angle 0, axis [1, 0], not driven). */
rigmat_joint *tm_joint(rigmat_model *m, const char *name, rigmat_joint_type type, size_t parent,
        size_t child);
rigmat_link *tm_spring(rigmat_model *m, const char *name, rigmat_attach how);
rigmat_link *tm_damper(rigmat_model *m, const char *name, rigmat_attach how);
/* A motor with gear ratio 1, efficiency 1, count 1, polarity 1. */
rigmat_motor *tm_motor(rigmat_model *m, const char *name);
rigmat_force *tm_force(rigmat_model *m, const char *name, rigmat_force_kind kind);
/* A sensor with gain 1. */
rigmat_sensor *tm_sensor(rigmat_model *m, const char *name, rigmat_sensor_kind kind);
/* Operating point: which = 'c' coordinates, 'r' rates, 'i' inputs. */
void tm_op(rigmat_model *m, char which, const char *name, double value);
void tm_solve(rigmat_model *m, const char *name);
void tm_list(rigmat_namelist *l, const char *name);
/* rigmat_layout_build; on failure copies the first diagnostic into msg. */
rigmat_status tm_build(rigmat_model *m, char *msg, size_t len);

/* Max over A, B, C, D of |exact - central difference| / (1 + |exact|)
 * at the model's operating point (step 1e-6 relative). */
double tm_fd_error(const rigmat_model *m);

/* rigmat_linearize with default options, failing the test on an error;
 * warnings go to w (may be NULL).  Free with rigmat_lti_free. */
rigmat_lti *tm_lin(const rigmat_model *m, rigmat_diags *w);

/* Eigenvalues of A (n x n) into re[n], im[n], sorted by real then
 * imaginary part. */
void tm_eigs(const gsl_matrix *A, double *re, double *im);

/* d + c (sI - A)^-1 b for dense A (n x n), b, c of length n, by Gaussian
 * elimination with partial pivoting in complex arithmetic. */
double complex tm_tf(const gsl_matrix *A, const double *b, const double *c, double d,
        double complex s);

/* Test models used by several suites (all built). */
rigmat_model *tm_balancer(double comx_m, int drive, int neglect_inductance);

#endif
